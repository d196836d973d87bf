//! `twistlot shift`: run a whole shift and print each lot's disposition.

use super::{open, warn_spec_problems};
use crate::output::{print_rows, Table};
use crate::{CAUTION, EXIT_SOME_REJECTED};
use anyhow::{bail, Context, Result};
use std::io::IsTerminal;
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_model::Approval;
use twistlot_pipeline::{run_shift, OpenOptions};

/// Arguments of `twistlot shift`.
#[derive(clap::Args)]
pub struct Args {
    /// The shift folder: the rigs' exports and the shift's `lots.yaml`.
    #[arg(value_name = "SHIFT_DIR")]
    shift_dir: PathBuf,
    /// Plant config (default: the first `plant.yaml` in the shift folder or a folder above it).
    #[arg(long, value_name = "FILE")]
    plant: Option<PathBuf>,
    /// Extra plugin folder (repeatable), searched after the plant's own.
    #[arg(long = "plugins", value_name = "DIR")]
    plugin_dirs: Vec<PathBuf>,
    /// Where reports go (default: `out/<shift folder name>`).
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// History folder holding the switching record (default: the plant config's `history`).
    #[arg(long, value_name = "DIR")]
    history: Option<PathBuf>,
    /// Create the history folder if it does not exist yet.
    #[arg(long)]
    init_history: bool,
    /// Name for the reports' "tested by" line (default: the plant config's `approval.tested_by`; blank to sign by hand).
    #[arg(long, value_name = "NAME")]
    tested_by: Option<String>,
    /// Name for the reports' "reviewed by" line (default: the plant config's `approval.reviewed_by`).
    #[arg(long, value_name = "NAME")]
    reviewed_by: Option<String>,
    /// Name for the reports' "released by" line (default: the plant config's `approval.released_by`).
    #[arg(long, value_name = "NAME")]
    released_by: Option<String>,
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    if !args.shift_dir.is_dir() {
        bail!("shift folder {} does not exist", args.shift_dir.display());
    }
    let plant = open(&OpenOptions {
        plant_file: args.plant.clone(),
        find_from: Some(args.shift_dir.clone()),
        require_plant: true,
        plugin_dirs: args.plugin_dirs.clone(),
        history: args.history.clone(),
        init_history: args.init_history,
        approval: Approval {
            tested_by: args.tested_by.clone(),
            reviewed_by: args.reviewed_by.clone(),
            released_by: args.released_by.clone(),
        },
        ..OpenOptions::default()
    })?;
    warn_spec_problems(&plant);
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
    let summary = run_shift(&plant, &args.shift_dir, &out, &|done, total| {
        bar.set_length(total as u64);
        bar.set_position(done as u64);
    })
    .with_context(|| format!("running the shift {}", args.shift_dir.display()))?;
    bar.finish_and_clear();
    println!(
        "shift {} ({}): {} exports, {} read, {} rejected, {} duplicate",
        summary.shift,
        plant.name(),
        summary.files_total,
        summary.files_accepted,
        summary.files_rejected.len(),
        summary.duplicates.len()
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
            lot.disposition.as_str().to_uppercase(),
            lot.deciding_ground().unwrap_or_default().to_string(),
        ]);
    }
    print_rows(&table, false);
    for rejected in &summary.files_rejected {
        println!("rejected: {}: {}", rejected.file, rejected.reason);
    }
    for duplicate in &summary.duplicates {
        println!("duplicate: {} has the same bytes as {} (counted once)", duplicate.file, duplicate.same_as);
    }
    for lot in &summary.lots {
        for retest in &lot.superseded {
            println!("retest: {} of serial {} is superseded by {}", retest.file, retest.serial, retest.by);
        }
    }
    for unlisted in &summary.unlisted_lots {
        println!(
            "not on the lot list: lot {} ({} test(s), {} failed, {} invalid; evaluated, not decided)",
            unlisted.lot.as_deref().unwrap_or("(none named)"),
            unlisted.tested,
            unlisted.failed,
            unlisted.invalid
        );
    }
    for skipped in &summary.skipped_files {
        println!("skipped: {} ({})", skipped.file, skipped.reason);
    }
    for warning in &summary.warnings {
        eprintln!("warning: {warning}");
    }
    for failure in &summary.sink_failures {
        eprintln!("warning: {failure}");
    }
    println!("reports: {}", out.join("shift_summary.html").display());
    eprintln!("{CAUTION} A lot is released only by the people the plant's procedures name, never by this tool alone.");
    let all_read = summary.files_rejected.is_empty() && summary.spec_problems.is_empty();
    Ok(if all_read { ExitCode::SUCCESS } else { ExitCode::from(EXIT_SOME_REJECTED) })
}
