//! `twistlot sampling` through the real binary.

use serde_json::Value;
use twistlot_tests::twistlot;

fn json(args: &[&str]) -> Value {
    let output = twistlot().arg("sampling").args(args).args(["--format", "json"]).output().unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    serde_json::from_slice(&output.stdout).unwrap()
}

#[test]
fn a_plan_from_the_tables() {
    // From memory: MIL-STD-105E Table I, lot 281–500 at level II is letter H;
    // Table II-A, letter H (n = 50) at AQL 1.0: Ac 1, Re 2.
    let plan = json(&["--lot-size", "400", "--aql", "1.0"]);
    assert_eq!(plan["code_letter"], "H");
    assert_eq!(plan["sample_size"], 50);
    assert_eq!(plan["accept"], 1);
    assert_eq!(plan["reject"], 2);
    assert_eq!(plan["severity"], "normal");
    // From memory: MIL-STD-105E Table II-B, letter H (n = 50) at AQL 1.0 tightened: arrow down to J (n = 80), Ac 1, Re 2.
    let tightened = json(&["--lot-size", "400", "--aql", "1.0", "--severity", "tightened"]);
    assert_eq!(tightened["sample_size"], 80);
    assert_eq!(tightened["accept"], 1);
}

#[test]
fn a_plan_designed_from_risks_meets_both() {
    let plan = json(&["design", "--aql", "1", "--alpha", "0.05", "--ltpd", "5", "--beta", "0.1"]);
    let n = plan["sample_size"].as_u64().unwrap();
    let c = plan["accept"].as_u64().unwrap();
    // The OC points themselves show both risks are met.
    let oc = plan["oc"].as_array().unwrap();
    assert!(oc.len() > 10);
    let pa_at = |pct: f64| -> f64 {
        let p = pct / 100.0;
        // Binomial P(X ≤ c), independent of the binary's code.
        (0..=c).map(|k| binomial(n, k) * p.powi(k as i32) * (1.0 - p).powi((n - k) as i32)).sum()
    };
    assert!(pa_at(1.0) >= 0.95, "{n} {c}");
    assert!(pa_at(5.0) <= 0.10, "{n} {c}");
    let variables = json(&["design", "--aql", "1", "--ltpd", "6", "--variables"]);
    assert!(variables["k"].as_f64().unwrap() > 1.5);
    assert!(variables["sample_size"].as_u64().unwrap() < n, "variables plans need fewer parts");
}

fn binomial(n: u64, k: u64) -> f64 {
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}

#[test]
fn a_value_outside_the_aql_series_is_refused() {
    let output = twistlot().args(["sampling", "--lot-size", "400", "--aql", "1.3"]).output().unwrap();
    assert_eq!(output.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&output.stderr).contains("1.3"));
}
