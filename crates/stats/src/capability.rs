//! Lot statistics and process capability of one characteristic (DESIGN.md §6).
//!
//! # Methods
//!
//! * **Within-lot σ** (for Cp, Cpk) is the average moving range divided by
//!   d2 = 1.128 (the d2 constant for ranges of two): a lot's tests come in time
//!   order without rational subgroups, so consecutive differences are the
//!   short-term variation the individuals chart uses (NIST/SEMATECH e-Handbook
//!   §6.3.2). **Overall σ** (for Pp, Ppk) is the sample standard deviation s.
//! * Cp = (USL − LSL) / 6σ, Cpk = min(USL − x̄, x̄ − LSL) / 3σ (NIST/SEMATECH
//!   e-Handbook §6.1.6); Pp and Ppk the same with s. With one limit only, Cp and
//!   Pp are undefined and Cpk / Ppk use the side that exists.
//! * **Cp bounds** (two-sided 95 %): Cp·√(χ²(0.025; ν)/ν) and Cp·√(χ²(0.975; ν)/ν)
//!   with ν = n − 1, the handbook's form for σ estimated by s. With the moving-range
//!   σ the true degrees of freedom are fewer, so these bounds are somewhat narrow.
//! * **Cpk lower bound** (one-sided 95 %), Bissell (1990):
//!   Cpk − z(0.95)·√(1/(9n) + Cpk²/(2(n − 1))). Bissell derived it for σ from s; on
//!   the moving-range Cpk it is likewise a little optimistic.
//! * **Normality**: Anderson–Darling A² against a normal with the sample mean and
//!   s, Stephens' modification A*² = A²(1 + 0.75/n + 2.25/n²), and the p-value from
//!   the piecewise formulas of D'Agostino & Stephens (1986), Table 4.9. Computed for
//!   n ≥ 8, where those formulas are meant to be used.
//! * **Percentile indices** replace the normal ones when normality is rejected
//!   (p < 0.05), labelled `method: "percentile"` (ISO 22514-2 style):
//!   Pp = (USL − LSL)/(X99.865 − X0.135), Ppk = min((USL − X50)/(X99.865 − X50),
//!   (X50 − LSL)/(X50 − X0.135)), percentiles interpolated between order statistics.
//!   Cp, Cpk and their bounds are then left out: they rest on the normal model that
//!   was just rejected. Below about 740 values the 0.135 % and 99.865 % points fall
//!   at the sample's extremes, which understates the spread: read such indices as
//!   optimistic.

use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF, Normal};
use statrs::function::erf::erfc;
use twistlot_model::Limits;

/// The d2 constant for moving ranges of two consecutive values.
pub const D2_MOVING_RANGE: f64 = 1.128;

pub use twistlot_model::{Capability, CapabilityMethod};

/// Result of the Anderson–Darling test for normality.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Normality {
    /// A², with mean and σ estimated from the sample.
    pub a2: f64,
    /// Stephens' modified statistic A*² = A²(1 + 0.75/n + 2.25/n²).
    pub a2_star: f64,
    /// p-value from D'Agostino & Stephens (1986), Table 4.9.
    pub p_value: f64,
}

/// Significance below which normality is rejected and percentile indices are used.
pub const NORMALITY_ALPHA: f64 = 0.05;

/// Smallest sample the Anderson–Darling p-value is computed for.
pub const AD_MIN_N: usize = 8;

/// Standard normal cumulative distribution, accurate in both tails.
fn phi(z: f64) -> f64 {
    0.5 * erfc(-z / std::f64::consts::SQRT_2)
}

/// p-value of the modified Anderson–Darling statistic A*² (normal, mean and σ
/// estimated), D'Agostino & Stephens (1986), Table 4.9.
pub fn ad_p_value(a2_star: f64) -> f64 {
    let a = a2_star;
    let p = if a < 0.2 {
        1.0 - (-13.436 + 101.14 * a - 223.73 * a * a).exp()
    } else if a < 0.34 {
        1.0 - (-8.318 + 42.796 * a - 59.938 * a * a).exp()
    } else if a < 0.6 {
        (0.9177 - 4.279 * a - 1.38 * a * a).exp()
    } else if a < 10.0 {
        (1.2937 - 5.709 * a + 0.0186 * a * a).exp()
    } else {
        // Beyond the table the formula's own value is below 4e-24.
        0.0
    };
    p.clamp(0.0, 1.0)
}

/// Anderson–Darling test of normality; `None` for fewer than [`AD_MIN_N`]
/// values, a non-finite value, or no spread.
pub fn anderson_darling(values: &[f64]) -> Option<Normality> {
    let n = values.len();
    if n < AD_MIN_N || values.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let (mean, sd) = mean_sd(values)?;
    if sd <= 0.0 {
        return None;
    }
    let mut z: Vec<f64> = values.iter().map(|v| (v - mean) / sd).collect();
    z.sort_by(f64::total_cmp);
    let nf = n as f64;
    let mut sum = 0.0;
    for i in 0..n {
        // ln(1 − Φ(z)) is taken as ln Φ(−z): no cancellation in the upper tail.
        let lower = phi(z[i]).ln();
        let upper = phi(-z[n - 1 - i]).ln();
        sum += (2.0 * (i as f64) + 1.0) * (lower + upper);
    }
    let a2 = -nf - sum / nf;
    let a2_star = a2 * (1.0 + 0.75 / nf + 2.25 / (nf * nf));
    let p_value = if a2_star.is_finite() { ad_p_value(a2_star) } else { 0.0 };
    Some(Normality { a2, a2_star, p_value })
}

fn mean_sd(values: &[f64]) -> Option<(f64, f64)> {
    let n = values.len();
    if n < 2 {
        return None;
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let ss: f64 = values.iter().map(|v| (v - mean).powi(2)).sum();
    Some((mean, (ss / (n as f64 - 1.0)).sqrt()))
}

/// Cp and Cpk (or Pp and Ppk) for a centre and a σ: (two-sided index, worst-side index).
///
/// Definitions of NIST/SEMATECH e-Handbook §6.1.6; with one limit only the first is
/// `None` and the second uses the side that exists.
pub fn normal_indices(mean: f64, sigma: f64, limits: Limits) -> (Option<f64>, Option<f64>) {
    if !(sigma.is_finite() && sigma > 0.0 && mean.is_finite()) {
        return (None, None);
    }
    let cp = match (limits.lower, limits.upper) {
        (Some(lo), Some(hi)) => Some((hi - lo) / (6.0 * sigma)),
        _ => None,
    };
    let cpu = limits.upper.map(|hi| (hi - mean) / (3.0 * sigma));
    let cpl = limits.lower.map(|lo| (mean - lo) / (3.0 * sigma));
    let cpk = match (cpl, cpu) {
        (Some(l), Some(u)) => Some(l.min(u)),
        (one, other) => one.or(other),
    };
    (cp, cpk)
}

/// Two-sided 95 % interval for Cp by the χ² distribution of the variance, ν = n − 1.
pub fn cp_interval_95(cp: f64, n: usize) -> Option<(f64, f64)> {
    if n < 2 || !cp.is_finite() {
        return None;
    }
    let nu = n as f64 - 1.0;
    let chi = ChiSquared::new(nu).ok()?;
    let lower = cp * (chi.inverse_cdf(0.025) / nu).sqrt();
    let upper = cp * (chi.inverse_cdf(0.975) / nu).sqrt();
    (lower.is_finite() && upper.is_finite()).then_some((lower, upper))
}

/// Bissell's (1990) approximate one-sided 95 % lower confidence bound for Cpk.
pub fn bissell_lower_95(cpk: f64, n: usize) -> Option<f64> {
    if n < 2 || !cpk.is_finite() {
        return None;
    }
    let z = Normal::new(0.0, 1.0).ok()?.inverse_cdf(0.95);
    let nf = n as f64;
    Some(cpk - z * (1.0 / (9.0 * nf) + cpk * cpk / (2.0 * (nf - 1.0))).sqrt())
}

/// The `p` quantile (0 ≤ p ≤ 1) of sorted values, interpolating between order
/// statistics at position (n − 1)·p (Hyndman & Fan type 7).
pub fn quantile_sorted(sorted: &[f64], p: f64) -> Option<f64> {
    if sorted.is_empty() || !(0.0..=1.0).contains(&p) {
        return None;
    }
    let h = (sorted.len() - 1) as f64 * p;
    let below = h.floor() as usize;
    let above = (below + 1).min(sorted.len() - 1);
    Some(sorted[below] + (h - below as f64) * (sorted[above] - sorted[below]))
}

/// Percentile Pp and Ppk (ISO 22514-2 style) from sorted values.
fn percentile_indices(sorted: &[f64], limits: Limits) -> (Option<f64>, Option<f64>) {
    let (Some(low), Some(mid), Some(high)) =
        (quantile_sorted(sorted, 0.00135), quantile_sorted(sorted, 0.5), quantile_sorted(sorted, 0.99865))
    else {
        return (None, None);
    };
    let pp = match (limits.lower, limits.upper) {
        (Some(lo), Some(hi)) if high > low => Some((hi - lo) / (high - low)),
        _ => None,
    };
    let upper_side = limits.upper.filter(|_| high > mid).map(|hi| (hi - mid) / (high - mid));
    let lower_side = limits.lower.filter(|_| mid > low).map(|lo| (mid - lo) / (mid - low));
    let ppk = match (lower_side, upper_side) {
        (Some(l), Some(u)) => Some(l.min(u)),
        (one, other) => one.or(other),
    };
    (pp, ppk)
}

/// Capability of `values` (in time order) against `limits`.
///
/// Non-finite values are left out and counted in [`Capability::excluded`].
pub fn capability(values: &[f64], limits: Limits) -> Capability {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    let n = finite.len();
    let mut sorted = finite.clone();
    sorted.sort_by(f64::total_cmp);
    let stats = mean_sd(&finite);
    let mean = stats.map(|s| s.0).or_else(|| finite.first().copied());
    let sd = stats.map(|s| s.1);
    let sd_within = (n >= 2).then(|| {
        finite.windows(2).map(|w| (w[1] - w[0]).abs()).sum::<f64>() / (n - 1) as f64 / D2_MOVING_RANGE
    });
    let normality = anderson_darling(&finite);
    let method = match normality {
        Some(test) if test.p_value < NORMALITY_ALPHA => CapabilityMethod::Percentile,
        _ => CapabilityMethod::Normal,
    };
    let (mut cp, mut cpk) = match (mean, sd_within) {
        (Some(m), Some(s)) => normal_indices(m, s, limits),
        _ => (None, None),
    };
    let (pp, ppk) = match method {
        CapabilityMethod::Normal => match (mean, sd) {
            (Some(m), Some(s)) => normal_indices(m, s, limits),
            _ => (None, None),
        },
        CapabilityMethod::Percentile => {
            cp = None;
            cpk = None;
            percentile_indices(&sorted, limits)
        }
    };
    let cp_bounds = cp.and_then(|cp| cp_interval_95(cp, n));
    Capability {
        n,
        excluded: values.len() - n,
        mean,
        sd,
        sd_within,
        min: sorted.first().copied(),
        max: sorted.last().copied(),
        median: quantile_sorted(&sorted, 0.5),
        cp,
        cpk,
        pp,
        ppk,
        cp_lower_95: cp_bounds.map(|b| b.0),
        cp_upper_95: cp_bounds.map(|b| b.1),
        cpk_lower_95: cpk.and_then(|cpk| bissell_lower_95(cpk, n)),
        normality_a2: normality.map(|t| t.a2),
        normality_p: normality.map(|t| t.p_value),
        method,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn two_sided(lo: f64, hi: f64) -> Limits {
        Limits { lower: Some(lo), upper: Some(hi) }
    }

    #[test]
    fn handbook_cp_cpk_example() {
        // From memory: NIST/SEMATECH e-Handbook §6.1.6, USL 20, LSL 8, μ 16, σ 2 → Cp 1.0, Cpk 0.6667.
        let (cp, cpk) = normal_indices(16.0, 2.0, two_sided(8.0, 20.0));
        assert!((cp.unwrap() - 1.0).abs() < 1e-12);
        assert!((cpk.unwrap() - 2.0 / 3.0).abs() < 1e-12);
        // One limit: only that side.
        let (cp, cpk) = normal_indices(16.0, 2.0, Limits { lower: Some(8.0), upper: None });
        assert_eq!(cp, None);
        assert!((cpk.unwrap() - 4.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn cp_interval_uses_chi_square_quantiles() {
        // From memory: χ² table, ν = 24: χ²(0.025) = 12.401, χ²(0.975) = 39.364.
        let (lo, hi) = cp_interval_95(1.0, 25).unwrap();
        assert!((lo - (12.401f64 / 24.0).sqrt()).abs() < 2e-4, "{lo}");
        assert!((hi - (39.364f64 / 24.0).sqrt()).abs() < 2e-4, "{hi}");
        // From memory: χ² table, ν = 9: χ²(0.025) = 2.700, χ²(0.975) = 19.023.
        let (lo, hi) = cp_interval_95(1.33, 10).unwrap();
        assert!((lo - 1.33 * (2.700f64 / 9.0).sqrt()).abs() < 1e-3, "{lo}");
        assert!((hi - 1.33 * (19.023f64 / 9.0).sqrt()).abs() < 1e-3, "{hi}");
    }

    #[test]
    fn bissell_bound_evaluates_the_published_formula() {
        // From memory: standard normal table, z(0.95) = 1.6449.
        // Source: Bissell (1990), Applied Statistics 39: Cpk − z·√(1/(9n) + Cpk²/(2(n−1))).
        let expected = 1.33 - 1.6449 * (1.0 / (9.0 * 50.0) + 1.33f64.powi(2) / (2.0 * 49.0)).sqrt();
        assert!((bissell_lower_95(1.33, 50).unwrap() - expected).abs() < 1e-4);
        assert_eq!(bissell_lower_95(1.0, 1), None);
    }

    #[test]
    fn bissell_bound_covers_about_95_percent() {
        // Source: Bissell (1990): the bound is an approximate one-sided 95 % confidence limit, so
        // over many normal samples (s-based Cpk, as Bissell derived it) it lies below the true Cpk
        // about 95 % of the time. Normal deviates are statrs quantiles of a fixed SplitMix64
        // stream, so the test repeats exactly without a random-number crate.
        let normal = Normal::new(10.0, 1.0).unwrap();
        let limits = two_sided(7.0, 14.0); // true Cpk = min(3, 4)/3 = 1.0
        let n = 40;
        let trials = 4000;
        let mut covered = 0;
        let mut state = 0x9E37_79B9_7F4A_7C15u64;
        let mut uniform = move || {
            state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = state;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            z ^= z >> 31;
            ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64
        };
        for _ in 0..trials {
            let sample: Vec<f64> = (0..n).map(|_| normal.inverse_cdf(uniform())).collect();
            let (mean, sd) = mean_sd(&sample).unwrap();
            let (_, cpk) = normal_indices(mean, sd, limits);
            if bissell_lower_95(cpk.unwrap(), n).unwrap() <= 1.0 {
                covered += 1;
            }
        }
        let share = covered as f64 / trials as f64;
        assert!((0.92..=0.98).contains(&share), "coverage {share}");
    }

    #[test]
    fn ad_p_value_matches_stephens_percentage_points() {
        // From memory: D'Agostino & Stephens (1986), Table 4.7, normal with mean and variance
        // estimated, modified A*: upper 10 % 0.631, 5 % 0.752, 2.5 % 0.873, 1 % 1.035.
        for (a_star, p) in [(0.631, 0.10), (0.752, 0.05), (0.873, 0.025), (1.035, 0.01)] {
            let got = ad_p_value(a_star);
            assert!((got - p).abs() < 0.05 * p, "A* {a_star}: p {got}, table {p}");
        }
        // Source: D'Agostino & Stephens (1986), Table 4.9: the pieces join up at 0.2, 0.34 and 0.6.
        for edge in [0.2, 0.34, 0.6] {
            let (below, above) = (ad_p_value(edge - 1e-9), ad_p_value(edge + 1e-9));
            assert!((below - above).abs() < 0.01, "{edge}: {below} vs {above}");
        }
        assert!(ad_p_value(0.05) > 0.99 && ad_p_value(20.0) == 0.0);
    }

    /// A² by its definition, n ∫₀¹ (Fn(t) − t)² / (t(1 − t)) dt with t = Φ((x − x̄)/s),
    /// integrated numerically: an independent route to the computing formula.
    fn a2_by_integral(values: &[f64]) -> f64 {
        let (mean, sd) = mean_sd(values).unwrap();
        let normal = Normal::new(mean, sd).unwrap();
        let mut u: Vec<f64> = values.iter().map(|&v| normal.cdf(v)).collect();
        u.sort_by(f64::total_cmp);
        let n = u.len() as f64;
        let mut knots = vec![0.0];
        knots.extend(&u);
        knots.push(1.0);
        let mut total = 0.0;
        for (k, seg) in knots.windows(2).enumerate() {
            let fn_k = k as f64 / n;
            let f = |t: f64| (fn_k - t).powi(2) / (t * (1.0 - t));
            // Simpson's rule on a fine grid; the ends are integrable singularity-free
            // (Fn = 0 near 0 and Fn = 1 near 1) but the formula is 0/0 there.
            let steps = 2000;
            let (a, b) = (seg[0].max(1e-15), seg[1].min(1.0 - 1e-15));
            if b <= a {
                continue;
            }
            let h = (b - a) / steps as f64;
            let mut s = f(a) + f(b);
            for i in 1..steps {
                s += f(a + h * i as f64) * if i % 2 == 1 { 4.0 } else { 2.0 };
            }
            total += s * h / 3.0;
        }
        n * total
    }

    // Source: IMSL ADNRM / ad_normality_test example, data from Conover (1980, pp. 364 and 195):
    // 50 two-digit numbers from a telephone book; the documentation states that the test does
    // not reject normality at the 0.05 level.
    const CONOVER: [f64; 50] = [
        23.0, 36.0, 54.0, 61.0, 73.0, 23.0, 37.0, 54.0, 61.0, 73.0, 24.0, 40.0, 56.0, 62.0, 74.0, 27.0, 42.0,
        57.0, 63.0, 75.0, 29.0, 43.0, 57.0, 64.0, 77.0, 31.0, 43.0, 58.0, 65.0, 81.0, 32.0, 44.0, 58.0, 66.0,
        87.0, 33.0, 45.0, 58.0, 68.0, 89.0, 33.0, 48.0, 58.0, 68.0, 93.0, 35.0, 48.0, 59.0, 70.0, 97.0,
    ];

    #[test]
    fn anderson_darling_on_conover_data() {
        let test = anderson_darling(&CONOVER).unwrap();
        // Source: IMSL ADNRM example (Conover 1980 data): normality not rejected at 0.05.
        assert!(test.p_value > 0.05, "{test:?}");
        // Common practice, no published source: the computing formula equals the defining integral.
        let integral = a2_by_integral(&CONOVER);
        assert!((test.a2 - integral).abs() < 1e-6 * integral.max(1.0), "{} vs {integral}", test.a2);
        let n = 50.0;
        assert!((test.a2_star - test.a2 * (1.0 + 0.75 / n + 2.25 / (n * n))).abs() < 1e-12);
    }

    #[test]
    fn anderson_darling_rejects_a_skewed_sample() {
        // Exponential quantiles: strongly skewed, so normality must be rejected.
        let values: Vec<f64> = (1..=60).map(|i| -(1.0 - (i as f64 - 0.5) / 60.0).ln()).collect();
        let test = anderson_darling(&values).unwrap();
        // Common practice, no published source: the defining integral again, on a rejected sample.
        assert!((test.a2 - a2_by_integral(&values)).abs() < 1e-6 * test.a2);
        assert!(test.p_value < 0.01, "{test:?}");
        let cap = capability(&values, two_sided(0.0, 8.0));
        assert_eq!(cap.method, CapabilityMethod::Percentile);
        assert_eq!((cap.cp, cap.cpk, cap.cpk_lower_95), (None, None, None));
        let mut sorted = values.clone();
        sorted.sort_by(f64::total_cmp);
        let (lo, mid, hi) = (
            quantile_sorted(&sorted, 0.00135).unwrap(),
            quantile_sorted(&sorted, 0.5).unwrap(),
            quantile_sorted(&sorted, 0.99865).unwrap(),
        );
        // From memory: ISO 22514-2 percentile indices, Pp = (U − L)/(X99.865 − X0.135), Ppk from the median.
        assert!((cap.pp.unwrap() - 8.0 / (hi - lo)).abs() < 1e-12);
        assert!((cap.ppk.unwrap() - ((8.0 - mid) / (hi - mid)).min(mid / (mid - lo))).abs() < 1e-12);
    }

    #[test]
    fn moving_range_sigma_and_summary() {
        let values = [10.0, 12.0, 11.0, 13.0, 12.0, 14.0, 13.0, 15.0];
        let cap = capability(&values, two_sided(5.0, 20.0));
        // Common practice, no published source: moving ranges 2,1,2,1,2,1,2 → MR̄ = 11/7, σ = MR̄/1.128.
        let sigma_within = 11.0 / 7.0 / 1.128;
        assert!((cap.sd_within.unwrap() - sigma_within).abs() < 1e-12);
        assert!((cap.cp.unwrap() - 15.0 / (6.0 * sigma_within)).abs() < 1e-12);
        assert_eq!((cap.n, cap.min, cap.max, cap.median), (8, Some(10.0), Some(15.0), Some(12.5)));
        assert!((cap.mean.unwrap() - 12.5).abs() < 1e-12);
        let s = (values.iter().map(|v| (v - 12.5f64).powi(2)).sum::<f64>() / 7.0).sqrt();
        assert!((cap.sd.unwrap() - s).abs() < 1e-12);
        assert!((cap.pp.unwrap() - 15.0 / (6.0 * s)).abs() < 1e-12);
        assert_eq!(cap.method, CapabilityMethod::Normal);
        assert!(cap.cp_lower_95.unwrap() < cap.cp.unwrap() && cap.cp.unwrap() < cap.cp_upper_95.unwrap());
    }

    #[test]
    fn degenerate_lots_leave_indices_out() {
        let empty = capability(&[], two_sided(0.0, 1.0));
        assert_eq!((empty.n, empty.mean, empty.cp, empty.pp), (0, None, None, None));
        let one = capability(&[0.5], two_sided(0.0, 1.0));
        assert_eq!((one.mean, one.sd, one.cpk), (Some(0.5), None, None));
        let flat = capability(&[0.5; 10], two_sided(0.0, 1.0));
        assert_eq!((flat.cp, flat.pp, flat.normality_p), (None, None, None));
        let with_nan = capability(&[1.0, f64::NAN, 2.0, 3.0], Limits { lower: None, upper: Some(5.0) });
        assert_eq!((with_nan.n, with_nan.excluded), (3, 1));
        assert_eq!(with_nan.cp, None);
        assert!(with_nan.cpk.is_some() && with_nan.ppk.is_some());
        let json = serde_json::to_value(&with_nan).unwrap();
        assert_eq!(json["method"], "normal");
        assert!(json["cp"].is_null());
    }

    proptest! {
        // Common practice, no published source: capability indices do not depend on the unit or origin.
        #[test]
        fn indices_are_scale_invariant(values in prop::collection::vec(-10.0f64..10.0, 10..60),
                                       scale in 0.01f64..100.0, shift in -1000.0f64..1000.0) {
            let limits = two_sided(-15.0, 12.0);
            let moved: Vec<f64> = values.iter().map(|v| v * scale + shift).collect();
            let moved_limits = two_sided(-15.0 * scale + shift, 12.0 * scale + shift);
            let a = capability(&values, limits);
            let b = capability(&moved, moved_limits);
            prop_assert_eq!(a.method, b.method);
            for (x, y) in [(a.cp, b.cp), (a.cpk, b.cpk), (a.pp, b.pp), (a.ppk, b.ppk),
                           (a.normality_a2, b.normality_a2), (a.cpk_lower_95, b.cpk_lower_95)] {
                match (x, y) {
                    (Some(x), Some(y)) => prop_assert!((x - y).abs() <= 1e-6 * x.abs().max(1.0), "{} vs {}", x, y),
                    (None, None) => {}
                    other => prop_assert!(false, "{:?}", other),
                }
            }
        }
    }
}
