//! `twistlot plan`: plan a shift's tests across the rigs, print the plan, and write
//! `plan.json`, `plan.html` and one work list per rig.

use super::open;
use crate::output::{print_rows, Table};
use crate::{CAUTION, EXIT_SOME_REJECTED};
use anyhow::{bail, Context, Result};
use clap::ValueEnum;
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_pipeline::{plan_shift, write_plan, OpenOptions};
use twistlot_schedule::Budget;

/// How `twistlot plan` prints the plan.
#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum PlanFormat {
    /// Aligned columns for a terminal.
    Table,
    /// The plan as `plan.json` holds it.
    Json,
}

/// Arguments of `twistlot plan`.
#[derive(clap::Args)]
pub struct Args {
    /// The shift folder: its `lots.yaml` with the shift's hours and lots.
    #[arg(value_name = "SHIFT_DIR")]
    shift_dir: PathBuf,
    /// Plant config (default: the first `plant.yaml` in the shift folder or a folder above it).
    #[arg(long, value_name = "FILE")]
    plant: Option<PathBuf>,
    /// Extra plugin folder (repeatable), searched after the plant's own.
    #[arg(long = "plugins", value_name = "DIR")]
    plugin_dirs: Vec<PathBuf>,
    /// How to print the plan.
    #[arg(long, value_enum, default_value = "table")]
    format: PlanFormat,
    /// Where the plan goes (default: `out/<shift folder name>`, where `twistlot shift` writes
    /// its reports and looks for the plan).
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// History folder holding the switching record (default: the plant config's `history`).
    #[arg(long, value_name = "DIR")]
    history: Option<PathBuf>,
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
        ..OpenOptions::default()
    })?;
    let planned = plan_shift(&plant, &args.shift_dir, Budget::default())
        .with_context(|| format!("planning the shift {}", args.shift_dir.display()))?;
    let out = args.out.clone().unwrap_or_else(|| PathBuf::from("out").join(&planned.shift));
    let written = write_plan(&plant, &planned, &out)
        .with_context(|| format!("writing the plan into {}", out.display()))?;
    let plan = &planned.plan;
    match args.format {
        PlanFormat::Json => println!("{}", serde_json::to_string_pretty(&planned)?),
        PlanFormat::Table => {
            println!(
                "plan for shift {} ({}): {} lots planned, {} left out; {}",
                planned.shift,
                plant.name(),
                plan.metrics.lots_assigned,
                plan.metrics.lots_unscheduled,
                plan.method
            );
            let mut table = Table::new(&[
                "rig", "step", "lot", "part", "samples", "start", "end", "setup_s", "ship_by", "late_s",
            ]);
            for check in &plan.checks {
                table.row(vec![
                    check.rig.clone(),
                    "reference check".into(),
                    String::new(),
                    check.reference.clone(),
                    "1".into(),
                    check.start.to_string(),
                    check.end.to_string(),
                    "0".into(),
                    String::new(),
                    String::new(),
                ]);
                for a in plan.assignments.iter().filter(|a| a.rig == check.rig) {
                    table.row(vec![
                        a.rig.clone(),
                        "lot".into(),
                        a.lot.clone(),
                        a.part.clone(),
                        a.samples.to_string(),
                        a.start.to_string(),
                        a.end.to_string(),
                        a.setup_s.to_string(),
                        a.due.map(|d| d.to_string()).unwrap_or_default(),
                        a.tardiness_s.to_string(),
                    ]);
                }
            }
            print_rows(&table, false);
            for u in &plan.unscheduled {
                println!("left out: {} ({}): {}", u.lot, u.part, u.reason);
            }
            for error in &planned.rule_errors {
                eprintln!("warning: {error}");
            }
            let m = &plan.metrics;
            println!(
                "weighted tardiness {} weight·s (lower bound {}); makespan {} s (lower bound {})",
                m.weighted_tardiness_s,
                m.weighted_tardiness_lower_bound_s,
                m.makespan_s,
                m.makespan_lower_bound_s
            );
            println!("plan: {}", written.html.display());
            for worklist in &written.worklists {
                println!("work list: {}", worklist.display());
            }
        }
    }
    eprintln!("{CAUTION} Run each rig's reference-spring check before its first lot.");
    Ok(if plan.unscheduled.is_empty() { ExitCode::SUCCESS } else { ExitCode::from(EXIT_SOME_REJECTED) })
}
