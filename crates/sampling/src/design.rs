//! Designing plans from the four numbers (AQL, α, LTPD, β).
//!
//! Attribute plans are found by exact binomial search. Variables plans (k-method) are
//! found by exact search too: the smallest n for which some k gives Pa(AQL) ≥ 1 − α and
//! Pa(LTPD) ≤ β under the exact OC, with k taken in the middle of the range of k that
//! meets both risks at that n. The OC is the normal one for known σ and the noncentral t
//! (integrated over s/σ, see [`crate::oc::variables_p_accept_two_tails`]) for unknown σ.
//!
//! **Double limits.** A lot with nonconforming fraction p can hold it all beyond one limit
//! or split between the two, and the k-method accepts the two cases with different
//! probabilities. The design does not know the tolerance width in σ units, so it
//! guards against every split: Pa(AQL) ≥ 1 − α for the split least favourable to the
//! producer and Pa(LTPD) ≤ β for the split least favourable to the consumer (each found by
//! a search over the share of p above the upper limit). The OC for a split is exact for
//! normal data with σ known or unknown, since x̄ and s are independent. A double-limit
//! plan is never smaller than the single-limit plan for the same risks, and is larger where
//! a split lot fares worse at the AQL than a one-sided one. This is a worst-case reading of
//! the two-sided k-method, not the M-method of MIL-STD-414, which is out of scope.
//!
//! The Wallis approximation (k = (z_p1·z_β + z_p2·z_α)/(z_α + z_β),
//! n_σ = ((z_α + z_β)/(z_p1 − z_p2))², n = n_σ(1 + k²/2) for unknown σ) is kept beside the
//! exact plan as its starting point and for comparison with the handbooks.

use crate::oc::{self, OcPoint};
use crate::SamplingError;
use serde::{Deserialize, Serialize};
use twistlot_model::Limits;

/// Largest sample the attribute search tries before giving up.
pub const MAX_DESIGN_SAMPLE: u64 = 20_000;

/// Points in the OC curves returned with designs.
pub const OC_POINTS: usize = 101;

/// An attribute single sampling plan designed from risks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AttributeDesign {
    /// Sample size n.
    pub sample_size: u64,
    /// Acceptance number c (reject at c + 1).
    pub accept: u64,
    /// Probability of acceptance at the AQL (at least 1 − α).
    pub p_accept_at_aql: f64,
    /// Probability of acceptance at the LTPD (at most β).
    pub p_accept_at_ltpd: f64,
    /// OC curve (binomial).
    pub oc: Vec<OcPoint>,
}

/// Whether a characteristic has one limit or two.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum LimitKind {
    /// Only a lower or only an upper limit.
    Single,
    /// Both limits, each checked against k; designed for the least favourable split.
    Double,
}

impl LimitKind {
    /// The kind of a pair of limits; None when neither limit is set.
    pub fn of(limits: &Limits) -> Option<LimitKind> {
        match (limits.lower, limits.upper) {
            (Some(_), Some(_)) => Some(LimitKind::Double),
            (None, None) => None,
            _ => Some(LimitKind::Single),
        }
    }
}

/// The Wallis approximation for a variables plan (the handbook starting point).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WallisPlan {
    /// n rounded up.
    pub sample_size: u64,
    /// n before rounding.
    pub sample_size_exact: f64,
    /// k.
    pub k: f64,
    /// Pa at the AQL under the exact OC (worst split for a double limit).
    pub p_accept_at_aql: f64,
    /// Pa at the LTPD under the exact OC (worst split for a double limit).
    pub p_accept_at_ltpd: f64,
}

/// A variables (k-method) plan designed from risks by exact search.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariablesDesign {
    /// Sample size n: the smallest that meets both risks under the exact OC.
    pub sample_size: u64,
    /// Acceptability constant k: the middle of the range meeting both risks at n.
    pub k: f64,
    /// Smallest k that meets β at this n.
    pub k_min: f64,
    /// Largest k that meets α at this n.
    pub k_max: f64,
    /// Whether σ is taken as known.
    pub sigma_known: bool,
    /// Single or double limit.
    pub limits: LimitKind,
    /// Exact Pa at the AQL (double limit: the least favourable split); at least 1 − α.
    pub p_accept_at_aql: f64,
    /// Exact Pa at the LTPD (double limit: the least favourable split); at most β.
    pub p_accept_at_ltpd: f64,
    /// The OC the design used, in words.
    pub oc_method: String,
    /// The Wallis approximation, the starting point of the search.
    pub wallis: WallisPlan,
    /// OC curve with all nonconforming product beyond one limit (known σ: normal;
    /// unknown σ: noncentral t).
    pub oc: Vec<OcPoint>,
    /// Double limit only: OC with the nonconforming product split evenly between the limits.
    pub oc_split_evenly: Option<Vec<OcPoint>>,
}

/// Largest sample the variables search tries before giving up.
pub const MAX_VARIABLES_SAMPLE: u64 = 5_000;

/// Exact Pa at `pct` for the split of nonconforming product that is least favourable to
/// the producer (`worst_for_producer`: the smallest Pa) or to the consumer (the largest).
pub fn variables_p_accept_worst(
    sample_size: u64,
    k: f64,
    pct: f64,
    sigma_known: bool,
    limits: LimitKind,
    worst_for_producer: bool,
) -> f64 {
    let at = |share_above: f64| {
        oc::variables_p_accept_two_tails(
            sample_size,
            k,
            pct * (1.0 - share_above),
            pct * share_above,
            sigma_known,
        )
    };
    if limits == LimitKind::Single {
        return at(1.0);
    }
    // The two limits are symmetric, so shares above ½ mirror those below.
    let sign = if worst_for_producer { 1.0 } else { -1.0 };
    let score = |share: f64| sign * at(share);
    let steps = 5;
    let grid: Vec<(f64, f64)> = (0..=steps)
        .map(|i| {
            let share = 0.5 * i as f64 / steps as f64;
            (share, score(share))
        })
        .collect();
    let best = (0..=steps).min_by(|&a, &b| grid[a].1.total_cmp(&grid[b].1)).unwrap_or(0);
    let (mut a, mut b) = (grid[best.saturating_sub(1)].0, grid[(best + 1).min(steps)].0);
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let (mut c, mut d) = (b - g * (b - a), a + g * (b - a));
    let (mut fc, mut fd) = (score(c), score(d));
    for _ in 0..16 {
        if fc < fd {
            b = d;
            d = c;
            fd = fc;
            c = b - g * (b - a);
            fc = score(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + g * (b - a);
            fd = score(d);
        }
    }
    let found = grid[best].1.min(fc).min(fd);
    sign * found
}

/// Bisection for the boundary of a condition that holds for small k and fails for large k.
fn k_boundary(holds: impl Fn(f64) -> bool) -> f64 {
    // Acceptability constants outside (−4, 12) would mean quality levels beyond 10⁻³⁰.
    let (mut lo, mut hi) = (-4.0, 12.0);
    for _ in 0..34 {
        let mid = 0.5 * (lo + hi);
        if holds(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// The largest k meeting α at `n` (Pa falls as k grows, at every quality and split).
fn k_max_for_alpha(n: u64, p1_pct: f64, alpha: f64, sigma_known: bool, limits: LimitKind) -> f64 {
    k_boundary(|k| variables_p_accept_worst(n, k, p1_pct, sigma_known, limits, true) >= 1.0 - alpha)
}

/// The smallest k meeting β at `n`.
fn k_min_for_beta(n: u64, p2_pct: f64, beta: f64, sigma_known: bool, limits: LimitKind) -> f64 {
    k_boundary(|k| variables_p_accept_worst(n, k, p2_pct, sigma_known, limits, false) > beta)
}

/// The range of k meeting both risks at `n`: (k_min from β, k_max from α); feasible when
/// k_min ≤ k_max.
#[cfg(test)]
fn k_range(
    n: u64,
    p1_pct: f64,
    alpha: f64,
    p2_pct: f64,
    beta: f64,
    sigma_known: bool,
    limits: LimitKind,
) -> (f64, f64) {
    (
        k_min_for_beta(n, p2_pct, beta, sigma_known, limits),
        k_max_for_alpha(n, p1_pct, alpha, sigma_known, limits),
    )
}

fn check_risks(aql_pct: f64, alpha: f64, ltpd_pct: f64, beta: f64) -> Result<(), SamplingError> {
    let ok_pct = |p: f64| p.is_finite() && p > 0.0 && p < 100.0;
    let ok_risk = |r: f64| r.is_finite() && r > 0.0 && r < 0.5;
    if !ok_pct(aql_pct) || !ok_pct(ltpd_pct) {
        return Err(SamplingError::BadRisks(format!(
            "AQL {aql_pct}% and LTPD {ltpd_pct}% must lie strictly between 0 and 100"
        )));
    }
    if aql_pct >= ltpd_pct {
        return Err(SamplingError::BadRisks(format!(
            "the AQL {aql_pct}% must be below the LTPD {ltpd_pct}%"
        )));
    }
    if !ok_risk(alpha) || !ok_risk(beta) {
        return Err(SamplingError::BadRisks(format!(
            "α {alpha} and β {beta} must lie strictly between 0 and 0.5"
        )));
    }
    Ok(())
}

/// The smallest c with P(accept | n, AQL) ≥ 1 − α, if the plan (n, c) also meets β at the LTPD.
fn plan_for_n(n: u64, p1: f64, alpha: f64, p2: f64, beta: f64) -> Option<(u64, f64, f64)> {
    // P(X ≤ c) grows with c at both qualities, so the smallest c meeting α is the
    // only candidate that can also meet β.
    let c = (0..=n).find(|&c| oc::binomial_cdf(c, n, p1) >= 1.0 - alpha)?;
    let at_ltpd = oc::binomial_cdf(c, n, p2);
    (at_ltpd <= beta).then(|| (c, oc::binomial_cdf(c, n, p1), at_ltpd))
}

/// Smallest attribute plan (n, c) with Pa(AQL) ≥ 1 − α and Pa(LTPD) ≤ β (binomial, exact search).
pub fn design_attribute(
    aql_pct: f64,
    alpha: f64,
    ltpd_pct: f64,
    beta: f64,
) -> Result<AttributeDesign, SamplingError> {
    check_risks(aql_pct, alpha, ltpd_pct, beta)?;
    let (p1, p2) = (aql_pct / 100.0, ltpd_pct / 100.0);
    for n in 1..=MAX_DESIGN_SAMPLE {
        if let Some((c, at_aql, at_ltpd)) = plan_for_n(n, p1, alpha, p2, beta) {
            let max_pct = (ltpd_pct * 2.0).max(oc::attribute_range_pct(n, c)).min(100.0);
            return Ok(AttributeDesign {
                sample_size: n,
                accept: c,
                p_accept_at_aql: at_aql,
                p_accept_at_ltpd: at_ltpd,
                oc: oc::attribute_oc(n, c, None, max_pct, OC_POINTS),
            });
        }
    }
    Err(SamplingError::NoPlan(format!(
        "no attribute plan with n ≤ {MAX_DESIGN_SAMPLE} meets AQL {aql_pct}% (α {alpha}) and LTPD {ltpd_pct}% (β {beta})"
    )))
}

/// The Wallis approximation: k = (z_p1·z_β + z_p2·z_α)/(z_α + z_β),
/// n_σ = ((z_α + z_β)/(z_p1 − z_p2))², and for unknown σ n = n_σ·(1 + k²/2); returns
/// (n before rounding, k).
pub fn wallis_approximation(
    aql_pct: f64,
    alpha: f64,
    ltpd_pct: f64,
    beta: f64,
    sigma_known: bool,
) -> (f64, f64) {
    let z_p1 = oc::z_upper(aql_pct / 100.0);
    let z_p2 = oc::z_upper(ltpd_pct / 100.0);
    let z_a = oc::z_upper(alpha);
    let z_b = oc::z_upper(beta);
    let k = (z_p1 * z_b + z_p2 * z_a) / (z_a + z_b);
    let n_known = ((z_a + z_b) / (z_p1 - z_p2)).powi(2);
    (if sigma_known { n_known } else { n_known * (1.0 + k * k / 2.0) }, k)
}

/// Smallest k-method plan (n, k) whose exact OC meets Pa(AQL) ≥ 1 − α and Pa(LTPD) ≤ β,
/// for one limit or (worst split) two; the Wallis approximation is returned beside it.
pub fn design_variables(
    aql_pct: f64,
    alpha: f64,
    ltpd_pct: f64,
    beta: f64,
    sigma_known: bool,
    limits: LimitKind,
) -> Result<VariablesDesign, SamplingError> {
    check_risks(aql_pct, alpha, ltpd_pct, beta)?;
    let (wallis_exact, wallis_k) = wallis_approximation(aql_pct, alpha, ltpd_pct, beta, sigma_known);
    // Unknown σ needs at least two values for a standard deviation.
    let floor = if sigma_known { 1 } else { 2 };
    let wallis_n = ((wallis_exact - 1e-9).ceil() as u64).max(floor);
    // n is feasible when the largest k meeting α also meets β.
    let feasible = |n: u64| {
        let k_max = k_max_for_alpha(n, aql_pct, alpha, sigma_known, limits);
        (variables_p_accept_worst(n, k_max, ltpd_pct, sigma_known, limits, false) <= beta).then_some(k_max)
    };
    // Feasibility grows with n; bracket from the Wallis n, then bisect to the smallest.
    let (mut bad, mut good) = (floor - 1, wallis_n.clamp(floor, MAX_VARIABLES_SAMPLE));
    while feasible(good).is_none() {
        if good >= MAX_VARIABLES_SAMPLE {
            return Err(SamplingError::NoPlan(format!(
                "no variables plan with n ≤ {MAX_VARIABLES_SAMPLE} meets AQL {aql_pct}% (α {alpha}) and LTPD {ltpd_pct}% (β {beta})"
            )));
        }
        bad = good;
        good = (good * 2).min(MAX_VARIABLES_SAMPLE);
    }
    while good - bad > 1 {
        let mid = bad + (good - bad) / 2;
        if feasible(mid).is_some() {
            good = mid;
        } else {
            bad = mid;
        }
    }
    let n = good;
    let k_max =
        feasible(n).ok_or_else(|| SamplingError::NoPlan("the variables search lost its plan".into()))?;
    let k_min = k_min_for_beta(n, ltpd_pct, beta, sigma_known, limits).min(k_max);
    let k = 0.5 * (k_min + k_max);
    let worst = |n: u64, k: f64, pct: f64, producer: bool| {
        variables_p_accept_worst(n, k, pct, sigma_known, limits, producer)
    };
    let max_pct = (ltpd_pct * 2.0).min(100.0);
    let grid = |share_above: f64| -> Vec<OcPoint> {
        (0..OC_POINTS)
            .map(|i| {
                let pct = max_pct * i as f64 / (OC_POINTS - 1) as f64;
                OcPoint {
                    defective_pct: pct,
                    p_accept: oc::variables_p_accept_two_tails(
                        n,
                        k,
                        pct * (1.0 - share_above),
                        pct * share_above,
                        sigma_known,
                    ),
                }
            })
            .collect()
    };
    let oc_method = match (sigma_known, limits) {
        (true, LimitKind::Single) => "normal OC (σ known), one limit",
        (false, LimitKind::Single) => "noncentral t OC (σ unknown), one limit",
        (true, LimitKind::Double) => {
            "exact two-sided normal OC (σ known), least favourable split between the limits"
        }
        (false, LimitKind::Double) => {
            "exact two-sided OC over s (σ unknown), least favourable split between the limits"
        }
    };
    Ok(VariablesDesign {
        sample_size: n,
        k,
        k_min,
        k_max,
        sigma_known,
        limits,
        p_accept_at_aql: worst(n, k, aql_pct, true),
        p_accept_at_ltpd: worst(n, k, ltpd_pct, false),
        oc_method: oc_method.to_string(),
        wallis: WallisPlan {
            sample_size: wallis_n,
            sample_size_exact: wallis_exact,
            k: wallis_k,
            p_accept_at_aql: worst(wallis_n, wallis_k, aql_pct, true),
            p_accept_at_ltpd: worst(wallis_n, wallis_k, ltpd_pct, false),
        },
        oc: grid(1.0),
        oc_split_evenly: (limits == LimitKind::Double).then(|| grid(0.5)),
    })
}

/// The k-method verdict on one lot's measured values.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariablesVerdict {
    /// Values used.
    pub sample_size: u64,
    /// Sample mean.
    pub mean: f64,
    /// σ used: the known one, or the sample standard deviation.
    pub sigma: f64,
    /// (U − x̄)/σ, when there is an upper limit.
    pub q_upper: Option<f64>,
    /// (x̄ − L)/σ, when there is a lower limit.
    pub q_lower: Option<f64>,
    /// Acceptability constant.
    pub k: f64,
    /// True when every present statistic is at least k.
    pub accept: bool,
}

/// Applies the k-method to `values`: accept when (U − x̄)/σ ≥ k and (x̄ − L)/σ ≥ k for
/// each limit present; σ is `sigma_known` or else the sample standard deviation.
pub fn variables_verdict(
    values: &[f64],
    limits: &Limits,
    k: f64,
    sigma_known: Option<f64>,
) -> Result<VariablesVerdict, SamplingError> {
    if limits.lower.is_none() && limits.upper.is_none() {
        return Err(SamplingError::BadData("a variables plan needs at least one limit".into()));
    }
    if values.iter().any(|v| !v.is_finite()) {
        return Err(SamplingError::BadData("a measured value is not a finite number".into()));
    }
    let n = values.len();
    let needed = if sigma_known.is_some() { 1 } else { 2 };
    if n < needed {
        return Err(SamplingError::BadData(format!("{n} values are too few for a variables verdict")));
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let sigma = match sigma_known {
        Some(s) if s.is_finite() && s > 0.0 => s,
        Some(s) => return Err(SamplingError::BadData(format!("the known σ {s} must be positive"))),
        None => (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt(),
    };
    // All values equal: no spread to judge by, so any value inside the limits passes
    // every statistic (q is +∞) and any outside fails it (q is −∞).
    let q = |distance: f64| if sigma > 0.0 { distance / sigma } else { distance.signum() * f64::INFINITY };
    let q_upper = limits.upper.map(|u| q(u - mean));
    let q_lower = limits.lower.map(|l| q(mean - l));
    let accept = q_upper.is_none_or(|v| v >= k) && q_lower.is_none_or(|v| v >= k);
    Ok(VariablesVerdict { sample_size: n as u64, mean, sigma, q_upper, q_lower, k, accept })
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::distribution::{Binomial, ChiSquared, Continuous, ContinuousCDF, DiscreteCDF, Normal};

    fn binom(c: u64, n: u64, p: f64) -> f64 {
        Binomial::new(p, n).unwrap().cdf(c)
    }

    #[test]
    fn attribute_design_meets_both_risks_and_is_smallest() {
        for (aql, alpha, ltpd, beta) in
            [(1.0, 0.05, 5.0, 0.10), (0.5, 0.05, 3.0, 0.10), (2.5, 0.05, 10.0, 0.05)]
        {
            let d = design_attribute(aql, alpha, ltpd, beta).unwrap();
            let (n, c) = (d.sample_size, d.accept);
            // Source: statrs Binomial CDF
            assert!(binom(c, n, aql / 100.0) >= 1.0 - alpha);
            assert!(binom(c, n, ltpd / 100.0) <= beta);
            // Source: statrs Binomial CDF: no plan with n − 1 meets both risks, whatever c.
            for c in 0..n {
                let ok = binom(c, n - 1, aql / 100.0) >= 1.0 - alpha && binom(c, n - 1, ltpd / 100.0) <= beta;
                assert!(!ok, "n − 1 = {} with c = {c} also works", n - 1);
            }
        }
    }

    #[test]
    fn attribute_design_agrees_with_unity_values() {
        // From memory: Cameron (1952) unity values for α = 0.05, β = 0.10: the ratio
        // p2/p1 is 6.51 for c = 2 and 4.89 for c = 3, so LTPD/AQL = 5 needs c = 3 with
        // n between about 6.68/p2 = 134 (Poisson) and 1.37/p1 = 137.
        let d = design_attribute(1.0, 0.05, 5.0, 0.10).unwrap();
        assert_eq!(d.accept, 3);
        assert!((125..=137).contains(&d.sample_size), "n = {}", d.sample_size);
    }

    #[test]
    fn wallis_solves_the_two_oc_equations() {
        // Source: Montgomery, Introduction to SQC, variables sampling design: the Wallis plan
        // satisfies √n (z_p1 − k) = z_α and √n (z_p2 − k) = −z_β for known σ.
        let z = |p: f64| Normal::new(0.0, 1.0).unwrap().inverse_cdf(1.0 - p);
        let (n, k) = wallis_approximation(1.0, 0.05, 6.0, 0.10, true);
        assert!((n.sqrt() * (z(0.01) - k) - z(0.05)).abs() < 1e-9);
        assert!((n.sqrt() * (z(0.06) - k) + z(0.10)).abs() < 1e-9);
        let (unknown, _) = wallis_approximation(1.0, 0.05, 6.0, 0.10, false);
        assert!((unknown - n * (1.0 + k * k / 2.0)).abs() < 1e-9);
    }

    #[test]
    fn wallis_matches_montgomery_example() {
        // From memory: Montgomery, Introduction to Statistical Quality Control, variables
        // sampling plan design (p1 = 0.01, α = 0.05, p2 = 0.06, β = 0.10, σ unknown):
        // the nomograph gives n = 40, k = 1.9.
        let d = design_variables(1.0, 0.05, 6.0, 0.10, false, LimitKind::Single).unwrap();
        assert!((d.wallis.k - 1.9).abs() < 0.02, "k = {}", d.wallis.k);
        assert!((38..=42).contains(&d.wallis.sample_size), "n = {}", d.wallis.sample_size);
    }

    /// Pa of a k-method plan by an integration independent of the crate's: over x̄ instead of
    /// over s. With σ = 1, U = 0 and μ = −z_pU (L = μ − z_pL), the lot is accepted when
    /// s ≤ min(U − x̄, x̄ − L)/k, so Pa = ∫ φ_x̄(x) · F_χ²ν(ν·(min(U − x, x − L)/k)²) dx, with
    /// statrs's normal density and χ² CDF (Simpson's rule on a fine grid).
    fn pa_by_mean_integral(n: u64, k: f64, below_pct: f64, above_pct: f64, sigma_known: bool) -> f64 {
        let z = |p: f64| {
            if p > 0.0 {
                Normal::new(0.0, 1.0).unwrap().inverse_cdf(1.0 - p)
            } else {
                f64::INFINITY
            }
        };
        let (z_l, z_u) = (z(below_pct / 100.0), z(above_pct / 100.0));
        let mu = -z_u.min(40.0);
        let (upper, lower) = (0.0, if z_l.is_finite() { mu - z_l } else { f64::NEG_INFINITY });
        let se = 1.0 / (n as f64).sqrt();
        let mean_density = Normal::new(mu, se).unwrap();
        let nu = (n - 1) as f64;
        let chi = (!sigma_known).then(|| ChiSquared::new(nu).unwrap());
        let accept_given_mean = |x: f64| {
            let room = (upper - x).min(x - lower);
            if room <= 0.0 {
                return 0.0;
            }
            match &chi {
                Some(chi) => chi.cdf(nu * (room / k).powi(2)),
                None => f64::from(u8::from(room >= k)),
            }
        };
        if sigma_known {
            // x̄ must lie in [L + k, U − k].
            let (a, b) = (lower + k, upper - k);
            return if b <= a { 0.0 } else { mean_density.cdf(b) - mean_density.cdf(a) };
        }
        let (a, b) = (mu - 9.0 * se, (mu + 9.0 * se).min(upper));
        let steps = 1200;
        let h = (b - a) / steps as f64;
        let f = |x: f64| mean_density.pdf(x) * accept_given_mean(x);
        let mut sum = f(a) + f(b);
        for i in 1..steps {
            sum += f(a + h * i as f64) * if i % 2 == 1 { 4.0 } else { 2.0 };
        }
        sum * h / 3.0
    }

    #[test]
    fn exact_variables_designs_meet_both_risks() {
        use crate::oc::variables_p_accept_two_tails;
        for (aql, alpha, ltpd, beta) in
            [(1.0, 0.05, 6.0, 0.10), (0.65, 0.05, 2.5, 0.10), (2.5, 0.05, 10.0, 0.05)]
        {
            for sigma_known in [true, false] {
                let d = design_variables(aql, alpha, ltpd, beta, sigma_known, LimitKind::Single).unwrap();
                let (n, k) = (d.sample_size, d.k);
                // Source: independent integration over x̄ with statrs Normal and ChiSquared.
                let at_aql = pa_by_mean_integral(n, k, 0.0, aql, sigma_known);
                let at_ltpd = pa_by_mean_integral(n, k, 0.0, ltpd, sigma_known);
                assert!(at_aql >= 1.0 - alpha - 1e-7, "{aql}/{ltpd} σ known {sigma_known}: Pa(AQL) {at_aql}");
                assert!(at_ltpd <= beta + 1e-7, "{aql}/{ltpd} σ known {sigma_known}: Pa(LTPD) {at_ltpd}");
                assert!((at_aql - d.p_accept_at_aql).abs() < 1e-6, "{at_aql} vs {}", d.p_accept_at_aql);
                assert!((at_ltpd - d.p_accept_at_ltpd).abs() < 1e-6, "{at_ltpd} vs {}", d.p_accept_at_ltpd);
                // Smallest: at n − 1 no k meets both risks (the α bound on k falls below the β bound).
                let (lo, hi) = k_range(n - 1, aql, alpha, ltpd, beta, sigma_known, LimitKind::Single);
                assert!(n == 1 || lo > hi, "n − 1 = {} also works: k in [{lo}, {hi}]", n - 1);
                // The crate's own OC agrees with the independent integral.
                assert!((variables_p_accept_two_tails(n, k, 0.0, ltpd, sigma_known) - at_ltpd).abs() < 1e-6);
            }
        }
    }

    #[test]
    fn exact_design_fixes_the_wallis_shortfall() {
        // Source: independent integration over x̄ (statrs): the Wallis plan for these risks
        // (σ unknown) misses β, and the exact plan does not.
        let d = design_variables(1.0, 0.05, 6.0, 0.10, false, LimitKind::Single).unwrap();
        let wallis_beta = pa_by_mean_integral(d.wallis.sample_size, d.wallis.k, 0.0, 6.0, false);
        assert!(wallis_beta > 0.10, "Wallis β {wallis_beta}");
        assert!((wallis_beta - d.wallis.p_accept_at_ltpd).abs() < 1e-6);
        assert!(pa_by_mean_integral(d.sample_size, d.k, 0.0, 6.0, false) <= 0.10);
        assert!(d.sample_size >= d.wallis.sample_size, "{} vs {}", d.sample_size, d.wallis.sample_size);
    }

    #[test]
    fn double_limit_design_guards_every_split() {
        for (aql, alpha, ltpd, beta) in [(1.0, 0.05, 25.0, 0.10), (4.0, 0.05, 15.0, 0.10)] {
            for sigma_known in [true, false] {
                let single =
                    design_variables(aql, alpha, ltpd, beta, sigma_known, LimitKind::Single).unwrap();
                let double =
                    design_variables(aql, alpha, ltpd, beta, sigma_known, LimitKind::Double).unwrap();
                assert!(double.sample_size >= single.sample_size);
                assert!(double.oc_split_evenly.is_some() && single.oc_split_evenly.is_none());
                // Source: independent integration over x̄ (statrs) at five splits of the
                // nonconforming fraction between the limits: every one meets both risks.
                for i in 0..=4 {
                    let share = i as f64 / 4.0;
                    let (n, k) = (double.sample_size, double.k);
                    let at_aql = pa_by_mean_integral(n, k, aql * (1.0 - share), aql * share, sigma_known);
                    let at_ltpd = pa_by_mean_integral(n, k, ltpd * (1.0 - share), ltpd * share, sigma_known);
                    assert!(at_aql >= 1.0 - alpha - 1e-6, "share {share}: Pa(AQL) {at_aql}");
                    assert!(at_ltpd <= beta + 1e-6, "share {share}: Pa(LTPD) {at_ltpd}");
                }
            }
        }
        // Source: independent integration over x̄ (statrs): a lot at the LTPD of 15 % split
        // evenly between the limits (7.5 % beyond each, so each limit lies further from the
        // mean) passes the single-limit plan far more often than β, so the double-limit plan
        // must be larger and stricter.
        for sigma_known in [true, false] {
            let single = design_variables(4.0, 0.05, 15.0, 0.10, sigma_known, LimitKind::Single).unwrap();
            let split = pa_by_mean_integral(single.sample_size, single.k, 7.5, 7.5, sigma_known);
            assert!(split > 0.2, "evenly split Pa {split}");
            let double = design_variables(4.0, 0.05, 15.0, 0.10, sigma_known, LimitKind::Double).unwrap();
            assert!(double.sample_size > single.sample_size && double.k > single.k);
        }
    }

    #[test]
    fn exact_risks_hold_in_a_seeded_simulation() {
        use rand::SeedableRng;
        use rand_distr::Distribution;
        // Common practice, no published source: simulated lots at the AQL and the LTPD (σ unknown,
        // one limit U = 0, μ = −z_p) are accepted at the design's rates within 4 standard errors.
        let d = design_variables(1.0, 0.05, 6.0, 0.10, false, LimitKind::Single).unwrap();
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(414);
        let std_normal = rand_distr::StandardNormal;
        let lots = 6000;
        for (pct, claimed) in [(1.0, d.p_accept_at_aql), (6.0, d.p_accept_at_ltpd)] {
            let mu = -Normal::new(0.0, 1.0).unwrap().inverse_cdf(1.0 - pct / 100.0);
            let mut accepted = 0;
            for _ in 0..lots {
                let sample: Vec<f64> = (0..d.sample_size)
                    .map(|_| mu + Distribution::<f64>::sample(&std_normal, &mut rng))
                    .collect();
                let v =
                    variables_verdict(&sample, &Limits { lower: None, upper: Some(0.0) }, d.k, None).unwrap();
                accepted += usize::from(v.accept);
            }
            let share = accepted as f64 / lots as f64;
            let se = (claimed * (1.0 - claimed) / lots as f64).sqrt();
            assert!((share - claimed).abs() < 4.0 * se, "{pct}%: simulated {share}, exact {claimed}");
        }
    }

    #[test]
    fn bad_risks_are_refused() {
        assert!(design_attribute(5.0, 0.05, 1.0, 0.1).is_err());
        assert!(design_attribute(1.0, 0.0, 5.0, 0.1).is_err());
        assert!(design_variables(1.0, 0.05, 6.0, 0.7, true, LimitKind::Single).is_err());
        assert!(design_variables(1.0, 0.05, 1.0, 0.1, false, LimitKind::Double).is_err());
    }

    #[test]
    fn k_method_verdicts() {
        let limits = Limits { lower: Some(3.68), upper: Some(4.32) };
        let values = [4.0, 4.05, 3.95, 4.02, 3.98];
        let v = variables_verdict(&values, &limits, 1.9, None).unwrap();
        // Common practice, no published source: sample standard deviation with n − 1.
        let s = (values.iter().map(|x| (x - 4.0f64).powi(2)).sum::<f64>() / 4.0).sqrt();
        assert!((v.sigma - s).abs() < 1e-12);
        assert!((v.q_upper.unwrap() - 0.32 / s).abs() < 1e-9);
        assert!(v.accept);
        let v =
            variables_verdict(&values, &Limits { lower: None, upper: Some(4.05) }, 1.9, Some(0.04)).unwrap();
        assert!((v.q_upper.unwrap() - 1.25).abs() < 1e-9);
        assert!(!v.accept);
        assert!(variables_verdict(&[4.0], &limits, 1.9, None).is_err());
        assert!(variables_verdict(&values, &Limits::default(), 1.9, None).is_err());
    }
}
