//! The plant config and the library of part specs it points to.

use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use twistlot_model::yaml::parse_document;
use twistlot_model::{validate_rigs, Approval, DocumentError, PartSpec, PlantOffset, Rig, SpecProblem};

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
    utc_offset: Option<PlantOffset>,
    #[serde(default)]
    approval: Approval,
    #[serde(default)]
    unknown_rigs: UnknownRigs,
}

/// What a shift does with an export from a rig the plant config does not list
/// (plant config `unknown_rigs`).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Deserialize, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum UnknownRigs {
    /// Evaluate the export and warn (in the terminal, `summary.json` and the lot report).
    #[default]
    Warn,
    /// Reject the export: a rig the plant does not know cannot be shown to be calibrated.
    Refuse,
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
    /// The plant clock's offset from UTC, for stamping outputs (UTC when not given).
    pub utc_offset: Option<PlantOffset>,
    /// Who signs lot reports, as far as the plant config names them.
    pub approval: Approval,
    /// What a shift does with exports from rigs not listed under `rigs`.
    pub unknown_rigs: UnknownRigs,
}

impl Plant {
    /// The rig named `name` in the plant config.
    pub fn rig(&self, name: &str) -> Option<&Rig> {
        self.rigs.iter().find(|r| r.name == name)
    }
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
            utc_offset: file.utc_offset,
            approval: file.approval,
            unknown_rigs: file.unknown_rigs,
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

/// Part specs by part number, and the spec files that did not load.
///
/// One bad file does not stop the plant: it is kept as a [`SpecProblem`] (with the part
/// it names, when that much can be read), so a shift holds that part's lots with the
/// reason and decides all the others.
#[derive(Debug, Clone, Default)]
pub struct SpecLibrary {
    specs: BTreeMap<String, SpecEntry>,
    problems: Vec<SpecProblem>,
}

impl SpecLibrary {
    /// Loads every `*.yaml` spec in a folder; a file that does not load, or a second spec
    /// for one part, is kept as a problem naming its file, line and field. Only a folder
    /// that cannot be listed is an error.
    pub fn load_dir(dir: &Path) -> Result<SpecLibrary, PlantError> {
        let entries = std::fs::read_dir(dir)
            .map_err(|source| PlantError::Read { path: dir.display().to_string(), source })?;
        let mut paths: Vec<PathBuf> = entries
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| matches!(p.extension().and_then(|e| e.to_str()), Some("yaml" | "yml")))
            .collect();
        paths.sort();
        let mut library = SpecLibrary::default();
        let mut claimed: BTreeMap<String, Vec<PathBuf>> = BTreeMap::new();
        for path in paths {
            match library.add_file(&path) {
                Ok(part) => claimed.entry(part).or_default().push(path),
                Err(PlantError::DuplicatePart { part, .. }) => claimed.entry(part).or_default().push(path),
                Err(err) => library.problems.push(SpecProblem {
                    file: path.display().to_string(),
                    part: part_named_in(&path),
                    reason: err.to_string(),
                }),
            }
        }
        // Two specs for one part: neither can be trusted to be the drawing in force.
        for (part, files) in claimed.into_iter().filter(|(_, files)| files.len() > 1) {
            library.specs.remove(&part);
            let names: Vec<String> = files.iter().map(|f| f.display().to_string()).collect();
            for file in &names {
                library.problems.push(SpecProblem {
                    file: file.clone(),
                    part: Some(part.clone()),
                    reason: format!(
                        "part `{part}` has {} specs ({}); keep only the one for the drawing revision in force",
                        names.len(),
                        names.join(", ")
                    ),
                });
            }
        }
        Ok(library)
    }

    /// A library of one spec file; any problem with it is an error.
    pub fn single(path: &Path) -> Result<SpecLibrary, PlantError> {
        let mut library = SpecLibrary::default();
        library.add_file(path)?;
        Ok(library)
    }

    fn add_file(&mut self, path: &Path) -> Result<String, PlantError> {
        let text = read(path)?;
        let spec = PartSpec::from_yaml(&path.display().to_string(), &text)?;
        if let Some(existing) = self.specs.get(&spec.part) {
            return Err(PlantError::DuplicatePart {
                part: spec.part.clone(),
                first: existing.path.display().to_string(),
                second: path.display().to_string(),
            });
        }
        let part = spec.part.clone();
        self.specs.insert(part.clone(), SpecEntry { spec, path: path.to_path_buf() });
        Ok(part)
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

    /// Every loaded spec, by part number.
    pub fn entries(&self) -> impl Iterator<Item = &SpecEntry> {
        self.specs.values()
    }

    /// Spec files that did not load.
    pub fn problems(&self) -> &[SpecProblem] {
        &self.problems
    }

    /// The problems of the spec files that name `part`.
    pub fn problems_for<'a>(&'a self, part: &'a str) -> impl Iterator<Item = &'a SpecProblem> + 'a {
        self.problems.iter().filter(move |p| p.part.as_deref() == Some(part))
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

/// The part a spec file names, read leniently from a file that does not load as a
/// spec; falls back to the file's stem (specs are usually named after their part).
fn part_named_in(path: &Path) -> Option<String> {
    let from_text = std::fs::read_to_string(path).ok().and_then(|text| {
        let value: serde_yaml::Value = serde_yaml::from_str(&text).ok()?;
        match value.get("part")? {
            serde_yaml::Value::String(part) => Some(part.clone()),
            serde_yaml::Value::Number(part) => Some(part.to_string()),
            _ => None,
        }
    });
    from_text.or_else(|| path.file_stem().map(|s| s.to_string_lossy().to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec_text(part: &str, tolerance: &str) -> String {
        format!(
            "part: {part}\nrevision: A\ncustomer: invented\nmaterial: {{ name: wire, modulus_n_per_mm2: 206000 }}\n\
             geometry: {{ wire_diameter_mm: 1.0, mean_diameter_mm: 8.0, body_coils: 5, leg_lengths_mm: [10, 10], wind: left }}\n\
             test: {{ max_angle_deg: 90 }}\n\
             characteristics:\n  rate_nmm_per_deg: {{ nominal: 4.0, tolerance: {tolerance}, class: major }}\n"
        )
    }

    #[test]
    fn one_broken_spec_is_kept_as_a_problem_and_the_others_load() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("P-1.yaml"), spec_text("P-1", "\"±8%\"")).unwrap();
        std::fs::write(dir.path().join("P-2.yaml"), spec_text("P-2", "\"10\"")).unwrap();
        std::fs::write(dir.path().join("P-3.yaml"), "part: [unclosed\n").unwrap();
        let library = SpecLibrary::load_dir(dir.path()).unwrap();
        assert!(library.get("P-1").is_some());
        assert_eq!(library.len(), 1);
        let p2: Vec<&SpecProblem> = library.problems_for("P-2").collect();
        assert_eq!(p2.len(), 1);
        assert!(
            p2[0].reason.contains("line 8") && p2[0].reason.contains("no unit and no `%`"),
            "{}",
            p2[0].reason
        );
        // A file too broken to name its part is known by its file name.
        assert_eq!(library.problems_for("P-3").count(), 1);
    }

    #[test]
    fn two_specs_for_one_part_hold_the_part_rather_than_pick_one() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("a.yaml"), spec_text("P-1", "\"±8%\"")).unwrap();
        std::fs::write(dir.path().join("b.yaml"), spec_text("P-1", "\"±5%\"")).unwrap();
        let library = SpecLibrary::load_dir(dir.path()).unwrap();
        assert!(library.get("P-1").is_none());
        let problems: Vec<&SpecProblem> = library.problems_for("P-1").collect();
        assert_eq!(problems.len(), 2);
        assert!(problems[0].reason.contains("has 2 specs"), "{}", problems[0].reason);
    }
}
