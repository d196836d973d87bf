//! Reference-spring ("master") verification of the rigs in a shift.
//!
//! Each rig in the plant config may record its reference spring (serial, certified torque
//! at a check angle, allowed deviation). An export whose serial is such a spring's serial
//! is that spring's check on the rig the export names (on the spring's own rig when it
//! names none): it is no test of any lot, so it is marked [`TestStatus::Reference`] and
//! never counts toward one, and the evaluator reads its torque at the check angle
//! ([`reference_angles`]). Recognising by serial needs nothing from the rig's export
//! layout, so every rig format, declarative or exec, carries it.
//!
//! A rig is verified for the shift when it has at least one check and every check passed;
//! a failed or missing check leaves it unverified, and the lots whose counted tests ran on
//! it are held (the rule itself lives in `twistlot_sampling::decide_lot`). A plant whose
//! config records no reference spring at all checks nothing, so configs written before
//! reference springs existed behave as before.
//!
//! Likewise a test that started after its rig's `calibration_due` does not stand, and its
//! lot is held; a start time the rig wrote in a form that cannot be read is not guessed at.

use crate::open::OpenPlant;
use std::collections::BTreeMap;
use twistlot_model::record::{angle_key, start_seconds};
use twistlot_model::{
    ReferenceCheck, ReferenceSpring, Rig, RigVerification, TestRecord, TestStatus, VerificationStatus,
};
use twistlot_sampling::UnverifiedRig;

/// The name used for tests whose export names no rig.
const NO_RIG: &str = "(no rig named)";

fn rigs(plant: &OpenPlant) -> &[Rig] {
    plant.config.as_ref().map_or(&[], |c| c.rigs.as_slice())
}

/// Each reference spring in the plant config by serial, with the rig that keeps it.
fn springs(plant: &OpenPlant) -> BTreeMap<&str, (&Rig, &ReferenceSpring)> {
    rigs(plant)
        .iter()
        .filter_map(|rig| rig.reference.as_ref().map(|r| (r.serial.as_str(), (rig, r))))
        .collect()
}

/// The check angle of every reference spring, by serial: the evaluator reads the torque
/// there from exports of these serials (and judges them against no part spec).
pub fn reference_angles(plant: &OpenPlant) -> BTreeMap<String, f64> {
    springs(plant)
        .into_iter()
        .map(|(serial, (_, spring))| (serial.to_string(), spring.check_angle_deg))
        .collect()
}

/// Marks every reference-spring export among `tests`; returns how many were marked.
/// Run it before retests are settled, so two checks of one spring are never taken for a
/// retest of a part.
pub fn mark_references(plant: &OpenPlant, tests: &mut [TestRecord]) -> usize {
    let springs = springs(plant);
    let mut marked = 0;
    for test in tests.iter_mut() {
        if test.serial.as_deref().is_some_and(|s| springs.contains_key(s)) {
            test.status = TestStatus::Reference;
            marked += 1;
        }
    }
    marked
}

/// The rig a reference export verifies: the one it names, else the spring's own.
fn checked_rig<'a>(test: &'a TestRecord, own: &'a Rig) -> &'a str {
    test.rig.as_deref().filter(|r| !r.trim().is_empty()).unwrap_or(own.name.as_str())
}

fn check_of(test: &TestRecord, spring: &ReferenceSpring) -> ReferenceCheck {
    let measured = test.metrics.torque_nmm_at.get(&angle_key(spring.check_angle_deg)).copied();
    ReferenceCheck {
        file: test.file.clone(),
        serial: spring.serial.clone(),
        started: test.started.clone(),
        check_angle_deg: spring.check_angle_deg,
        certified_torque_nmm: spring.certified_torque_nmm,
        measured_torque_nmm: measured,
        deviation_pct: measured.map(|m| spring.deviation_pct(m)),
        allowed_deviation_pct: spring.allowed_deviation_pct,
        passed: measured.is_some_and(|m| spring.accepts(m)),
    }
}

/// A number for people: at most two decimals, no trailing zeros.
fn number(value: f64) -> String {
    let text = format!("{value:.2}");
    text.trim_end_matches('0').trim_end_matches('.').to_string()
}

fn describe(check: &ReferenceCheck) -> String {
    match (check.measured_torque_nmm, check.deviation_pct) {
        (Some(measured), Some(deviation)) => format!(
            "{} read {} N·mm at {}° against {} N·mm certified ({:+.2} %, allowed ±{} %)",
            check.serial,
            number(measured),
            number(check.check_angle_deg),
            number(check.certified_torque_nmm),
            deviation,
            number(check.allowed_deviation_pct)
        ),
        _ => format!(
            "{}'s export {} does not reach {}°, so its torque there was not measured",
            check.serial,
            check.file,
            number(check.check_angle_deg)
        ),
    }
}

/// Every rig's verification in the shift: the plant config's rigs in order, then any other
/// rig that counted tests ran on. Empty when the plant config records no reference spring.
pub fn verify_rigs(plant: &OpenPlant, tests: &[TestRecord]) -> Vec<RigVerification> {
    let springs = springs(plant);
    if springs.is_empty() {
        return Vec::new();
    }
    let mut checks: BTreeMap<String, Vec<ReferenceCheck>> = BTreeMap::new();
    for test in tests.iter().filter(|t| t.status == TestStatus::Reference) {
        let Some((own, spring)) = test.serial.as_deref().and_then(|s| springs.get(s)) else { continue };
        checks.entry(checked_rig(test, own).to_string()).or_default().push(check_of(test, spring));
    }
    let mut out = Vec::new();
    for rig in rigs(plant) {
        let reference = rig.reference.as_ref().map(|r| r.serial.clone());
        let rig_checks = checks.remove(&rig.name).unwrap_or_default();
        out.push(verification(&rig.name, reference, rig_checks));
    }
    // Checks on rigs the config does not list still say something about those rigs.
    for (rig, rig_checks) in checks {
        out.push(verification(&rig, None, rig_checks));
    }
    let mut seen: Vec<&str> = out.iter().map(|v| v.rig.as_str()).collect();
    let mut unlisted = Vec::new();
    for test in tests.iter().filter(|t| t.status.is_counted()) {
        let rig = test.rig.as_deref().filter(|r| !r.trim().is_empty()).unwrap_or(NO_RIG);
        if !seen.contains(&rig) {
            seen.push(rig);
            unlisted.push(RigVerification {
                rig: rig.to_string(),
                reference: None,
                status: VerificationStatus::Missing,
                reason: if rig == NO_RIG {
                    "the export names no rig, so no reference-spring check covers it".to_string()
                } else {
                    "the plant config records no reference spring for this rig, so nothing verified it"
                        .to_string()
                },
                checks: Vec::new(),
            });
        }
    }
    out.extend(unlisted);
    out
}

fn verification(rig: &str, reference: Option<String>, checks: Vec<ReferenceCheck>) -> RigVerification {
    let failed: Vec<&ReferenceCheck> = checks.iter().filter(|c| !c.passed).collect();
    let (status, reason) = if let Some(first) = failed.first() {
        let more = if failed.len() > 1 {
            format!(" ({} of {} checks failed)", failed.len(), checks.len())
        } else {
            String::new()
        };
        (VerificationStatus::Failed, format!("its reference-spring check failed: {}{more}", describe(first)))
    } else if let Some(last) = checks.last() {
        (VerificationStatus::Verified, format!("verified: {}", describe(last)))
    } else {
        let reason = match &reference {
            Some(serial) => format!("no reference-spring export of {serial} was found in this shift"),
            None => "the plant config records no reference spring for this rig, so nothing verified it"
                .to_string(),
        };
        (VerificationStatus::Missing, reason)
    };
    RigVerification { rig: rig.to_string(), reference, status, reason, checks }
}

/// The rigs among a lot's counted tests whose results do not stand: not verified by their
/// reference spring (when the plant checks any), or past their calibration when the test
/// started; with the tests concerned.
pub fn unverified_for(
    plant: &OpenPlant,
    verifications: &[RigVerification],
    lot_tests: &[&TestRecord],
) -> Vec<UnverifiedRig> {
    let mut out = unverified_by_reference(verifications, lot_tests);
    out.extend(past_calibration(plant, lot_tests));
    out
}

/// Counted tests that started after their rig's calibration ran out, by rig.
fn past_calibration(plant: &OpenPlant, lot_tests: &[&TestRecord]) -> Vec<UnverifiedRig> {
    let mut out = Vec::new();
    for rig in rigs(plant) {
        let Some(due) = rig.calibration_due else { continue };
        let due_s = due.get().assume_utc().unix_timestamp() as f64;
        let late = lot_tests
            .iter()
            .filter(|t| t.status.is_counted() && t.rig.as_deref() == Some(rig.name.as_str()))
            .filter(|t| t.started.as_deref().and_then(start_seconds).is_some_and(|s| s > due_s))
            .count() as u64;
        if late > 0 {
            out.push(UnverifiedRig {
                rig: rig.name.clone(),
                tests: late,
                reason: format!("its calibration ran out at {due}, before these tests started"),
            });
        }
    }
    out
}

fn unverified_by_reference(
    verifications: &[RigVerification],
    lot_tests: &[&TestRecord],
) -> Vec<UnverifiedRig> {
    if verifications.is_empty() {
        return Vec::new();
    }
    let mut by_rig: BTreeMap<&str, u64> = BTreeMap::new();
    for test in lot_tests.iter().filter(|t| t.status.is_counted()) {
        *by_rig.entry(test.rig.as_deref().filter(|r| !r.trim().is_empty()).unwrap_or(NO_RIG)).or_default() +=
            1;
    }
    by_rig
        .into_iter()
        .filter_map(|(rig, tests)| {
            let verification = verifications.iter().find(|v| v.rig == rig);
            match verification {
                Some(v) if v.status == VerificationStatus::Verified => None,
                Some(v) => Some(UnverifiedRig { rig: rig.to_string(), tests, reason: v.reason.clone() }),
                None => Some(UnverifiedRig {
                    rig: rig.to_string(),
                    tests,
                    reason: "no reference-spring check covers it".to_string(),
                }),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::open::OpenOptions;
    use std::path::Path;
    use twistlot_model::CurveMetrics;

    fn plant(dir: &Path, rigs: &str) -> OpenPlant {
        std::fs::create_dir_all(dir.join("parts")).unwrap();
        let file = dir.join("plant.yaml");
        std::fs::write(&file, format!("plant: test\nparts: parts\nrigs:\n{rigs}")).unwrap();
        OpenPlant::open(&OpenOptions { plant_file: Some(file), ..OpenOptions::default() }).unwrap()
    }

    const RIGS: &str = concat!(
        "  - { name: RIG-A, format: native, reference: { serial: REF-A, check_angle_deg: 90, ",
        "certified_torque_nmm: 1000, allowed_deviation_pct: 1.0 } }\n",
        "  - { name: RIG-B, format: native, reference: { serial: REF-B, check_angle_deg: 60, ",
        "certified_torque_nmm: 500, allowed_deviation_pct: 1.5 } }\n",
        "  - { name: RIG-C, format: native }\n",
    );

    fn test(file: &str, serial: &str, rig: Option<&str>, torque_at: Option<(f64, f64)>) -> TestRecord {
        let mut metrics = CurveMetrics::default();
        if let Some((angle, torque)) = torque_at {
            metrics.torque_nmm_at.insert(angle_key(angle), torque);
        }
        TestRecord {
            test_id: file.into(),
            file: file.into(),
            content_hash: file.into(),
            serial: Some(serial.into()),
            part: Some("P".into()),
            lot: Some("L1".into()),
            rig: rig.map(String::from),
            operator: None,
            started: None,
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics,
            verdict: None,
            findings: Vec::new(),
            status: TestStatus::Counted,
            swing: None,
            theory: None,
        }
    }

    #[test]
    fn reference_exports_are_recognised_by_serial_and_judged_against_the_certificate() {
        let dir = tempfile::tempdir().unwrap();
        let plant = plant(dir.path(), RIGS);
        assert_eq!(
            reference_angles(&plant),
            BTreeMap::from([("REF-A".into(), 90.0), ("REF-B".into(), 60.0)])
        );
        let mut tests = vec![
            // Common practice, no published source: 1009 is +0.9 %, within ±1 %.
            test("a-ref.csv", "REF-A", Some("RIG-A"), Some((90.0, 1009.0))),
            // 509 is +1.8 %, beyond ±1.5 %.
            test("b-ref.csv", "REF-B", None, Some((60.0, 509.0))),
            test("a-1.csv", "S-1", Some("RIG-A"), None),
            test("b-1.csv", "S-2", Some("RIG-B"), None),
            test("c-1.csv", "S-3", Some("RIG-C"), None),
            test("x-1.csv", "S-4", None, None),
        ];
        assert_eq!(mark_references(&plant, &mut tests), 2);
        assert_eq!(tests[0].status, TestStatus::Reference);
        assert!(tests[2].status.is_counted());
        let verifications = verify_rigs(&plant, &tests);
        let status: Vec<(&str, VerificationStatus)> =
            verifications.iter().map(|v| (v.rig.as_str(), v.status)).collect();
        assert_eq!(
            status,
            vec![
                ("RIG-A", VerificationStatus::Verified),
                ("RIG-B", VerificationStatus::Failed),
                ("RIG-C", VerificationStatus::Missing),
                (NO_RIG, VerificationStatus::Missing),
            ]
        );
        let a = &verifications[0].checks[0];
        assert!((a.deviation_pct.unwrap() - 0.9).abs() < 1e-9 && a.passed);
        assert!(verifications[1]
            .reason
            .starts_with("its reference-spring check failed: REF-B read 509 N·mm at 60°"));
        assert!(verifications[1].reason.contains("+1.80 %, allowed ±1.5 %"), "{}", verifications[1].reason);
        assert!(verifications[2].reason.contains("records no reference spring"));

        let lot: Vec<&TestRecord> = tests.iter().collect();
        let unverified = unverified_for(&plant, &verifications, &lot);
        let rigs: Vec<(&str, u64)> = unverified.iter().map(|u| (u.rig.as_str(), u.tests)).collect();
        assert_eq!(rigs, vec![(NO_RIG, 1), ("RIG-B", 1), ("RIG-C", 1)]);
    }

    #[test]
    fn tests_started_after_the_calibration_ran_out_do_not_stand() {
        let dir = tempfile::tempdir().unwrap();
        let plant =
            plant(dir.path(), "  - { name: RIG-C, format: native, calibration_due: \"2026-12-01T18:00\" }\n");
        let mut tests: Vec<TestRecord> =
            ["2026-12-01T17:59", "2026-12-01T18:00", "2026-12-01T18:01:30", "01.12.2026 19:10"]
                .iter()
                .enumerate()
                .map(|(i, at)| {
                    let mut t = test(&format!("c-{i}.csv"), &format!("S-{i}"), Some("RIG-C"), None);
                    t.started = Some(at.to_string());
                    t
                })
                .collect();
        let mut unreadable = test("c-9.csv", "S-9", Some("RIG-C"), None);
        unreadable.started = Some("yesterday".into());
        tests.push(unreadable);
        let lot: Vec<&TestRecord> = tests.iter().collect();
        // No reference spring in this plant: only the calibration counts. The test at
        // 18:00 exactly is still inside it; 18:01:30 and 19:10 are not.
        let unverified = unverified_for(&plant, &[], &lot);
        assert_eq!(unverified.len(), 1);
        assert_eq!((unverified[0].rig.as_str(), unverified[0].tests), ("RIG-C", 2));
        assert!(
            unverified[0].reason.contains("calibration ran out at 2026-12-01T18:00:00"),
            "{}",
            unverified[0].reason
        );
    }

    #[test]
    fn a_missing_or_unmeasured_check_fails_and_a_plant_without_springs_checks_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let plant_with = plant(dir.path(), RIGS);
        let mut tests = vec![
            test("a-ref.csv", "REF-A", Some("RIG-A"), None),
            test("a-1.csv", "S-1", Some("RIG-A"), None),
        ];
        mark_references(&plant_with, &mut tests);
        let verifications = verify_rigs(&plant_with, &tests);
        assert_eq!(verifications[0].status, VerificationStatus::Failed);
        assert!(verifications[0].reason.contains("does not reach 90°"), "{}", verifications[0].reason);
        assert_eq!(verifications[1].status, VerificationStatus::Missing);
        assert!(verifications[1].reason.contains("no reference-spring export of REF-B"));

        let bare = tempfile::tempdir().unwrap();
        let plant_without = plant(bare.path(), "  - { name: RIG-A, format: native }\n");
        let mut tests = vec![test("a-1.csv", "S-1", Some("RIG-A"), None)];
        assert_eq!(mark_references(&plant_without, &mut tests), 0);
        let verifications = verify_rigs(&plant_without, &tests);
        assert!(verifications.is_empty());
        let lot: Vec<&TestRecord> = tests.iter().collect();
        assert!(unverified_for(&plant_without, &verifications, &lot).is_empty());
    }
}
