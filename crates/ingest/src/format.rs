//! Rig formats compiled from their manifests, and recognising which one a file is.

use crate::error::{FormatError, IngestError, RejectKind};
use crate::text::head_text;
use std::path::{Path, PathBuf};
use twistlot_model::plugin::{Detect, ExecSpec, Layout, Manifest, RigFormatManifest};
use twistlot_model::RecordKind;

/// The native format's manifest, shipped in `plugins/rig-formats/`; exec converters print this format.
pub const NATIVE_MANIFEST: &str = include_str!("../../../plugins/rig-formats/native.yaml");
/// The native format's plugin name.
pub const NATIVE_NAME: &str = "native";
/// The native free-decay format's manifest; exec converters of free-decay formats print this.
pub const NATIVE_DECAY_MANIFEST: &str = include_str!("../../../plugins/rig-formats/native-decay.yaml");
/// The native free-decay format's plugin name.
pub const NATIVE_DECAY_NAME: &str = "native-decay";

/// How a format's files are turned into curves.
#[derive(Debug, Clone)]
pub enum Reader {
    /// A declarative layout read in-process.
    Layout(Box<Layout>),
    /// A converter program that prints the native format.
    Exec {
        /// How to run it.
        spec: ExecSpec,
        /// The folder its manifest is in (its working directory).
        plugin_dir: PathBuf,
    },
}

/// A rig format ready to recognise and read files.
#[derive(Debug, Clone)]
pub struct RigFormat {
    /// Plugin name.
    pub name: String,
    /// One-line description.
    pub description: String,
    /// The manifest file, when loaded from one.
    pub manifest_path: Option<PathBuf>,
    /// Which kind of record its files hold.
    pub record: RecordKind,
    detect: Detect,
    /// How files are read.
    pub reader: Reader,
}

impl RigFormat {
    /// Builds a format from a parsed manifest; `manifest_path` locates exec programs.
    pub fn from_manifest(
        manifest: RigFormatManifest,
        manifest_path: Option<&Path>,
    ) -> Result<RigFormat, FormatError> {
        let plugin_dir = manifest_path.and_then(Path::parent).map(Path::to_path_buf).unwrap_or_default();
        let reader = match (manifest.layout, manifest.exec) {
            (None, Some(spec)) => Reader::Exec { spec, plugin_dir },
            (Some(layout), None) => Reader::Layout(Box::new(layout)),
            _ => {
                return Err(FormatError {
                    name: manifest.name,
                    message: "give exactly one of `layout` and `exec`".into(),
                })
            }
        };
        Ok(RigFormat {
            name: manifest.name,
            description: manifest.description,
            manifest_path: manifest_path.map(Path::to_path_buf),
            record: manifest.record,
            detect: manifest.detect,
            reader,
        })
    }

    /// The built-in native format.
    pub fn native() -> RigFormat {
        RigFormat::shipped("native.yaml", NATIVE_MANIFEST)
    }

    /// The built-in native free-decay format.
    pub fn native_decay() -> RigFormat {
        RigFormat::shipped("native-decay.yaml", NATIVE_DECAY_MANIFEST)
    }

    fn shipped(file: &str, text: &str) -> RigFormat {
        match Manifest::from_yaml(file, text) {
            Ok(Manifest::RigFormat(manifest)) => match RigFormat::from_manifest(*manifest, None) {
                Ok(format) => format,
                Err(err) => panic!("the shipped manifest {file} does not compile: {err}"),
            },
            // The shipped manifests are checked by this crate's tests; only a broken build gets here.
            other => panic!("the shipped manifest {file} does not load: {other:?}"),
        }
    }

    /// The built-in native format, compiled once per process (exec converters print it).
    pub fn native_shared() -> &'static RigFormat {
        static NATIVE: std::sync::OnceLock<RigFormat> = std::sync::OnceLock::new();
        NATIVE.get_or_init(RigFormat::native)
    }

    /// The built-in native free-decay format, compiled once per process (exec converters of
    /// free-decay formats print it).
    pub fn native_decay_shared() -> &'static RigFormat {
        static NATIVE_DECAY: std::sync::OnceLock<RigFormat> = std::sync::OnceLock::new();
        NATIVE_DECAY.get_or_init(RigFormat::native_decay)
    }

    /// Whether this format's signature matches the file's name and first lines.
    pub fn matches(&self, file_name: &str, head: &str) -> bool {
        if !self.detect.extensions.is_empty() {
            let extension = Path::new(file_name).extension().and_then(|e| e.to_str()).unwrap_or("");
            if !self.detect.extensions.iter().any(|e| e.eq_ignore_ascii_case(extension)) {
                return false;
            }
        }
        // Needles are single-line strings, so searching the first N lines as one slice is the same.
        let scope = first_lines(head, self.detect.within_lines);
        self.detect.contains.iter().all(|needle| scope.contains(needle.as_str()))
    }

    /// True for exec converters.
    pub fn is_exec(&self) -> bool {
        matches!(self.reader, Reader::Exec { .. })
    }
}

/// The first `count` lines of `text` (with their line breaks).
fn first_lines(text: &str, count: usize) -> &str {
    match memchr::memchr_iter(b'\n', text.as_bytes()).nth(count.saturating_sub(1)) {
        Some(end) if count > 0 => &text[..end],
        _ if count == 0 => "",
        _ => text,
    }
}

/// The rig formats in use, searched in order.
#[derive(Debug, Clone, Default)]
pub struct FormatSet {
    formats: Vec<RigFormat>,
}

impl FormatSet {
    /// A set of formats; names must be unique.
    pub fn new(formats: Vec<RigFormat>) -> Result<FormatSet, String> {
        for (i, format) in formats.iter().enumerate() {
            if let Some(other) = formats[..i].iter().find(|f| f.name == format.name) {
                let place = |f: &RigFormat| {
                    f.manifest_path
                        .as_ref()
                        .map(|p| p.display().to_string())
                        .unwrap_or_else(|| "built in".into())
                };
                return Err(format!(
                    "two rig formats are named `{}`: {} and {}",
                    format.name,
                    place(other),
                    place(format)
                ));
            }
        }
        Ok(FormatSet { formats })
    }

    /// All formats.
    pub fn formats(&self) -> &[RigFormat] {
        &self.formats
    }

    /// The format with this name.
    pub fn by_name(&self, name: &str) -> Option<&RigFormat> {
        self.formats.iter().find(|f| f.name == name)
    }

    /// Recognises the file: exactly one format must claim it.
    pub fn detect(&self, file: &str, bytes: &[u8]) -> Result<&RigFormat, IngestError> {
        let within = self.formats.iter().map(|f| f.detect.within_lines).max().unwrap_or(0);
        let head = head_text(bytes, within);
        let claims: Vec<&RigFormat> = self.formats.iter().filter(|f| f.matches(file, &head)).collect();
        match claims.as_slice() {
            [one] => Ok(one),
            [] => Err(IngestError::file(
                RejectKind::Unrecognised,
                file,
                format!(
                    "no rig-format plugin recognises this file (tried {}); add a plugin or name one with --rig-format",
                    self.formats.iter().map(|f| f.name.as_str()).collect::<Vec<_>>().join(", ")
                ),
            )),
            many => Err(IngestError::file(
                RejectKind::Ambiguous,
                file,
                format!(
                    "rig formats {} each recognise this file; choose one with --rig-format",
                    many.iter().map(|f| format!("`{}`", f.name)).collect::<Vec<_>>().join(" and ")
                ),
            )),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn native_manifest_loads_and_detects_its_header() {
        let native = RigFormat::native();
        assert_eq!(native.name, NATIVE_NAME);
        assert!(native.matches("a.csv", "# serial: 1\nangle_deg,torque_nmm\n0,0\n"));
        assert!(!native.matches("a.csv", "Angle;Torque\n"));
    }

    #[test]
    fn native_decay_claims_swing_exports_and_native_does_not() {
        let decay = RigFormat::native_decay();
        assert_eq!((decay.name.as_str(), decay.record), (NATIVE_DECAY_NAME, RecordKind::FreeDecay));
        assert_eq!(RigFormat::native().record, RecordKind::TorqueCurve);
        let swing = "# record: free-decay\n# inertia_kgm2: 1e-4\ntime_s,angle_deg\n0,20\n";
        let set = FormatSet::new(vec![RigFormat::native(), decay]).unwrap();
        assert_eq!(set.detect("s.csv", swing.as_bytes()).unwrap().name, NATIVE_DECAY_NAME);
        let curve = "# serial: 1\ntime_s,angle_deg,torque_nmm\n0,0,0\n";
        assert_eq!(set.detect("c.csv", curve.as_bytes()).unwrap().name, NATIVE_NAME);
    }

    #[test]
    fn two_claims_are_ambiguous_and_named() {
        let set = FormatSet::new(vec![RigFormat::native(), {
            let mut twin = RigFormat::native();
            twin.name = "twin".into();
            twin
        }])
        .unwrap();
        let err = set.detect("x.csv", b"angle_deg,torque_nmm\n1,2\n").unwrap_err();
        assert_eq!(err.kind, RejectKind::Ambiguous);
        assert!(err.message.contains("`native` and `twin`"), "{err}");
        assert!(err.message.contains("--rig-format"));
    }

    #[test]
    fn duplicate_names_are_refused() {
        assert!(FormatSet::new(vec![RigFormat::native(), RigFormat::native()]).is_err());
    }
}
