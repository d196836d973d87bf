//! Why a rig may not test a lot, and why a lot stays out of the plan.

use serde::ser::SerializeStruct;
use serde::{Serialize, Serializer};
use std::fmt;
use twistlot_model::PlantTime;

/// Lowest share of the load cell's capacity a test torque may use (common practice: 10 %).
pub const CELL_LOW_SHARE: f64 = 0.10;
/// Highest share of the load cell's capacity a test torque may use (common practice: 90 %).
pub const CELL_HIGH_SHARE: f64 = 0.90;

/// Why one rig may not test one lot. Serialised as its text.
#[derive(Debug, Clone, PartialEq)]
pub enum Refusal {
    /// The plant config leaves out what the planner needs to judge the rig.
    MissingRigData {
        /// The missing fields.
        fields: Vec<&'static str>,
    },
    /// The part's largest test torque is outside 10–90 % of the load cell's capacity.
    TorqueOutsideCellWindow {
        /// Largest test torque, N·mm.
        torque_nmm: f64,
        /// Load-cell capacity, N·mm.
        capacity_nmm: f64,
    },
    /// The test angle is beyond the rig's range.
    AngleBeyondRange {
        /// Largest test angle, degrees.
        angle_deg: f64,
        /// Largest angle the rig reaches, degrees.
        max_angle_deg: f64,
    },
    /// No arbor at the rig clears the wound-down spring.
    NoArborFits {
        /// The wound-down inside diameter, mm.
        inside_d_mm: f64,
        /// Largest arbor that would clear it (90 % of it), mm.
        largest_allowed_mm: f64,
        /// The rig's arbors, mm.
        arbors_mm: Vec<f64>,
    },
    /// The rig's calibration runs out before the lot's tests could end.
    CalibrationLapses {
        /// When the calibration runs out.
        due: PlantTime,
        /// The earliest the tests could end on this rig.
        earliest_end: PlantTime,
    },
    /// The rig is not free long enough in the shift for the lot's tests.
    NotAvailableLongEnough {
        /// When the rig stops being free (or the shift ends).
        until: PlantTime,
        /// The earliest the tests could end on this rig.
        earliest_end: PlantTime,
    },
}

/// A number for people: at most two decimals, no trailing zeros.
pub(crate) fn number(value: f64) -> String {
    let text = format!("{value:.2}");
    let text = text.trim_end_matches('0').trim_end_matches('.');
    text.to_string()
}

impl Refusal {
    /// A stable short code for the kind of refusal (for JSON and CSV).
    pub fn kind(&self) -> &'static str {
        match self {
            Refusal::MissingRigData { .. } => "rig-data-missing",
            Refusal::TorqueOutsideCellWindow { .. } => "torque-window",
            Refusal::AngleBeyondRange { .. } => "angle-range",
            Refusal::NoArborFits { .. } => "arbor",
            Refusal::CalibrationLapses { .. } => "calibration",
            Refusal::NotAvailableLongEnough { .. } => "availability",
        }
    }
}

impl fmt::Display for Refusal {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Refusal::MissingRigData { fields } => write!(
                f,
                "the plant config does not give the rig's {}, so the planner cannot tell whether it may test the part",
                fields.join(", ")
            ),
            Refusal::TorqueOutsideCellWindow { torque_nmm, capacity_nmm } => write!(
                f,
                "the largest test torque {} N·mm is outside 10–90 % of the {} N·mm load cell ({}–{} N·mm), \
                 where it would be measured poorly",
                number(*torque_nmm),
                number(*capacity_nmm),
                number(CELL_LOW_SHARE * capacity_nmm),
                number(CELL_HIGH_SHARE * capacity_nmm)
            ),
            Refusal::AngleBeyondRange { angle_deg, max_angle_deg } => write!(
                f,
                "the test goes to {}° but the rig only reaches {}°",
                number(*angle_deg),
                number(*max_angle_deg)
            ),
            Refusal::NoArborFits { inside_d_mm, largest_allowed_mm, arbors_mm } => {
                let arbors = if arbors_mm.is_empty() {
                    "none recorded".to_string()
                } else {
                    arbors_mm.iter().map(|d| format!("{} mm", number(*d))).collect::<Vec<_>>().join(", ")
                };
                write!(
                    f,
                    "no arbor at or below {} mm (90 % of the spring's wound-down inside diameter {} mm); \
                     a larger one binds and fakes hysteresis; arbors at the rig: {arbors}",
                    number(*largest_allowed_mm),
                    number(*inside_d_mm)
                )
            }
            Refusal::CalibrationLapses { due, earliest_end } => write!(
                f,
                "the rig's calibration runs out at {due}, before the earliest the tests could end ({earliest_end}); \
                 results after that do not stand"
            ),
            Refusal::NotAvailableLongEnough { until, earliest_end } => write!(
                f,
                "the rig is free only until {until}, before the earliest the tests could end ({earliest_end})"
            ),
        }
    }
}

impl Serialize for Refusal {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

/// One rig refusing one lot, with the reason.
#[derive(Debug, Clone, PartialEq)]
pub struct RigRefusal {
    /// The lot.
    pub lot: String,
    /// The rig.
    pub rig: String,
    /// Why.
    pub reason: Refusal,
}

impl Serialize for RigRefusal {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let mut out = serializer.serialize_struct("RigRefusal", 4)?;
        out.serialize_field("lot", &self.lot)?;
        out.serialize_field("rig", &self.rig)?;
        out.serialize_field("kind", self.reason.kind())?;
        out.serialize_field("reason", &self.reason)?;
        out.end()
    }
}

/// Why a lot is not in the plan. Serialised as its text.
#[derive(Debug, Clone, PartialEq)]
pub enum Unplanned {
    /// Every rig refuses it.
    NoEligibleRig {
        /// Each rig's refusals.
        refusals: Vec<RigRefusal>,
    },
    /// Rigs may test it, but none has time left for it in the shift without leaving out
    /// lots that weigh as much or more.
    NoTimeLeft {
        /// The rigs that may test it.
        rigs: Vec<String>,
    },
    /// The caller could not say what the lot needs (no spec for its part, no sampling
    /// agreement…), so it never became a [`crate::Job`]. The planner itself never gives
    /// this; the caller adds such lots to the plan's list so none goes unmentioned.
    NotPlannable {
        /// Why, in words.
        reason: String,
    },
}

impl Unplanned {
    /// A stable short code (`no-eligible-rig`, `no-time-left`, `not-plannable`).
    pub fn kind(&self) -> &'static str {
        match self {
            Unplanned::NoEligibleRig { .. } => "no-eligible-rig",
            Unplanned::NoTimeLeft { .. } => "no-time-left",
            Unplanned::NotPlannable { .. } => "not-plannable",
        }
    }
}

impl fmt::Display for Unplanned {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Unplanned::NoEligibleRig { refusals } => {
                write!(f, "no rig may test it")?;
                for (index, refusal) in refusals.iter().enumerate() {
                    let lead = if index == 0 { ": " } else { "; " };
                    write!(f, "{lead}{}: {}", refusal.rig, refusal.reason)?;
                }
                Ok(())
            }
            Unplanned::NoTimeLeft { rigs } => write!(
                f,
                "the rigs that may test it ({}) have no time left for it in the shift before they stop being \
                 free or their calibration runs out, without leaving out other lots",
                rigs.join(", ")
            ),
            Unplanned::NotPlannable { reason } => write!(f, "it cannot be planned: {reason}"),
        }
    }
}

impl Serialize for Unplanned {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn texts_say_what_and_why() {
        let torque = Refusal::TorqueOutsideCellWindow { torque_nmm: 4700.0, capacity_nmm: 5000.0 };
        assert_eq!(
            torque.to_string(),
            "the largest test torque 4700 N·mm is outside 10–90 % of the 5000 N·mm load cell (500–4500 N·mm), \
             where it would be measured poorly"
        );
        let arbor =
            Refusal::NoArborFits { inside_d_mm: 11.0, largest_allowed_mm: 9.9, arbors_mm: vec![10.0, 12.5] };
        assert!(
            arbor.to_string().contains("at or below 9.9 mm") && arbor.to_string().contains("10 mm, 12.5 mm")
        );
        let json =
            serde_json::to_value(RigRefusal { lot: "L1".into(), rig: "R".into(), reason: torque }).unwrap();
        assert_eq!(json["kind"], "torque-window");
        assert!(json["reason"].as_str().unwrap().starts_with("the largest test torque"));
    }
}
