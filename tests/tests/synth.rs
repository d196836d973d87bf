//! The generator is deterministic, and the committed demo shift is what it generates.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use twistlot_tests::{files_under, ingest_json, sample_shift_dir, twistlot, workspace_root};

/// Every file under `dir` as (path relative to `dir`, bytes).
fn contents(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    files_under(dir)
        .into_iter()
        .map(|p| (p.strip_prefix(dir).unwrap().to_path_buf(), std::fs::read(&p).unwrap()))
        .collect()
}

fn synth_shift(out: &Path) {
    let root = workspace_root();
    twistlot()
        .args(["synth", "shift", "--plan"])
        .arg(root.join("sample_lots/demo-plan.yaml"))
        .arg("--parts")
        .arg(root.join("sample_lots/parts"))
        .arg("--out")
        .arg(out)
        .assert()
        .code(0)
        .stdout(predicates::str::contains("wrote"));
}

fn synth_bench(out: &Path, files: usize, points: usize, seed: u64) -> std::process::Output {
    twistlot()
        .args(["synth", "bench", "--files", &files.to_string(), "--points", &points.to_string()])
        .args(["--seed", &seed.to_string(), "--out"])
        .arg(out)
        .output()
        .unwrap()
}

/// Names the first differing file instead of dumping megabytes.
fn assert_same_files(a: &[(PathBuf, Vec<u8>)], b: &[(PathBuf, Vec<u8>)], what: &str) {
    let names_a: BTreeSet<&PathBuf> = a.iter().map(|(p, _)| p).collect();
    let names_b: BTreeSet<&PathBuf> = b.iter().map(|(p, _)| p).collect();
    assert_eq!(names_a, names_b, "{what}: the same file names");
    for ((path, x), (_, y)) in a.iter().zip(b) {
        assert!(x == y, "{what}: {} differs", path.display());
    }
}

#[test]
fn the_demo_shift_is_generated_byte_for_byte_the_same_twice() {
    let (one, two) = (tempfile::tempdir().unwrap(), tempfile::tempdir().unwrap());
    synth_shift(&one.path().join("shift"));
    synth_shift(&two.path().join("shift"));
    let (a, b) = (contents(&one.path().join("shift")), contents(&two.path().join("shift")));
    assert!(a.len() > 100, "{} files", a.len());
    assert_same_files(&a, &b, "two generations");
}

#[test]
fn the_committed_demo_shift_is_what_the_generator_writes() {
    let fresh = tempfile::tempdir().unwrap();
    synth_shift(fresh.path());
    assert_same_files(
        &contents(fresh.path()),
        &contents(&sample_shift_dir()),
        "a fresh `synth shift` against sample_lots/shifts/2026-12-01-late (regenerate and commit it if the generator changed)",
    );
}

#[test]
fn bench_data_is_deterministic_per_seed() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b, c) = (dir.path().join("a"), dir.path().join("b"), dir.path().join("c"));
    for (out, seed) in [(&a, 7), (&b, 7), (&c, 8)] {
        assert_eq!(synth_bench(out, 6, 200, seed).status.code(), Some(0));
    }
    assert_same_files(&contents(&a), &contents(&b), "the same seed");
    let (ca, cc) = (contents(&a), contents(&c));
    assert_eq!(ca.len(), cc.len());
    assert!(ca.iter().zip(&cc).any(|(x, y)| x.1 != y.1), "another seed gives other curves");
}

#[test]
fn bench_data_reads_back_in_every_declarative_layout_with_the_requested_points() {
    let dir = tempfile::tempdir().unwrap();
    let out = synth_bench(dir.path(), 8, 400, 1);
    assert_eq!(out.status.code(), Some(0));
    assert_eq!(
        String::from_utf8_lossy(&out.stdout).trim(),
        format!("wrote 8 files to {}", dir.path().display())
    );
    let (code, rows) = ingest_json(&[dir.path().as_os_str()]);
    assert_eq!(code, 0, "the benchmark expects every file accepted: {rows:#?}");
    assert_eq!(rows.len(), 8);
    let mut formats = BTreeSet::new();
    for row in &rows {
        assert_eq!(row["status"], "accepted");
        assert_eq!(row["points"], 400, "{row}");
        formats.insert(row["rig_format"].as_str().unwrap().to_string());
    }
    let expected: BTreeSet<String> =
        ["native", "korvel-tab", "ostrel-semi", "pellam-fixed"].iter().map(|s| s.to_string()).collect();
    assert_eq!(formats, expected);
}

#[test]
fn bench_points_that_are_not_a_multiple_of_four_are_honoured_or_refused() {
    for points in [1602, 3] {
        let dir = tempfile::tempdir().unwrap();
        let out = synth_bench(dir.path(), 2, points, 1);
        if out.status.code() == Some(0) {
            let (_, rows) = ingest_json(&[dir.path().as_os_str()]);
            for row in &rows {
                assert_eq!(row["points"], points, "--points {points}: {row}");
            }
        } else {
            assert_eq!(out.status.code(), Some(1), "--points {points}");
            assert!(String::from_utf8_lossy(&out.stderr).contains("points"), "--points {points}");
        }
    }
}
