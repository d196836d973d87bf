//! The plugin catalog: the built-in declarative plugins compiled into the binary, and
//! the manifests found in the folders a plant config (or the command line) names.
//!
//! A manifest in a folder overrides a built-in one, or one from an earlier folder, of
//! the same kind and name; the overridden entry stays in the catalog, marked, so
//! `twistlot plugins` can say which one is in force and where each came from. Exec
//! plugins (converters, sinks) exist only in folders: nothing built in runs a program.

use std::fmt;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use twistlot_ingest::{FormatSet, RigFormat};
use twistlot_model::plugin::{CheckManifest, DispatchRuleManifest, SinkManifest};
use twistlot_model::{DocumentError, Manifest, PluginKind};

/// The declarative plugins that ship inside the binary: (name under `plugins/`, text).
pub const BUILT_IN: &[(&str, &str)] = &[
    ("rig-formats/native.yaml", include_str!("../../../plugins/rig-formats/native.yaml")),
    ("rig-formats/native-decay.yaml", include_str!("../../../plugins/rig-formats/native-decay.yaml")),
    ("rig-formats/korvel-tab.yaml", include_str!("../../../plugins/rig-formats/korvel-tab.yaml")),
    ("rig-formats/ostrel-semi.yaml", include_str!("../../../plugins/rig-formats/ostrel-semi.yaml")),
    ("rig-formats/pellam-fixed.yaml", include_str!("../../../plugins/rig-formats/pellam-fixed.yaml")),
    (
        "sampling-schemes/mil-std-105e.yaml",
        include_str!("../../../plugins/sampling-schemes/mil-std-105e.yaml"),
    ),
    (
        "dispatch-rules/weighted-least-slack.yaml",
        include_str!("../../../plugins/dispatch-rules/weighted-least-slack.yaml"),
    ),
];

/// Where a plugin came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum PluginSource {
    /// Compiled into the binary.
    BuiltIn,
    /// A plugin folder named by the plant config or the command line.
    Folder(PathBuf),
}

impl fmt::Display for PluginSource {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PluginSource::BuiltIn => f.write_str("built in"),
            PluginSource::Folder(folder) => write!(f, "{}", folder.display()),
        }
    }
}

/// One manifest and what became of it.
#[derive(Debug, Clone)]
pub struct PluginEntry {
    /// Where it came from.
    pub source: PluginSource,
    /// The manifest file (for built-ins, its name under the shipped `plugins/`).
    pub path: PathBuf,
    /// The manifest's text, kept for kinds whose body a layer-1 crate reads (schemes).
    pub text: Arc<str>,
    /// The parsed manifest, or why it does not load.
    pub manifest: Result<Manifest, DocumentError>,
    /// The file of a later manifest of the same kind and name that is used instead.
    pub overridden_by: Option<PathBuf>,
}

impl PluginEntry {
    /// The manifest when it loaded and is not overridden.
    pub fn active(&self) -> Option<&Manifest> {
        match (&self.manifest, &self.overridden_by) {
            (Ok(manifest), None) => Some(manifest),
            _ => None,
        }
    }

    /// The folder relative paths in the manifest are resolved against (none for built-ins).
    pub fn folder(&self) -> Option<&Path> {
        match self.source {
            PluginSource::BuiltIn => None,
            PluginSource::Folder(_) => self.path.parent(),
        }
    }
}

/// Why the plugins cannot be used as they are.
#[derive(Debug, thiserror::Error)]
pub enum PluginError {
    /// A plugin folder that does not exist or cannot be listed.
    #[error("plugin folder {}: {source}", folder.display())]
    Folder {
        /// The folder.
        folder: PathBuf,
        /// What the file system said.
        #[source]
        source: std::io::Error,
    },
    /// A manifest that does not load.
    #[error("a plugin does not load, fix or remove it first")]
    Invalid(#[source] DocumentError),
    /// Rig formats that cannot work together (two formats claiming one name…).
    #[error("the rig formats cannot be used together: {0}")]
    Formats(String),
    /// A rig format's manifest that does not compile into a reader.
    #[error("rig format `{name}` ({}): {message}", path.display())]
    Format {
        /// Plugin name.
        name: String,
        /// Its manifest.
        path: PathBuf,
        /// Why.
        message: String,
    },
    /// A plugin a plant config or command line names that no folder holds.
    #[error(
        "{what} `{name}` is named but no plugin of that kind and name was found (built in or in {folders})"
    )]
    Missing {
        /// `check`, `sink`…
        what: &'static str,
        /// The name asked for.
        name: String,
        /// The folders searched.
        folders: String,
    },
    /// A sampling scheme whose tables do not validate.
    #[error(transparent)]
    Scheme(#[from] twistlot_sampling::SamplingError),
}

/// Every manifest, built in or found, valid or not.
#[derive(Debug, Clone, Default)]
pub struct PluginCatalog {
    /// Built-ins first, then each folder's manifests in file-name order.
    pub entries: Vec<PluginEntry>,
    folders: Vec<PathBuf>,
}

impl PluginCatalog {
    /// The built-ins plus every `*.yaml`/`*.yml` under `folders` (recursively, in order).
    pub fn discover(folders: &[PathBuf]) -> Result<PluginCatalog, PluginError> {
        let mut entries: Vec<PluginEntry> = BUILT_IN
            .iter()
            .map(|(name, text)| {
                let path = PathBuf::from("plugins").join(name);
                let manifest = load_manifest(&format!("built-in {}", path.display()), text);
                PluginEntry {
                    source: PluginSource::BuiltIn,
                    path,
                    text: Arc::from(*text),
                    manifest,
                    overridden_by: None,
                }
            })
            .collect();
        for folder in folders {
            let mut files = Vec::new();
            collect_yaml(folder, &mut files)
                .map_err(|source| PluginError::Folder { folder: folder.clone(), source })?;
            files.sort();
            for path in files {
                let origin = path.display().to_string();
                let (text, manifest) = match std::fs::read_to_string(&path) {
                    Ok(text) => {
                        let manifest = load_manifest(&origin, &text);
                        (Arc::from(text.as_str()), manifest)
                    }
                    Err(err) => (
                        Arc::from(""),
                        Err(DocumentError {
                            origin: origin.clone(),
                            line: None,
                            field: None,
                            message: format!("cannot read: {err}"),
                        }),
                    ),
                };
                entries.push(PluginEntry {
                    source: PluginSource::Folder(folder.clone()),
                    path,
                    text,
                    manifest,
                    overridden_by: None,
                });
            }
        }
        mark_overrides(&mut entries);
        Ok(PluginCatalog { entries, folders: folders.to_vec() })
    }

    /// The manifests that failed to load.
    pub fn errors(&self) -> impl Iterator<Item = &DocumentError> {
        self.entries.iter().filter_map(|e| e.manifest.as_ref().err())
    }

    /// Fails on the first manifest that does not load: a run must not guess around a
    /// broken plugin (a rig format that is missing could leave files read by another).
    pub fn require_valid(&self) -> Result<(), PluginError> {
        match self.errors().next() {
            Some(err) => Err(PluginError::Invalid(err.clone())),
            None => Ok(()),
        }
    }

    /// The manifests in force of one kind, with their entries.
    pub fn active(&self, kind: PluginKind) -> impl Iterator<Item = (&PluginEntry, &Manifest)> {
        self.entries
            .iter()
            .filter_map(move |e| e.active().filter(|m| m.header().kind == kind).map(|m| (e, m)))
    }

    fn folders_text(&self) -> String {
        if self.folders.is_empty() {
            "no plugin folder".to_string()
        } else {
            self.folders.iter().map(|f| f.display().to_string()).collect::<Vec<_>>().join(", ")
        }
    }

    /// Every sampling scheme in force, loaded by name.
    pub fn sampling_schemes(&self) -> Result<Schemes, PluginError> {
        let mut schemes = Schemes::new();
        for (entry, manifest) in self.active(PluginKind::SamplingScheme) {
            let origin = entry.path.display().to_string();
            let scheme = twistlot_sampling::Scheme::from_yaml(&origin, &entry.text)?;
            schemes.insert(manifest.header().name, Arc::new(scheme));
        }
        Ok(schemes)
    }

    /// The rig formats in force, compiled; the built-in native reader is always there.
    pub fn rig_formats(&self) -> Result<FormatSet, PluginError> {
        let mut formats = Vec::new();
        for (entry, manifest) in self.active(PluginKind::RigFormat) {
            if let Manifest::RigFormat(m) = manifest {
                let compiled =
                    RigFormat::from_manifest((**m).clone(), entry.folder().map(|_| entry.path.as_path()))
                        .map_err(|e| PluginError::Format {
                            name: m.name.clone(),
                            path: entry.path.clone(),
                            message: e.to_string(),
                        })?;
                formats.push(compiled);
            }
        }
        if !formats.iter().any(|f| f.name == twistlot_ingest::format::NATIVE_NAME) {
            formats.insert(0, RigFormat::native());
        }
        FormatSet::new(formats).map_err(PluginError::Formats)
    }

    /// The rig-format manifests in force, by name (the generator writes their layouts).
    pub fn rig_format_manifests(
        &self,
    ) -> std::collections::BTreeMap<String, twistlot_model::plugin::RigFormatManifest> {
        self.active(PluginKind::RigFormat)
            .filter_map(|(_, m)| match m {
                Manifest::RigFormat(m) => Some((m.name.clone(), (**m).clone())),
                _ => None,
            })
            .collect()
    }

    /// The check plugins with these names; an unknown name is an error.
    pub fn checks(&self, names: &[String]) -> Result<Vec<CheckManifest>, PluginError> {
        names
            .iter()
            .map(|name| {
                self.active(PluginKind::Check)
                    .find_map(|(_, m)| match m {
                        Manifest::Check(check) if check.name == *name => Some(check.clone()),
                        _ => None,
                    })
                    .ok_or_else(|| PluginError::Missing {
                        what: "check",
                        name: name.clone(),
                        folders: self.folders_text(),
                    })
            })
            .collect()
    }

    /// The dispatch-rule plugin with this name; an unknown name is an error.
    pub fn dispatch_rule(&self, name: &str) -> Result<DispatchRuleManifest, PluginError> {
        self.active(PluginKind::DispatchRule)
            .find_map(|(_, m)| match m {
                Manifest::DispatchRule(rule) if rule.name == name => Some(rule.clone()),
                _ => None,
            })
            .ok_or_else(|| PluginError::Missing {
                what: "dispatch rule",
                name: name.to_string(),
                folders: self.folders_text(),
            })
    }

    /// The sink plugins with these names and the folders they run in; an unknown name is an error.
    pub fn sinks(&self, names: &[String]) -> Result<Vec<(SinkManifest, PathBuf)>, PluginError> {
        names
            .iter()
            .map(|name| {
                self.active(PluginKind::Sink)
                    .find_map(|(entry, m)| match (m, entry.folder()) {
                        (Manifest::Sink(sink), Some(folder)) if sink.name == *name => {
                            Some((sink.clone(), folder.to_path_buf()))
                        }
                        _ => None,
                    })
                    .ok_or_else(|| PluginError::Missing {
                        what: "sink",
                        name: name.clone(),
                        folders: self.folders_text(),
                    })
            })
            .collect()
    }
}

/// Sampling schemes by plugin name, loaded once per run.
pub type Schemes = std::collections::BTreeMap<String, Arc<twistlot_sampling::Scheme>>;

/// Parses a manifest and validates the parts of it that belong to another crate (a
/// sampling scheme's tables, a dispatch rule's expression), so every error is reported
/// the same way, with file, line and field.
fn load_manifest(origin: &str, text: &str) -> Result<Manifest, DocumentError> {
    let manifest = Manifest::from_yaml(origin, text)?;
    if let Manifest::DispatchRule(rule) = &manifest {
        crate::dispatch::check_expression(&rule.expression).map_err(|detail| {
            DocumentError::at_field(
                origin,
                text,
                "expression",
                format!("the expression does not compile: {detail}"),
            )
        })?;
    }
    if let Manifest::SamplingScheme(_) = &manifest {
        if let Err(err) = twistlot_sampling::Scheme::from_yaml(origin, text) {
            return Err(match err {
                twistlot_sampling::SamplingError::Document(doc) => doc,
                other => DocumentError {
                    origin: origin.to_string(),
                    line: None,
                    field: None,
                    message: other.to_string(),
                },
            });
        }
    }
    Ok(manifest)
}

/// Marks every entry that a later valid entry of the same kind and name replaces. Two
/// manifests of one kind and name in the same folder are a clash, not an override: the
/// later one becomes an error naming both files.
fn mark_overrides(entries: &mut [PluginEntry]) {
    for later in 0..entries.len() {
        let Ok(manifest) = &entries[later].manifest else { continue };
        let header = manifest.header();
        let clash = entries[..later].iter().find(|earlier| {
            earlier.source == entries[later].source
                && matches!(&earlier.manifest, Ok(m) if m.header().kind == header.kind && m.header().name == header.name)
        });
        if let Some(earlier) = clash {
            let message = format!(
                "{} `{}` is also defined in {} in the same folder; a name must be unique within a folder",
                header.kind,
                header.name,
                earlier.path.display()
            );
            entries[later].manifest = Err(DocumentError {
                origin: entries[later].path.display().to_string(),
                line: None,
                field: Some("name".into()),
                message,
            });
        }
    }
    for later in (0..entries.len()).rev() {
        let Ok(manifest) = &entries[later].manifest else { continue };
        let header = manifest.header();
        let path = entries[later].path.clone();
        for earlier in entries[..later].iter_mut() {
            let same = matches!(&earlier.manifest, Ok(m) if m.header().kind == header.kind && m.header().name == header.name);
            if same && earlier.overridden_by.is_none() {
                earlier.overridden_by = Some(path.clone());
            }
        }
    }
}

fn collect_yaml(dir: &Path, out: &mut Vec<PathBuf>) -> std::io::Result<()> {
    for entry in std::fs::read_dir(dir)? {
        let path = entry?.path();
        if path.is_dir() {
            collect_yaml(&path, out)?;
        } else if matches!(path.extension().and_then(|e| e.to_str()), Some("yaml" | "yml")) {
            out.push(path);
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    /// This crate's folder as cargo names it when running the test (not as compiled in),
    /// so a test binary from a shared build cache reads this checkout's files.
    fn crate_dir() -> std::path::PathBuf {
        std::env::var_os("CARGO_MANIFEST_DIR")
            .map_or_else(|| std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")), std::path::PathBuf::from)
    }

    use super::*;

    #[test]
    fn built_in_plugins_all_load_without_any_folder() {
        let catalog = PluginCatalog::discover(&[]).unwrap();
        assert!(catalog.errors().next().is_none(), "{:?}", catalog.errors().collect::<Vec<_>>());
        let formats = catalog.rig_formats().unwrap();
        for name in ["native", "native-decay", "korvel-tab", "ostrel-semi", "pellam-fixed"] {
            assert!(formats.by_name(name).is_some(), "{name} missing");
        }
        assert!(catalog.sampling_schemes().unwrap().contains_key("mil-std-105e"));
        assert_eq!(catalog.dispatch_rule("weighted-least-slack").unwrap().name, "weighted-least-slack");
        assert!(catalog.entries.iter().all(|e| e.source == PluginSource::BuiltIn));
    }

    #[test]
    fn every_shipped_manifest_is_compiled_in() {
        // The shipped folder is read here only to prove the list above is complete.
        let shipped = crate_dir().join("../../plugins");
        let mut files = Vec::new();
        collect_yaml(&shipped, &mut files).unwrap();
        let mut names: Vec<String> = files
            .iter()
            .map(|p| p.strip_prefix(&shipped).unwrap().to_string_lossy().replace('\\', "/"))
            .collect();
        names.sort();
        let mut built_in: Vec<String> = BUILT_IN.iter().map(|(n, _)| n.to_string()).collect();
        built_in.sort();
        assert_eq!(names, built_in);
    }

    #[test]
    fn a_folder_manifest_overrides_the_built_in_of_the_same_name() {
        let dir = tempfile::tempdir().unwrap();
        let native = BUILT_IN.iter().find(|(n, _)| n.ends_with("native.yaml")).unwrap().1;
        let changed = native.replace("description: \"", "description: \"plant copy; ");
        std::fs::write(dir.path().join("native.yaml"), changed).unwrap();
        let catalog = PluginCatalog::discover(&[dir.path().to_path_buf()]).unwrap();
        let natives: Vec<&PluginEntry> = catalog
            .entries
            .iter()
            .filter(|e| matches!(&e.manifest, Ok(m) if m.header().name == "native"))
            .collect();
        assert_eq!(natives.len(), 2);
        assert_eq!(natives[0].source, PluginSource::BuiltIn);
        assert_eq!(natives[0].overridden_by.as_deref(), Some(dir.path().join("native.yaml").as_path()));
        assert!(natives[1].active().unwrap().header().description.starts_with("plant copy;"));
    }

    #[test]
    fn a_broken_manifest_is_listed_with_its_line_and_stops_a_run() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(
            dir.path().join("bad.yaml"),
            "name: x\nkind: rig-format\napi: 1\ndescription: d\ndetect: 3\n",
        )
        .unwrap();
        let catalog = PluginCatalog::discover(&[dir.path().to_path_buf()]).unwrap();
        let errors: Vec<&DocumentError> = catalog.errors().collect();
        assert_eq!(errors.len(), 1);
        assert_eq!(errors[0].line, Some(5));
        assert!(errors[0].to_string().contains("bad.yaml"));
        assert!(matches!(catalog.require_valid(), Err(PluginError::Invalid(_))));
    }

    #[test]
    fn a_dispatch_rule_that_does_not_compile_is_refused_at_its_line() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(
            dir.path().join("rule.yaml"),
            "name: broken\nkind: dispatch-rule\napi: 1\ndescription: d\nexpression: \"weight *\"\n",
        )
        .unwrap();
        let catalog = PluginCatalog::discover(&[dir.path().to_path_buf()]).unwrap();
        let errors: Vec<&DocumentError> = catalog.errors().collect();
        assert_eq!(errors.len(), 1);
        assert_eq!(
            (errors[0].line, errors[0].field.as_deref()),
            (Some(5), Some("expression")),
            "{}",
            errors[0]
        );
        assert!(catalog.dispatch_rule("broken").is_err());
        let err = catalog.dispatch_rule("nope").unwrap_err();
        assert!(err.to_string().contains("dispatch rule `nope` is named"), "{err}");
    }

    #[test]
    fn a_missing_folder_or_plugin_name_is_an_error() {
        let missing = PathBuf::from("/nonexistent/twistlot-plugins");
        assert!(matches!(PluginCatalog::discover(&[missing]), Err(PluginError::Folder { .. })));
        let catalog = PluginCatalog::discover(&[]).unwrap();
        let err = catalog.checks(&["no-such-check".to_string()]).unwrap_err();
        assert!(err.to_string().contains("check `no-such-check` is named"), "{err}");
        assert!(catalog.sinks(&["x".to_string()]).is_err());
    }
}
