//! Operating characteristic (OC) curves: probability of acceptance against lot quality.

use serde::{Deserialize, Serialize};
use statrs::distribution::{ChiSquared, ContinuousCDF, Normal};
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

/// Exact Pa for unknown σ, one limit: the statistic √n (U − x̄)/s is noncentral t with
/// n − 1 degrees of freedom and noncentrality √n·z_p, and the lot is accepted when it is
/// at least k√n.
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

/// Nodes and weights of 16-point Gauss–Legendre quadrature on [−1, 1], found by Newton's
/// method on the Legendre polynomial (Press et al., Numerical Recipes §4.6 `gauleg`).
fn gauss_legendre_16() -> &'static [(f64, f64); 16] {
    static NODES: std::sync::OnceLock<[(f64, f64); 16]> = std::sync::OnceLock::new();
    NODES.get_or_init(|| {
        const N: usize = 16;
        let mut out = [(0.0, 0.0); N];
        for i in 0..N.div_ceil(2) {
            let mut x = (std::f64::consts::PI * (i as f64 + 0.75) / (N as f64 + 0.5)).cos();
            let mut derivative = 1.0;
            for _ in 0..100 {
                let (mut p0, mut p1) = (1.0, 0.0);
                for j in 0..N {
                    let p2 = p1;
                    p1 = p0;
                    p0 = ((2 * j + 1) as f64 * x * p1 - j as f64 * p2) / (j + 1) as f64;
                }
                derivative = N as f64 * (x * p0 - p1) / (x * x - 1.0);
                let step = p0 / derivative;
                x -= step;
                if step.abs() < 1e-15 {
                    break;
                }
            }
            let weight = 2.0 / ((1.0 - x * x) * derivative * derivative);
            out[i] = (-x, weight);
            out[N - 1 - i] = (x, weight);
        }
        out
    })
}

/// E[g(U)] for U = s/σ of a normal sample with `df` degrees of freedom (νU² is χ²_ν),
/// by composite 16-point Gauss–Legendre over the range holding all but 2·10⁻¹⁴ of U's
/// mass (from 0 for ν ≤ 20). U's density is 2(ν/2)^{ν/2} u^{ν−1} e^{−νu²/2}/Γ(ν/2), finite at 0 even for ν = 1,
/// so the integrand has no singularity.
pub fn expect_over_sd_ratio(df: f64, g: impl Fn(f64) -> f64) -> f64 {
    let Ok(chi) = ChiSquared::new(df) else { return f64::NAN };
    // For few degrees of freedom the lower tail starts at 0 itself (the density is finite
    // there); its tiny quantiles are also where a quantile solver is least accurate.
    let lo = if df <= 20.0 { 0.0 } else { (chi.inverse_cdf(1e-14).max(0.0) / df).sqrt() };
    let hi = (chi.inverse_cdf(1.0 - 1e-14) / df).sqrt();
    let log_norm = std::f64::consts::LN_2 + 0.5 * df * (0.5 * df).ln() - ln_gamma(0.5 * df);
    let density = |u: f64| {
        if u <= 0.0 {
            return if df == 1.0 { (2.0 / std::f64::consts::PI).sqrt() } else { 0.0 };
        }
        (log_norm + (df - 1.0) * u.ln() - 0.5 * df * u * u).exp()
    };
    const PANELS: usize = 12;
    let width = (hi - lo) / PANELS as f64;
    let mut total = 0.0;
    for panel in 0..PANELS {
        let mid = lo + width * (panel as f64 + 0.5);
        for &(x, w) in gauss_legendre_16() {
            let u = mid + 0.5 * width * x;
            total += 0.5 * width * w * density(u) * g(u);
        }
    }
    total
}

/// P(T ≤ t) for T noncentral t with `df` degrees of freedom and noncentrality `delta`:
/// T = (Z + δ)/U, so P(T ≤ t) = E[Φ(t·U − δ)] over U = √(χ²_ν/ν) (the integral form of
/// Owen 1968; [`expect_over_sd_ratio`]).
pub fn noncentral_t_cdf(t: f64, df: f64, delta: f64) -> f64 {
    expect_over_sd_ratio(df, |u| phi(t * u - delta)).clamp(0.0, 1.0)
}

/// P(T ≥ t) for T noncentral t with `df` degrees of freedom and noncentrality `delta`,
/// computed as E[Φ(δ − t·U)] so the upper tail keeps its relative accuracy.
pub fn noncentral_t_sf(t: f64, df: f64, delta: f64) -> f64 {
    expect_over_sd_ratio(df, |u| phi(delta - t * u)).clamp(0.0, 1.0)
}

/// Probability that a k-method plan accepts a normal lot whose nonconforming fraction
/// lies `below_pct` percent under the lower limit and `above_pct` percent over the upper
/// (0 for a limit that does not exist). The lot is accepted when x̄ − k·σ̂ ≥ L and
/// x̄ + k·σ̂ ≤ U, σ̂ = σ (known) or s (unknown).
///
/// Exact for normal data in both cases: with σ̂ = σ·u fixed, x̄ ~ N(μ, σ²/n) gives
/// P(accept | u) = [Φ(√n(z_U − k·u)) − Φ(−√n(z_L − k·u))]⁺ with z_U = (U − μ)/σ and
/// z_L = (μ − L)/σ the normal points of the two fractions; known σ is u = 1, unknown σ
/// averages over u = s/σ, independent of x̄.
pub fn variables_p_accept_two_tails(
    sample_size: u64,
    k: f64,
    below_pct: f64,
    above_pct: f64,
    sigma_known: bool,
) -> f64 {
    let (below, above) = (below_pct / 100.0, above_pct / 100.0);
    if below < 0.0 || above < 0.0 || below + above >= 1.0 {
        return if below + above >= 1.0 { 0.0 } else { f64::NAN };
    }
    if !sigma_known && sample_size < 2 {
        return f64::NAN;
    }
    let root_n = (sample_size as f64).sqrt();
    let z_l = if below > 0.0 { z_upper(below) } else { f64::INFINITY };
    let z_u = if above > 0.0 { z_upper(above) } else { f64::INFINITY };
    let given = |u: f64| {
        let pass_upper = if z_u.is_finite() { phi(root_n * (z_u - k * u)) } else { 1.0 };
        let fail_lower = if z_l.is_finite() { phi(-root_n * (z_l - k * u)) } else { 0.0 };
        (pass_upper - fail_lower).max(0.0)
    };
    let pa = if sigma_known { given(1.0) } else { expect_over_sd_ratio((sample_size - 1) as f64, given) };
    pa.clamp(0.0, 1.0)
}

/// The percent defective at which a plan's probability of acceptance `p_accept(pct)`
/// first falls to `target` (e.g. 0.05), by bisection on the OC curve, which never rises
/// with the percent defective; 100 when it never falls that far.
///
/// Used to choose an OC chart's range from the plan itself, so the fall of the curve
/// (where the plan tells good lots from bad) fills the chart whatever the sample size.
pub fn pct_where_p_accept_falls_to(p_accept: impl Fn(f64) -> f64, target: f64) -> f64 {
    // Written so that a NaN Pa at 100 % (no curve) also gives the whole range.
    let falls = p_accept(100.0) <= target;
    if !(target > 0.0 && target < 1.0 && falls) {
        return 100.0;
    }
    let (mut lo, mut hi) = (0.0_f64, 100.0_f64);
    // 50 halvings of 100 leave an interval below 1e-13 percent.
    for _ in 0..50 {
        let mid = 0.5 * (lo + hi);
        if p_accept(mid) <= target {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    hi
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
    fn the_chart_range_ends_where_acceptance_falls_to_five_percent() {
        for (n, c) in [(50u64, 0u64), (80, 2), (20, 0), (125, 5)] {
            let pct = pct_where_p_accept_falls_to(|p| attribute_p_accept(n, c, None, p), 0.05);
            // Source: statrs Binomial CDF (independent implementation): Pa at the point found is 0.05.
            let reference = Binomial::new(pct / 100.0, n).unwrap().cdf(c);
            assert!((reference - 0.05).abs() < 1e-9, "n {n} c {c}: {pct} % gives Pa {reference}");
        }
        // Source: for Ac 0 the binomial gives Pa = (1 − p)^n, so Pa = 0.05 at p = 1 − 0.05^(1/n)
        // (n = 50: 5.8155 %), the closed form of the zero-acceptance OC curve.
        let closed = 100.0 * (1.0 - 0.05_f64.powf(1.0 / 50.0));
        let found = pct_where_p_accept_falls_to(|p| attribute_p_accept(50, 0, None, p), 0.05);
        assert!((found - closed).abs() < 1e-9, "{found} vs {closed}");
        // A plan that accepts everything never falls: the whole range.
        assert_eq!(pct_where_p_accept_falls_to(|_| 1.0, 0.05), 100.0);
        assert_eq!(pct_where_p_accept_falls_to(|_| f64::NAN, 0.05), 100.0);
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
        for (t, df) in [(1.0, 5.0), (2.0, 12.0), (-0.5, 30.0), (0.7, 1.0), (3.5, 2.0), (-2.0, 200.0)] {
            // Source: statrs StudentsT (central case, δ = 0), an independent implementation.
            let reference = StudentsT::new(0.0, 1.0, df).unwrap().cdf(t);
            assert!((noncentral_t_cdf(t, df, 0.0) - reference).abs() < 1e-9, "t {t} df {df}");
            assert!((noncentral_t_sf(t, df, 0.0) - (1.0 - reference)).abs() < 1e-9, "t {t} df {df}");
        }
    }

    #[test]
    fn noncentral_t_matches_a_seeded_simulation() {
        use rand::SeedableRng;
        use rand_distr::{ChiSquared as ChiDraw, Distribution, StandardNormal};
        // Common practice, no published source: T = (Z + δ)/√(χ²_ν/ν) by definition; 200,000
        // seeded draws put the simulated CDF within 4 standard errors (≤ 0.0045) of the integral.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(243);
        let draws = 200_000;
        for (t, df, delta) in [(2.0, 9.0, 1.5), (9.0, 39.0, 9.0), (-1.0, 3.0, -0.5)] {
            let chi: ChiDraw<f64> = ChiDraw::new(df).unwrap();
            let below = (0..draws)
                .filter(|_| {
                    let z: f64 = StandardNormal.sample(&mut rng);
                    (z + delta) / (chi.sample(&mut rng) / df).sqrt() <= t
                })
                .count();
            let simulated = below as f64 / draws as f64;
            let exact = noncentral_t_cdf(t, df, delta);
            let se = (exact * (1.0 - exact) / draws as f64).sqrt().max(1e-4);
            assert!((simulated - exact).abs() < 4.0 * se, "t {t} df {df} δ {delta}: {simulated} vs {exact}");
            assert!((noncentral_t_sf(t, df, delta) + exact - 1.0).abs() < 1e-9);
        }
    }

    #[test]
    fn noncentral_t_tends_to_the_normal() {
        // Source: for ν → ∞, √(χ²_ν/ν) → 1, so P(T ≤ t) → Φ(t − δ) (statrs Normal).
        let normal = Normal::new(0.0, 1.0).unwrap();
        for (t, delta) in [(1.0, 0.5), (3.0, 2.0), (-1.0, 1.0)] {
            let got = noncentral_t_cdf(t, 1.0e6, delta);
            assert!((got - normal.cdf(t - delta)).abs() < 2e-3, "{got}");
        }
    }

    #[test]
    fn the_sd_ratio_density_integrates_to_one() {
        // Source: a probability density integrates to 1 (χ² of ν degrees of freedom, rescaled).
        for df in [1.0, 2.0, 3.0, 9.0, 21.0, 39.0, 200.0, 4999.0] {
            let mass = expect_over_sd_ratio(df, |_| 1.0);
            assert!((mass - 1.0).abs() < 1e-10, "df {df}: {mass}");
        }
    }

    #[test]
    fn two_tail_oc_reduces_to_the_one_sided_forms() {
        // Source: with nothing beyond the lower limit the two-sided k-method is the one-sided
        // one: the normal OC for known σ, the noncentral t for unknown σ.
        for (n, k, pct) in [(20u64, 1.5, 3.0), (40, 1.9, 1.0), (7, 1.2, 10.0)] {
            assert!(
                (variables_p_accept_two_tails(n, k, 0.0, pct, true) - variables_p_accept_known(n, k, pct))
                    .abs()
                    < 1e-12
            );
            assert!(
                (variables_p_accept_two_tails(n, k, 0.0, pct, false) - variables_p_accept_unknown(n, k, pct))
                    .abs()
                    < 1e-12
            );
        }
        // Common practice, no published source: the two limits are mirror images.
        let a = variables_p_accept_two_tails(15, 1.3, 1.0, 4.0, false);
        let b = variables_p_accept_two_tails(15, 1.3, 4.0, 1.0, false);
        assert!((a - b).abs() < 1e-12);
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
