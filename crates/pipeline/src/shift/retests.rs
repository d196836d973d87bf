//! Which tests of a shift count: one per file content, one per serial.
//!
//! - A file whose bytes are identical to another's (same content hash) is the same test
//!   saved twice: the first by file name counts, the others are duplicates.
//! - A part (same part number and serial) tested more than once is a retest: the latest
//!   by start time, then file name, counts ([`twistlot_model::record::test_order`]); the
//!   earlier ones are superseded.
//!
//! Nothing is dropped: every test keeps its record and its status says why it does not
//! count, so the lot report, `summary.json` and `tests.csv` can list it.

use std::collections::BTreeMap;
use twistlot_model::record::test_order;
use twistlot_model::{DuplicateFile, SupersededTest, TestRecord, TestStatus};

/// Sets each test's status; `tests` is in file order. Returns the duplicate files.
pub fn settle(tests: &mut [TestRecord]) -> Vec<DuplicateFile> {
    let mut duplicates = Vec::new();
    let mut first_by_hash: BTreeMap<String, usize> = BTreeMap::new();
    for index in 0..tests.len() {
        let hash = tests[index].content_hash.clone();
        match first_by_hash.get(&hash) {
            Some(&first) if !hash.is_empty() => {
                let same_as = tests[first].file.clone();
                duplicates.push(DuplicateFile {
                    file: tests[index].file.clone(),
                    same_as: same_as.clone(),
                    lot: tests[index].lot.clone(),
                });
                tests[index].status = TestStatus::Duplicate { same_as };
            }
            _ => {
                first_by_hash.insert(hash, index);
            }
        }
    }

    let mut by_serial: BTreeMap<(Option<String>, String), Vec<usize>> = BTreeMap::new();
    for (index, test) in tests.iter().enumerate() {
        if let (Some(serial), true) = (&test.serial, test.status.is_counted()) {
            by_serial.entry((test.part.clone(), serial.clone())).or_default().push(index);
        }
    }
    for indices in by_serial.values().filter(|v| v.len() > 1) {
        let Some(&latest) = indices.iter().max_by(|a, b| test_order(&tests[**a], &tests[**b])) else {
            continue;
        };
        let by = tests[latest].file.clone();
        for &index in indices.iter().filter(|i| **i != latest) {
            tests[index].status = TestStatus::Superseded { by: by.clone() };
        }
    }
    duplicates
}

/// The superseded tests among `tests`, for a lot's record.
pub fn superseded<'a>(tests: impl Iterator<Item = &'a TestRecord>) -> Vec<SupersededTest> {
    tests
        .filter_map(|t| match &t.status {
            TestStatus::Superseded { by } => Some(SupersededTest {
                serial: t.serial.clone().unwrap_or_default(),
                file: t.file.clone(),
                started: t.started.clone(),
                by: by.clone(),
            }),
            _ => None,
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn test(file: &str, hash: &str, serial: Option<&str>, started: Option<&str>) -> TestRecord {
        TestRecord {
            test_id: file.into(),
            file: file.into(),
            content_hash: hash.into(),
            serial: serial.map(String::from),
            part: Some("P".into()),
            lot: Some("L".into()),
            rig: None,
            operator: None,
            started: started.map(String::from),
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics: Default::default(),
            swing: None,
            theory: None,
            verdict: None,
            findings: Vec::new(),
            status: TestStatus::Counted,
        }
    }

    #[test]
    fn identical_files_count_once_under_the_first_name() {
        let mut tests = vec![
            test("a/1.csv", "h1", Some("S1"), None),
            test("b/1-copy.csv", "h1", Some("S1"), None),
            test("a/2.csv", "h2", Some("S2"), None),
        ];
        let duplicates = settle(&mut tests);
        assert_eq!(duplicates.len(), 1);
        assert_eq!(duplicates[0].file, "b/1-copy.csv");
        assert_eq!(duplicates[0].same_as, "a/1.csv");
        assert_eq!(tests[1].status, TestStatus::Duplicate { same_as: "a/1.csv".into() });
        // The copy is not also taken for a retest of S1.
        assert!(tests[0].status.is_counted() && tests[2].status.is_counted());
    }

    #[test]
    fn the_latest_retest_counts_by_start_time_then_file_name() {
        let mut tests = vec![
            test("z-first.csv", "h1", Some("S1"), Some("2026-12-01T10:00")),
            test("a-second.csv", "h2", Some("S1"), Some("2026-12-01T11:30")),
            test("m-tie-1.csv", "h3", Some("S2"), Some("2026-12-01T10:00")),
            test("m-tie-2.csv", "h4", Some("S2"), Some("2026-12-01T10:00")),
            test("n.csv", "h5", None, None),
            test("o.csv", "h6", None, None),
        ];
        settle(&mut tests);
        assert_eq!(tests[0].status, TestStatus::Superseded { by: "a-second.csv".into() });
        assert!(tests[1].status.is_counted());
        assert_eq!(tests[2].status, TestStatus::Superseded { by: "m-tie-2.csv".into() });
        assert!(tests[3].status.is_counted());
        // Tests without a serial are never taken for retests of each other.
        assert!(tests[4].status.is_counted() && tests[5].status.is_counted());
        let listed = superseded(tests.iter());
        assert_eq!(listed.len(), 2);
        assert_eq!((listed[0].serial.as_str(), listed[0].by.as_str()), ("S1", "a-second.csv"));
    }

    #[test]
    fn the_same_serial_of_two_parts_is_two_parts() {
        let mut tests = vec![
            test("a.csv", "h1", Some("001"), Some("2026-12-01T10:00")),
            test("b.csv", "h2", Some("001"), None),
        ];
        tests[1].part = Some("Q".into());
        settle(&mut tests);
        assert!(tests.iter().all(|t| t.status.is_counted()));
    }

    #[test]
    fn the_outcome_does_not_depend_on_the_order_files_arrive_in() {
        let make = || {
            vec![
                test("1.csv", "h1", Some("S1"), Some("2026-12-01T09:00")),
                test("2.csv", "h2", Some("S1"), Some("2026-12-01T12:00")),
                test("3.csv", "h3", Some("S1"), Some("2026-12-01T10:00")),
            ]
        };
        let mut forward = make();
        settle(&mut forward);
        let mut backward = make();
        backward.reverse();
        settle(&mut backward);
        let counted = |tests: &[TestRecord]| {
            tests.iter().filter(|t| t.status.is_counted()).map(|t| t.file.clone()).collect::<Vec<_>>()
        };
        assert_eq!(counted(&forward), ["2.csv"]);
        assert_eq!(counted(&backward), ["2.csv"]);
    }
}
