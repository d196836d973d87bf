//! `twistlot evaluate` on the shipped demo shift and on edge cases, through the real binary.

use serde_json::Value;
use twistlot_tests::{sample_shift_dir, twistlot, workspace_root};

fn evaluate_json(args: &[&str]) -> (i32, Vec<Value>) {
    let output = twistlot().arg("evaluate").args(args).args(["--format", "json"]).output().unwrap();
    let rows: Vec<Value> = serde_json::from_slice(&output.stdout)
        .unwrap_or_else(|e| panic!("not JSON ({e}): {}", String::from_utf8_lossy(&output.stdout)));
    (output.status.code().unwrap_or(-1), rows)
}

fn by_serial<'a>(rows: &'a [Value], serial: &str) -> &'a Value {
    rows.iter().find(|r| r["serial"] == serial).unwrap_or_else(|| panic!("no test for {serial}"))
}

fn failing_characteristics(row: &Value, verdict: &str) -> Vec<String> {
    row["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["verdict"] == verdict)
        .map(|f| f["characteristic"].as_str().unwrap().to_string())
        .collect()
}

#[test]
fn the_demo_shift_is_judged_part_by_part() {
    let plant = workspace_root().join("sample_lots/plant.yaml");
    let shift = sample_shift_dir();
    let (code, rows) = evaluate_json(&[shift.to_str().unwrap(), "--plant", plant.to_str().unwrap()]);
    // Two broken exports and the lot list are rejected, so the run says so.
    assert_eq!(code, 3);
    // 253 parts (torque curves and swings) and each rig's reference-spring check.
    assert_eq!(rows.len(), 257);
    let references: Vec<&Value> =
        rows.iter().filter(|r| r["serial"].as_str().unwrap().starts_with("REF-")).collect();
    assert_eq!(references.len(), 4);
    // A reference spring is judged against its certificate (in the shift run), not a part spec,
    // and its torque at the check angle is read.
    assert!(references
        .iter()
        .all(|r| r["verdict"].is_null() && r["findings"].as_array().unwrap().is_empty()));
    assert!(references.iter().all(|r| r["torque_nmm_at"].as_object().unwrap().len() == 1), "{references:?}");
    let rows: Vec<Value> =
        rows.into_iter().filter(|r| !r["serial"].as_str().unwrap().starts_with("REF-")).collect();
    for key in [
        "test_id",
        "file",
        "serial",
        "part",
        "lot",
        "rig",
        "rate_nmm_per_deg",
        "rate_r2",
        "rate_stderr_nmm_per_deg",
        "intercept_nmm",
        "free_angle_deg",
        "torque_nmm_at",
        "hysteresis_pct_at",
        "energy_loss_pct",
        "linearity_pct",
        "max_torque_nmm",
        "max_angle_deg",
        "verdict",
        "findings",
    ] {
        assert!(rows[0].get(key).is_some(), "field {key} missing");
    }
    // The planted defects are found, and nothing else fails.
    let high_friction = by_serial(&rows, "L2612-032-006");
    assert_eq!(high_friction["verdict"], "fail");
    assert!(failing_characteristics(high_friction, "fail").contains(&"hysteresis".to_string()));
    for serial in ["L2612-040-007", "L2612-040-023", "L2612-040-041"] {
        let row = by_serial(&rows, serial);
        assert!(failing_characteristics(row, "fail").contains(&"free_angle".to_string()), "{serial}");
    }
    let bound = by_serial(&rows, "L2612-051-009");
    assert!(failing_characteristics(bound, "fail").contains(&"linearity".to_string()));
    // A part the rig stopped short on is invalid, never pass.
    for serial in ["L2612-041-005", "L2612-041-014"] {
        let row = by_serial(&rows, serial);
        assert_eq!(row["verdict"], "invalid", "{serial}");
        assert!(failing_characteristics(row, "invalid").contains(&"torque@100".to_string()), "{serial}");
    }
    // The swing-tested part that stiffens with angle fails the amplitude-dependence limit.
    let stiffening = by_serial(&rows, "L2612-070-004");
    assert_eq!(failing_characteristics(stiffening, "fail"), ["amplitude_dependence"]);
    let failed: Vec<&str> =
        rows.iter().filter(|r| r["verdict"] != "pass").map(|r| r["serial"].as_str().unwrap()).collect();
    assert_eq!(failed.len(), 8, "{failed:?}");
    // The exec-converted rig's parts are judged like any other.
    let gantry = rows.iter().filter(|r| r["rig"] == "RIG-D").count();
    assert_eq!(gantry, 50);
}

#[test]
fn a_spec_file_judges_every_export_and_the_window_can_change() {
    let spec = workspace_root().join("sample_lots/parts/TS-2210.yaml");
    // The lot's own exports (the rig's folder also holds its reference-spring check).
    let mut files: Vec<String> = std::fs::read_dir(sample_shift_dir().join("rig-a"))
        .unwrap()
        .map(|e| e.unwrap().path().to_str().unwrap().to_string())
        .filter(|p| p.contains("L2612-031-"))
        .collect();
    files.sort();
    let lot: Vec<&str> = files.iter().map(String::as_str).collect();
    let (code, rows) = evaluate_json(&[lot.as_slice(), &["--spec", spec.to_str().unwrap()]].concat());
    assert_eq!(code, 0);
    assert_eq!(rows.len(), 50);
    assert!(rows.iter().all(|r| r["verdict"] == "pass"));
    let rate = rows[0]["rate_nmm_per_deg"].as_f64().unwrap();
    // The spec's rate is 29.2 N·mm/° ±8 %.
    assert!((29.2 * 0.92..=29.2 * 1.08).contains(&rate), "{rate}");
    // The window is 20–80 % of the tested deflection, which runs from the loading stroke's start to 90°.
    let start = rows[0]["deflection_deg"][0].as_f64().unwrap();
    assert!(start.abs() < 1.0, "{start}");
    let expected_lo = start + 0.2 * (90.0 - start);
    assert!((rows[0]["window_deg"][0].as_f64().unwrap() - expected_lo).abs() < 1e-9);

    let (_, whole) =
        evaluate_json(&[lot.as_slice(), &["--spec", spec.to_str().unwrap(), "--window", "0:1"]].concat());
    assert_eq!(whole[0]["window_deg"][0].as_f64().unwrap(), start);
    assert_eq!(whole[0]["window_deg"][1].as_f64().unwrap(), 90.0);
}

#[test]
fn without_a_spec_metrics_come_without_verdicts() {
    // Rig D's JSON exports are read by the demo plant's own converter plugin.
    let lot = sample_shift_dir().join("rig-d");
    let plugins = workspace_root().join("sample_lots/plugins");
    let (code, rows) = evaluate_json(&[lot.to_str().unwrap(), "--plugins", plugins.to_str().unwrap()]);
    assert_eq!(code, 0);
    // Lot L2612-050 and the rig's reference-spring check.
    assert_eq!(rows.len(), 51);
    assert!(rows.iter().all(|r| r["verdict"].is_null() && r["findings"].as_array().unwrap().is_empty()));
    assert!(rows.iter().all(|r| r["rate_nmm_per_deg"].as_f64().is_some()));
}

#[test]
fn a_part_without_a_spec_is_invalid_not_passed() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("# serial: X1\n# part: NO-SUCH-PART\nangle_deg,torque_nmm\n");
    for i in 0..=90 {
        text.push_str(&format!("{i},{}\n", 2.0 * i as f64));
    }
    std::fs::write(dir.path().join("x.csv"), text).unwrap();
    let plant = workspace_root().join("sample_lots/plant.yaml");
    let (_, rows) = evaluate_json(&[dir.path().to_str().unwrap(), "--plant", plant.to_str().unwrap()]);
    assert_eq!(rows[0]["verdict"], "invalid");
    assert!(rows[0]["findings"][0]["message"].as_str().unwrap().contains("NO-SUCH-PART"));
}

#[test]
fn a_bad_spec_names_its_file_line_and_field() {
    let dir = tempfile::tempdir().unwrap();
    let original = std::fs::read_to_string(workspace_root().join("sample_lots/parts/TS-2210.yaml")).unwrap();
    let broken = original.replace("max_angle_deg: 90", "max_angle_deg: ninety");
    let path = dir.path().join("bad.yaml");
    std::fs::write(&path, &broken).unwrap();
    let line = broken.lines().position(|l| l.contains("ninety")).unwrap() + 1;
    let output = twistlot()
        .args([
            "evaluate",
            sample_shift_dir().join("rig-a").to_str().unwrap(),
            "--spec",
            path.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(1));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("bad.yaml") && stderr.contains(&format!("line {line}")), "{stderr}");
    assert!(stderr.contains("test.max_angle_deg"), "{stderr}");
}

#[test]
fn the_table_ends_with_counts_and_the_caution() {
    let plant = workspace_root().join("sample_lots/plant.yaml");
    let output = twistlot()
        .args([
            "evaluate",
            sample_shift_dir().join("rig-c").to_str().unwrap(),
            "--plant",
            plant.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&output.stdout);
    // The lots' 81 tests and the rig's reference-spring check, which has no part verdict.
    assert!(stdout.contains("82 tests: 76 pass, 3 fail, 2 invalid; 1 files rejected."), "{stdout}");
    assert!(stdout.lines().any(|l| l.starts_with("REF-C-01") && l.contains("reference spring")), "{stdout}");
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("customer's drawing"), "{stderr}");
    assert!(stderr.contains("L2612-041-018.dat, line"), "{stderr}");
}
