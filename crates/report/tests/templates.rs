//! Renders every shipped template with a sample context and checks what a reader sees.

use twistlot_model::{
    Approval, AttributePlan, Capability, CapabilityMethod, CharacteristicClass, CharacteristicStats,
    ClassDecision, CurveMetrics, Disposition, DuplicateFile, Finding, Ground, GroundTopic, LotDecision,
    LotRecord, LotSource, PartSpec, PlanComparison, PlanSummary, PlannedAgainstTested, ReferenceCheck,
    RejectedFile, RigUse, RigVerification, Severity, ShiftRecord, SupersededTest, TestRecord, TestStatus,
    TestedOnRefusedRig, UnlistedLot, Verdict, VerificationStatus,
};
use twistlot_report::*;

const EVIL: &str = "<script>alert(1)</script>";

fn renderer() -> Renderer {
    Renderer::new(None).unwrap()
}

fn spec() -> PartSpec {
    let text = "part: TS-4410\nrevision: C\ncustomer: Ketterby & Sons <invented>\n\
                material: { name: wire, modulus_n_per_mm2: 206000 }\n\
                geometry: { wire_diameter_mm: 1.0, mean_diameter_mm: 8.0, body_coils: 5, leg_lengths_mm: [10, 10], wind: left }\n\
                test: { max_angle_deg: 90 }\n\
                characteristics:\n  rate_nmm_per_deg: { nominal: 12.0, tolerance: \"±0.8 N·mm/°\", class: major }\n\
                sampling:\n  level: II\n  major: { plan: attribute, aql_pct: 1.0 }\n  minor: { plan: none }\n";
    PartSpec::from_yaml("specs/TS-4410-C.yaml", text).unwrap()
}

fn test(serial: &str, file: &str, verdict: Verdict, message: &str) -> TestRecord {
    TestRecord {
        test_id: format!("{serial}-0000"),
        file: file.into(),
        content_hash: "00".into(),
        serial: Some(serial.into()),
        part: Some("TS-4410".into()),
        lot: Some("L-0517".into()),
        rig: Some("RIG-A".into()),
        operator: Some("A. Operator".into()),
        started: Some("2024-05-14T06:00".into()),
        rig_format: "native".into(),
        spec_file: Some("specs/TS-4410-C.yaml".into()),
        spec_revision: Some("C".into()),
        metrics: CurveMetrics { rate_nmm_per_deg: Some(12.9), max_torque_nmm: 1000.0, ..Default::default() },
        swing: None,
        theory: None,
        verdict: Some(verdict),
        findings: vec![Finding {
            characteristic: "rate".into(),
            class: CharacteristicClass::Major,
            value: Some(12.9),
            lower: Some(11.2),
            upper: Some(12.8),
            verdict,
            message: message.into(),
        }],
        status: TestStatus::Counted,
    }
}

fn lot(disposition: Disposition) -> LotReport {
    let rates = [11.8, 11.9, 12.0, 12.0, 12.1, 12.2, 12.9];
    let plan = AttributePlan {
        code_letter: "J".into(),
        lot_size_letter: Some("H".into()),
        sample_size: 50,
        accept: 1,
        reject: 2,
        severity: Severity::Tightened,
        hundred_percent: false,
    };
    let decision = LotDecision {
        disposition,
        severity: Some(Severity::Tightened),
        grounds: vec![Ground::leading(
            GroundTopic::Class(CharacteristicClass::Major),
            disposition,
            "2 nonconforming in 50; rejects on 2",
        )],
        deciding: Some(0),
        classes: vec![ClassDecision {
            class: CharacteristicClass::Major,
            plan: plan.clone(),
            aql_pct: Some(1.0),
            tested: 50,
            defectives: 2,
            defectives_beyond_sample: 0,
            invalid: 1,
            outcome: disposition,
        }],
        variables: None,
        shown_class: Some(CharacteristicClass::Major),
        switching: None,
    };
    let statistics = vec![CharacteristicStats {
        characteristic: "rate".into(),
        unit: "N·mm/°".into(),
        lower: Some(11.2),
        upper: Some(12.8),
        capability: Capability {
            n: 50,
            excluded: 0,
            mean: Some(12.0123),
            sd: Some(0.2311),
            sd_within: None,
            within: None,
            min: Some(11.8),
            max: Some(12.9),
            median: Some(12.0),
            cp: None,
            cpk: Some(1.0432),
            pp: None,
            ppk: None,
            cp_lower_95: None,
            cpk_lower_95: Some(0.8123),
            cp_cpk_absent: None,
            pp_lower_95: None,
            ppk_lower_95: None,
            pp_ppk_absent: None,
            normality_a2: None,
            normality_p: None,
            normal_curve: false,
            method: CapabilityMethod::Normal,
            fitted: None,
        },
    }];
    let record = LotRecord {
        lot: "L-0517".into(),
        part: "TS-4410".into(),
        quantity: 1200,
        disposition,
        tested: 50,
        failed: 2,
        invalid: 1,
        plan: Some(PlanSummary {
            code_letter: Some("J".into()),
            sample_size: 50,
            accept: Some(1),
            reject: Some(2),
            severity: Severity::Tightened,
        }),
        next_severity: None,
        rate: None,
        grounds: decision.grounds.iter().map(|g| g.text.clone()).collect(),
        decided_by: decision.deciding_ground().map(|g| g.text.clone()),
        report_html: "lots/L-0517.html".into(),
        report_md: "lots/L-0517.md".into(),
        duplicates: vec![DuplicateFile {
            file: "rig-b/0412 copy.txt".into(),
            same_as: "rig-b/0412 & co.txt".into(),
            lot: Some("L-0517".into()),
        }],
        superseded: vec![SupersededTest {
            serial: "SN-7".into(),
            file: "rig-b/0007.txt".into(),
            started: None,
            by: "rig-b/0007-retest.txt".into(),
        }],
        plans: decision.plan_rows(),
        spec_file: Some("specs/TS-4410-C.yaml".into()),
        spec_revision: Some("C".into()),
        rejected_files: vec![RejectedFile {
            lot: Some("L-0517".into()),
            lot_from: Some(LotSource::Metadata),
            ..RejectedFile::new("rig-c/0007.dat", "line 57: `12,5x` is not a number")
        }],
        rigs: vec![
            RigUse {
                rig: "RIG-A".into(),
                tests: 2,
                last_test: Some("2024-05-14T06:00".into()),
                calibration_due: Some("2024-09-01T00:00:00".into()),
                lapsed: false,
                listed: true,
            },
            RigUse {
                rig: "RIG-Z".into(),
                tests: 1,
                last_test: None,
                calibration_due: None,
                lapsed: false,
                listed: false,
            },
        ],
        wire: Default::default(),
        decision: Some(decision),
        statistics,
    };
    let mut flagged =
        test(EVIL, "rig-b/0412 & co.txt", Verdict::Fail, "operator note: <b>bent leg</b> | check");
    // Two failing characteristics on one part: still one flagged part.
    flagged.findings.push(Finding { characteristic: "torque@45".into(), ..flagged.findings[0].clone() });
    let tests = vec![flagged, test("SN-2", "rig-b/0413.txt", Verdict::Pass, "inside")];
    let mut report = LotReport::new(record, tests, Some((spec(), "specs/TS-4410-C.yaml".into())));
    report.generated_at = "2024-05-14 06:12".into();
    report.shift = "S-0514-A".into();
    report.plant = "Invented plant".into();
    report.unassigned_files = 1;
    let points: Vec<StripPoint> = rates
        .iter()
        .map(|v| StripPoint { value: *v, verdict: if *v > 12.8 { Verdict::Fail } else { Verdict::Pass } })
        .collect();
    let strip = StripChart {
        characteristic: "rate",
        unit: "N·mm/°",
        points: &points,
        lower: Some(11.2),
        upper: Some(12.8),
        nominal: Some(12.0),
        normal_fit: None,
    };
    report.charts = Charts {
        values: vec![ValuesChart { characteristic: "rate".into(), svg: strip_chart_svg(&strip).unwrap() }],
        curves_svg: curves_svg(&CurveChart {
            curves: &[CurveLine {
                label: EVIL.into(),
                angle_deg: vec![0.0, 90.0],
                torque_nmm: vec![0.0, 1000.0],
                verdict: Verdict::Fail,
            }],
            windows: &[ToleranceWindow { angle_deg: 45.0, lower_nmm: Some(450.0), upper_nmm: Some(550.0) }],
            free_angle: None,
            curves_in_lot: 1,
        })
        .unwrap(),
        oc_curve_svg: oc_curve_svg(&OcChart {
            points: &[(0.0, 1.0), (10.0, 0.1)],
            lot_point: Some((4.0, 0.5)),
            aql_pct: Some(1.0),
            caption: "plan J",
        })
        .unwrap(),
        oc_note: "The deciding plan: major, n 50, Ac 1 Re 2.".into(),
    };
    report
}

#[test]
fn lot_report_html_shows_the_decision_and_escapes_export_text() {
    let html = renderer().render("lot_report.html.j2", &lot(Disposition::Reject)).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"), "{}", &html[..60]);
    assert!(!html.contains(EVIL));
    assert!(html.contains("&lt;script&gt;alert(1)&lt;&#x2f;script&gt;"));
    assert!(html.contains("operator note: &lt;b&gt;bent leg&lt;&#x2f;b&gt; | check"));
    assert!(html.contains("rig-b&#x2f;0412 &amp; co.txt"));
    assert!(html.contains("Ketterby &amp; Sons &lt;invented&gt;"));
    assert!(html.contains("class=\"decision decision-reject\""));
    assert!(html.contains(">REJECTED<"));
    for shown in [
        "TS-4410",
        "L-0517",
        "1200",
        "mil-std-105e",
        "tightened",
        "specs&#x2f;TS-4410-C.yaml",
        "rig-c&#x2f;0007.dat",
    ] {
        assert!(html.contains(shown), "missing {shown}");
    }
    // One flagged part (the passing test is not listed), and the files that do not count.
    assert!(
        html.contains("<h2>Parts outside the drawing or not judged (1)</h2>"),
        "flagged count is of parts"
    );
    assert!(html.contains("same bytes as rig-b&#x2f;0412 &amp; co.txt"));
    assert!(html.contains("serial SN-7 was tested again; rig-b&#x2f;0007-retest.txt counts instead"));
    // Normality p absent: a dash, never "none" or an empty cell.
    assert!(!html.contains(">none<"));
    // Numbers formatted by the template's filters.
    assert!(html.contains(">12.012<") && html.contains(">1.04<") && html.contains(">0.81<"));
    // The three charts are inline SVG, not escaped text; their own labels are escaped by the SVG writer.
    assert_eq!(html.matches("<svg ").count(), 3);
    assert!(!html.contains("&lt;svg"));
    assert!(
        html.contains("drawing min 11.2 N·mm/°")
            && html.contains("drawing max 12.8 N·mm/°")
            && html.contains("this lot: 4 % defective")
    );
    assert!(html.contains("The deciding plan: major, n 50, Ac 1 Re 2."));
    for caution in default_cautions() {
        assert!(html.contains(&caution.replace('\'', "&#x27;")), "missing caution {caution}");
    }
}

#[test]
fn lot_report_shows_every_plan_the_deciding_one_and_both_letters() {
    let html = renderer().render("lot_report.html.j2", &lot(Disposition::Reject)).unwrap();
    assert!(html.contains("<h2>Sampling plans (1)</h2>"));
    assert!(html.contains("<tr class=\"deciding\">"), "the deciding plan's row is marked");
    assert!(html.contains("◀ decided the lot"));
    assert!(html.contains("<td>H → J</td>"), "the lot size's letter, then the arrowed one");
    assert!(html.contains("<td class=\"num\">1 / 2</td>"), "Ac / Re");
    assert!(html.contains("<span class=\"tag\">Decided by</span> 2 nonconforming in 50; rejects on 2"));
    let md = renderer().render("lot_report.md.j2", &lot(Disposition::Reject)).unwrap();
    assert!(md.contains("| major, attribute | tightened | H → J | 50 | 1 / 2 | 1.00 | 50 | 2 | reject | **decided the lot** |"), "{md}");
    assert!(md.contains("**Decided by:** 2 nonconforming in 50; rejects on 2"));
}

#[test]
fn lot_report_has_the_data_sheet_rigs_and_a_blank_approval_block() {
    let report = lot(Disposition::Accept);
    let html = renderer().render("lot_report.html.j2", &report).unwrap();
    // Every tested part, passing ones included, with rig, operator and start time.
    assert!(html.contains("<h2>Data sheet: every tested part (2)</h2>"));
    assert!(html.contains("<td class=\"text\" title=\"rig-b&#x2f;0413.txt\">SN-2</td>"));
    assert!(
        html.contains("<td class=\"num cell-pass\">12.9000</td>") || html.contains("cell-pass\">12.9000"),
        "value at the rate's precision"
    );
    assert!(html.matches("<td>2024-05-14T06:00</td>").count() >= 2);
    // Calibration: the due date when recorded, "not recorded" otherwise, and unlisted rigs flagged.
    assert!(html.contains("2024-09-01T00:00:00") && html.contains("not recorded"));
    assert!(html.contains("not in the plant config"));
    // The lot's own unreadable file, and a pointer to the shift summary for unassigned ones.
    assert!(html.contains("rig-c&#x2f;0007.dat") && html.contains("the file&#x27;s metadata"));
    assert!(html.contains("1 file(s) of the shift could not be read and could not be assigned to any lot"));
    // No names were given: three blank lines to sign, nothing invented.
    assert!(html.contains("<section class=\"approval\""));
    assert_eq!(
        html.matches("<td class=\"line\"></td>").count(),
        9,
        "name, signature and date blank for three roles"
    );
    let mut named = lot(Disposition::Accept);
    named.approval = Approval { reviewed_by: Some("R. Reviewer <QA>".into()), ..Approval::default() };
    let html = renderer().render("lot_report.html.j2", &named).unwrap();
    assert!(html.contains("<td class=\"line\">R. Reviewer &lt;QA&gt;</td>"));
    assert_eq!(html.matches("<td class=\"line\"></td>").count(), 8);
    let md = renderer().render("lot_report.md.j2", &named).unwrap();
    assert!(md.contains("| Reviewed by | R. Reviewer \\<QA\\> |"), "{md}");
    assert!(md.contains("| Tested by | ____________________ |"));
}

#[test]
fn a_lot_without_a_spec_shows_dashes_not_blanks() {
    let mut report = lot(Disposition::Hold);
    report.spec = None;
    report.spec_file = "no spec".into();
    let html = renderer().render("lot_report.html.j2", &report).unwrap();
    assert!(html.contains("<dt>Customer</dt><dd>—</dd>"));
    assert!(html.contains("<dt>Drawing revision</dt><dd>—</dd>"));
    let md = renderer().render("lot_report.md.j2", &report).unwrap();
    assert!(md.contains("| Customer | — |"));
}

#[test]
fn every_disposition_looks_different() {
    let r = renderer();
    for (disposition, word) in
        [(Disposition::Accept, "ACCEPTED"), (Disposition::Reject, "REJECTED"), (Disposition::Hold, "ON HOLD")]
    {
        let html = r.render("lot_report.html.j2", &lot(disposition)).unwrap();
        assert!(html.contains(&format!("decision decision-{disposition}\"")));
        assert!(html.contains(&format!("<div class=\"word\">{word}</div>")));
        let md = r.render("lot_report.md.j2", &lot(disposition)).unwrap();
        assert!(md.contains(&format!("## Disposition: **{word}**")));
    }
}

#[test]
fn lot_report_markdown_neutralises_markup() {
    let md = renderer().render("lot_report.md.j2", &lot(Disposition::Hold)).unwrap();
    assert!(md.starts_with("# Lot acceptance report — lot L-0517"));
    assert!(md.contains("\\<script\\>alert(1)\\</script\\>"));
    assert!(md.contains("operator note: \\<b\\>bent leg\\</b\\> \\| check"));
    assert!(md.contains("| Customer | Ketterby \\& Sons \\<invented\\> |"));
    assert!(!md.contains("<svg"));
    // Every flagged and data-sheet row has its header's number of cells.
    let flagged_header = md.lines().find(|l| l.starts_with("| Serial | Characteristic")).unwrap();
    for line in md.lines().filter(|l| l.starts_with("| \\<script")) {
        assert_eq!(line.matches(" | ").count(), flagged_header.matches(" | ").count(), "{line}");
    }
    let sheet_header = md.lines().find(|l| l.starts_with("| # | Serial")).unwrap();
    for line in md.lines().filter(|l| l.starts_with("| 1 | ") || l.starts_with("| 2 | ")) {
        assert_eq!(line.matches(" | ").count(), sheet_header.matches(" | ").count(), "{line}");
    }
    assert!(md.contains("1. These results are computed only from the rig data supplied"));
}

fn shift_record(lots: Vec<LotRecord>) -> ShiftRecord {
    ShiftRecord {
        shift: "S-0514-A".into(),
        files_total: 10,
        files_accepted: 9,
        files_rejected: vec![
            RejectedFile::new(EVIL, "not a rig export"),
            RejectedFile {
                lot: Some("L-1".into()),
                lot_from: Some(LotSource::FileName),
                ..RejectedFile::new("rig-a/L-1-007.txt", "line 9: cut off")
            },
        ],
        lots,
        unlisted_tests: Vec::new(),
        sink_failures: Vec::new(),
        switching_record: None,
        cautions: default_cautions(),
        duplicates: Vec::new(),
        rig_verifications: Vec::new(),
        plan: None,
        unlisted_lots: vec![UnlistedLot {
            lot: Some("L-9".into()),
            parts: vec!["TS-4410".into()],
            tested: 3,
            failed: 0,
            invalid: 0,
            files: vec!["rig-a/L-9-001.txt".into()],
        }],
        spec_problems: Vec::new(),
        skipped_files: vec![RejectedFile::new("lots.yaml", "the shift's lot list")],
        warnings: vec!["rig-q/a.txt: rig `RIG-Q` is not in the plant config".into()],
    }
}

#[test]
fn shift_summary_flags_held_and_rejected_lots() {
    let accepted = LotRecord {
        lot: "L-1".into(),
        grounds: vec!["accepted on 0".into()],
        ..lot(Disposition::Accept).lot
    };
    let mut held = lot(Disposition::Hold).lot;
    held.lot = "L-2".into();
    held.grounds = vec!["2 invalid curves".into(), "rig not verified".into()];
    held.decided_by = Some("2 invalid curves".into());
    held.report_html = String::new();
    let summary = ShiftSummary {
        generated_at: "2024-05-14 14:00".into(),
        plant: "Invented plant".into(),
        summary: shift_record(vec![accepted.clone(), held]),
    };
    let html = renderer().render("shift_summary.html.j2", &summary).unwrap();
    assert!(html.contains("0 rejected · 1 held"));
    assert!(html.contains("<tr class=\"row-hold\">") && html.contains("<tr class=\"row-accept\">"));
    assert!(html.contains("<a href=\"./lots&#x2f;L-0517.html\">report</a>"));
    assert!(html.contains("2 invalid curves<details><summary>1 more ground(s)</summary><span class=\"minor\">rig not verified</span></details>"));
    // The deciding plan, the lot found only in the exports, each rejected file with its lot.
    assert!(html.contains("major: n 50, Ac 1 Re 2 (tightened, letter J)"));
    assert!(html.contains("<h2>Lots not on the lot list (1)</h2>") && html.contains("L-9"));
    assert!(html.contains("L-1 (from the file name)") && html.contains("not known"));
    assert!(html.contains("lots.yaml (the shift&#x27;s lot list)"));
    assert!(html.contains("rig `RIG-Q` is not in the plant config"));
    assert!(!html.contains(EVIL) && html.contains("&lt;script&gt;"));
    assert!(html.contains("a fixture violently"));

    let calm = ShiftSummary { summary: shift_record(vec![accepted]), ..summary };
    let html = renderer().render("shift_summary.html.j2", &calm).unwrap();
    assert!(html.contains("ALL 1 ACCEPTED") && html.contains("decision-accept"));
}

#[test]
fn shift_summary_lists_rig_verifications_and_the_plan_against_reality() {
    let mut record = shift_record(vec![lot(Disposition::Hold).lot]);
    record.rig_verifications = vec![
        RigVerification {
            rig: "RIG-A".into(),
            reference: Some("REF-A".into()),
            status: VerificationStatus::Verified,
            reason: "verified".into(),
            checks: vec![ReferenceCheck {
                file: "a/REF-A.csv".into(),
                serial: "REF-A".into(),
                started: None,
                check_angle_deg: 90.0,
                certified_torque_nmm: 1800.0,
                measured_torque_nmm: Some(1803.0),
                deviation_pct: Some(0.1667),
                allowed_deviation_pct: 1.0,
                passed: true,
            }],
        },
        RigVerification {
            rig: format!("RIG-{EVIL}"),
            reference: None,
            status: VerificationStatus::Missing,
            reason: "no reference-spring export of REF-B was found in this shift".into(),
            checks: Vec::new(),
        },
    ];
    record.plan = Some(PlanComparison {
        plan_file: "out/plan.json".into(),
        method: "atcs+local-search".into(),
        lots: vec![PlannedAgainstTested {
            lot: "L-0517".into(),
            planned_rig: Some("RIG-D".into()),
            planned_samples: Some(32),
            planned_start: Some("2026-12-01T17:46:40".into()),
            unplanned_reason: None,
            tested: 31,
            tested_rigs: vec!["RIG-C".into()],
            remarks: vec!["planned on RIG-D, tested on RIG-C".into()],
        }],
        tested_on_refused_rigs: vec![TestedOnRefusedRig {
            lot: "L-0517".into(),
            rig: "RIG-C".into(),
            tests: 31,
            reasons: vec!["the rig's calibration runs out".into()],
        }],
    });
    let summary =
        ShiftSummary { generated_at: "now".into(), plant: "Invented plant".into(), summary: record };
    let html = renderer().render("shift_summary.html.j2", &summary).unwrap();
    assert!(html.contains("Rig verifications with reference springs"));
    assert!(
        html.contains("<td class=\"num\">1803.0</td>") && html.contains("<td class=\"num\">0.17</td>"),
        "{html}"
    );
    assert!(html.contains("verdict-pass") && html.contains(">missing</span>"));
    assert!(!html.contains(EVIL), "rig names from the config are escaped");
    assert!(html.contains("Plan against reality") && html.contains("1 OFF PLAN"));
    assert!(
        html.contains("<b>L-0517</b> on RIG-C (31 tests): the rig&#x27;s calibration runs out"),
        "{html}"
    );
    assert!(html.contains("2026-12-01 17:46:40"));
    // Without them, neither section appears.
    let plain = ShiftSummary {
        generated_at: "now".into(),
        plant: "Invented plant".into(),
        summary: shift_record(vec![lot(Disposition::Accept).lot]),
    };
    let html = renderer().render("shift_summary.html.j2", &plain).unwrap();
    assert!(!html.contains("Rig verifications") && !html.contains("Plan against reality"));
}

#[test]
fn the_plan_page_and_work_list_render_what_the_pipeline_gives() {
    let plan = serde_json::json!({
        "shift": "S-1", "lot_list": "shift/lots.yaml", "method": "atcs+local-search",
        "shift_start": "2026-12-01T14:00:00", "shift_end": "2026-12-01T22:00:00",
        "dispatch_rule": null, "rule_errors": [], "notes": ["a note"],
        "assignments": [{
            "lot": EVIL, "part": "P", "rig": "RIG-A", "samples": 20, "start": "2026-12-01T14:00:31",
            "test_start": "2026-12-01T14:05:31", "end": "2026-12-01T14:17:51", "setup_s": 300,
            "start_s": 31, "end_s": 1071, "arbor_mm": 16.0, "fixture": "P",
            "due": "2026-12-02T10:00:00", "tardiness_s": 0, "weight": 1.0
        }],
        "checks": [{ "rig": "RIG-A", "reference": "REF-A", "start": "2026-12-01T14:00:00",
                     "end": "2026-12-01T14:00:31", "start_s": 0, "end_s": 31 }],
        "unscheduled": [{ "lot": "L-9", "part": "Q", "samples": 13, "kind": "no-eligible-rig", "reason": "no rig may test it" }],
        "refusals": [{ "lot": "L-9", "rig": "RIG-A", "kind": "torque-window", "reason": "too strong" }],
        "metrics": { "weighted_tardiness_s": 0.0, "makespan_s": 1071, "makespan_lower_bound_s": 1071,
                     "weighted_tardiness_lower_bound_s": 0.0, "lots_assigned": 1, "lots_unscheduled": 1,
                     "total_setup_s": 300 },
        "lots": [{ "lot": "L-9", "part": "Q", "quantity": 60, "severity": "normal", "samples": 13,
                   "sample_basis": "critical zero acceptance", "max_torque_nmm": 7387.2, "torque_basis": "rate",
                   "wound_down_inside_d_mm": 34.1, "fixture": "Q" }]
    });
    let gantt =
        gantt_svg(&[GanttRow { label: "RIG-A".into(), bars: Vec::new() }], 28_800.0, 50_400.0, "plan")
            .unwrap();
    let page = PlanReport {
        generated_at: "now".into(),
        plant: "Invented plant".into(),
        plan,
        gantt_svg: gantt,
        worklists: vec!["worklist-RIG-A.csv".into()],
        cautions: plan_cautions(),
    };
    let html = renderer().render("plan.html.j2", &page).unwrap();
    assert_eq!(html.matches("<svg").count(), 1);
    assert!(html.contains("1 LEFT OUT") && html.contains("<b>L-9</b> (Q): no rig may test it"));
    assert!(!html.contains(EVIL) && html.contains("&lt;script&gt;"));
    // Times of the shift's own day show as clock times; other days with month and day.
    assert!(html.contains(">14:05<") && html.contains(">12-02 10:00<"), "{html}");
    assert!(html.contains("href=\"./worklist-RIG-A.csv\""));
    assert!(html.contains("stores energy"));

    let list = WorklistCsv {
        rig: "RIG-A".into(),
        shift: "S-1".into(),
        generated_at: "now".into(),
        cautions: plan_cautions(),
        steps: vec![WorkStep {
            step: 1,
            kind: "reference-check".into(),
            start: "2026-12-01T14:00:00".into(),
            end: "2026-12-01T14:00:31".into(),
            lot: String::new(),
            part: "REF-A".into(),
            samples: 1,
            arbor_mm: None,
            fixture: String::new(),
            ship_by: None,
            instruction: "verify the rig, then test \"nothing\", yet".into(),
        }],
    };
    let csv = renderer().render("worklist.csv.j2", &list).unwrap();
    let lines: Vec<&str> = csv.lines().collect();
    assert!(lines[0].starts_with("# Work list for rig RIG-A"));
    assert!(lines.iter().take_while(|l| l.starts_with('#')).any(|l| l.contains("leave a fixture violently")));
    let data: Vec<&str> = lines.iter().copied().skip_while(|l| l.starts_with('#')).collect();
    assert_eq!(data[0], "step,kind,start,end,lot,part,samples,arbor_mm,fixture,ship_by,instruction");
    assert_eq!(
        data[1],
        "1,reference-check,2026-12-01T14:00:00,2026-12-01T14:00:31,,REF-A,1,,,,\"verify the rig, then test \"\"nothing\"\", yet\""
    );
}

#[test]
fn tests_csv_carries_every_metric_at_its_precision_and_quotes_fields() {
    let mut first = test("SN \"7\"", "a,b.csv", Verdict::Fail, "12.5 > 12.4");
    first.operator = Some(EVIL.into());
    first.rig = None;
    first.metrics.rate_nmm_per_deg = Some(12.5);
    first.theory = Some(twistlot_model::TheoryRate {
        rate_nmm_per_deg: 12.02,
        ratio: Some(1.04),
        band: [0.85, 1.15],
        outside_band: false,
    });
    first.metrics.rate_r2 = Some(0.999_987_654_3);
    first.metrics.free_angle_deg = Some(5.000_000_000_1);
    first.metrics.torque_nmm_at.insert("45".into(), 195.31099999999998);
    first.metrics.torque_nmm_at.insert("75".into(), 300.0);
    first.metrics.hysteresis_pct_at.insert("45".into(), 2.345_678);
    first.metrics.linearity_pct = Some(0.4);
    first.findings.push(Finding {
        characteristic: "torque@45".into(),
        verdict: Verdict::Pass,
        ..first.findings[0].clone()
    });
    let mut second = test("x", "c.csv", Verdict::Invalid, "no curve");
    second.serial = None;
    second.part = None;
    second.lot = None;
    second.rig = None;
    second.operator = None;
    second.started = None;
    second.spec_file = None;
    second.spec_revision = None;
    second.metrics = CurveMetrics::default();
    second.findings.clear();
    second.status = TestStatus::Superseded { by: "d.csv".into() };
    let r = renderer();
    let columns = |header| TestsCsv {
        header,
        torque_angles: vec!["45".into()],
        hysteresis_angles: vec!["45".into()],
        rows: Vec::new(),
    };
    let mut csv_text = r.render("tests.csv.j2", &columns(true)).unwrap();
    for row in [first, second] {
        csv_text
            .push_str(&r.render("tests.csv.j2", &TestsCsv { rows: vec![row], ..columns(false) }).unwrap());
    }
    let lines: Vec<&str> = csv_text.lines().collect();
    assert_eq!(lines.len(), 3, "{csv_text}");
    assert_eq!(
        lines[0],
        "test_id,file,serial,part,lot,rig,operator,started,rig_format,spec_file,spec_revision,rate_nmm_per_deg,\
         rate_r2,rate_stderr_nmm_per_deg,intercept_nmm,free_angle_deg,secant_rate_nmm_per_deg,torque_nmm_at_45,\
         hysteresis_pct_at_45,energy_loss_pct,linearity_pct,set_deg,max_torque_nmm,max_angle_deg,evaluated_cycle,\
         cycles,points_in_window,other_angles,verdict,findings,status,record,dynamic_rate_nmm_per_deg,\
         natural_frequency_hz,theory_rate_nmm_per_deg,rate_to_theory"
    );
    // Common practice, no published source: each metric printed to its resolution (no float noise).
    assert_eq!(
        lines[1],
        "\"SN \"\"7\"\"-0000\",\"a,b.csv\",\"SN \"\"7\"\"\",TS-4410,L-0517,,<script>alert(1)</script>,2024-05-14T06:00,\
         native,specs/TS-4410-C.yaml,C,12.5000,0.999988,,,5.000,,195.31,2.346,,0.400,,1000.00,0.000,0,0,0,\
         torque@75=300.00,fail,rate: 12.5 > 12.4,counted,torque-curve,,,12.0200,1.04000"
    );
    assert_eq!(
        lines[2],
        "x-0000,c.csv,,,,,,,native,,,,,,,,,,,,,,0.00,0.000,0,0,0,,invalid,,superseded,torque-curve,,,,"
    );
    // An independent reader sees 36 fields per row and the original text.
    let mut reader = csv::Reader::from_reader(csv_text.as_bytes());
    let records: Vec<csv::StringRecord> = reader.records().map(Result::unwrap).collect();
    assert_eq!(records.len(), 2);
    assert!(records.iter().all(|r| r.len() == 36));
    assert_eq!(&records[0][1], "a,b.csv");
    assert_eq!(&records[0][2], "SN \"7\"");
}

#[test]
fn plant_override_replaces_one_template() {
    let plant = tempfile::tempdir().unwrap();
    std::fs::write(
        plant.path().join("lot_report.md.j2"),
        "Plant format: {{ lot.lot }} {{ lot.disposition }}\n",
    )
    .unwrap();
    std::fs::write(plant.path().join("_report.css.j2"), "body { color: #123456; }").unwrap();
    let r = Renderer::new(Some(plant.path())).unwrap();
    assert_eq!(r.render("lot_report.md.j2", &lot(Disposition::Hold)).unwrap(), "Plant format: L-0517 hold\n");
    // The built-in HTML template picks up the plant's style sheet partial.
    let html = r.render("lot_report.html.j2", &lot(Disposition::Hold)).unwrap();
    assert!(html.contains("body { color: #123456; }") && !html.contains("--ink"));
}

#[test]
fn deserialized_charts_are_not_inserted_as_markup() {
    let mut report = lot(Disposition::Accept);
    let json = serde_json::to_string(&report).unwrap();
    let mut back: LotReport = serde_json::from_str(&json).unwrap();
    let html = renderer().render("lot_report.html.j2", &back).unwrap();
    assert_eq!(html.matches("<svg ").count(), 0);
    // Charts drawn again by this crate go back in.
    back.charts = std::mem::take(&mut report.charts);
    let html = renderer().render("lot_report.html.j2", &back).unwrap();
    assert_eq!(html.matches("<svg ").count(), 3);
}

#[test]
fn sample_report_can_be_written_and_opened() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("lot.html");
    std::fs::write(&path, renderer().render("lot_report.html.j2", &lot(Disposition::Reject)).unwrap())
        .unwrap();
    let text = std::fs::read_to_string(&path).unwrap();
    // Self-contained: nothing is fetched from anywhere when the file is opened.
    assert!(!text.contains("<link") && !text.contains(" src=") && !text.contains("https://"));
    let namespaces = text.matches("xmlns=\"http://www.w3.org/2000/svg\"").count();
    assert_eq!(text.matches("http://").count(), namespaces);
    assert!(text.contains("<style>") && text.ends_with("</html>\n"));
}
