//! Helpers for the end-to-end tests in `tests/tests/`, which drive the real `twistlot`
//! binary on real files in real folders.
//!
//! For: finding the built binary and the shipped data, writing small batches of export
//! files into temporary folders, and reading back what the binary printed (JSON, CSV).
//!
//! Not for: testing library functions directly (each crate has its own unit and
//! integration tests), nor timing anything (the ingest benchmark is
//! `scripts/bench-ingest.sh`).
//!
//! Main items: [`twistlot`] (a command for the binary), [`workspace_root`],
//! [`Batch`] (a temporary folder of exports), [`ingest_json`], [`parse_csv`].
//!
//! The binary is located with assert_cmd's `cargo_bin`, so it must have been built into
//! the same target folder: `cargo test --workspace` builds it because `crates/cli` has
//! an integration test of its own; `cargo test -p twistlot-tests` alone needs a
//! `cargo build -p twistlot-cli` first (same `CARGO_TARGET_DIR`).

use std::path::{Path, PathBuf};

/// The workspace's root folder (where `plugins/` and `sample_lots/` are).
///
/// Read from the `CARGO_MANIFEST_DIR` that cargo sets when it runs a test, not the one
/// baked in at compile time, so a test binary built in another checkout (a shared build
/// cache) still reads this checkout's files.
pub fn workspace_root() -> PathBuf {
    let manifest_dir = std::env::var_os("CARGO_MANIFEST_DIR")
        .map_or_else(|| PathBuf::from(env!("CARGO_MANIFEST_DIR")), PathBuf::from);
    // canonicalize only fails if the folder vanished; the joined path still names it.
    manifest_dir.join("..").canonicalize().unwrap_or_else(|_| manifest_dir.join(".."))
}

/// The shipped demo shift.
pub fn sample_shift_dir() -> PathBuf {
    workspace_root().join("sample_lots/shifts/2026-12-01-late")
}

/// The path of the built `twistlot` binary.
pub fn twistlot_path() -> PathBuf {
    // cargo_bin panics with a terse message when the binary is missing; say what to do.
    match std::panic::catch_unwind(|| assert_cmd::cargo::cargo_bin("twistlot")) {
        Ok(path) if path.is_file() => path,
        _ => panic!(
            "the `twistlot` binary is not built in this target folder: run `cargo test --workspace`, \
             or `cargo build -p twistlot-cli` before `cargo test -p twistlot-tests` (same CARGO_TARGET_DIR)"
        ),
    }
}

/// A command for the `twistlot` binary, run from the workspace root.
pub fn twistlot() -> assert_cmd::Command {
    let mut cmd = assert_cmd::Command::new(twistlot_path());
    cmd.current_dir(workspace_root());
    cmd
}

/// Every file under `dir`, recursively, sorted.
pub fn files_under(dir: &Path) -> Vec<PathBuf> {
    fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
        let entries = std::fs::read_dir(dir).unwrap_or_else(|e| panic!("cannot list {}: {e}", dir.display()));
        for entry in entries {
            let path = entry.expect("a folder entry").path();
            if path.is_dir() {
                walk(&path, out);
            } else {
                out.push(path);
            }
        }
    }
    let mut out = Vec::new();
    walk(dir, &mut out);
    out.sort();
    out
}

/// A temporary folder of export files for one `twistlot ingest` batch.
pub struct Batch {
    dir: tempfile::TempDir,
}

impl Batch {
    /// An empty batch folder.
    pub fn new() -> Batch {
        Batch { dir: tempfile::tempdir().expect("a temporary folder") }
    }

    /// The batch folder.
    pub fn path(&self) -> &Path {
        self.dir.path()
    }

    /// Writes `bytes` to `name` (relative, folders created) and returns the full path.
    pub fn write(&self, name: &str, bytes: &[u8]) -> PathBuf {
        let path = self.dir.path().join(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("create the folder");
        }
        std::fs::write(&path, bytes).expect("write the file");
        path
    }

    /// Writes a valid native export named `name` with this serial and `points` points.
    pub fn write_good(&self, name: &str, serial: &str, points: usize) -> PathBuf {
        self.write(name, native_export(serial, points).as_bytes())
    }
}

impl Default for Batch {
    fn default() -> Self {
        Batch::new()
    }
}

/// A valid native export: metadata lines, a header, then a load and an unload stroke
/// of a 4 N·mm/° spring over `points` points (at least 2).
pub fn native_export(serial: &str, points: usize) -> String {
    let mut text =
        format!("# serial: {serial}\n# part: TS-2210\n# lot: L-E2E\n# rig: RIG-T\nangle_deg,torque_nmm\n");
    let half = points.div_ceil(2).max(1);
    for k in 0..points {
        // Up to 90° and back down, so both strokes are present.
        let step = if k < half { k } else { points - 1 - k };
        let angle_deg = 90.0 * step as f64 / (half - 1).max(1) as f64;
        text.push_str(&format!("{angle_deg:.3},{:.3}\n", 4.0 * angle_deg));
    }
    text
}

/// Runs `twistlot ingest ARGS... --format json` and returns (exit code, parsed rows).
pub fn ingest_json(args: &[&std::ffi::OsStr]) -> (i32, Vec<serde_json::Value>) {
    let output =
        twistlot().arg("ingest").args(args).args(["--format", "json"]).output().expect("run twistlot");
    let stdout = String::from_utf8(output.stdout).expect("UTF-8 output");
    let rows: serde_json::Value = serde_json::from_str(&stdout).unwrap_or_else(|e| {
        panic!(
            "ingest printed no JSON ({e}):\n{stdout}\nstderr:\n{}",
            String::from_utf8_lossy(&output.stderr)
        )
    });
    let rows = rows.as_array().unwrap_or_else(|| panic!("ingest JSON is not an array: {rows}")).clone();
    (output.status.code().unwrap_or(-1), rows)
}

/// The row for `file` (compared as paths) among ingest's JSON rows.
pub fn row_for<'a>(rows: &'a [serde_json::Value], file: &Path) -> &'a serde_json::Value {
    let matching: Vec<&serde_json::Value> =
        rows.iter().filter(|r| r["file"].as_str().map(Path::new) == Some(file)).collect();
    assert_eq!(matching.len(), 1, "{} should appear exactly once in {rows:#?}", file.display());
    matching[0]
}

/// Splits CSV text into records of fields (RFC 4180: quoted fields, doubled quotes,
/// line breaks inside quotes).
pub fn parse_csv(text: &str) -> Result<Vec<Vec<String>>, String> {
    let mut records = Vec::new();
    let mut record = Vec::new();
    let mut field = String::new();
    let mut chars = text.chars().peekable();
    let mut in_quotes = false;
    let mut at_field_start = true;
    while let Some(c) = chars.next() {
        if in_quotes {
            match c {
                '"' if chars.peek() == Some(&'"') => {
                    chars.next();
                    field.push('"');
                }
                '"' => {
                    in_quotes = false;
                    if !matches!(chars.peek(), None | Some(',') | Some('\n') | Some('\r')) {
                        return Err(format!("text after a closing quote in record {}", records.len() + 1));
                    }
                }
                _ => field.push(c),
            }
            continue;
        }
        match c {
            '"' if at_field_start => {
                in_quotes = true;
                at_field_start = false;
            }
            '"' => return Err(format!("a bare quote inside a field in record {}", records.len() + 1)),
            ',' => {
                record.push(std::mem::take(&mut field));
                at_field_start = true;
            }
            '\r' => {}
            '\n' => {
                record.push(std::mem::take(&mut field));
                records.push(std::mem::take(&mut record));
                at_field_start = true;
            }
            _ => {
                field.push(c);
                at_field_start = false;
            }
        }
    }
    if in_quotes {
        return Err("unterminated quoted field".into());
    }
    if !field.is_empty() || !record.is_empty() {
        record.push(field);
        records.push(record);
    }
    Ok(records)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_parser_handles_quotes_commas_and_line_breaks() {
        let records = parse_csv("a,b\n\"x, y\",\"say \"\"hi\"\"\"\n\"two\nlines\",\n").unwrap();
        assert_eq!(records, vec![vec!["a", "b"], vec!["x, y", "say \"hi\""], vec!["two\nlines", ""]]);
        assert!(parse_csv("a\"b\n").is_err());
        assert!(parse_csv("\"open\n").is_err());
    }

    #[test]
    fn native_export_goes_up_and_back_down() {
        let text = native_export("S1", 5);
        let rows: Vec<&str> = text.lines().skip_while(|l| !l.starts_with("angle_deg")).skip(1).collect();
        assert_eq!(rows.len(), 5);
        assert_eq!(rows[0], "0.000,0.000");
        assert_eq!(rows[4], "0.000,0.000");
        assert!(rows[2].starts_with("90.000,"));
    }
}
