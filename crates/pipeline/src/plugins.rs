//! Finding plugin manifests in the plant's folders and the shipped `plugins/`.

use std::path::{Path, PathBuf};
use twistlot_ingest::{FormatSet, RigFormat};
use twistlot_model::{DocumentError, Manifest, PluginKind};

/// The folder of plugins that ship with twistlot.
pub fn shipped_plugins_dir() -> PathBuf {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../plugins");
    std::fs::canonicalize(&dir).unwrap_or(dir)
}

/// One manifest file and what became of it.
#[derive(Debug, Clone)]
pub struct PluginEntry {
    /// The manifest file.
    pub path: PathBuf,
    /// The parsed manifest, or why it does not load.
    pub manifest: Result<Manifest, DocumentError>,
}

/// Every manifest found in the plugin folders, valid or not.
#[derive(Debug, Clone, Default)]
pub struct PluginCatalog {
    /// Entries in folder order, then file-name order.
    pub entries: Vec<PluginEntry>,
}

impl PluginCatalog {
    /// Reads every `*.yaml`/`*.yml` file under the folders (recursively).
    pub fn discover(folders: &[PathBuf]) -> PluginCatalog {
        let mut entries = Vec::new();
        for folder in folders {
            let mut files = Vec::new();
            collect_yaml(folder, &mut files);
            files.sort();
            for path in files {
                let origin = path.display().to_string();
                let manifest = match std::fs::read_to_string(&path) {
                    Ok(text) => {
                        Manifest::from_yaml(&origin, &text).and_then(|m| check_body(&origin, &text, m))
                    }
                    Err(err) => Err(DocumentError {
                        origin: origin.clone(),
                        line: None,
                        field: None,
                        message: format!("cannot read: {err}"),
                    }),
                };
                entries.push(PluginEntry { path, manifest });
            }
        }
        PluginCatalog { entries }
    }

    /// The manifests that failed to load.
    pub fn errors(&self) -> Vec<&DocumentError> {
        self.entries.iter().filter_map(|e| e.manifest.as_ref().err()).collect()
    }

    /// The loaded manifests of one kind.
    pub fn of_kind(&self, kind: PluginKind) -> impl Iterator<Item = (&Path, &Manifest)> {
        self.entries.iter().filter_map(move |e| match &e.manifest {
            Ok(m) if m.header().kind == kind => Some((e.path.as_path(), m)),
            _ => None,
        })
    }

    /// Every sampling scheme, loaded by name (a scheme whose tables do not load
    /// keeps its error, so only lots that use it are affected).
    pub fn sampling_schemes(
        &self,
    ) -> std::collections::BTreeMap<String, Result<twistlot_sampling::Scheme, String>> {
        self.of_kind(PluginKind::SamplingScheme)
            .map(|(path, manifest)| {
                let scheme = std::fs::read_to_string(path)
                    .map_err(|e| format!("{}: cannot read: {e}", path.display()))
                    .and_then(|text| {
                        twistlot_sampling::Scheme::from_yaml(&path.display().to_string(), &text)
                            .map_err(|e| e.to_string())
                    });
                (manifest.header().name, scheme)
            })
            .collect()
    }

    /// The rig formats, compiled; the built-in native format is used when no
    /// folder supplies one named `native`.
    pub fn rig_formats(&self) -> Result<FormatSet, String> {
        let mut formats = Vec::new();
        for (path, manifest) in self.of_kind(PluginKind::RigFormat) {
            if let Manifest::RigFormat(m) = manifest {
                formats.push(RigFormat::from_manifest((**m).clone(), Some(path)).map_err(|e| e.to_string())?);
            }
        }
        if !formats.iter().any(|f| f.name == twistlot_ingest::format::NATIVE_NAME) {
            formats.insert(0, RigFormat::native());
        }
        FormatSet::new(formats)
    }
}

/// Validates the parts of a manifest that belong to a layer-1 crate (a sampling
/// scheme's tables), so `twistlot plugins` reports them like any other error.
fn check_body(origin: &str, text: &str, manifest: Manifest) -> Result<Manifest, DocumentError> {
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

/// The check plugins, compiled.
pub fn check_manifests(catalog: &PluginCatalog) -> Vec<twistlot_model::plugin::CheckManifest> {
    catalog
        .of_kind(PluginKind::Check)
        .filter_map(|(_, m)| match m {
            Manifest::Check(check) => Some(check.clone()),
            _ => None,
        })
        .collect()
}

fn collect_yaml(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else { return };
    for entry in entries.flatten() {
        let path = entry.path();
        if path.is_dir() {
            collect_yaml(&path, out);
        } else if matches!(path.extension().and_then(|e| e.to_str()), Some("yaml" | "yml")) {
            out.push(path);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shipped_plugins_all_load() {
        let catalog = PluginCatalog::discover(&[shipped_plugins_dir()]);
        assert!(catalog.errors().is_empty(), "{:?}", catalog.errors());
        let formats = catalog.rig_formats().unwrap();
        for name in ["native", "korvel-tab", "ostrel-semi", "pellam-fixed", "gantry-json"] {
            assert!(formats.by_name(name).is_some(), "{name} missing");
        }
    }

    #[test]
    fn a_broken_manifest_is_listed_with_its_line() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(
            dir.path().join("bad.yaml"),
            "name: x\nkind: rig-format\napi: 1\ndescription: d\ndetect: 3\n",
        )
        .unwrap();
        let catalog = PluginCatalog::discover(&[dir.path().to_path_buf()]);
        let errors = catalog.errors();
        assert_eq!(errors.len(), 1);
        assert_eq!(errors[0].line, Some(5));
        assert!(errors[0].to_string().contains("bad.yaml"));
    }
}
