//! Hand-made cases: each refusal reason, the reference check, setups, dispatch orders,
//! lower bounds and the JSON shape.
//!
//! The rigs come from `full_rig`: 30 °/s, 20 s handling, 300 s setup, reference checked
//! at 90°. A `plain_job` part is tested to 90° in one cycle, so each part takes
//! 20 + 2 × 90 / 30 = 26 s, and so does the reference check.

mod support;

use support::instances::{full_rig, plain_job, shift};
use twistlot_model::{Availability, PlantTime, ShiftClock};
use twistlot_schedule::{
    Budget, JobView, Plan, PlanError, PlanOptions, Planner, Refusal, Rule, ShiftWindow, Unplanned,
};

fn at(text: &str) -> PlantTime {
    text.parse().unwrap()
}

fn plan(rigs: &[twistlot_model::Rig], jobs: &[twistlot_schedule::Job]) -> Plan {
    Planner::new(shift(), rigs, jobs)
        .unwrap()
        .plan(&PlanOptions { rule: Rule::Atcs, search: Some(Budget::evaluations(20_000)) })
}

fn refusals_of<'a>(plan: &'a Plan, lot: &str) -> Vec<&'a Refusal> {
    plan.refusals.iter().filter(|r| r.lot == lot).map(|r| &r.reason).collect()
}

#[test]
fn torque_must_sit_inside_ten_to_ninety_percent_of_the_cell() {
    let rigs = [full_rig("R", 5000.0)];
    let torques = [("low", 499.0), ("edge-low", 500.0), ("edge-high", 4500.0), ("high", 4501.0)];
    let jobs: Vec<_> = torques
        .iter()
        .map(|(lot, t)| twistlot_schedule::Job { max_torque_nmm: *t, ..plain_job(lot, 5) })
        .collect();
    let plan = plan(&rigs, &jobs);
    // Common practice, no published source: a 5000 N·mm cell measures 500–4500 N·mm well.
    for lot in ["low", "high"] {
        assert!(
            matches!(refusals_of(&plan, lot)[..], [Refusal::TorqueOutsideCellWindow { capacity_nmm, .. }] if *capacity_nmm == 5000.0),
            "{lot}: {:?}",
            refusals_of(&plan, lot)
        );
    }
    for lot in ["edge-low", "edge-high"] {
        assert!(refusals_of(&plan, lot).is_empty(), "{lot}");
        assert!(plan.assignments.iter().any(|a| a.lot == lot));
    }
    let text = refusals_of(&plan, "high")[0].to_string();
    assert!(text.contains("4501 N·mm") && text.contains("500–4500 N·mm"), "{text}");
}

#[test]
fn the_test_angle_must_be_within_the_rigs_range() {
    let mut rig = full_rig("R", 5000.0);
    rig.max_angle_deg = Some(270.0);
    let jobs = [
        twistlot_schedule::Job { max_angle_deg: 300.0, ..plain_job("wide", 5) },
        twistlot_schedule::Job { max_angle_deg: 270.0, ..plain_job("edge", 5) },
    ];
    let plan = plan(&[rig], &jobs);
    assert!(
        matches!(refusals_of(&plan, "wide")[..], [Refusal::AngleBeyondRange { max_angle_deg, .. }] if *max_angle_deg == 270.0)
    );
    assert!(refusals_of(&plan, "edge").is_empty());
}

#[test]
fn the_largest_arbor_at_or_below_ninety_percent_of_the_wound_down_diameter_is_used() {
    let mut fits = full_rig("FITS", 5000.0);
    fits.arbors_mm = vec![6.0, 9.0, 9.5, 12.0];
    let mut too_big = full_rig("BIG", 5000.0);
    too_big.arbors_mm = vec![9.5, 12.0];
    let job = twistlot_schedule::Job { wound_down_inside_d_mm: 10.0, ..plain_job("L", 5) };
    let plan = plan(&[too_big, fits], &[job]);
    // Common practice, no published source: arbor ≤ 90 % of 10.0 mm = 9.0 mm (by hand).
    let assignment = &plan.assignments[0];
    assert_eq!((assignment.rig.as_str(), assignment.arbor_mm), ("FITS", 9.0));
    let refusal = plan.refusals.iter().find(|r| r.rig == "BIG").unwrap();
    assert!(
        matches!(&refusal.reason, Refusal::NoArborFits { largest_allowed_mm, .. } if (*largest_allowed_mm - 9.0).abs() < 1e-12)
    );
}

#[test]
fn calibration_must_hold_until_the_slot_ends() {
    let mut rig = full_rig("R", 5000.0);
    rig.calibration_due = Some(at("2026-12-01T23:00"));
    // 300 parts × 26 s = 7800 s from 22:05:26 at the earliest: past 23:00. 50 parts fit.
    let jobs = [plain_job("long", 300), plain_job("short", 50)];
    let plan = plan(&[rig], &jobs);
    assert!(
        matches!(
            refusals_of(&plan, "long")[..],
            [Refusal::CalibrationLapses { due, earliest_end }] if *due == at("2026-12-01T23:00") && *earliest_end == at("2026-12-02T00:15:26")
        ),
        "{:?}",
        refusals_of(&plan, "long")
    );
    let short = plan.assignments.iter().find(|a| a.lot == "short").unwrap();
    assert!(short.end <= at("2026-12-01T23:00"));
    assert!(matches!(plan.unscheduled[0].reason, Unplanned::NoEligibleRig { .. }));
}

#[test]
fn a_rig_whose_calibration_has_lapsed_gets_no_check_and_no_lot() {
    let mut lapsed = full_rig("LAPSED", 5000.0);
    lapsed.calibration_due = Some(at("2026-12-01T12:00"));
    let plan = plan(&[lapsed, full_rig("OK", 5000.0)], &[plain_job("L", 5)]);
    assert_eq!(plan.checks.iter().map(|c| c.rig.as_str()).collect::<Vec<_>>(), ["OK"]);
    assert!(matches!(refusals_of(&plan, "L")[..], [Refusal::CalibrationLapses { .. }]));
    assert_eq!(plan.assignments[0].rig, "OK");
}

#[test]
fn the_rig_must_be_free_long_enough() {
    let mut rig = full_rig("R", 5000.0);
    rig.available = Some(Availability {
        from: ShiftClock::Daily("22:00".parse().unwrap()),
        to: ShiftClock::Daily("23:00".parse().unwrap()),
    });
    let plan = plan(&[rig], &[plain_job("long", 300), plain_job("short", 50)]);
    assert!(matches!(
        refusals_of(&plan, "long")[..],
        [Refusal::NotAvailableLongEnough { until, .. }] if *until == at("2026-12-01T23:00")
    ));
    assert!(plan.assignments.iter().any(|a| a.lot == "short" && a.end <= at("2026-12-01T23:00")));
}

#[test]
fn missing_rig_data_is_a_refusal_that_names_the_fields() {
    let mut rig = full_rig("R", 5000.0);
    rig.speed_deg_per_s = None;
    rig.reference = None;
    let plan = plan(&[rig], &[plain_job("L", 5)]);
    assert!(plan.checks.is_empty());
    let text = plan.unscheduled[0].reason.to_string();
    assert!(text.contains("speed_deg_per_s, reference"), "{text}");
    assert!(
        matches!(&plan.unscheduled[0].reason, Unplanned::NoEligibleRig { refusals } if refusals.len() == 1)
    );
}

#[test]
fn the_reference_check_comes_first_then_the_first_setup() {
    let plan = plan(&[full_rig("R", 5000.0)], &[plain_job("L", 10)]);
    // By the documented model: check 20 + 2 × 90/30 = 26 s from 22:00:00; setup 300 s;
    // 10 parts × 26 s = 260 s.
    let check = &plan.checks[0];
    assert_eq!((check.start, check.end), (at("2026-12-01T22:00:00"), at("2026-12-01T22:00:26")));
    assert_eq!(check.reference, "REF-R");
    let a = &plan.assignments[0];
    assert_eq!(
        (a.start, a.test_start, a.end, a.setup_s),
        (at("2026-12-01T22:00:26"), at("2026-12-01T22:05:26"), at("2026-12-01T22:09:46"), 300)
    );
}

#[test]
fn ready_times_hold_the_tests_back_but_not_the_setup() {
    let job = twistlot_schedule::Job { ready: Some(at("2026-12-01T23:00")), ..plain_job("L", 10) };
    let plan = plan(&[full_rig("R", 5000.0)], &[job]);
    let a = &plan.assignments[0];
    assert_eq!((a.start, a.test_start), (at("2026-12-01T22:55"), at("2026-12-01T23:00")));
}

#[test]
fn a_rig_free_later_is_checked_when_it_becomes_free() {
    let mut rig = full_rig("R", 5000.0);
    rig.available = Some(Availability {
        from: ShiftClock::At(at("2026-12-01T23:30")),
        to: ShiftClock::At(at("2026-12-02T08:00")),
    });
    let plan = plan(&[rig], &[plain_job("L", 10)]);
    assert_eq!(plan.checks[0].start, at("2026-12-01T23:30"));
    // The shift ends at 06:00 even though the rig is free until 08:00.
    assert!(plan.assignments[0].end <= at("2026-12-02T06:00"));
}

#[test]
fn when_time_runs_out_the_lighter_lot_is_left_out() {
    // Two lots of 700 × 26 s = 18200 s (about 5 h) on one rig in an 8 h shift.
    let light = twistlot_schedule::Job { weight: 1.0, ..plain_job("light", 700) };
    let heavy = twistlot_schedule::Job { weight: 2.0, ..plain_job("heavy", 700) };
    let plan = plan(&[full_rig("R", 5000.0)], &[light, heavy]);
    assert_eq!(plan.assignments.iter().map(|a| a.lot.as_str()).collect::<Vec<_>>(), ["heavy"]);
    assert_eq!(plan.unscheduled[0].lot, "light");
    assert!(
        matches!(&plan.unscheduled[0].reason, Unplanned::NoTimeLeft { rigs } if rigs == &["R".to_string()])
    );
    assert_eq!(plan.metrics.unscheduled_weight, 1.0);
}

#[test]
fn setups_are_saved_by_grouping_fixtures() {
    let job = |lot: &str, fixture: &str| twistlot_schedule::Job {
        fixture: fixture.to_string(),
        ..plain_job(lot, 10)
    };
    let jobs = [job("a1", "A"), job("b1", "B"), job("a2", "A"), job("b2", "B")];
    let plan = plan(&[full_rig("R", 5000.0)], &jobs);
    // No due times, so the search only shortens the plan: one setup per fixture.
    assert_eq!(plan.metrics.total_setup_s, 600);
    assert_eq!(plan.metrics.makespan_s, 26 + 2 * 300 + 4 * 260);
}

#[test]
fn makespan_bound_by_hand_and_met() {
    // Two identical rigs, four lots of 40 × 26 s = 1040 s each, all ready at the start.
    // Each rig is first free at 26 + 300 = 326 s. Work bound: T with 2T − 652 = 4160 →
    // T = 2406 s; chain bound: 326 + 1040 = 1366 s. Two lots per rig, one setup each,
    // end at 326 + 2080 = 2406 s: the bound is met.
    let jobs: Vec<_> = (0..4).map(|i| plain_job(&format!("L{i}"), 40)).collect();
    let plan = plan(&[full_rig("A", 5000.0), full_rig("B", 5000.0)], &jobs);
    assert_eq!(plan.metrics.work_lower_bound_s, 2406);
    assert_eq!(plan.metrics.chain_lower_bound_s, 1366);
    assert_eq!(plan.metrics.makespan_lower_bound_s, 2406);
    assert_eq!(plan.metrics.makespan_s, 2406);
}

#[test]
fn work_bound_counts_the_lots_only_some_rigs_may_test() {
    // Three lots of 2000 N·mm only the 5000 N·mm rig may test (the 500 N·mm cell's
    // window ends at 450 N·mm), 40 × 26 s = 1040 s each. On that rig alone: first free
    // at 326 s, so 326 + 3 × 1040 = 3446 s (by hand); over both rigs only
    // (3120 + 652)/2 = 1886 s.
    let jobs: Vec<_> = (0..3).map(|i| plain_job(&format!("L{i}"), 40)).collect();
    let plan = plan(&[full_rig("A", 5000.0), full_rig("B", 500.0)], &jobs);
    assert_eq!(plan.metrics.work_lower_bound_s, 3446);
    assert_eq!(plan.metrics.makespan_s, 3446);
}

#[test]
fn edd_and_custom_rules_set_the_dispatch_order() {
    let due = |lot: &str, hours: i64, samples: u32| twistlot_schedule::Job {
        due: Some(shift().start.checked_add_seconds(hours * 3600).unwrap()),
        ..plain_job(lot, samples)
    };
    let jobs = [due("c", 3, 10), due("a", 1, 30), due("b", 2, 20)];
    let planner = Planner::new(shift(), &[full_rig("R", 5000.0)], &jobs).unwrap();
    let order = |plan: &Plan| plan.assignments.iter().map(|a| a.lot.clone()).collect::<Vec<_>>();
    assert_eq!(order(&planner.dispatch(&Rule::Edd)), ["a", "b", "c"]);
    let fewest_samples_first = |view: &JobView<'_>| -f64::from(view.samples);
    assert_eq!(order(&planner.dispatch(&Rule::Custom(&fewest_samples_first))), ["c", "b", "a"]);
    let nan = |_: &JobView<'_>| f64::NAN;
    assert_eq!(order(&planner.dispatch(&Rule::Custom(&nan))).len(), 3);
    assert_eq!(planner.dispatch(&Rule::Edd).method, "edd");
}

#[test]
fn bad_input_is_refused_with_what_to_fix() {
    let rigs = [full_rig("R", 5000.0)];
    let err = Planner::new(shift(), &rigs, &[plain_job("L", 5), plain_job("L", 6)]).unwrap_err();
    assert_eq!(err, PlanError::DuplicateLot("L".into()));
    let err = Planner::new(shift(), &rigs, &[plain_job("L", 0)]).unwrap_err();
    assert!(err.to_string().contains("`samples`"), "{err}");
    let err = Planner::new(shift(), &[full_rig("R", 5000.0), full_rig("R", 500.0)], &[]).unwrap_err();
    assert_eq!(err, PlanError::DuplicateRig("R".into()));
    let backwards = ShiftWindow { start: shift().end, end: shift().start };
    assert!(matches!(Planner::new(backwards, &rigs, &[]), Err(PlanError::EmptyShift { .. })));
    let planner = Planner::new(shift(), &rigs, &[plain_job("L", 5)]).unwrap();
    assert!(matches!(planner.fixed(&[vec![0, 0]]), Err(PlanError::BadSequence(_))));
    assert!(matches!(planner.score(&[vec![1]]), Err(PlanError::BadSequence(_))));
    assert!(matches!(planner.fixed(&[vec![0], vec![]]), Err(PlanError::BadSequence(_))));
    let mut bad = full_rig("R", 5000.0);
    bad.speed_deg_per_s = Some(-1.0);
    let err = Planner::new(shift(), &[bad], &[]).unwrap_err();
    assert!(err.to_string().contains("speed_deg_per_s"), "{err}");
}

#[test]
fn json_carries_the_issues_fields_with_iso_times() {
    let jobs = [
        twistlot_schedule::Job { due: Some(at("2026-12-01T22:05")), ..plain_job("late", 10) },
        twistlot_schedule::Job { max_torque_nmm: 50_000.0, ..plain_job("heavy", 10) },
    ];
    let plan = plan(&[full_rig("R", 5000.0)], &jobs);
    let json = serde_json::to_value(&plan).unwrap();
    let assignment = &json["assignments"][0];
    for key in ["lot", "rig", "samples", "start", "end", "setup_s"] {
        assert!(assignment.get(key).is_some(), "assignment lacks {key}: {assignment}");
    }
    assert_eq!(assignment["start"], "2026-12-01T22:00:26");
    assert_eq!(assignment["end"], "2026-12-01T22:09:46");
    assert_eq!(json["checks"][0]["rig"], "R");
    assert_eq!(json["checks"][0]["start"], "2026-12-01T22:00:00");
    assert_eq!(json["unscheduled"][0]["lot"], "heavy");
    assert!(json["unscheduled"][0]["reason"].as_str().unwrap().starts_with("no rig may test it"));
    // 22:09:46 − 22:05 = 286 s late at weight 1.
    assert_eq!(json["metrics"]["weighted_tardiness_s"], 286.0);
    assert_eq!(json["metrics"]["makespan_s"], 586);
    assert!(json["metrics"]["makespan_lower_bound_s"].is_i64());
}
