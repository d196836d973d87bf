//! Capability of a lot whose values are not normal (ISO 22514-2 percentile indices).
//!
//! ISO 22514-2 replaces the normal ±3σ spread by the distance between the 0.135 % and
//! 99.865 % points of the lot's distribution and the centre by its median:
//! Pp = (U − L)/(X99.865 − X0.135), Ppk = min((U − X50)/(X99.865 − X50),
//! (X50 − L)/(X50 − X0.135)). Those points can be taken from the data themselves or
//! from a distribution fitted to them; this module does both, each only where it can
//! be defended:
//!
//! * **Empirical percentiles** need values beyond the 0.135 % points. With n values the
//!   chance that none falls below the true 0.135 % point is (1 − 0.00135)ⁿ; it drops
//!   under 5 % only from n = ln 0.05 / ln(1 − 0.00135) ≈ 2,218 on
//!   ([`MIN_VALUES_EMPIRICAL`]). Below that the extreme points are the sample's own
//!   extremes or an extrapolation of them, and a lognormal lot of 32–125 values shows
//!   Pp far above its true value.
//! * **A fitted distribution** serves the usual lot of 20 to a few hundred values: a
//!   three-parameter lognormal (threshold τ, log-mean μ, log-σ), mirrored for a lot
//!   skewed to the left, fitted by profile maximum likelihood over τ. The fit is used
//!   only when the Anderson–Darling test on the transformed values ln(x − τ) does not
//!   reject normality at 5 % ([`FIT_ALPHA`]). That p-value treats τ as known, so it
//!   leans towards accepting the fit; the threshold is reported with it so a reader can
//!   judge. At least [`MIN_VALUES_FIT`] values are needed.
//! * Otherwise the indices are not estimable, and the reason says why.

use crate::capability::{anderson_darling, quantile_sorted};
use statrs::distribution::{ContinuousCDF, Normal};
use twistlot_model::Limits;

/// Lower tail probability of the ISO 22514-2 spread (the −3σ point of a normal).
pub const P_LOW: f64 = 0.00135;
/// Upper tail probability of the ISO 22514-2 spread (the +3σ point of a normal).
pub const P_HIGH: f64 = 0.99865;

/// Fewest values for empirical 0.135 % / 99.865 % points: from this n on, at least one
/// value lies beyond each true point with probability 95 % or more (binomial,
/// (1 − 0.00135)ⁿ ≤ 0.05). Common practice, no published source for the exact count.
pub const MIN_VALUES_EMPIRICAL: usize = 2218;

pub use twistlot_model::FittedDistribution;

/// Fewest values for fitting a three-parameter lognormal (three parameters and a
/// goodness-of-fit test that can reject it).
pub const MIN_VALUES_FIT: usize = 20;

/// Significance level of the Anderson–Darling test that accepts a fitted distribution.
pub const FIT_ALPHA: f64 = 0.05;

/// The fitted `p` quantile of a three-parameter lognormal fit.
pub fn fitted_quantile(fit: &FittedDistribution, p: f64) -> f64 {
    let z = std_normal_quantile(if fit.mirrored { 1.0 - p } else { p });
    let offset = (fit.log_mean + fit.log_sd * z).exp();
    if fit.mirrored {
        fit.threshold - offset
    } else {
        fit.threshold + offset
    }
}

fn std_normal_quantile(p: f64) -> f64 {
    Normal::new(0.0, 1.0).map(|n| n.inverse_cdf(p)).unwrap_or(f64::NAN)
}

/// ISO 22514-2 indices from a lower point, a median and an upper point.
pub fn percentile_indices(low: f64, mid: f64, high: f64, limits: Limits) -> (Option<f64>, Option<f64>) {
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

/// Empirical ISO 22514-2 points (0.135 %, median, 99.865 %) of sorted values,
/// interpolated between order statistics (Hyndman & Fan type 7); `None` below
/// [`MIN_VALUES_EMPIRICAL`] values.
pub fn empirical_points(sorted: &[f64]) -> Option<(f64, f64, f64)> {
    if sorted.len() < MIN_VALUES_EMPIRICAL {
        return None;
    }
    Some((quantile_sorted(sorted, P_LOW)?, quantile_sorted(sorted, 0.5)?, quantile_sorted(sorted, P_HIGH)?))
}

fn sample_skewness(values: &[f64]) -> f64 {
    let n = values.len() as f64;
    let mean = values.iter().sum::<f64>() / n;
    let m2 = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n;
    let m3 = values.iter().map(|v| (v - mean).powi(3)).sum::<f64>() / n;
    if m2 > 0.0 {
        m3 / m2.powf(1.5)
    } else {
        0.0
    }
}

/// Profile log-likelihood of a three-parameter lognormal at threshold `tau` (below
/// every value), up to a constant: −Σ ln(x − τ) − n·ln σ̂(τ), σ̂ the ML log-σ.
fn profile_loglik(values: &[f64], tau: f64) -> f64 {
    let n = values.len() as f64;
    let logs: Vec<f64> = values.iter().map(|v| (v - tau).ln()).collect();
    let mean = logs.iter().sum::<f64>() / n;
    let var = logs.iter().map(|y| (y - mean).powi(2)).sum::<f64>() / n;
    if !(var > 0.0 && var.is_finite()) {
        return f64::NEG_INFINITY;
    }
    -logs.iter().sum::<f64>() - 0.5 * n * var.ln()
}

/// Fits a right-skewed three-parameter lognormal to `values` (τ below the minimum);
/// returns τ. The likelihood grows without bound as τ approaches the smallest value, so
/// only an interior local maximum is taken; `None` when there is none.
fn fit_threshold(values: &[f64]) -> Option<f64> {
    let min = values.iter().copied().fold(f64::INFINITY, f64::min);
    let max = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let range = max - min;
    if range.is_nan() || range <= 0.0 {
        return None;
    }
    // τ = min − range·e^θ; θ from the neighbourhood of the minimum to far below it,
    // where the lognormal becomes a normal.
    let tau = |theta: f64| min - range * theta.exp();
    let (lo, hi, steps) = (-9.0f64, 9.0f64, 360usize);
    let grid: Vec<(f64, f64)> = (0..=steps)
        .map(|i| {
            let theta = lo + (hi - lo) * i as f64 / steps as f64;
            (theta, profile_loglik(values, tau(theta)))
        })
        .collect();
    // Best interior point that is a local maximum of the grid.
    let best = (1..steps)
        .filter(|&i| grid[i].1 >= grid[i - 1].1 && grid[i].1 >= grid[i + 1].1 && grid[i].1.is_finite())
        .max_by(|&a, &b| grid[a].1.total_cmp(&grid[b].1))?;
    // Golden-section refinement between the neighbours.
    let (mut a, mut b) = (grid[best - 1].0, grid[best + 1].0);
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let f = |theta: f64| profile_loglik(values, tau(theta));
    let (mut c, mut d) = (b - g * (b - a), a + g * (b - a));
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..60 {
        if fc > fd {
            b = d;
            d = c;
            fd = fc;
            c = b - g * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + g * (b - a);
            fd = f(d);
        }
    }
    Some(tau(0.5 * (a + b)))
}

/// Fits a three-parameter lognormal (mirrored when the lot is skewed to the left) and
/// keeps it only when Anderson–Darling does not reject the transformed values at
/// [`FIT_ALPHA`]. `None` with fewer than [`MIN_VALUES_FIT`] values, no spread, or no
/// acceptable fit.
pub fn fit_lognormal3(values: &[f64]) -> Option<FittedDistribution> {
    if values.len() < MIN_VALUES_FIT || values.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let mirrored = sample_skewness(values) < 0.0;
    let oriented: Vec<f64> = if mirrored { values.iter().map(|v| -v).collect() } else { values.to_vec() };
    let tau = fit_threshold(&oriented)?;
    let logs: Vec<f64> = oriented.iter().map(|v| (v - tau).ln()).collect();
    if logs.iter().any(|y| !y.is_finite()) {
        return None;
    }
    let test = anderson_darling(&logs)?;
    if test.p_value < FIT_ALPHA {
        return None;
    }
    let n = logs.len() as f64;
    let log_mean = logs.iter().sum::<f64>() / n;
    let log_sd = (logs.iter().map(|y| (y - log_mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    let mut fit = FittedDistribution {
        family: "lognormal-3".to_string(),
        mirrored,
        threshold: if mirrored { -tau } else { tau },
        log_mean,
        log_sd,
        fit_p: test.p_value,
        x_low: 0.0,
        x_median: 0.0,
        x_high: 0.0,
    };
    fit.x_low = fitted_quantile(&fit, P_LOW);
    fit.x_median = fitted_quantile(&fit, 0.5);
    fit.x_high = fitted_quantile(&fit, P_HIGH);
    [fit.x_low, fit.x_median, fit.x_high].iter().all(|x| x.is_finite()).then_some(fit)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, LogNormal};

    fn two_sided(lo: f64, hi: f64) -> Limits {
        Limits { lower: Some(lo), upper: Some(hi) }
    }

    #[test]
    fn iso_indices_on_a_normal_reduce_to_pp_ppk() {
        // Source: ISO 22514-2 percentile definitions: for a normal with mean 10 and σ 1 the
        // 0.135 % / 99.865 % points are μ ∓ 3σ (statrs Normal quantile), so Pp = (U − L)/6σ and
        // Ppk = min(U − μ, μ − L)/3σ.
        let normal = Normal::new(10.0, 1.0).unwrap();
        let (low, high) = (normal.inverse_cdf(P_LOW), normal.inverse_cdf(P_HIGH));
        assert!((low - 7.0).abs() < 1e-3 && (high - 13.0).abs() < 1e-3, "{low} {high}");
        let (pp, ppk) = percentile_indices(low, 10.0, high, two_sided(5.0, 14.0));
        assert!((pp.unwrap() - 9.0 / (high - low)).abs() < 1e-12);
        assert!((pp.unwrap() - 1.5).abs() < 1e-3);
        assert!((ppk.unwrap() - 4.0 / (high - 10.0)).abs() < 1e-12);
        // One limit: only its side.
        let (pp, ppk) = percentile_indices(low, 10.0, high, Limits { lower: Some(5.0), upper: None });
        assert_eq!(pp, None);
        assert!((ppk.unwrap() - 5.0 / (10.0 - low)).abs() < 1e-12);
    }

    #[test]
    fn empirical_points_need_enough_values() {
        // Source: binomial: (1 − 0.00135)^n ≤ 0.05 first holds at n = 2218.
        let needed = (0.05f64.ln() / (1.0 - P_LOW).ln()).ceil() as usize;
        assert_eq!(needed, MIN_VALUES_EMPIRICAL);
        assert!((1.0 - P_LOW).powi(2217) > 0.05 && (1.0 - P_LOW).powi(2218) <= 0.05);
        let few: Vec<f64> = (0..2217).map(|i| i as f64).collect();
        assert_eq!(empirical_points(&few), None);
        // Uniform 0..=N: the type-7 quantile at p is p·N exactly.
        let many: Vec<f64> = (0..=3000).map(|i| i as f64).collect();
        let (lo, mid, hi) = empirical_points(&many).unwrap();
        // Source: Hyndman & Fan (1996) type 7: position (n − 1)·p on 0..=3000 is 3000·p.
        assert!((lo - 3000.0 * P_LOW).abs() < 1e-9 && (mid - 1500.0).abs() < 1e-9);
        assert!((hi - 3000.0 * P_HIGH).abs() < 1e-9);
    }

    #[test]
    fn lognormal_lot_is_fitted_and_its_indices_are_near_the_truth() {
        // A lognormal lot: threshold 5, ln(x − 5) ~ N(0, 0.5). Its true 0.135 %, 50 % and
        // 99.865 % points are 5 + exp(0.5·z) for z = −3, 0, 3 (z from statrs).
        let dist = LogNormal::new(0.0, 0.5).unwrap();
        let z = |p: f64| Normal::new(0.0, 1.0).unwrap().inverse_cdf(p);
        let truth = |p: f64| 5.0 + (0.5 * z(p)).exp();
        let limits = two_sided(4.5, 12.0);
        let (true_pp, true_ppk) = percentile_indices(truth(P_LOW), truth(0.5), truth(P_HIGH), limits);
        let (true_pp, true_ppk) = (true_pp.unwrap(), true_ppk.unwrap());
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        let mut ratios = Vec::new();
        for _ in 0..40 {
            let lot: Vec<f64> = (0..125).map(|_| 5.0 + dist.sample(&mut rng)).collect();
            if let Some(fit) = fit_lognormal3(&lot) {
                assert!(!fit.mirrored);
                let (pp, _) = percentile_indices(fit.x_low, fit.x_median, fit.x_high, limits);
                ratios.push(pp.unwrap() / true_pp);
            }
        }
        // Common practice, no published source: a lognormal lot of 125 is accepted by its own
        // family's fit in nearly every draw (the test rejects at 5 %).
        assert!(ratios.len() >= 34, "fitted {} of 40", ratios.len());
        // Common practice, no published source: the fitted Pp is centred on the truth (median
        // ratio within 10 %), unlike empirical percentiles of 125 values.
        ratios.sort_by(f64::total_cmp);
        let median = ratios[ratios.len() / 2];
        assert!((median - 1.0).abs() < 0.10, "median Pp ratio {median}");
        assert!(true_ppk > 0.0);
    }

    #[test]
    fn left_skewed_lot_is_fitted_mirrored() {
        let dist = LogNormal::new(0.0, 0.4).unwrap();
        let mut rng = ChaCha8Rng::seed_from_u64(5);
        let lot: Vec<f64> = (0..200).map(|_| 20.0 - dist.sample(&mut rng)).collect();
        let fit = fit_lognormal3(&lot).expect("a mirrored lognormal fits");
        assert!(fit.mirrored);
        // Common practice, no published source: the mirrored fit puts its threshold above every
        // value and its median near the true median 20 − e⁰ = 19.
        assert!(fit.threshold > lot.iter().copied().fold(f64::MIN, f64::max));
        assert!((fit.x_median - 19.0).abs() < 0.1, "{}", fit.x_median);
        assert!(fit.x_low < fit.x_median && fit.x_median < fit.x_high);
    }

    #[test]
    fn a_two_humped_lot_is_not_fitted() {
        // Two separate clusters: no lognormal describes them.
        let lot: Vec<f64> = (0..60)
            .map(|i| if i % 2 == 0 { 10.0 + (i as f64) * 0.001 } else { 20.0 + (i as f64) * 0.001 })
            .collect();
        assert_eq!(fit_lognormal3(&lot), None);
        assert_eq!(fit_lognormal3(&lot[..10]), None);
    }
}
