//! Crash safety and the plant lock, tested with injected failures at every step of the
//! write protocol and with child processes that hold the lock or are killed mid-write.

#[path = "../tests/common/mod.rs"]
mod common;

use crate::{HistoryError, HistoryStore, OpenOptions, ReplacementKind, Step, Table, JOURNAL, STAGING};
use common::{held_lot, lot, test};
use std::io::{BufRead, BufReader, Write};
use std::path::Path;
use std::process::{Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::Duration;
use twistlot_model::record::{Disposition, LotRecord, TestRecord};

fn open(dir: &Path) -> HistoryStore {
    HistoryStore::open(dir, &OpenOptions { create: true, lock_wait: Duration::ZERO }).unwrap()
}

/// Shift `x` as first stored: parts P and Q.
fn version_one() -> (Vec<TestRecord>, Vec<LotRecord>) {
    let tests = vec![
        test("P", "LP", "P-1", "2026-12-01T06:00", 1.20),
        test("P", "LP", "P-2", "2026-12-01T06:10", 1.21),
        test("Q", "LQ", "Q-1", "2026-12-01T07:00", 3.00),
    ];
    (
        tests,
        vec![
            lot("P", "LP", Disposition::Accept, 2, 0, 1.205),
            lot("Q", "LQ", Disposition::Reject, 1, 1, 3.0),
        ],
    )
}

/// Shift `x` written again: P-1 re-exported with other content, Q gone, R new.
fn version_two() -> (Vec<TestRecord>, Vec<LotRecord>) {
    let tests = vec![
        test("P", "LP", "P-1", "2026-12-01T06:00", 1.26),
        test("P", "LP", "P-2", "2026-12-01T06:10", 1.21),
        test("R", "LR", "R-1", "2026-12-01T08:00", 0.70),
    ];
    (tests, vec![lot("P", "LP", Disposition::Accept, 2, 0, 1.235), held_lot("R", "LR")])
}

/// A history with shift `y` (part P) and shift `x` in its first version.
fn prepare(dir: &Path) {
    let mut store = open(dir);
    store
        .write_shift(
            "y",
            &[test("P", "LY", "Y-1", "2026-11-30T22:00", 1.19)],
            &[lot("P", "LY", Disposition::Accept, 1, 0, 1.19)],
        )
        .unwrap();
    let (tests, lots) = version_one();
    store.write_shift("x", &tests, &lots).unwrap();
}

/// A catalog row without its times: shift, seq, tests, lots, parts.
type CatalogRow = (String, i64, u64, u64, Vec<Option<String>>);

/// Everything a reader can see of the history, times left out (they differ between runs).
#[derive(Debug, PartialEq)]
struct Seen {
    x_tests: Vec<TestRecord>,
    x_lots: Vec<LotRecord>,
    y_tests: Vec<TestRecord>,
    catalog: Vec<CatalogRow>,
    replacements: Vec<(ReplacementKind, String, String)>,
    current: Vec<(String, Option<String>, bool)>,
    rows: (usize, usize),
}

fn seen(dir: &Path) -> (Seen, crate::OpenReport) {
    let store = open(dir);
    assert!(!dir.join(JOURNAL).exists(), "recovery finishes the journal");
    assert!(!dir.join(STAGING).exists(), "recovery clears the staging folder");
    let rows = |table| store.scan(table).unwrap().map_or(0, |s| s.collect().unwrap().height());
    let mut current = Vec::new();
    for part in ["P", "Q", "R"] {
        for value in store.part_tests(part, &crate::Metric::Rate, None).unwrap() {
            current.push((value.shift, value.serial, value.current));
        }
    }
    let seen = Seen {
        x_tests: store.shift_tests("x").unwrap().into_iter().map(|t| t.record).collect(),
        x_lots: store.shift_lots("x").unwrap().into_iter().map(|l| l.record).collect(),
        y_tests: store.shift_tests("y").unwrap().into_iter().map(|t| t.record).collect(),
        catalog: store
            .shifts()
            .unwrap()
            .into_iter()
            .map(|s| (s.shift, s.seq, s.tests, s.lots, s.parts))
            .collect(),
        replacements: store
            .replacements()
            .unwrap()
            .into_iter()
            .map(|r| (r.kind, r.serial, r.recorded_in))
            .collect(),
        current,
        rows: (rows(Table::Tests), rows(Table::Lots)),
    };
    (seen, store.open_report().clone())
}

/// What a reader sees after `x` in its first version, and after a clean write of the second.
fn references() -> (Seen, Seen, Vec<Step>) {
    let before = tempfile::tempdir().unwrap();
    prepare(before.path());
    let after = tempfile::tempdir().unwrap();
    prepare(after.path());
    let steps = Arc::new(Mutex::new(Vec::new()));
    {
        let mut store = open(after.path());
        let log = steps.clone();
        store.set_step_hook(Some(Box::new(move |step: &Step| {
            log.lock().unwrap().push(step.clone());
            Ok(())
        })));
        let (tests, lots) = version_two();
        store.write_shift("x", &tests, &lots).unwrap();
    }
    let steps = steps.lock().unwrap().clone();
    (seen(before.path()).0, seen(after.path()).0, steps)
}

#[test]
fn a_write_stopped_after_any_step_leaves_the_shift_wholly_old_or_wholly_new() {
    let (old, new, steps) = references();
    assert_ne!(old, new);
    let commit = steps.iter().position(|s| *s == Step::Committed).unwrap();
    // Every kind of step is exercised: staging, journal, commit, renames, deletions, finish.
    assert!(steps.iter().any(|s| matches!(s, Step::Deleted(_))), "{steps:?}");
    assert!(steps.iter().any(|s| matches!(s, Step::Renamed(_))), "{steps:?}");
    for (k, step) in steps.iter().enumerate() {
        let dir = tempfile::tempdir().unwrap();
        prepare(dir.path());
        {
            let mut store = open(dir.path());
            let mut calls = 0;
            store.set_step_hook(Some(Box::new(move |step: &Step| {
                calls += 1;
                if calls == k + 1 {
                    return Err(HistoryError::StepFailed { step: step.clone() });
                }
                Ok(())
            })));
            let (tests, lots) = version_two();
            let err = store.write_shift("x", &tests, &lots).unwrap_err();
            assert!(matches!(err, HistoryError::StepFailed { .. }), "{err}");
        }
        let (after, report) = seen(dir.path());
        let expected = if k >= commit { &new } else { &old };
        assert_eq!(&after, expected, "stopped after step {k} ({step:?})");
        assert_eq!(
            report.recovery.completed.is_some(),
            k >= commit && k + 1 < steps.len(),
            "step {k} ({step:?}): {report:?}"
        );
    }
}

#[test]
fn an_error_after_the_commit_point_is_finished_before_the_next_write_of_the_same_session() {
    let (_, new, steps) = references();
    let commit = steps.iter().position(|s| *s == Step::Committed).unwrap();
    let dir = tempfile::tempdir().unwrap();
    prepare(dir.path());
    let mut store = open(dir.path());
    let mut calls = 0;
    store.set_step_hook(Some(Box::new(move |step: &Step| {
        calls += 1;
        if calls == commit + 2 {
            return Err(HistoryError::StepFailed { step: step.clone() });
        }
        Ok(())
    })));
    let (tests, lots) = version_two();
    store.write_shift("x", &tests, &lots).unwrap_err();
    let err = store.shift_tests("x").unwrap_err();
    assert!(matches!(err, HistoryError::Unfinished { .. }), "reads refuse a half-applied write: {err}");
    store.set_step_hook(None);
    store.record_resumption("P", "later", "corrective action", crate::Timestamp::now()).unwrap();
    assert_eq!(
        store.shift_tests("x").unwrap().into_iter().map(|t| t.record).collect::<Vec<_>>(),
        new.x_tests
    );
}

/// Runs this test binary again as a child doing `mode` on the history in `dir`.
fn child(mode: &str, dir: &Path, step: usize) -> std::process::Child {
    Command::new(std::env::current_exe().unwrap())
        .args(["--ignored", "--exact", "tests::child_process", "--nocapture", "--test-threads=1"])
        .env("HISTORY_TEST_CHILD", mode)
        .env("HISTORY_TEST_DIR", dir)
        .env("HISTORY_TEST_STEP", step.to_string())
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .unwrap()
}

/// Reads the child's output until a line holds `marker`.
fn wait_for(child: &mut std::process::Child, marker: &str) -> BufReader<std::process::ChildStdout> {
    let mut reader = BufReader::new(child.stdout.take().unwrap());
    let mut line = String::new();
    loop {
        line.clear();
        assert!(reader.read_line(&mut line).unwrap() > 0, "the child ended before saying `{marker}`");
        // libtest writes `test … ` before the child's own output, on the same line.
        if line.contains(marker) {
            return reader;
        }
    }
}

/// Not a test on its own: the body of the child processes the tests below start.
#[test]
#[ignore = "run by the lock and crash tests as a child process"]
fn child_process() {
    let dir = std::path::PathBuf::from(std::env::var("HISTORY_TEST_DIR").unwrap());
    match std::env::var("HISTORY_TEST_CHILD").unwrap().as_str() {
        "hold" => {
            let _store = open(&dir);
            println!("LOCKED");
            std::io::stdout().flush().unwrap();
            let mut line = String::new();
            std::io::stdin().read_line(&mut line).unwrap();
        }
        "crash" => {
            let pause_at: usize = std::env::var("HISTORY_TEST_STEP").unwrap().parse().unwrap();
            let mut store = open(&dir);
            let mut calls = 0;
            store.set_step_hook(Some(Box::new(move |_: &Step| {
                if calls == pause_at {
                    println!("PAUSED");
                    std::io::stdout().flush().unwrap();
                    // Stay here until killed; should the parent die first, its end of stdin
                    // closes and this child goes too, the way a crash would.
                    let _ = std::io::stdin().read_line(&mut String::new());
                    std::process::abort();
                }
                calls += 1;
                Ok(())
            })));
            let (tests, lots) = version_two();
            store.write_shift("x", &tests, &lots).unwrap();
        }
        other => panic!("unknown child mode {other}"),
    }
}

#[test]
fn a_write_killed_at_any_step_leaves_the_shift_wholly_old_or_wholly_new_and_the_lock_is_taken_over() {
    let (old, new, steps) = references();
    let commit = steps.iter().position(|s| *s == Step::Committed).unwrap();
    for (k, step) in steps.iter().enumerate() {
        let dir = tempfile::tempdir().unwrap();
        prepare(dir.path());
        let mut process = child("crash", dir.path(), k);
        let pid = process.id();
        let _output = wait_for(&mut process, "PAUSED");
        process.kill().unwrap(); // SIGKILL on Unix: no destructor, no unwinding.
        process.wait().unwrap();
        let (after, report) = seen(dir.path());
        let expected = if k >= commit { &new } else { &old };
        assert_eq!(&after, expected, "killed after step {k} ({step:?})");
        let stale = report.stale_lock.expect("the killed writer's lock is reported");
        assert_eq!(stale.holder.pid, pid);
        if Path::new("/proc/self").exists() {
            assert_eq!(stale.holder_gone, Some(true));
        }
        assert!(stale.to_string().contains(&format!("process {pid}")), "{stale}");
    }
}

#[test]
fn a_second_opener_is_refused_with_the_holder_named_or_waits_for_the_release() {
    let dir = tempfile::tempdir().unwrap();
    open(dir.path());
    let mut holder = child("hold", dir.path(), 0);
    let _output = wait_for(&mut holder, "LOCKED");
    let err = HistoryStore::open(dir.path(), &OpenOptions { create: false, lock_wait: Duration::ZERO })
        .unwrap_err();
    match &err {
        HistoryError::Locked { holder: Some(h), .. } => assert_eq!(h.pid, holder.id()),
        other => panic!("expected a refusal naming the holder, got {other}"),
    }
    assert!(err.to_string().contains(&format!("process {}", holder.id())), "{err}");

    let path = dir.path().to_path_buf();
    // Generous bound: the wait ends when the holder releases, long before this.
    let waiter = std::thread::spawn(move || {
        HistoryStore::open(&path, &OpenOptions { create: false, lock_wait: Duration::from_secs(300) })
    });
    holder.stdin.take().unwrap().write_all(b"release\n").unwrap();
    holder.wait().unwrap();
    let store = waiter.join().unwrap().unwrap();
    assert_eq!(store.open_report().stale_lock, None, "a released lock is not reported as taken over");
    assert_eq!(store.lock_holder().pid, std::process::id());
}
