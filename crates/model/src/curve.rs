//! The canonical curve schema every rig export is read into.

use serde::{Deserialize, Serialize};

/// Column names of the canonical curve frame (DESIGN.md §4), in frame order.
pub mod column {
    /// Test identifier, one value per export (a scalar column).
    pub const TEST_ID: &str = "test_id";
    /// Point index within the test, from 0.
    pub const POINT: &str = "point";
    /// Leg angle in degrees.
    pub const ANGLE_DEG: &str = "angle_deg";
    /// Torque in N·mm.
    pub const TORQUE_NMM: &str = "torque_nmm";
    /// `load` or `unload`.
    pub const STROKE: &str = "stroke";
    /// Cycle number, from 1; pre-cycles come first.
    pub const CYCLE: &str = "cycle";
    /// Time since the start of the test, seconds (only when the rig records it; always in
    /// a free-decay frame, which has `test_id`, `point`, `time_s` and `angle_deg` only).
    pub const TIME_S: &str = "time_s";
}

/// What kind of test a record holds; a rig-format manifest states which one it produces.
///
/// The two kinds are read by the same rig-format plugins into different frames and are
/// evaluated differently: a torque curve is split into load/unload strokes and yields a
/// rate by least squares; a free decay (a spring swinging a known inertia after release)
/// has no torque, is never split into strokes, and yields a period, a decrement and a
/// dynamic rate (DESIGN.md §2, §6).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum RecordKind {
    /// Torque against angle through a load and an unload stroke (the static rig test).
    #[default]
    TorqueCurve,
    /// Angle against time of a spring swinging a known inertia after release; no torque.
    FreeDecay,
}

impl RecordKind {
    /// The label used in manifests and outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            RecordKind::TorqueCurve => "torque-curve",
            RecordKind::FreeDecay => "free-decay",
        }
    }
}

impl std::fmt::Display for RecordKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// One free-decay record in canonical units: time and angle per sample, no torque.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct DecayData {
    /// Time per sample, seconds.
    pub time_s: Vec<f64>,
    /// Angle per sample, degrees.
    pub angle_deg: Vec<f64>,
}

/// Direction of travel of the moving leg.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Stroke {
    /// Moving away from the start position (torque rising).
    Load,
    /// Moving back towards the start position.
    Unload,
}

impl Stroke {
    /// The label written in frames and files.
    pub fn as_str(self) -> &'static str {
        match self {
            Stroke::Load => "load",
            Stroke::Unload => "unload",
        }
    }
}

/// One test's curve in canonical units, column by column.
///
/// This is the plain-data form the layer-1 crates compute on; `ingest` turns it
/// into a polars frame with the [`column`] names.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct CurveData {
    /// Leg angle per point, degrees.
    pub angle_deg: Vec<f64>,
    /// Torque per point, N·mm.
    pub torque_nmm: Vec<f64>,
    /// Stroke per point.
    pub stroke: Vec<Stroke>,
    /// Cycle per point, from 1.
    pub cycle: Vec<u32>,
    /// Time per point, seconds, when the rig records it.
    pub time_s: Option<Vec<f64>>,
}

impl CurveData {
    /// Number of points.
    pub fn len(&self) -> usize {
        self.angle_deg.len()
    }

    /// True when the curve has no points.
    pub fn is_empty(&self) -> bool {
        self.angle_deg.is_empty()
    }

    /// Number of cycles (the highest cycle number).
    pub fn cycles(&self) -> u32 {
        self.cycle.iter().copied().max().unwrap_or(0)
    }
}
