//! `twistlot synth`: invented rig exports for the demo shift and the benchmarks.

use super::{open, PlantArgs};
use crate::CAUTION;
use anyhow::{Context, Result};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use twistlot_model::plugin::RigFormatManifest;
use twistlot_model::PartSpec;

/// The `synth` subcommands.
#[derive(clap::Subcommand)]
pub enum Command {
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
        plant: PlantArgs,
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
        plant: PlantArgs,
    },
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

fn load_specs(parts: &Path) -> Result<BTreeMap<String, PartSpec>> {
    let mut entries: Vec<PathBuf> = std::fs::read_dir(parts)
        .with_context(|| format!("cannot list {}", parts.display()))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
        .collect();
    entries.sort();
    let mut specs = BTreeMap::new();
    for path in entries {
        let text =
            std::fs::read_to_string(&path).with_context(|| format!("cannot read {}", path.display()))?;
        let spec = PartSpec::from_yaml(&path.display().to_string(), &text)?;
        specs.insert(spec.part.clone(), spec);
    }
    Ok(specs)
}

/// Runs the command.
pub fn run(command: Command) -> Result<ExitCode> {
    match command {
        Command::Shift { plan, parts, out, plant } => {
            let plant = open(&plant.options(None))?;
            let text =
                std::fs::read_to_string(&plan).with_context(|| format!("cannot read {}", plan.display()))?;
            let plan = twistlot_synth::DemoPlan::from_yaml(&plan.display().to_string(), &text)?;
            let specs = load_specs(&parts)?;
            let files = twistlot_synth::generate_shift(&plan, &specs, &plant.catalog.rig_format_manifests())?;
            write_files(&out, &files)?;
            println!("wrote {} files to {}", files.len(), out.display());
            eprintln!("{CAUTION}");
        }
        Command::Bench { files, points, seed, out, plant } => {
            let plant = open(&plant.options(None))?;
            let manifests = plant.catalog.rig_format_manifests();
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
