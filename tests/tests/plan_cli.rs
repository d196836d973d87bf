//! `twistlot plan` on the shipped demo shift and on hand-made shifts, through the real
//! binary: the JSON the issue gives, refusal reasons, the operators' work lists, the HTML
//! plan with its Gantt chart, exit codes, a dispatch-rule plugin, and the shift run
//! setting the plan beside what was tested.

use serde_json::Value;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use twistlot_tests::{parse_csv, sample_shift_dir, twistlot, workspace_root};

fn demo_plant() -> PathBuf {
    workspace_root().join("sample_lots/plant.yaml")
}

/// Runs `twistlot plan SHIFT --plant PLANT --out OUT --format json ARGS`; (exit code, JSON, stderr).
fn plan_json(shift: &Path, plant: &Path, out: &Path, extra: &[&str]) -> (i32, Value, String) {
    let output = twistlot()
        .args(["plan", shift.to_str().unwrap(), "--plant", plant.to_str().unwrap()])
        .args(["--out", out.to_str().unwrap(), "--format", "json"])
        .args(extra)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr).to_string();
    let stdout = String::from_utf8_lossy(&output.stdout).to_string();
    let json = serde_json::from_str(&stdout).unwrap_or(Value::Null);
    (output.status.code().unwrap_or(-1), json, stderr)
}

/// The demo shift planned once into a folder shared by the tests that only look.
fn demo_plan() -> &'static (i32, Value, String, tempfile::TempDir) {
    static PLAN: OnceLock<(i32, Value, String, tempfile::TempDir)> = OnceLock::new();
    PLAN.get_or_init(|| {
        let out = tempfile::tempdir().unwrap();
        let (code, json, stderr) = plan_json(&sample_shift_dir(), &demo_plant(), out.path(), &[]);
        (code, json, stderr, out)
    })
}

/// `YYYY-MM-DDTHH:MM:SS`, the plant-local ISO 8601 form the plan writes.
fn is_iso_local(text: &str) -> bool {
    let b = text.as_bytes();
    b.len() == 19
        && b.iter().enumerate().all(|(i, c)| match i {
            4 | 7 => *c == b'-',
            10 => *c == b'T',
            13 | 16 => *c == b':',
            _ => c.is_ascii_digit(),
        })
}

fn assignment<'a>(plan: &'a Value, lot: &str) -> &'a Value {
    plan["assignments"]
        .as_array()
        .unwrap()
        .iter()
        .find(|a| a["lot"] == lot)
        .unwrap_or_else(|| panic!("{lot} not planned"))
}

#[test]
fn the_json_has_the_shape_the_issue_gives() {
    let (code, plan, stderr, _) = demo_plan();
    assert_eq!(*code, 3, "one lot is left out, so the exit status is 3; stderr: {stderr}");
    for a in plan["assignments"].as_array().unwrap() {
        for key in ["lot", "rig", "samples", "start", "end", "setup_s"] {
            assert!(a.get(key).is_some(), "assignment field {key} missing: {a}");
        }
        assert!(
            is_iso_local(a["start"].as_str().unwrap()) && is_iso_local(a["end"].as_str().unwrap()),
            "{a}"
        );
        assert!(a["samples"].as_u64().unwrap() >= 1 && a["setup_s"].as_i64().unwrap() >= 0);
    }
    for c in plan["checks"].as_array().unwrap() {
        for key in ["rig", "start", "end"] {
            assert!(c.get(key).is_some(), "check field {key} missing: {c}");
        }
        assert!(is_iso_local(c["start"].as_str().unwrap()) && is_iso_local(c["end"].as_str().unwrap()));
    }
    for u in plan["unscheduled"].as_array().unwrap() {
        assert!(u["lot"].is_string() && u["reason"].is_string(), "{u}");
    }
    let m = &plan["metrics"];
    for key in ["weighted_tardiness_s", "makespan_s", "makespan_lower_bound_s"] {
        assert!(m[key].is_number(), "metric {key} missing: {m}");
    }
    assert!(m["makespan_lower_bound_s"].as_i64().unwrap() <= m["makespan_s"].as_i64().unwrap());
    // Every listed lot is either planned or left out, once.
    let planned: BTreeSet<&str> =
        plan["assignments"].as_array().unwrap().iter().map(|a| a["lot"].as_str().unwrap()).collect();
    let out: BTreeSet<&str> =
        plan["unscheduled"].as_array().unwrap().iter().map(|u| u["lot"].as_str().unwrap()).collect();
    assert!(planned.is_disjoint(&out));
    assert_eq!(planned.len() + out.len(), 8);
}

#[test]
fn refusals_on_the_sample_shift_say_why() {
    let (_, plan, _, _) = demo_plan();
    // The heavy brake spring: above 90 % of every load cell.
    let unscheduled = plan["unscheduled"].as_array().unwrap();
    assert_eq!(unscheduled.len(), 2);
    assert_eq!(unscheduled[0]["lot"], "L2612-060");
    assert_eq!(unscheduled[0]["kind"], "no-eligible-rig");
    // The swing-tested lot: its spec states dynamic characteristics only, which no
    // torque rig's load cell can be chosen for; the planner says so rather than guessing.
    assert_eq!(unscheduled[1]["lot"], "L2612-070");
    assert_eq!(unscheduled[1]["kind"], "not-plannable");
    let reason = unscheduled[0]["reason"].as_str().unwrap();
    for rig in ["RIG-A", "RIG-B", "RIG-C", "RIG-D"] {
        assert!(reason.contains(&format!("{rig}: the largest test torque")), "{reason}");
    }
    assert!(reason.contains("outside 10–90 %"), "{reason}");
    let refusals = plan["refusals"].as_array().unwrap();
    let kinds = |lot: &str, rig: &str| -> BTreeSet<String> {
        refusals
            .iter()
            .filter(|r| r["lot"] == lot && r["rig"] == rig)
            .map(|r| r["kind"].as_str().unwrap().to_string())
            .collect()
    };
    // L2612-041 is ready at 17:50; RIG-C's calibration runs out at 18:00, before it could end.
    assert_eq!(kinds("L2612-041", "RIG-C"), BTreeSet::from(["calibration".to_string()]));
    assert_eq!(assignment(plan, "L2612-041")["rig"], "RIG-D");
    // TS-0815's wound-down inside diameter takes no arbor RIG-B keeps (8 mm and up).
    assert!(kinds("L2612-041", "RIG-B").contains("arbor"));
    // Planned lots are never on a rig that refused them.
    for a in plan["assignments"].as_array().unwrap() {
        assert!(kinds(a["lot"].as_str().unwrap(), a["rig"].as_str().unwrap()).is_empty(), "{a}");
    }
}

#[test]
fn sample_counts_follow_the_sampling_tables_at_each_parts_severity() {
    let (_, plan, _, _) = demo_plan();
    // From memory: MIL-STD-105E Table I, lot 281–500 at level II is letter H; Table II-A, H: n = 50.
    assert_eq!(assignment(plan, "L2612-040")["samples"], 50);
    // From memory: MIL-STD-105E Table I, lot 151–280 at level II is letter G; Table II-A, G: n = 32
    // (the zero-acceptance critical class keeps the normal n while TS-2210 is on reduced).
    assert_eq!(assignment(plan, "L2612-031")["samples"], 32);
    let needs = plan["lots"].as_array().unwrap();
    let severity =
        |lot: &str| needs.iter().find(|l| l["lot"] == lot).unwrap()["severity"].as_str().unwrap().to_string();
    assert_eq!(severity("L2612-031"), "reduced", "TS-2210 earned reduced inspection in earlier shifts");
    assert_eq!(severity("L2612-040"), "normal");
}

#[test]
fn each_rig_opens_with_its_reference_check_and_no_slots_overlap() {
    let (_, plan, _, _) = demo_plan();
    let checks: BTreeMap<&str, &Value> =
        plan["checks"].as_array().unwrap().iter().map(|c| (c["rig"].as_str().unwrap(), c)).collect();
    assert_eq!(checks.keys().copied().collect::<Vec<_>>(), vec!["RIG-A", "RIG-B", "RIG-C", "RIG-D"]);
    let mut by_rig: BTreeMap<&str, Vec<(i64, i64)>> = BTreeMap::new();
    for a in plan["assignments"].as_array().unwrap() {
        by_rig
            .entry(a["rig"].as_str().unwrap())
            .or_default()
            .push((a["start_s"].as_i64().unwrap(), a["end_s"].as_i64().unwrap()));
    }
    for (rig, mut slots) in by_rig {
        slots.sort();
        let check_end = checks[rig]["end_s"].as_i64().unwrap();
        assert!(slots[0].0 >= check_end, "{rig}: a lot before the reference check");
        for pair in slots.windows(2) {
            assert!(pair[0].1 <= pair[1].0, "{rig}: overlapping slots {pair:?}");
        }
    }
}

#[test]
fn the_work_lists_follow_each_rig_in_order_with_the_caution_and_the_check_first() {
    let (_, plan, _, out) = demo_plan();
    for check in plan["checks"].as_array().unwrap() {
        let rig = check["rig"].as_str().unwrap();
        let path = out.path().join(format!("worklist-{rig}.csv"));
        let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        let comments: Vec<&str> = text.lines().take_while(|l| l.starts_with('#')).collect();
        assert!(
            comments.iter().any(|l| l.contains("stores energy") && l.contains("fixture violently")),
            "{comments:?}"
        );
        let body: String = text.lines().skip(comments.len()).map(|l| format!("{l}\n")).collect();
        let rows = parse_csv(&body).unwrap();
        assert_eq!(rows[0][..4], ["step", "kind", "start", "end"]);
        assert_eq!(rows[1][1], "reference-check", "{rig}: the reference check comes first");
        assert_eq!(rows[1][5], check["reference"].as_str().unwrap());
        let steps: Vec<u32> = rows[1..].iter().map(|r| r[0].parse().unwrap()).collect();
        assert_eq!(steps, (1..=steps.len() as u32).collect::<Vec<_>>());
        let starts: Vec<&str> = rows[1..].iter().map(|r| r[2].as_str()).collect();
        assert!(starts.windows(2).all(|w| w[0] <= w[1]), "{rig}: steps in time order: {starts:?}");
        let tested: Vec<&str> = rows[1..].iter().filter(|r| r[1] == "test").map(|r| r[4].as_str()).collect();
        let mut planned: Vec<(&str, &str)> = plan["assignments"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|a| a["rig"] == rig)
            .map(|a| (a["start"].as_str().unwrap(), a["lot"].as_str().unwrap()))
            .collect();
        planned.sort();
        assert_eq!(tested, planned.iter().map(|p| p.1).collect::<Vec<_>>(), "{rig}");
    }
}

#[test]
fn the_html_plan_is_one_page_with_an_svg_gantt_chart() {
    let (_, _, _, out) = demo_plan();
    let html = std::fs::read_to_string(out.path().join("plan.html")).unwrap();
    assert_eq!(html.matches("<svg").count(), 1, "one chart");
    let svg = &html[html.find("<svg").unwrap()..html.find("</svg>").unwrap()];
    for rig in ["RIG-A", "RIG-B", "RIG-C", "RIG-D"] {
        assert!(svg.contains(&format!(">{rig}<")) || svg.contains(rig), "{rig} row missing");
    }
    assert!(svg.contains("calibration lapses 18:00"), "RIG-C's calibration shows on its row");
    assert!(html.contains("L2612-060") && html.contains("LEFT OUT"));
    assert!(html.contains("worklist-RIG-A.csv"));
    assert!(html.contains("stores energy"), "the cautions are printed");
    assert!(!html.contains("<link") && !html.contains("<script"), "self-contained");
    // plan.json holds the same plan as the JSON printed.
    let saved: Value =
        serde_json::from_str(&std::fs::read_to_string(out.path().join("plan.json")).unwrap()).unwrap();
    assert_eq!(saved["assignments"], demo_plan().1["assignments"]);
}

/// A one-lot shift of TS-2210 with the shift's hours (or without them).
fn small_shift(dir: &Path, hours: bool) -> PathBuf {
    let shift = dir.join("2026-12-03-late");
    std::fs::create_dir_all(&shift).unwrap();
    let head = if hours { "shift: { start: \"2026-12-03T14:00\", end: \"2026-12-03T22:00\" }\n" } else { "" };
    std::fs::write(
        shift.join("lots.yaml"),
        format!(
            "{head}lots:\n  - {{ lot: L-E1, part: TS-2210, quantity: 240, ship_by: \"2026-12-03T21:00\" }}\n  \
             - {{ lot: L-E2, part: TS-4402, quantity: 200, ship_by: \"2026-12-03T16:00\", weight: 3 }}\n"
        ),
    )
    .unwrap();
    shift
}

/// The demo plant config with absolute paths and `extra` appended, in `dir`.
fn plant_copy(dir: &Path, extra: &str) -> PathBuf {
    let root = workspace_root().join("sample_lots");
    let text = std::fs::read_to_string(root.join("plant.yaml"))
        .unwrap()
        .replace("parts: parts", &format!("parts: {}", root.join("parts").display()))
        .replace("plugins: [plugins]", &format!("plugins: [{}]", root.join("plugins").display()))
        .replace("history: history\n", "");
    let path = dir.join("plant.yaml");
    std::fs::write(&path, format!("{text}{extra}")).unwrap();
    path
}

#[test]
fn exit_codes_say_whether_every_lot_is_planned() {
    let dir = tempfile::tempdir().unwrap();
    let plant = plant_copy(dir.path(), "");
    let shift = small_shift(dir.path(), true);
    let (code, plan, stderr) = plan_json(&shift, &plant, &dir.path().join("out"), &[]);
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(plan["unscheduled"].as_array().unwrap().len(), 0);
    assert_eq!(plan["assignments"].as_array().unwrap().len(), 2);
    assert!(stderr.contains("stores energy"), "the caution goes to stderr: {stderr}");
    // Without a switching record every part is planned on normal inspection.
    assert!(plan["lots"].as_array().unwrap().iter().all(|l| l["severity"] == "normal"));

    let bad_format = twistlot()
        .args(["plan", shift.to_str().unwrap(), "--plant", plant.to_str().unwrap(), "--format", "csv"])
        .output()
        .unwrap();
    assert_eq!(bad_format.status.code(), Some(2));

    let no_hours = small_shift(&dir.path().join("other"), false);
    let (code, _, stderr) = plan_json(&no_hours, &plant, &dir.path().join("out2"), &[]);
    assert_eq!(code, 1);
    assert!(stderr.contains("lots.yaml gives no shift hours") && stderr.contains("shift: {"), "{stderr}");

    let missing = twistlot().args(["plan", "/nonexistent/shift"]).output().unwrap();
    assert_eq!(missing.status.code(), Some(1));
}

#[test]
fn a_dispatch_rule_plugin_named_by_the_plant_orders_the_lots() {
    let dir = tempfile::tempdir().unwrap();
    let shift = small_shift(dir.path(), true);
    let plant = plant_copy(dir.path(), "dispatch_rule: weighted-least-slack\n");
    let (code, plan, stderr) = plan_json(&shift, &plant, &dir.path().join("out"), &[]);
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(plan["method"], "custom+local-search");
    assert_eq!(plan["dispatch_rule"]["name"], "weighted-least-slack");
    assert!(plan["rule_errors"].as_array().unwrap().is_empty(), "{}", plan["rule_errors"]);

    std::fs::create_dir_all(dir.path().join("x")).unwrap();
    let unknown = plant_copy(&dir.path().join("x"), "dispatch_rule: no-such-rule\n");
    let (code, _, stderr) = plan_json(&shift, &unknown, &dir.path().join("out3"), &[]);
    assert_eq!(code, 1);
    assert!(stderr.contains("dispatch rule `no-such-rule` is named"), "{stderr}");
}

#[test]
fn the_shift_run_sets_the_plan_beside_what_was_tested() {
    let out = tempfile::tempdir().unwrap();
    let history = tempfile::tempdir().unwrap();
    std::fs::copy(
        workspace_root().join("sample_lots/history/switching.jsonl"),
        history.path().join("switching.jsonl"),
    )
    .unwrap();
    let history_arg = history.path().to_str().unwrap();
    let (code, _, stderr) =
        plan_json(&sample_shift_dir(), &demo_plant(), out.path(), &["--history", history_arg]);
    assert_eq!(code, 3, "{stderr}");
    let shift = twistlot()
        .args(["shift", sample_shift_dir().to_str().unwrap(), "--plant", demo_plant().to_str().unwrap()])
        .args(["--out", out.path().to_str().unwrap(), "--history", history_arg])
        .output()
        .unwrap();
    assert_eq!(shift.status.code(), Some(3), "{}", String::from_utf8_lossy(&shift.stderr));
    let summary: Value =
        serde_json::from_str(&std::fs::read_to_string(out.path().join("summary.json")).unwrap()).unwrap();
    let comparison = &summary["plan"];
    assert!(comparison["plan_file"].as_str().unwrap().ends_with("plan.json"));
    let rows = comparison["lots"].as_array().unwrap();
    assert_eq!(rows.len(), 8);
    let row = |lot: &str| rows.iter().find(|r| r["lot"] == lot).unwrap();
    // Planned on RIG-D (RIG-C's calibration runs out first), tested on RIG-C all the same.
    let off = row("L2612-041");
    assert_eq!((off["planned_rig"].as_str(), off["tested_rigs"][0].as_str()), (Some("RIG-D"), Some("RIG-C")));
    assert_eq!(off["tested"], 31, "32 exports, one of them cut off");
    let refused = comparison["tested_on_refused_rigs"].as_array().unwrap();
    assert_eq!(refused.len(), 1);
    assert_eq!((refused[0]["lot"].as_str(), refused[0]["rig"].as_str()), (Some("L2612-041"), Some("RIG-C")));
    assert!(refused[0]["reasons"][0].as_str().unwrap().contains("calibration runs out"));
    assert_eq!(row("L2612-040")["remarks"].as_array().unwrap().len(), 0, "tested as planned");
    assert!(row("L2612-060")["planned_rig"].is_null() && row("L2612-060")["unplanned_reason"].is_string());
    let html = std::fs::read_to_string(out.path().join("shift_summary.html")).unwrap();
    assert!(
        html.contains("Plan against reality") && html.contains("1 OFF PLAN"),
        "the summary shows the comparison"
    );
}
