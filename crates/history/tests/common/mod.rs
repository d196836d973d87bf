//! Records for the tests: invented demo values, as a shift would produce them.
#![allow(dead_code)]

use std::collections::BTreeMap;
use twistlot_model::record::{
    AttributePlan, ClassDecision, CurveMetrics, Disposition, Ground, GroundTopic, InspectionState,
    LotDecision, LotRecord, PlanSummary, RateSummary, Severity, SupersededTest, SwitchingCount, TestRecord,
    TestStatus,
};
use twistlot_model::spec::{CharacteristicClass, Finding, Verdict};

/// A 64-hex-digit stand-in for a content hash, different for different texts.
pub fn fake_hash(text: &str) -> String {
    use std::hash::{Hash, Hasher};
    let mut hasher = std::collections::hash_map::DefaultHasher::new();
    text.hash(&mut hasher);
    format!("{:016x}", hasher.finish()).repeat(4)
}

/// A counted, passing test of `serial` in `lot` of `part`, started at `started`.
pub fn test(part: &str, lot: &str, serial: &str, started: &str, rate: f64) -> TestRecord {
    let hash = fake_hash(&format!("{serial}|{started}|{rate}"));
    TestRecord {
        test_id: format!("{serial}-{}", &hash[..8]),
        file: format!("rig-a/{serial}.csv"),
        content_hash: hash,
        serial: Some(serial.to_string()),
        part: Some(part.to_string()),
        lot: Some(lot.to_string()),
        rig: Some("rig-a".to_string()),
        operator: Some("op 7".to_string()),
        started: Some(started.to_string()),
        rig_format: "native-csv".to_string(),
        spec_file: Some(format!("parts/{part}.yaml")),
        spec_revision: Some("C".to_string()),
        metrics: CurveMetrics {
            evaluated_cycle: 2,
            cycles: 3,
            rate_nmm_per_deg: Some(rate),
            rate_r2: Some(0.9991),
            rate_stderr_nmm_per_deg: Some(0.004),
            intercept_nmm: Some(-rate * 3.0),
            free_angle_deg: Some(3.0),
            rate_unavailable: None,
            torque_nmm_at: BTreeMap::from([
                ("45".to_string(), rate * 42.0),
                ("22.5".to_string(), rate * 19.5),
            ]),
            hysteresis_pct_at: BTreeMap::from([("45".to_string(), 2.5)]),
            energy_loss_pct: Some(4.1),
            linearity_pct: Some(0.6),
            max_torque_nmm: rate * 87.0,
            max_angle_deg: 90.0,
            secant_rate_nmm_per_deg: Some(rate * 1.01),
            secant_deg: Some([30.0, 60.0]),
            set_deg: Some(0.12),
            deflection_deg: [0.0, 90.0],
            window_deg: [18.0, 72.0],
            points_in_window: 540,
            notes: vec!["hysteresis at 80 not reached".to_string()],
        },
        verdict: Some(Verdict::Pass),
        findings: vec![Finding {
            characteristic: "rate".to_string(),
            class: CharacteristicClass::Major,
            value: Some(rate),
            lower: Some(rate * 0.9),
            upper: Some(rate * 1.1),
            verdict: Verdict::Pass,
            message: "inside the limits".to_string(),
        }],
        status: TestStatus::Counted,
        swing: None,
        theory: None,
    }
}

/// A test with most fields absent, as an export naming little would give.
pub fn sparse_test(serial: Option<&str>, file: &str) -> TestRecord {
    TestRecord {
        test_id: format!("{}-0000", serial.unwrap_or(file)),
        file: file.to_string(),
        content_hash: fake_hash(file),
        serial: serial.map(str::to_string),
        part: None,
        lot: None,
        rig: None,
        operator: None,
        started: Some("when the bell rang".to_string()),
        rig_format: "native-csv".to_string(),
        spec_file: None,
        spec_revision: None,
        metrics: CurveMetrics {
            rate_unavailable: Some("fewer than 3 points in the window".to_string()),
            ..Default::default()
        },
        verdict: None,
        findings: Vec::new(),
        status: TestStatus::Duplicate { same_as: "rig-b/other.csv".to_string() },
        swing: None,
        theory: None,
    }
}

/// A decided lot with a plan, rate statistics and a structured decision.
pub fn lot(
    part: &str,
    lot: &str,
    disposition: Disposition,
    tested: u64,
    failed: u64,
    mean_rate: f64,
) -> LotRecord {
    let plan = AttributePlan {
        lot_size_letter: None,
        code_letter: "F".to_string(),
        sample_size: 20,
        accept: 1,
        reject: 2,
        severity: Severity::Normal,
        hundred_percent: false,
    };
    let decision = LotDecision {
        disposition,
        severity: Some(Severity::Normal),
        grounds: vec![
            Ground::note(GroundTopic::Switching, "inspection severity normal"),
            Ground::leading(
                GroundTopic::Class(CharacteristicClass::Major),
                disposition,
                format!("{failed} defective(s), Ac 1"),
            ),
        ],
        deciding: Some(1),
        classes: vec![ClassDecision {
            class: CharacteristicClass::Major,
            plan: plan.clone(),
            aql_pct: Some(1.0),
            tested,
            defectives: failed,
            defectives_beyond_sample: 0,
            invalid: 0,
            outcome: disposition,
        }],
        variables: None,
        shown_class: Some(CharacteristicClass::Major),
        switching: Some(SwitchingCount {
            severity: Severity::Normal,
            sample_size: 20,
            defectives: failed,
            aql_pct: 1.0,
            between_ac_and_re: false,
        }),
    };
    LotRecord {
        lot: lot.to_string(),
        part: part.to_string(),
        quantity: 500,
        disposition,
        tested,
        failed,
        invalid: 0,
        plan: Some(PlanSummary {
            code_letter: Some("F".to_string()),
            sample_size: 20,
            accept: Some(1),
            reject: Some(2),
            severity: Severity::Normal,
        }),
        next_severity: Some(InspectionState::Normal),
        rate: Some(RateSummary {
            mean: Some(mean_rate),
            sd: Some(0.02),
            cp: Some(1.6),
            cpk: Some(1.4),
            cpk_lower_95: Some(1.1),
            pp: Some(1.5),
            ppk: Some(1.3),
            normality_p: Some(0.4),
            method: Some("normal".to_string()),
        }),
        grounds: vec!["inspection severity normal".to_string(), format!("{failed} defective(s), Ac 1")],
        report_html: format!("lots/{lot}.html"),
        report_md: format!("lots/{lot}.md"),
        duplicates: Vec::new(),
        superseded: vec![SupersededTest {
            serial: "S-9".to_string(),
            file: "rig-a/S-9.csv".to_string(),
            started: Some("2026-12-01T14:00".to_string()),
            by: "rig-a/S-9b.csv".to_string(),
        }],
        decision: Some(decision),
        statistics: Vec::new(),
        decided_by: None,
        plans: Vec::new(),
        spec_file: None,
        spec_revision: None,
        rejected_files: Vec::new(),
        rigs: Vec::new(),
        wire: Default::default(),
    }
}

/// A held lot: no plan, no statistics, no switching count.
pub fn held_lot(part: &str, lot: &str) -> LotRecord {
    LotRecord {
        lot: lot.to_string(),
        part: part.to_string(),
        quantity: 40,
        disposition: Disposition::Hold,
        tested: 0,
        failed: 0,
        invalid: 0,
        plan: None,
        next_severity: None,
        rate: None,
        grounds: vec!["no tests".to_string()],
        report_html: String::new(),
        report_md: String::new(),
        duplicates: Vec::new(),
        superseded: Vec::new(),
        decision: Some(LotDecision::hold(GroundTopic::Evidence, "no tests", None)),
        statistics: Vec::new(),
        decided_by: None,
        plans: Vec::new(),
        spec_file: None,
        spec_revision: None,
        rejected_files: Vec::new(),
        rigs: Vec::new(),
        wire: Default::default(),
    }
}

/// A shift's tests and lots: `lots` lots of `per_lot` tests each for `part`.
pub fn shift_records(
    part: &str,
    shift_day: u32,
    lots: usize,
    per_lot: usize,
) -> (Vec<TestRecord>, Vec<LotRecord>) {
    let mut tests = Vec::new();
    let mut lot_records = Vec::new();
    for l in 0..lots {
        let lot_name = format!("{part}-D{shift_day:03}-L{l}");
        for s in 0..per_lot {
            let minute = s % 60;
            let hour = 6 + (l * per_lot + s) / 60 % 12;
            let day = 1 + shift_day % 28;
            let month = 1 + shift_day / 28 % 12;
            let started = format!("2026-{month:02}-{day:02}T{hour:02}:{minute:02}:00");
            let rate = 1.2 + 0.0001 * f64::from(shift_day) + 0.001 * (s % 7) as f64;
            tests.push(test(part, &lot_name, &format!("{lot_name}-{s:03}"), &started, rate));
        }
        lot_records.push(lot(part, &lot_name, Disposition::Accept, per_lot as u64, 0, 1.2));
    }
    (tests, lot_records)
}
