//! Capability figures of one characteristic over a lot, as `stats` computes them and
//! every output (reports, `summary.json`, the history) carries them.

use serde::{Deserialize, Serialize};

/// Which indices [`Capability`] gives as the lot's Pp/Ppk.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum CapabilityMethod {
    /// Normal-theory indices from σ estimates (normality not rejected).
    Normal,
    /// ISO 22514-2 indices from empirical percentiles (normality rejected, many values).
    Percentile,
    /// ISO 22514-2 indices from a fitted distribution (normality rejected).
    Fitted,
    /// Normality rejected and no defensible non-normal index: Pp/Ppk absent.
    NotEstimable,
}

/// The within-subgroup σ and where it came from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WithinSigma {
    /// Estimator: always `s-bar/c4` (mean subgroup standard deviation over c4).
    pub estimator: String,
    /// Where the estimator is published.
    pub source: String,
    /// Subgroup size m.
    pub subgroup_size: usize,
    /// Full subgroups used, k.
    pub subgroups: usize,
    /// Values in an incomplete last subgroup, left out of σ within.
    pub values_left_over: usize,
    /// c4(m).
    pub c4: f64,
    /// σ within = S̄/c4.
    pub sigma: f64,
    /// Effective degrees of freedom k·c4²/(2(1 − c4²)) used by the bounds.
    pub degrees_of_freedom: f64,
}

/// Why an index is absent, as a code a program can branch on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AbsentReason {
    /// No subgroup size was stated, so the lot has no rational subgroups.
    NoSubgroupSize,
    /// A subgroup size below 2 was stated.
    SubgroupSizeTooSmall,
    /// Some values have no start time, so their production order is unknown.
    NoStartTime,
    /// Fewer full subgroups than the stats crate's `MIN_SUBGROUPS`.
    TooFewSubgroups,
    /// Every subgroup has zero spread.
    NoWithinSpread,
    /// Fewer than two values, or no spread at all.
    TooFewValues,
    /// Anderson–Darling rejected normality, so normal-theory indices do not apply.
    NormalityRejected,
    /// Normality rejected, too few values for empirical percentiles and no fitted
    /// distribution accepted.
    NotEstimable,
}

/// An index left out, with its reason as code and as a sentence.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Absent {
    /// Machine-readable reason.
    pub reason: AbsentReason,
    /// The reason in words, for reports.
    pub text: String,
}

impl Absent {
    /// An absence with its reason.
    pub fn new(reason: AbsentReason, text: impl Into<String>) -> Absent {
        Absent { reason, text: text.into() }
    }
}

/// Capability of one characteristic over a lot.
///
/// `None` wherever a quantity is undefined; for Cp/Cpk and Pp/Ppk the absence of both
/// carries its reason in [`Capability::cp_cpk_absent`] / [`Capability::pp_ppk_absent`].
/// With one limit only, `cp`/`pp` are `None` while `cpk`/`ppk` are given, and no reason
/// is attached: the two-sided index is undefined for a one-sided tolerance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Capability {
    /// Number of finite values used.
    pub n: usize,
    /// Values left out because they were not finite numbers.
    pub excluded: usize,
    /// Mean.
    pub mean: Option<f64>,
    /// Sample standard deviation s (overall σ).
    pub sd: Option<f64>,
    /// Within-subgroup σ (S̄/c4), only from rational subgroups.
    pub sd_within: Option<f64>,
    /// How σ within was found, when it was.
    pub within: Option<WithinSigma>,
    /// Smallest value.
    pub min: Option<f64>,
    /// Largest value.
    pub max: Option<f64>,
    /// Median.
    pub median: Option<f64>,
    /// Cp from σ within.
    pub cp: Option<f64>,
    /// Cpk from σ within.
    pub cpk: Option<f64>,
    /// One-sided 95 % lower confidence bound for Cp (χ², effective degrees of freedom).
    pub cp_lower_95: Option<f64>,
    /// One-sided 95 % lower confidence bound for Cpk (Bissell 1990, effective degrees of freedom).
    pub cpk_lower_95: Option<f64>,
    /// Why Cp and Cpk are absent.
    pub cp_cpk_absent: Option<Absent>,
    /// Pp from s, or the ISO 22514-2 index under `method: percentile` or `fitted`.
    pub pp: Option<f64>,
    /// Ppk from s, or the ISO 22514-2 index under `method: percentile` or `fitted`.
    pub ppk: Option<f64>,
    /// One-sided 95 % lower confidence bound for Pp (χ², ν = n − 1; exact for normal data).
    pub pp_lower_95: Option<f64>,
    /// One-sided 95 % lower confidence bound for Ppk (Bissell 1990, ν = n − 1).
    pub ppk_lower_95: Option<f64>,
    /// Why Pp and Ppk are absent.
    pub pp_ppk_absent: Option<Absent>,
    /// Anderson–Darling A² (unmodified).
    pub normality_a2: Option<f64>,
    /// p-value of the Anderson–Darling test.
    pub normality_p: Option<f64>,
    /// True when a normal curve may be drawn over the lot: the test ran and did not reject.
    pub normal_curve: bool,
    /// Where Pp/Ppk came from.
    pub method: CapabilityMethod,
    /// The distribution behind `method: fitted`.
    pub fitted: Option<FittedDistribution>,
}

/// The distribution fitted to a non-normal lot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FittedDistribution {
    /// Family name: `lognormal-3` (three-parameter lognormal).
    pub family: String,
    /// True when fitted to the mirrored values (skewed to the left): then
    /// ln(τ − x) is normal, with τ above every value.
    pub mirrored: bool,
    /// Threshold τ, in the values' unit.
    pub threshold: f64,
    /// Mean of ln|x − τ|.
    pub log_mean: f64,
    /// Standard deviation of ln|x − τ|.
    pub log_sd: f64,
    /// Anderson–Darling p-value of ln|x − τ| against a normal.
    pub fit_p: f64,
    /// The fitted 0.135 % point.
    pub x_low: f64,
    /// The fitted median.
    pub x_median: f64,
    /// The fitted 99.865 % point.
    pub x_high: f64,
}

impl CapabilityMethod {
    /// The label as serialised.
    pub fn as_str(self) -> &'static str {
        match self {
            CapabilityMethod::Normal => "normal",
            CapabilityMethod::Percentile => "percentile",
            CapabilityMethod::Fitted => "fitted",
            CapabilityMethod::NotEstimable => "not-estimable",
        }
    }
}
