//! The planner's answer: who tests what, where and when, what stays out and why, and
//! how good the plan is against its lower bounds.

use crate::refusal::{RigRefusal, Unplanned};
use serde::ser::SerializeStruct;
use serde::{Serialize, Serializer};
use twistlot_model::PlantTime;

/// A shift plan. Serialises to the JSON `twistlot plan` prints: times as ISO 8601
/// plant-local date-times (`2026-12-01T22:14:05`, no offset), and each also as seconds
/// from the shift's start (`start_s`, `end_s`) for charts.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Plan {
    /// How the order was found: `atcs`, `edd` or `custom`, with `+local-search` when improved.
    pub method: String,
    /// The shift planned.
    pub shift_start: PlantTime,
    /// Its end.
    pub shift_end: PlantTime,
    /// Lots placed on rigs, by rig (in the order the rigs were given) and start.
    pub assignments: Vec<Assignment>,
    /// Reference-spring verifications, one per rig that can be used in the shift.
    pub checks: Vec<Check>,
    /// Lots left out, with the reason.
    pub unscheduled: Vec<Unscheduled>,
    /// Every rig's refusal of every lot it may not test (also for lots placed elsewhere),
    /// so a test on a refused rig can be named afterwards.
    pub refusals: Vec<RigRefusal>,
    /// How good the plan is.
    pub metrics: Metrics,
}

/// One lot on one rig.
///
/// The rig is taken from `start` to `end`: first `setup_s` for a fixture or arbor change
/// (0 when the previous lot used the same), then the lot's tests from `test_start`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Assignment {
    /// Lot.
    pub lot: String,
    /// Part number.
    pub part: String,
    /// Rig.
    pub rig: String,
    /// Parts to test, as given.
    pub samples: u32,
    /// When the rig starts on this lot (setup included).
    pub start: PlantTime,
    /// When the lot's tests start.
    pub test_start: PlantTime,
    /// When the lot's tests end.
    pub end: PlantTime,
    /// Seconds of setup before the tests.
    pub setup_s: i64,
    /// `start`, s from the shift start.
    pub start_s: i64,
    /// `end`, s from the shift start.
    pub end_s: i64,
    /// The arbor to fit: the largest at the rig that clears the wound-down spring, mm.
    pub arbor_mm: f64,
    /// Fixture, as the job named it.
    pub fixture: String,
    /// When the lot must ship.
    pub due: Option<PlantTime>,
    /// How late the tests end against `due`, s (0 when on time).
    pub tardiness_s: i64,
    /// The lot's weight.
    pub weight: f64,
}

/// A reference-spring verification at the start of a rig's free hours, before any lot.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// Rig.
    pub rig: String,
    /// Serial of the reference spring.
    pub reference: String,
    /// Start.
    pub start: PlantTime,
    /// End.
    pub end: PlantTime,
    /// `start`, s from the shift start.
    pub start_s: i64,
    /// `end`, s from the shift start.
    pub end_s: i64,
}

/// A lot left out of the plan.
#[derive(Debug, Clone, PartialEq)]
pub struct Unscheduled {
    /// Lot.
    pub lot: String,
    /// Part number.
    pub part: String,
    /// Parts it needed tested.
    pub samples: u32,
    /// Why.
    pub reason: Unplanned,
}

impl Serialize for Unscheduled {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let mut out = serializer.serialize_struct("Unscheduled", 5)?;
        out.serialize_field("lot", &self.lot)?;
        out.serialize_field("part", &self.part)?;
        out.serialize_field("samples", &self.samples)?;
        out.serialize_field("kind", self.reason.kind())?;
        out.serialize_field("reason", &self.reason)?;
        out.end()
    }
}

/// How good a plan is, with lower bounds beside the figures they bound.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Metrics {
    /// Σ weight × tardiness over the placed lots, weight·s.
    pub weighted_tardiness_s: f64,
    /// End of the last placed lot, s from the shift start (0 when none is placed).
    pub makespan_s: i64,
    /// A lower bound on the makespan of any plan that places the same lots:
    /// the larger of `chain_lower_bound_s` and `work_lower_bound_s`.
    pub makespan_lower_bound_s: i64,
    /// The latest of the placed lots' earliest possible ends, each on its fastest
    /// eligible rig from its ready time (or the rig's first free moment after its
    /// reference check and first setup, if later).
    pub chain_lower_bound_s: i64,
    /// The earliest time by which a group of rigs, each from its first free moment after
    /// its reference check and first setup, could have done the work of the placed lots
    /// that only that group may test, each lot counted at its fastest eligible rig
    /// (setups between lots not counted); the largest over the groups (every group of
    /// up to 12 usable rigs; beyond that all rigs together and each lot's own group).
    pub work_lower_bound_s: i64,
    /// Σ weight × max(0, earliest possible end − due) over the placed lots, weight·s:
    /// a lower bound on `weighted_tardiness_s` for the same lots (each lot alone on its
    /// best rig; 0 when every lot could be on time alone).
    pub weighted_tardiness_lower_bound_s: f64,
    /// Σ weight of the lots left out.
    pub unscheduled_weight: f64,
    /// Lots placed.
    pub lots_assigned: usize,
    /// Lots left out.
    pub lots_unscheduled: usize,
    /// Seconds of setup in the plan.
    pub total_setup_s: i64,
    /// Candidate plans the local search evaluated (0 for a plain dispatch).
    pub evaluations: u64,
}
