//! Operating characteristic (OC) curves: probability of acceptance against lot quality.

use serde::{Deserialize, Serialize};
use statrs::distribution::{ChiSquared, Continuous, ContinuousCDF, Normal};
use statrs::function::gamma::ln_gamma;

/// One point of an OC curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct OcPoint {
    /// Lot or process quality, percent defective.
    pub defective_pct: f64,
    /// Probability that a lot of that quality is accepted.
    pub p_accept: f64,
}

/// Above this sampling fraction n/N the finite lot matters, so the OC uses the
/// hypergeometric distribution instead of the binomial.
pub const HYPERGEOMETRIC_FRACTION: f64 = 0.1;

fn ln_choose(n: u64, k: u64) -> f64 {
    ln_gamma(n as f64 + 1.0) - ln_gamma(k as f64 + 1.0) - ln_gamma((n - k) as f64 + 1.0)
}

/// P(X ≤ c) for X ~ Binomial(n, p).
pub fn binomial_cdf(c: u64, n: u64, p: f64) -> f64 {
    if c >= n || p <= 0.0 {
        return 1.0;
    }
    if p >= 1.0 {
        return 0.0;
    }
    let (lp, lq) = (p.ln(), (-p).ln_1p());
    let total: f64 = (0..=c).map(|x| (ln_choose(n, x) + x as f64 * lp + (n - x) as f64 * lq).exp()).sum();
    total.min(1.0)
}

/// P(X ≤ c) for X hypergeometric: `draws` units from a lot of `lot` holding `defective` defectives.
pub fn hypergeometric_cdf(c: u64, lot: u64, defective: u64, draws: u64) -> f64 {
    let defective = defective.min(lot);
    let draws = draws.min(lot);
    let low = (draws + defective).saturating_sub(lot);
    let high = c.min(defective).min(draws);
    if high < low {
        return 0.0;
    }
    let denominator = ln_choose(lot, draws);
    let total: f64 = (low..=high)
        .map(|x| (ln_choose(defective, x) + ln_choose(lot - defective, draws - x) - denominator).exp())
        .sum();
    total.min(1.0)
}

/// Probability of accepting under an attribute plan (n, c) at `defective_pct`.
///
/// With a lot size and n/N above [`HYPERGEOMETRIC_FRACTION`], the lot is taken to hold
/// round(p·N) defectives and the hypergeometric is used; otherwise the binomial.
pub fn attribute_p_accept(sample_size: u64, accept: u64, lot_size: Option<u64>, defective_pct: f64) -> f64 {
    let p = (defective_pct / 100.0).clamp(0.0, 1.0);
    match lot_size {
        Some(lot) if lot > 0 && sample_size as f64 / lot as f64 > HYPERGEOMETRIC_FRACTION => {
            let defective = (p * lot as f64).round() as u64;
            hypergeometric_cdf(accept, lot, defective, sample_size)
        }
        _ => binomial_cdf(accept, sample_size, p),
    }
}

/// A quality range wide enough to show the whole fall of an (n, c) curve, percent.
pub fn attribute_range_pct(sample_size: u64, accept: u64) -> f64 {
    let c = accept as f64 + 1.0;
    (100.0 * (c + 3.0 * c.sqrt() + 2.0) / sample_size.max(1) as f64).min(100.0)
}

fn grid(max_pct: f64, points: usize) -> impl Iterator<Item = f64> {
    let points = points.max(2);
    let max_pct = if max_pct.is_finite() && max_pct > 0.0 { max_pct.min(100.0) } else { 100.0 };
    (0..points).map(move |i| max_pct * i as f64 / (points - 1) as f64)
}

/// OC curve of an attribute plan from 0 to `max_pct` percent defective, `points` points.
pub fn attribute_oc(
    sample_size: u64,
    accept: u64,
    lot_size: Option<u64>,
    max_pct: f64,
    points: usize,
) -> Vec<OcPoint> {
    grid(max_pct, points)
        .map(|pct| OcPoint {
            defective_pct: pct,
            p_accept: attribute_p_accept(sample_size, accept, lot_size, pct),
        })
        .collect()
}

/// The standard normal upper quantile z with P(Z > z) = p.
pub(crate) fn z_upper(p: f64) -> f64 {
    // Normal::new(0, 1) cannot fail; the fallback keeps this panic-free.
    Normal::new(0.0, 1.0).map(|n| n.inverse_cdf(1.0 - p)).unwrap_or(f64::NAN)
}

pub(crate) fn phi(x: f64) -> f64 {
    Normal::new(0.0, 1.0).map(|n| n.cdf(x)).unwrap_or(f64::NAN)
}

/// Probability of accepting under a one-sided k-method plan with known σ:
/// Pa = Φ(√n (z_p − k)).
pub fn variables_p_accept_known(sample_size: u64, k: f64, defective_pct: f64) -> f64 {
    let p = defective_pct / 100.0;
    if p <= 0.0 {
        return 1.0;
    }
    if p >= 1.0 {
        return 0.0;
    }
    phi((sample_size as f64).sqrt() * (z_upper(p) - k))
}

/// Wallis's normal approximation for unknown σ: Pa = Φ(√n (z_p − k) / √(1 + k²/2)).
pub fn variables_p_accept_wallis(sample_size: u64, k: f64, defective_pct: f64) -> f64 {
    let p = defective_pct / 100.0;
    if p <= 0.0 {
        return 1.0;
    }
    if p >= 1.0 {
        return 0.0;
    }
    phi((sample_size as f64).sqrt() * (z_upper(p) - k) / (1.0 + k * k / 2.0).sqrt())
}

/// Exact Pa for unknown σ: the statistic √n (U − x̄)/s is noncentral t with n − 1
/// degrees of freedom and noncentrality √n·z_p, and the lot is accepted when it is
/// at least k√n. Computed as ∫ Φ(δ − t·√(v/ν)) f_χ²ν(v) dv by Simpson's rule.
pub fn variables_p_accept_unknown(sample_size: u64, k: f64, defective_pct: f64) -> f64 {
    let p = defective_pct / 100.0;
    if p <= 0.0 {
        return 1.0;
    }
    if p >= 1.0 {
        return 0.0;
    }
    if sample_size < 2 {
        return f64::NAN;
    }
    let n = sample_size as f64;
    noncentral_t_sf(k * n.sqrt(), (sample_size - 1) as f64, n.sqrt() * z_upper(p))
}

/// P(T ≥ t) for T noncentral t with `df` degrees of freedom and noncentrality `delta`.
pub fn noncentral_t_sf(t: f64, df: f64, delta: f64) -> f64 {
    let Ok(chi) = ChiSquared::new(df) else { return f64::NAN };
    let lo = chi.inverse_cdf(1e-12).max(0.0);
    let hi = chi.inverse_cdf(1.0 - 1e-12);
    let steps = 2000usize;
    let h = (hi - lo) / steps as f64;
    let f = |v: f64| {
        let density = chi.pdf(v);
        if density == 0.0 || !density.is_finite() {
            return 0.0;
        }
        // P(Z + δ ≥ t·√(v/ν)) = Φ(δ − t√(v/ν)).
        density * phi(delta - t * (v / df).sqrt())
    };
    let mut sum = f(lo) + f(hi);
    for i in 1..steps {
        let weight = if i % 2 == 1 { 4.0 } else { 2.0 };
        sum += weight * f(lo + i as f64 * h);
    }
    (sum * h / 3.0).clamp(0.0, 1.0)
}

/// OC curve of a k-method plan (σ known: exact normal; unknown: noncentral t).
pub fn variables_oc(
    sample_size: u64,
    k: f64,
    sigma_known: bool,
    max_pct: f64,
    points: usize,
) -> Vec<OcPoint> {
    grid(max_pct, points)
        .map(|pct| OcPoint {
            defective_pct: pct,
            p_accept: if sigma_known {
                variables_p_accept_known(sample_size, k, pct)
            } else {
                variables_p_accept_unknown(sample_size, k, pct)
            },
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use statrs::distribution::{Binomial, DiscreteCDF, Hypergeometric, StudentsT};

    #[test]
    fn binomial_matches_statrs() {
        for (n, c, pct) in [(80u64, 2u64, 1.0), (125, 2, 0.65), (32, 0, 5.0), (2000, 21, 1.0), (13, 1, 20.0)]
        {
            // Source: statrs Binomial CDF (independent implementation)
            let reference = Binomial::new(pct / 100.0, n).unwrap().cdf(c);
            let ours = attribute_p_accept(n, c, None, pct);
            assert!((ours - reference).abs() < 1e-10, "n {n} c {c} p {pct}: {ours} vs {reference}");
        }
    }

    #[test]
    fn hypergeometric_is_used_for_large_sampling_fractions() {
        for (lot, n, c, pct) in [(100u64, 20u64, 1u64, 5.0), (50, 13, 0, 4.0), (200, 50, 2, 3.0)] {
            let defective = (pct / 100.0 * lot as f64).round() as u64;
            // Source: statrs Hypergeometric CDF (independent implementation)
            let reference = Hypergeometric::new(lot, defective, n).unwrap().cdf(c);
            let ours = attribute_p_accept(n, c, Some(lot), pct);
            assert!((ours - reference).abs() < 1e-10, "{ours} vs {reference}");
        }
        // n/N = 0.05: the binomial applies.
        // Source: statrs Binomial CDF
        let reference = Binomial::new(0.02, 50).unwrap().cdf(1);
        assert!((attribute_p_accept(50, 1, Some(1000), 2.0) - reference).abs() < 1e-10);
    }

    #[test]
    fn noncentral_t_reduces_to_students_t() {
        for (t, df) in [(1.0, 5.0), (2.0, 12.0), (-0.5, 30.0)] {
            // Source: statrs StudentsT (central case, δ = 0)
            let reference = 1.0 - StudentsT::new(0.0, 1.0, df).unwrap().cdf(t);
            assert!((noncentral_t_sf(t, df, 0.0) - reference).abs() < 1e-6, "t {t} df {df}");
        }
    }

    #[test]
    fn wallis_is_close_to_the_exact_unknown_sigma_oc() {
        // Common practice, no published source: the Wallis approximation is good to a
        // few hundredths for moderate n.
        for pct in [0.5, 1.0, 2.0, 4.0, 6.0, 10.0] {
            let exact = variables_p_accept_unknown(40, 1.9, pct);
            let approx = variables_p_accept_wallis(40, 1.9, pct);
            assert!((exact - approx).abs() < 0.03, "{pct}%: {exact} vs {approx}");
        }
    }

    #[test]
    fn oc_points_span_the_range() {
        let curve = attribute_oc(80, 2, None, 10.0, 11);
        assert_eq!(curve.len(), 11);
        assert_eq!(curve[0], OcPoint { defective_pct: 0.0, p_accept: 1.0 });
        assert!((curve[10].defective_pct - 10.0).abs() < 1e-12);
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]
        #[test]
        fn attribute_oc_never_rises(n in 1u64..400, c in 0u64..10, lot in proptest::option::of(1u64..2000)) {
            let lot = lot.map(|l| l.max(n));
            let curve = attribute_oc(n, c.min(n), lot, 100.0, 60);
            for pair in curve.windows(2) {
                prop_assert!(pair[1].p_accept <= pair[0].p_accept + 1e-12);
            }
        }

        #[test]
        fn variables_oc_never_rises(n in 2u64..200, k in 0.5f64..3.0, known in proptest::bool::ANY) {
            let curve = variables_oc(n, k, known, 30.0, 40);
            for pair in curve.windows(2) {
                prop_assert!(pair[1].p_accept <= pair[0].p_accept + 1e-9);
            }
        }
    }
}
