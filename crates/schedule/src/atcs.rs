//! The ATCS priority index (Apparent Tardiness Cost with Setups) of Lee, Bhaskaran &
//! Pinedo (1997), "A heuristic to minimize the total weighted tardiness with
//! sequence-dependent setups", IIE Transactions 29.

use serde::{Deserialize, Serialize};

/// The terms of one ATCS index: lot j considered at time t on a rig whose last lot was l.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AtcsTerms {
    /// Weight w_j.
    pub weight: f64,
    /// Processing time p_j on the rig, s.
    pub processing_s: f64,
    /// Due time d_j, s from the shift start.
    pub due_s: f64,
    /// Time t the rig is free, s from the shift start.
    pub now_s: f64,
    /// Setup s_lj after the rig's last lot, s.
    pub setup_s: f64,
    /// Look-ahead parameter k1 for the due-date term.
    pub k1: f64,
    /// Look-ahead parameter k2 for the setup term.
    pub k2: f64,
    /// Mean processing time p̄, s.
    pub mean_processing_s: f64,
    /// Mean setup time s̄, s (0 when no rig has setups; the setup term is then 1).
    pub mean_setup_s: f64,
}

/// I_j(t, l) = (w_j/p_j)·exp(−max(d_j − p_j − t, 0)/(k1·p̄))·exp(−s_lj/(k2·s̄)).
///
/// Higher goes first. Underflows to 0 for lots far from their due time; the planner
/// compares [`atcs_log_index`] instead so that such lots still rank by w/p.
pub fn atcs_index(terms: &AtcsTerms) -> f64 {
    atcs_log_index(terms).exp()
}

/// The natural logarithm of [`atcs_index`], computed without forming the exponentials.
pub fn atcs_log_index(terms: &AtcsTerms) -> f64 {
    let slack = (terms.due_s - terms.processing_s - terms.now_s).max(0.0);
    let due_term = if slack == 0.0 { 0.0 } else { -slack / (terms.k1 * terms.mean_processing_s) };
    let setup_term = if terms.setup_s == 0.0 || terms.mean_setup_s <= 0.0 {
        0.0
    } else {
        -terms.setup_s / (terms.k2 * terms.mean_setup_s)
    };
    (terms.weight / terms.processing_s).ln() + due_term + setup_term
}

/// The look-ahead parameters of the ATCS index.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct AtcsParams {
    /// Scales the due-date term (larger looks further ahead).
    pub k1: f64,
    /// Scales the setup term (smaller avoids setups harder).
    pub k2: f64,
}

/// Figures of an instance the paper's rules for k1 and k2 are fitted on.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InstanceFactors {
    /// Estimated makespan Ĉ, s.
    pub makespan_estimate_s: f64,
    /// Due-date tightness τ = 1 − d̄/Ĉ.
    pub tightness: f64,
    /// Due-date range R = (d_max − d_min)/Ĉ.
    pub range: f64,
    /// Setup severity η = s̄/p̄.
    pub setup_severity: f64,
}

impl AtcsParams {
    /// The paper's rules: k1 = 4.5 + R when R ≤ 0.5, else 6 − 2R; k2 = τ/(2√η).
    ///
    /// Kept inside [0.1, 10] (k1) and [0.01, 10] (k2) so that loose due dates (τ ≤ 0),
    /// a wide range (R ≥ 3) or no setups (η = 0) still give a usable index; the paper
    /// fitted its rules on instances inside those bounds.
    pub fn from_factors(factors: &InstanceFactors) -> AtcsParams {
        let range = factors.range;
        let k1 = if range <= 0.5 { 4.5 + range } else { 6.0 - 2.0 * range };
        let k2 = if factors.setup_severity > 0.0 {
            factors.tightness / (2.0 * factors.setup_severity.sqrt())
        } else {
            10.0
        };
        let clamp = |value: f64, lo: f64, hi: f64| if value.is_finite() { value.clamp(lo, hi) } else { hi };
        AtcsParams { k1: clamp(k1, 0.1, 10.0), k2: clamp(k2, 0.01, 10.0) }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn terms() -> AtcsTerms {
        AtcsTerms {
            weight: 2.0,
            processing_s: 100.0,
            due_s: 500.0,
            now_s: 100.0,
            setup_s: 30.0,
            k1: 2.0,
            k2: 0.5,
            mean_processing_s: 200.0,
            mean_setup_s: 60.0,
        }
    }

    #[test]
    fn index_matches_the_papers_formula_by_hand() {
        // Source: Lee, Bhaskaran & Pinedo (1997), IIE Transactions 29, the ATCS index
        // I_j(t,l) = (w_j/p_j)·exp(−max(d_j − p_j − t, 0)/(k1·p̄))·exp(−s_lj/(k2·s̄)).
        // By hand: w/p = 2/100 = 0.02; slack = 500 − 100 − 100 = 300, 300/(2·200) = 0.75,
        // exp(−0.75) = 0.472366553; setup 30/(0.5·60) = 1, exp(−1) = 0.367879441;
        // I = 0.02 × 0.472366553 × 0.367879441 = 0.003475479.
        assert!((atcs_index(&terms()) - 0.003_475_479).abs() < 1e-9);
        // Source: same formula. Past its latest start (d − p − t < 0) the due-date
        // term is exp(0) = 1 and with no setup I = w/p = 0.02 (by hand).
        let late = AtcsTerms { now_s: 450.0, setup_s: 0.0, ..terms() };
        assert!((atcs_index(&late) - 0.02).abs() < 1e-15);
        // The log form agrees where the index does not underflow.
        assert!((atcs_log_index(&terms()) - atcs_index(&terms()).ln()).abs() < 1e-12);
    }

    #[test]
    fn lots_far_from_due_still_rank_by_weight_over_processing_in_log_form() {
        let far = AtcsTerms { due_s: 1e9, ..terms() };
        let heavier = AtcsTerms { weight: 4.0, ..far };
        assert_eq!(atcs_index(&far), 0.0);
        assert!(atcs_log_index(&heavier) > atcs_log_index(&far));
    }

    #[test]
    fn look_ahead_parameters_follow_the_papers_rules() {
        // From memory: Lee, Bhaskaran & Pinedo (1997): k1 = 4.5 + R for R ≤ 0.5, 6 − 2R
        // otherwise; k2 = τ/(2√η). By hand: R = 0.3 → k1 = 4.8; τ = 0.6, η = 0.09 →
        // √η = 0.3, k2 = 0.6/0.6 = 1.0. R = 0.8 → k1 = 6 − 1.6 = 4.4.
        let factors =
            InstanceFactors { makespan_estimate_s: 1.0, tightness: 0.6, range: 0.3, setup_severity: 0.09 };
        let params = AtcsParams::from_factors(&factors);
        assert!((params.k1 - 4.8).abs() < 1e-12 && (params.k2 - 1.0).abs() < 1e-12);
        let params = AtcsParams::from_factors(&InstanceFactors { range: 0.8, ..factors });
        assert!((params.k1 - 4.4).abs() < 1e-12);
        let loose = AtcsParams::from_factors(&InstanceFactors { tightness: -0.5, ..factors });
        assert_eq!(loose.k2, 0.01);
    }
}
