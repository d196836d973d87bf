//! How much of a change in spring rate the wire (and the coil diameter) explain.
//!
//! A helical torsion spring's rate goes as R ∝ E·d⁴/(D·n) (EN 13906-3), so with the
//! same material and coil count the rate of a lot relative to a baseline is
//! (d/d₀)⁴·(D₀/D). To first order that is Δk/k ≈ 4·Δd/d − ΔD/D: a wire 1 % thicker
//! makes the spring about 4 % stiffer. The split below uses the exact ratio and reports
//! the first-order figure beside it; the two differ by the second-order terms
//! 6(Δd/d)² − 4(Δd/d)(ΔD/D) + (ΔD/D)² and smaller, about 0.06 % of rate for a 1 % wire
//! change.
//!
//! The observed change is split additively: "explained by the wire" is the baseline
//! rate times the expected relative change, "process" is whatever remains (coiler
//! wear, heat treatment, set-up, and measurement). The two add up to the observed
//! change exactly.

use serde::Serialize;

use crate::control::{finite, ControlError};

/// The geometry that moves with a wire lot.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Geometry {
    /// Measured wire diameter d, mm.
    pub wire_d_mm: f64,
    /// Mean coil diameter D, mm, when measured.
    pub coil_d_mm: Option<f64>,
}

/// The expected relative rate change between two geometries.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ExpectedChange {
    /// (d/d₀)⁴·(D₀/D) − 1.
    pub exact: f64,
    /// 4·Δd/d₀ − ΔD/D₀.
    pub first_order: f64,
    /// True when both geometries carry a coil diameter and the D term was used.
    pub coil_term: bool,
}

/// Expected relative rate change from `base` to `lot` geometry (same material, same
/// active coils). The coil term is used only when both sides give a coil diameter.
pub fn expected_rate_change(base: &Geometry, lot: &Geometry) -> Result<ExpectedChange, ControlError> {
    check_geometry(base, BASELINE, None)?;
    check_geometry(lot, LOT, None)?;
    let dr = lot.wire_d_mm / base.wire_d_mm;
    let (coil_ratio, coil_term) = match (base.coil_d_mm, lot.coil_d_mm) {
        (Some(b), Some(l)) => (l / b, true),
        _ => (1.0, false),
    };
    Ok(ExpectedChange {
        exact: dr.powi(4) / coil_ratio - 1.0,
        first_order: 4.0 * (dr - 1.0) - (coil_ratio - 1.0),
        coil_term,
    })
}

/// The reference the lots are compared with: a geometry and the rate it gave.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WireBaseline {
    /// Baseline geometry.
    pub geometry: Geometry,
    /// Mean rate at the baseline, N·mm/°.
    pub rate_nmm_per_deg: f64,
}

/// One lot's geometry and observed mean rate.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LotRate {
    /// The lot's geometry.
    pub geometry: Geometry,
    /// The lot's mean rate, N·mm/°.
    pub mean_rate_nmm_per_deg: f64,
}

/// One lot's rate change split into wire and process.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LotAttribution {
    /// Position of the lot in the series, from 0.
    pub index: usize,
    /// Expected relative change from geometry (exact ratio).
    pub expected_rel: f64,
    /// Expected relative change, first-order formula.
    pub expected_rel_first_order: f64,
    /// Observed relative change, mean rate / baseline rate − 1.
    pub observed_rel: f64,
    /// Part of the observed relative change explained by the geometry (= `expected_rel`).
    pub wire_rel: f64,
    /// The rest: observed − wire.
    pub process_rel: f64,
    /// Explained by the geometry, N·mm/°.
    pub wire_nmm_per_deg: f64,
    /// The rest, N·mm/°.
    pub process_nmm_per_deg: f64,
    /// True when a coil diameter entered the expectation.
    pub coil_term: bool,
}

/// Splits each lot's change in mean rate from the baseline into wire and process.
pub fn wire_attribution(
    baseline: &WireBaseline,
    lots: &[LotRate],
) -> Result<Vec<LotAttribution>, ControlError> {
    check_geometry(&baseline.geometry, BASELINE, None)?;
    positive("baseline rate (N·mm/°)", None, baseline.rate_nmm_per_deg)?;
    let base_rate = baseline.rate_nmm_per_deg;
    lots.iter()
        .enumerate()
        .map(|(index, lot)| {
            check_geometry(&lot.geometry, LOT, Some(index))?;
            finite("mean rate (N·mm/°) of lot", Some(index), lot.mean_rate_nmm_per_deg)?;
            let e = expected_rate_change(&baseline.geometry, &lot.geometry)?;
            let observed_rel = lot.mean_rate_nmm_per_deg / base_rate - 1.0;
            let wire_nmm_per_deg = base_rate * e.exact;
            Ok(LotAttribution {
                index,
                expected_rel: e.exact,
                expected_rel_first_order: e.first_order,
                observed_rel,
                wire_rel: e.exact,
                process_rel: observed_rel - e.exact,
                wire_nmm_per_deg,
                process_nmm_per_deg: lot.mean_rate_nmm_per_deg - base_rate - wire_nmm_per_deg,
                coil_term: e.coil_term,
            })
        })
        .collect()
}

/// One lot in time order with the wire lot it was coiled from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WireLotRate {
    /// The wire lot (coil of wire) identifier.
    pub wire_lot: String,
    /// The lot's geometry.
    pub geometry: Geometry,
    /// The lot's mean rate, N·mm/°.
    pub mean_rate_nmm_per_deg: f64,
}

/// The step in mean rate where the wire lot changes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WireStep {
    /// Position of the first lot on the new wire, from 0.
    pub index: usize,
    /// Wire lot before the change.
    pub from_wire_lot: String,
    /// Wire lot after the change.
    pub to_wire_lot: String,
    /// Lots averaged before the change (the old wire's last run, up to the window).
    pub lots_before: usize,
    /// Lots averaged after the change.
    pub lots_after: usize,
    /// Mean wire diameter before, mm.
    pub wire_d_before_mm: f64,
    /// Mean wire diameter after, mm.
    pub wire_d_after_mm: f64,
    /// Mean of the lot mean rates before, N·mm/°.
    pub rate_before_nmm_per_deg: f64,
    /// Mean of the lot mean rates after, N·mm/°.
    pub rate_after_nmm_per_deg: f64,
    /// Observed relative step, after / before − 1.
    pub observed_rel: f64,
    /// Expected relative step from the geometry (exact ratio).
    pub expected_rel: f64,
    /// Expected relative step, first-order formula.
    pub expected_rel_first_order: f64,
    /// Observed − expected: the part of the step the wire does not explain.
    pub process_rel: f64,
    /// Standard error of the observed step in rate, from the lot-to-lot scatter on
    /// each side; `None` unless both sides have two lots or more.
    pub step_stderr_nmm_per_deg: Option<f64>,
}

/// Finds each change of wire lot in a time-ordered series of lots and compares the
/// observed step in mean rate with the one the geometry predicts.
///
/// Each side of a change is the contiguous run of lots on that wire next to the
/// change, at most `window` lots (a drift within a long run would otherwise leak
/// into the step). The coil term is used when every lot on both sides gives a coil
/// diameter.
pub fn wire_steps(lots: &[WireLotRate], window: usize) -> Result<Vec<WireStep>, ControlError> {
    if window == 0 {
        return Err(ControlError::Parameter {
            name: "window",
            value: 0.0,
            expected: "at least 1 lot on each side",
        });
    }
    for (index, lot) in lots.iter().enumerate() {
        check_geometry(&lot.geometry, LOT, Some(index))?;
        finite("mean rate (N·mm/°) of lot", Some(index), lot.mean_rate_nmm_per_deg)?;
    }
    let mut steps = Vec::new();
    for i in 1..lots.len() {
        if lots[i].wire_lot == lots[i - 1].wire_lot {
            continue;
        }
        let mut start = i - 1;
        while start > 0 && lots[start - 1].wire_lot == lots[i - 1].wire_lot && i - start < window {
            start -= 1;
        }
        let mut end = i + 1;
        while end < lots.len() && lots[end].wire_lot == lots[i].wire_lot && end - i < window {
            end += 1;
        }
        let (before, after) = (&lots[start..i], &lots[i..end]);
        let (gb, ga) = (mean_geometry(before), mean_geometry(after));
        let (rb, sb) = mean_sd(before.iter().map(|l| l.mean_rate_nmm_per_deg));
        let (ra, sa) = mean_sd(after.iter().map(|l| l.mean_rate_nmm_per_deg));
        positive("mean rate (N·mm/°) before the wire change at lot", Some(i), rb)?;
        let e = expected_rate_change(&gb, &ga)?;
        let observed_rel = ra / rb - 1.0;
        let step_stderr_nmm_per_deg = match (sb, sa) {
            (Some(sb), Some(sa)) => {
                Some((sb * sb / before.len() as f64 + sa * sa / after.len() as f64).sqrt())
            }
            _ => None,
        };
        steps.push(WireStep {
            index: i,
            from_wire_lot: lots[i - 1].wire_lot.clone(),
            to_wire_lot: lots[i].wire_lot.clone(),
            lots_before: before.len(),
            lots_after: after.len(),
            wire_d_before_mm: gb.wire_d_mm,
            wire_d_after_mm: ga.wire_d_mm,
            rate_before_nmm_per_deg: rb,
            rate_after_nmm_per_deg: ra,
            observed_rel,
            expected_rel: e.exact,
            expected_rel_first_order: e.first_order,
            process_rel: observed_rel - e.exact,
            step_stderr_nmm_per_deg,
        });
    }
    Ok(steps)
}

fn mean_geometry(lots: &[WireLotRate]) -> Geometry {
    let n = lots.len() as f64;
    let wire_d_mm = lots.iter().map(|l| l.geometry.wire_d_mm).sum::<f64>() / n;
    let coil_d_mm = lots
        .iter()
        .map(|l| l.geometry.coil_d_mm)
        .try_fold(0.0, |acc, d| d.map(|d| acc + d))
        .map(|sum| sum / n);
    Geometry { wire_d_mm, coil_d_mm }
}

/// Mean and, from two values on, the sample standard deviation.
fn mean_sd(values: impl Iterator<Item = f64> + Clone) -> (f64, Option<f64>) {
    let n = values.clone().count() as f64;
    let mean = values.clone().sum::<f64>() / n;
    let sd = (n >= 2.0).then(|| (values.map(|v| (v - mean) * (v - mean)).sum::<f64>() / (n - 1.0)).sqrt());
    (mean, sd)
}

/// Error wording for the baseline's and a lot's geometry: (wire, coil).
const BASELINE: (&str, &str) = ("baseline wire diameter (mm)", "baseline coil diameter (mm)");
const LOT: (&str, &str) = ("wire diameter (mm) of lot", "coil diameter (mm) of lot");

fn check_geometry(
    g: &Geometry,
    (wire, coil): (&'static str, &'static str),
    index: Option<usize>,
) -> Result<(), ControlError> {
    positive(wire, index, g.wire_d_mm)?;
    if let Some(d) = g.coil_d_mm {
        positive(coil, index, d)?;
    }
    Ok(())
}

fn positive(what: &'static str, index: Option<usize>, value: f64) -> Result<(), ControlError> {
    finite(what, index, value)?;
    if value > 0.0 {
        Ok(())
    } else {
        Err(ControlError::NotPositive { what, index, value })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn wire(d: f64) -> Geometry {
        Geometry { wire_d_mm: d, coil_d_mm: None }
    }

    #[test]
    fn one_percent_thicker_wire_is_about_four_percent_stiffer() {
        let e = expected_rate_change(&wire(2.0), &wire(2.02)).unwrap();
        // Source: rate ∝ d⁴/(D·n), EN 13906-3 rate formula: (1.01)⁴ − 1 = 0.04060401 exactly,
        // first order 4 × 1 % = 4 %.
        assert!((e.exact - 0.04060401).abs() < 1e-12);
        assert!((e.first_order - 0.04).abs() < 1e-12);
        assert!(!e.coil_term);
        let coil = expected_rate_change(
            &Geometry { wire_d_mm: 2.0, coil_d_mm: Some(20.0) },
            &Geometry { wire_d_mm: 2.0, coil_d_mm: Some(20.4) },
        )
        .unwrap();
        // Source: rate ∝ 1/D (EN 13906-3): a coil 2 % larger gives 1/1.02 − 1; first order −2 %.
        assert!((coil.exact - (1.0 / 1.02 - 1.0)).abs() < 1e-12);
        assert!((coil.first_order + 0.02).abs() < 1e-12);
        assert!(coil.coil_term);
        // A coil diameter on one side only is not used.
        let half =
            expected_rate_change(&wire(2.0), &Geometry { wire_d_mm: 2.0, coil_d_mm: Some(25.0) }).unwrap();
        assert!(!half.coil_term && half.exact == 0.0);
    }

    proptest! {
        // Common practice, no published source: first order against the exact ratio. With
        // a = Δd/d and b = ΔD/D up to 5 %, the gap is the second-order term
        // 6a² − 4ab + b² plus smaller ones; it stays within 1.5 × (6a² + 4|ab| + b²), which is
        // under 0.07 % of rate for a 1 % wire change alone.
        #[test]
        fn first_order_is_within_second_order_of_exact(a in -0.05f64..0.05, b in -0.05f64..0.05) {
            let base = Geometry { wire_d_mm: 2.0, coil_d_mm: Some(20.0) };
            let lot = Geometry { wire_d_mm: 2.0 * (1.0 + a), coil_d_mm: Some(20.0 * (1.0 + b)) };
            let e = expected_rate_change(&base, &lot).unwrap();
            let exact = (1.0 + a).powi(4) / (1.0 + b) - 1.0;
            prop_assert!((e.exact - exact).abs() < 1e-12);
            prop_assert!((e.first_order - (4.0 * a - b)).abs() < 1e-12);
            let second = 6.0 * a * a + 4.0 * (a * b).abs() + b * b;
            prop_assert!((e.exact - e.first_order).abs() <= 1.5 * second + 1e-15);
        }

        // Common practice, no published source: the split is exact — wire plus process is the
        // observed change, in relative terms and in N·mm/°.
        #[test]
        fn wire_and_process_add_up(d in 1.9f64..2.1, rate in 8.0f64..12.0, coil in prop::option::of(19.0f64..21.0)) {
            let baseline = WireBaseline { geometry: Geometry { wire_d_mm: 2.0, coil_d_mm: Some(20.0) }, rate_nmm_per_deg: 10.0 };
            let lot = LotRate { geometry: Geometry { wire_d_mm: d, coil_d_mm: coil }, mean_rate_nmm_per_deg: rate };
            let a = wire_attribution(&baseline, &[lot]).unwrap()[0];
            prop_assert!((a.wire_rel + a.process_rel - a.observed_rel).abs() < 1e-12);
            prop_assert!((a.wire_nmm_per_deg + a.process_nmm_per_deg - (rate - 10.0)).abs() < 1e-9);
            prop_assert_eq!(a.coil_term, coil.is_some());
        }
    }

    #[test]
    fn attribution_splits_each_lot() {
        let baseline = WireBaseline { geometry: wire(2.0), rate_nmm_per_deg: 10.0 };
        let lots = [
            LotRate { geometry: wire(2.0), mean_rate_nmm_per_deg: 10.1 },
            LotRate { geometry: wire(2.02), mean_rate_nmm_per_deg: 10.5 },
        ];
        let out = wire_attribution(&baseline, &lots).unwrap();
        // Common practice, no published source: same wire, so all of +1 % is process.
        assert!(out[0].wire_rel.abs() < 1e-15 && (out[0].process_rel - 0.01).abs() < 1e-12);
        // Source: (1.01)⁴ − 1 = 4.060401 % from the wire (R ∝ d⁴); the rest of +5 % is process.
        assert!((out[1].wire_rel - 0.04060401).abs() < 1e-12);
        assert!((out[1].process_rel - (0.05 - 0.04060401)).abs() < 1e-12);
        assert!((out[1].wire_nmm_per_deg - 0.4060401).abs() < 1e-9);
        assert_eq!(out[1].index, 1);
        assert!(matches!(
            wire_attribution(&baseline, &[LotRate { geometry: wire(0.0), mean_rate_nmm_per_deg: 1.0 }]),
            Err(ControlError::NotPositive { index: Some(0), .. })
        ));
        let bad = WireBaseline { geometry: wire(2.0), rate_nmm_per_deg: -1.0 };
        let msg = wire_attribution(&bad, &lots).unwrap_err().to_string();
        assert!(msg.starts_with("baseline rate"), "{msg}");
    }

    fn lot(wire_lot: &str, d: f64, rate: f64) -> WireLotRate {
        WireLotRate { wire_lot: wire_lot.into(), geometry: wire(d), mean_rate_nmm_per_deg: rate }
    }

    #[test]
    fn a_wire_change_shows_its_step() {
        let lots = [
            lot("W1", 2.0, 9.50),
            lot("W1", 2.0, 10.00),
            lot("W1", 2.0, 10.02),
            lot("W1", 2.0, 9.98),
            lot("W2", 2.02, 10.41),
            lot("W2", 2.02, 10.39),
            lot("W2", 2.02, 10.40),
        ];
        let steps = wire_steps(&lots, 3).unwrap();
        assert_eq!(steps.len(), 1);
        let s = &steps[0];
        assert_eq!((s.index, s.from_wire_lot.as_str(), s.to_wire_lot.as_str()), (4, "W1", "W2"));
        // Common practice, no published source: the window keeps the last three lots of W1
        // (mean 10.00) against the first three of W2 (mean 10.40): a 4 % step.
        assert_eq!((s.lots_before, s.lots_after), (3, 3));
        assert!((s.rate_before_nmm_per_deg - 10.0).abs() < 1e-12);
        assert!((s.observed_rel - 0.04).abs() < 1e-12);
        // Source: R ∝ d⁴: (2.02/2.00)⁴ − 1 = 4.060401 %.
        assert!((s.expected_rel - 0.04060401).abs() < 1e-12);
        assert!((s.process_rel - (0.04 - 0.04060401)).abs() < 1e-12);
        // Common practice, no published source: √(s₁²/3 + s₂²/3) with s = 0.02 and 0.01.
        let se = (0.02f64.powi(2) / 3.0 + 0.01f64.powi(2) / 3.0).sqrt();
        assert!((s.step_stderr_nmm_per_deg.unwrap() - se).abs() < 1e-9);
        // With a window of one lot there is no scatter to estimate.
        assert_eq!(wire_steps(&lots, 1).unwrap()[0].step_stderr_nmm_per_deg, None);
        assert!(wire_steps(&lots[..4], 3).unwrap().is_empty());
        assert!(matches!(wire_steps(&lots, 0), Err(ControlError::Parameter { name: "window", .. })));
    }
}
