//! The vocabulary every other twistlot crate shares.
//!
//! For: units and their conversion to the canonical N·mm and degrees
//! ([`units`]), the canonical curve schema ([`curve`]), test metadata
//! ([`metadata`]), part specs with tolerances and verdicts ([`spec`]), plugin
//! manifests ([`plugin`]), the result records every output reads ([`record`]) and YAML
//! errors that name file, line and field ([`yaml`]).
//!
//! Not for: reading files, running programs or computing results: this crate has
//! no I/O, so every layer above can depend on it without pulling anything in.
//!
//! Main types: [`TorqueUnit`], [`AngleUnit`], [`CurveData`], [`TestMetadata`],
//! [`PartSpec`], [`Verdict`], [`Finding`], [`Manifest`], [`DocumentError`], and the records
//! [`TestRecord`], [`LotRecord`], [`LotDecision`], [`ShiftRecord`] with the enums
//! [`Disposition`], [`Severity`] and [`InspectionState`].

pub mod curve;
pub mod metadata;
pub mod plugin;
pub mod record;
pub mod spec;
pub mod units;
pub mod yaml;

pub use curve::{CurveData, Stroke};
pub use metadata::TestMetadata;
pub use plugin::{Manifest, PluginHeader, PluginKind};
pub use record::{
    AttributePlan, ClassDecision, CurveMetrics, Disposition, DuplicateFile, Ground, GroundTopic, InspectionState,
    LotDecision, LotRecord, PlanSummary, RateSummary, RejectedFile, Severity, ShiftRecord, SupersededTest,
    SwitchingCount, TestRecord, TestStatus, UnknownLabel, VariablesDecision,
};
pub use spec::{CharacteristicClass, Finding, Limits, PartSpec, Tolerance, Verdict};
pub use units::{AngleUnit, TorqueUnit, UnknownUnit};
pub use yaml::DocumentError;
