//! Check plugins: extra per-part criteria written as minijinja expressions.
//!
//! An expression sees two variables: `metrics` (the test's [`CurveMetrics`],
//! with metrics that were not measured left out) and `spec` (the [`PartSpec`]
//! as written). It must give `true` (pass) or `false` (fail).
//!
//! Undefined values are strict: an expression that touches a metric the test
//! does not have (a torque at an angle never reached, a rate that could not be
//! fitted) stops with an error, and the check's finding is *invalid* — never a
//! pass, and never a fail the part did not earn. That is why missing metrics are
//! left out of `metrics` rather than passed as `none`: in minijinja `none < 6`
//! would quietly be a comparison, not an error.

use crate::metrics::CurveMetrics;
use minijinja::value::{Value, ValueKind};
use minijinja::{Environment, UndefinedBehavior};
use std::collections::BTreeMap;
use twistlot_model::plugin::CheckManifest;
use twistlot_model::{Finding, PartSpec, Verdict};

/// A check plugin that cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CheckError {
    /// The expression does not parse.
    #[error("check plugin `{name}`: the expression `{expression}` does not compile: {detail}")]
    Compile {
        /// Plugin name.
        name: String,
        /// The expression as written.
        expression: String,
        /// What the expression engine said.
        detail: String,
    },
}

/// Check plugins ready to evaluate, one test after another.
///
/// Every expression is compiled once in [`CheckSet::new`], so a broken plugin is
/// refused before the shift starts rather than on the first part. Evaluation
/// re-parses the (short) expression per test: minijinja's compiled expression
/// borrows its environment, and keeping both in one struct would need
/// self-referencing types for a saving of microseconds per test.
#[derive(Debug)]
pub struct CheckSet {
    env: Environment<'static>,
    checks: Vec<CheckManifest>,
}

impl CheckSet {
    /// Compiles the checks; the first that does not compile is an error naming it.
    pub fn new(checks: &[CheckManifest]) -> Result<CheckSet, CheckError> {
        let mut env = Environment::new();
        env.set_undefined_behavior(UndefinedBehavior::Strict);
        for check in checks {
            if let Err(err) = env.compile_expression(&check.expression) {
                return Err(CheckError::Compile {
                    name: check.name.clone(),
                    expression: check.expression.clone(),
                    detail: err.to_string(),
                });
            }
        }
        Ok(CheckSet { env, checks: checks.to_vec() })
    }

    /// A set with no checks.
    pub fn empty() -> CheckSet {
        CheckSet { env: Environment::new(), checks: Vec::new() }
    }

    /// The checks in this set.
    pub fn checks(&self) -> &[CheckManifest] {
        &self.checks
    }

    /// Evaluates every check that applies to `spec.part`, one finding each.
    pub fn evaluate(&self, metrics: &CurveMetrics, spec: &PartSpec) -> Vec<Finding> {
        let applicable: Vec<&CheckManifest> =
            self.checks.iter().filter(|c| c.parts.is_empty() || c.parts.contains(&spec.part)).collect();
        if applicable.is_empty() {
            return Vec::new();
        }
        let measured = measured_metrics(metrics);
        let spec_value = Value::from_serialize(spec);
        let context = minijinja::context! { metrics => &measured, spec => &spec_value };
        applicable.into_iter().map(|check| self.evaluate_one(check, &context, &measured)).collect()
    }

    fn evaluate_one(
        &self,
        check: &CheckManifest,
        context: &Value,
        measured: &BTreeMap<String, Value>,
    ) -> Finding {
        let finding = |verdict, message: String| Finding {
            characteristic: check.name.clone(),
            class: check.class,
            value: None,
            lower: None,
            upper: None,
            verdict,
            message,
        };
        let expression = match self.env.compile_expression(&check.expression) {
            Ok(expression) => expression,
            Err(err) => {
                return finding(Verdict::Invalid, format!("check `{}` does not compile: {err}", check.name))
            }
        };
        match expression.eval(context) {
            Ok(value) if value.kind() == ValueKind::Bool => {
                if value.is_true() {
                    finding(Verdict::Pass, format!("check `{}` met", check.name))
                } else {
                    finding(Verdict::Fail, check.message.clone())
                }
            }
            Ok(value) if value.is_undefined() || value.is_none() => finding(
                Verdict::Invalid,
                format!(
                    "check `{}` not evaluated: {}",
                    check.name,
                    missing_reason(&check.expression, measured)
                ),
            ),
            Ok(value) => {
                finding(Verdict::Invalid, format!("check `{}` gave `{value}`, not true or false", check.name))
            }
            Err(err) => {
                let missing = missing_metrics(&check.expression, measured);
                let reason = if missing.is_empty() {
                    format!("check `{}` could not be evaluated: {err}", check.name)
                } else {
                    format!(
                        "check `{}` not evaluated: it needs {}, which this test does not have",
                        check.name,
                        missing.join(", ")
                    )
                };
                finding(Verdict::Invalid, reason)
            }
        }
    }
}

/// The metrics as a map, without those that were not measured.
fn measured_metrics(metrics: &CurveMetrics) -> BTreeMap<String, Value> {
    let value = Value::from_serialize(metrics);
    let mut out = BTreeMap::new();
    if let Ok(keys) = value.try_iter() {
        for key in keys {
            if let Ok(item) = value.get_item(&key) {
                if !item.is_none() && !item.is_undefined() {
                    out.insert(key.to_string(), item);
                }
            }
        }
    }
    out
}

/// `metrics.<name>` fields and `torque_nmm_at["<angle>"]`-style entries the
/// expression names that the test does not have.
fn missing_metrics(expression: &str, measured: &BTreeMap<String, Value>) -> Vec<String> {
    let mut missing = Vec::new();
    let mut rest = expression;
    while let Some(at) = rest.find("metrics.") {
        rest = &rest[at + "metrics.".len()..];
        let name: String = rest.chars().take_while(|c| c.is_ascii_alphanumeric() || *c == '_').collect();
        if name.is_empty() {
            continue;
        }
        let label = format!("metrics.{name}");
        match measured.get(&name) {
            None => {
                if !missing.contains(&label) {
                    missing.push(label);
                }
            }
            Some(map) if map.kind() == ValueKind::Map => {
                // Only the subscript right after this name belongs to it.
                let after = &rest[name.len()..];
                let entry = match leading_subscript(after) {
                    Some(key) => {
                        let present =
                            map.get_item(&Value::from(key.as_str())).is_ok_and(|v| !v.is_undefined());
                        (!present).then(|| format!("metrics.{name}[\"{key}\"]"))
                    }
                    None => (map.len() == Some(0)).then(|| format!("values in metrics.{name}")),
                };
                if let Some(entry) = entry.filter(|e| !missing.contains(e)) {
                    missing.push(entry);
                }
            }
            Some(_) => {}
        }
    }
    missing
}

/// The string key of a subscript that starts `text`, e.g. `["60"]` → `60`.
fn leading_subscript(text: &str) -> Option<String> {
    let tail = text.trim_start().strip_prefix('[')?.trim_start();
    let quote = tail.chars().next().filter(|c| *c == '"' || *c == '\'')?;
    let tail = &tail[1..];
    let end = tail.find(quote)?;
    Some(tail[..end].to_string())
}

fn missing_reason(expression: &str, measured: &BTreeMap<String, Value>) -> String {
    let missing = missing_metrics(expression, measured);
    if missing.is_empty() {
        "the expression gave no value (a metric it reads may be missing)".to_string()
    } else {
        format!("it needs {}, which this test does not have", missing.join(", "))
    }
}

#[cfg(test)]
pub(crate) mod tests {
    /// This crate's folder as cargo names it when running the test (not as compiled in),
    /// so a test binary from a shared build cache reads this checkout's files.
    fn crate_dir() -> std::path::PathBuf {
        std::env::var_os("CARGO_MANIFEST_DIR")
            .map_or_else(|| std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")), std::path::PathBuf::from)
    }

    use super::*;
    use crate::metrics::tests::Law;
    use crate::metrics::{curve_metrics, MetricOptions};
    use twistlot_model::{CharacteristicClass, Manifest};

    pub(crate) const SPEC: &str = r#"
part: TS-100
revision: B
customer: Example Hinge Co.
material: { name: spring steel wire, modulus_n_per_mm2: 206000 }
geometry:
  wire_diameter_mm: 1.6
  mean_diameter_mm: 14.0
  body_coils: 5.5
  leg_lengths_mm: [20, 25]
  wind: right
test:
  max_angle_deg: 90
  pre_cycles: 1
characteristics:
  rate_nmm_per_deg: { nominal: 4.0, tolerance: "±8%", class: major }
  torque_at:
    - { angle_deg: 60, nominal_nmm: 240, tolerance: "+20/-15 N·mm", class: critical }
  free_angle_deg: { nominal: 0, tolerance: 3, class: minor }
  hysteresis: { at_angles_deg: [45], max_pct: 8, class: minor }
  linearity: { max_pct: 3, class: minor }
"#;

    fn plugin(file: &str) -> CheckManifest {
        // The demo plant's own check plugins.
        let path = format!("{}/../../sample_lots/plugins/checks/{file}", crate_dir().display());
        let text = std::fs::read_to_string(&path).unwrap();
        match Manifest::from_yaml(&path, &text).unwrap() {
            Manifest::Check(check) => check,
            other => panic!("{file} is not a check: {other:?}"),
        }
    }

    fn manifest(name: &str, expression: &str) -> CheckManifest {
        CheckManifest {
            name: name.to_string(),
            kind: twistlot_model::PluginKind::Check,
            api: 1,
            description: "test".into(),
            parts: Vec::new(),
            expression: expression.to_string(),
            message: format!("{name} failed"),
            class: CharacteristicClass::Minor,
        }
    }

    fn metrics_for(law: &Law, spec: &PartSpec, checks: &[CheckManifest]) -> CurveMetrics {
        let options = MetricOptions::from_spec(spec).with_check_angles(checks, Some(&spec.part));
        curve_metrics(&law.curve(), &options).unwrap()
    }

    /// The shipped torque-ratio check, opened to every part (it ships limited to one).
    fn torque_ratio_for_any_part() -> CheckManifest {
        let mut check = plugin("torque-ratio.yaml");
        check.parts.clear();
        check
    }

    #[test]
    fn the_shipped_torque_ratio_skips_parts_it_does_not_name() {
        let spec = PartSpec::from_yaml("ts100.yaml", SPEC).unwrap();
        let check = plugin("torque-ratio.yaml");
        assert!(!check.parts.contains(&spec.part), "the shipped check names {:?}", check.parts);
        let set = CheckSet::new(std::slice::from_ref(&check)).unwrap();
        let m = metrics_for(&Law::new(4.0, -10.0), &spec, std::slice::from_ref(&check));
        assert!(set.evaluate(&m, &spec).is_empty());
    }

    #[test]
    fn shipped_torque_ratio_passes_a_linear_spring_and_fails_an_offset_one() {
        let spec = PartSpec::from_yaml("ts100.yaml", SPEC).unwrap();
        let checks = vec![torque_ratio_for_any_part()];
        let set = CheckSet::new(&checks).unwrap();
        // Free angle 0: M(60)/M(30) = 2 exactly.
        let m = metrics_for(&Law::new(4.0, 0.0), &spec, &checks);
        let findings = set.evaluate(&m, &spec);
        assert_eq!(findings.len(), 1);
        assert_eq!(findings[0].verdict, Verdict::Pass, "{:?}", findings[0]);
        assert_eq!(findings[0].characteristic, "torque-ratio");
        // Free angle −10°: (70/40) = 1.75, below the band.
        let m = metrics_for(&Law::new(4.0, -10.0), &spec, &checks);
        let findings = set.evaluate(&m, &spec);
        assert_eq!(findings[0].verdict, Verdict::Fail);
        assert_eq!(findings[0].message, checks[0].message);
    }

    #[test]
    fn shipped_tight_hysteresis_uses_the_measured_angles() {
        let spec = PartSpec::from_yaml("ts100.yaml", SPEC).unwrap();
        let checks = vec![plugin("tight-hysteresis.yaml")];
        let set = CheckSet::new(&checks).unwrap();
        // Band 8 N·mm at 45° on 4·45 = 180 N·mm: 4.4 %.
        let law = Law { band: 8.0, ..Law::new(4.0, 0.0) };
        let findings = set.evaluate(&metrics_for(&law, &spec, &checks), &spec);
        assert_eq!(findings[0].verdict, Verdict::Pass, "{:?}", findings[0]);
        // Band 14.4 N·mm: 8 % — inside the drawing's 8 % but not the plant's 6 %.
        let law = Law { band: 14.4, ..Law::new(4.0, 0.0) };
        let findings = set.evaluate(&metrics_for(&law, &spec, &checks), &spec);
        assert_eq!(findings[0].verdict, Verdict::Fail, "{:?}", findings[0]);
    }

    #[test]
    fn a_missing_metric_is_invalid_not_pass() {
        let spec = PartSpec::from_yaml("ts100.yaml", SPEC).unwrap();
        let checks = vec![torque_ratio_for_any_part(), plugin("tight-hysteresis.yaml")];
        let set = CheckSet::new(&checks).unwrap();
        // The part stops at 50°: no torque at 60°, no hysteresis at 45° without unloading.
        let law = Law { max_deg: 50.0, ..Law::new(4.0, 0.0) };
        let mut curve = law.curve();
        let keep: Vec<usize> =
            (0..curve.len()).filter(|&i| curve.stroke[i] == twistlot_model::Stroke::Load).collect();
        curve.angle_deg = keep.iter().map(|&i| curve.angle_deg[i]).collect();
        curve.torque_nmm = keep.iter().map(|&i| curve.torque_nmm[i]).collect();
        curve.stroke = keep.iter().map(|&i| curve.stroke[i]).collect();
        curve.cycle = keep.iter().map(|&i| curve.cycle[i]).collect();
        let options = MetricOptions::from_spec(&spec).with_check_angles(&checks, None);
        let m = curve_metrics(&curve, &options).unwrap();
        let findings = set.evaluate(&m, &spec);
        assert_eq!(findings.len(), 2);
        for f in &findings {
            assert_eq!(f.verdict, Verdict::Invalid, "{f:?}");
        }
        assert!(findings[0].message.contains(r#"metrics.torque_nmm_at["60"]"#), "{}", findings[0].message);
        assert!(
            findings[1].message.contains("values in metrics.hysteresis_pct_at"),
            "{}",
            findings[1].message
        );
        // A rate that could not be fitted is left out of `metrics`, so `none > 0` cannot quietly pass.
        let set = CheckSet::new(&[manifest("positive-rate", "metrics.rate_nmm_per_deg > 0")]).unwrap();
        let findings = set.evaluate(&m, &spec);
        assert_eq!(findings[0].verdict, Verdict::Invalid, "{:?}", findings[0]);
        assert!(findings[0].message.contains("metrics.rate_nmm_per_deg"), "{}", findings[0].message);
    }

    #[test]
    fn the_spec_is_visible_and_parts_filter() {
        let spec = PartSpec::from_yaml("ts100.yaml", SPEC).unwrap();
        let m = metrics_for(&Law::new(4.0, 0.0), &spec, &[]);
        let mut near_nominal = manifest(
            "near-nominal",
            "(metrics.rate_nmm_per_deg - spec.characteristics.rate_nmm_per_deg.nominal) | abs < 0.01",
        );
        let set = CheckSet::new(std::slice::from_ref(&near_nominal)).unwrap();
        assert_eq!(set.evaluate(&m, &spec)[0].verdict, Verdict::Pass);
        near_nominal.parts = vec!["OTHER-1".into()];
        let set = CheckSet::new(&[near_nominal]).unwrap();
        assert!(set.evaluate(&m, &spec).is_empty());
        let set = CheckSet::new(&[manifest("not-bool", "metrics.rate_nmm_per_deg * 2")]).unwrap();
        assert_eq!(set.evaluate(&m, &spec)[0].verdict, Verdict::Invalid);
    }

    #[test]
    fn a_broken_expression_names_the_plugin() {
        let err = CheckSet::new(&[manifest("ok", "true"), manifest("broken", "metrics.rate_nmm_per_deg >")])
            .unwrap_err();
        let CheckError::Compile { name, .. } = &err;
        assert_eq!(name, "broken");
        assert!(err.to_string().contains("`broken`"), "{err}");
    }
}
