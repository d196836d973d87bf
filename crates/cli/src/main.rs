//! The `twistlot` command: parses arguments, calls the crates, prints results.
//!
//! Nothing here computes; every job lives in a library crate so it can be tested
//! and reused. Exit codes are part of the interface (see `--help`).

mod output;

use anyhow::{bail, Context, Result};
use clap::{Args, Parser, Subcommand, ValueEnum};
use output::{print_rows, Table};
use std::collections::BTreeMap;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use twistlot_ingest::{expand_inputs, flag_duplicate_serials, ingest_each, FileStatus, FileSummary};
use twistlot_model::plugin::RigFormatManifest;
use twistlot_model::{Manifest, PartSpec};
use twistlot_pipeline::{
    check_manifests, evaluate_files, run_shift, shipped_plugins_dir, EvaluateOptions, Evaluated, Plant,
    PluginCatalog, SpecLibrary, SpecSource,
};
use twistlot_sampling::{design_attribute, design_variables, InspectionLevel, LimitKind, Severity};
use twistlot_stats::CheckSet;

/// Exit status when the command ran but some input files were rejected.
const EXIT_SOME_REJECTED: u8 = 3;

const EXIT_HELP: &str = "Exit status: 0 when everything was read; 3 when the command ran but some input \
files (or plugin manifests) were rejected, each listed with its reason; 1 when the command could not run; \
2 for bad arguments.";

const CAUTION: &str = "Caution: results come only from the rig data supplied. The customer's drawing and \
specification govern acceptance; local codes and licensed practice govern safety. Rigs must be within \
calibration. A loaded torsion spring stores energy and can leave a fixture violently.";

#[derive(Parser)]
#[command(name = "twistlot", version, about = "Plan, read, judge and decide torsion-spring test lots.", after_help = EXIT_HELP)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Read rig exports (files or folders) into canonical curves and account for every file.
    #[command(after_help = EXIT_HELP)]
    Ingest(IngestArgs),
    /// Run a whole shift: read every export, judge every part, decide every listed lot, write the reports.
    #[command(after_help = EXIT_HELP)]
    Shift(ShiftArgs),
    /// Measure each tested part's curve and judge it against its part spec.
    #[command(after_help = EXIT_HELP)]
    Evaluate(EvaluateArgs),
    /// Look up attribute sampling plans, or design plans from producer's and consumer's risks.
    #[command(args_conflicts_with_subcommands = true)]
    Sampling(SamplingArgs),
    /// Show each part's inspection severity from the plant's switching record, or resume a discontinued part.
    #[command(args_conflicts_with_subcommands = true)]
    Switching(SwitchingArgs),
    /// List and validate the plugins found in the plugin folders.
    #[command(after_help = EXIT_HELP)]
    Plugins(PluginArgs),
    /// Generate invented rig exports: the demo shift or the benchmark's data.
    #[command(subcommand)]
    Synth(SynthCommand),
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
enum OutputFormat {
    Table,
    Csv,
    Json,
}

#[derive(Args)]
struct PluginFolders {
    /// Extra plugin folder (repeatable); the shipped `plugins/` is always searched first.
    #[arg(long = "plugins", value_name = "DIR")]
    plugin_dirs: Vec<PathBuf>,
}

impl PluginFolders {
    fn folders(&self) -> Vec<PathBuf> {
        let mut folders = vec![shipped_plugins_dir()];
        folders.extend(self.plugin_dirs.iter().cloned());
        folders
    }
}

#[derive(Args)]
struct IngestArgs {
    /// Export files or folders (searched recursively).
    #[arg(required = true, value_name = "PATH")]
    paths: Vec<PathBuf>,
    /// Read every file with this rig format instead of recognising it.
    #[arg(long, value_name = "NAME")]
    rig_format: Option<String>,
    #[command(flatten)]
    plugins: PluginFolders,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

#[derive(Args)]
struct ShiftArgs {
    /// The shift folder: the rigs' exports and the shift's `lots.yaml`.
    #[arg(value_name = "SHIFT_DIR")]
    shift_dir: PathBuf,
    /// Plant config (default: the first `plant.yaml` in the shift folder or a folder above it).
    #[arg(long, value_name = "FILE")]
    plant: Option<PathBuf>,
    /// Where reports go (default: `out/<shift folder name>`).
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// History folder holding the switching record (default: the plant config's `history`).
    #[arg(long, value_name = "DIR")]
    history: Option<PathBuf>,
}

#[derive(Args)]
struct SwitchingArgs {
    #[command(subcommand)]
    resume: Option<SwitchingCommand>,
    /// Plant config (default: `plant.yaml` in the current folder or a folder above it).
    #[arg(long, value_name = "FILE")]
    plant: Option<PathBuf>,
    /// History folder holding the switching record (default: the plant config's `history`).
    #[arg(long, value_name = "DIR")]
    history: Option<PathBuf>,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

#[derive(Subcommand)]
enum SwitchingCommand {
    /// Record the corrective action for a discontinued part; its next lot is inspected on tightened.
    Resume {
        /// Part number.
        part: String,
        /// Who approved the corrective action and what it was (kept in the record).
        #[arg(long)]
        note: String,
        /// Plant config (default: `plant.yaml` in the current folder or a folder above it).
        #[arg(long, value_name = "FILE")]
        plant: Option<PathBuf>,
        /// History folder holding the switching record (default: the plant config's `history`).
        #[arg(long, value_name = "DIR")]
        history: Option<PathBuf>,
    },
}

#[derive(Args)]
struct EvaluateArgs {
    /// Export files or folders (searched recursively).
    #[arg(required = true, value_name = "PATH")]
    paths: Vec<PathBuf>,
    /// Judge every export against this part spec.
    #[arg(long, value_name = "FILE")]
    spec: Option<PathBuf>,
    /// Plant config: specs are found by each export's part number in its parts folder.
    #[arg(long, value_name = "FILE")]
    plant: Option<PathBuf>,
    /// Evaluation window as fractions of the tested deflection, e.g. `0.2:0.8` (`0:1` = whole loading stroke).
    #[arg(long, value_name = "LO:HI", value_parser = parse_window)]
    window: Option<[f64; 2]>,
    /// Read every file with this rig format instead of recognising it.
    #[arg(long, value_name = "NAME")]
    rig_format: Option<String>,
    #[command(flatten)]
    plugins: PluginFolders,
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

#[derive(Args)]
struct SamplingArgs {
    #[command(subcommand)]
    design: Option<SamplingCommand>,
    /// Lot size.
    #[arg(long)]
    lot_size: Option<u64>,
    /// AQL, percent defective (a value of the scheme's AQL series).
    #[arg(long)]
    aql: Option<f64>,
    /// Inspection level: I, II, III, S-1 … S-4.
    #[arg(long, default_value = "II")]
    level: String,
    /// Severity: normal, tightened, reduced.
    #[arg(long, default_value = "normal")]
    severity: String,
    /// Sampling-scheme plugin to use.
    #[arg(long, default_value = "mil-std-105e")]
    scheme: String,
    #[command(flatten)]
    plugins: PluginFolders,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

#[derive(Subcommand)]
enum SamplingCommand {
    /// Design the smallest plan that meets an AQL at risk α and an LTPD at risk β.
    Design {
        /// AQL, percent defective.
        #[arg(long)]
        aql: f64,
        /// Producer's risk at the AQL.
        #[arg(long, default_value_t = 0.05)]
        alpha: f64,
        /// LTPD, percent defective.
        #[arg(long)]
        ltpd: f64,
        /// Consumer's risk at the LTPD.
        #[arg(long, default_value_t = 0.10)]
        beta: f64,
        /// A variables (k-method) plan instead of an attribute plan.
        #[arg(long)]
        variables: bool,
        /// For a variables plan: the process σ is known.
        #[arg(long, requires = "variables")]
        sigma_known: bool,
        /// For a variables plan: two-sided limits.
        #[arg(long, requires = "variables")]
        double_limit: bool,
        /// How to print the result.
        #[arg(long, value_enum, default_value = "table")]
        format: OutputFormat,
    },
}

#[derive(Args)]
struct PluginArgs {
    #[command(flatten)]
    plugins: PluginFolders,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

#[derive(Subcommand)]
enum SynthCommand {
    /// Write the demo shift described by a plan.
    Shift {
        /// The demo plan (YAML).
        #[arg(long)]
        plan: PathBuf,
        /// Folder of part specs the plan's lots refer to.
        #[arg(long)]
        parts: PathBuf,
        /// Folder to write the shift into (created).
        #[arg(long)]
        out: PathBuf,
        #[command(flatten)]
        plugins: PluginFolders,
    },
    /// Write the benchmark's exports.
    Bench {
        /// Number of exports.
        #[arg(long, default_value_t = 2000)]
        files: usize,
        /// Points per export.
        #[arg(long, default_value_t = 1600)]
        points: usize,
        /// Seed.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Folder to write into (created).
        #[arg(long)]
        out: PathBuf,
        #[command(flatten)]
        plugins: PluginFolders,
    },
}

fn main() -> ExitCode {
    // Output piped into `head` should end quietly, as other command-line tools do.
    #[cfg(unix)]
    // SAFETY: restoring the default SIGPIPE action before any thread starts has no other effect.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Ingest(args) => ingest(args),
        Command::Shift(args) => shift(args),
        Command::Evaluate(args) => evaluate(args),
        Command::Sampling(args) => sampling(args),
        Command::Switching(args) => switching(args),
        Command::Plugins(args) => plugins(args),
        Command::Synth(command) => synth(command),
    };
    match result {
        Ok(code) => code,
        Err(err) => {
            eprintln!("twistlot: {err:#}");
            ExitCode::FAILURE
        }
    }
}

fn load_catalog(folders: &PluginFolders) -> Result<PluginCatalog> {
    for dir in &folders.plugin_dirs {
        if !dir.is_dir() {
            bail!("plugin folder {} does not exist", dir.display());
        }
    }
    Ok(PluginCatalog::discover(&folders.folders()))
}

fn ingest(args: IngestArgs) -> Result<ExitCode> {
    let catalog = load_catalog(&args.plugins)?;
    for err in catalog.errors() {
        eprintln!("warning: plugin not loaded: {err}");
    }
    let formats = catalog.rig_formats().map_err(anyhow::Error::msg)?;
    if let Some(name) = &args.rig_format {
        if formats.by_name(name).is_none() {
            bail!(
                "there is no rig format named `{name}` (known: {})",
                formats.formats().iter().map(|f| f.name.as_str()).collect::<Vec<_>>().join(", ")
            );
        }
    }
    let (files, missing) = expand_inputs(&args.paths);
    let mut summaries: Vec<FileSummary> = missing.iter().map(FileSummary::rejected).collect();
    summaries.extend(ingest_each(&files, &formats, args.rig_format.as_deref(), |outcome| {
        FileSummary::from_outcome(&outcome)
    }));
    flag_duplicate_serials(&mut summaries);
    let rejected = summaries.iter().filter(|s| s.status == FileStatus::Rejected).count();
    match args.format {
        OutputFormat::Json => println!("{}", serde_json::to_string_pretty(&summaries)?),
        OutputFormat::Csv | OutputFormat::Table => {
            let mut table =
                Table::new(&["file", "status", "rig_format", "points", "serial", "part", "lot", "reason"]);
            for s in &summaries {
                let mut reason = s.reason.clone();
                for warning in &s.warnings {
                    if !reason.is_empty() {
                        reason.push_str("; ");
                    }
                    reason.push_str("warning: ");
                    reason.push_str(warning);
                }
                let meta = |k: &str| s.metadata.get(k).cloned().unwrap_or_default();
                table.row(vec![
                    s.file.clone(),
                    match s.status {
                        FileStatus::Accepted => "accepted".into(),
                        FileStatus::Rejected => "rejected".into(),
                    },
                    s.rig_format.clone().unwrap_or_default(),
                    s.points.to_string(),
                    meta("serial"),
                    meta("part"),
                    meta("lot"),
                    reason,
                ]);
            }
            print_rows(&table, args.format == OutputFormat::Csv);
            if args.format == OutputFormat::Table {
                println!(
                    "\n{} files: {} accepted, {rejected} rejected.",
                    summaries.len(),
                    summaries.len() - rejected
                );
            }
        }
    }
    for s in summaries.iter().filter(|s| !s.warnings.is_empty()) {
        for warning in &s.warnings {
            eprintln!("warning: {}: {warning}", s.file);
        }
    }
    Ok(if rejected > 0 { ExitCode::from(EXIT_SOME_REJECTED) } else { ExitCode::SUCCESS })
}

/// The first ground that ends in the lot's disposition (the one that decided it).
fn deciding_ground(grounds: &[String], disposition: &str) -> String {
    grounds
        .iter()
        .find(|g| g.contains(&format!(": {disposition}")) || g.starts_with(disposition))
        .or(grounds.first())
        .cloned()
        .unwrap_or_default()
}

fn find_plant(shift_dir: &Path) -> Option<PathBuf> {
    let start = std::fs::canonicalize(shift_dir).ok()?;
    start.ancestors().map(|dir| dir.join("plant.yaml")).find(|p| p.is_file())
}

fn shift(args: ShiftArgs) -> Result<ExitCode> {
    if !args.shift_dir.is_dir() {
        bail!("shift folder {} does not exist", args.shift_dir.display());
    }
    let plant_path = match args.plant.clone().or_else(|| find_plant(&args.shift_dir)) {
        Some(path) => path,
        None => bail!(
            "no plant config: give --plant FILE (no plant.yaml in {} or above it)",
            args.shift_dir.display()
        ),
    };
    let mut plant = Plant::load(&plant_path)?;
    if let Some(history) = &args.history {
        plant.history_dir = Some(history.clone());
    }
    let shift_name =
        args.shift_dir.file_name().map(|n| n.to_string_lossy().to_string()).unwrap_or_else(|| "shift".into());
    let out = args.out.clone().unwrap_or_else(|| PathBuf::from("out").join(&shift_name));
    let bar = if std::io::stderr().is_terminal() {
        indicatif::ProgressBar::new(0).with_style(
            indicatif::ProgressStyle::with_template("{bar:40} {pos}/{len} exports {elapsed}")
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        )
    } else {
        indicatif::ProgressBar::hidden()
    };
    let outcome = run_shift(&plant, &args.shift_dir, &out, &|done, total| {
        bar.set_length(total as u64);
        bar.set_position(done as u64);
    })?;
    bar.finish_and_clear();
    let summary = &outcome.summary;
    println!(
        "shift {} ({}): {} exports, {} read, {} rejected",
        summary.shift,
        plant.name,
        summary.files_total,
        summary.files_accepted,
        summary.files_rejected.len()
    );
    let mut table = Table::new(&[
        "lot",
        "part",
        "quantity",
        "severity",
        "tested",
        "failed",
        "invalid",
        "disposition",
        "grounds",
    ]);
    for lot in &summary.lots {
        table.row(vec![
            lot.lot.clone(),
            lot.part.clone(),
            lot.quantity.to_string(),
            lot.severity_label(),
            lot.tested.to_string(),
            lot.failed.to_string(),
            lot.invalid.to_string(),
            lot.disposition.to_uppercase(),
            deciding_ground(&lot.grounds, &lot.disposition),
        ]);
    }
    print_rows(&table, false);
    for rejected in &summary.files_rejected {
        println!("rejected: {}: {}", rejected.file, rejected.reason);
    }
    for unlisted in &summary.unlisted_tests {
        println!("not on the lot list: {unlisted}");
    }
    for failure in &summary.sink_failures {
        eprintln!("warning: {failure}");
    }
    println!("reports: {}", out.join("shift_summary.html").display());
    eprintln!("{CAUTION} A lot is released only by the people the plant's procedures name, never by this tool alone.");
    Ok(if summary.files_rejected.is_empty() { ExitCode::SUCCESS } else { ExitCode::from(EXIT_SOME_REJECTED) })
}

/// The plant config named on the command line, else the nearest `plant.yaml` upwards from here.
fn plant_with_history(plant: Option<PathBuf>, history: Option<PathBuf>) -> Result<Plant> {
    let path = match plant.or_else(|| find_plant(Path::new("."))) {
        Some(path) => path,
        None => bail!("no plant config: give --plant FILE (no plant.yaml here or above)"),
    };
    let mut plant = Plant::load(&path)?;
    if history.is_some() {
        plant.history_dir = history;
    }
    Ok(plant)
}

fn switching(args: SwitchingArgs) -> Result<ExitCode> {
    if let Some(SwitchingCommand::Resume { part, note, plant, history }) = args.resume {
        let plant = plant_with_history(plant, history)?;
        let stamp = twistlot_pipeline::shift::utc_stamp();
        let row = twistlot_pipeline::resume_part(&plant, &part, &note, &format!("resumed {stamp}"))?;
        println!("part {}: {}", row.part, row.explanation);
        eprintln!(
            "Resuming records that corrective action was taken; it does not check that action. \
             The customer's agreement governs whether acceptance may resume."
        );
        return Ok(ExitCode::SUCCESS);
    }
    let plant = plant_with_history(args.plant, args.history)?;
    let rows = twistlot_pipeline::plant_standings(&plant)?;
    match args.format {
        OutputFormat::Json => println!("{}", serde_json::to_string_pretty(&rows)?),
        format => {
            let mut table =
                Table::new(&["part", "severity", "lots", "not accepted", "last switch", "recorded lots"]);
            for row in &rows {
                table.row(vec![
                    row.part.clone(),
                    row.severity.clone(),
                    row.lots_on_severity.to_string(),
                    row.rejected_on_severity.to_string(),
                    row.last_switch.clone().unwrap_or_else(|| "-".into()),
                    row.recorded_lots.to_string(),
                ]);
            }
            print_rows(&table, format == OutputFormat::Csv);
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn evaluate(args: EvaluateArgs) -> Result<ExitCode> {
    let plant = args.plant.as_deref().map(Plant::load).transpose()?;
    let mut folders = args.plugins.folders();
    if let Some(plant) = &plant {
        folders.extend(plant.plugin_dirs.iter().cloned());
    }
    let catalog = PluginCatalog::discover(&folders);
    for err in catalog.errors() {
        eprintln!("warning: plugin not loaded: {err}");
    }
    let formats = catalog.rig_formats().map_err(anyhow::Error::msg)?;
    let checks = CheckSet::new(&check_manifests(&catalog))?;
    let specs = match (&args.spec, &plant) {
        (Some(spec), _) => SpecSource::Fixed(SpecLibrary::single(spec)?),
        (None, Some(plant)) => SpecSource::ByPart(SpecLibrary::load_dir(&plant.parts_dir)?),
        (None, None) => SpecSource::None,
    };
    let (files, missing) = expand_inputs(&args.paths);
    let options =
        EvaluateOptions { window: args.window, rig_format: args.rig_format.clone(), preview_points: 0 };
    let results = evaluate_files(&files, &formats, &specs, &checks, &options, &|| {});
    let mut tests = Vec::new();
    let mut rejected: Vec<twistlot_ingest::IngestError> = missing;
    for result in results {
        match result {
            Evaluated::Test(test) => tests.push(*test),
            Evaluated::Rejected(err) => rejected.push(err),
        }
    }
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
                "verdict",
                "findings",
            ]);
            for t in &tests {
                let notes: Vec<String> = t
                    .findings
                    .iter()
                    .filter(|f| f.verdict != twistlot_model::Verdict::Pass)
                    .map(|f| format!("{} {}: {}", f.class, f.verdict, f.message))
                    .collect();
                table.row(vec![
                    t.serial.clone().unwrap_or_else(|| t.file.clone()),
                    t.part.clone().unwrap_or_default(),
                    t.lot.clone().unwrap_or_default(),
                    fmt(t.metrics.rate_nmm_per_deg, 4),
                    fmt(t.metrics.rate_r2, 5),
                    fmt(t.metrics.free_angle_deg, 2),
                    format!("{:.1}", t.metrics.max_torque_nmm),
                    t.verdict.map(|v| v.to_string()).unwrap_or_else(|| "no spec".into()),
                    notes.join("; "),
                ]);
            }
            print_rows(&table, args.format == OutputFormat::Csv);
            if args.format == OutputFormat::Table {
                let count = |v| tests.iter().filter(|t| t.verdict == Some(v)).count();
                println!(
                    "\n{} tests: {} pass, {} fail, {} invalid; {} files rejected.",
                    tests.len(),
                    count(twistlot_model::Verdict::Pass),
                    count(twistlot_model::Verdict::Fail),
                    count(twistlot_model::Verdict::Invalid),
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
    Ok(if rejected.is_empty() { ExitCode::SUCCESS } else { ExitCode::from(EXIT_SOME_REJECTED) })
}

fn sampling(args: SamplingArgs) -> Result<ExitCode> {
    match args.design {
        Some(SamplingCommand::Design {
            aql,
            alpha,
            ltpd,
            beta,
            variables,
            sigma_known,
            double_limit,
            format,
        }) => {
            #[derive(serde::Serialize)]
            struct Designed {
                kind: &'static str,
                sample_size: u64,
                #[serde(skip_serializing_if = "Option::is_none")]
                accept: Option<u64>,
                #[serde(skip_serializing_if = "Option::is_none")]
                k: Option<f64>,
                #[serde(skip_serializing_if = "Option::is_none")]
                sigma_known: Option<bool>,
                oc: Vec<twistlot_sampling::OcPoint>,
            }
            let designed = if variables {
                let limits = if double_limit { LimitKind::Double } else { LimitKind::Single };
                let plan = design_variables(aql, alpha, ltpd, beta, sigma_known, limits)?;
                Designed {
                    kind: "variables",
                    sample_size: plan.sample_size,
                    accept: None,
                    k: Some(plan.k),
                    sigma_known: Some(sigma_known),
                    oc: plan.oc,
                }
            } else {
                let plan = design_attribute(aql, alpha, ltpd, beta)?;
                Designed {
                    kind: "attribute",
                    sample_size: plan.sample_size,
                    accept: Some(plan.accept),
                    k: None,
                    sigma_known: None,
                    oc: plan.oc,
                }
            };
            if format == OutputFormat::Json {
                println!("{}", serde_json::to_string_pretty(&designed)?);
            } else {
                match (designed.accept, designed.k) {
                    (Some(c), _) => println!(
                        "attribute plan: sample {} parts, accept the lot with at most {c} defective",
                        designed.sample_size
                    ),
                    (_, Some(k)) => println!(
                        "variables plan (σ {}): sample {} parts, accept when (limit − mean)/{} ≥ k = {k:.4}",
                        if sigma_known { "known" } else { "unknown" },
                        designed.sample_size,
                        if sigma_known { "σ" } else { "s" }
                    ),
                    _ => {}
                }
                let mut table = Table::new(&["defective_pct", "p_accept"]);
                for point in designed.oc.iter().step_by(5) {
                    table.row(vec![format!("{:.2}", point.defective_pct), format!("{:.4}", point.p_accept)]);
                }
                print_rows(&table, format == OutputFormat::Csv);
            }
        }
        None => {
            let (Some(lot_size), Some(aql)) = (args.lot_size, args.aql) else {
                bail!("give --lot-size and --aql (or use `twistlot sampling design`)");
            };
            let catalog = load_catalog(&args.plugins)?;
            let scheme = match catalog.sampling_schemes().remove(&args.scheme) {
                Some(scheme) => scheme.map_err(anyhow::Error::msg)?,
                None => bail!("there is no sampling-scheme plugin named `{}`", args.scheme),
            };
            let level: InspectionLevel = args.level.parse().map_err(anyhow::Error::msg)?;
            let severity: Severity = args.severity.parse().map_err(anyhow::Error::msg)?;
            let plan = scheme.plan(lot_size, level, aql, severity)?;
            if args.format == OutputFormat::Json {
                println!("{}", serde_json::to_string_pretty(&plan)?);
            } else {
                let mut table = Table::new(&[
                    "code_letter",
                    "sample_size",
                    "accept",
                    "reject",
                    "severity",
                    "hundred_percent",
                ]);
                table.row(vec![
                    plan.code_letter.clone(),
                    plan.sample_size.to_string(),
                    plan.accept.to_string(),
                    plan.reject.to_string(),
                    plan.severity.as_str().to_string(),
                    plan.hundred_percent.to_string(),
                ]);
                print_rows(&table, args.format == OutputFormat::Csv);
            }
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn plugins(args: PluginArgs) -> Result<ExitCode> {
    let catalog = load_catalog(&args.plugins)?;
    #[derive(serde::Serialize)]
    struct Row {
        file: String,
        status: &'static str,
        name: Option<String>,
        kind: Option<String>,
        description: Option<String>,
        error: Option<String>,
    }
    let rows: Vec<Row> = catalog
        .entries
        .iter()
        .map(|entry| match &entry.manifest {
            Ok(manifest) => {
                let header = manifest.header();
                Row {
                    file: entry.path.display().to_string(),
                    status: "valid",
                    name: Some(header.name),
                    kind: Some(header.kind.to_string()),
                    description: Some(header.description),
                    error: None,
                }
            }
            Err(err) => Row {
                file: entry.path.display().to_string(),
                status: "invalid",
                name: None,
                kind: None,
                description: None,
                error: Some(err.to_string()),
            },
        })
        .collect();
    // A second compile step finds clashes between valid manifests (two formats with one name).
    let clash = catalog.rig_formats().err();
    match args.format {
        OutputFormat::Json => println!("{}", serde_json::to_string_pretty(&rows)?),
        _ => {
            let mut table = Table::new(&["kind", "name", "status", "file", "description / error"]);
            for r in &rows {
                table.row(vec![
                    r.kind.clone().unwrap_or_default(),
                    r.name.clone().unwrap_or_default(),
                    r.status.to_string(),
                    r.file.clone(),
                    r.error.clone().or_else(|| r.description.clone()).unwrap_or_default(),
                ]);
            }
            print_rows(&table, args.format == OutputFormat::Csv);
        }
    }
    if let Some(clash) = &clash {
        eprintln!("error: {clash}");
    }
    let invalid = rows.iter().filter(|r| r.status == "invalid").count();
    for r in rows.iter().filter(|r| r.status == "invalid") {
        eprintln!("error: {}", r.error.clone().unwrap_or_default());
    }
    Ok(if invalid > 0 || clash.is_some() { ExitCode::from(EXIT_SOME_REJECTED) } else { ExitCode::SUCCESS })
}

fn rig_format_manifests(catalog: &PluginCatalog) -> BTreeMap<String, RigFormatManifest> {
    catalog
        .entries
        .iter()
        .filter_map(|e| match &e.manifest {
            Ok(Manifest::RigFormat(m)) => Some((m.name.clone(), (**m).clone())),
            _ => None,
        })
        .collect()
}

fn write_files(out: &Path, files: &[twistlot_synth::GeneratedFile]) -> Result<()> {
    std::fs::create_dir_all(out).with_context(|| format!("cannot create {}", out.display()))?;
    for file in files {
        let path = out.join(&file.relative_path);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).with_context(|| format!("cannot create {}", parent.display()))?;
        }
        std::fs::write(&path, &file.bytes).with_context(|| format!("cannot write {}", path.display()))?;
    }
    Ok(())
}

fn synth(command: SynthCommand) -> Result<ExitCode> {
    match command {
        SynthCommand::Shift { plan, parts, out, plugins } => {
            let catalog = load_catalog(&plugins)?;
            let text =
                std::fs::read_to_string(&plan).with_context(|| format!("cannot read {}", plan.display()))?;
            let plan = twistlot_synth::DemoPlan::from_yaml(&plan.display().to_string(), &text)?;
            let mut specs = BTreeMap::new();
            let mut entries: Vec<PathBuf> = std::fs::read_dir(&parts)
                .with_context(|| format!("cannot list {}", parts.display()))?
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
                .collect();
            entries.sort();
            for path in entries {
                let text = std::fs::read_to_string(&path)
                    .with_context(|| format!("cannot read {}", path.display()))?;
                let spec = PartSpec::from_yaml(&path.display().to_string(), &text)?;
                specs.insert(spec.part.clone(), spec);
            }
            let files = twistlot_synth::generate_shift(&plan, &specs, &rig_format_manifests(&catalog))?;
            write_files(&out, &files)?;
            println!("wrote {} files to {}", files.len(), out.display());
            eprintln!("{CAUTION}");
        }
        SynthCommand::Bench { files, points, seed, out, plugins } => {
            let catalog = load_catalog(&plugins)?;
            let manifests = rig_format_manifests(&catalog);
            let layouts: Vec<RigFormatManifest> = ["native", "korvel-tab", "ostrel-semi", "pellam-fixed"]
                .iter()
                .filter_map(|name| manifests.get(*name).cloned())
                .collect();
            let generated = twistlot_synth::generate_bench(seed, files, points, &layouts)?;
            write_files(&out, &generated)?;
            println!("wrote {} files to {}", generated.len(), out.display());
        }
    }
    Ok(ExitCode::SUCCESS)
}
