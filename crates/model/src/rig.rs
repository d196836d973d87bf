//! A test rig as the plant config records it: what it can measure, how fast, with which
//! arbors, until when it is calibrated, when it is free, and the reference spring it is
//! verified with.
//!
//! The plant config lists rigs under `rigs:`, one item each:
//!
//! ```yaml
//! rigs:
//!   - name: RIG-A
//!     format: korvel-tab
//!     capacity_nmm: 5000
//!     max_angle_deg: 360
//!     speed_deg_per_s: 30
//!     handling_s: 25
//!     setup_s: 300
//!     arbors_mm: [6, 8, 10, 12.5]
//!     calibration_due: "2027-03-01T00:00"
//!     available: { from: "22:00", to: "06:00" }
//!     reference: { serial: REF-A-01, check_angle_deg: 90, certified_torque_nmm: 1800, allowed_deviation_pct: 1.0 }
//! ```
//!
//! Only `name` and `format` are required, so a config written before planning existed
//! still loads. The planner needs more: it refuses a rig whose `capacity_nmm`,
//! `max_angle_deg`, `speed_deg_per_s`, `calibration_due` or `reference` is missing
//! (see [`Rig::missing_for_planning`]), because it cannot then tell whether the rig may
//! test a part, how long the tests take, or whether its results would stand.

use crate::plant_time::{ClockTime, PlantTime};
use crate::yaml::{parse_document, DocumentError};
use crate::yaml_list::locate_item_field;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// One rig of the plant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Rig {
    /// Rig name as its exports carry it.
    pub name: String,
    /// Rig-format plugin its exports follow.
    pub format: String,
    /// Load-cell capacity, N·mm. Needed for planning.
    #[serde(default)]
    pub capacity_nmm: Option<f64>,
    /// Largest leg angle the rig can drive to, degrees. Needed for planning.
    #[serde(default)]
    pub max_angle_deg: Option<f64>,
    /// Angular speed of the drive during a test, °/s. Needed for planning.
    #[serde(default)]
    pub speed_deg_per_s: Option<f64>,
    /// Time to load, clamp, unclamp and unload one part, s (default 0).
    #[serde(default)]
    pub handling_s: f64,
    /// Time to change the fixture or arbor between lots that need different ones, s (default 0).
    #[serde(default)]
    pub setup_s: f64,
    /// Diameters of the arbors kept at this rig, mm (default none).
    #[serde(default)]
    pub arbors_mm: Vec<f64>,
    /// When the calibration runs out: results after this moment do not stand. Needed for planning.
    #[serde(default)]
    pub calibration_due: Option<PlantTime>,
    /// When the rig is free for testing in a shift (default: the whole shift).
    #[serde(default)]
    pub available: Option<Availability>,
    /// The reference ("master") spring the rig is verified with at the start of a shift.
    /// Needed for planning.
    #[serde(default)]
    pub reference: Option<ReferenceSpring>,
}

/// The hours a rig is free in a shift.
///
/// Either both ends are times of day (`"22:00"`, recurring every shift; a `to` at or
/// before `from` runs past midnight) or both are plant-local date-times
/// (`"2026-12-01T22:00"`, for one shift only, `from` before `to`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Availability {
    /// Start of the free hours.
    pub from: ShiftClock,
    /// End of the free hours.
    pub to: ShiftClock,
}

/// A moment written either as a time of day or as a full plant-local date-time.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ShiftClock {
    /// A date and time, for one shift.
    At(PlantTime),
    /// A time of day, every shift.
    Daily(ClockTime),
}

impl std::fmt::Display for ShiftClock {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ShiftClock::At(at) => at.fmt(f),
            ShiftClock::Daily(clock) => clock.fmt(f),
        }
    }
}

impl std::str::FromStr for ShiftClock {
    type Err = crate::plant_time::BadTime;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        // A date-time always has the `T`; a time of day never does.
        if text.contains('T') {
            text.parse().map(ShiftClock::At)
        } else {
            text.parse().map(ShiftClock::Daily)
        }
    }
}

impl Serialize for ShiftClock {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

impl<'de> Deserialize<'de> for ShiftClock {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_str(crate::plant_time::ParseVisitor::new(
            "a time of day (HH:MM) or a plant-local date and time (YYYY-MM-DDTHH:MM)",
        ))
    }
}

impl Availability {
    /// The free window as date-times for a shift that starts at `shift_start`.
    ///
    /// A time-of-day `from` is taken on the day that puts it nearest to the shift start
    /// (a rig free from 21:00 in a shift starting 22:00 is free from 21:00 the same day;
    /// from 02:00, the next day); a time-of-day `to` is its first occurrence after
    /// `from`. Date-times are taken as written.
    pub fn window(&self, shift_start: PlantTime) -> (PlantTime, PlantTime) {
        let from = match self.from {
            ShiftClock::At(at) => at,
            ShiftClock::Daily(clock) => clock.nearest_to(shift_start),
        };
        let to = match self.to {
            ShiftClock::At(at) => at,
            ShiftClock::Daily(clock) => clock.next_after(from),
        };
        (from, to)
    }
}

/// A reference spring with a certified torque at one angle.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ReferenceSpring {
    /// Serial number of the reference spring, as its export carries it.
    pub serial: String,
    /// Angle at which its torque is certified, degrees.
    pub check_angle_deg: f64,
    /// Certified torque at that angle, N·mm.
    pub certified_torque_nmm: f64,
    /// Largest deviation of the measured torque from the certified one that still passes, %.
    pub allowed_deviation_pct: f64,
}

impl ReferenceSpring {
    /// Deviation of a measured torque from the certified one, % of the certified torque.
    pub fn deviation_pct(&self, measured_torque_nmm: f64) -> f64 {
        (measured_torque_nmm - self.certified_torque_nmm) / self.certified_torque_nmm * 100.0
    }

    /// True when a measured torque is within the allowed deviation (limit included).
    /// A non-finite measurement never passes.
    pub fn accepts(&self, measured_torque_nmm: f64) -> bool {
        let deviation = self.deviation_pct(measured_torque_nmm);
        deviation.is_finite() && deviation.abs() <= self.allowed_deviation_pct
    }
}

/// A rig field whose value cannot stand.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("field `{field}`: {message}")]
pub struct RigFieldError {
    /// Dotted path of the field inside the rig record (`reference.check_angle_deg`).
    pub field: String,
    /// What is wrong, and what to write instead.
    pub message: String,
}

impl Rig {
    /// The fields the planner needs that this rig's record leaves out, by name.
    pub fn missing_for_planning(&self) -> Vec<&'static str> {
        let mut missing = Vec::new();
        if self.capacity_nmm.is_none() {
            missing.push("capacity_nmm");
        }
        if self.max_angle_deg.is_none() {
            missing.push("max_angle_deg");
        }
        if self.speed_deg_per_s.is_none() {
            missing.push("speed_deg_per_s");
        }
        if self.calibration_due.is_none() {
            missing.push("calibration_due");
        }
        if self.reference.is_none() {
            missing.push("reference");
        }
        missing
    }

    /// Checks the record on its own; the error names the field (dotted, inside the rig).
    pub fn check(&self) -> Result<(), RigFieldError> {
        let fail = |field: &str, message: String| Err(RigFieldError { field: field.to_string(), message });
        if self.name.trim().is_empty() {
            return fail("name", "give the rig a name (as its exports carry it)".into());
        }
        if self.format.trim().is_empty() {
            return fail("format", "name the rig-format plugin its exports follow".into());
        }
        let positive = [
            ("capacity_nmm", self.capacity_nmm, "the load-cell capacity"),
            ("max_angle_deg", self.max_angle_deg, "the largest angle"),
            ("speed_deg_per_s", self.speed_deg_per_s, "the test speed"),
        ];
        for (field, value, what) in positive {
            if let Some(value) = value {
                if !(value.is_finite() && value > 0.0) {
                    return fail(field, format!("{what} must be a positive number, found {value}"));
                }
            }
        }
        for (field, value) in [("handling_s", self.handling_s), ("setup_s", self.setup_s)] {
            if !(value.is_finite() && value >= 0.0) {
                return fail(field, format!("must be a number of seconds, 0 or more, found {value}"));
            }
        }
        if let Some(bad) = self.arbors_mm.iter().find(|d| !(d.is_finite() && **d > 0.0)) {
            return fail("arbors_mm", format!("arbor diameters must be positive, found {bad}"));
        }
        if let Some(available) = &self.available {
            match (available.from, available.to) {
                (ShiftClock::At(from), ShiftClock::At(to)) if from >= to => {
                    return fail(
                        "available.to",
                        format!("the rig is free from {from}, so `to` must come later"),
                    );
                }
                (ShiftClock::Daily(from), ShiftClock::Daily(to)) if from == to => {
                    return fail(
                        "available.to",
                        format!("`from` and `to` are both {from}: give the hours the rig is free"),
                    );
                }
                (ShiftClock::At(_), ShiftClock::Daily(_)) | (ShiftClock::Daily(_), ShiftClock::At(_)) => {
                    return fail(
                        "available",
                        "write both ends as times of day (`22:00`) or both as date-times \
                         (`2026-12-01T22:00`)"
                            .into(),
                    );
                }
                _ => {}
            }
        }
        if let Some(reference) = &self.reference {
            if reference.serial.trim().is_empty() {
                return fail("reference.serial", "give the reference spring's serial number".into());
            }
            let numbers = [
                ("reference.check_angle_deg", reference.check_angle_deg),
                ("reference.certified_torque_nmm", reference.certified_torque_nmm),
                ("reference.allowed_deviation_pct", reference.allowed_deviation_pct),
            ];
            for (field, value) in numbers {
                if !(value.is_finite() && value > 0.0) {
                    return fail(field, format!("must be a positive number, found {value}"));
                }
            }
            if reference.allowed_deviation_pct >= 100.0 {
                return fail(
                    "reference.allowed_deviation_pct",
                    format!(
                        "{} % would pass any reading; give a percentage below 100",
                        reference.allowed_deviation_pct
                    ),
                );
            }
            if let Some(max_angle) = self.max_angle_deg {
                if reference.check_angle_deg > max_angle {
                    return fail(
                        "reference.check_angle_deg",
                        format!(
                            "the reference spring is checked at {}° but the rig only reaches {max_angle}°",
                            reference.check_angle_deg
                        ),
                    );
                }
            }
            if let Some(capacity) = self.capacity_nmm {
                if reference.certified_torque_nmm > capacity {
                    return fail(
                        "reference.certified_torque_nmm",
                        format!(
                            "the reference torque {} N·mm is above the load cell's capacity {capacity} N·mm",
                            reference.certified_torque_nmm
                        ),
                    );
                }
            }
        }
        Ok(())
    }
}

/// Checks every rig of a document's `rigs:` list and that no name appears twice; errors
/// name the file, the line and the field (`rigs[2].speed_deg_per_s`).
///
/// For callers that deserialise the whole plant config themselves and hold `rigs` as
/// `Vec<Rig>`: pass the same text so the line can be found.
pub fn validate_rigs(origin: &str, text: &str, rigs: &[Rig]) -> Result<(), DocumentError> {
    let error = |index: usize, field: &str, message: String| DocumentError {
        origin: origin.to_string(),
        line: locate_item_field(text, "rigs", index, field),
        field: Some(format!("rigs[{index}].{field}")),
        message,
    };
    let mut seen: BTreeMap<&str, usize> = BTreeMap::new();
    for (index, rig) in rigs.iter().enumerate() {
        rig.check().map_err(|e| error(index, &e.field, e.message))?;
        if let Some(first) = seen.insert(rig.name.as_str(), index) {
            return Err(error(
                index,
                "name",
                format!("rig `{}` is listed twice (first as item {})", rig.name, first + 1),
            ));
        }
    }
    Ok(())
}

/// The `rigs:` list of a plant config.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RigList {
    /// The rigs, in the order written.
    #[serde(default)]
    pub rigs: Vec<Rig>,
}

impl RigList {
    /// Reads and validates the `rigs:` list of a document, ignoring its other keys (so it
    /// can be given the whole plant config); `origin` names the file in errors.
    pub fn from_yaml(origin: &str, text: &str) -> Result<RigList, DocumentError> {
        let list: RigList = parse_document(origin, text)?;
        validate_rigs(origin, text, &list.rigs)?;
        Ok(list)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const PLANT: &str = "\
plant: Demo (invented)
parts: parts
rigs:
  - { name: RIG-A, format: korvel-tab, capacity_nmm: 5000 }
  - name: RIG-B
    format: ostrel-semi
    capacity_nmm: 2000
    max_angle_deg: 270
    speed_deg_per_s: 30
    handling_s: 20
    setup_s: 240
    arbors_mm: [6, 8, 10]
    calibration_due: \"2027-01-15T00:00\"
    available: { from: \"22:00\", to: \"05:30\" }
    reference: { serial: REF-B, check_angle_deg: 90, certified_torque_nmm: 900, allowed_deviation_pct: 1.5 }
sinks: []
";

    #[test]
    fn the_three_old_fields_still_load_and_new_ones_parse() {
        let list = RigList::from_yaml("plant.yaml", PLANT).unwrap();
        let a = &list.rigs[0];
        assert_eq!(
            (a.name.as_str(), a.format.as_str(), a.capacity_nmm),
            ("RIG-A", "korvel-tab", Some(5000.0))
        );
        assert_eq!(a.handling_s, 0.0);
        assert!(a.arbors_mm.is_empty());
        assert_eq!(
            a.missing_for_planning(),
            vec!["max_angle_deg", "speed_deg_per_s", "calibration_due", "reference"]
        );
        let b = &list.rigs[1];
        assert!(b.missing_for_planning().is_empty());
        let (from, to) = b.available.unwrap().window("2026-12-01T22:00".parse().unwrap());
        assert_eq!(
            (from.to_string(), to.to_string()),
            ("2026-12-01T22:00:00".into(), "2026-12-02T05:30:00".into())
        );
        assert_eq!(b.reference.as_ref().unwrap().serial, "REF-B");
    }

    #[test]
    fn the_shipped_plant_configs_rigs_load() {
        let text = include_str!("../../../sample_lots/plant.yaml");
        let list = RigList::from_yaml("sample_lots/plant.yaml", text).unwrap();
        assert!(!list.rigs.is_empty());
    }

    fn refused(text: &str) -> DocumentError {
        RigList::from_yaml("plant.yaml", text).unwrap_err()
    }

    #[test]
    fn refusals_name_line_and_field() {
        let cases = [
            ("capacity_nmm: 2000", "capacity_nmm: -5", 7, "rigs[1].capacity_nmm"),
            ("speed_deg_per_s: 30", "speed_deg_per_s: .nan", 9, "rigs[1].speed_deg_per_s"),
            ("setup_s: 240", "setup_s: -1", 11, "rigs[1].setup_s"),
            ("arbors_mm: [6, 8, 10]", "arbors_mm: [6, 0, 10]", 12, "rigs[1].arbors_mm"),
            ("to: \"05:30\"", "to: \"22:00\"", 14, "rigs[1].available.to"),
            ("to: \"05:30\"", "to: \"2026-12-02T05:30\"", 14, "rigs[1].available"),
            ("check_angle_deg: 90", "check_angle_deg: 300", 15, "rigs[1].reference.check_angle_deg"),
            (
                "allowed_deviation_pct: 1.5",
                "allowed_deviation_pct: 0",
                15,
                "rigs[1].reference.allowed_deviation_pct",
            ),
            (
                "certified_torque_nmm: 900",
                "certified_torque_nmm: 9000",
                15,
                "rigs[1].reference.certified_torque_nmm",
            ),
            ("name: RIG-B", "name: RIG-A", 5, "rigs[1].name"),
        ];
        for (from, to, line, field) in cases {
            let text = PLANT.replacen(from, to, 1);
            assert_ne!(text, PLANT, "{from}");
            let err = refused(&text);
            assert_eq!(err.line, Some(line), "{to}: {err}");
            assert_eq!(err.field.as_deref(), Some(field), "{to}: {err}");
            assert!(
                err.to_string().starts_with(&format!("plant.yaml, line {line}, field `{field}`")),
                "{err}"
            );
        }
    }

    #[test]
    fn date_time_windows_must_run_forward() {
        let text = PLANT.replacen(
            "{ from: \"22:00\", to: \"05:30\" }",
            "{ from: \"2026-12-02T05:00\", to: \"2026-12-02T04:00\" }",
            1,
        );
        let err = refused(&text);
        assert_eq!((err.line, err.field.as_deref()), (Some(14), Some("rigs[1].available.to")), "{err}");
    }

    #[test]
    fn type_errors_come_from_the_parser_with_line_and_field() {
        let err = refused(&PLANT.replacen("\"2027-01-15T00:00\"", "\"2027-01-15\"", 1));
        assert_eq!(err.line, Some(13), "{err}");
        assert!(err.to_string().contains("calibration_due"), "{err}");
        let err = refused(&PLANT.replacen("handling_s: 20", "handling_s: 20\n    colour: red", 1));
        assert!(err.to_string().contains("colour"), "{err}");
    }

    #[test]
    fn reference_deviation() {
        let reference = ReferenceSpring {
            serial: "R".into(),
            check_angle_deg: 90.0,
            certified_torque_nmm: 1000.0,
            allowed_deviation_pct: 1.0,
        };
        // Common practice, no published source: the reading passes while
        // |measured − certified| / certified ≤ the allowed deviation.
        assert!((reference.deviation_pct(1012.0) - 1.2).abs() < 1e-12);
        assert!(reference.accepts(1010.0) && reference.accepts(990.0));
        assert!(!reference.accepts(1010.5) && !reference.accepts(989.0) && !reference.accepts(f64::NAN));
    }
}
