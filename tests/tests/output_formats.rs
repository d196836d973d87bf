//! `--format csv` and `--format table` of `twistlot ingest` and `twistlot plugins`.

use twistlot_tests::{ingest_json, parse_csv, row_for, twistlot, Batch};

const INGEST_HEADER: [&str; 8] =
    ["file", "status", "rig_format", "points", "serial", "part", "lot", "reason"];

/// A batch whose rows need CSV quoting: a file name with a comma and a quote, a reason
/// with commas and backticks, and a serial with a comma.
fn awkward_batch() -> Batch {
    let batch = Batch::new();
    batch.write_good("we\"ird,name.csv", "S,1", 5);
    batch.write("bad.csv", b"angle_deg,torque_nmm\n0,0\n1,2x\n");
    batch.write_good("plain.csv", "S2", 5);
    batch
}

fn stdout_of(cmd: &mut assert_cmd::Command) -> (i32, String) {
    let output = cmd.output().expect("run twistlot");
    (output.status.code().unwrap_or(-1), String::from_utf8(output.stdout).expect("UTF-8"))
}

#[test]
fn csv_has_the_header_row_and_round_trips_every_field() {
    let batch = awkward_batch();
    let (code, text) = stdout_of(twistlot().arg("ingest").arg(batch.path()).args(["--format", "csv"]));
    assert_eq!(code, 3);
    let records = parse_csv(&text).unwrap_or_else(|e| panic!("not valid CSV ({e}):\n{text}"));
    assert_eq!(records[0], INGEST_HEADER);
    assert_eq!(records.len(), 4, "a header and one record per file:\n{text}");
    assert!(records.iter().all(|r| r.len() == INGEST_HEADER.len()), "every record has 8 fields:\n{text}");

    // The CSV says the same as the JSON, field for field.
    let (_, rows) = ingest_json(&[batch.path().as_os_str()]);
    for record in &records[1..] {
        let row = row_for(&rows, std::path::Path::new(&record[0]));
        assert_eq!(record[1], row["status"].as_str().unwrap());
        assert_eq!(record[2], row["rig_format"].as_str().unwrap_or(""));
        assert_eq!(record[3], row["points"].to_string());
        assert_eq!(record[4], row["metadata"]["serial"].as_str().unwrap_or(""));
        assert_eq!(record[5], row["metadata"]["part"].as_str().unwrap_or(""));
        assert_eq!(record[6], row["metadata"]["lot"].as_str().unwrap_or(""));
        assert_eq!(record[7], row["reason"].as_str().unwrap());
    }
    let weird = records.iter().find(|r| r[0].ends_with("we\"ird,name.csv")).expect("the awkward file name");
    assert_eq!(weird[4], "S,1");
    // Quoting happened in the raw text: the quote doubled, the field wrapped.
    assert!(text.contains("ird,name.csv\""), "{text}");
    assert!(text.contains("we\"\"ird"), "{text}");
    assert!(text.contains(",\"S,1\","), "{text}");
    let bad = records.iter().find(|r| r[0].ends_with("bad.csv")).unwrap();
    assert!(bad[7].starts_with("line 3, column `torque_nmm`"), "{bad:?}");
    assert!(text.contains("\"line 3, column `torque_nmm`"), "a reason with commas is quoted:\n{text}");
}

#[test]
fn csv_fields_without_special_characters_are_not_quoted() {
    let batch = Batch::new();
    batch.write_good("plain.csv", "S2", 5);
    let (code, text) = stdout_of(twistlot().arg("ingest").arg(batch.path()).args(["--format", "csv"]));
    assert_eq!(code, 0);
    assert!(!text.contains('"'), "nothing here needs quoting:\n{text}");
    assert_eq!(text.lines().next(), Some(INGEST_HEADER.join(",").as_str()));
}

#[test]
fn the_table_ends_with_the_counts() {
    let batch = awkward_batch();
    let (code, text) = stdout_of(twistlot().arg("ingest").arg(batch.path()));
    assert_eq!(code, 3);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.last().copied(), Some("3 files: 2 accepted, 1 rejected."), "{text}");
    let header: Vec<&str> = lines[0].split_whitespace().collect();
    assert_eq!(header, INGEST_HEADER);
    // One line per file between the header and the blank line before the counts.
    assert_eq!(lines.len(), 1 + 3 + 1 + 1, "{text}");
    assert_eq!(lines[lines.len() - 2], "");
    // Columns line up: each row's status starts where the header's does.
    let status_at = lines[0].find("status").unwrap();
    for line in &lines[1..4] {
        let rest = &line[status_at..];
        assert!(rest.starts_with("accepted") || rest.starts_with("rejected"), "misaligned: {line}");
    }
}

#[test]
fn the_table_of_a_clean_batch_counts_no_rejections() {
    let batch = Batch::new();
    for i in 0..4 {
        batch.write_good(&format!("p{i}.csv"), &format!("S{i}"), 5);
    }
    let (code, text) = stdout_of(twistlot().arg("ingest").arg(batch.path()).args(["--format", "table"]));
    assert_eq!(code, 0);
    assert_eq!(text.lines().last(), Some("4 files: 4 accepted, 0 rejected."), "{text}");
}

#[test]
fn plugins_csv_quotes_descriptions_with_commas() {
    let (code, text) = stdout_of(twistlot().args(["plugins", "--format", "csv"]));
    assert_eq!(code, 0);
    let records = parse_csv(&text).unwrap_or_else(|e| panic!("not valid CSV ({e}):\n{text}"));
    assert_eq!(records[0], ["kind", "name", "status", "source", "file", "description / note"]);
    let native = records.iter().find(|r| r[1] == "native").expect("native is listed");
    assert_eq!(native[0], "rig-format");
    assert_eq!(native[2], "active");
    assert_eq!(native[3], "built in");
    // The shipped description holds commas and backticks.
    let manifest =
        std::fs::read_to_string(twistlot_tests::workspace_root().join("plugins/rig-formats/native.yaml"))
            .unwrap();
    assert!(native[5].contains(',') && manifest.contains(&native[5]), "{native:?}");
}
