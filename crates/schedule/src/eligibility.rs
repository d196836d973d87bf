//! Whether a rig may test a lot, and how long the lot takes there.

use crate::geometry::largest_arbor_mm;
use crate::input::Job;
use crate::planner::RigCtx;
use crate::refusal::{Refusal, CELL_HIGH_SHARE, CELL_LOW_SHARE};
use twistlot_model::{PlantTime, Rig};

/// Longest processing time the planner counts, s (about 31 years): keeps sums in range.
const MAX_PROCESSING_S: f64 = 1e9;

/// Seconds rounded up to the whole second, inside [0, MAX_PROCESSING_S].
pub(crate) fn ceil_seconds(seconds: f64) -> i64 {
    seconds.clamp(0.0, MAX_PROCESSING_S).ceil() as i64
}

/// Time to test all of a lot's samples on a rig, s, rounded up.
pub(crate) fn processing_s(job: &Job, rig: &Rig) -> i64 {
    let speed = rig.speed_deg_per_s.unwrap_or(f64::NAN);
    let per_part = rig.handling_s + 2.0 * f64::from(job.cycles) * job.max_angle_deg / speed;
    ceil_seconds(f64::from(job.samples) * per_part)
}

/// The largest arbor at the rig that clears the wound-down spring.
pub(crate) fn pick_arbor(rig: &Rig, inside_d_mm: f64) -> Option<f64> {
    let allowed = largest_arbor_mm(inside_d_mm);
    rig.arbors_mm.iter().copied().filter(|&d| d <= allowed).max_by(f64::total_cmp)
}

/// The rig-wide refusal when even the reference check does not fit its free hours.
pub(crate) fn time_refusal(
    rig: &Rig,
    check_end_s: i64,
    calibration_s: i64,
    free_end_s: i64,
    at: &impl Fn(i64) -> PlantTime,
) -> Option<Refusal> {
    if check_end_s <= calibration_s.min(free_end_s) {
        return None;
    }
    Some(match rig.calibration_due {
        Some(due) if calibration_s < check_end_s && calibration_s <= free_end_s => {
            Refusal::CalibrationLapses { due, earliest_end: at(check_end_s) }
        }
        _ => Refusal::NotAvailableLongEnough { until: at(free_end_s), earliest_end: at(check_end_s) },
    })
}

/// Every reason a usable rig refuses a lot (none: it may test it).
pub(crate) fn judge(
    job: &Job,
    rig: &Rig,
    ctx: &RigCtx,
    ready_s: i64,
    at: &impl Fn(i64) -> PlantTime,
) -> Vec<Refusal> {
    let mut reasons = Vec::new();
    let capacity = rig.capacity_nmm.unwrap_or(f64::NAN);
    let (low, high) = (CELL_LOW_SHARE * capacity, CELL_HIGH_SHARE * capacity);
    if !(job.max_torque_nmm >= low && job.max_torque_nmm <= high) {
        reasons.push(Refusal::TorqueOutsideCellWindow {
            torque_nmm: job.max_torque_nmm,
            capacity_nmm: capacity,
        });
    }
    let max_angle = rig.max_angle_deg.unwrap_or(f64::NAN);
    // Written so that an unknown (NaN) range refuses too.
    let within_range = job.max_angle_deg <= max_angle;
    if !within_range {
        reasons.push(Refusal::AngleBeyondRange { angle_deg: job.max_angle_deg, max_angle_deg: max_angle });
    }
    if pick_arbor(rig, job.wound_down_inside_d_mm).is_none() {
        reasons.push(Refusal::NoArborFits {
            inside_d_mm: job.wound_down_inside_d_mm,
            largest_allowed_mm: largest_arbor_mm(job.wound_down_inside_d_mm),
            arbors_mm: rig.arbors_mm.clone(),
        });
    }
    let earliest_end_s = ready_s.max(ctx.check_end_s + ctx.setup_s).saturating_add(processing_s(job, rig));
    if earliest_end_s > ctx.limit_s {
        let calibration_s = rig.calibration_due.map(|due| due.seconds_since(at(0)));
        reasons.push(match (rig.calibration_due, calibration_s) {
            (Some(due), Some(cal)) if cal == ctx.limit_s => {
                Refusal::CalibrationLapses { due, earliest_end: at(earliest_end_s) }
            }
            _ => Refusal::NotAvailableLongEnough { until: at(ctx.limit_s), earliest_end: at(earliest_end_s) },
        });
    }
    reasons
}
