//! Prints how good the planner's plans are on the benchmark's instances (200 lots on 12
//! rigs, invented data): the plan's weighted tardiness over the best of plain EDD and
//! plain ATCS, and its makespan over the lower bound.
//!
//! `cargo run --release -p twistlot-schedule --example plan_quality [EVALUATIONS]`

#[path = "../tests/support/instances.rs"]
mod instances;

use instances::{random_instance, Shape};
use std::time::Instant;
use twistlot_schedule::{Budget, PlanOptions, Planner, Rule};

fn main() {
    let evaluations =
        std::env::args().nth(1).and_then(|a| a.parse().ok()).unwrap_or(Budget::default().evaluations);
    println!("200 lots on 12 rigs, local search budget {evaluations} evaluations");
    println!(
        "{:>5} {:>5} {:>13} {:>13} {:>13} {:>9} {:>9} {:>9} {:>8} {:>8}",
        "seed", "load", "WT plan", "WT EDD", "WT ATCS", "WT ratio", "Cmax/LB", "LB kind", "left out", "ms"
    );
    // The first is the benchmark's instance.
    for (seed, load) in [(3u64, 0.85), (1, 0.7), (2, 1.0), (4, 0.85), (5, 1.0)] {
        let instance = random_instance(seed, &Shape { lots: 200, rigs: 12, load, awkward: false });
        let started = Instant::now();
        let planner = Planner::new(instance.shift, &instance.rigs, &instance.jobs).expect("valid instance");
        let plan =
            planner.plan(&PlanOptions { rule: Rule::Atcs, search: Some(Budget::evaluations(evaluations)) });
        let elapsed = started.elapsed();
        let edd = planner.dispatch(&Rule::Edd);
        let atcs = planner.dispatch(&Rule::Atcs);
        let best_plain = edd.metrics.weighted_tardiness_s.min(atcs.metrics.weighted_tardiness_s);
        let ratio = if best_plain > 0.0 {
            format!("{:.3}", plan.metrics.weighted_tardiness_s / best_plain)
        } else {
            "n/a".to_string()
        };
        let m = &plan.metrics;
        let kind = if m.chain_lower_bound_s >= m.work_lower_bound_s { "chain" } else { "work" };
        let left_out =
            [plan.metrics.lots_unscheduled, edd.metrics.lots_unscheduled, atcs.metrics.lots_unscheduled];
        println!(
            "{seed:>5} {load:>5} {:>13.1} {:>13.1} {:>13.1} {ratio:>9} {:>9.3} {kind:>9} {:>8} {:>8}",
            m.weighted_tardiness_s,
            edd.metrics.weighted_tardiness_s,
            atcs.metrics.weighted_tardiness_s,
            m.makespan_s as f64 / m.makespan_lower_bound_s.max(1) as f64,
            format!("{}/{}/{}", left_out[0], left_out[1], left_out[2]),
            elapsed.as_millis()
        );
    }
    println!(
        "WT ratio: plan over the better of plain EDD and plain ATCS; Cmax/LB: makespan over its lower bound;"
    );
    println!("left out: lots the plan / EDD / ATCS could not place in the shift (weighted tardiness counts placed lots");
    println!("only, so where the plain orders leave more out the WT ratio flatters them); ms: planning time with the search.");
}
