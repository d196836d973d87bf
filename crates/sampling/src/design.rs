//! Designing plans from the four numbers (AQL, α, LTPD, β).
//!
//! Attribute plans are found by exact binomial search. Variables plans use the
//! k-method with the Wallis approximation for n and k. For a double limit each side
//! is checked on its own against the same k (accept when both one-sided statistics
//! reach k); this is sound when the tolerance is wide compared with σ, so that
//! nonconforming product sits almost all on one side. The M-method of MIL-STD-414
//! (estimating the total percent nonconforming from both tails for unknown σ) is out
//! of scope.

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
    /// Both limits, each checked against k.
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

/// A variables (k-method) plan designed from risks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariablesDesign {
    /// Sample size n (rounded up).
    pub sample_size: u64,
    /// Acceptability constant k.
    pub k: f64,
    /// Whether σ is taken as known.
    pub sigma_known: bool,
    /// Single or double limit.
    pub limits: LimitKind,
    /// n before rounding, for reports.
    pub sample_size_exact: f64,
    /// OC curve (known σ: normal; unknown σ: noncentral t).
    pub oc: Vec<OcPoint>,
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

/// k-method plan by the Wallis approximation:
/// k = (z_p1·z_β + z_p2·z_α)/(z_α + z_β), n_σ = ((z_α + z_β)/(z_p1 − z_p2))²,
/// and for unknown σ n = n_σ·(1 + k²/2); n is rounded up.
pub fn design_variables(
    aql_pct: f64,
    alpha: f64,
    ltpd_pct: f64,
    beta: f64,
    sigma_known: bool,
    limits: LimitKind,
) -> Result<VariablesDesign, SamplingError> {
    check_risks(aql_pct, alpha, ltpd_pct, beta)?;
    let z_p1 = oc::z_upper(aql_pct / 100.0);
    let z_p2 = oc::z_upper(ltpd_pct / 100.0);
    let z_a = oc::z_upper(alpha);
    let z_b = oc::z_upper(beta);
    let k = (z_p1 * z_b + z_p2 * z_a) / (z_a + z_b);
    let n_known = ((z_a + z_b) / (z_p1 - z_p2)).powi(2);
    let exact = if sigma_known { n_known } else { n_known * (1.0 + k * k / 2.0) };
    // Unknown σ needs at least two values for a standard deviation.
    let floor = if sigma_known { 1 } else { 2 };
    let sample_size = ((exact - 1e-9).ceil() as u64).max(floor);
    let max_pct = (ltpd_pct * 2.0).min(100.0);
    Ok(VariablesDesign {
        sample_size,
        k,
        sigma_known,
        limits,
        sample_size_exact: exact,
        oc: oc::variables_oc(sample_size, k, sigma_known, max_pct, OC_POINTS),
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
    use crate::oc::{variables_p_accept_known, variables_p_accept_unknown};
    use statrs::distribution::{Binomial, ContinuousCDF, DiscreteCDF, Normal};

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
    fn variables_design_solves_the_two_oc_equations() {
        // Source: Montgomery, Introduction to SQC, variables sampling design: the plan
        // satisfies √n (z_p1 − k) = z_α and √n (z_p2 − k) = −z_β for known σ.
        let z = |p: f64| Normal::new(0.0, 1.0).unwrap().inverse_cdf(1.0 - p);
        let d = design_variables(1.0, 0.05, 6.0, 0.10, true, LimitKind::Single).unwrap();
        let root_n = d.sample_size_exact.sqrt();
        assert!((root_n * (z(0.01) - d.k) - z(0.05)).abs() < 1e-9);
        assert!((root_n * (z(0.06) - d.k) + z(0.10)).abs() < 1e-9);
        // Rounding n up keeps both risks met exactly for known σ.
        assert!(variables_p_accept_known(d.sample_size, d.k, 1.0) >= 0.95);
        assert!(variables_p_accept_known(d.sample_size, d.k, 6.0) <= 0.10);
        let unknown = design_variables(1.0, 0.05, 6.0, 0.10, false, LimitKind::Single).unwrap();
        assert!((unknown.sample_size_exact - d.sample_size_exact * (1.0 + d.k * d.k / 2.0)).abs() < 1e-9);
    }

    #[test]
    fn variables_design_matches_montgomery_example() {
        // From memory: Montgomery, Introduction to Statistical Quality Control, variables
        // sampling plan design (p1 = 0.01, α = 0.05, p2 = 0.06, β = 0.10, σ unknown):
        // the nomograph gives n = 40, k = 1.9.
        let d = design_variables(1.0, 0.05, 6.0, 0.10, false, LimitKind::Single).unwrap();
        assert!((d.k - 1.9).abs() < 0.02, "k = {}", d.k);
        assert!((38..=42).contains(&d.sample_size), "n = {}", d.sample_size);
        // Common practice, no published source: the exact (noncentral t) OC of the
        // Wallis plan lands within a few hundredths of the intended risks.
        assert!((variables_p_accept_unknown(d.sample_size, d.k, 1.0) - 0.95).abs() < 0.03);
        assert!((variables_p_accept_unknown(d.sample_size, d.k, 6.0) - 0.10).abs() < 0.03);
    }

    #[test]
    fn bad_risks_are_refused() {
        assert!(design_attribute(5.0, 0.05, 1.0, 0.1).is_err());
        assert!(design_attribute(1.0, 0.0, 5.0, 0.1).is_err());
        assert!(design_variables(1.0, 0.05, 6.0, 0.7, true, LimitKind::Single).is_err());
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
