//! One module per command: its arguments and how it prints; the work is in the crates.

pub mod evaluate;
pub mod ingest;
pub mod plan;
pub mod plugins;
pub mod sampling;
pub mod shift;
pub mod swing;
pub mod switching;
pub mod synth;
pub mod theory;

use anyhow::{bail, Context, Result};
use clap::ValueEnum;
use std::path::{Path, PathBuf};
use twistlot_pipeline::{OpenOptions, OpenPlant};

/// How a command prints its result.
#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum OutputFormat {
    /// Aligned columns for a terminal.
    Table,
    /// Comma-separated values with a header row.
    Csv,
    /// Pretty-printed JSON.
    Json,
}

/// The plant and plugin folders, as every command that reads exports takes them.
#[derive(clap::Args, Clone, Default)]
pub struct PlantArgs {
    /// Plant config (default: `plant.yaml` in the current folder or a folder above it, when there is one).
    #[arg(long, value_name = "FILE")]
    pub plant: Option<PathBuf>,
    /// Extra plugin folder (repeatable), searched after the plant's own; the built-in plugins are always there.
    #[arg(long = "plugins", value_name = "DIR")]
    pub plugin_dirs: Vec<PathBuf>,
}

impl PlantArgs {
    /// Options to open the plant with: found upwards from `find_from` unless `--plant` names one.
    pub fn options(&self, find_from: Option<PathBuf>) -> OpenOptions {
        OpenOptions {
            plant_file: self.plant.clone(),
            find_from,
            plugin_dirs: self.plugin_dirs.clone(),
            ..OpenOptions::default()
        }
    }
}

/// Opens the plant, naming what was being opened when it fails.
pub fn open(options: &OpenOptions) -> Result<OpenPlant> {
    let what = match &options.plant_file {
        Some(file) => format!("opening the plant config {}", file.display()),
        None => "opening the plant".to_string(),
    };
    OpenPlant::open(options).context(what)
}

/// Refuses to run when none of the paths named on the command line exists: the command
/// could not run at all (exit 1), the same as a missing shift folder. When some exist,
/// the missing ones are rejected inputs like any unreadable file (exit 3).
pub fn require_some_path(paths: &[PathBuf]) -> Result<()> {
    if !paths.is_empty() && paths.iter().all(|p| !Path::new(p).exists()) {
        let names: Vec<String> = paths.iter().map(|p| p.display().to_string()).collect();
        bail!("no such file or folder: {}", names.join(", "));
    }
    Ok(())
}

/// Prints the part specs that did not load (their lots are held, their parts' tests not judged).
pub fn warn_spec_problems(plant: &OpenPlant) {
    for problem in plant.specs.problems() {
        eprintln!("rejected spec: {}", problem.reason);
    }
}
