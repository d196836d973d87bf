//! Planning 200 lots on 12 rigs (invented data), with the default local-search budget
//! and as plain ATCS dispatching. The target: under one second.

#[path = "../tests/support/instances.rs"]
mod instances;

use criterion::{criterion_group, criterion_main, Criterion};
use instances::{random_instance, Shape};
use std::hint::black_box;
use twistlot_schedule::{Budget, PlanOptions, Planner, Rule};

fn plan_200_lots_12_rigs(c: &mut Criterion) {
    let instance = random_instance(3, &Shape { lots: 200, rigs: 12, load: 0.85, awkward: false });
    let mut group = c.benchmark_group("plan-200-lots-12-rigs");
    group.sample_size(10);
    group.bench_function("atcs+local-search", |b| {
        b.iter(|| {
            let planner =
                Planner::new(instance.shift, &instance.rigs, &instance.jobs).expect("valid instance");
            black_box(planner.plan(&PlanOptions { rule: Rule::Atcs, search: Some(Budget::default()) }))
        })
    });
    group.bench_function("atcs-dispatch", |b| {
        b.iter(|| {
            let planner =
                Planner::new(instance.shift, &instance.rigs, &instance.jobs).expect("valid instance");
            black_box(planner.dispatch(&Rule::Atcs))
        })
    });
    group.finish();
}

criterion_group!(benches, plan_200_lots_12_rigs);
criterion_main!(benches);
