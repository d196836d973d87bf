//! Opening a plant: the one place every command gets its config, plugins, formats,
//! checks, specs, sampling schemes, templates and history folder from.
//!
//! Everything a command may override (the plant file, extra plugin folders, the
//! history folder, extra checks) is an [`OpenOptions`] field applied while opening, so
//! the loaded [`Plant`] is never changed afterwards and every command validates the
//! same things in the same order.

use crate::plant::{PhysicsConfig, Plant, PlantError, SpecLibrary};
use crate::plugins::{PluginCatalog, PluginError, Schemes};
use std::path::{Path, PathBuf};
use twistlot_ingest::FormatSet;
use twistlot_model::plugin::SinkManifest;
use twistlot_model::{Approval, PlantOffset};
use twistlot_report::{Renderer, ReportError};
use twistlot_stats::{CheckError, CheckSet};

/// The file name a plant config is looked for under, upwards from a folder.
pub const PLANT_FILE: &str = "plant.yaml";

/// What to open and what the command line overrides.
#[derive(Debug, Clone, Default)]
pub struct OpenOptions {
    /// The plant config (`--plant`); when absent, `plant.yaml` is looked for upwards from `find_from`.
    pub plant_file: Option<PathBuf>,
    /// Where to start looking for `plant.yaml` when no file is given.
    pub find_from: Option<PathBuf>,
    /// Refuse to open without a plant config.
    pub require_plant: bool,
    /// Extra plugin folders (`--plugins`), searched after the plant's own.
    pub plugin_dirs: Vec<PathBuf>,
    /// Check plugins to apply besides those the plant config names (`--check`).
    pub checks: Vec<String>,
    /// History folder instead of the plant config's (`--history`).
    pub history: Option<PathBuf>,
    /// Create the history folder when it does not exist (`--init-history`).
    pub init_history: bool,
    /// Names for the reports' approval block given on the command line (`--tested-by`…);
    /// each one given replaces the plant config's.
    pub approval: Approval,
}

/// Why a plant could not be opened.
#[derive(Debug, thiserror::Error)]
pub enum OpenError {
    /// No plant config was given or found.
    #[error("no plant config: give --plant FILE (no {PLANT_FILE} in {} or a folder above it)", .0.display())]
    NoPlant(PathBuf),
    /// The plant config or a part spec does not load.
    #[error("cannot open the plant")]
    Plant(#[source] PlantError),
    /// The plugins do not load or do not fit together.
    #[error("cannot load the plugins")]
    Plugins(#[source] PluginError),
    /// A check plugin's expression does not compile.
    #[error("cannot compile the check plugins")]
    Checks(#[source] CheckError),
    /// The report templates cannot be set up.
    #[error("cannot set up the report templates")]
    Templates(#[source] ReportError),
    /// The history folder named does not exist.
    #[error(
        "the history folder {} does not exist; check the path, or give --init-history to start a new history there",
        .0.display()
    )]
    NoHistory(PathBuf),
    /// The history folder could not be created.
    #[error("cannot create the history folder {}", path.display())]
    CreateHistory {
        /// The folder.
        path: PathBuf,
        /// What the file system said.
        #[source]
        source: std::io::Error,
    },
}

/// A plant opened for a command.
#[derive(Debug)]
pub struct OpenPlant {
    /// The plant config, when there is one.
    pub config: Option<Plant>,
    /// Every plugin manifest, built in or found.
    pub catalog: PluginCatalog,
    /// The rig formats in force, compiled.
    pub formats: FormatSet,
    /// The check plugins that apply, compiled.
    pub checks: CheckSet,
    /// Sampling schemes by name.
    pub schemes: Schemes,
    /// Part specs (empty without a plant config).
    pub specs: SpecLibrary,
    /// History folder, when the plant keeps one.
    pub history_dir: Option<PathBuf>,
    /// Who signs the lot reports: the plant config's names, overridden by the command line's.
    pub approval: Approval,
}

impl OpenPlant {
    /// The plant config and the plugin catalog only, valid or not: what `twistlot plugins`
    /// lists. Every other command opens the whole plant with [`OpenPlant::open`].
    pub fn catalog(options: &OpenOptions) -> Result<(Option<Plant>, PluginCatalog), OpenError> {
        let plant_file = match &options.plant_file {
            Some(file) => Some(file.clone()),
            None => options.find_from.as_deref().and_then(find_plant_file),
        };
        if plant_file.is_none() && options.require_plant {
            let from = options.find_from.clone().unwrap_or_else(|| PathBuf::from("."));
            return Err(OpenError::NoPlant(from));
        }
        let config = plant_file.as_deref().map(Plant::load).transpose().map_err(OpenError::Plant)?;
        let mut folders: Vec<PathBuf> = config.iter().flat_map(|c| c.plugin_dirs.iter().cloned()).collect();
        folders.extend(options.plugin_dirs.iter().cloned());
        let catalog = PluginCatalog::discover(&folders).map_err(OpenError::Plugins)?;
        Ok((config, catalog))
    }

    /// Opens a plant as `options` say; see the module doc.
    pub fn open(options: &OpenOptions) -> Result<OpenPlant, OpenError> {
        let (config, catalog) = OpenPlant::catalog(options)?;
        catalog.require_valid().map_err(OpenError::Plugins)?;
        let formats = catalog.rig_formats().map_err(OpenError::Plugins)?;
        let schemes = catalog.sampling_schemes().map_err(OpenError::Plugins)?;
        let mut check_names: Vec<String> = config.iter().flat_map(|c| c.checks.iter().cloned()).collect();
        check_names.extend(options.checks.iter().cloned());
        check_names.dedup();
        let checks = CheckSet::new(&catalog.checks(&check_names).map_err(OpenError::Plugins)?)
            .map_err(OpenError::Checks)?;
        let specs = match &config {
            Some(config) => SpecLibrary::load_dir(&config.parts_dir).map_err(OpenError::Plant)?,
            None => SpecLibrary::default(),
        };
        let history_dir =
            options.history.clone().or_else(|| config.as_ref().and_then(|c| c.history_dir.clone()));
        if let Some(dir) = &history_dir {
            if !dir.is_dir() {
                if !options.init_history {
                    return Err(OpenError::NoHistory(dir.clone()));
                }
                std::fs::create_dir_all(dir)
                    .map_err(|source| OpenError::CreateHistory { path: dir.clone(), source })?;
            }
        }
        let approval =
            config.as_ref().map(|c| c.approval.clone()).unwrap_or_default().overridden_by(&options.approval);
        Ok(OpenPlant { config, catalog, formats, checks, schemes, specs, history_dir, approval })
    }

    /// The plant clock's offset from UTC (UTC when the plant config gives none).
    pub fn utc_offset(&self) -> PlantOffset {
        self.config.as_ref().and_then(|c| c.utc_offset).unwrap_or(PlantOffset::UTC)
    }

    /// Now on the plant's clock, to the second with its offset (`2026-12-01 22:14:05 +01:00`).
    pub fn stamp_now(&self) -> String {
        let now = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| i64::try_from(d.as_secs()).unwrap_or(i64::MAX));
        self.utc_offset().stamp(now)
    }

    /// The plant's name, or a placeholder when no plant config was opened.
    pub fn name(&self) -> &str {
        self.config.as_ref().map_or("no plant config", |c| c.name.as_str())
    }

    /// The report renderer: built-in templates, overridden by the plant's template folder.
    pub fn renderer(&self) -> Result<Renderer, OpenError> {
        Renderer::new(self.config.as_ref().and_then(|c| c.templates_dir.as_deref()))
            .map_err(OpenError::Templates)
    }

    /// The plant's physics settings (theoretical-rate band, free-swing analysis), or the defaults.
    pub fn physics(&self) -> PhysicsConfig {
        self.config.as_ref().map(|c| c.physics.clone()).unwrap_or_default()
    }

    /// The sink plugins the plant config names, with the folders they run in.
    pub fn sinks(&self) -> Result<Vec<(SinkManifest, PathBuf)>, OpenError> {
        let names = self.config.as_ref().map(|c| c.sinks.clone()).unwrap_or_default();
        self.catalog.sinks(&names).map_err(OpenError::Plugins)
    }
}

/// The nearest `plant.yaml` in `start` or a folder above it.
pub fn find_plant_file(start: &Path) -> Option<PathBuf> {
    let start = std::fs::canonicalize(start).ok()?;
    start.ancestors().map(|dir| dir.join(PLANT_FILE)).find(|p| p.is_file())
}
