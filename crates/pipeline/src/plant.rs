//! The plant config and the library of part specs it points to.

use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use twistlot_model::yaml::parse_document;
use twistlot_model::{validate_rigs, DocumentError, PartSpec, Rig};

/// The plant config as written (paths relative to the file).
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct PlantFile {
    plant: String,
    parts: PathBuf,
    #[serde(default)]
    plugins: Vec<PathBuf>,
    #[serde(default)]
    templates: Option<PathBuf>,
    #[serde(default)]
    history: Option<PathBuf>,
    #[serde(default)]
    rigs: Vec<Rig>,
    #[serde(default)]
    dispatch_rule: Option<String>,
    #[serde(default)]
    sinks: Vec<String>,
    #[serde(default)]
    checks: Vec<String>,
    #[serde(default)]
    beyond_sample: twistlot_sampling::BeyondSample,
    #[serde(default)]
    variables_non_normal: twistlot_sampling::NonNormalRule,
    #[serde(default)]
    capability: CapabilityConfig,
    #[serde(default)]
    switching: SwitchingConfig,
    #[serde(default)]
    physics: PhysicsConfig,
}

/// The plant's settings for the spring physics: how far a measured rate may sit from the
/// drawing's theoretical one before the lot carries a caution, and the free-swing analysis.
#[derive(Debug, Clone, PartialEq, Deserialize, serde::Serialize)]
#[serde(deny_unknown_fields)]
pub struct PhysicsConfig {
    /// Band `[lo, hi]` the measured/theory rate ratio is expected in; outside it the lot's
    /// grounds carry a caution, never a verdict. Default 0.85–1.15
    /// ([`twistlot_stats::DEFAULT_RATE_BAND`], a starting point, not a published limit).
    #[serde(default = "default_rate_band")]
    pub rate_theory_band: [f64; 2],
    /// Settings of the free-swing analysis: `min_swings`, `amplitude_limit_pct`,
    /// `max_damping_ratio`, `max_equilibrium_drift_pct` (defaults in `twistlot_physics::SwingOptions`).
    #[serde(default)]
    pub swing: twistlot_physics::SwingOptions,
}

fn default_rate_band() -> [f64; 2] {
    twistlot_stats::DEFAULT_RATE_BAND
}

impl Default for PhysicsConfig {
    fn default() -> Self {
        PhysicsConfig {
            rate_theory_band: default_rate_band(),
            swing: twistlot_physics::SwingOptions::default(),
        }
    }
}

/// The plant's answers to the conditions MIL-STD-105E §8.3 asks for beyond the lot counts.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, serde::Serialize)]
#[serde(deny_unknown_fields)]
pub struct SwitchingConfig {
    /// Parts the responsible authority has approved for reduced inspection (none by default).
    #[serde(default)]
    pub reduced_approved: Vec<String>,
    /// Parts whose production is not at a steady rate (they never go to, or stay on, reduced).
    #[serde(default)]
    pub unsteady: Vec<String>,
}

impl SwitchingConfig {
    /// The switching conditions for one part.
    pub fn conditions(&self, part: &str) -> twistlot_sampling::Conditions {
        twistlot_sampling::Conditions {
            production_steady: !self.unsteady.iter().any(|p| p == part),
            reduced_approved: self.reduced_approved.iter().any(|p| p == part),
        }
    }
}

/// How the plant forms rational subgroups for the within-subgroup σ behind Cp/Cpk.
#[derive(Debug, Clone, Default, PartialEq, Deserialize, serde::Serialize)]
#[serde(deny_unknown_fields)]
pub struct CapabilityConfig {
    /// Consecutive tests (by start time) per subgroup; none: no rational subgroups, so
    /// lots get Pp/Ppk only and say why Cp/Cpk are not given.
    #[serde(default)]
    pub subgroup_size: Option<usize>,
}

/// A loaded plant config with paths resolved against its folder.
#[derive(Debug, Clone)]
pub struct Plant {
    /// The config file.
    pub path: PathBuf,
    /// Plant name.
    pub name: String,
    /// Folder of part specs.
    pub parts_dir: PathBuf,
    /// Extra plugin folders (the shipped ones are always used too).
    pub plugin_dirs: Vec<PathBuf>,
    /// Template override folder.
    pub templates_dir: Option<PathBuf>,
    /// History store location.
    pub history_dir: Option<PathBuf>,
    /// Rigs, as the model records them (planning fields and reference springs included).
    pub rigs: Vec<Rig>,
    /// The `dispatch-rule` plugin the planner orders lots by (none: the ATCS index).
    pub dispatch_rule: Option<String>,
    /// Sink plugins every decided lot is sent to, by name.
    pub sinks: Vec<String>,
    /// Check plugins that apply to this plant's parts, by name.
    pub checks: Vec<String>,
    /// What the sampling plans do with tests beyond their sample size.
    pub beyond_sample: twistlot_sampling::BeyondSample,
    /// What a variables plan does with values that fail normality.
    pub variables_non_normal: twistlot_sampling::NonNormalRule,
    /// Rational subgroups for Cp/Cpk.
    pub capability: CapabilityConfig,
    /// Conditions for reduced inspection.
    pub switching: SwitchingConfig,
    /// Theoretical-rate band and free-swing analysis settings.
    pub physics: PhysicsConfig,
}

/// Why the plant config or a spec did not load.
#[derive(Debug, thiserror::Error)]
pub enum PlantError {
    /// A file could not be read.
    #[error("{path}: cannot read")]
    Read {
        /// The file.
        path: String,
        /// The cause.
        #[source]
        source: std::io::Error,
    },
    /// A document did not parse or validate.
    #[error(transparent)]
    Document(#[from] DocumentError),
    /// Two specs claim one part number.
    #[error("part `{part}` has two specs: {first} and {second}")]
    DuplicatePart {
        /// Part number.
        part: String,
        /// First file.
        first: String,
        /// Second file.
        second: String,
    },
}

fn read(path: &Path) -> Result<String, PlantError> {
    std::fs::read_to_string(path)
        .map_err(|source| PlantError::Read { path: path.display().to_string(), source })
}

impl Plant {
    /// Loads and resolves a plant config.
    pub fn load(path: &Path) -> Result<Plant, PlantError> {
        let text = read(path)?;
        let origin = path.display().to_string();
        let file: PlantFile = parse_document(&origin, &text)?;
        validate_rigs(&origin, &text, &file.rigs)?;
        let base = path.parent().unwrap_or(Path::new("."));
        let resolve = |p: &Path| if p.is_absolute() { p.to_path_buf() } else { base.join(p) };
        let parts_dir = resolve(&file.parts);
        if !parts_dir.is_dir() {
            return Err(DocumentError::at_field(
                &origin,
                &text,
                "parts",
                format!("the parts folder {} does not exist", parts_dir.display()),
            )
            .into());
        }
        if let Err(message) = twistlot_stats::validate_band(file.physics.rate_theory_band) {
            return Err(DocumentError::at_field(&origin, &text, "physics.rate_theory_band", message).into());
        }
        if let Err(err) = file.physics.swing.validate() {
            return Err(DocumentError::at_field(&origin, &text, "physics.swing", err.to_string()).into());
        }
        Ok(Plant {
            path: path.to_path_buf(),
            name: file.plant,
            parts_dir,
            plugin_dirs: file.plugins.iter().map(|p| resolve(p)).collect(),
            templates_dir: file.templates.as_deref().map(resolve),
            history_dir: file.history.as_deref().map(resolve),
            rigs: file.rigs,
            dispatch_rule: file.dispatch_rule,
            sinks: file.sinks,
            checks: file.checks,
            beyond_sample: file.beyond_sample,
            variables_non_normal: file.variables_non_normal,
            capability: file.capability,
            switching: file.switching,
            physics: file.physics,
        })
    }
}

/// A loaded spec and the file it came from.
#[derive(Debug, Clone)]
pub struct SpecEntry {
    /// The spec.
    pub spec: PartSpec,
    /// Its file.
    pub path: PathBuf,
}

/// Part specs by part number.
#[derive(Debug, Clone, Default)]
pub struct SpecLibrary {
    specs: BTreeMap<String, SpecEntry>,
}

impl SpecLibrary {
    /// Loads every `*.yaml` spec in a folder; any bad spec is an error naming its file and line.
    pub fn load_dir(dir: &Path) -> Result<SpecLibrary, PlantError> {
        let entries = std::fs::read_dir(dir)
            .map_err(|source| PlantError::Read { path: dir.display().to_string(), source })?;
        let mut paths: Vec<PathBuf> = entries
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| matches!(p.extension().and_then(|e| e.to_str()), Some("yaml" | "yml")))
            .collect();
        paths.sort();
        let mut library = SpecLibrary::default();
        for path in paths {
            library.add_file(&path)?;
        }
        Ok(library)
    }

    /// A library of one spec file.
    pub fn single(path: &Path) -> Result<SpecLibrary, PlantError> {
        let mut library = SpecLibrary::default();
        library.add_file(path)?;
        Ok(library)
    }

    fn add_file(&mut self, path: &Path) -> Result<(), PlantError> {
        let text = read(path)?;
        let spec = PartSpec::from_yaml(&path.display().to_string(), &text)?;
        if let Some(existing) = self.specs.get(&spec.part) {
            return Err(PlantError::DuplicatePart {
                part: spec.part.clone(),
                first: existing.path.display().to_string(),
                second: path.display().to_string(),
            });
        }
        self.specs.insert(spec.part.clone(), SpecEntry { spec, path: path.to_path_buf() });
        Ok(())
    }

    /// The spec for a part number.
    pub fn get(&self, part: &str) -> Option<&SpecEntry> {
        self.specs.get(part)
    }

    /// The only spec, when the library holds exactly one (a `--spec FILE`).
    pub fn only(&self) -> Option<&SpecEntry> {
        (self.specs.len() == 1).then(|| self.specs.values().next()).flatten()
    }

    /// Part numbers, sorted.
    pub fn parts(&self) -> impl Iterator<Item = &str> {
        self.specs.keys().map(String::as_str)
    }

    /// Number of specs.
    pub fn len(&self) -> usize {
        self.specs.len()
    }

    /// True when empty.
    pub fn is_empty(&self) -> bool {
        self.specs.is_empty()
    }
}
