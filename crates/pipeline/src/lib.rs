//! Runs twistlot's jobs end to end; the only crate that knows all the others.
//!
//! For: opening a plant for any command ([`open`]: config, plugins built in and found,
//! rig formats, checks, specs, sampling schemes, templates, history folder), evaluating
//! exports against their specs ([`evaluate`]: each export streams through the evaluator
//! and leaves one [`twistlot_model::TestRecord`]; a free-decay export is analysed as a
//! free swing and judged on the spec's dynamic characteristics, and every measured rate
//! is set beside the drawing's theoretical one), running a shift ([`shift`]) that
//! pushes every test and decided lot into sinks ([`sink`], [`outputs`]), verifying each
//! rig with its reference spring ([`reference`]) and setting the shift's plan beside what
//! was tested ([`plan_check`]), keeping each part's switching record between shifts
//! ([`switching`]), and planning a shift's tests across the rigs ([`plan`], with the
//! plant's [`dispatch`] rule).
//!
//! Not for: computations (layer-1 crates), rendering (report) or printing (cli).
//!
//! Main types: [`OpenPlant`], [`OpenOptions`], [`PluginCatalog`], [`Plant`],
//! [`SpecLibrary`] (specs that load, and the problems of those that do not),
//! [`ShiftSink`], [`SinkSet`], [`SwitchingRecord`] (keyed by lot), [`PlannedShift`].

pub mod dispatch;
mod dynamic;
pub mod evaluate;
pub mod history;
pub mod open;
pub mod outputs;
pub mod plan;
pub mod plan_check;
pub mod plant;
pub mod plugins;
pub mod reference;
pub mod shift;
pub mod sink;
pub mod switching;

pub use evaluate::{evaluate_each, CurvePreview, EvaluateOptions, Evaluated, SpecSource};
pub use open::{find_plant_file, OpenError, OpenOptions, OpenPlant};
pub use plan::{plan_shift, write_plan, LotNeeds, PlanOutputs, PlanRunError, PlannedShift};
pub use plant::{PhysicsConfig, Plant, PlantError, SpecEntry, SpecLibrary};
pub use plugins::{PluginCatalog, PluginEntry, PluginError, PluginSource, Schemes};
pub use shift::{run_shift, ShiftError};
pub use sink::{FailurePolicy, LotEvent, ShiftSink, ShiftStart, SinkError, SinkSet};
pub use switching::{
    plant_standings, resume_part, StandingRow, SwitchingError, SwitchingRecord, SwitchingRecordError,
};
