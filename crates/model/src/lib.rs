//! The vocabulary every other twistlot crate shares.
//!
//! For: units and their conversion to the canonical N·mm and degrees
//! ([`units`]), the canonical curve schema ([`curve`]), test metadata
//! ([`metadata`]), part specs with tolerances and verdicts ([`spec`]), plugin
//! manifests ([`plugin`]), the result records every output reads ([`record`],
//! [`capability`]), YAML
//! errors that name file, line and field ([`yaml`]), and the planning records: rigs
//! ([`rig`]), the shift's lot list ([`lot_list`]) and plant-local times ([`plant_time`]).
//!
//! Not for: reading files, running programs or computing results: this crate has
//! no I/O, so every layer above can depend on it without pulling anything in.
//!
//! Main types: [`TorqueUnit`], [`AngleUnit`], [`CurveData`], [`TestMetadata`],
//! [`PartSpec`], [`Verdict`], [`Finding`], [`Manifest`], [`DocumentError`], [`Rig`], [`RecordKind`],
//! [`LotList`], [`PlantTime`], [`PlantOffset`], and the records [`TestRecord`] (with
//! [`SwingMetrics`] and [`TheoryRate`]), [`LotRecord`] (with its [`PlanRow`]s and
//! [`RigUse`]s), [`LotDecision`], [`ShiftRecord`], [`Approval`] with the enums
//! [`Disposition`], [`Severity`] and [`InspectionState`].

pub mod capability;
pub mod curve;
pub mod lot_list;
pub mod metadata;
pub mod plant_time;
pub mod plugin;
pub mod record;
pub mod rig;
pub mod spec;
pub mod units;
pub mod yaml;
pub mod yaml_list;

pub use capability::{Absent, AbsentReason, Capability, CapabilityMethod, FittedDistribution, WithinSigma};
pub use curve::{CurveData, DecayData, RecordKind, Stroke};
pub use lot_list::{ListedLot, LotList, ShiftHours};
pub use metadata::TestMetadata;
pub use plant_time::{BadTime, ClockTime, PlantOffset, PlantTime};
pub use plugin::{Manifest, PluginHeader, PluginKind};
pub use record::{
    Approval, AttributePlan, CharacteristicStats, ClassDecision, CurveMetrics, DecayShape, DecidingPlan,
    Disposition, DuplicateFile, Ground, GroundTopic, InspectionState, LotDecision, LotRecord, LotSource,
    LotWire, PlanComparison, PlanKind, PlanRow, PlanSummary, PlannedAgainstTested, RateSummary,
    ReferenceCheck, RejectedFile, RigUse, RigVerification, Severity, ShiftRecord, SpecProblem,
    SupersededTest, SwingMetrics, SwitchingCount, TestRecord, TestStatus, TestedOnRefusedRig, TheoryRate,
    UnknownLabel, UnlistedLot, VariablesDecision, VerificationStatus,
};
pub use rig::{validate_rigs, Availability, ReferenceSpring, Rig, RigFieldError, RigList, ShiftClock};
pub use spec::{CharacteristicClass, Finding, Limits, PartSpec, Tolerance, Verdict};
pub use units::{AngleUnit, TorqueUnit, UnknownUnit};
pub use yaml::DocumentError;
