//! `twistlot ingest` over the shipped demo shift: every file accounted for, the
//! planted breakages rejected with the line, every shipped reader used.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use twistlot_tests::{files_under, ingest_json, row_for, sample_shift_dir};

/// The shift is read once and shared by the tests of this file (they only look).
fn ingest_shift() -> &'static (i32, Vec<serde_json::Value>) {
    static RESULT: OnceLock<(i32, Vec<serde_json::Value>)> = OnceLock::new();
    // The demo plant's config names its own plugin folder, which holds rig D's converter.
    let plant = twistlot_tests::workspace_root().join("sample_lots/plant.yaml");
    RESULT.get_or_init(|| {
        ingest_json(&[sample_shift_dir().as_os_str(), std::ffi::OsStr::new("--plant"), plant.as_os_str()])
    })
}

fn reason(row: &serde_json::Value) -> &str {
    row["reason"].as_str().unwrap_or_default()
}

/// 1-based number of the first line at or after `from` (1-based) that holds `needle`.
fn first_line_with(text: &str, from: usize, needle: impl Fn(&str) -> bool) -> usize {
    text.lines()
        .enumerate()
        .skip(from - 1)
        .find(|(_, l)| needle(l))
        .map(|(i, _)| i + 1)
        .expect("a matching line")
}

#[test]
fn every_file_of_the_shift_is_accounted_for_exactly_once() {
    let (code, rows) = ingest_shift();
    let code = *code;
    assert_eq!(code, 3, "some files are rejected, so the exit status is 3");
    // The shift's lot list is not an export: it is skipped by name (see below).
    let on_disk: Vec<PathBuf> =
        files_under(&sample_shift_dir()).into_iter().filter(|p| !p.ends_with("lots.yaml")).collect();
    assert!(on_disk.len() > 100, "the demo shift has {} files", on_disk.len());
    assert_eq!(rows.len(), on_disk.len(), "one row per export");
    let mut seen: BTreeMap<PathBuf, usize> = BTreeMap::new();
    for row in rows {
        *seen.entry(PathBuf::from(row["file"].as_str().expect("file is a string"))).or_default() += 1;
    }
    let listed: BTreeSet<&PathBuf> = seen.keys().collect();
    let expected: BTreeSet<&PathBuf> = on_disk.iter().collect();
    assert_eq!(listed, expected);
    assert!(seen.values().all(|&n| n == 1), "a file listed twice: {seen:?}");

    let accepted = rows.iter().filter(|r| r["status"] == "accepted").count();
    let rejected = rows.iter().filter(|r| r["status"] == "rejected").count();
    assert_eq!(accepted + rejected, rows.len(), "every status is accepted or rejected");
    // Planted: one non-numeric export and one truncated export.
    assert_eq!(rejected, 2, "{:#?}", rows.iter().filter(|r| r["status"] == "rejected").collect::<Vec<_>>());
    for row in rows.iter().filter(|r| r["status"] == "accepted") {
        assert_eq!(reason(row), "", "accepted rows carry no reason: {row}");
        assert!(row["points"].as_u64().unwrap_or(0) > 100, "an accepted export has its curve: {row}");
    }
}

#[test]
fn the_non_numeric_export_is_rejected_at_its_line() {
    let (_, rows) = ingest_shift();
    let path = sample_shift_dir().join("rig-b/L2612-051-027.csv");
    let row = row_for(rows, &path);
    assert_eq!(row["status"], "rejected");
    assert_eq!(row["rig_format"], "ostrel-semi");
    // The generator replaced one digit of a data row with `x`; data rows follow `[curve]`
    // and the header row, and hold nothing but digits and separators otherwise.
    let text = String::from_utf8_lossy(&std::fs::read(&path).unwrap()).to_string();
    let header = first_line_with(&text, 1, |l| l.trim() == "[curve]") + 1;
    let broken = first_line_with(&text, header + 1, |l| l.contains('x'));
    let reason = reason(row);
    assert!(reason.starts_with(&format!("line {broken}, column `")), "{reason}");
    assert!(reason.contains("is not a number") && reason.contains("decimal separator `,`"), "{reason}");
}

#[test]
fn the_truncated_export_is_rejected_at_its_last_line() {
    let (_, rows) = ingest_shift();
    let path = sample_shift_dir().join("rig-c/L2612-041-018.dat");
    let row = row_for(rows, &path);
    assert_eq!(row["status"], "rejected");
    assert_eq!(row["rig_format"], "pellam-fixed");
    let bytes = std::fs::read(&path).unwrap();
    assert_ne!(bytes.last(), Some(&b'\n'), "the file was cut inside its last line");
    let last_line = String::from_utf8_lossy(&bytes).lines().count();
    let reason = reason(row);
    assert!(reason.starts_with(&format!("line {last_line}")), "{reason}");
}

#[test]
fn the_lot_list_is_skipped_by_name_and_the_skip_is_said() {
    let (_, rows) = ingest_shift();
    let lot_list = sample_shift_dir().join("lots.yaml");
    assert!(!rows.iter().any(|r| r["file"].as_str().map(Path::new) == Some(lot_list.as_path())));
    let output = twistlot_tests::twistlot()
        .args(["ingest", sample_shift_dir().to_str().unwrap(), "--format", "json"])
        .args(["--plant", twistlot_tests::workspace_root().join("sample_lots/plant.yaml").to_str().unwrap()])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(
        stderr.contains(&format!("skipped: {} (the shift's lot list, not an export)", lot_list.display())),
        "{stderr}"
    );
    // Named on its own, the file is read like any other, and is no export.
    let (code, rows) = ingest_json(&[lot_list.as_os_str()]);
    assert_eq!(code, 3);
    assert!(reason(&rows[0]).to_lowercase().contains("recognis"), "{}", rows[0]);
}

#[test]
fn each_rig_folder_is_read_by_its_own_format_and_metadata_comes_through() {
    let (_, rows) = ingest_shift();
    let expected_format = [
        ("rig-a", "korvel-tab"),
        ("rig-b", "ostrel-semi"),
        ("rig-c", "pellam-fixed"),
        ("rig-d", "gantry-json"),
        ("rig-e", "native-decay"),
    ];
    let mut formats_seen = BTreeSet::new();
    for row in rows.iter().filter(|r| r["status"] == "accepted") {
        let file = PathBuf::from(row["file"].as_str().unwrap());
        let folder = file.parent().and_then(Path::file_name).and_then(|f| f.to_str()).unwrap();
        let (_, format) =
            expected_format.iter().find(|(f, _)| *f == folder).expect("an export in a rig folder");
        assert_eq!(row["rig_format"], *format, "{}", file.display());
        formats_seen.insert(*format);
        // The generator names each export after its serial; a part's serial starts with its
        // lot, and each rig's reference-spring check (serial REF-…) belongs to no lot.
        let serial = file.file_stem().and_then(|s| s.to_str()).unwrap();
        let meta = &row["metadata"];
        assert_eq!(meta["serial"], serial, "{}", file.display());
        if serial.starts_with("REF-") {
            assert!(meta["lot"].is_null(), "{}: a reference check names no lot", file.display());
        } else {
            assert!(
                serial.starts_with(meta["lot"].as_str().unwrap()),
                "{}: lot {}",
                file.display(),
                meta["lot"]
            );
        }
        assert_eq!(meta["rig"], folder.to_uppercase(), "{}", file.display());
        for key in ["part", "operator", "started"] {
            assert!(meta[key].as_str().is_some_and(|v| !v.is_empty()), "{}: no {key}", file.display());
        }
        // The hash is of the file's bytes as they are on disk (before any conversion).
        let hash = blake3::hash(&std::fs::read(&file).unwrap()).to_hex().to_string();
        assert_eq!(meta["content_hash"], hash, "{}", file.display());
    }
    assert_eq!(
        formats_seen.len(),
        expected_format.len(),
        "every rig's format read something: {formats_seen:?}"
    );
}

#[test]
fn the_shift_has_no_duplicate_serials_so_no_warnings() {
    let (_, rows) = ingest_shift();
    for row in rows {
        assert_eq!(row["warnings"].as_array().map(Vec::len), Some(0), "{row}");
    }
}
