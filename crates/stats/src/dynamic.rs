//! Verdicts on a free-swing (free-decay) test: the spec's dynamic characteristics judged
//! on the swing's figures, the sibling of [`crate::judge()`] for torque curves.
//!
//! Finding names: `dynamic_rate` (κ·π/180 from κ = I·ω0², N·mm/°), `frequency` (the
//! undamped natural frequency ω0/2π, Hz) and `amplitude_dependence` (the period at large
//! against small amplitude, %, judged on its size either way). A value that could not be
//! measured (no inertia known, so no κ) is invalid, never a pass. Check plugins are
//! written over a torque curve's metrics, so they do not apply to swings.

use crate::judge::{limit_finding, Judgement};
use twistlot_model::spec::{AMPLITUDE_DEPENDENCE, DYNAMIC_RATE, FREQUENCY};
use twistlot_model::{CharacteristicClass, Finding, Limits, PartSpec, SwingMetrics, Verdict};

/// Judges a swing's figures against the spec's dynamic characteristics.
pub fn judge_swing(swing: &SwingMetrics, spec: &PartSpec) -> Judgement {
    let Some(dynamic) = &spec.characteristics.dynamic else {
        let finding = Finding {
            characteristic: "dynamic".into(),
            class: CharacteristicClass::Critical,
            value: None,
            lower: None,
            upper: None,
            verdict: Verdict::Invalid,
            message: format!(
                "the spec for `{}` names no dynamic characteristic (`characteristics.dynamic`), so a \
                 free-swing test cannot be judged against it",
                spec.part
            ),
        };
        return Judgement { verdict: Verdict::Invalid, findings: vec![finding] };
    };
    let mut findings = Vec::new();
    if let Some(rate) = &dynamic.rate_nmm_per_deg {
        let value = swing.rate_nmm_per_deg.ok_or_else(|| {
            "no inertia is known, so there is no torsion constant: the export states no `inertia_kgm2` and \
             the spec gives no `test.inertia_kgm2`"
                .to_string()
        });
        findings.push(limit_finding(
            DYNAMIC_RATE,
            rate.class,
            "dynamic rate",
            value,
            rate.limits(),
            "N·mm/°",
        ));
    }
    if let Some(frequency) = &dynamic.frequency_hz {
        findings.push(limit_finding(
            FREQUENCY,
            frequency.class,
            "natural frequency",
            Ok(swing.natural_frequency_hz),
            frequency.limits(),
            "Hz",
        ));
    }
    if let Some(limit) = &dynamic.amplitude_dependence {
        let limits = Limits { lower: Some(-limit.max_pct), upper: Some(limit.max_pct) };
        findings.push(limit_finding(
            AMPLITUDE_DEPENDENCE,
            limit.class,
            "amplitude dependence of the period",
            Ok(swing.amplitude_dependence_pct),
            limits,
            "%",
        ));
    }
    Judgement { verdict: Verdict::combine(findings.iter().map(|f| f.verdict)), findings }
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_model::DecayShape;

    const SPEC: &str = r#"
part: TS-0107
revision: A
customer: c
material: { name: stainless, modulus_n_per_mm2: 185000 }
geometry: { wire_diameter_mm: 0.5, mean_diameter_mm: 6.0, body_coils: 8, leg_lengths_mm: [10, 10], wind: right }
test: { max_angle_deg: 20, inertia_kgm2: 2.5e-5 }
characteristics:
  dynamic:
    rate_nmm_per_deg: { nominal: 0.07, tolerance: "±8%", class: major }
    frequency_hz: { nominal: 2.0, tolerance: "±5%", class: minor }
    amplitude_dependence: { max_pct: 1.0, class: minor }
"#;

    fn swing(rate: Option<f64>, frequency_hz: f64, dependence_pct: f64) -> SwingMetrics {
        SwingMetrics {
            inertia_kgm2: rate.map(|_| 2.5e-5),
            inertia_from: rate.map(|_| "export".into()),
            period_s: 1.0 / frequency_hz,
            frequency_hz,
            natural_frequency_hz: frequency_hz,
            log_decrement: 0.06,
            damping_ratio: 0.01,
            kappa_nmm_per_rad: rate.map(f64::to_degrees),
            rate_nmm_per_deg: rate,
            amplitude_dependence_pct: dependence_pct,
            amplitude_dependence_flagged: dependence_pct.abs() > 1.0,
            decay: DecayShape::Exponential,
            friction_torque_nmm: None,
            swings: 12,
            initial_amplitude_deg: 15.0,
            equilibrium_deg: 0.0,
            notes: Vec::new(),
        }
    }

    fn verdicts(j: &Judgement) -> Vec<(&str, Verdict)> {
        j.findings.iter().map(|f| (f.characteristic.as_str(), f.verdict)).collect()
    }

    #[test]
    fn each_dynamic_characteristic_gets_a_finding() {
        let spec = PartSpec::from_yaml("ts0107.yaml", SPEC).unwrap();
        let good = judge_swing(&swing(Some(0.071), 2.01, -0.3), &spec);
        assert_eq!(good.verdict, Verdict::Pass, "{:#?}", good.findings);
        assert_eq!(
            verdicts(&good),
            [
                ("dynamic_rate", Verdict::Pass),
                ("frequency", Verdict::Pass),
                ("amplitude_dependence", Verdict::Pass)
            ]
        );
        // Common practice, no published source: a tolerance of ±8 % on 0.07 ends at 0.0756.
        let stiff = judge_swing(&swing(Some(0.0760), 2.01, -0.3), &spec);
        assert_eq!(stiff.findings[0].verdict, Verdict::Fail);
        assert_eq!(stiff.findings[0].message, "dynamic rate 0.076 N·mm/° above upper limit 0.0756 N·mm/°");
        // The amplitude dependence is judged on its size, whichever way the period moves.
        let stiffening = judge_swing(&swing(Some(0.071), 2.01, -1.6), &spec);
        assert_eq!(stiffening.findings[2].verdict, Verdict::Fail);
        assert_eq!((stiffening.findings[2].lower, stiffening.findings[2].upper), (Some(-1.0), Some(1.0)));
        assert_eq!(stiffening.verdict, Verdict::Fail);
    }

    #[test]
    fn no_inertia_makes_the_rate_invalid_and_no_dynamic_spec_makes_the_test_invalid() {
        let spec = PartSpec::from_yaml("ts0107.yaml", SPEC).unwrap();
        let j = judge_swing(&swing(None, 2.01, 0.1), &spec);
        assert_eq!(j.findings[0].verdict, Verdict::Invalid);
        assert!(j.findings[0].message.contains("no inertia"), "{}", j.findings[0].message);
        assert_eq!(j.verdict, Verdict::Invalid);

        let static_only = SPEC.replace(
            "  dynamic:\n    rate_nmm_per_deg: { nominal: 0.07, tolerance: \"±8%\", class: major }\n    frequency_hz: { nominal: 2.0, tolerance: \"±5%\", class: minor }\n    amplitude_dependence: { max_pct: 1.0, class: minor }\n",
            "  rate_nmm_per_deg: { nominal: 0.07, tolerance: \"±8%\", class: major }\n",
        );
        let spec = PartSpec::from_yaml("ts0107.yaml", &static_only).unwrap();
        let j = judge_swing(&swing(Some(0.071), 2.01, 0.1), &spec);
        assert_eq!(verdicts(&j), [("dynamic", Verdict::Invalid)]);
        assert!(j.findings[0].message.contains("no dynamic characteristic"));
    }
}
