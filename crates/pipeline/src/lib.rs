//! Runs twistlot's jobs end to end; the only crate that knows all the others.
//!
//! For: finding and validating plugins ([`plugins`]), loading the plant config
//! and its part specs ([`plant`]), evaluating exports against their specs
//! ([`evaluate`]: ingest pushes each export into the evaluator, which keeps one
//! result row per test and drops the curve), running a shift ([`shift`]), and
//! keeping each part's switching record between shifts ([`switching`]).
//!
//! Not for: computations (layer-1 crates), rendering (report) or printing (cli).
//!
//! Main types: [`PluginCatalog`], [`Plant`], [`SpecLibrary`], [`TestResult`],
//! [`ShiftSummaryJson`], [`SwitchingRecord`].

pub mod evaluate;
pub mod plant;
pub mod plugins;
pub mod shift;
pub mod switching;

pub use evaluate::{evaluate_files, EvaluateOptions, Evaluated, SpecSource, TestResult};
pub use plant::{Plant, PlantError, SpecLibrary};
pub use plugins::{check_manifests, shipped_plugins_dir, PluginCatalog, PluginEntry};
pub use shift::{run_shift, ShiftError, ShiftOutcome, ShiftSummaryJson};
pub use switching::{
    plant_standings, resume_part, StandingRow, SwitchingError, SwitchingRecord, SwitchingRecordError,
};
