//! The store through its public API: round trips, re-runs, replacements, Hive scans.

mod common;

use common::{held_lot, lot, shift_records, sparse_test, test};
use polars::prelude::*;
use std::time::Duration;
use twistlot_history::{
    HistoryError, HistoryStore, Metric, OpenOptions, ReplacementKind, ReplayEvent, Table, Timestamp,
};
use twistlot_model::record::{Disposition, TestStatus};

fn create(dir: &std::path::Path) -> HistoryStore {
    HistoryStore::open(dir, &OpenOptions { create: true, lock_wait: Duration::ZERO }).unwrap()
}

fn rows(store: &HistoryStore, table: Table) -> usize {
    store.scan(table).unwrap().map_or(0, |scan| scan.collect().unwrap().height())
}

#[test]
fn a_missing_folder_is_an_error_naming_it_unless_creation_is_asked_for() {
    let dir = tempfile::tempdir().unwrap();
    let folder = dir.path().join("plant-history");
    let err = HistoryStore::open(&folder, &OpenOptions::default()).unwrap_err();
    assert!(matches!(err, HistoryError::Missing { .. }));
    assert!(err.to_string().contains("plant-history"), "{err}");
    assert!(!folder.exists());
    let store = create(&folder);
    assert!(folder.is_dir());
    assert!(store.shifts().unwrap().is_empty());
}

#[test]
fn tests_and_lots_read_back_as_written() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    let mut tests = vec![
        test("TS-2210", "L1", "S-001", "2026-12-01T14:03:07.5", 1.234),
        test("TS-2210", "L1", "S-002", "01.12.2026 14:05", 1.241),
        test("KL 40/2", "L2", "K-1", "2026-12-01 15:00", 0.5),
        sparse_test(Some("X-9"), "loose/x9.csv"),
        sparse_test(None, "loose/unnamed.csv"),
    ];
    tests[1].status = TestStatus::Superseded { by: "rig-a/S-002b.csv".to_string() };
    tests[1].verdict = Some(twistlot_model::spec::Verdict::Fail);
    let lots = vec![lot("TS-2210", "L1", Disposition::Accept, 2, 0, 1.2375), held_lot("KL 40/2", "L2")];
    let summary = store.write_shift("2026-12-01-late", &tests, &lots).unwrap();
    assert_eq!((summary.tests, summary.lots), (5, 2));
    assert_eq!(summary.parts, vec![None, Some("KL 40/2".to_string()), Some("TS-2210".to_string())]);

    let stored = store.shift_tests("2026-12-01-late").unwrap();
    let records: Vec<_> = stored.iter().map(|t| t.record.clone()).collect();
    assert_eq!(records, tests);
    assert!(stored.iter().all(|t| t.shift == "2026-12-01-late" && t.shift_seq == summary.seq));
    assert_eq!(stored[0].started_at, Timestamp::parse("2026-12-01T14:03:07.500"));
    assert_eq!(stored[3].started_at, None, "an unreadable start time stays text only");

    let stored_lots = store.shift_lots("2026-12-01-late").unwrap();
    let lot_records: Vec<_> = stored_lots.iter().map(|l| l.record.clone()).collect();
    assert_eq!(lot_records, lots);
    assert_eq!(stored_lots[0].tests_from, Timestamp::parse("2026-12-01T14:03:07.5"));
    // The superseded test does not count, so the lot's span ends with the first test.
    assert_eq!(stored_lots[0].tests_until, Timestamp::parse("2026-12-01T14:03:07.5"));
}

#[test]
fn writing_a_shift_twice_gives_the_same_row_counts() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    let (tests, lots) = shift_records("TS-2210", 3, 2, 5);
    let (other_tests, other_lots) = shift_records("KL-40", 4, 1, 3);
    store.write_shift("s1", &tests, &lots).unwrap();
    store.write_shift("s2", &other_tests, &other_lots).unwrap();
    let counts = |store: &HistoryStore| {
        (
            rows(store, Table::Tests),
            rows(store, Table::Lots),
            store.switching_replay().unwrap().len(),
            store.shifts().unwrap(),
        )
    };
    let first = counts(&store);
    assert_eq!((first.0, first.1, first.2), (13, 3, 3));
    let again = store.write_shift("s1", &tests, &lots).unwrap();
    assert!(again.replacements.is_empty(), "the same exports replace nothing");
    let second = counts(&store);
    assert_eq!((second.0, second.1, second.2), (first.0, first.1, first.2));
    // The shift keeps its place in the store's order.
    assert_eq!(
        second.3.iter().map(|s| (s.shift.clone(), s.seq)).collect::<Vec<_>>(),
        vec![("s1".to_string(), 1), ("s2".to_string(), 2)]
    );
    assert!(store.replacements().unwrap().is_empty());
}

#[test]
fn a_changed_export_replaces_the_earlier_result_and_the_replacement_is_recorded() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    let original = vec![
        test("P", "L1", "S-1", "2026-12-01T06:00", 1.20),
        test("P", "L1", "S-2", "2026-12-01T06:05", 1.21),
    ];
    store.write_shift("s1", &original, &[]).unwrap();
    // The rig re-exported S-1 with other content: same test, same start, other bytes.
    let changed = vec![test("P", "L1", "S-1", "2026-12-01T06:00", 1.25), original[1].clone()];
    let summary = store.write_shift("s1", &changed, &[]).unwrap();
    assert_eq!(summary.replacements.len(), 1);
    let entry = &summary.replacements[0];
    assert_eq!(entry.kind, ReplacementKind::ChangedExport);
    assert_eq!((entry.serial.as_str(), entry.part.as_deref()), ("S-1", Some("P")));
    assert_eq!(entry.old.content_hash, original[0].content_hash);
    assert_eq!(entry.new.as_ref().map(|n| n.content_hash.as_str()), Some(changed[0].content_hash.as_str()));
    assert_eq!(rows(&store, Table::Tests), 2, "replaced, not added");
    let values = store.part_tests("P", &Metric::Rate, None).unwrap();
    assert_eq!(values.iter().map(|v| v.value).collect::<Vec<_>>(), vec![Some(1.25), Some(1.21)]);

    // Running the changed shift again keeps the record once.
    store.write_shift("s1", &changed, &[]).unwrap();
    assert_eq!(store.replacements().unwrap().len(), 1);

    // The same serial tested again in a later shift: the later test is its result.
    let retest = vec![test("P", "L7", "S-1", "2026-12-02T09:00", 1.22)];
    let summary = store.write_shift("s2", &retest, &[]).unwrap();
    assert_eq!(
        summary.replacements.iter().map(|r| r.kind).collect::<Vec<_>>(),
        vec![ReplacementKind::Retest]
    );
    let values = store.part_tests("P", &Metric::Rate, None).unwrap();
    let current: Vec<_> = values.iter().map(|v| (v.shift.as_str(), v.serial.as_deref(), v.current)).collect();
    assert_eq!(
        current,
        vec![("s1", Some("S-1"), false), ("s1", Some("S-2"), true), ("s2", Some("S-1"), true)]
    );
    assert_eq!(store.replacements().unwrap().len(), 2);
}

#[test]
fn parts_no_longer_in_a_shift_lose_their_partitions_and_their_tests_are_recorded_withdrawn() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    let tests = vec![
        test("P", "L1", "S-1", "2026-12-01T06:00", 1.2),
        test("Q", "L2", "Q-1", "2026-12-01T06:00", 2.2),
    ];
    let lots =
        vec![lot("P", "L1", Disposition::Accept, 1, 0, 1.2), lot("Q", "L2", Disposition::Reject, 1, 1, 2.2)];
    store.write_shift("s1", &tests, &lots).unwrap();
    assert!(dir.path().join("lots/part=Q/shift=s1/data.parquet").exists());
    let summary = store.write_shift("s1", &tests[..1], &lots[..1]).unwrap();
    assert_eq!(summary.removed_parts, vec![Some("Q".to_string())]);
    assert!(!dir.path().join("lots/part=Q").exists());
    assert!(!dir.path().join("tests/part=Q").exists());
    assert_eq!(summary.replacements.len(), 1);
    assert_eq!(
        (summary.replacements[0].kind, summary.replacements[0].serial.as_str()),
        (ReplacementKind::Withdrawn, "Q-1")
    );
    assert_eq!((rows(&store, Table::Tests), rows(&store, Table::Lots)), (1, 1));
}

#[test]
fn the_hive_scan_gives_back_the_partition_columns_of_awkward_names() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    let awkward_part = "TS/22=10 ..\\%ä";
    let awkward_shift = "2026-12-01 late: B?";
    let tests =
        vec![test(awkward_part, "L1", "S-1", "2026-12-01T06:00", 1.2), sparse_test(Some("X"), "x.csv")];
    store
        .write_shift(awkward_shift, &tests, &[lot(awkward_part, "L1", Disposition::Accept, 1, 0, 1.2)])
        .unwrap();

    // Every folder stays inside the history folder.
    let mut folders = Vec::new();
    for entry in std::fs::read_dir(dir.path().join("tests")).unwrap() {
        folders.push(entry.unwrap().file_name().into_string().unwrap());
    }
    folders.sort();
    // Only a trailing dot is escaped; the dots here are followed by other characters.
    assert_eq!(folders, vec!["part=TS%2F22%3D10%20..%5C%25ä", "part=__HIVE_DEFAULT_PARTITION__"]);

    let df =
        store.scan(Table::Tests).unwrap().unwrap().sort(["serial"], Default::default()).collect().unwrap();
    let part: Vec<_> =
        df.column("part").unwrap().str().unwrap().iter().map(|v| v.map(str::to_string)).collect();
    let shift: Vec<_> =
        df.column("shift").unwrap().str().unwrap().iter().map(|v| v.map(str::to_string)).collect();
    assert_eq!(part, vec![Some(awkward_part.to_string()), None]);
    assert_eq!(shift, vec![Some(awkward_shift.to_string()); 2]);

    // polars' own Hive scan, with nothing from this crate, reads the same values.
    let args = ScanArgsParquet { hive_options: HiveOptions::new_enabled(), ..Default::default() };
    let path = PlRefPath::try_from_path(&dir.path().join("lots")).unwrap();
    let df = LazyFrame::scan_parquet(path, args).unwrap().collect().unwrap();
    assert_eq!(df.column("part").unwrap().str().unwrap().get(0), Some(awkward_part));
    assert_eq!(df.column("shift").unwrap().str().unwrap().get(0), Some(awkward_shift));
    assert_eq!(df.column("lot").unwrap().str().unwrap().get(0), Some("L1"));
}

#[test]
fn a_parts_lots_come_in_time_order_and_switching_in_stored_order() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    // The later shift is stored first (a backlog run), so time and stored order differ.
    let (late_tests, late_lots) = shift_records("P", 20, 2, 3);
    let (early_tests, early_lots) = shift_records("P", 10, 1, 3);
    store.write_shift("day-20", &late_tests, &late_lots).unwrap();
    store.write_shift("day-10", &early_tests, &early_lots).unwrap();
    let trend = store.part_lots("P").unwrap();
    let order: Vec<_> = trend.iter().map(|l| l.lot.as_str()).collect();
    assert_eq!(order, vec!["P-D010-L0", "P-D020-L0", "P-D020-L1"]);
    assert_eq!(trend[0].rate_mean_nmm_per_deg, Some(1.2));
    assert_eq!(trend[0].switching.as_ref().map(|s| s.sample_size), Some(20));

    let seq = store
        .record_resumption("P", "2026-02-01", "corrective action approved by QA lead", Timestamp::now())
        .unwrap();
    assert_eq!(seq, 3);
    let replay = store.switching_replay().unwrap();
    let order: Vec<_> = replay.iter().map(|e| (e.seq, e.lot.clone(), e.event)).collect();
    assert_eq!(
        order,
        vec![
            (1, Some("P-D020-L0".to_string()), ReplayEvent::Lot(Disposition::Accept)),
            (1, Some("P-D020-L1".to_string()), ReplayEvent::Lot(Disposition::Accept)),
            (2, Some("P-D010-L0".to_string()), ReplayEvent::Lot(Disposition::Accept)),
            (3, None, ReplayEvent::Resume),
        ]
    );
    // A re-run keeps the shift's place; a new shift comes after the resumption.
    store.write_shift("day-20", &late_tests, &late_lots).unwrap();
    store.write_shift("day-30", &[], &[held_lot("P", "H1")]).unwrap();
    let replay = store.switching_replay().unwrap();
    assert_eq!(replay.first().map(|e| e.seq), Some(1));
    assert_eq!(replay.last().map(|e| (e.seq, e.switching.is_none())), Some((4, true)));
}

#[test]
fn a_part_tests_give_the_metric_asked_for_since_a_date() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    let tests = vec![
        test("P", "L1", "S-1", "2026-11-30T23:00", 1.0),
        test("P", "L1", "S-2", "2026-12-01T06:00", 2.0),
        sparse_test(Some("S-3"), "s3.csv"),
    ];
    store.write_shift("s1", &tests, &[]).unwrap();
    let torque: Metric = "torque@45.0".parse().unwrap();
    assert_eq!(torque, Metric::TorqueAt("45".to_string()));
    let values = store.part_tests("P", &torque, Timestamp::parse("2026-12-01")).unwrap();
    // The fixture's torque at 45° is 42 × its rate.
    assert_eq!(values.iter().map(|v| v.value).collect::<Vec<_>>(), vec![Some(84.0)]);
    let hysteresis = store.part_tests("P", &"hysteresis@45".parse().unwrap(), None).unwrap();
    assert_eq!(hysteresis.iter().map(|v| v.value).collect::<Vec<_>>(), vec![Some(2.5), Some(2.5)]);
    let missing = store.part_tests("P", &"torque@60".parse().unwrap(), None).unwrap();
    assert!(missing.iter().all(|v| v.value.is_none()));
    assert!("torque@".parse::<Metric>().is_err());
    assert!(store.part_tests("nobody", &Metric::Rate, None).unwrap().is_empty());
}

#[test]
fn names_that_cannot_be_folders_or_clash_by_case_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    let err = store.write_shift("", &[], &[]).unwrap_err();
    assert!(err.to_string().contains("shift is empty"), "{err}");
    let long = "x".repeat(300);
    let err = store.write_shift(&long, &[], &[]).unwrap_err();
    assert!(err.to_string().contains("too long"), "{err}");
    store.write_shift("s1", &[test("ts-1", "L", "S", "2026-12-01T06:00", 1.0)], &[]).unwrap();
    let err = store.write_shift("s2", &[test("TS-1", "L", "S2", "2026-12-01T06:00", 1.0)], &[]).unwrap_err();
    assert!(matches!(err, HistoryError::CaseClash { .. }), "{err}");
    let err = store.write_shift("S1", &[], &[]).unwrap_err();
    assert!(err.to_string().contains("only in letter case"), "{err}");
    let mut blank = test("P", "L", "S3", "2026-12-01T06:00", 1.0);
    blank.part = Some(" ".to_string());
    let err = store.write_shift("s3", &[blank], &[]).unwrap_err();
    assert!(err.to_string().starts_with("test rig-a/S3.csv: part is empty"), "{err}");
    assert_eq!(rows(&store, Table::Tests), 1, "a refused write stores nothing");
    assert_eq!(store.shifts().unwrap().len(), 1);
}

#[test]
fn the_serial_index_is_rebuilt_from_the_tests_when_it_is_missing() {
    let dir = tempfile::tempdir().unwrap();
    let mut store = create(dir.path());
    store.write_shift("s1", &[test("P", "L1", "S-1", "2026-12-01T06:00", 1.20)], &[]).unwrap();
    store.write_shift("s2", &[test("P", "L2", "S-2", "2026-12-02T06:00", 1.21)], &[]).unwrap();
    let index = dir.path().join("serials/part=P/data.parquet");
    assert!(index.exists());
    std::fs::remove_dir_all(dir.path().join("serials")).unwrap();
    // A retest of S-1 is still recognised as replacing the result stored in s1.
    let summary = store.write_shift("s3", &[test("P", "L3", "S-1", "2026-12-03T06:00", 1.22)], &[]).unwrap();
    assert_eq!(summary.replacements.len(), 1);
    assert_eq!(
        (summary.replacements[0].kind, summary.replacements[0].old.shift.as_str()),
        (ReplacementKind::Retest, "s1")
    );
    assert!(index.exists(), "the write stores the index again");
    let current: Vec<_> = store
        .part_tests("P", &Metric::Rate, None)
        .unwrap()
        .into_iter()
        .map(|v| (v.shift, v.current))
        .collect();
    assert_eq!(current, vec![("s1".to_string(), false), ("s2".to_string(), true), ("s3".to_string(), true)]);
}
