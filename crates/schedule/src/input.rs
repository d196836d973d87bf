//! What the planner is given: the shift's window and one job per lot.

use serde::{Deserialize, Serialize};
use twistlot_model::{ListedLot, PlantTime};

/// The stretch of plant-local time being planned. Every time in a [`crate::Plan`] is
/// also given in seconds from `start`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct ShiftWindow {
    /// When the shift starts.
    pub start: PlantTime,
    /// When it ends: no test is planned past it.
    pub end: PlantTime,
}

/// One lot to test, with what its part needs from a rig.
///
/// The caller computes `samples` from the sampling plan at the part's current severity
/// and the test needs from the part's spec; the planner takes them as given and carries
/// `samples` unchanged into the plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Job {
    /// Lot identifier.
    pub lot: String,
    /// Part number.
    pub part: String,
    /// Parts of the lot to test (at least 1).
    pub samples: u32,
    /// When the lot can be sampled (absent: from the shift's start).
    pub ready: Option<PlantTime>,
    /// When it must ship (absent: never late).
    pub due: Option<PlantTime>,
    /// Priority of its lateness against other lots' (at least 0.001; counted in thousandths).
    pub weight: f64,
    /// Largest torque the test reaches, N·mm (decides which load cells may measure it).
    pub max_torque_nmm: f64,
    /// Largest leg angle the test drives to, degrees.
    pub max_angle_deg: f64,
    /// Load–unload cycles per part (1 plus the spec's pre-cycles; at least 1).
    pub cycles: u32,
    /// Inside coil diameter wound down at `max_angle_deg`, mm (see
    /// [`crate::wound_down_inside_diameter_mm`]); decides the arbor.
    pub wound_down_inside_d_mm: f64,
    /// Fixture the part's legs need, as the plant names it (empty when all parts share
    /// one). A change of fixture or of arbor diameter between consecutive lots on a rig
    /// costs that rig's `setup_s`.
    pub fixture: String,
    /// Coiler that made the lot (for dispatch rules).
    pub coiler: Option<String>,
}

/// What a part's test needs from a rig, from its spec and sampling plan.
#[derive(Debug, Clone, PartialEq)]
pub struct PartNeeds {
    /// Parts to test.
    pub samples: u32,
    /// Largest torque the test reaches, N·mm.
    pub max_torque_nmm: f64,
    /// Largest leg angle, degrees.
    pub max_angle_deg: f64,
    /// Load–unload cycles per part.
    pub cycles: u32,
    /// Wound-down inside diameter at the largest angle, mm.
    pub wound_down_inside_d_mm: f64,
    /// Fixture name (empty when all parts share one).
    pub fixture: String,
}

impl Job {
    /// The job for a lot of the shift's lot list.
    pub fn from_listed(lot: &ListedLot, needs: PartNeeds) -> Job {
        Job {
            lot: lot.lot.clone(),
            part: lot.part.clone(),
            samples: needs.samples,
            ready: lot.ready,
            due: lot.ship_by,
            weight: lot.weight,
            max_torque_nmm: needs.max_torque_nmm,
            max_angle_deg: needs.max_angle_deg,
            cycles: needs.cycles,
            wound_down_inside_d_mm: needs.wound_down_inside_d_mm,
            fixture: needs.fixture,
            coiler: lot.coiler.clone(),
        }
    }
}

/// Input the planner cannot work with; each names the lot or rig and what to fix.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PlanError {
    /// The shift ends before it starts.
    #[error("the shift ends at {end}, not after its start {start}")]
    EmptyShift {
        /// Start.
        start: PlantTime,
        /// End.
        end: PlantTime,
    },
    /// Two jobs for one lot.
    #[error("lot `{0}` is given twice; give each lot once")]
    DuplicateLot(String),
    /// Two rigs with one name.
    #[error("rig `{0}` is given twice; give each rig once")]
    DuplicateRig(String),
    /// A rig record that does not validate.
    #[error("rig `{rig}`, field `{field}`: {message}")]
    BadRig {
        /// Rig name.
        rig: String,
        /// Field.
        field: String,
        /// What is wrong.
        message: String,
    },
    /// Rig sequences handed to [`crate::Planner::fixed`] or [`crate::Planner::score`]
    /// that do not fit the problem.
    #[error("the rig sequences do not fit the problem: {0}")]
    BadSequence(String),
    /// A job value out of range.
    #[error("lot `{lot}`, `{field}`: {message}")]
    BadJob {
        /// Lot.
        lot: String,
        /// Field.
        field: &'static str,
        /// What is wrong.
        message: String,
    },
}

impl Job {
    /// Checks the job's own numbers.
    pub(crate) fn check(&self) -> Result<(), PlanError> {
        let bad = |field: &'static str, message: String| {
            Err(PlanError::BadJob { lot: self.lot.clone(), field, message })
        };
        if self.samples == 0 {
            return bad("samples", "a lot with no part to test has nothing to plan; give at least 1".into());
        }
        if self.cycles == 0 {
            return bad("cycles", "a test runs at least one load–unload cycle".into());
        }
        if !(self.weight.is_finite() && self.weight >= 0.001) {
            return bad(
                "weight",
                format!("the weight must be a number of at least 0.001, found {}", self.weight),
            );
        }
        for (field, value) in [
            ("max_torque_nmm", self.max_torque_nmm),
            ("max_angle_deg", self.max_angle_deg),
            ("wound_down_inside_d_mm", self.wound_down_inside_d_mm),
        ] {
            if !(value.is_finite() && value > 0.0) {
                return bad(field, format!("must be a positive number, found {value}"));
            }
        }
        Ok(())
    }
}
