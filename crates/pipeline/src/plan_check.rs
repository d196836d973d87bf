//! The shift's plan against reality: what `twistlot plan` asked for, read back from
//! `plan.json` in the shift's output folder, beside what the rigs actually tested.
//!
//! Only the fields the comparison needs are read ([`PlanFile`]); the planner's own types
//! render their refusals as text and are not meant to be read back.

use crate::plan::PLAN_FILE;
use serde::Deserialize;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use twistlot_model::{ListedLot, PlanComparison, PlannedAgainstTested, TestRecord, TestedOnRefusedRig};

/// A plan file that exists but cannot be used.
#[derive(Debug, thiserror::Error)]
#[error("{}: {message}; run `twistlot plan` for this shift again, or remove the file", path.display())]
pub struct PlanFileError {
    /// The file.
    pub path: PathBuf,
    /// What is wrong.
    pub message: String,
}

/// What the shift run reads of a plan.
#[derive(Debug, Clone, PartialEq, Deserialize)]
pub struct PlanFile {
    /// The shift it plans.
    pub shift: String,
    /// How it was made.
    pub method: String,
    /// Lots placed on rigs.
    pub assignments: Vec<PlannedAssignment>,
    /// Lots left out.
    pub unscheduled: Vec<PlannedOut>,
    /// Every rig's refusal of every lot it may not test.
    pub refusals: Vec<PlannedRefusal>,
}

/// A lot placed on a rig.
#[derive(Debug, Clone, PartialEq, Deserialize)]
pub struct PlannedAssignment {
    /// Lot.
    pub lot: String,
    /// Rig.
    pub rig: String,
    /// Parts to test.
    pub samples: u64,
    /// When the rig starts on the lot.
    pub start: String,
}

/// A lot left out of the plan.
#[derive(Debug, Clone, PartialEq, Deserialize)]
pub struct PlannedOut {
    /// Lot.
    pub lot: String,
    /// Why.
    pub reason: String,
}

/// A rig's refusal of a lot.
#[derive(Debug, Clone, PartialEq, Deserialize)]
pub struct PlannedRefusal {
    /// Lot.
    pub lot: String,
    /// Rig.
    pub rig: String,
    /// Why.
    pub reason: String,
}

/// The plan for `shift` in `out_dir`, when there is one. A plan made for another shift is
/// not this shift's plan and is passed over; one that cannot be read is an error.
pub fn find_plan(out_dir: &Path, shift: &str) -> Result<Option<(PathBuf, PlanFile)>, PlanFileError> {
    let path = out_dir.join(PLAN_FILE);
    let text = match std::fs::read_to_string(&path) {
        Ok(text) => text,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(None),
        Err(e) => return Err(PlanFileError { path, message: format!("cannot read: {e}") }),
    };
    let plan: PlanFile = serde_json::from_str(&text)
        .map_err(|e| PlanFileError { path: path.clone(), message: format!("not a plan: {e}") })?;
    Ok((plan.shift == shift).then_some((path, plan)))
}

/// Each listed lot's plan beside its counted tests, and the lots tested on rigs the plan
/// refused for them.
pub fn compare(
    plan_file: &Path,
    plan: &PlanFile,
    lots: &[ListedLot],
    tests: &[TestRecord],
) -> PlanComparison {
    let mut rows = Vec::new();
    let mut on_refused = Vec::new();
    for listed in lots {
        let mut by_rig: BTreeMap<String, u64> = BTreeMap::new();
        for test in
            tests.iter().filter(|t| t.status.is_counted() && t.lot.as_deref() == Some(listed.lot.as_str()))
        {
            let rig = test.rig.clone().filter(|r| !r.trim().is_empty()).unwrap_or_else(|| "unknown".into());
            *by_rig.entry(rig).or_default() += 1;
        }
        let tested: u64 = by_rig.values().sum();
        let assignment = plan.assignments.iter().find(|a| a.lot == listed.lot);
        let left_out = plan.unscheduled.iter().find(|u| u.lot == listed.lot);
        let mut remarks = Vec::new();
        match (assignment, left_out) {
            (Some(a), _) => {
                let others: Vec<&str> = by_rig.keys().map(String::as_str).filter(|r| *r != a.rig).collect();
                if !others.is_empty() {
                    remarks.push(format!("planned on {}, tested on {}", a.rig, others.join(", ")));
                }
                if tested == 0 {
                    remarks.push("planned, but no counted test came in".to_string());
                } else if tested != a.samples {
                    remarks.push(format!("{} planned, {tested} counted", a.samples));
                }
            }
            (None, Some(out)) if tested > 0 => {
                remarks.push(format!("left out of the plan ({}), yet tested", out.reason));
            }
            (None, None) => remarks.push("not in the plan (the lot list changed after planning)".to_string()),
            (None, Some(_)) => {}
        }
        for (rig, count) in &by_rig {
            let reasons: Vec<String> = plan
                .refusals
                .iter()
                .filter(|r| r.lot == listed.lot && r.rig == *rig)
                .map(|r| r.reason.clone())
                .collect::<BTreeSet<_>>()
                .into_iter()
                .collect();
            if !reasons.is_empty() {
                remarks.push(format!("tested on {rig}, which the plan refused for it"));
                on_refused.push(TestedOnRefusedRig {
                    lot: listed.lot.clone(),
                    rig: rig.clone(),
                    tests: *count,
                    reasons,
                });
            }
        }
        rows.push(PlannedAgainstTested {
            lot: listed.lot.clone(),
            planned_rig: assignment.map(|a| a.rig.clone()),
            planned_samples: assignment.map(|a| a.samples),
            planned_start: assignment.map(|a| a.start.clone()),
            unplanned_reason: left_out.map(|u| u.reason.clone()),
            tested,
            tested_rigs: by_rig.keys().cloned().collect(),
            remarks,
        });
    }
    PlanComparison {
        plan_file: plan_file.display().to_string(),
        method: plan.method.clone(),
        lots: rows,
        tested_on_refused_rigs: on_refused,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_model::{CurveMetrics, LotList, TestStatus};

    fn test(lot: &str, rig: &str, i: usize) -> TestRecord {
        TestRecord {
            test_id: format!("{lot}-{i}"),
            file: format!("{lot}-{i}.csv"),
            content_hash: format!("{lot}-{i}"),
            serial: Some(format!("{lot}-{i}")),
            part: Some("P".into()),
            lot: Some(lot.into()),
            rig: Some(rig.into()),
            operator: None,
            started: None,
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics: CurveMetrics::default(),
            verdict: None,
            findings: Vec::new(),
            status: TestStatus::Counted,
            swing: None,
            theory: None,
        }
    }

    const PLAN: &str = r#"{
        "shift": "s1", "method": "atcs+local-search", "generated_at": "x",
        "assignments": [
            { "lot": "L1", "rig": "RIG-A", "samples": 3, "start": "2026-12-01T14:05:00", "end": "e" },
            { "lot": "L2", "rig": "RIG-D", "samples": 2, "start": "2026-12-01T14:05:00" }
        ],
        "checks": [],
        "unscheduled": [ { "lot": "L3", "part": "P", "kind": "no-eligible-rig", "reason": "no rig may test it" } ],
        "refusals": [ { "lot": "L2", "rig": "RIG-C", "kind": "calibration", "reason": "the rig's calibration runs out" } ],
        "metrics": {}
    }"#;

    #[test]
    fn reality_is_set_beside_the_plan_and_refused_rigs_are_named() {
        let plan: PlanFile = serde_json::from_str(PLAN).unwrap();
        let lots = LotList::from_yaml(
            "lots.yaml",
            "lots:\n  - { lot: L1, part: P, quantity: 10 }\n  - { lot: L2, part: P, quantity: 10 }\n  \
             - { lot: L3, part: P, quantity: 10 }\n  - { lot: L4, part: P, quantity: 10 }\n",
        )
        .unwrap()
        .lots;
        let mut tests: Vec<TestRecord> = (0..3).map(|i| test("L1", "RIG-A", i)).collect();
        tests.extend((0..2).map(|i| test("L2", "RIG-C", i)));
        let mut superseded = test("L1", "RIG-B", 9);
        superseded.status = TestStatus::Superseded { by: "L1-0.csv".into() };
        tests.push(superseded);
        let comparison = compare(Path::new("out/plan.json"), &plan, &lots, &tests);
        let row = |lot: &str| comparison.lots.iter().find(|r| r.lot == lot).unwrap();
        // As planned: no remark (the superseded test on RIG-B does not count).
        assert_eq!((row("L1").tested, row("L1").remarks.len()), (3, 0), "{:?}", row("L1"));
        assert_eq!(row("L2").tested_rigs, vec!["RIG-C".to_string()]);
        assert!(row("L2").remarks.iter().any(|r| r == "planned on RIG-D, tested on RIG-C"));
        assert!(row("L2").remarks.iter().any(|r| r.contains("which the plan refused")));
        assert_eq!(row("L3").unplanned_reason.as_deref(), Some("no rig may test it"));
        assert!(row("L3").remarks.is_empty(), "left out and not tested: as planned");
        assert!(row("L4").remarks[0].contains("not in the plan"));
        assert_eq!(comparison.tested_on_refused_rigs.len(), 1);
        let refused = &comparison.tested_on_refused_rigs[0];
        assert_eq!((refused.lot.as_str(), refused.rig.as_str(), refused.tests), ("L2", "RIG-C", 2));
        assert_eq!(refused.reasons, vec!["the rig's calibration runs out".to_string()]);
    }

    #[test]
    fn a_plan_is_found_only_for_its_own_shift_and_a_broken_one_is_named() {
        let dir = tempfile::tempdir().unwrap();
        assert!(find_plan(dir.path(), "s1").unwrap().is_none());
        std::fs::write(dir.path().join(PLAN_FILE), PLAN).unwrap();
        assert!(find_plan(dir.path(), "s1").unwrap().is_some());
        assert!(find_plan(dir.path(), "s2").unwrap().is_none());
        std::fs::write(dir.path().join(PLAN_FILE), "{ not json").unwrap();
        let err = find_plan(dir.path(), "s1").unwrap_err().to_string();
        assert!(err.contains("plan.json") && err.contains("twistlot plan"), "{err}");
    }
}
