//! A history of 1,000 lots × 50 tests of one part: how long the trend queries take, and
//! how long a shift's write takes once the history is that long.
//!
//! `LOTS_PER_SHIFT` (default 4) sets how the 1,000 lots spread over shifts: 4 gives 250
//! shifts (250 files per table for the part), 1 gives 1,000.

#[path = "../tests/common/mod.rs"]
mod common;

use criterion::{criterion_group, criterion_main, Criterion};
use std::time::{Duration, Instant};
use twistlot_history::{HistoryStore, Metric, OpenOptions};

const LOTS: usize = 1_000;
const TESTS_PER_LOT: usize = 50;

fn history(c: &mut Criterion) {
    let per_shift: usize =
        std::env::var("LOTS_PER_SHIFT").ok().and_then(|v| v.parse().ok()).unwrap_or(4).max(1);
    let dir = tempfile::tempdir().expect("a temporary folder for the benchmark");
    let mut store = HistoryStore::open(dir.path(), &OpenOptions { create: true, lock_wait: Duration::ZERO })
        .expect("open");
    let shifts = LOTS.div_ceil(per_shift);
    let started = Instant::now();
    let mut last = None;
    for day in 0..shifts {
        let (tests, lots) = common::shift_records("TS-2210", day as u32, per_shift, TESTS_PER_LOT);
        let write = Instant::now();
        store.write_shift(&format!("shift-{day:04}"), &tests, &lots).expect("write");
        last = Some((write.elapsed(), tests, lots));
    }
    eprintln!(
        "history of {LOTS} lots x {TESTS_PER_LOT} tests in {shifts} shifts written in {:.1} s; the last shift's write took {:.0} ms",
        started.elapsed().as_secs_f64(),
        last.as_ref().map_or(0.0, |l| l.0.as_secs_f64() * 1000.0)
    );
    let lots = store.part_lots("TS-2210").expect("lots");
    assert_eq!(lots.len(), shifts * per_shift);

    let mut group = c.benchmark_group(format!("history_{shifts}_shifts"));
    group.sample_size(10);
    group.bench_function("part_lots", |b| b.iter(|| store.part_lots("TS-2210").expect("lots").len()));
    group.bench_function("part_tests_rate", |b| {
        b.iter(|| store.part_tests("TS-2210", &Metric::Rate, None).expect("tests").len())
    });
    let torque: Metric = "torque@45".parse().expect("metric");
    group.bench_function("part_tests_torque_at_45", |b| {
        b.iter(|| store.part_tests("TS-2210", &torque, None).expect("tests").len())
    });
    group.bench_function("switching_replay", |b| b.iter(|| store.switching_replay().expect("replay").len()));
    if let Some((_, tests, lot_records)) = &last {
        let name = format!("shift-{:04}", shifts - 1);
        group.bench_function("rewrite_last_shift", |b| {
            b.iter(|| store.write_shift(&name, tests, lot_records).expect("write").tests)
        });
    }
    group.finish();
}

criterion_group!(benches, history);
criterion_main!(benches);
