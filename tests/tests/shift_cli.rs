//! `twistlot shift` on the shipped demo shift and on hand-made shifts, through the real binary.

use serde_json::Value;
use std::path::Path;
use twistlot_tests::{sample_shift_dir, twistlot, workspace_root};

fn run_shift(shift: &Path, plant: &Path, out: &Path) -> (i32, Value) {
    let output = twistlot()
        .args([
            "shift",
            shift.to_str().unwrap(),
            "--plant",
            plant.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    let summary = std::fs::read_to_string(out.join("summary.json")).unwrap_or_else(|e| {
        panic!("no summary.json ({e}); stderr: {}", String::from_utf8_lossy(&output.stderr))
    });
    (output.status.code().unwrap_or(-1), serde_json::from_str(&summary).unwrap())
}

fn lot<'a>(summary: &'a Value, id: &str) -> &'a Value {
    summary["lots"]
        .as_array()
        .unwrap()
        .iter()
        .find(|l| l["lot"] == id)
        .unwrap_or_else(|| panic!("no lot {id}"))
}

#[test]
fn the_demo_shift_is_accounted_for_decided_and_reported() {
    let out = tempfile::tempdir().unwrap();
    let plant = workspace_root().join("sample_lots/plant.yaml");
    let (code, summary) = run_shift(&sample_shift_dir(), &plant, out.path());
    assert_eq!(code, 3, "two exports are broken on purpose");

    // Every export is accounted for.
    let total = summary["files_total"].as_u64().unwrap();
    let accepted = summary["files_accepted"].as_u64().unwrap();
    let rejected = summary["files_rejected"].as_array().unwrap();
    assert_eq!(total, accepted + rejected.len() as u64);
    let exports_on_disk = walk(&sample_shift_dir()).len() as u64 - 1; // minus lots.yaml
    assert_eq!(total, exports_on_disk);
    assert_eq!(rejected.len(), 2);
    assert!(rejected.iter().all(|r| r["reason"].as_str().unwrap().contains("line ")));

    // One report per lot, both formats.
    let lots = summary["lots"].as_array().unwrap();
    assert_eq!(lots.len(), 6);
    for l in lots {
        for key in ["report_html", "report_md"] {
            let path = out.path().join(l[key].as_str().unwrap());
            assert!(path.is_file(), "{} missing", path.display());
        }
        for key in ["lot", "part", "disposition", "tested", "failed", "invalid", "plan", "rate"] {
            assert!(l.get(key).is_some(), "lot field {key} missing");
        }
        for key in ["code_letter", "sample_size", "accept", "reject", "severity"] {
            assert!(l["plan"].get(key).is_some(), "plan field {key} missing");
        }
        for key in ["mean", "sd", "cp", "cpk", "cpk_lower_95", "pp", "ppk", "normality_p"] {
            assert!(l["rate"].get(key).is_some(), "rate field {key} missing");
        }
    }

    // The planted situations end where they should.
    assert_eq!(lot(&summary, "L2612-031")["disposition"], "accept");
    assert_eq!(lot(&summary, "L2612-032")["disposition"], "accept", "one minor defective is within Ac");
    assert_eq!(lot(&summary, "L2612-040")["disposition"], "reject", "three free-angle defectives reach Re 3");
    let held = lot(&summary, "L2612-041");
    assert_eq!(held["disposition"], "hold");
    assert!(
        held["grounds"].as_array().unwrap().iter().any(|g| g.as_str().unwrap().contains("invalid")),
        "{held}"
    );
    assert_eq!(lot(&summary, "L2612-050")["disposition"], "accept");
    assert_eq!(lot(&summary, "L2612-051")["disposition"], "reject");

    // The lot report is one self-contained page with three inline charts and the cautions.
    let html =
        std::fs::read_to_string(out.path().join(lot(&summary, "L2612-041")["report_html"].as_str().unwrap()))
            .unwrap();
    assert_eq!(html.matches("<svg").count(), 3, "three charts");
    assert!(!html.contains("<link") && !html.contains("<script src"), "self-contained");
    assert!(html.contains("L2612-041") && html.contains("TS-0815"));
    assert!(html.contains("stores energy"), "the cautions are printed");
    assert!(out.path().join("shift_summary.html").is_file());

    // tests.csv has one row per evaluated test; the shipped sink appended one line per lot.
    let csv = std::fs::read_to_string(out.path().join("tests.csv")).unwrap();
    assert_eq!(csv.lines().count() as u64, 1 + accepted);
    let sink = std::fs::read_to_string(out.path().join("lots.jsonl")).unwrap();
    assert_eq!(sink.lines().count(), 6);
    let first: Value = serde_json::from_str(sink.lines().next().unwrap()).unwrap();
    assert_eq!(first["lot"]["lot"], "L2612-031");
    assert_eq!(first["tests"].as_array().unwrap().len(), 50);
    assert!(summary["sink_failures"].as_array().unwrap().is_empty());
}

fn walk(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut out = Vec::new();
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            out.extend(walk(&path));
        } else {
            out.push(path);
        }
    }
    out
}

/// A small shift of native exports of TS-2210, one of them with a hostile serial.
fn small_shift(dir: &Path) {
    std::fs::create_dir_all(dir).unwrap();
    std::fs::write(dir.join("lots.yaml"), "lots:\n  - { lot: L-X, part: TS-2210, quantity: 20 }\n").unwrap();
    for i in 0..20 {
        let serial = if i == 0 { "<script>alert(1)</script>".to_string() } else { format!("X-{i:02}") };
        let mut text =
            format!("# serial: {serial}\n# part: TS-2210\n# lot: L-X\n# rig: RIG-N\nangle_deg,torque_nmm\n");
        // The hostile one is also out of tolerance, so the report lists it among the flagged parts.
        let rate = if i == 0 { 35.0 } else { 29.0 + 0.01 * i as f64 };
        for k in 0..=180 {
            text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 1.004));
        }
        for k in (0..180).rev() {
            text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 0.996));
        }
        std::fs::write(dir.join(format!("x{i:02}.csv")), text).unwrap();
    }
}

fn plant_with(dir: &Path, extra: &str) -> std::path::PathBuf {
    let parts = workspace_root().join("sample_lots/parts");
    let path = dir.join("plant.yaml");
    std::fs::write(&path, format!("plant: test plant\nparts: {}\n{extra}", parts.display())).unwrap();
    path
}

#[test]
fn text_from_exports_is_escaped_in_the_html() {
    let root = tempfile::tempdir().unwrap();
    let shift = root.path().join("shift-a");
    small_shift(&shift);
    let plant = plant_with(root.path(), "");
    let out = root.path().join("out");
    let (code, summary) = run_shift(&shift, &plant, &out);
    assert_eq!(code, 0);
    assert_eq!(summary["files_total"], 20);
    let html =
        std::fs::read_to_string(out.join(lot(&summary, "L-X")["report_html"].as_str().unwrap())).unwrap();
    assert!(!html.contains("<script>alert(1)</script>"), "a serial became live markup");
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"), "the serial is shown escaped");
}

#[test]
fn a_failing_sink_is_reported_and_changes_nothing() {
    let root = tempfile::tempdir().unwrap();
    let shift = root.path().join("shift-b");
    small_shift(&shift);
    let plugins = root.path().join("plugins");
    std::fs::create_dir_all(&plugins).unwrap();
    std::fs::write(
        plugins.join("broken-sink.yaml"),
        "name: broken-sink\nkind: sink\napi: 1\ndescription: always fails\nexec:\n  command: [python3, -c, \"import sys; sys.exit('plant system offline')\"]\n  timeout_s: 10\n  protocol: 1\n",
    )
    .unwrap();
    let good_out = root.path().join("good");
    let (_, good) = run_shift(&shift, &plant_with(root.path(), ""), &good_out);
    let plant = plant_with(root.path(), &format!("plugins: [{}]\nsinks: [broken-sink]\n", plugins.display()));
    let out = root.path().join("out");
    let (code, summary) = run_shift(&shift, &plant, &out);
    assert_eq!(code, 0);
    let failures = summary["sink_failures"].as_array().unwrap();
    assert_eq!(failures.len(), 1);
    assert!(
        failures[0].as_str().unwrap().contains("broken-sink")
            && failures[0].as_str().unwrap().contains("plant system offline")
    );
    assert_eq!(summary["lots"][0]["disposition"], good["lots"][0]["disposition"]);
    assert_eq!(summary["lots"][0]["grounds"], good["lots"][0]["grounds"]);
    assert!(out.join("summary.json").is_file() && out.join("tests.csv").is_file());
}

#[test]
fn a_missing_lot_list_is_a_clear_error() {
    let root = tempfile::tempdir().unwrap();
    let shift = root.path().join("shift-c");
    small_shift(&shift);
    std::fs::remove_file(shift.join("lots.yaml")).unwrap();
    let output = twistlot()
        .args(["shift", shift.to_str().unwrap(), "--plant", plant_with(root.path(), "").to_str().unwrap()])
        .args(["--out", root.path().join("out").to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&output.stderr).contains("lots.yaml"));
}
