//! Shift test planning: which rig tests which lot, in what order, so that lots ship on time.
//!
//! For: deciding per lot and rig whether the rig may test it, each refusal with its
//! reason ([`Refusal`]: the load cell's 10–90 % window, the angle range, an arbor at or
//! below 90 % of the wound-down inside diameter, calibration and free hours); placing a
//! reference-spring check at the start of every usable rig's free hours; and ordering
//! the lots on parallel rigs with ready times, due times, weights and sequence-dependent
//! setups. The first plan comes from list scheduling by a priority — the ATCS index of
//! Lee, Bhaskaran & Pinedo (1997) ([`atcs_index`]), plain earliest-due-date, or a
//! caller's function over [`JobView`] — and is then improved by local search (moves and
//! swaps within and between rigs) within a [`Budget`]; the objective is total weighted
//! tardiness, then makespan. Every [`Plan`] carries lower bounds beside its figures so
//! its quality can be judged.
//!
//! Not for: computing sample counts (the caller takes them from `twistlot-sampling` at
//! the part's severity and hands them over in each [`Job`]), reading plant configs or
//! lot lists (`twistlot-model` parses them; the pipeline reads the files), evaluating
//! `dispatch-rule` expressions (the caller wraps its expression engine in
//! [`Rule::Custom`]), or rendering. No file I/O, no printing.
//!
//! A plan only orders the tests. The customer's drawing and specification govern
//! acceptance; rigs must be within calibration when they test; a loaded torsion spring
//! stores energy and can leave a fixture violently.
//!
//! Main types: [`Planner`], [`Job`], [`ShiftWindow`], [`PlanOptions`], [`Rule`],
//! [`Budget`], [`Plan`], [`Assignment`], [`Check`], [`Unscheduled`], [`Metrics`],
//! [`Refusal`], [`Score`], [`PlanError`].

pub mod atcs;
mod bounds;
mod eligibility;
pub mod geometry;
pub mod input;
pub mod plan;
pub mod planner;
pub mod refusal;
pub mod search;

pub use atcs::{atcs_index, atcs_log_index, AtcsParams, AtcsTerms, InstanceFactors};
pub use geometry::{largest_arbor_mm, wound_down_inside_diameter_mm, wound_down_mean_diameter_mm};
pub use input::{Job, PartNeeds, PlanError, ShiftWindow};
pub use plan::{Assignment, Check, Metrics, Plan, Unscheduled};
pub use planner::{JobView, PlanOptions, Planner, Rule, Score};
pub use refusal::{Refusal, RigRefusal, Unplanned};
pub use search::Budget;

use twistlot_model::Rig;

/// Plans a shift in one call: [`Planner::new`] then [`Planner::plan`].
pub fn plan(
    shift: ShiftWindow,
    rigs: &[Rig],
    jobs: &[Job],
    options: &PlanOptions<'_>,
) -> Result<Plan, PlanError> {
    Ok(Planner::new(shift, rigs, jobs)?.plan(options))
}
