//! What an export says about the test it holds.

use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Canonical metadata keys a rig-format plugin maps its own labels onto.
pub mod key {
    /// The part's serial number.
    pub const SERIAL: &str = "serial";
    /// The part number (drawing number).
    pub const PART: &str = "part";
    /// The production lot.
    pub const LOT: &str = "lot";
    /// The rig that ran the test.
    pub const RIG: &str = "rig";
    /// Who ran the test.
    pub const OPERATOR: &str = "operator";
    /// When the test started, as the rig wrote it.
    pub const STARTED: &str = "started";
    /// Every key twistlot gives a meaning to.
    pub const KNOWN: [&str; 6] = [SERIAL, PART, LOT, RIG, OPERATOR, STARTED];
    /// The whole inertia a free-decay record's spring swings, kg·m² (kept in `extra`).
    pub const INERTIA_KGM2: &str = "inertia_kgm2";
    /// The record kind a native free-decay export states (`free-decay`), kept in `extra`.
    pub const RECORD: &str = "record";
}

/// Metadata of one test: the known keys plus whatever else the export carried.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct TestMetadata {
    /// Serial number of the tested part.
    pub serial: Option<String>,
    /// Part number.
    pub part: Option<String>,
    /// Lot.
    pub lot: Option<String>,
    /// Rig.
    pub rig: Option<String>,
    /// Operator.
    pub operator: Option<String>,
    /// Start time as written by the rig.
    pub started: Option<String>,
    /// The export's path as given.
    pub source_file: String,
    /// BLAKE3 hash of the export's bytes, hex.
    pub content_hash: String,
    /// Keys the plugin did not map, as written in the export.
    pub extra: BTreeMap<String, String>,
}

impl TestMetadata {
    /// Sets a value under a canonical key, or under `extra` when the key is not canonical.
    pub fn set(&mut self, key: &str, value: &str) {
        let value = value.trim().to_string();
        let slot = match key {
            key::SERIAL => &mut self.serial,
            key::PART => &mut self.part,
            key::LOT => &mut self.lot,
            key::RIG => &mut self.rig,
            key::OPERATOR => &mut self.operator,
            key::STARTED => &mut self.started,
            other => {
                self.extra.insert(other.to_string(), value);
                return;
            }
        };
        *slot = Some(value);
    }

    /// The inertia the export states under [`key::INERTIA_KGM2`], kg·m²: `Ok(None)` when it
    /// states none, `Err` with the reason when the value is not a positive number.
    pub fn inertia_kgm2(&self) -> Result<Option<f64>, String> {
        let Some(text) = self.extra.get(key::INERTIA_KGM2) else { return Ok(None) };
        match text.trim().parse::<f64>() {
            Ok(value) if value.is_finite() && value > 0.0 => Ok(Some(value)),
            _ => Err(format!(
                "the metadata line `{}: {text}` is not an inertia in kg·m² above zero",
                key::INERTIA_KGM2
            )),
        }
    }

    /// A test identifier that is stable for the same file content: serial when
    /// known, made unique by the start of the content hash.
    pub fn test_id(&self) -> String {
        let hash = self.content_hash.get(..8).unwrap_or(&self.content_hash);
        match &self.serial {
            Some(serial) => format!("{serial}-{hash}"),
            None => hash.to_string(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn known_keys_go_to_fields_and_others_to_extra() {
        let mut meta = TestMetadata::default();
        meta.set("serial", " S-001 ");
        meta.set("lot", "L7");
        meta.set("fixture", "F2");
        assert_eq!(meta.serial.as_deref(), Some("S-001"));
        assert_eq!(meta.lot.as_deref(), Some("L7"));
        assert_eq!(meta.extra.get("fixture").map(String::as_str), Some("F2"));
    }

    #[test]
    fn inertia_is_read_from_extra_and_refused_when_not_a_positive_number() {
        let mut meta = TestMetadata::default();
        assert_eq!(meta.inertia_kgm2(), Ok(None));
        meta.set(key::INERTIA_KGM2, " 2.5e-4 ");
        assert_eq!(meta.inertia_kgm2(), Ok(Some(2.5e-4)));
        for bad in ["0", "-1e-3", "heavy", "NaN"] {
            meta.set(key::INERTIA_KGM2, bad);
            let err = meta.inertia_kgm2().unwrap_err();
            assert!(err.contains("inertia_kgm2") && err.contains(bad), "{err}");
        }
    }

    #[test]
    fn test_id_joins_serial_and_hash() {
        let meta = TestMetadata {
            serial: Some("S9".into()),
            content_hash: "0123456789abcdef".into(),
            ..Default::default()
        };
        assert_eq!(meta.test_id(), "S9-01234567");
    }
}
