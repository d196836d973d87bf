//! Sampling for twistlot: which units of a lot to test, and whether the lot passes.
//!
//! For: MIL-STD-105E attribute single sampling read from a sampling-scheme plugin
//! file ([`Scheme`]: Table I code letters, Tables II-A/B/C with their arrows), the
//! §8.3 switching rules as a serialisable state machine ([`SwitchingState`]), plan
//! design from producer's and consumer's risks (attribute by exact binomial search,
//! variables k-method by the Wallis approximation), OC curves for every plan, and the
//! decision on a lot from its tests ([`decide_lot`] → [`twistlot_model::LotDecision`]).
//!
//! Not for: reading files (the caller hands over a scheme's text with its origin),
//! keeping history (the pipeline stores the switching state), or judging curves
//! (verdicts come from `twistlot-stats`). Double and multiple sampling, and the
//! M-method of MIL-STD-414, are not implemented.
//!
//! Main types: [`Scheme`], [`AttributePlan`], [`Severity`], [`InspectionLevel`],
//! [`SwitchingState`], [`AttributeDesign`], [`VariablesDesign`], [`OcPoint`],
//! [`LotInput`], [`BeyondSample`], [`SamplingError`].

pub mod decision;
pub mod design;
pub mod oc;
pub mod scheme;
pub mod switching;

pub use decision::{
    characteristic_limits, characteristic_value, class_plans, decide_lot, required_sample,
    zero_acceptance_plan, BeyondSample, LotInput, LotStanding, NonNormalRule, RequiredSample, UnverifiedRig,
    NORMALITY_REJECT_P,
};
pub use design::{
    design_attribute, design_variables, variables_verdict, AttributeDesign, LimitKind, VariablesDesign,
    VariablesVerdict, WallisPlan,
};
pub use oc::{
    attribute_oc, noncentral_t_cdf, noncentral_t_sf, pct_where_p_accept_falls_to, variables_oc, OcPoint,
};
pub use scheme::{
    shipped_mil_std_105e_text, AttributePlan, InspectionLevel, Scheme, Severity, SwitchingRules,
};
pub use switching::{Conditions, LimitCell, LimitNumbers, LotOutcome, SwitchingState, Transition};

use twistlot_model::DocumentError;

/// Everything that can go wrong in this crate.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SamplingError {
    /// A scheme file did not read or validate.
    #[error(transparent)]
    Document(#[from] DocumentError),
    /// An inspection level that is not I, II, III or S-1 … S-4.
    #[error("`{0}` is not an inspection level (use I, II, III or S-1 … S-4)")]
    UnknownLevel(String),
    /// A severity that is not normal, tightened or reduced.
    #[error("`{0}` is not a severity (use normal, tightened or reduced)")]
    UnknownSeverity(String),
    /// The scheme has no column for the level.
    #[error("inspection level {0} is not in scheme `{1}`")]
    LevelNotInScheme(String, String),
    /// The AQL is not one of the scheme's series.
    #[error("AQL {0}% is not in the AQL series of scheme `{1}`")]
    AqlNotInSeries(f64, String),
    /// A code letter the tables do not have.
    #[error("code letter `{0}` is not in the scheme's tables")]
    UnknownLetter(String),
    /// A lot of zero units.
    #[error("the lot size must be at least 1")]
    EmptyLot,
    /// The part names another scheme than the one given.
    #[error("the part is sampled under scheme `{0}` but scheme `{1}` was given")]
    SchemeMismatch(String, String),
    /// Risks or quality levels out of range.
    #[error("{0}")]
    BadRisks(String),
    /// No plan satisfies the request.
    #[error("{0}")]
    NoPlan(String),
    /// Measured data that cannot be judged.
    #[error("{0}")]
    BadData(String),
}

/// Result alias for this crate.
pub type Result<T, E = SamplingError> = std::result::Result<T, E>;
