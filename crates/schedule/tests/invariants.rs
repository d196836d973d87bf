//! Invariants every plan must keep, checked on random instances against the rig and lot
//! records directly (not through the planner's own bookkeeping).

mod support;

use proptest::prelude::*;
use std::collections::{BTreeMap, BTreeSet};
use support::instances::{random_instance, Instance, Shape};
use twistlot_model::Rig;
use twistlot_schedule::{Budget, Job, JobView, Plan, PlanOptions, Planner, Rule, Unplanned};

/// The arbor a rig should use for a lot, by the rule itself (common practice, no
/// published source: an arbor at or below 90 % of the wound-down inside diameter; the
/// largest such).
fn expected_arbor(rig: &Rig, job: &Job) -> Option<f64> {
    rig.arbors_mm.iter().copied().filter(|&d| d <= 0.9 * job.wound_down_inside_d_mm).max_by(f64::total_cmp)
}

/// Whether the rig's physics allow the lot, by the rules themselves.
fn physically_eligible(rig: &Rig, job: &Job) -> bool {
    let (Some(capacity), Some(max_angle)) = (rig.capacity_nmm, rig.max_angle_deg) else { return false };
    // Common practice, no published source: torque inside 10–90 % of the cell's capacity.
    job.max_torque_nmm >= 0.1 * capacity
        && job.max_torque_nmm <= 0.9 * capacity
        && job.max_angle_deg <= max_angle
        && expected_arbor(rig, job).is_some()
}

fn check_plan(instance: &Instance, plan: &Plan) -> Result<(), TestCaseError> {
    let shift = instance.shift;
    let rigs: BTreeMap<&str, &Rig> = instance.rigs.iter().map(|r| (r.name.as_str(), r)).collect();
    let jobs: BTreeMap<&str, &Job> = instance.jobs.iter().map(|j| (j.lot.as_str(), j)).collect();
    let refused: BTreeSet<(&str, &str)> =
        plan.refusals.iter().map(|r| (r.lot.as_str(), r.rig.as_str())).collect();

    // Every lot exactly once: placed or left out with a reason.
    let mut seen = BTreeSet::new();
    for lot in plan.assignments.iter().map(|a| &a.lot).chain(plan.unscheduled.iter().map(|u| &u.lot)) {
        prop_assert!(seen.insert(lot.clone()), "lot {} appears twice", lot);
    }
    prop_assert_eq!(seen.len(), instance.jobs.len());

    let checks: BTreeMap<&str, _> = plan.checks.iter().map(|c| (c.rig.as_str(), c)).collect();
    let mut by_rig: BTreeMap<&str, Vec<_>> = BTreeMap::new();
    for a in &plan.assignments {
        let rig = rigs[a.rig.as_str()];
        let job = jobs[a.lot.as_str()];
        // Only eligible rigs, and the arbor the rule picks.
        prop_assert!(!refused.contains(&(a.lot.as_str(), a.rig.as_str())), "{} on refused {}", a.lot, a.rig);
        prop_assert!(physically_eligible(rig, job), "{} on {} breaks the rig's limits", a.lot, a.rig);
        prop_assert_eq!(Some(a.arbor_mm), expected_arbor(rig, job));
        // Sample counts carried unchanged.
        prop_assert_eq!(a.samples, job.samples);
        // Release, calibration, free hours and the shift respected.
        if let Some(ready) = job.ready {
            prop_assert!(a.test_start >= ready, "{} starts before it is ready", a.lot);
        }
        let due = rig.calibration_due.unwrap();
        prop_assert!(a.end <= due, "{} ends {} after {}'s calibration runs out {}", a.lot, a.end, a.rig, due);
        let (from, to) = rig.available.map_or((shift.start, shift.end), |w| w.window(shift.start));
        prop_assert!(a.start >= from && a.start >= shift.start, "{} starts outside the free hours", a.lot);
        prop_assert!(a.end <= to && a.end <= shift.end, "{} ends outside the free hours", a.lot);
        // Processing time: samples × (handling + 2 × cycles × angle / speed), rounded up.
        let per_part =
            rig.handling_s + 2.0 * f64::from(job.cycles) * job.max_angle_deg / rig.speed_deg_per_s.unwrap();
        let processing = (f64::from(job.samples) * per_part).ceil() as i64;
        prop_assert_eq!(a.end.seconds_since(a.test_start), processing);
        prop_assert_eq!(a.test_start.seconds_since(a.start), a.setup_s);
        prop_assert_eq!(a.start_s, a.start.seconds_since(shift.start));
        prop_assert_eq!(a.end_s, a.end.seconds_since(shift.start));
        let tardiness = job.due.map_or(0, |d| a.end.seconds_since(d).max(0));
        prop_assert_eq!(a.tardiness_s, tardiness);
        by_rig.entry(a.rig.as_str()).or_default().push(a);
    }
    for (name, mut list) in by_rig {
        let rig = rigs[name];
        list.sort_by_key(|a| a.start);
        // The reference check comes first on every rig that tests anything.
        let check = checks.get(name);
        prop_assert!(check.is_some(), "rig {} tests lots without a reference check", name);
        let check = check.unwrap();
        let reference = rig.reference.as_ref().unwrap();
        let check_s =
            (rig.handling_s + 2.0 * reference.check_angle_deg / rig.speed_deg_per_s.unwrap()).ceil() as i64;
        prop_assert_eq!(check.end.seconds_since(check.start), check_s);
        prop_assert!(check.end <= list[0].start, "on {} a lot starts before the reference check ends", name);
        prop_assert!(check.end <= rig.calibration_due.unwrap());
        // No overlap; setups exactly where the fixture or arbor changes (and before the first lot).
        let mut previous: Option<(&str, f64)> = None;
        let mut free = check.end;
        for a in &list {
            prop_assert!(a.start >= free, "lots overlap on {}", name);
            free = a.end;
            let family = (a.fixture.as_str(), a.arbor_mm);
            let expected = if previous == Some(family) { 0.0 } else { rig.setup_s.ceil() };
            prop_assert_eq!(a.setup_s as f64, expected, "setup of {} on {}", &a.lot, name);
            previous = Some(family);
        }
    }
    // A lot left out for want of a rig is refused by every rig, with a reason each.
    for u in &plan.unscheduled {
        let refusing: BTreeSet<&str> =
            plan.refusals.iter().filter(|r| r.lot == u.lot).map(|r| r.rig.as_str()).collect();
        match &u.reason {
            Unplanned::NoEligibleRig { refusals } => {
                prop_assert_eq!(refusing.len(), instance.rigs.len());
                prop_assert!(!refusals.is_empty());
            }
            Unplanned::NoTimeLeft { rigs: open } => {
                prop_assert!(!open.is_empty());
                prop_assert!(open.iter().all(|r| !refusing.contains(r.as_str())));
            }
            Unplanned::NotPlannable { reason } => {
                prop_assert!(false, "the planner never leaves a job out as not plannable: {}", reason);
            }
        }
        prop_assert!(!u.reason.to_string().is_empty());
        prop_assert_eq!(u.samples, jobs[u.lot.as_str()].samples);
    }
    // Metrics agree with the assignments, and the lower bounds are below them.
    let weighted: f64 =
        plan.assignments.iter().map(|a| (a.weight * 1000.0).round() * a.tardiness_s as f64).sum();
    prop_assert!((plan.metrics.weighted_tardiness_s - weighted / 1000.0).abs() < 1e-6);
    let makespan = plan.assignments.iter().map(|a| a.end_s).max().unwrap_or(0);
    prop_assert_eq!(plan.metrics.makespan_s, makespan);
    prop_assert!(plan.metrics.makespan_lower_bound_s <= makespan);
    prop_assert!(plan.metrics.weighted_tardiness_lower_bound_s <= plan.metrics.weighted_tardiness_s + 1e-9);
    prop_assert_eq!(plan.metrics.lots_assigned + plan.metrics.lots_unscheduled, instance.jobs.len());
    Ok(())
}

fn shapes() -> impl Strategy<Value = (u64, Shape)> {
    (any::<u64>(), 1usize..14, 1usize..5, 0.2f64..1.6, any::<bool>())
        .prop_map(|(seed, lots, rigs, load, awkward)| (seed, Shape { lots, rigs, load, awkward }))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn every_plan_keeps_the_invariants((seed, shape) in shapes()) {
        let instance = random_instance(seed, &shape);
        let planner = Planner::new(instance.shift, &instance.rigs, &instance.jobs).unwrap();
        let by_weight = |view: &JobView<'_>| view.weight - view.due_s.unwrap_or(0) as f64 / 1e6;
        let plans = [
            planner.plan(&PlanOptions { rule: Rule::Atcs, search: Some(Budget::evaluations(3_000)) }),
            planner.plan(&PlanOptions { rule: Rule::Custom(&by_weight), search: Some(Budget::evaluations(1_000)) }),
            planner.dispatch(&Rule::Edd),
            planner.dispatch(&Rule::Atcs),
            planner.dispatch(&Rule::Custom(&by_weight)),
        ];
        for plan in &plans {
            check_plan(&instance, plan)?;
        }
        // The search starts from the dispatch and keeps the best it finds.
        let key = |p: &Plan| (p.metrics.unscheduled_weight, p.metrics.weighted_tardiness_s, p.metrics.makespan_s);
        prop_assert!(key(&plans[0]) <= key(&plans[3]), "{:?} > {:?}", key(&plans[0]), key(&plans[3]));
        prop_assert!(key(&plans[1]) <= key(&plans[4]));
    }

    #[test]
    fn score_and_fixed_plans_agree((seed, shape) in shapes()) {
        let instance = random_instance(seed, &shape);
        let planner = Planner::new(instance.shift, &instance.rigs, &instance.jobs).unwrap();
        let plan = planner.plan(&PlanOptions { rule: Rule::Edd, search: Some(Budget::evaluations(500)) });
        // Rebuild the sequences from the plan and replay them.
        let index: BTreeMap<&str, usize> = instance.jobs.iter().enumerate().map(|(i, j)| (j.lot.as_str(), i)).collect();
        let rig_index: BTreeMap<&str, usize> = instance.rigs.iter().enumerate().map(|(i, r)| (r.name.as_str(), i)).collect();
        let mut sequences = vec![Vec::new(); instance.rigs.len()];
        let mut ordered: Vec<_> = plan.assignments.iter().collect();
        ordered.sort_by_key(|a| a.start);
        for a in ordered {
            sequences[rig_index[a.rig.as_str()]].push(index[a.lot.as_str()]);
        }
        let replay = planner.fixed(&sequences).unwrap();
        prop_assert_eq!(&replay.assignments, &plan.assignments);
        let score = planner.score(&sequences).unwrap();
        prop_assert_eq!(score.makespan_s, plan.metrics.makespan_s);
        prop_assert!((score.weighted_tardiness_milli as f64 / 1000.0 - plan.metrics.weighted_tardiness_s).abs() < 1e-6);
        check_plan(&instance, &replay)?;
    }
}

#[test]
fn the_same_budget_gives_the_same_plan() {
    let instance = random_instance(7, &Shape { lots: 40, rigs: 4, load: 1.1, awkward: true });
    let planner = Planner::new(instance.shift, &instance.rigs, &instance.jobs).unwrap();
    let options = PlanOptions { rule: Rule::Atcs, search: Some(Budget::evaluations(20_000)) };
    let first = serde_json::to_string(&planner.plan(&options)).unwrap();
    let second = serde_json::to_string(&planner.plan(&options)).unwrap();
    assert_eq!(first, second);
}
