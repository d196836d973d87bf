//! `twistlot evaluate`: per-part results against the part spec.

use super::{open, require_some_path, warn_spec_problems, OutputFormat, PlantArgs};
use crate::output::{print_rows, Table};
use crate::{CAUTION, EXIT_SOME_REJECTED};
use anyhow::{Context, Result};
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_model::{TestRecord, Verdict};
use twistlot_pipeline::shift::shift_inputs;
use twistlot_pipeline::{evaluate_each, EvaluateOptions, Evaluated, SpecLibrary, SpecSource};

/// Arguments of `twistlot evaluate`.
#[derive(clap::Args)]
pub struct Args {
    /// Export files or folders (searched recursively).
    #[arg(required = true, value_name = "PATH")]
    paths: Vec<PathBuf>,
    /// Judge every export against this part spec.
    #[arg(long, value_name = "FILE")]
    spec: Option<PathBuf>,
    #[command(flatten)]
    plant: PlantArgs,
    /// Apply this check plugin too (repeatable); a plant config names its own under `checks:`.
    #[arg(long = "check", value_name = "NAME")]
    checks: Vec<String>,
    /// Evaluation window as fractions of the tested deflection, e.g. `0.2:0.8` (`0:1` = whole loading stroke).
    #[arg(long, value_name = "LO:HI", value_parser = parse_window)]
    window: Option<[f64; 2]>,
    /// Read every file with this rig format instead of recognising it.
    #[arg(long, value_name = "NAME")]
    rig_format: Option<String>,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

fn parse_window(text: &str) -> Result<[f64; 2], String> {
    let (lo, hi) = text.split_once(':').ok_or_else(|| format!("`{text}` is not LO:HI"))?;
    let lo: f64 = lo.trim().parse().map_err(|_| format!("`{lo}` is not a number"))?;
    let hi: f64 = hi.trim().parse().map_err(|_| format!("`{hi}` is not a number"))?;
    if !(0.0..=1.0).contains(&lo) || !(0.0..=1.0).contains(&hi) || lo >= hi {
        return Err(format!("the window {lo}:{hi} must satisfy 0 ≤ LO < HI ≤ 1"));
    }
    Ok([lo, hi])
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    require_some_path(&args.paths)?;
    let mut options = args.plant.options(None);
    options.checks = args.checks.clone();
    let plant = open(&options)?;
    let fixed = args
        .spec
        .as_deref()
        .map(|path| SpecLibrary::single(path).with_context(|| format!("loading the spec {}", path.display())))
        .transpose()?;
    let specs = match (&fixed, &plant.config) {
        (Some(library), _) => library.only().map_or(SpecSource::None, SpecSource::Fixed),
        (None, Some(_)) => SpecSource::ByPart(&plant.specs),
        (None, None) => SpecSource::None,
    };
    let (files, missing, skipped) = shift_inputs(&args.paths);
    for file in &skipped {
        eprintln!("skipped: {} ({})", file.file, file.reason);
    }
    let spec_problems = if fixed.is_none() { plant.specs.problems().len() } else { 0 };
    if fixed.is_none() {
        warn_spec_problems(&plant);
    }
    // Reference-spring exports are read at their check angle, not judged against a part spec.
    let references = twistlot_pipeline::reference::reference_angles(&plant);
    let options = EvaluateOptions {
        window: args.window,
        rig_format: args.rig_format.clone(),
        preview_points: 0,
        physics: plant.physics(),
        reference_angles: references.clone(),
    };
    let mut tests: Vec<TestRecord> = Vec::new();
    let mut rejected: Vec<twistlot_ingest::IngestError> = missing;
    evaluate_each(&files, &plant.formats, specs, &plant.checks, &options, |evaluated| match evaluated {
        Evaluated::Test { record, .. } => tests.push(*record),
        Evaluated::Rejected(err) => rejected.push(err),
    });
    match args.format {
        OutputFormat::Json => println!("{}", serde_json::to_string_pretty(&tests)?),
        _ => {
            let fmt = |v: Option<f64>, places: usize| {
                v.map(|v| format!("{v:.places$}")).unwrap_or_else(|| "—".into())
            };
            let mut table = Table::new(&[
                "serial",
                "part",
                "lot",
                "rate_nmm_per_deg",
                "r2",
                "free_angle_deg",
                "max_torque_nmm",
                "theory_nmm_per_deg",
                "measured/theory",
                "verdict",
                "findings",
            ]);
            for t in &tests {
                let mut notes: Vec<String> = t
                    .findings
                    .iter()
                    .filter(|f| f.verdict != Verdict::Pass)
                    .map(|f| format!("{} {}: {}", f.class, f.verdict, f.message))
                    .collect();
                let theory = t.theory.as_ref();
                if let Some(th) = theory.filter(|th| th.outside_band) {
                    notes.push(format!(
                        "caution, not a verdict: measured/theory rate outside {}–{}",
                        th.band[0], th.band[1]
                    ));
                }
                // A swing's rate is its dynamic rate; it has no fit, free angle or torque.
                let swing = t.swing.is_some();
                table.row(vec![
                    t.serial.clone().unwrap_or_else(|| t.file.clone()),
                    t.part.clone().unwrap_or_default(),
                    t.lot.clone().unwrap_or_default(),
                    fmt(t.measured_rate_nmm_per_deg(), 4),
                    if swing { "swing".into() } else { fmt(t.metrics.rate_r2, 5) },
                    fmt(t.metrics.free_angle_deg, 2),
                    if swing { "—".into() } else { format!("{:.1}", t.metrics.max_torque_nmm) },
                    fmt(theory.map(|th| th.rate_nmm_per_deg), 4),
                    fmt(theory.and_then(|th| th.ratio), 3),
                    match (t.verdict, t.serial.as_deref().is_some_and(|s| references.contains_key(s))) {
                        (Some(v), _) => v.to_string(),
                        (None, true) => "reference spring".into(),
                        (None, false) => "no spec".into(),
                    },
                    notes.join("; "),
                ]);
            }
            print_rows(&table, args.format == OutputFormat::Csv);
            if args.format == OutputFormat::Table {
                let count = |v| tests.iter().filter(|t| t.verdict == Some(v)).count();
                println!(
                    "\n{} tests: {} pass, {} fail, {} invalid; {} files rejected.",
                    tests.len(),
                    count(Verdict::Pass),
                    count(Verdict::Fail),
                    count(Verdict::Invalid),
                    rejected.len()
                );
            }
        }
    }
    for err in &rejected {
        eprintln!("rejected: {err}");
    }
    if !tests.is_empty() {
        eprintln!("{CAUTION}");
    }
    Ok(if rejected.is_empty() && spec_problems == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(EXIT_SOME_REJECTED)
    })
}
