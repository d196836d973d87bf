//! The shift's lot list (`lots.yaml` in a shift folder): the lots that come off the
//! coilers in the shift, when each is ready and when it must ship.
//!
//! ```yaml
//! lots:
//!   - { lot: L2612-031, part: TS-2210, quantity: 240, ready: "2026-12-01T22:30", ship_by: "2026-12-02T06:00",
//!       weight: 2, coiler: C-04, wire_lot: W-7781, wire_d_mm: 1.62, mean_d_mm: 14.1 }
//! ```
//!
//! Only `lot`, `part` and `quantity` are required, so lot lists written before planning
//! existed still load. Planning also needs the shift's hours, written once above the lots:
//!
//! ```yaml
//! shift: { start: "2026-12-01T14:00", end: "2026-12-01T22:00" }
//! ```

use crate::plant_time::PlantTime;
use crate::yaml::{parse_document, DocumentError};
use crate::yaml_list::locate_item_field;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// One lot of the shift.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ListedLot {
    /// Lot identifier, as the exports carry it.
    pub lot: String,
    /// Part number.
    pub part: String,
    /// Parts in the lot (at least 1).
    pub quantity: u64,
    /// When the lot comes off the coiler and can be sampled (absent: from the shift's start).
    pub ready: Option<PlantTime>,
    /// When it must ship (absent: no due time, so it is never late).
    pub ship_by: Option<PlantTime>,
    /// Priority against the other lots' lateness (positive; default 1).
    pub weight: f64,
    /// The coiler that made it.
    pub coiler: Option<String>,
    /// The wire lot it was coiled from.
    pub wire_lot: Option<String>,
    /// Measured wire diameter d, mm.
    pub wire_d_mm: Option<f64>,
    /// Measured mean coil diameter D, mm (the spec's nominal is used when absent).
    pub mean_d_mm: Option<f64>,
}

/// The lot list as written (quantity signed, so a negative one gets our own message).
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct LotText {
    lot: String,
    part: String,
    quantity: i64,
    #[serde(default)]
    ready: Option<PlantTime>,
    #[serde(default)]
    ship_by: Option<PlantTime>,
    #[serde(default = "default_weight")]
    weight: f64,
    #[serde(default)]
    coiler: Option<String>,
    #[serde(default)]
    wire_lot: Option<String>,
    #[serde(default)]
    wire_d_mm: Option<f64>,
    #[serde(default)]
    mean_d_mm: Option<f64>,
}

fn default_weight() -> f64 {
    1.0
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct LotListText {
    #[serde(default)]
    shift: Option<ShiftHours>,
    lots: Vec<LotText>,
}

/// The stretch of plant-local time a shift runs: what a plan may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ShiftHours {
    /// When the shift starts.
    pub start: PlantTime,
    /// When it ends (after `start`).
    pub end: PlantTime,
}

/// The lots of one shift, in the order written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotList {
    /// The shift's hours, when the list gives them (planning needs them).
    #[serde(default)]
    pub shift: Option<ShiftHours>,
    /// The lots.
    pub lots: Vec<ListedLot>,
}

impl LotList {
    /// Parses and validates a lot list; `origin` names the file in errors.
    ///
    /// Refused, with file, line and field: a quantity below 1, a lot listed twice, a
    /// ready time after the ship-by time, a weight that is not a positive number, a wire
    /// or mean coil diameter that is not a positive number or a wire as thick as the
    /// coil's mean diameter, an empty lot or part, and times not written
    /// `YYYY-MM-DDTHH:MM[:SS]`, and a shift that does not end after it starts.
    pub fn from_yaml(origin: &str, text: &str) -> Result<LotList, DocumentError> {
        let file: LotListText = parse_document(origin, text)?;
        if let Some(hours) = file.shift {
            if hours.end <= hours.start {
                return Err(DocumentError::at_field(
                    origin,
                    text,
                    "shift.end",
                    format!(
                        "the shift starts at {}, so it must end later, not at {}",
                        hours.start, hours.end
                    ),
                ));
            }
        }
        let error = |index: usize, field: &str, message: String| DocumentError {
            origin: origin.to_string(),
            line: locate_item_field(text, "lots", index, field),
            field: Some(format!("lots[{index}].{field}")),
            message,
        };
        let mut seen: BTreeMap<String, usize> = BTreeMap::new();
        let mut lots = Vec::with_capacity(file.lots.len());
        for (index, raw) in file.lots.into_iter().enumerate() {
            if raw.lot.trim().is_empty() {
                return Err(error(index, "lot", "give the lot identifier the exports carry".into()));
            }
            if let Some(first) = seen.insert(raw.lot.clone(), index) {
                return Err(error(
                    index,
                    "lot",
                    format!(
                        "lot `{}` is listed twice (first as item {}); list each lot once",
                        raw.lot,
                        first + 1
                    ),
                ));
            }
            if raw.part.trim().is_empty() {
                return Err(error(index, "part", "give the part number".into()));
            }
            let quantity = u64::try_from(raw.quantity).ok().filter(|q| *q > 0).ok_or_else(|| {
                error(index, "quantity", format!("a lot holds at least 1 part, found {}", raw.quantity))
            })?;
            if let (Some(ready), Some(ship_by)) = (raw.ready, raw.ship_by) {
                if ready > ship_by {
                    return Err(error(
                        index,
                        "ready",
                        format!("the lot is ready at {ready}, after it must ship ({ship_by})"),
                    ));
                }
            }
            if !(raw.weight.is_finite() && raw.weight > 0.0) {
                return Err(error(
                    index,
                    "weight",
                    format!("the weight must be a positive number, found {}", raw.weight),
                ));
            }
            for (field, value) in [("wire_d_mm", raw.wire_d_mm), ("mean_d_mm", raw.mean_d_mm)] {
                if let Some(value) = value {
                    if !(value.is_finite() && value > 0.0) {
                        return Err(error(
                            index,
                            field,
                            format!("a diameter must be a positive number of mm, found {value}"),
                        ));
                    }
                }
            }
            if let (Some(wire), Some(mean)) = (raw.wire_d_mm, raw.mean_d_mm) {
                if wire >= mean {
                    return Err(error(
                        index,
                        "wire_d_mm",
                        format!("a {wire} mm wire cannot coil to a mean diameter of {mean} mm"),
                    ));
                }
            }
            lots.push(ListedLot {
                lot: raw.lot,
                part: raw.part,
                quantity,
                ready: raw.ready,
                ship_by: raw.ship_by,
                weight: raw.weight,
                coiler: raw.coiler,
                wire_lot: raw.wire_lot,
                wire_d_mm: raw.wire_d_mm,
                mean_d_mm: raw.mean_d_mm,
            });
        }
        Ok(LotList { shift: file.shift, lots })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    // The shipped demo shift's list, as written before planning existed.
    const OLD: &str = "\
# Lots waiting for a decision at the end of the shift (written by the generator).
lots:
  - { lot: L2612-031, part: TS-2210, quantity: 240, ship_by: \"2026-12-02T06:00\" }
  - { lot: L2612-032, part: TS-2210, quantity: 140, ship_by: \"2026-12-02T10:00\" }
  - { lot: L2612-040, part: TS-0815, quantity: 450, ship_by: \"2026-12-02T08:00\" }
";

    const NEW: &str = "\
lots:
  - { lot: A-1, part: P-1, quantity: 100, ready: \"2026-12-01T22:30\", ship_by: \"2026-12-02T06:00\", weight: 2, coiler: C-04 }
  - lot: A-2
    part: P-2
    quantity: 50
    ready: \"2026-12-01T23:00\"
    ship_by: \"2026-12-02T04:00\"
    wire_lot: W-7781
    wire_d_mm: 1.62
    mean_d_mm: 14.1
";

    #[test]
    fn old_lists_still_load() {
        let list = LotList::from_yaml("lots.yaml", OLD).unwrap();
        assert_eq!(list.lots.len(), 3);
        let lot = &list.lots[2];
        assert_eq!((lot.lot.as_str(), lot.part.as_str(), lot.quantity), ("L2612-040", "TS-0815", 450));
        assert_eq!(lot.ship_by.map(|t| t.to_string()).as_deref(), Some("2026-12-02T08:00:00"));
        assert_eq!((lot.ready, lot.weight, lot.coiler.as_deref()), (None, 1.0, None));
    }

    #[test]
    fn the_shipped_shifts_list_loads() {
        let text = include_str!("../../../sample_lots/shifts/2026-12-01-late/lots.yaml");
        let list = LotList::from_yaml("lots.yaml", text).unwrap();
        assert!(!list.lots.is_empty());
    }

    #[test]
    fn shift_hours_load_and_must_run_forward() {
        let text = format!("shift: {{ start: \"2026-12-01T14:00\", end: \"2026-12-01T22:00\" }}\n{NEW}");
        let list = LotList::from_yaml("lots.yaml", &text).unwrap();
        let hours = list.shift.unwrap();
        assert_eq!(hours.end.seconds_since(hours.start), 8 * 3600);
        assert_eq!(LotList::from_yaml("lots.yaml", NEW).unwrap().shift, None);
        let backwards = text.replacen("2026-12-01T22:00", "2026-12-01T13:00", 1);
        let err = LotList::from_yaml("lots.yaml", &backwards).unwrap_err();
        assert_eq!((err.line, err.field.as_deref()), (Some(1), Some("shift.end")), "{err}");
        assert!(err.message.contains("must end later"), "{err}");
    }

    #[test]
    fn new_fields_load() {
        let list = LotList::from_yaml("lots.yaml", NEW).unwrap();
        assert_eq!(list.lots[0].weight, 2.0);
        assert_eq!(list.lots[0].coiler.as_deref(), Some("C-04"));
        assert_eq!(list.lots[1].wire_lot.as_deref(), Some("W-7781"));
        assert_eq!((list.lots[1].wire_d_mm, list.lots[1].mean_d_mm), (Some(1.62), Some(14.1)));
    }

    #[test]
    fn refusals_name_line_and_field() {
        let cases = [
            ("quantity: 50", "quantity: 0", 5, "lots[1].quantity", "at least 1"),
            ("quantity: 50", "quantity: -3", 5, "lots[1].quantity", "at least 1"),
            ("lot: A-2", "lot: A-1", 3, "lots[1].lot", "listed twice"),
            (
                "ready: \"2026-12-01T23:00\"",
                "ready: \"2026-12-02T05:00\"",
                6,
                "lots[1].ready",
                "after it must ship",
            ),
            ("wire_d_mm: 1.62", "wire_d_mm: .inf", 9, "lots[1].wire_d_mm", "positive"),
            ("wire_d_mm: 1.62", "wire_d_mm: -1.6", 9, "lots[1].wire_d_mm", "positive"),
            ("wire_d_mm: 1.62", "wire_d_mm: 0", 9, "lots[1].wire_d_mm", "positive"),
            ("mean_d_mm: 14.1", "mean_d_mm: 1.0", 9, "lots[1].wire_d_mm", "cannot coil"),
            ("weight: 2,", "weight: 0,", 2, "lots[0].weight", "positive"),
            ("part: P-2", "part: \" \"", 4, "lots[1].part", "part number"),
        ];
        for (from, to, line, field, words) in cases {
            let text = NEW.replacen(from, to, 1);
            assert_ne!(text, NEW, "{from}");
            let err = LotList::from_yaml("lots.yaml", &text).unwrap_err();
            assert_eq!(err.line, Some(line), "{to}: {err}");
            assert_eq!(err.field.as_deref(), Some(field), "{to}: {err}");
            assert!(err.message.contains(words), "{to}: {err}");
            assert!(
                err.to_string().starts_with(&format!("lots.yaml, line {line}, field `{field}`")),
                "{err}"
            );
        }
    }

    #[test]
    fn bad_times_and_unknown_fields_are_refused_by_the_parser_with_line_and_field() {
        let cases = [
            ("ship_by: \"2026-12-02T04:00\"", "ship_by: \"2026-12-02 04:00\"", 7, "lots[1].ship_by"),
            ("ready: \"2026-12-01T23:00\"", "ready: \"2026-12-01T23:00+01:00\"", 6, "lots[1].ready"),
            // An unknown key is named in the message; the path stops at its item.
            ("coiler: C-04", "colour: C-04", 2, "lots[0]"),
        ];
        for (from, to, line, field) in cases {
            let text = NEW.replacen(from, to, 1);
            let err = LotList::from_yaml("lots.yaml", &text).unwrap_err();
            assert_eq!(err.line, Some(line), "{to}: {err}");
            assert_eq!(err.field.as_deref(), Some(field), "{to}: {err}");
            assert!(err.message.contains("not a plant-local") || err.message.contains("`colour`"), "{err}");
        }
    }

    proptest! {
        /// Whatever the numbers, a loaded list holds only valid lots and a refusal names
        /// a line inside the list.
        #[test]
        fn loaded_lists_hold_only_valid_lots(
            quantities in proptest::collection::vec(-5i64..500, 1..6),
            weights in proptest::collection::vec(-1.0f64..5.0, 1..6),
            ready_hours in proptest::collection::vec(0u32..12, 1..6),
            ship_hours in proptest::collection::vec(0u32..12, 1..6),
            repeat in any::<bool>(),
        ) {
            let mut text = String::from("lots:\n");
            let n = quantities.len().min(weights.len()).min(ready_hours.len()).min(ship_hours.len());
            for i in 0..n {
                let name = if repeat && i == n - 1 && n > 1 { 0 } else { i };
                text.push_str(&format!(
                    "  - {{ lot: L{name}, part: P, quantity: {}, weight: {}, ready: \"2026-12-02T{:02}:00\", ship_by: \"2026-12-02T{:02}:00\" }}\n",
                    quantities[i], weights[i], ready_hours[i], ship_hours[i]
                ));
            }
            match LotList::from_yaml("lots.yaml", &text) {
                Ok(list) => {
                    let mut names = std::collections::BTreeSet::new();
                    for lot in &list.lots {
                        prop_assert!(lot.quantity >= 1);
                        prop_assert!(lot.weight > 0.0);
                        prop_assert!(lot.ready <= lot.ship_by);
                        prop_assert!(names.insert(lot.lot.clone()));
                    }
                }
                Err(err) => {
                    let line = err.line.unwrap_or(0);
                    prop_assert!((2..=n + 1).contains(&line), "{}", err);
                    prop_assert!(err.field.is_some(), "{}", err);
                }
            }
        }
    }
}
