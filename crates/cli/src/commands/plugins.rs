//! `twistlot plugins`: every plugin, where it came from, and whether it is in force.

use super::{OutputFormat, PlantArgs};
use crate::output::{print_rows, Table};
use crate::EXIT_SOME_REJECTED;
use anyhow::{Context, Result};
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_model::{Manifest, PluginKind};
use twistlot_pipeline::{OpenPlant, PluginEntry};

/// Arguments of `twistlot plugins`.
#[derive(clap::Args)]
pub struct Args {
    #[command(flatten)]
    plant: PlantArgs,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

#[derive(serde::Serialize)]
struct Row {
    kind: Option<String>,
    name: Option<String>,
    /// `active`, `inactive`, `overridden` or `invalid`.
    status: &'static str,
    /// `built in` or the plugin folder.
    source: String,
    file: String,
    description: Option<String>,
    note: Option<String>,
}

fn row(entry: &PluginEntry, named_checks: &[String], named_sinks: &[String]) -> Row {
    let source = entry.source.to_string();
    let file = entry.path.display().to_string();
    let manifest = match &entry.manifest {
        Ok(manifest) => manifest,
        Err(err) => {
            return Row {
                kind: None,
                name: None,
                status: "invalid",
                source,
                file,
                description: None,
                note: Some(err.to_string()),
            }
        }
    };
    let header = manifest.header();
    let (status, note) = if let Some(by) = &entry.overridden_by {
        ("overridden", Some(format!("overridden by {}", by.display())))
    } else {
        match manifest {
            Manifest::Check(_) if !named_checks.contains(&header.name) => {
                ("inactive", Some("applies only where a plant config names it under `checks:`".to_string()))
            }
            Manifest::Sink(_) if !named_sinks.contains(&header.name) => {
                ("inactive", Some("runs only where a plant config names it under `sinks:`".to_string()))
            }
            _ => ("active", None),
        }
    };
    Row {
        kind: Some(header.kind.to_string()),
        name: Some(header.name),
        status,
        source,
        file,
        description: Some(header.description),
        note,
    }
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    let options = args.plant.options(Some(PathBuf::from(".")));
    let (config, catalog) = OpenPlant::catalog(&options).context("opening the plugin folders")?;
    let named_checks = config.as_ref().map(|c| c.checks.clone()).unwrap_or_default();
    let named_sinks = config.as_ref().map(|c| c.sinks.clone()).unwrap_or_default();
    let rows: Vec<Row> = catalog.entries.iter().map(|e| row(e, &named_checks, &named_sinks)).collect();
    // Compiling finds what single manifests cannot show: two formats claiming one name,
    // a check or sink the plant names that no folder holds.
    let mut problems: Vec<String> = Vec::new();
    if catalog.errors().next().is_none() {
        if let Err(err) = catalog.rig_formats() {
            problems.push(err.to_string());
        }
        if let Err(err) = catalog.checks(&named_checks) {
            problems.push(err.to_string());
        }
        if let Err(err) = catalog.sinks(&named_sinks) {
            problems.push(err.to_string());
        }
    }
    match args.format {
        OutputFormat::Json => println!("{}", serde_json::to_string_pretty(&rows)?),
        format => {
            let mut table = Table::new(&["kind", "name", "status", "source", "file", "description / note"]);
            for r in &rows {
                let text = match (&r.note, &r.description) {
                    (Some(note), Some(description)) => format!("{description} ({note})"),
                    (Some(note), None) => note.clone(),
                    (None, description) => description.clone().unwrap_or_default(),
                };
                table.row(vec![
                    r.kind.clone().unwrap_or_default(),
                    r.name.clone().unwrap_or_default(),
                    r.status.to_string(),
                    r.source.clone(),
                    r.file.clone(),
                    text,
                ]);
            }
            print_rows(&table, format == OutputFormat::Csv);
        }
    }
    let invalid: Vec<&Row> = rows.iter().filter(|r| r.status == "invalid").collect();
    for r in &invalid {
        eprintln!("error: {}", r.note.clone().unwrap_or_default());
    }
    for problem in &problems {
        eprintln!("error: {problem}");
    }
    let kinds = catalog.entries.iter().filter_map(|e| e.active()).map(|m| m.header().kind);
    if !kinds.clone().any(|k| k == PluginKind::RigFormat) {
        eprintln!("error: no rig format is in force");
        return Ok(ExitCode::from(EXIT_SOME_REJECTED));
    }
    Ok(if invalid.is_empty() && problems.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(EXIT_SOME_REJECTED)
    })
}
