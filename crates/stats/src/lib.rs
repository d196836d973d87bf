//! Per-test curve metrics, verdicts, check plugins and lot capability for twistlot.
//!
//! For: turning one test's torque-versus-angle curve ([`twistlot_model::CurveData`]) into
//! the numbers a drawing specifies ([`curve_metrics`] → [`CurveMetrics`]), judging those
//! against the part spec and the plant's check plugins ([`judge()`] → [`Judgement`]), and
//! summarising a lot's values of one characteristic ([`capability()`] → [`Capability`]);
//! free-swing tests judged on their dynamic characteristics ([`judge_swing`]) and every
//! measured rate set beside the drawing's theoretical one ([`theory_rate`],
//! [`lot_theory_note`]; the formula comes from the physics crate, as DESIGN.md §3 allows).
//! The methods are the published ones named in DESIGN.md §6; [`linear_fit`] is checked
//! against the NIST StRD certified values.
//!
//! Not for: reading files or frames (the ingest crate turns exports into `CurveData`),
//! deciding lots under sampling plans (the sampling crate), or printing. Everything here
//! is a pure function of plain slices and model types.
//!
//! Main types: [`MetricOptions`], [`CurveMetrics`], [`MetricsError`], [`LinearFit`],
//! [`CheckSet`], [`CheckError`], [`Judgement`], [`Capability`], [`CapabilityMethod`],
//! [`Normality`]; for trends across lots, [`XbarSChart`], [`EwmaChart`], [`CusumChart`],
//! [`RuleSignal`], [`Drift`], [`LotAttribution`], [`WireStep`] and [`ControlError`].

#![warn(missing_docs)]

pub mod capability;
pub mod checks;
pub mod control;
pub mod drift;
pub mod dynamic;
pub mod fit;
pub mod judge;
pub mod metrics;
pub mod nonnormal;
pub mod run_rules;
mod text;
pub mod theory;
pub mod wire;

pub use capability::{
    anderson_darling, capability, lot_capability, Absent, AbsentReason, Capability, CapabilityMethod,
    Normality, OrderedValue, Subgrouping, WithinSigma,
};
pub use checks::{CheckError, CheckSet};
pub use control::{
    a3, b3, b4, c4, cusum, cusum_of_means, ewma, ewma_of_means, xbar_s_chart, ChartKind, ControlError,
    CusumChart, CusumOptions, CusumPoint, CusumSignal, EwmaChart, EwmaOptions, EwmaPoint, EwmaSignal,
    LimitSignal, Side, Subgroup, XbarSChart, XbarSOptions, XbarSPoint,
};
pub use drift::{drift, Drift, LimitSide, NoProjection, Projection};
pub use dynamic::judge_swing;
pub use fit::{linear_fit, LinearFit};
pub use judge::{judge, judge_with, Judgement};
pub use metrics::{angle_key, curve_metrics, CurveMetrics, MetricOptions, MetricsError};
pub use run_rules::{run_rules, standardize, Rule, RuleSignal, NELSON, WESTERN_ELECTRIC};
pub use theory::{lot_theory_note, theory_rate, validate_band, DEFAULT_RATE_BAND};
pub use wire::{
    expected_rate_change, wire_attribution, wire_steps, ExpectedChange, Geometry, LotAttribution, LotRate,
    WireBaseline, WireLotRate, WireStep,
};
