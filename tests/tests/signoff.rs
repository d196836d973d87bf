//! What a customer signs: every lot of the exports accounted for, each lot's own
//! unreadable files, refusals that say what to fix, exit codes that mean the same in
//! every command, records keyed by lot, and names on the approval block only where a
//! person gave them. Through the real binary, on small hand-made shifts.

use serde_json::Value;
use std::path::{Path, PathBuf};
use twistlot_tests::{twistlot, workspace_root};

/// A native export of TS-2210 (29.2 N·mm/° ±8 %, rig RIG-N) in `lot`; `rate` sets the spring.
fn export(serial: &str, lot: &str, rig: &str, rate: f64) -> String {
    let mut text =
        format!("# serial: {serial}\n# part: TS-2210\n# lot: {lot}\n# rig: {rig}\n# operator: Op (invented)\n# started: 2026-12-01T10:{:02}\nangle_deg,torque_nmm\n", serial.len() % 60);
    for k in 0..=180 {
        text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 1.004));
    }
    for k in (0..180).rev() {
        text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 0.996));
    }
    text
}

/// A shift folder with a lot list naming `listed` (TS-2210, 20 parts each) and 20 good
/// exports of each lot in `exported`.
fn shift(dir: &Path, listed: &[&str], exported: &[&str]) {
    std::fs::create_dir_all(dir).unwrap();
    let mut list = String::from("lots:\n");
    for lot in listed {
        list.push_str(&format!("  - {{ lot: {lot}, part: TS-2210, quantity: 20 }}\n"));
    }
    std::fs::write(dir.join("lots.yaml"), list).unwrap();
    for lot in exported {
        for i in 0..20 {
            let serial = format!("{lot}-{i:03}");
            std::fs::write(
                dir.join(format!("{serial}.csv")),
                export(&serial, lot, "RIG-N", 29.0 + 0.01 * i as f64),
            )
            .unwrap();
        }
    }
}

/// A plant config over the shipped parts (or `parts`), with `extra` lines.
fn plant(dir: &Path, parts: Option<&Path>, extra: &str) -> PathBuf {
    let parts = parts.map(Path::to_path_buf).unwrap_or_else(|| workspace_root().join("sample_lots/parts"));
    let path = dir.join("plant.yaml");
    std::fs::write(&path, format!("plant: test plant (invented)\nparts: {}\n{extra}", parts.display()))
        .unwrap();
    path
}

fn run(shift: &Path, plant: &Path, out: &Path, extra: &[&str]) -> std::process::Output {
    twistlot()
        .args([
            "shift",
            shift.to_str().unwrap(),
            "--plant",
            plant.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ])
        .args(extra)
        .output()
        .unwrap()
}

fn read_summary(out: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap()
}

fn lot<'a>(summary: &'a Value, id: &str) -> &'a Value {
    summary["lots"]
        .as_array()
        .unwrap()
        .iter()
        .find(|l| l["lot"] == id)
        .unwrap_or_else(|| panic!("no lot {id}"))
}

fn stderr(output: &std::process::Output) -> String {
    String::from_utf8_lossy(&output.stderr).to_string()
}

#[test]
fn a_lot_found_only_in_the_exports_is_shown_not_decided() {
    let root = tempfile::tempdir().unwrap();
    let dir = root.path().join("s");
    shift(&dir, &["L-A"], &["L-A", "L-B"]);
    let out = root.path().join("out");
    let output = run(&dir, &plant(root.path(), None, "rigs: [{ name: RIG-N, format: native }]\n"), &out, &[]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let summary = read_summary(&out);
    assert_eq!(summary["lots"].as_array().unwrap().len(), 1, "only the listed lot is decided");
    let unlisted = &summary["unlisted_lots"][0];
    assert_eq!((unlisted["lot"].as_str(), unlisted["tested"].as_u64()), (Some("L-B"), Some(20)));
    let html = std::fs::read_to_string(out.join("shift_summary.html")).unwrap();
    assert!(
        html.contains("<h2>Lots not on the lot list (1)</h2>")
            && html.contains("<td class=\"text\">L-B</td>")
    );
    assert!(String::from_utf8_lossy(&output.stdout).contains("not on the lot list: lot L-B (20 test(s)"));
}

#[test]
fn a_lot_report_lists_its_own_unreadable_files_and_the_summary_lists_all() {
    let root = tempfile::tempdir().unwrap();
    let dir = root.path().join("s");
    shift(&dir, &["L-A", "L-B"], &["L-A", "L-B"]);
    // L-A's broken file names its lot in its metadata; L-B's names it only in its file name;
    // the third names nothing at all.
    let mut broken = export("L-A-900", "L-A", "RIG-N", 29.0);
    broken.push_str("1,2x\n");
    std::fs::write(dir.join("L-A-900.csv"), broken).unwrap();
    std::fs::write(dir.join("L-B-901.csv"), "not an export at all\n").unwrap();
    std::fs::write(dir.join("stray.csv"), "nor this\n").unwrap();
    let out = root.path().join("out");
    let output = run(&dir, &plant(root.path(), None, "rigs: [{ name: RIG-N, format: native }]\n"), &out, &[]);
    assert_eq!(output.status.code(), Some(3), "{}", stderr(&output));
    let summary = read_summary(&out);
    assert_eq!(summary["files_rejected"].as_array().unwrap().len(), 3);
    let a = &lot(&summary, "L-A")["rejected_files"];
    assert_eq!(a.as_array().unwrap().len(), 1);
    assert_eq!((a[0]["lot"].as_str(), a[0]["lot_from"].as_str()), (Some("L-A"), Some("metadata")));
    let b = &lot(&summary, "L-B")["rejected_files"];
    assert_eq!((b[0]["lot"].as_str(), b[0]["lot_from"].as_str()), (Some("L-B"), Some("file-name")));

    let report_a = std::fs::read_to_string(out.join("lots/L-A.html")).unwrap();
    assert!(
        report_a.contains("L-A-900.csv")
            && !report_a.contains("L-B-901.csv")
            && !report_a.contains("stray.csv")
    );
    assert!(
        report_a.contains("1 file(s) of the shift could not be read and could not be assigned to any lot")
    );
    let summary_html = std::fs::read_to_string(out.join("shift_summary.html")).unwrap();
    for file in ["L-A-900.csv", "L-B-901.csv", "stray.csv"] {
        assert!(summary_html.contains(file), "the summary lists {file}");
    }
}

#[test]
fn the_same_lot_decided_again_elsewhere_replaces_its_record_and_sink_line() {
    let root = tempfile::tempdir().unwrap();
    let history = root.path().join("history");
    std::fs::create_dir_all(&history).unwrap();
    let plugins = workspace_root().join("sample_lots/plugins");
    let plant = plant(
        root.path(),
        None,
        &format!(
            "history: {}\nplugins: [{}]\nsinks: [append-jsonl]\nrigs: [{{ name: RIG-N, format: native }}]\n",
            history.display(),
            plugins.display()
        ),
    );
    let first = root.path().join("2026-12-01-late");
    shift(&first, &["L-A"], &["L-A"]);
    let out = root.path().join("out");
    assert_eq!(run(&first, &plant, &out, &[]).status.code(), Some(0));
    // The same folder copied under another name, decided again into the same output folder.
    let copy = root.path().join("late-rerun");
    std::fs::create_dir_all(&copy).unwrap();
    for entry in std::fs::read_dir(&first).unwrap() {
        let path = entry.unwrap().path();
        std::fs::copy(&path, copy.join(path.file_name().unwrap())).unwrap();
    }
    let output = run(&copy, &plant, &out, &[]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    // The history keeps both shifts' files, but switching counts lot L-A once, where it
    // was decided last.
    let output = twistlot().args(["switching", "--format", "json", "--plant"]).arg(&plant).output().unwrap();
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&output.stdout).unwrap();
    let row = rows.iter().find(|r| r["part"] == "TS-2210").unwrap();
    assert_eq!(row["recorded_lots"], 1, "lot L-A is counted once: {row}");
    assert_eq!(row["lots_on_severity"], 1, "{row}");
    let sink = std::fs::read_to_string(out.join("lots.jsonl")).unwrap();
    assert_eq!(sink.lines().count(), 1, "the example sink keeps one line per lot: {sink}");
}

#[test]
fn a_tolerance_without_its_unit_holds_that_parts_lots_only() {
    let root = tempfile::tempdir().unwrap();
    let parts = root.path().join("parts");
    std::fs::create_dir_all(&parts).unwrap();
    for entry in std::fs::read_dir(workspace_root().join("sample_lots/parts")).unwrap() {
        let path = entry.unwrap().path();
        let mut text = std::fs::read_to_string(&path).unwrap();
        if path.ends_with("TS-0815.yaml") {
            text = text.replace("tolerance: \"±10%\", class: major", "tolerance: \"10\", class: major");
        }
        std::fs::write(parts.join(path.file_name().unwrap()), text).unwrap();
    }
    let dir = root.path().join("s");
    shift(&dir, &["L-A"], &["L-A"]);
    let list = std::fs::read_to_string(dir.join("lots.yaml")).unwrap();
    std::fs::write(dir.join("lots.yaml"), format!("{list}  - {{ lot: L-C, part: TS-0815, quantity: 50 }}\n"))
        .unwrap();
    let out = root.path().join("out");
    let output =
        run(&dir, &plant(root.path(), Some(&parts), "rigs: [{ name: RIG-N, format: native }]\n"), &out, &[]);
    assert_eq!(output.status.code(), Some(3), "a spec was rejected: {}", stderr(&output));
    let err = stderr(&output);
    assert!(err.contains("rejected spec:") && err.contains("TS-0815.yaml, line 19"), "{err}");
    let summary = read_summary(&out);
    assert_eq!(lot(&summary, "L-A")["disposition"], "accept", "the other part's lot is decided");
    let held = lot(&summary, "L-C");
    assert_eq!(held["disposition"], "hold");
    let reason = held["decided_by"].as_str().unwrap();
    assert!(
        reason.contains("does not load")
            && reason.contains("field `characteristics.rate_nmm_per_deg`")
            && reason.contains("`±10%`"),
        "{reason}"
    );
    assert_eq!(summary["spec_problems"].as_array().unwrap().len(), 1);

    // Judged against that one file, the refusal stops the command (it cannot run without it).
    let output = twistlot()
        .args(["evaluate", dir.to_str().unwrap(), "--spec", parts.join("TS-0815.yaml").to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(1));
    assert!(stderr(&output).contains("line 19") && stderr(&output).contains("no unit and no `%`"));
}

#[test]
fn a_shift_without_exports_is_refused_not_held() {
    let root = tempfile::tempdir().unwrap();
    let dir = root.path().join("empty-shift");
    shift(&dir, &["L-A"], &[]);
    let out = root.path().join("out");
    let output = run(&dir, &plant(root.path(), None, ""), &out, &[]);
    assert_eq!(output.status.code(), Some(1));
    assert!(stderr(&output).contains("holds no rig exports (only"), "{}", stderr(&output));
    assert!(!out.join("summary.json").exists(), "nothing is decided, not even held");
}

#[test]
fn an_export_from_a_rig_the_plant_does_not_list_is_warned_or_refused() {
    let root = tempfile::tempdir().unwrap();
    let dir = root.path().join("s");
    shift(&dir, &["L-A"], &["L-A"]);
    std::fs::write(dir.join("L-A-050.csv"), export("L-A-050", "L-A", "RIG-Q", 29.1)).unwrap();
    let out = root.path().join("warned");
    let output = run(&dir, &plant(root.path(), None, "rigs: [{ name: RIG-N, format: native }]\n"), &out, &[]);
    assert_eq!(output.status.code(), Some(0), "a warning rejects nothing");
    assert!(
        stderr(&output).contains("warning: rig `RIG-Q` is not in the plant config's rig list: 1 export(s)"),
        "{}",
        stderr(&output)
    );
    let summary = read_summary(&out);
    assert_eq!(summary["warnings"].as_array().unwrap().len(), 1);
    assert_eq!(lot(&summary, "L-A")["tested"], 21);
    let rigs = lot(&summary, "L-A")["rigs"].as_array().unwrap().clone();
    assert!(rigs.iter().any(|r| r["rig"] == "RIG-Q" && r["listed"] == false));

    let out = root.path().join("refused");
    let config = "rigs: [{ name: RIG-N, format: native }]\nunknown_rigs: refuse\n";
    let output = run(&dir, &plant(root.path(), None, config), &out, &[]);
    assert_eq!(output.status.code(), Some(3));
    let summary = read_summary(&out);
    let rejected = &summary["files_rejected"][0];
    assert!(rejected["file"].as_str().unwrap().ends_with("L-A-050.csv"));
    assert!(rejected["reason"].as_str().unwrap().contains("`unknown_rigs: refuse`"));
    assert_eq!(lot(&summary, "L-A")["tested"], 20);
}

#[test]
fn names_on_the_approval_block_come_from_the_config_or_the_command_line_only() {
    let root = tempfile::tempdir().unwrap();
    let dir = root.path().join("s");
    shift(&dir, &["L-A"], &["L-A"]);
    let config = "rigs: [{ name: RIG-N, format: native }]\napproval: { tested_by: \"T. Tester (invented)\", reviewed_by: \"R. Config (invented)\" }\n";
    let out = root.path().join("out");
    let output =
        run(&dir, &plant(root.path(), None, config), &out, &["--reviewed-by", "R. Line <QA> (invented)"]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let html = std::fs::read_to_string(out.join("lots/L-A.html")).unwrap();
    assert!(html.contains("<td class=\"line\">T. Tester (invented)</td>"));
    assert!(html.contains("<td class=\"line\">R. Line &lt;QA&gt; (invented)</td>"), "the command line wins");
    assert!(!html.contains("R. Config"));
    // Released by: nobody was named, so name, signature and date are left blank.
    assert_eq!(html.matches("<td class=\"line\"></td>").count(), 2 + 2 + 3);
    let md = std::fs::read_to_string(out.join("lots/L-A.md")).unwrap();
    assert!(
        md.contains("| Tested by | T. Tester (invented) |")
            && md.contains("| Released by | ____________________ |")
    );
}

/// Exit status of `twistlot ARGS...`.
fn code(args: &[&str]) -> Option<i32> {
    twistlot().args(args).output().unwrap().status.code()
}

#[test]
fn exit_codes_mean_the_same_in_every_command() {
    let root = tempfile::tempdir().unwrap();
    let missing = root.path().join("no-such-thing");
    let missing = missing.to_str().unwrap();
    let good = root.path().join("good.csv");
    std::fs::write(&good, export("G-1", "L-A", "RIG-N", 29.0)).unwrap();
    let good = good.to_str().unwrap();
    let plant_file = workspace_root().join("sample_lots/plant.yaml");
    let plant_arg = plant_file.to_str().unwrap();

    // 1: the command could not run: nothing named exists, or a file it needs is missing.
    assert_eq!(code(&["ingest", missing]), Some(1));
    assert_eq!(code(&["evaluate", missing]), Some(1));
    assert_eq!(code(&["shift", missing, "--plant", plant_arg]), Some(1));
    assert_eq!(code(&["evaluate", good, "--spec", missing]), Some(1));
    assert_eq!(code(&["switching", "--plant", missing]), Some(1));
    // 3: it ran, and some inputs were rejected (each listed with its reason).
    assert_eq!(code(&["ingest", good, missing]), Some(3));
    assert_eq!(code(&["evaluate", good, missing]), Some(3));
    // 0: everything read.
    assert_eq!(code(&["ingest", good]), Some(0));
    assert_eq!(code(&["evaluate", good]), Some(0));
    assert_eq!(code(&["sampling", "--lot-size", "400", "--aql", "1.0"]), Some(0));
    // 2: the arguments themselves are wrong, in every command.
    for args in [
        vec!["ingest", good, "--format", "yaml"],
        vec!["evaluate", good, "--window", "0.9:0.1"],
        vec!["shift"],
        vec!["sampling", "--lot-size", "400", "--aql", "1.0", "--level", "IV"],
        vec!["switching", "--format", "xml"],
        vec!["plugins", "--format", "pdf"],
        vec!["frobnicate"],
    ] {
        assert_eq!(code(&args), Some(2), "{args:?}");
    }
}
