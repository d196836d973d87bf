//! Is a measured rate plausible? The drawing's theoretical rate beside the measured one.
//!
//! The theoretical rate is EN 13906-3's R = E·d⁴/(3667·D·n) with the legs' share of the
//! active coils, computed by the physics crate from the spec's geometry and material. A
//! measured rate (a torque curve's least-squares rate, or a free swing's dynamic rate)
//! far from it points at the rig (calibration, clamping, the leg's lever arm), the wire
//! (diameter, modulus) or the coil count. The ratio measured/theory is therefore shown
//! beside every rate, and a ratio outside a band is a caution for the engineer: never a
//! verdict, because the customer's drawing, not the design formula, sets the limits.

use crate::text::num;
use twistlot_model::{PartSpec, TestRecord, TheoryRate};
use twistlot_physics::{design_rate, DesignError, SpringDesign};

/// The band a plausible measured/theory ratio lies in, when the plant sets none: 0.85–1.15.
///
/// A starting point for a plant to set from its own springs, not a published limit: the
/// handbooks' empirical per-turn constant alone sits about 6 % below theory (10.8 against
/// 10.19), and leg bending, end fixing and wire tolerance each add a few percent.
pub const DEFAULT_RATE_BAND: [f64; 2] = [0.85, 1.15];

/// Checks a band: two finite positive numbers, the first below 1 and the second above it.
pub fn validate_band(band: [f64; 2]) -> Result<(), String> {
    let [lo, hi] = band;
    if lo.is_finite() && hi.is_finite() && lo > 0.0 && lo < 1.0 && hi > 1.0 {
        Ok(())
    } else {
        Err(format!(
            "the measured/theory band [{lo}, {hi}] must hold 1 between two positive numbers, e.g. [0.85, 1.15]"
        ))
    }
}

/// The spec's theoretical rate and `measured`'s ratio to it.
pub fn theory_rate(
    spec: &PartSpec,
    measured: Option<f64>,
    band: [f64; 2],
) -> Result<TheoryRate, DesignError> {
    let design = SpringDesign::from_spec(&spec.geometry, &spec.material)?;
    let rate = design_rate(&design)?.rate_nmm_per_deg;
    let ratio = measured.filter(|m| m.is_finite()).map(|m| m / rate);
    let outside_band = ratio.is_some_and(|r| !(band[0]..=band[1]).contains(&r));
    Ok(TheoryRate { rate_nmm_per_deg: rate, ratio, band, outside_band })
}

/// A lot's theory line for its grounds: the theoretical rate, the lot's mean measured rate
/// and their ratio. `Some((text, outside))`, `outside` when the ratio leaves the band (the
/// text then starts with "Caution"); `None` when no counted test has a theory or a rate.
pub fn lot_theory_note(tests: &[&TestRecord]) -> Option<(String, bool)> {
    let theory = tests.iter().find_map(|t| t.theory.as_ref())?;
    let rates: Vec<f64> = tests
        .iter()
        .filter(|t| t.status.is_counted())
        .filter_map(|t| t.measured_rate_nmm_per_deg())
        .filter(|r| r.is_finite())
        .collect();
    if rates.is_empty() {
        return None;
    }
    let mean = rates.iter().sum::<f64>() / rates.len() as f64;
    let ratio = mean / theory.rate_nmm_per_deg;
    let [lo, hi] = theory.band;
    let kind = if tests.iter().any(|t| t.swing.is_some()) { "dynamic " } else { "" };
    let figures = format!(
        "the drawing's geometry gives a theoretical rate of {} N·mm/° (EN 13906-3); the lot's mean {kind}rate \
         of {} N·mm/° over {} test(s) is {} times that",
        num(theory.rate_nmm_per_deg),
        num(mean),
        rates.len(),
        num(ratio)
    );
    let outside = !(lo..=hi).contains(&ratio);
    let text = if outside {
        format!(
            "Caution, not a verdict: {figures}, outside the plausibility band {}–{}; check the rig's \
             calibration and set-up, the wire diameter and modulus, and the coil count before trusting these \
             results (the customer's drawing governs acceptance)",
            num(lo),
            num(hi)
        )
    } else {
        format!("Plausibility: {figures}, inside the band {}–{}", num(lo), num(hi))
    };
    Some((text, outside))
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_model::{CurveMetrics, TestStatus};

    const SPEC: &str = r#"
part: TS-9
revision: A
customer: c
material: { name: spring steel, modulus_n_per_mm2: 206000 }
geometry: { wire_diameter_mm: 2.0, mean_diameter_mm: 16.0, body_coils: 8, leg_lengths_mm: [30, 30], wind: right }
test: { max_angle_deg: 60 }
characteristics:
  rate_nmm_per_deg: { nominal: 7.0, tolerance: "±6%", class: major }
"#;

    fn spec() -> PartSpec {
        PartSpec::from_yaml("ts9.yaml", SPEC).unwrap()
    }

    fn test_with(rate: Option<f64>, band: [f64; 2]) -> TestRecord {
        TestRecord {
            test_id: "t".into(),
            file: "f".into(),
            content_hash: "h".into(),
            serial: None,
            part: None,
            lot: None,
            rig: None,
            operator: None,
            started: None,
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics: CurveMetrics { rate_nmm_per_deg: rate, ..CurveMetrics::default() },
            swing: None,
            theory: Some(theory_rate(&spec(), rate, band).unwrap()),
            verdict: None,
            findings: Vec::new(),
            status: TestStatus::Counted,
        }
    }

    #[test]
    fn the_theoretical_rate_is_en_13906_3s_and_the_ratio_is_measured_over_it() {
        let t = theory_rate(&spec(), Some(7.0), DEFAULT_RATE_BAND).unwrap();
        // From memory: EN 13906-3, R = E·d⁴/(3667·D·n) with n = n_body + (l1 + l2)/(3π·D);
        // recomputed here: n = 8 + 60/(3π·16) = 8.3979, R = 206000·16/(3667·16·8.3979) = 6.69 N·mm/°.
        let n = 8.0 + 60.0 / (3.0 * std::f64::consts::PI * 16.0);
        let expected = 206_000.0 * 2.0_f64.powi(4) / (3667.0 * 16.0 * n);
        assert!((t.rate_nmm_per_deg / expected - 1.0).abs() < 2e-5, "{}", t.rate_nmm_per_deg);
        assert!((t.ratio.unwrap() - 7.0 / t.rate_nmm_per_deg).abs() < 1e-12);
        assert!(!t.outside_band);
        assert!(theory_rate(&spec(), Some(9.0), DEFAULT_RATE_BAND).unwrap().outside_band);
        assert_eq!(theory_rate(&spec(), None, DEFAULT_RATE_BAND).unwrap().ratio, None);
    }

    #[test]
    fn bands_must_hold_one_between_positive_numbers() {
        assert!(validate_band(DEFAULT_RATE_BAND).is_ok());
        for bad in [[1.1, 1.2], [0.0, 1.2], [0.9, 0.95], [f64::NAN, 1.1], [0.9, f64::INFINITY]] {
            assert!(validate_band(bad).is_err(), "{bad:?}");
        }
    }

    #[test]
    fn a_lot_outside_the_band_gets_a_caution_and_one_inside_a_plain_line() {
        let inside = [test_with(Some(7.0), DEFAULT_RATE_BAND), test_with(Some(6.8), DEFAULT_RATE_BAND)];
        let refs: Vec<&TestRecord> = inside.iter().collect();
        let (text, outside) = lot_theory_note(&refs).unwrap();
        assert!(!outside && text.starts_with("Plausibility:"), "{text}");
        assert!(text.contains("6.69 N·mm/°") && text.contains("6.9 N·mm/° over 2 test(s)"), "{text}");

        // Mean 8.5 against 6.69: 1.27, above 1.15.
        let high = [test_with(Some(8.5), DEFAULT_RATE_BAND)];
        let (text, outside) = lot_theory_note(&high.iter().collect::<Vec<_>>()).unwrap();
        assert!(outside && text.starts_with("Caution, not a verdict"), "{text}");
        assert!(text.contains("0.85–1.15") && text.contains("drawing governs"), "{text}");

        let unmeasured = [test_with(None, DEFAULT_RATE_BAND)];
        assert_eq!(lot_theory_note(&unmeasured.iter().collect::<Vec<_>>()), None);
        assert_eq!(lot_theory_note(&[]), None);
    }
}
