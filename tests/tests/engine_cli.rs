//! The shift engine's promises, through the real binary: it runs from any folder with
//! the source tree out of reach, a copied export or a retest never counts twice, and a
//! bad value for an enum option is a usage error.

use serde_json::Value;
use std::path::{Path, PathBuf};
use twistlot_tests::{twistlot, twistlot_path, workspace_root};

fn copy_tree(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for entry in std::fs::read_dir(from).unwrap() {
        let entry = entry.unwrap();
        let target = to.join(entry.file_name());
        if entry.file_type().unwrap().is_dir() {
            copy_tree(&entry.path(), &target);
        } else {
            std::fs::copy(entry.path(), &target).unwrap();
        }
    }
}

fn dispositions(summary: &Value) -> Vec<(String, String, u64)> {
    summary["lots"]
        .as_array()
        .unwrap()
        .iter()
        .map(|l| {
            (
                l["lot"].as_str().unwrap().to_string(),
                l["disposition"].as_str().unwrap().to_string(),
                l["tested"].as_u64().unwrap(),
            )
        })
        .collect()
}

fn read_summary(out: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap()
}

#[test]
fn a_copied_binary_runs_the_demo_shift_away_from_the_source_tree() {
    let root = tempfile::tempdir().unwrap();
    // The binary alone, in a folder of its own.
    let bin_dir = root.path().join("bin");
    std::fs::create_dir_all(&bin_dir).unwrap();
    let binary = bin_dir.join("twistlot");
    std::fs::copy(twistlot_path(), &binary).unwrap();
    // A copy of the demo plant; the run writes its switching record there, not in the tree.
    let plant_copy = root.path().join("plant");
    copy_tree(&workspace_root().join("sample_lots"), &plant_copy);
    let work = root.path().join("somewhere-else");
    std::fs::create_dir_all(&work).unwrap();
    let out = work.join("reports");
    let output = std::process::Command::new(&binary)
        .arg("shift")
        .arg(plant_copy.join("shifts/2026-12-01-late"))
        .arg("--out")
        .arg(&out)
        .current_dir(&work)
        .env_remove("CARGO_MANIFEST_DIR")
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(3), "{}", String::from_utf8_lossy(&output.stderr));
    let away = read_summary(&out);

    // The same shift run in the source tree, against a copy of the shipped record.
    let history = tempfile::tempdir().unwrap();
    std::fs::copy(
        workspace_root().join("sample_lots/history/switching.jsonl"),
        history.path().join("switching.jsonl"),
    )
    .unwrap();
    let home_out = tempfile::tempdir().unwrap();
    twistlot()
        .args(["shift", "sample_lots/shifts/2026-12-01-late", "--history"])
        .arg(history.path())
        .arg("--out")
        .arg(home_out.path())
        .assert()
        .code(3);
    let home = read_summary(home_out.path());
    assert_eq!(dispositions(&away), dispositions(&home));
    assert_eq!(away["files_accepted"], home["files_accepted"]);
    // The demo plant's own plugins worked away from home: the gantry rig's converter read its files.
    assert!(away["files_rejected"]
        .as_array()
        .unwrap()
        .iter()
        .all(|r| !r["file"].as_str().unwrap().ends_with(".tqj")));
    // Reports were written from the built-in templates.
    let html = std::fs::read_to_string(out.join("shift_summary.html")).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>") && html.contains("L2612-031"));
    for lot in away["lots"].as_array().unwrap() {
        let report = std::fs::read_to_string(out.join(lot["report_html"].as_str().unwrap())).unwrap();
        // Charts drawn by the built-in code: a strip chart per characteristic, curves, OC
        // (a lot nothing was tested of has only the OC chart of its plan).
        let least = if lot["tested"] == 0 { 1 } else { 3 };
        assert!(report.matches("<svg ").count() >= least, "{}", lot["lot"]);
    }
    // And `plugins` lists the built-ins from there too.
    let listed = std::process::Command::new(&binary)
        .args(["plugins", "--format", "json"])
        .current_dir(&work)
        .output()
        .unwrap();
    assert_eq!(listed.status.code(), Some(0));
    let rows: Vec<Value> = serde_json::from_slice(&listed.stdout).unwrap();
    assert!(rows.iter().any(|r| r["name"] == "korvel-tab" && r["source"] == "built in"));
}

/// A native export of part TS-2210 in lot `lot`, started at `started`, with spring rate `rate`.
fn export(serial: &str, lot: &str, started: &str, rate: f64) -> String {
    let mut text = format!(
        "# serial: {serial}\n# part: TS-2210\n# lot: {lot}\n# rig: RIG-N\n# started: {started}\nangle_deg,torque_nmm\n"
    );
    for k in 0..=180 {
        text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 1.004));
    }
    for k in (0..180).rev() {
        text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 0.996));
    }
    text
}

fn shift_folder(root: &Path, name: &str) -> PathBuf {
    let dir = root.join(name);
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("lots.yaml"), "lots:\n  - { lot: L-D, part: TS-2210, quantity: 20 }\n").unwrap();
    for i in 0..20 {
        std::fs::write(
            dir.join(format!("p{i:02}.csv")),
            export(&format!("D-{i:02}"), "L-D", "2026-12-01T10:00", 29.0),
        )
        .unwrap();
    }
    dir
}

fn run(shift: &Path, out: &Path) -> Value {
    let plant = shift.parent().unwrap().join("plant.yaml");
    let parts = workspace_root().join("sample_lots/parts");
    std::fs::write(&plant, format!("plant: test plant\nparts: {}\n", parts.display())).unwrap();
    twistlot().arg("shift").arg(shift).arg("--plant").arg(&plant).arg("--out").arg(out).assert().code(0);
    read_summary(out)
}

#[test]
fn a_copied_export_and_a_retest_do_not_change_the_tested_count() {
    let root = tempfile::tempdir().unwrap();
    let plain = run(&shift_folder(root.path(), "plain"), &root.path().join("out-plain"));
    let plain_lot = &plain["lots"][0];
    assert_eq!(plain_lot["tested"], 20);

    let dir = shift_folder(root.path(), "messy");
    // The same file saved twice, under another name in another folder.
    std::fs::create_dir_all(dir.join("usb")).unwrap();
    std::fs::copy(dir.join("p03.csv"), dir.join("usb/p03 (copy).csv")).unwrap();
    // D-05 tested again later, out of tolerance; the retest counts, the first test does not.
    std::fs::write(dir.join("z-retest.csv"), export("D-05", "L-D", "2026-12-01T11:30", 35.0)).unwrap();
    let messy = run(&dir, &root.path().join("out-messy"));
    let lot = &messy["lots"][0];
    assert_eq!(lot["tested"], 20, "{lot}");
    assert_eq!(lot["failed"], 1, "only the retest of D-05 fails: {lot}");
    assert_eq!(messy["files_accepted"], 22);
    let duplicates = messy["duplicates"].as_array().unwrap();
    assert_eq!(duplicates.len(), 1);
    assert!(duplicates[0]["file"].as_str().unwrap().ends_with("p03 (copy).csv"));
    assert!(duplicates[0]["same_as"].as_str().unwrap().ends_with("p03.csv"));
    assert_eq!(lot["duplicates"], messy["duplicates"]);
    let superseded = lot["superseded"].as_array().unwrap();
    assert_eq!(superseded.len(), 1);
    assert_eq!(superseded[0]["serial"], "D-05");
    assert!(superseded[0]["file"].as_str().unwrap().ends_with("p05.csv"));
    assert!(superseded[0]["by"].as_str().unwrap().ends_with("z-retest.csv"));

    // The lot report and tests.csv say which files do not count, and why.
    let out = root.path().join("out-messy");
    let html = std::fs::read_to_string(out.join(lot["report_html"].as_str().unwrap())).unwrap();
    assert!(html.contains("Files not counted (2)") && html.contains("was tested again"), "lot report");
    let csv = twistlot_tests::parse_csv(&std::fs::read_to_string(out.join("tests.csv")).unwrap()).unwrap();
    let column = csv[0].iter().position(|h| h == "status").expect("a status column");
    let statuses: Vec<&str> = csv[1..].iter().map(|row| row[column].as_str()).collect();
    assert_eq!(statuses.iter().filter(|s| **s == "duplicate").count(), 1);
    assert_eq!(statuses.iter().filter(|s| **s == "superseded").count(), 1);
    assert_eq!(statuses.iter().filter(|s| **s == "counted").count(), 20);
}

#[test]
fn an_enum_option_with_a_bad_value_is_a_usage_error() {
    for args in [
        &["sampling", "--lot-size", "240", "--aql", "1.0", "--severity", "bogus"][..],
        &["sampling", "--lot-size", "240", "--aql", "1.0", "--level", "IV"],
        &["evaluate", ".", "--format", "xml"],
    ] {
        let output = twistlot().args(args).output().unwrap();
        assert_eq!(output.status.code(), Some(2), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
        let stderr = String::from_utf8_lossy(&output.stderr);
        assert!(stderr.contains("invalid value"), "{stderr}");
    }
}
