//! Renders every shipped template with a sample context and checks what a reader sees.

use twistlot_model::Verdict;
use twistlot_report::*;

const EVIL: &str = "<script>alert(1)</script>";

fn renderer() -> Renderer {
    Renderer::new(&shipped_templates_dir(), None).unwrap()
}

fn lot(disposition: Disposition) -> LotReport {
    let rates = [11.8, 11.9, 12.0, 12.0, 12.1, 12.2, 12.9];
    LotReport {
        generated_at: "2024-05-14 06:12".into(),
        shift: "S-0514-A".into(),
        part: "TS-4410".into(),
        revision: "C".into(),
        customer: None,
        spec_file: "specs/TS-4410-C.yaml".into(),
        lot: "L-0517".into(),
        quantity: 1200,
        plan: PlanView {
            scheme: "MIL-STD-105E".into(),
            code_letter: Some("J".into()),
            inspection_level: Some("II".into()),
            aql_pct: Some(1.0),
            sample_size: 50,
            accept: Some(1),
            reject: Some(2),
            acceptability_k: None,
            severity: "tightened".into(),
        },
        disposition,
        grounds: vec!["2 nonconforming in 50; rejects on 2".into()],
        tested: 50,
        failed: 2,
        invalid: 1,
        flagged: vec![FlaggedPart {
            serial: Some(EVIL.into()),
            file: "rig-b/0412 & co.txt".into(),
            characteristic: "rate".into(),
            value: Some(12.9),
            lower: Some(11.2),
            upper: Some(12.8),
            verdict: Verdict::Fail,
            message: "operator note: <b>bent leg</b> | check".into(),
        }],
        statistics: vec![CharacteristicStats {
            characteristic: "rate".into(),
            unit: "N·mm/°".into(),
            lower: Some(11.2),
            upper: Some(12.8),
            n: 50,
            mean: Some(12.0123),
            sd: Some(0.2311),
            cpk: Some(1.0432),
            cpk_lower_95: Some(0.8123),
            normality_p: None,
            method: "normal".into(),
            ..Default::default()
        }],
        rejected_files: vec![RejectedFile {
            file: "rig-c/0007.dat".into(),
            reason: "line 57: `12,5x` is not a number".into(),
        }],
        cautions: default_cautions(),
        charts: Charts {
            rate_histogram_svg: rate_histogram_svg(&rates, Some(11.2), Some(12.8), Some(12.0), None, "rate")
                .unwrap(),
            curves_svg: curves_svg(
                &[CurveLine {
                    label: EVIL.into(),
                    angle_deg: vec![0.0, 90.0],
                    torque_nmm: vec![0.0, 1000.0],
                    flagged: true,
                }],
                &[ToleranceWindow { angle_deg: 45.0, lower_nmm: Some(450.0), upper_nmm: Some(550.0) }],
            )
            .unwrap(),
            oc_curve_svg: oc_curve_svg(&[(0.0, 1.0), (10.0, 0.1)], Some((4.0, 0.5)), "plan J").unwrap(),
        },
    }
}

#[test]
fn lot_report_html_shows_the_decision_and_escapes_export_text() {
    let html = renderer().render("lot_report.html.j2", &lot(Disposition::Reject)).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"), "{}", &html[..60]);
    assert!(!html.contains(EVIL));
    assert!(html.contains("&lt;script&gt;alert(1)&lt;&#x2f;script&gt;"));
    assert!(html.contains("operator note: &lt;b&gt;bent leg&lt;&#x2f;b&gt; | check"));
    assert!(html.contains("rig-b&#x2f;0412 &amp; co.txt"));
    assert!(html.contains("class=\"decision decision-reject\""));
    assert!(html.contains(">REJECTED<"));
    for shown in [
        "TS-4410",
        "L-0517",
        "1200",
        "MIL-STD-105E",
        "tightened",
        "specs&#x2f;TS-4410-C.yaml",
        "rig-c&#x2f;0007.dat",
    ] {
        assert!(html.contains(shown), "missing {shown}");
    }
    // Customer absent and normality p absent: a dash, never "none" or an empty cell.
    assert!(html.contains("<dt>Customer</dt><dd>—</dd>"));
    assert!(!html.contains(">none<"));
    // Numbers formatted by the template's filters.
    assert!(html.contains(">12.012<") && html.contains(">1.04<") && html.contains(">0.81<"));
    // The three charts are inline SVG, not escaped text; their own labels are escaped by the SVG writer.
    assert_eq!(html.matches("<svg ").count(), 3);
    assert!(!html.contains("&lt;svg"));
    assert!(
        html.contains("LSL 11.2") && html.contains("USL 12.8") && html.contains("this lot: 4 % defective")
    );
    for caution in default_cautions() {
        assert!(html.contains(&caution.replace('\'', "&#x27;")), "missing caution {caution}");
    }
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
    assert!(md.contains("| Customer | — |"));
    assert!(md.contains("| Accept on / reject on | 1 / 2 |"));
    assert!(!md.contains("<svg"));
    // Every flagged/statistics table row has the header's number of cells.
    for line in md.lines().filter(|l| l.starts_with("| \\<script")) {
        assert_eq!(line.matches(" | ").count(), 7, "{line}");
    }
    assert!(md.contains("1. These results are computed only from the rig data supplied"));
}

#[test]
fn shift_summary_flags_held_and_rejected_lots() {
    let summary = ShiftSummary {
        shift: "S-0514-A".into(),
        generated_at: "2024-05-14 14:00".into(),
        files_total: 10,
        files_accepted: 9,
        files_rejected: vec![RejectedFile { file: EVIL.into(), reason: "not a rig export".into() }],
        lots: vec![
            LotLine {
                lot: "L-1".into(),
                part: "P".into(),
                disposition: Disposition::Accept,
                tested: 5,
                failed: 0,
                invalid: 0,
                severity: "normal".into(),
                report_file: Some("lot-L-1.html".into()),
                grounds: vec!["accepted on 0".into()],
            },
            LotLine {
                lot: "L-2".into(),
                part: "P".into(),
                disposition: Disposition::Hold,
                tested: 3,
                failed: 0,
                invalid: 2,
                severity: "normal".into(),
                report_file: None,
                grounds: vec!["2 invalid curves".into(), "rig not verified".into()],
            },
        ],
        cautions: default_cautions(),
    };
    let html = renderer().render("shift_summary.html.j2", &summary).unwrap();
    assert!(html.contains("0 rejected · 1 held"));
    assert!(html.contains("<tr class=\"row-hold\">") && html.contains("<tr class=\"row-accept\">"));
    assert!(html.contains("<a href=\"./lot-L-1.html\">lot-L-1.html</a>"));
    assert!(html.contains("2 invalid curves<br>rig not verified"));
    assert!(!html.contains(EVIL) && html.contains("&lt;script&gt;"));
    assert!(html.contains("a fixture violently"));

    let calm = ShiftSummary { lots: vec![summary.lots[0].clone()], ..summary };
    let html = renderer().render("shift_summary.html.j2", &calm).unwrap();
    assert!(html.contains("ALL 1 ACCEPTED") && html.contains("decision-accept"));
}

#[test]
fn tests_csv_quotes_fields_and_leaves_missing_values_empty() {
    let rows = TestsCsv {
        rows: vec![
            TestRow {
                test_id: "t1".into(),
                file: "a,b.csv".into(),
                serial: Some("SN \"7\"".into()),
                part: Some("P".into()),
                lot: Some("L".into()),
                rig: None,
                operator: Some(EVIL.into()),
                rate_nmm_per_deg: Some(12.5),
                free_angle_deg: None,
                max_torque_nmm: Some(1000.0),
                verdict: Verdict::Fail,
                findings: "rate: 12.5 > 12.4; torque@45: ok".into(),
            },
            TestRow {
                test_id: "t2".into(),
                file: "c.csv".into(),
                serial: None,
                part: None,
                lot: None,
                rig: None,
                operator: None,
                rate_nmm_per_deg: None,
                free_angle_deg: None,
                max_torque_nmm: None,
                verdict: Verdict::Invalid,
                findings: String::new(),
            },
        ],
    };
    let csv_text = renderer().render("tests.csv.j2", &rows).unwrap();
    let lines: Vec<&str> = csv_text.lines().collect();
    assert_eq!(lines.len(), 3, "{csv_text}");
    assert_eq!(
        lines[0],
        "test_id,file,serial,part,lot,rig,operator,rate_nmm_per_deg,free_angle_deg,max_torque_nmm,verdict,findings"
    );
    assert_eq!(
        lines[1],
        "t1,\"a,b.csv\",\"SN \"\"7\"\"\",P,L,,<script>alert(1)</script>,12.5,,1000.0,fail,\"rate: 12.5 > 12.4; torque@45: ok\""
    );
    assert_eq!(lines[2], "t2,c.csv,,,,,,,,,invalid,");
    // An independent reader sees 12 fields per row and the original text.
    let mut reader = csv::Reader::from_reader(csv_text.as_bytes());
    let records: Vec<csv::StringRecord> = reader.records().map(Result::unwrap).collect();
    assert_eq!(records.len(), 2);
    assert!(records.iter().all(|r| r.len() == 12));
    assert_eq!(&records[0][1], "a,b.csv");
    assert_eq!(&records[0][2], "SN \"7\"");
}

#[test]
fn plant_override_replaces_one_template() {
    let plant = tempfile::tempdir().unwrap();
    std::fs::write(plant.path().join("lot_report.md.j2"), "Plant format: {{ lot }} {{ disposition }}\n")
        .unwrap();
    std::fs::write(plant.path().join("_report.css.j2"), "body { color: #123456; }").unwrap();
    let r = Renderer::new(&shipped_templates_dir(), Some(plant.path())).unwrap();
    assert_eq!(r.render("lot_report.md.j2", &lot(Disposition::Hold)).unwrap(), "Plant format: L-0517 hold\n");
    // The shipped HTML template picks up the plant's style sheet partial.
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
