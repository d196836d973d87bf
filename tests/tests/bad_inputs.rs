//! Every kind of bad input through the real binary. Each bad file sits in a folder
//! beside a good one, so each test also shows that the rest of the batch is still read.

use predicates::prelude::*;
use twistlot_tests::{ingest_json, row_for, twistlot, Batch};

/// Ingests a folder holding `name` (with `bytes`) and one good native export; checks the
/// good one is accepted, the bad one rejected, exit status 3; returns the bad one's reason.
fn rejected_beside_a_good_file(name: &str, bytes: &[u8]) -> String {
    rejected_beside_a_good_file_with(name, bytes, &[])
}

/// As [`rejected_beside_a_good_file`], with more arguments for `twistlot ingest`.
fn rejected_beside_a_good_file_with(name: &str, bytes: &[u8], extra: &[&std::ffi::OsStr]) -> String {
    let batch = Batch::new();
    let good = batch.write_good("good.csv", "GOOD-1", 9);
    let bad = batch.write(name, bytes);
    let mut args = vec![batch.path().as_os_str()];
    args.extend_from_slice(extra);
    let (code, rows) = ingest_json(&args);
    assert_eq!(code, 3, "{name}: one file rejected: {rows:#?}");
    assert_eq!(rows.len(), 2, "{name}: {rows:#?}");
    let good_row = row_for(&rows, &good);
    assert_eq!(good_row["status"], "accepted", "{name}: the good file is still read: {good_row}");
    assert_eq!(good_row["points"], 9);
    assert_eq!(good_row["metadata"]["serial"], "GOOD-1");
    let bad_row = row_for(&rows, &bad);
    assert_eq!(bad_row["status"], "rejected", "{name}: {bad_row}");
    assert_eq!(bad_row["points"], 0);
    bad_row["reason"].as_str().expect("a reason").to_string()
}

fn assert_has(reason: &str, parts: &[&str]) {
    for part in parts {
        assert!(reason.contains(part), "reason lacks `{part}`: {reason}");
    }
}

/// Encodes Korvel's Windows-1252 text (the characters used here are all one byte there).
fn windows_1252(text: &str) -> Vec<u8> {
    text.chars()
        .map(|c| match c {
            'ü' => 0xFC,
            '°' => 0xB0,
            '·' => 0xB7,
            c if c.is_ascii() => c as u8,
            other => panic!("no Windows-1252 byte for {other:?} in this helper"),
        })
        .collect()
}

#[test]
fn an_empty_file() {
    let reason = rejected_beside_a_good_file("empty.csv", b"");
    assert_has(&reason, &["empty"]);
}

#[test]
fn a_file_of_blank_lines_counts_as_empty() {
    let reason = rejected_beside_a_good_file("blank.csv", b"\n  \n\r\n");
    assert_has(&reason, &["empty"]);
}

#[test]
fn a_header_without_data_rows() {
    let reason = rejected_beside_a_good_file("header.csv", b"# serial: 1\nangle_deg,torque_nmm\n");
    assert!(reason.starts_with("line 2"), "{reason}");
    assert_has(&reason, &["no data", "`native`"]);
}

#[test]
fn a_non_numeric_cell() {
    let reason = rejected_beside_a_good_file("nonnum.csv", b"angle_deg,torque_nmm\n0,0\n1,2x\n");
    assert!(reason.starts_with("line 3, column `torque_nmm`"), "{reason}");
    assert_has(&reason, &["`2x`", "not a number", "`native`"]);
}

#[test]
fn a_nan_cell() {
    let reason = rejected_beside_a_good_file("nan.csv", b"angle_deg,torque_nmm\n0,0\n1,NaN\n");
    assert!(reason.starts_with("line 3, column `torque_nmm`"), "{reason}");
    assert_has(&reason, &["`NaN`", "finite"]);
}

#[test]
fn an_infinite_cell() {
    let reason = rejected_beside_a_good_file("inf.csv", b"angle_deg,torque_nmm\n0,inf\n");
    assert!(reason.starts_with("line 2, column `torque_nmm`"), "{reason}");
    assert_has(&reason, &["`inf`", "finite"]);
}

#[test]
fn a_number_too_large_for_a_double_is_not_finite() {
    let reason = rejected_beside_a_good_file("overflow.csv", b"angle_deg,torque_nmm\n0,0\n1e400,1\n");
    assert!(reason.starts_with("line 3, column `angle_deg`"), "{reason}");
    assert_has(&reason, &["`1e400`", "finite"]);
}

#[test]
fn a_truncated_last_line() {
    let reason = rejected_beside_a_good_file("trunc.csv", b"angle_deg,torque_nmm\n0,0\n1,");
    assert!(reason.starts_with("line 3"), "{reason}");
    assert_has(&reason, &["cut off"]);
    let reason = rejected_beside_a_good_file("trunc.csv", b"angle_deg,torque_nmm\n0,0\n1");
    assert!(reason.starts_with("line 3"), "{reason}");
    assert_has(&reason, &["cut off"]);
}

#[test]
fn an_empty_cell_inside_the_data() {
    let reason = rejected_beside_a_good_file("hole.csv", b"angle_deg,torque_nmm\n0,0\n,5\n1,2\n");
    assert!(reason.starts_with("line 3, column `angle_deg`"), "{reason}");
    assert_has(&reason, &["empty"]);
}

#[test]
fn a_missing_torque_column() {
    let text = "KORVEL DEMO-BENCH\r\nPrüfling=1\r\n*DATA*\r\nt [ms]\tWinkel [°]\tKraft [N]\r\n0\t0\t0\r\n";
    let reason = rejected_beside_a_good_file("a.txt", &windows_1252(text));
    assert!(reason.starts_with("line 4, column `Moment`"), "{reason}");
    // It lists what it found, decoded from Windows-1252.
    assert_has(&reason, &["torque", "Kraft [N]", "Winkel [°]", "`korvel-tab`"]);
}

#[test]
fn an_unknown_unit() {
    let text = "KORVEL DEMO-BENCH\r\n*DATA*\r\nt [ms]\tWinkel [°]\tMoment [kp·dm]\r\n0\t0\t0\r\n";
    let reason = rejected_beside_a_good_file("a.txt", &windows_1252(text));
    assert!(reason.starts_with("line 3"), "{reason}");
    assert_has(&reason, &["unknown", "unit", "`kp·dm`", "`korvel-tab`"]);
}

#[test]
fn a_missing_unit_line_in_a_layout_that_needs_one() {
    let text = "! PELLAM DEMO-FIXED\n! SERIAL : 5\n  0.0  0.0  0.0  1\n  0.1  0.01  2.0  1\n";
    let reason = rejected_beside_a_good_file("p.dat", text.as_bytes());
    assert_has(&reason, &["TORQUE UNIT", "missing", "`pellam-fixed`"]);
}

#[test]
fn a_decimal_comma_error_names_the_separator() {
    let text =
        "OSTREL DEMO-SEMI\n\"Serial No.\";\"7\"\n[curve]\nAngle (deg);Torque (lbf·in);Dir\n0,0;0,0;+\n1,0;12,5x;+\n";
    let reason = rejected_beside_a_good_file("b.csv", text.as_bytes());
    // DESIGN.md's example of an error a person can act on.
    assert_eq!(
        reason,
        "line 6, column `Torque (lbf·in)`: `12,5x` is not a number (decimal separator `,`) (rig format `ostrel-semi`)"
    );
}

#[test]
fn a_bad_stroke_label() {
    let text = "OSTREL DEMO-SEMI\n[curve]\nAngle (deg);Torque (lbf·in);Dir\n0,0;0,0;up\n";
    let reason = rejected_beside_a_good_file("b.csv", text.as_bytes());
    assert!(reason.starts_with("line 4, column `Dir`"), "{reason}");
    assert_has(&reason, &["`up`", "`+`", "`-`"]);
}

#[test]
fn an_unrecognised_file() {
    let reason = rejected_beside_a_good_file("other.csv", b"Winkel;Moment\n1;2\n");
    assert_has(&reason, &["recognises", "--rig-format"]);
    // It says which formats it tried: the built-in ones, as no plugin folder was named.
    assert_has(&reason, &["native", "korvel-tab", "ostrel-semi", "pellam-fixed"]);
}

#[test]
fn binary_junk() {
    let reason = rejected_beside_a_good_file("raw.bin", b"\x00\x01\x02\x03angle_deg torque_nmm\x00\xff\xfe");
    assert_has(&reason, &["binary"]);
}

#[test]
fn a_failing_exec_converter_is_named() {
    // The converter is the demo plant's own plugin, active where its folder is named.
    let folder = twistlot_tests::workspace_root().join("sample_lots/plugins");
    let extra = [std::ffi::OsStr::new("--plugins"), folder.as_os_str()];
    let reason = rejected_beside_a_good_file_with("x.tqj", br#"{"format": "gantry-tq/9"}"#, &extra);
    assert_has(&reason, &["exited with 1", "not a gantry-tq/1 document", "`gantry-json`"]);
    let reason = rejected_beside_a_good_file_with(
        "y.tqj",
        br#"{"format": "gantry-tq/1", "samples": [[0, 1]]}"#,
        &extra,
    );
    assert_has(&reason, &["sample 0 has 2 values", "`gantry-json`"]);
}

#[test]
fn a_path_that_does_not_exist_is_rejected_not_fatal() {
    let batch = Batch::new();
    let good = batch.write_good("good.csv", "GOOD-1", 5);
    let missing = batch.path().join("no-such-file.csv");
    let (code, rows) = ingest_json(&[good.as_os_str(), missing.as_os_str()]);
    assert_eq!(code, 3);
    assert_eq!(row_for(&rows, &good)["status"], "accepted");
    let row = row_for(&rows, &missing);
    assert_eq!(row["status"], "rejected");
    assert!(row["reason"].as_str().unwrap().contains("no such file"), "{row}");
}

/// A plugin folder holding a copy of the native format under another name.
fn twin_plugin_folder() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let shipped = twistlot_tests::workspace_root().join("plugins/rig-formats/native.yaml");
    let text = std::fs::read_to_string(shipped).unwrap();
    assert!(text.contains("\nname: native\n"), "the shipped native manifest names itself `native`");
    std::fs::write(
        dir.path().join("native-twin.yaml"),
        text.replace("\nname: native\n", "\nname: native-twin\n"),
    )
    .unwrap();
    dir
}

#[test]
fn two_plugins_claiming_a_file_are_both_named_and_rig_format_settles_it() {
    let plugins = twin_plugin_folder();
    let batch = Batch::new();
    let native = batch.write_good("native.csv", "N-1", 6);
    let korvel = batch.write(
        "k.txt",
        &windows_1252("KORVEL DEMO-BENCH\r\nPrüfling=K-1\r\n*DATA*\r\nt [ms]\tWinkel [°]\tMoment [N·mm]\r\n0\t0\t0\r\n1\t1\t-4\r\n"),
    );
    let (code, rows) =
        ingest_json(&[batch.path().as_os_str(), "--plugins".as_ref(), plugins.path().as_os_str()]);
    assert_eq!(code, 3);
    let row = row_for(&rows, &native);
    assert_eq!(row["status"], "rejected");
    let reason = row["reason"].as_str().unwrap();
    assert_has(reason, &["`native`", "`native-twin`", "--rig-format"]);
    // The other file of the batch is claimed by one format only and is still read.
    let row = row_for(&rows, &korvel);
    assert_eq!(row["status"], "accepted", "{row}");
    assert_eq!(row["rig_format"], "korvel-tab");
    assert_eq!(row["metadata"]["serial"], "K-1");

    let (code, rows) = ingest_json(&[
        native.as_os_str(),
        "--plugins".as_ref(),
        plugins.path().as_os_str(),
        "--rig-format".as_ref(),
        "native".as_ref(),
    ]);
    assert_eq!(code, 0, "{rows:#?}");
    let row = row_for(&rows, &native);
    assert_eq!(row["status"], "accepted");
    assert_eq!(row["rig_format"], "native");
    assert_eq!(row["points"], 6);
}

#[test]
fn forcing_the_wrong_format_rejects_with_that_format_named() {
    let batch = Batch::new();
    let native = batch.write_good("native.csv", "N-1", 6);
    let (code, rows) = ingest_json(&[native.as_os_str(), "--rig-format".as_ref(), "pellam-fixed".as_ref()]);
    assert_eq!(code, 3);
    let row = row_for(&rows, &native);
    assert_eq!(row["status"], "rejected");
    assert_eq!(row["rig_format"], "pellam-fixed", "{row}");
}

#[test]
fn a_duplicate_serial_warns_on_both_files_and_keeps_both() {
    let batch = Batch::new();
    let first = batch.write_good("first.csv", "DUP-7", 5);
    let second = batch.write_good("sub/second.csv", "DUP-7", 7);
    let other = batch.write_good("other.csv", "OTHER-1", 5);
    let (code, rows) = ingest_json(&[batch.path().as_os_str()]);
    assert_eq!(code, 0, "duplicates are a warning, not a rejection: {rows:#?}");
    assert_eq!(rows.len(), 3);
    for (this, that) in [(&first, &second), (&second, &first)] {
        let row = row_for(&rows, this);
        assert_eq!(row["status"], "accepted");
        let warnings = row["warnings"].as_array().unwrap();
        assert_eq!(warnings.len(), 1, "{row}");
        let warning = warnings[0].as_str().unwrap();
        assert_has(warning, &["DUP-7", &that.display().to_string()]);
        assert!(
            !warning.contains(&this.display().to_string()),
            "names the other file, not itself: {warning}"
        );
    }
    assert_eq!(row_for(&rows, &other)["warnings"].as_array().map(Vec::len), Some(0));
    // The warning also reaches stderr and the table.
    twistlot()
        .arg("ingest")
        .arg(batch.path())
        .assert()
        .code(0)
        .stderr(predicate::str::contains("warning:").and(predicate::str::contains("DUP-7")))
        .stdout(predicate::str::contains("warning: serial `DUP-7`"));
}

#[test]
fn a_malformed_plugin_manifest_is_reported_with_file_line_and_field() {
    let plugins = tempfile::tempdir().unwrap();
    let shipped = twistlot_tests::workspace_root().join("plugins/rig-formats/native.yaml");
    let text = std::fs::read_to_string(shipped).unwrap().replace("\nname: native\n", "\nname: typo\n");
    let typo_line =
        text.lines().position(|l| l.trim_start().starts_with("delimiter:")).expect("a delimiter line") + 1;
    let broken = text.replace("delimiter:", "delimter:");
    let path = plugins.path().join("typo.yaml");
    std::fs::write(&path, broken).unwrap();
    let output = twistlot().args(["plugins", "--plugins"]).arg(plugins.path()).output().unwrap();
    assert_eq!(output.status.code(), Some(3));
    let stderr = String::from_utf8_lossy(&output.stderr);
    let stdout = String::from_utf8_lossy(&output.stdout);
    let file = path.display().to_string();
    let error_line = stderr
        .lines()
        .find(|l| l.contains(&file))
        .unwrap_or_else(|| panic!("stderr names the file:\n{stderr}"));
    assert!(error_line.contains("field `layout"), "{error_line}");
    assert!(error_line.contains("delimter"), "{error_line}");
    // serde reports the unknown key at the map that holds it or at the key itself.
    let line: usize = error_line
        .split(", line ")
        .nth(1)
        .and_then(|rest| rest.split(|c: char| !c.is_ascii_digit()).next())
        .and_then(|n| n.parse().ok())
        .unwrap_or_else(|| panic!("no line number in: {error_line}"));
    let layout_line = text.lines().position(|l| l.starts_with("layout:")).unwrap() + 1;
    assert!(
        (layout_line..=typo_line).contains(&line),
        "line {line} is not between {layout_line} and {typo_line}"
    );
    assert!(stdout.contains("invalid"), "the listing marks it invalid:\n{stdout}");
    // The built-in plugins are still listed as in force.
    assert!(stdout.contains("korvel-tab") && stdout.contains("active"), "{stdout}");

    // A run does not guess around a broken plugin: ingest refuses and names the manifest.
    let batch = Batch::new();
    batch.write_good("good.csv", "G-1", 4);
    twistlot().arg("ingest").arg(batch.path()).arg("--plugins").arg(plugins.path()).assert().code(1).stderr(
        predicate::str::contains("a plugin does not load").and(predicate::str::contains(file.as_str())),
    );
}

#[test]
fn the_built_in_plugins_need_no_folder_and_the_demo_plugins_all_validate() {
    let output =
        twistlot().args(["plugins", "--format", "json"]).current_dir(std::env::temp_dir()).output().unwrap();
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&output.stdout).unwrap();
    let names: Vec<&str> = rows.iter().filter_map(|r| r["name"].as_str()).collect();
    assert_eq!(
        names,
        [
            "native",
            "native-decay",
            "korvel-tab",
            "ostrel-semi",
            "pellam-fixed",
            "mil-std-105e",
            "weighted-least-slack"
        ]
    );
    assert!(rows.iter().all(|r| r["status"] == "active" && r["source"] == "built in"), "{rows:#?}");

    let plant = twistlot_tests::workspace_root().join("sample_lots/plant.yaml");
    let output = twistlot().args(["plugins", "--format", "json", "--plant"]).arg(&plant).output().unwrap();
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&output.stdout).unwrap();
    let status = |name: &str| rows.iter().find(|r| r["name"] == name).map(|r| r["status"].clone());
    for name in ["gantry-json", "append-jsonl", "torque-ratio", "tight-hysteresis"] {
        assert_eq!(status(name), Some("active".into()), "{name}: {rows:#?}");
        let row = rows.iter().find(|r| r["name"] == name).unwrap();
        assert!(row["source"].as_str().unwrap().ends_with("plugins"), "{row}");
    }
}

#[test]
fn a_check_the_plant_does_not_name_is_listed_as_inactive() {
    let plugins = tempfile::tempdir().unwrap();
    std::fs::write(
        plugins.path().join("limit.yaml"),
        "name: plant-limit\nkind: check\napi: 1\ndescription: d\nparts: []\nexpression: metrics.max_torque_nmm < 5\nmessage: m\nclass: minor\n",
    )
    .unwrap();
    let output =
        twistlot().args(["plugins", "--format", "json", "--plugins"]).arg(plugins.path()).output().unwrap();
    assert_eq!(output.status.code(), Some(0));
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&output.stdout).unwrap();
    let row = rows.iter().find(|r| r["name"] == "plant-limit").unwrap();
    assert_eq!(row["status"], "inactive", "{row}");
    // Evaluate applies it only when asked to: without `--check` every part passes it.
    let batch = Batch::new();
    batch.write_good("good.csv", "G-1", 9);
    let spec = twistlot_tests::workspace_root().join("sample_lots/parts/TS-2210.yaml");
    let run = |extra: &[&str]| {
        let output = twistlot()
            .arg("evaluate")
            .arg(batch.path())
            .arg("--spec")
            .arg(&spec)
            .arg("--plugins")
            .arg(plugins.path())
            .args(extra)
            .args(["--format", "json"])
            .output()
            .unwrap();
        let rows: Vec<serde_json::Value> = serde_json::from_slice(&output.stdout).unwrap();
        rows[0]["findings"].as_array().unwrap().iter().any(|f| f["characteristic"] == "plant-limit")
    };
    assert!(!run(&[]));
    assert!(run(&["--check", "plant-limit"]));
}

#[test]
fn a_folder_copy_of_a_built_in_overrides_it_and_two_in_one_folder_clash() {
    let plugins = tempfile::tempdir().unwrap();
    let shipped = twistlot_tests::workspace_root().join("plugins/rig-formats/native.yaml");
    std::fs::copy(&shipped, plugins.path().join("copy.yaml")).unwrap();
    let output =
        twistlot().args(["plugins", "--format", "json", "--plugins"]).arg(plugins.path()).output().unwrap();
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&output.stdout).unwrap();
    let natives: Vec<&serde_json::Value> = rows.iter().filter(|r| r["name"] == "native").collect();
    assert_eq!(natives.len(), 2);
    assert_eq!(
        (natives[0]["source"].as_str(), natives[0]["status"].as_str()),
        (Some("built in"), Some("overridden"))
    );
    assert_eq!(natives[1]["status"], "active");

    std::fs::copy(&shipped, plugins.path().join("copy-2.yaml")).unwrap();
    twistlot()
        .args(["plugins", "--plugins"])
        .arg(plugins.path())
        .assert()
        .code(3)
        .stderr(predicate::str::contains("`native`").and(predicate::str::contains("copy.yaml")));
    // A run cannot choose between them, so it does not run at all.
    let batch = Batch::new();
    batch.write_good("good.csv", "G-1", 4);
    twistlot()
        .arg("ingest")
        .arg(batch.path())
        .arg("--plugins")
        .arg(plugins.path())
        .assert()
        .code(1)
        .stderr(predicate::str::contains("copy"));
}

#[test]
fn a_missing_plugin_folder_is_fatal() {
    let batch = Batch::new();
    let missing = batch.path().join("no-plugins-here");
    twistlot()
        .args(["plugins", "--plugins"])
        .arg(&missing)
        .assert()
        .code(1)
        .stderr(predicate::str::contains(missing.display().to_string()));
}
