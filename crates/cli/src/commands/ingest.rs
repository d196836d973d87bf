//! `twistlot ingest`: read exports and account for every file.

use super::{open, require_some_path, OutputFormat, PlantArgs};
use crate::output::{print_rows, Table};
use crate::EXIT_SOME_REJECTED;
use anyhow::{bail, Result};
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_ingest::{flag_duplicate_serials, ingest_ordered, FileStatus, FileSummary};
use twistlot_pipeline::shift::shift_inputs;

/// Arguments of `twistlot ingest`.
#[derive(clap::Args)]
pub struct Args {
    /// Export files or folders (searched recursively).
    #[arg(required = true, value_name = "PATH")]
    paths: Vec<PathBuf>,
    /// Read every file with this rig format instead of recognising it.
    #[arg(long, value_name = "NAME")]
    rig_format: Option<String>,
    #[command(flatten)]
    plant: PlantArgs,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    require_some_path(&args.paths)?;
    let plant = open(&args.plant.options(None))?;
    if let Some(name) = &args.rig_format {
        if plant.formats.by_name(name).is_none() {
            let known: Vec<&str> = plant.formats.formats().iter().map(|f| f.name.as_str()).collect();
            bail!("there is no rig format named `{name}` (known: {})", known.join(", "));
        }
    }
    // A shift folder's lot list and plan are not exports: skipped by name, and said so.
    let (files, missing, skipped) = shift_inputs(&args.paths);
    for file in &skipped {
        eprintln!("skipped: {} ({})", file.file, file.reason);
    }
    let mut summaries: Vec<FileSummary> = missing.iter().map(FileSummary::rejected).collect();
    ingest_ordered(
        &files,
        &plant.formats,
        args.rig_format.as_deref(),
        |outcome| FileSummary::from_outcome(&outcome),
        |summary| summaries.push(summary),
    );
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
