//! Verdicts: each characteristic of the drawing judged on one test's metrics.
//!
//! Every characteristic the spec names gets one [`Finding`]: pass, fail, or
//! invalid with the reason. A value that could not be measured is never a pass;
//! an angle the curve never reached is invalid, not a fail either, since the
//! part was not shown to be bad — only the test was not good enough.
//!
//! Finding names follow [`PartSpec::classes`]: `rate`, `secant_rate`,
//! `torque@<angle>`, `free_angle`, `hysteresis`, `linearity`; plus
//! `energy_loss` when the hysteresis limit sets one, and each check plugin's name.

use crate::checks::{CheckError, CheckSet};
use crate::metrics::{angle_key, CurveMetrics};
use crate::text::num;
use serde::Serialize;
use twistlot_model::plugin::CheckManifest;
use twistlot_model::spec::torque_label;
use twistlot_model::{CharacteristicClass, Finding, Limits, PartSpec, Verdict};

/// A test's verdict and the findings it comes from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Judgement {
    /// Combined verdict ([`Verdict::combine`] of the findings).
    pub verdict: Verdict,
    /// One finding per characteristic and per applicable check plugin.
    pub findings: Vec<Finding>,
}

/// Judges `metrics` against `spec` and the check plugins.
///
/// Compiles the checks first; a check that does not compile is an error naming
/// it. For many tests, build a [`CheckSet`] once and call [`judge_with`].
pub fn judge(
    metrics: &CurveMetrics,
    spec: &PartSpec,
    checks: &[CheckManifest],
) -> Result<Judgement, CheckError> {
    let set = CheckSet::new(checks)?;
    Ok(judge_with(metrics, spec, &set))
}

/// Judges `metrics` against `spec` and an already compiled set of checks.
pub fn judge_with(metrics: &CurveMetrics, spec: &PartSpec, checks: &CheckSet) -> Judgement {
    let c = &spec.characteristics;
    let mut findings = Vec::new();
    let rate_reason = || {
        metrics
            .rate_unavailable
            .clone()
            .unwrap_or_else(|| "the fitted rate is zero, so there is no free angle".into())
    };

    if let Some(rate) = &c.rate_nmm_per_deg {
        let value = metrics.rate_nmm_per_deg.ok_or_else(rate_reason);
        findings.push(limit_finding("rate", rate.class, "rate", value, rate.limits(), "N·mm/°"));
    }

    if let Some(secant) = &c.secant_rate {
        let label = format!("secant rate {}–{}°", num(secant.from_deg), num(secant.to_deg));
        let value = if metrics.secant_deg != Some([secant.from_deg, secant.to_deg]) {
            Err(format!(
                "the metrics hold no secant rate between {}° and {}°",
                num(secant.from_deg),
                num(secant.to_deg)
            ))
        } else {
            metrics.secant_rate_nmm_per_deg.ok_or_else(|| {
                note(metrics, "secant rate")
                    .unwrap_or_else(|| "the torque at one of its angles was not measured".into())
            })
        };
        findings.push(limit_finding(
            "secant_rate",
            secant.class,
            &label,
            value,
            secant.tolerance.limits(secant.nominal_nmm_per_deg),
            "N·mm/°",
        ));
    }

    for torque in &c.torque_at {
        let angle = torque.angle_deg;
        let value = metrics
            .torque_nmm_at
            .get(&angle_key(angle))
            .copied()
            .ok_or_else(|| missing_angle(metrics, angle, "torque"));
        let label = format!("torque at {}°", num(angle));
        findings.push(limit_finding(
            &torque_label(angle),
            torque.class,
            &label,
            value,
            torque.limits(),
            "N·mm",
        ));
    }

    if let Some(free) = &c.free_angle_deg {
        let value = metrics.free_angle_deg.ok_or_else(rate_reason);
        findings.push(limit_finding("free_angle", free.class, "free angle", value, free.limits(), "°"));
    }

    if let Some(hysteresis) = &c.hysteresis {
        findings.push(hysteresis_finding(
            metrics,
            &hysteresis.at_angles_deg,
            hysteresis.max_pct,
            hysteresis.class,
        ));
        if let Some(max_loss) = hysteresis.max_energy_loss_pct {
            let value = metrics.energy_loss_pct.ok_or_else(|| {
                note(metrics, "energy loss")
                    .or_else(|| note(metrics, &format!("cycle {} has no unloading", metrics.evaluated_cycle)))
                    .unwrap_or_else(|| "the strokes share no angle range".into())
            });
            let limits = Limits { lower: None, upper: Some(max_loss) };
            findings.push(limit_finding("energy_loss", hysteresis.class, "energy loss", value, limits, "%"));
        }
    }

    if let Some(linearity) = &c.linearity {
        let value = metrics.linearity_pct.ok_or_else(|| {
            metrics.rate_unavailable.clone().unwrap_or_else(|| "the maximum torque is not above zero".into())
        });
        let limits = Limits { lower: None, upper: Some(linearity.max_pct) };
        findings.push(limit_finding("linearity", linearity.class, "linearity", value, limits, "%"));
    }

    findings.extend(checks.evaluate(metrics, spec));
    // A part the drawing judges only by free swing gives a torque curve nothing to pass on.
    if findings.is_empty() && spec.characteristics.dynamic.is_some() {
        findings.push(Finding {
            characteristic: "static".into(),
            class: CharacteristicClass::Critical,
            value: None,
            lower: None,
            upper: None,
            verdict: Verdict::Invalid,
            message: format!(
                "the spec for `{}` names only dynamic (free-swing) characteristics, so a torque curve cannot \
                 be judged against it",
                spec.part
            ),
        });
    }
    Judgement { verdict: Verdict::combine(findings.iter().map(|f| f.verdict)), findings }
}

/// The note in `metrics` about `what`, if there is one.
fn note(metrics: &CurveMetrics, what: &str) -> Option<String> {
    metrics.notes.iter().find(|n| n.starts_with(what)).cloned()
}

/// Why a value at `angle` is missing, in words.
fn missing_angle(metrics: &CurveMetrics, angle: f64, what: &str) -> String {
    let [start, _] = metrics.deflection_deg;
    if angle > metrics.max_angle_deg || angle < start {
        format!(
            "the curve never reached {}°: the loading stroke covers {}–{}°",
            num(angle),
            num(start),
            num(metrics.max_angle_deg)
        )
    } else {
        note(metrics, &format!("{what} at {}°", num(angle))).unwrap_or_else(|| {
            format!("{what} at {}° was not asked for when the metrics were computed", num(angle))
        })
    }
}

fn with_unit(value: f64, unit: &str) -> String {
    if unit == "°" {
        format!("{}°", num(value))
    } else {
        format!("{} {unit}", num(value))
    }
}

/// One finding of a value against limits; `Err` carries why there is no value.
pub(crate) fn limit_finding(
    characteristic: &str,
    class: CharacteristicClass,
    label: &str,
    value: Result<f64, String>,
    limits: Limits,
    unit: &str,
) -> Finding {
    let (value, verdict, message) = match value {
        Err(reason) => (None, Verdict::Invalid, format!("{label} not measured: {reason}")),
        Ok(v) => {
            let shown = with_unit(v, unit);
            match (limits.lower, limits.upper) {
                (Some(lo), _) if v < lo => (
                    Some(v),
                    Verdict::Fail,
                    format!("{label} {shown} below lower limit {}", with_unit(lo, unit)),
                ),
                (_, Some(hi)) if v > hi => (
                    Some(v),
                    Verdict::Fail,
                    format!("{label} {shown} above upper limit {}", with_unit(hi, unit)),
                ),
                (Some(lo), Some(hi)) => (
                    Some(v),
                    Verdict::Pass,
                    format!("{label} {shown} within {}–{}", num(lo), with_unit(hi, unit)),
                ),
                (Some(lo), None) => {
                    (Some(v), Verdict::Pass, format!("{label} {shown} at or above {}", with_unit(lo, unit)))
                }
                (None, Some(hi)) => {
                    (Some(v), Verdict::Pass, format!("{label} {shown} at or below {}", with_unit(hi, unit)))
                }
                (None, None) => (Some(v), Verdict::Pass, format!("{label} {shown} (no limit)")),
            }
        }
    };
    Finding {
        characteristic: characteristic.to_string(),
        class,
        value,
        lower: limits.lower,
        upper: limits.upper,
        verdict,
        message,
    }
}

/// Hysteresis is one characteristic however many angles it is taken at: the
/// worst angle decides, and a fail at one angle outweighs an angle not measured.
fn hysteresis_finding(
    metrics: &CurveMetrics,
    angles: &[f64],
    max_pct: f64,
    class: CharacteristicClass,
) -> Finding {
    let mut worst: Option<(f64, f64)> = None;
    let mut missing = Vec::new();
    for &angle in angles {
        match metrics.hysteresis_pct_at.get(&angle_key(angle)) {
            Some(&pct) => {
                if worst.is_none_or(|(_, w)| pct > w) {
                    worst = Some((angle, pct));
                }
            }
            None => missing.push(missing_angle(metrics, angle, "hysteresis")),
        }
    }
    let limits = Limits { lower: None, upper: Some(max_pct) };
    let at = |angle: f64| format!("hysteresis at {}°", num(angle));
    match worst {
        Some((angle, pct)) if pct > max_pct || missing.is_empty() => {
            limit_finding("hysteresis", class, &at(angle), Ok(pct), limits, "%")
        }
        _ => {
            let reason = if missing.is_empty() { "no angle given".to_string() } else { missing.join("; ") };
            limit_finding("hysteresis", class, "hysteresis", Err(reason), limits, "%")
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::tests::Law;
    use crate::metrics::{curve_metrics, MetricOptions};

    const SPEC: &str = r#"
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
  secant_rate: { from_deg: 30, to_deg: 60, nominal_nmm_per_deg: 4.0, tolerance: "±10%", class: minor }
  torque_at:
    - { angle_deg: 60, nominal_nmm: 240, tolerance: "+20/-15 N·mm", class: critical }
  free_angle_deg: { nominal: 0, tolerance: 3, class: minor }
  hysteresis: { at_angles_deg: [45, 80], max_pct: 8, max_energy_loss_pct: 12, class: minor }
  linearity: { max_pct: 3, class: minor }
"#;

    fn spec() -> PartSpec {
        PartSpec::from_yaml("ts100.yaml", SPEC).unwrap()
    }

    fn judged(law: &Law) -> Judgement {
        let spec = spec();
        let metrics = curve_metrics(&law.curve(), &MetricOptions::from_spec(&spec)).unwrap();
        judge(&metrics, &spec, &[]).unwrap()
    }

    fn finding<'a>(j: &'a Judgement, name: &str) -> &'a Finding {
        j.findings.iter().find(|f| f.characteristic == name).unwrap_or_else(|| panic!("no {name}: {j:?}"))
    }

    #[test]
    fn a_good_part_passes_everything() {
        let j = judged(&Law { band: 4.0, ..Law::new(4.0, 0.5) });
        assert_eq!(j.verdict, Verdict::Pass, "{:#?}", j.findings);
        let names: Vec<&str> = j.findings.iter().map(|f| f.characteristic.as_str()).collect();
        assert_eq!(
            names,
            ["rate", "secant_rate", "torque@60", "free_angle", "hysteresis", "energy_loss", "linearity"]
        );
        let torque = finding(&j, "torque@60");
        assert_eq!(torque.class, CharacteristicClass::Critical);
        assert_eq!((torque.lower, torque.upper), (Some(225.0), Some(260.0)));
        assert_eq!(torque.message, "torque at 60° 238 N·mm within 225–260 N·mm");
    }

    #[test]
    fn a_stiff_part_fails_the_rate_with_plain_words() {
        let j = judged(&Law::new(4.41, 0.0));
        let rate = finding(&j, "rate");
        assert_eq!(rate.verdict, Verdict::Fail);
        assert_eq!(rate.message, "rate 4.41 N·mm/° above upper limit 4.32 N·mm/°");
        assert_eq!(j.verdict, Verdict::Fail);
    }

    #[test]
    fn free_angle_outside_its_tolerance_fails() {
        let j = judged(&Law::new(4.0, -3.5));
        let free = finding(&j, "free_angle");
        assert_eq!(free.verdict, Verdict::Fail, "{free:?}");
        assert_eq!(free.message, "free angle -3.5° below lower limit -3°");
        assert_eq!(finding(&j, "rate").verdict, Verdict::Pass);
    }

    #[test]
    fn a_high_friction_part_fails_hysteresis() {
        // Band 20 N·mm: at 45° that is 20 / 180 = 11.1 % (> 8 %), at 80° 6.25 %.
        let j = judged(&Law { band: 20.0, ..Law::new(4.0, 0.0) });
        let h = finding(&j, "hysteresis");
        assert_eq!(h.verdict, Verdict::Fail);
        assert!(h.message.starts_with("hysteresis at 45° 11.11 % above upper limit 8 %"), "{}", h.message);
        // Energy loss 20·90 / (4·90²/2) = 11.1 %: inside its 12 % limit.
        assert_eq!(finding(&j, "energy_loss").verdict, Verdict::Pass);
        assert_eq!(j.verdict, Verdict::Fail);
    }

    #[test]
    fn a_part_that_never_reaches_the_angle_is_invalid() {
        let j = judged(&Law { max_deg: 55.0, ..Law::new(4.0, 0.0) });
        let torque = finding(&j, "torque@60");
        assert_eq!(torque.verdict, Verdict::Invalid);
        assert_eq!(torque.value, None);
        assert!(torque.message.contains("never reached 60°"), "{}", torque.message);
        assert_eq!(finding(&j, "rate").verdict, Verdict::Invalid);
        assert_eq!(finding(&j, "secant_rate").verdict, Verdict::Invalid);
        // 45° was measured, 80° was not: not a pass.
        assert_eq!(finding(&j, "hysteresis").verdict, Verdict::Invalid);
        assert_eq!(j.verdict, Verdict::Invalid);
    }

    #[test]
    fn too_few_points_in_the_window_make_rate_characteristics_invalid() {
        let j = judged(&Law { step_deg: 15.0, ..Law::new(4.0, 0.0) });
        for name in ["rate", "free_angle", "linearity"] {
            let f = finding(&j, name);
            assert_eq!(f.verdict, Verdict::Invalid, "{f:?}");
            assert!(f.message.contains("only 3 loading point(s)"), "{}", f.message);
        }
        // Torque at 60° is a grid point, measured without a fit.
        assert_eq!(finding(&j, "torque@60").verdict, Verdict::Pass);
        assert_eq!(j.verdict, Verdict::Invalid);
    }

    #[test]
    fn a_bad_check_is_an_error_naming_it() {
        let spec = spec();
        let metrics = curve_metrics(&Law::new(4.0, 0.0).curve(), &MetricOptions::from_spec(&spec)).unwrap();
        let check = CheckManifest {
            name: "broken".into(),
            kind: twistlot_model::PluginKind::Check,
            api: 1,
            description: "d".into(),
            parts: vec![],
            expression: "((".into(),
            message: "m".into(),
            class: CharacteristicClass::Minor,
        };
        let err = judge(&metrics, &spec, &[check]).unwrap_err();
        assert!(err.to_string().contains("`broken`"));
    }
}
