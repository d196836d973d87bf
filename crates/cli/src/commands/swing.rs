//! `twistlot swing`: the dynamic rate from free-decay records (one inertia, or two).

use super::{open, PlantArgs};
use crate::output::{print_rows, Table};
use crate::{CAUTION, EXIT_SOME_REJECTED};
use anyhow::{bail, Result};
use clap::ValueEnum;
use serde::Serialize;
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_ingest::read_path;
use twistlot_model::RecordKind;
use twistlot_physics::{analyze_swing, two_inertia, SwingAnalysis, SwingOptions, TwoInertia};

/// How `swing` prints.
#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum SwingFormat {
    /// Aligned lines for a terminal.
    Table,
    /// Pretty-printed JSON.
    Json,
}

/// Arguments of `twistlot swing`.
#[derive(clap::Args)]
pub struct Args {
    /// A free-decay export; give a second one, of the same spring with another added
    /// inertia, for the two-inertia method (the fixture's own inertia unknown).
    #[arg(required = true, num_args = 1..=2, value_name = "FILE")]
    files: Vec<PathBuf>,
    /// With one file: the whole swinging inertia, kg·m² (default: the export's
    /// `inertia_kgm2` line). With two files: the inertia added in each, I1 I2.
    #[arg(long = "inertia-kgm2", num_args = 1..=2, value_name = "I")]
    inertia_kgm2: Vec<f64>,
    /// Read the files with this rig format instead of recognising them.
    #[arg(long, value_name = "NAME")]
    rig_format: Option<String>,
    #[command(flatten)]
    plant: PlantArgs,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: SwingFormat,
}

/// One analysed record, as printed.
#[derive(Serialize)]
struct Record {
    file: String,
    rig_format: String,
    /// Where the inertia came from: `command line`, `export`, or none.
    inertia_from: Option<&'static str>,
    #[serde(flatten)]
    analysis: SwingAnalysis,
}

/// A record that gave no number, and why.
#[derive(Serialize)]
struct Refusal {
    file: String,
    reason: String,
}

/// The two-inertia result with both records.
#[derive(Serialize)]
struct Pair {
    #[serde(flatten)]
    result: Option<TwoInertia>,
    records: Vec<Record>,
    refused: Vec<Refusal>,
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    let pair = args.files.len() == 2;
    if pair && args.inertia_kgm2.len() != 2 {
        return Ok(usage_error(
            "two files are the two-inertia method: give the inertia added in each, --inertia-kgm2 I1 I2",
        ));
    }
    if !pair && args.inertia_kgm2.len() > 1 {
        return Ok(usage_error("one file takes one inertia (--inertia-kgm2 I); two inertias need two files"));
    }
    // A whole inertia must be above zero; an added one may be zero (the bare fixture).
    if let Some(bad) =
        args.inertia_kgm2.iter().find(|i| !(i.is_finite() && (**i > 0.0 || (pair && **i == 0.0))))
    {
        return Ok(usage_error(&format!(
            "--inertia-kgm2 {bad} is not an inertia in kg·m² ({})",
            if pair { "zero or more" } else { "above zero" }
        )));
    }
    let plant = open(&args.plant.options(None))?;
    if let Some(name) = &args.rig_format {
        if plant.formats.by_name(name).is_none() {
            bail!("there is no rig format named `{name}`");
        }
    }
    let options = plant.physics().swing;
    let mut records = Vec::new();
    let mut refused = Vec::new();
    for (index, path) in args.files.iter().enumerate() {
        // Two-inertia mode measures periods only: the fixture's own inertia is the unknown.
        let given = if pair { None } else { args.inertia_kgm2.first().copied() };
        match analyse(path, given, !pair, args.rig_format.as_deref(), &plant.formats, &options) {
            Ok(record) => records.push((index, record)),
            Err(reason) => refused.push(Refusal { file: path.display().to_string(), reason }),
        }
    }
    for r in &refused {
        eprintln!("twistlot swing: {}: refused: {}", r.file, r.reason);
    }
    if records.is_empty() {
        return Ok(ExitCode::FAILURE);
    }
    let code = if refused.is_empty() { ExitCode::SUCCESS } else { ExitCode::from(EXIT_SOME_REJECTED) };
    if !pair {
        let (_, record) = records.remove(0);
        match args.format {
            SwingFormat::Json => println!("{}", serde_json::to_string_pretty(&record)?),
            SwingFormat::Table => print_record(&record),
        }
        eprintln!("{CAUTION}");
        return Ok(code);
    }
    let result = match records.as_slice() {
        [(_, a), (_, b)] => {
            match two_inertia(&a.analysis, args.inertia_kgm2[0], &b.analysis, args.inertia_kgm2[1]) {
                Ok(result) => Some(result),
                Err(err) => {
                    eprintln!("twistlot swing: the two-inertia method refuses the pair: {err}");
                    None
                }
            }
        }
        _ => None,
    };
    let failed_pair = result.is_none();
    let report = Pair { result, records: records.into_iter().map(|(_, r)| r).collect(), refused };
    match args.format {
        SwingFormat::Json => println!("{}", serde_json::to_string_pretty(&report)?),
        SwingFormat::Table => {
            for record in &report.records {
                print_record(record);
                println!();
            }
            if let Some(r) = &report.result {
                print_pair(r);
            }
        }
    }
    eprintln!("{CAUTION}");
    Ok(if failed_pair && report.refused.is_empty() { ExitCode::FAILURE } else { code })
}

/// Prints a usage error and gives the exit status for bad arguments.
fn usage_error(message: &str) -> ExitCode {
    eprintln!("twistlot swing: {message}");
    ExitCode::from(2)
}

/// Reads and analyses one record; `Err` is the reason it gives no number.
fn analyse(
    path: &std::path::Path,
    given_inertia: Option<f64>,
    use_export_inertia: bool,
    rig_format: Option<&str>,
    formats: &twistlot_ingest::FormatSet,
    options: &SwingOptions,
) -> Result<Record, String> {
    let export = read_path(path, formats, rig_format).map_err(|e| e.reason())?;
    if export.kind != RecordKind::FreeDecay {
        return Err(format!(
            "rig format `{}` reads it as a {} record, not a free decay (time and angle, no torque)",
            export.rig_format, export.kind
        ));
    }
    let decay = export.decay().map_err(|e| format!("the free-decay frame is not canonical: {e}"))?;
    let (inertia, inertia_from) = match given_inertia {
        Some(inertia) => (Some(inertia), Some("command line")),
        None if use_export_inertia => match export.metadata.inertia_kgm2()? {
            Some(inertia) => (Some(inertia), Some("export")),
            None => (None, None),
        },
        None => (None, None),
    };
    let analysis =
        analyze_swing(&decay.time_s, &decay.angle_deg, inertia, options).map_err(|e| e.to_string())?;
    Ok(Record { file: path.display().to_string(), rig_format: export.rig_format, inertia_from, analysis })
}

fn opt(value: Option<f64>, places: usize) -> String {
    value.map(|v| format!("{v:.places$}")).unwrap_or_else(|| "—".into())
}

fn print_record(record: &Record) {
    let a = &record.analysis;
    println!("{} ({}):", record.file, record.rig_format);
    let mut table = Table::new(&["quantity", "value", "unit"]);
    let mut row = |q: &str, value: String, unit: &str| table.row(vec![q.into(), value, unit.into()]);
    let inertia = match (a.inertia_kgm2, record.inertia_from) {
        (Some(i), Some(from)) => format!("{i:e} ({from})"),
        _ => "not given: no κ or rate".into(),
    };
    row("inertia I", inertia, "kg·m²");
    row("period (damped-sine fit)", format!("{:.6}", a.period_s), "s");
    row("frequency", format!("{:.5}", a.frequency_hz), "Hz");
    row("undamped natural frequency", format!("{:.5}", a.natural_frequency_hz), "Hz");
    row("logarithmic decrement", format!("{:.5}", a.log_decrement), "");
    row("damping ratio ζ", format!("{:.5}", a.damping_ratio), "");
    row("torsion constant κ = I·ω0²", opt(a.kappa_nmm_per_rad, 4), "N·mm/rad");
    row("dynamic rate κ·π/180", opt(a.rate_nmm_per_deg, 5), "N·mm/°");
    let flag = if a.amplitude_dependence_flagged { " (above the limit)" } else { "" };
    row(
        &format!("amplitude dependence of the period, limit {} %", a.amplitude_limit_pct),
        format!("{:+.3}{flag}", a.amplitude_dependence_pct),
        "%",
    );
    row("decay", format!("{:?}", a.decay).to_lowercase(), "");
    row("swings analysed", a.swings.to_string(), "");
    print_rows(&table, false);
    for note in &a.notes {
        println!("note: {note}");
    }
}

fn print_pair(r: &TwoInertia) {
    println!("Two-inertia method, κ = 4π²·(I2 − I1)/(T2² − T1²):");
    let mut table = Table::new(&["quantity", "value", "unit"]);
    table.row(vec!["torsion constant κ".into(), format!("{:.4}", r.kappa_nmm_per_rad), "N·mm/rad".into()]);
    table.row(vec!["dynamic rate".into(), format!("{:.5}", r.rate_nmm_per_deg), "N·mm/°".into()]);
    table.row(vec!["fixture's own inertia".into(), format!("{:e}", r.fixture_inertia_kgm2), "kg·m²".into()]);
    print_rows(&table, false);
    for note in &r.notes {
        println!("note: {note}");
    }
}
