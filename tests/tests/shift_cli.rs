//! `twistlot shift` on the shipped demo shift and on hand-made shifts, through the real binary.

use serde_json::Value;
use std::path::Path;
use twistlot_tests::{sample_shift_dir, twistlot, workspace_root};

fn run_shift(shift: &Path, plant: &Path, out: &Path) -> (i32, Value) {
    run_shift_with(shift, plant, out, &[])
}

/// Runs a shift with extra arguments (such as `--history DIR`).
fn run_shift_with(shift: &Path, plant: &Path, out: &Path, extra: &[&str]) -> (i32, Value) {
    let output = twistlot()
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
    // The run writes the switching record, so it gets a copy of the shipped one.
    let history = tempfile::tempdir().unwrap();
    let shipped_record = workspace_root().join("sample_lots/history/switching.jsonl");
    std::fs::copy(&shipped_record, history.path().join("switching.jsonl")).unwrap();
    let history_arg = ["--history", history.path().to_str().unwrap()];
    let (code, summary) = run_shift_with(&sample_shift_dir(), &plant, out.path(), &history_arg);
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
    assert_eq!(lots.len(), 8);
    for l in lots {
        for key in ["report_html", "report_md"] {
            let path = out.path().join(l[key].as_str().unwrap());
            assert!(path.is_file(), "{} missing", path.display());
        }
        if l["tested"] == 0 {
            // L2612-060: no rig can take it, so nothing was tested and no plan was applied.
            continue;
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
    assert_eq!(lot(&summary, "L2612-051")["disposition"], "reject");
    // The swing-tested lot: its free-decay exports are judged on the dynamic characteristics,
    // and the one stiffening part fails the minor amplitude-dependence limit, within Ac 2;
    // but the swing bench has no reference spring on record, so nothing verified it and
    // the lot is held, saying so.
    let swung = lot(&summary, "L2612-070");
    assert_eq!((swung["tested"].as_u64(), swung["failed"].as_u64()), (Some(20), Some(1)), "{swung}");
    assert_eq!(swung["disposition"], "hold", "{swung}");
    let grounds = swung["grounds"].to_string();
    assert!(grounds.contains("minor: 1 defective in 20 tested") && grounds.contains(": accept"), "{grounds}");
    assert!(grounds.contains("rig RIG-E: the plant config records no reference spring"), "{grounds}");
    // RIG-D's reference spring reads 2.46 % high against ±1 % allowed: its lot is held,
    // saying why, and the check is listed with its figures.
    let held_for_rig = lot(&summary, "L2612-050");
    assert_eq!(held_for_rig["disposition"], "hold");
    let grounds: Vec<&str> =
        held_for_rig["grounds"].as_array().unwrap().iter().filter_map(|g| g.as_str()).collect();
    assert!(
        grounds.iter().any(|g| g.starts_with("rig RIG-D: its reference-spring check failed")),
        "{grounds:?}"
    );
    let verifications = summary["rig_verifications"].as_array().unwrap();
    let status: Vec<(&str, &str)> =
        verifications.iter().map(|v| (v["rig"].as_str().unwrap(), v["status"].as_str().unwrap())).collect();
    assert_eq!(
        status,
        vec![
            ("RIG-A", "verified"),
            ("RIG-B", "verified"),
            ("RIG-C", "verified"),
            ("RIG-D", "failed"),
            ("RIG-E", "missing")
        ]
    );
    let check = &verifications[3]["checks"][0];
    assert_eq!(check["passed"], false);
    // Common practice, no published source: deviation = (measured − certified) / certified.
    let (measured, certified) =
        (check["measured_torque_nmm"].as_f64().unwrap(), check["certified_torque_nmm"].as_f64().unwrap());
    assert!(
        (check["deviation_pct"].as_f64().unwrap() - 100.0 * (measured - certified) / certified).abs() < 1e-9
    );
    assert!(check["deviation_pct"].as_f64().unwrap() > 1.0);
    // The reference checks are not tests of any lot, and are no noise either.
    assert!(summary["unlisted_tests"].as_array().unwrap().is_empty(), "{}", summary["unlisted_tests"]);
    // RIG-C's calibration ran out at 18:00; L2612-041 was tested on it after that.
    let late = lot(&summary, "L2612-041");
    assert!(
        late["grounds"]
            .as_array()
            .unwrap()
            .iter()
            .any(|g| g.as_str().unwrap().contains("calibration ran out")),
        "{late}"
    );
    // The lot no rig can take was never tested, so it is held for want of evidence.
    assert_eq!(lot(&summary, "L2612-060")["disposition"], "hold");

    // Severities come from the shipped switching record: TS-2210 earned reduced inspection
    // in earlier shifts, and L2612-040 is TS-0815's second rejection in five lots.
    let severity = |id: &str| lot(&summary, id)["plan"]["severity"].as_str().unwrap().to_string();
    assert_eq!(severity("L2612-031"), "reduced");
    assert_eq!(severity("L2612-040"), "normal");
    assert_eq!(lot(&summary, "L2612-040")["next_severity"], "tightened");
    assert_eq!(severity("L2612-041"), "tightened");
    assert_eq!(severity("L2612-050"), "normal");
    let shift_html = std::fs::read_to_string(out.path().join("shift_summary.html")).unwrap();
    assert!(shift_html.contains("normal → tightened"), "the summary shows where L2612-040 sends its part");
    assert!(
        shift_html.contains("Rig verifications with reference springs") && shift_html.contains("REF-D-01")
    );
    assert!(!shift_html.contains("Plan against reality"), "no plan was made for this run's output folder");
    // The shipped history already holds this shift's lots: the run replaces them, so every
    // part keeps the number of lots it had (and a second run changes nothing either).
    let stored_lots = |rows: &[Value]| -> Vec<(String, u64)> {
        rows.iter()
            .map(|r| (r["part"].as_str().unwrap().to_string(), r["recorded_lots"].as_u64().unwrap()))
            .collect()
    };
    let after_first = stored_lots(&switching_json_with(&plant, history.path()));
    let (_, again) = run_shift_with(&sample_shift_dir(), &plant, out.path(), &history_arg);
    assert_eq!(
        stored_lots(&switching_json_with(&plant, history.path())),
        after_first,
        "re-running a shift must replace its own lots, not add to them"
    );
    assert_eq!(again["lots"], summary["lots"], "the same shift decided again decides the same");

    // Every lot lists every class's plan, the deciding one marked; L2612-040 was decided
    // by its major class (Ac 2 Re 3), not by the critical plan with the same sample size.
    for l in lots.iter().filter(|l| l["tested"] != 0) {
        let plans = l["plans"].as_array().unwrap();
        assert!(!plans.is_empty(), "{}", l["lot"]);
        for plan in plans {
            for key in [
                "severity",
                "lot_size_letter",
                "code_letter",
                "sample_size",
                "accept",
                "reject",
                "tested",
                "defectives",
                "outcome",
                "deciding",
            ] {
                assert!(plan.get(key).is_some(), "plan field {key} missing in {plan}");
            }
        }
        // A plan decided the lot, and is marked, unless the evidence held it (a rig not
        // verified or out of calibration): then no plan is marked.
        let by_plan = l["decided_by"]
            .as_str()
            .is_some_and(|g| ["critical:", "major:", "minor:", "variables"].iter().any(|c| g.starts_with(c)));
        assert_eq!(
            plans.iter().filter(|p| p["deciding"] == true).count(),
            usize::from(by_plan),
            "deciding plans in {}",
            l["lot"]
        );
        assert!(l["decided_by"].as_str().is_some_and(|g| l["grounds"]
            .as_array()
            .unwrap()
            .iter()
            .any(|x| x == g)));
        assert!(l["spec_revision"].as_str().is_some_and(|r| !r.is_empty()), "{}", l["lot"]);
        assert!(l["spec_file"]
            .as_str()
            .is_some_and(|f| f.ends_with(&format!("{}.yaml", l["part"].as_str().unwrap()))));
    }
    let deciding = |id: &str| {
        lot(&summary, id)["plans"].as_array().unwrap().iter().find(|p| p["deciding"] == true).unwrap().clone()
    };
    let rejected_040 = deciding("L2612-040");
    // From memory: MIL-STD-105E Table I lot 281–500 level II: H (n 50); Table II-A, H at AQL 1.5: Ac 2 Re 3.
    assert_eq!(
        (rejected_040["class"].as_str(), rejected_040["accept"].as_u64(), rejected_040["reject"].as_u64()),
        (Some("major"), Some(2), Some(3))
    );
    assert_eq!(rejected_040["defectives"], 3);
    // L2612-041 (120 parts, level II) has the lot-size letter F (From memory: MIL-STD-105E
    // Table I, lot 91–150, level II: F); its major plan on tightened is the one the scheme's
    // table gives after its arrows, the same plan `twistlot sampling` looks up for the lot.
    let major_041 = lot(&summary, "L2612-041")["plans"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["class"] == "major")
        .unwrap()
        .clone();
    assert_eq!(major_041["lot_size_letter"], "F");
    let looked_up = twistlot()
        .args([
            "sampling",
            "--lot-size",
            "120",
            "--aql",
            "1.5",
            "--severity",
            "tightened",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    let looked_up: Value = serde_json::from_slice(&looked_up.stdout).unwrap();
    assert_eq!(major_041["code_letter"], looked_up["code_letter"]);
    assert_eq!(major_041["sample_size"], looked_up["sample_size"]);
    assert_ne!(major_041["code_letter"], "F", "an arrow led away from the lot size's letter");
    // A zero-acceptance plan under reduced inspection keeps the normal sample and says so
    // (the project's zero-acceptance rule, `sampling::zero_acceptance_plan`).
    let critical_031 = lot(&summary, "L2612-031")["plans"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["class"] == "critical")
        .unwrap()
        .clone();
    assert_eq!(critical_031["severity"], "normal");

    // Each unreadable file belongs to its own lot's report only (its metadata named the lot).
    let own = |id: &str| -> Vec<String> {
        lot(&summary, id)["rejected_files"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| r["file"].as_str().unwrap().to_string())
            .collect()
    };
    assert!(own("L2612-041")[0].ends_with("rig-c/L2612-041-018.dat"), "{:?}", own("L2612-041"));
    assert!(own("L2612-051")[0].ends_with("rig-b/L2612-051-027.csv"));
    assert!(own("L2612-040").is_empty() && own("L2612-031").is_empty());
    let report = |id: &str| {
        std::fs::read_to_string(out.path().join(lot(&summary, id)["report_html"].as_str().unwrap())).unwrap()
    };
    let html_040 = report("L2612-040");
    assert!(
        !html_040.contains("L2612-041-018.dat") && !html_040.contains("L2612-051-027.csv"),
        "another lot's file"
    );
    assert!(
        report("L2612-041").contains("L2612-041-018.dat") && !report("L2612-041").contains("L2612-051-027")
    );
    let shift_html = std::fs::read_to_string(out.path().join("shift_summary.html")).unwrap();
    assert!(shift_html.contains("L2612-041-018.dat") && shift_html.contains("L2612-051-027.csv"));

    // Calibration due dates come from the plant config; the swing bench RIG-E has none recorded.
    // RIG-C's runs out at 18:00: L2612-040 was tested before, L2612-041 after.
    let rigs_of = |id: &str| lot(&summary, id)["rigs"].as_array().unwrap().clone();
    assert_eq!(rigs_of("L2612-040")[0]["calibration_due"], "2026-12-01T18:00:00");
    assert_eq!(rigs_of("L2612-040")[0]["lapsed"], false);
    assert_eq!(rigs_of("L2612-041")[0]["lapsed"], true);
    assert!(rigs_of("L2612-070")[0]["calibration_due"].is_null());
    assert!(report("L2612-070").contains("not recorded"));
    assert!(html_040.contains("2026-12-01T18:00:00"));

    // The lot report is one self-contained page: a strip chart per toleranced
    // characteristic (TS-0815: rate, free angle, torque at 60° and 100°), the curves and
    // the OC chart, a data sheet of every tested part, the approval block and the cautions.
    let html = report("L2612-041");
    assert_eq!(html.matches("<svg").count(), 4 + 2, "four strips, curves, OC");
    assert!(!html.contains("<link") && !html.contains("<script src"), "self-contained");
    assert!(html.contains("L2612-041") && html.contains("TS-0815"));
    assert!(html.contains("Data sheet: every tested part (31)"));
    assert!(html.contains("Tomasz Whitcombe") && html.contains("RIG-C"));
    assert!(html.contains("<section class=\"approval\""));
    assert_eq!(
        html.matches("<td class=\"line\"></td>").count(),
        9,
        "the demo plant names nobody: blank lines"
    );
    assert!(html.contains("stores energy"), "the cautions are printed");
    assert!(html.contains("all 31 curves"));
    // Plant-local time to the second, with the plant's offset, no fraction of a second.
    let stamp = summary_stamp(&html);
    assert!(stamp.ends_with(" +01:00") && stamp.len() == "2026-12-02 06:00:00 +01:00".len(), "{stamp}");
    assert!(out.path().join("shift_summary.html").is_file());

    // tests.csv has one row per evaluated test, a column per test angle, and no float noise.
    let csv = std::fs::read_to_string(out.path().join("tests.csv")).unwrap();
    assert_eq!(csv.lines().count() as u64, 1 + accepted);
    let rows = twistlot_tests::parse_csv(&csv).unwrap();
    let status = rows[0].iter().position(|h| h == "status").expect("a status column");
    assert_eq!(
        rows[1..].iter().filter(|r| r[status] == "reference").count(),
        4,
        "one reference check per rig"
    );
    let header = &rows[0];
    for column in [
        "started",
        "spec_revision",
        "rate_r2",
        "linearity_pct",
        "torque_nmm_at_20",
        "torque_nmm_at_30",
        "torque_nmm_at_50",
        "torque_nmm_at_60",
        "torque_nmm_at_100",
        "hysteresis_pct_at_60",
    ] {
        assert!(header.iter().any(|h| h == column), "no column {column} in {header:?}");
    }
    for row in &rows[1..] {
        assert_eq!(row.len(), header.len());
        for field in row {
            if let Some((_, decimals)) = field.split_once('.') {
                if decimals.chars().all(|c| c.is_ascii_digit()) {
                    assert!(decimals.len() <= 6, "float noise in {field}");
                }
            }
        }
    }
    // The shipped sink keeps one line per lot.
    let sink = std::fs::read_to_string(out.path().join("lots.jsonl")).unwrap();
    assert_eq!(sink.lines().count(), 8);
    let first: Value = serde_json::from_str(sink.lines().next().unwrap()).unwrap();
    assert_eq!(first["lot"]["lot"], "L2612-031");
    assert_eq!(first["tests"].as_array().unwrap().len(), 50);
    assert!(summary["sink_failures"].as_array().unwrap().is_empty());
}

/// The "made" stamp in a report's subtitle.
fn summary_stamp(html: &str) -> String {
    let at = html.find(" · made ").expect("a made stamp") + " · made ".len();
    html[at..].split('<').next().unwrap().to_string()
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
    assert!(html.contains("&lt;script&gt;alert(1)&lt;&#x2f;script&gt;"), "the serial is shown escaped");
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

/// A shift of native TS-2210 exports in lot `lot`; the first `bad` parts have a rate far out of tolerance.
fn shift_of(dir: &Path, lot: &str, bad: usize) {
    std::fs::create_dir_all(dir).unwrap();
    std::fs::write(
        dir.join("lots.yaml"),
        format!("lots:\n  - {{ lot: {lot}, part: TS-2210, quantity: 20 }}\n"),
    )
    .unwrap();
    for i in 0..20 {
        let mut text = format!(
            "# serial: {lot}-{i:02}\n# part: TS-2210\n# lot: {lot}\n# rig: RIG-N\nangle_deg,torque_nmm\n"
        );
        let rate = if i < bad { 35.0 } else { 29.0 + 0.01 * i as f64 };
        for k in 0..=180 {
            text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 1.004));
        }
        for k in (0..180).rev() {
            text.push_str(&format!("{:.3},{:.3}\n", k as f64 * 0.5, rate * k as f64 * 0.5 * 0.996));
        }
        std::fs::write(dir.join(format!("p{i:02}.csv")), text).unwrap();
    }
}

fn switching_json(plant: &Path) -> Vec<Value> {
    let output = twistlot()
        .args(["switching", "--plant", plant.to_str().unwrap(), "--format", "json"])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    serde_json::from_slice(&output.stdout).unwrap()
}

/// `twistlot switching` of `plant` with its history in `history`.
fn switching_json_with(plant: &Path, history: &Path) -> Vec<Value> {
    let output = twistlot()
        .args(["switching", "--plant", plant.to_str().unwrap(), "--format", "json", "--history"])
        .arg(history)
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    serde_json::from_slice(&output.stdout).unwrap()
}

fn standing<'a>(rows: &'a [Value], part: &str) -> &'a Value {
    rows.iter().find(|r| r["part"] == part).unwrap_or_else(|| panic!("no part {part} in {rows:?}"))
}

#[test]
fn severity_carries_from_shift_to_shift_and_reruns_do_not_count_twice() {
    let root = tempfile::tempdir().unwrap();
    let history = root.path().join("history");
    let plant = plant_with(root.path(), &format!("history: {}\n", history.display()));
    let record = history.clone();

    // A history folder that does not exist is refused (a typo must not restart every part
    // on normal inspection) unless the run is told to start a new history there.
    let dir = root.path().join("s1");
    shift_of(&dir, "L-1", 1);
    let refused = twistlot()
        .args(["shift", dir.to_str().unwrap(), "--plant", plant.to_str().unwrap(), "--out"])
        .arg(root.path().join("out-refused"))
        .output()
        .unwrap();
    assert_eq!(refused.status.code(), Some(1));
    let stderr = String::from_utf8_lossy(&refused.stderr);
    assert!(stderr.contains("does not exist") && stderr.contains("--init-history"), "{stderr}");
    assert!(!history.exists());

    // MIL-STD-105E §8.3 (normal → tightened): 2 lots not accepted within 5 consecutive lots.
    let mut dispositions = Vec::new();
    for (shift, lot) in [("s1", "L-1"), ("s2", "L-2")] {
        let dir = root.path().join(shift);
        shift_of(&dir, lot, 1);
        let out = root.path().join(format!("out-{shift}"));
        let (_, summary) = run_shift_with(&dir, &plant, &out, &["--init-history"]);
        dispositions.push(summary["lots"][0]["disposition"].clone());
        assert_eq!(summary["lots"][0]["plan"]["severity"], "normal");
    }
    assert_eq!(dispositions, ["reject", "reject"]);
    assert_eq!(standing(&switching_json(&plant), "TS-2210")["severity"], "tightened");
    let lots_before = standing(&switching_json(&plant), "TS-2210")["recorded_lots"].clone();
    assert_eq!(lots_before, 2);
    // The history is Parquet in Hive folders: one file per part and shift.
    assert!(record.join("lots/part=TS-2210/shift=s2/data.parquet").is_file());

    // Re-running the second shift replaces its own lot.
    let (_, again) = run_shift(&root.path().join("s2"), &plant, &root.path().join("out-again"));
    assert_eq!(again["lots"][0]["plan"]["severity"], "normal", "s2 is still judged from before itself");
    assert_eq!(standing(&switching_json(&plant), "TS-2210")["recorded_lots"], lots_before);
    // The same lot run again from another folder name replaces it too: switching is keyed by lot.
    let copy = root.path().join("s2-copy");
    shift_of(&copy, "L-2", 1);
    run_shift(&copy, &plant, &root.path().join("out-copy"));
    assert_eq!(standing(&switching_json(&plant), "TS-2210")["recorded_lots"], lots_before);

    // The next shift is inspected on tightened, and says why.
    let dir = root.path().join("s3");
    shift_of(&dir, "L-3", 0);
    let (_, summary) = run_shift(&dir, &plant, &root.path().join("out-s3"));
    let l3 = &summary["lots"][0];
    assert_eq!(l3["plan"]["severity"], "tightened");
    let grounds: Vec<&str> = l3["grounds"].as_array().unwrap().iter().map(|g| g.as_str().unwrap()).collect();
    assert!(grounds.iter().any(|g| g.contains("tightened") && g.contains("since lot L-2")), "{grounds:?}");
}

#[test]
fn a_discontinued_part_is_held_until_resumed() {
    let root = tempfile::tempdir().unwrap();
    let history = root.path().join("history");
    std::fs::create_dir_all(&history).unwrap();
    // Two rejections on normal, then five on tightened: the discontinuation count of the shipped scheme.
    let mut record = String::new();
    for i in 0..7 {
        record.push_str(&format!(
            "{{\"part\":\"TS-2210\",\"shift\":\"old-{i}\",\"lot\":\"O-{i}\",\"kind\":\"reject\",\"sample_size\":5,\"defectives\":1,\"aql_pct\":1.0}}\n"
        ));
    }
    std::fs::write(history.join("switching.jsonl"), record).unwrap();
    let plant = plant_with(root.path(), &format!("history: {}\n", history.display()));
    assert_eq!(standing(&switching_json(&plant), "TS-2210")["severity"], "discontinued");

    let dir = root.path().join("s1");
    shift_of(&dir, "L-9", 0);
    let (_, summary) = run_shift(&dir, &plant, &root.path().join("out-1"));
    let held = &summary["lots"][0];
    assert_eq!(held["disposition"], "hold", "{held}");
    assert!(held["grounds"].to_string().contains("discontinued"), "{held}");

    // Resuming needs a note, and is refused for a part that is not discontinued.
    let plant_arg = plant.to_str().unwrap();
    let refused = twistlot()
        .args(["switching", "resume", "TS-0815", "--plant", plant_arg, "--note", "x"])
        .output()
        .unwrap();
    assert_eq!(refused.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&refused.stderr).contains("not discontinued"));
    let resumed = twistlot()
        .args([
            "switching",
            "resume",
            "TS-2210",
            "--plant",
            plant_arg,
            "--note",
            "8D report 1142 approved by QA (invented)",
        ])
        .output()
        .unwrap();
    assert_eq!(resumed.status.code(), Some(0), "{}", String::from_utf8_lossy(&resumed.stderr));
    assert_eq!(standing(&switching_json(&plant), "TS-2210")["severity"], "tightened");

    let dir = root.path().join("s2");
    shift_of(&dir, "L-10", 0);
    let (_, summary) = run_shift(&dir, &plant, &root.path().join("out-2"));
    assert_eq!(summary["lots"][0]["disposition"], "accept");
    assert_eq!(summary["lots"][0]["plan"]["severity"], "tightened");
}

#[test]
fn a_broken_switching_record_stops_the_shift_naming_file_and_line() {
    let root = tempfile::tempdir().unwrap();
    let history = root.path().join("history");
    std::fs::create_dir_all(&history).unwrap();
    std::fs::write(
        history.join("switching.jsonl"),
        "{\"part\":\"TS-2210\",\"shift\":\"a\",\"lot\":\"A\",\"kind\":\"accept\"}\n{\"part\":\"TS-2210\",\"shift\":\"a\",\"lot\":\"B\",\"kind\":\"acept\"}\n",
    )
    .unwrap();
    let plant = plant_with(root.path(), &format!("history: {}\n", history.display()));
    let dir = root.path().join("s1");
    shift_of(&dir, "L-1", 0);
    let output = twistlot()
        .args(["shift", dir.to_str().unwrap(), "--plant", plant.to_str().unwrap()])
        .args(["--out", root.path().join("out").to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(1));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("switching.jsonl:2:") && stderr.contains("acept"), "{stderr}");
    assert!(!root.path().join("out").join("summary.json").exists(), "nothing is decided on a broken record");
}
