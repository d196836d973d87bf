//! `twistlot switching`: each part's inspection severity, and resuming a discontinued part.

use super::{open, OutputFormat};
use crate::output::{print_rows, Table};
use anyhow::Result;
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_pipeline::{plant_standings, resume_part, OpenOptions};

/// Arguments of `twistlot switching`.
#[derive(clap::Args)]
pub struct Args {
    #[command(subcommand)]
    resume: Option<Resume>,
    #[command(flatten)]
    where_: Where,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

/// Which plant and history.
#[derive(clap::Args, Clone)]
struct Where {
    /// Plant config (default: `plant.yaml` in the current folder or a folder above it).
    #[arg(long, value_name = "FILE")]
    plant: Option<PathBuf>,
    /// History folder holding the switching record (default: the plant config's `history`).
    #[arg(long, value_name = "DIR")]
    history: Option<PathBuf>,
}

impl Where {
    fn options(&self) -> OpenOptions {
        OpenOptions {
            plant_file: self.plant.clone(),
            find_from: Some(PathBuf::from(".")),
            require_plant: true,
            history: self.history.clone(),
            ..OpenOptions::default()
        }
    }
}

#[derive(clap::Subcommand)]
enum Resume {
    /// Record the corrective action for a discontinued part; its next lot is inspected on tightened.
    Resume {
        /// Part number.
        part: String,
        /// Who approved the corrective action and what it was (kept in the record).
        #[arg(long)]
        note: String,
        #[command(flatten)]
        where_: Where,
    },
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    if let Some(Resume::Resume { part, note, where_ }) = args.resume {
        let plant = open(&where_.options())?;
        let stamp = twistlot_pipeline::shift::utc_stamp();
        let row = resume_part(&plant, &part, &note, &format!("resumed {stamp}"))?;
        println!("part {}: {}", row.part, row.explanation);
        eprintln!(
            "Resuming records that corrective action was taken; it does not check that action. \
             The customer's agreement governs whether acceptance may resume."
        );
        return Ok(ExitCode::SUCCESS);
    }
    let plant = open(&args.where_.options())?;
    let rows = plant_standings(&plant)?;
    match args.format {
        OutputFormat::Json => println!("{}", serde_json::to_string_pretty(&rows)?),
        format => {
            let mut table =
                Table::new(&["part", "severity", "lots", "not accepted", "last switch", "recorded lots"]);
            for row in &rows {
                table.row(vec![
                    row.part.clone(),
                    row.severity.to_string(),
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
