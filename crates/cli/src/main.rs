//! The `twistlot` command: parses arguments, calls the crates, prints results.
//!
//! Nothing here computes; every job lives in a library crate so it can be tested
//! and reused. Exit codes are part of the interface (see `--help`).

mod output;

use anyhow::{bail, Context, Result};
use clap::{Args, Parser, Subcommand, ValueEnum};
use output::{print_rows, Table};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use twistlot_ingest::{expand_inputs, flag_duplicate_serials, ingest_each, FileStatus, FileSummary};
use twistlot_model::plugin::RigFormatManifest;
use twistlot_model::{Manifest, PartSpec};
use twistlot_pipeline::{shipped_plugins_dir, PluginCatalog};

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
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Ingest(args) => ingest(args),
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
            let mut table = Table::new(&["file", "status", "rig_format", "points", "serial", "part", "lot", "reason"]);
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
                println!("\n{} files: {} accepted, {rejected} rejected.", summaries.len(), summaries.len() - rejected);
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
            let text = std::fs::read_to_string(&plan).with_context(|| format!("cannot read {}", plan.display()))?;
            let plan = twistlot_synth::DemoPlan::from_yaml(&plan.display().to_string(), &text)?;
            let mut specs = BTreeMap::new();
            let mut entries: Vec<PathBuf> = std::fs::read_dir(&parts)
                .with_context(|| format!("cannot list {}", parts.display()))?
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
                .collect();
            entries.sort();
            for path in entries {
                let text = std::fs::read_to_string(&path).with_context(|| format!("cannot read {}", path.display()))?;
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
