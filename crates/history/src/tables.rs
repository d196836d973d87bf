//! The five tables: their columns (with the getters that fill them) and how their rows
//! read back into records.

use crate::schema::{count, json, text, Cells, ColumnDef, Kind, Value, SCHEMA_VERSION};
use crate::time::Timestamp;
use crate::HistoryError;
use serde::de::DeserializeOwned;
use std::collections::BTreeMap;
use twistlot_model::record::{
    CharacteristicStats, CurveMetrics, Disposition, DuplicateFile, InspectionState, LotDecision, LotRecord,
    LotWire, PlanRow, PlanSummary, RateSummary, RejectedFile, RigUse, Severity, SupersededTest, SwingMetrics,
    SwitchingCount, TestRecord, TestStatus, TheoryRate,
};
use twistlot_model::spec::{Finding, Verdict};

/// Table folder of the tests.
pub const TESTS: &str = "tests";
/// Table folder of the lots.
pub const LOTS: &str = "lots";
/// Table folder of the replacement log.
pub const REPLACEMENTS: &str = "replacements";
/// Table folder of the shift catalog.
pub const SHIFTS: &str = "shifts";
/// Table folder of the resumptions after discontinued inspection.
pub const RESUMPTIONS: &str = "resumptions";
/// Table folder of the serial index (derived from the tests; rebuilt when missing).
pub const SERIALS: &str = "serials";
/// The one file name inside every partition (and every unpartitioned table) folder.
pub const DATA_FILE: &str = "data.parquet";

fn f(value: Option<f64>) -> Value {
    Value::F64(value)
}

fn t(ms: Option<i64>) -> Value {
    Value::Time(ms)
}

fn version<R>() -> ColumnDef<R> {
    ColumnDef {
        name: "schema_version",
        kind: Kind::U32,
        unit: "",
        doc: "layout version of the row (this build writes 1)",
        get: |_| Value::U32(Some(SCHEMA_VERSION)),
    }
}

/// A test as it is written: the record and what the store adds.
pub struct TestRow<'a> {
    /// The evaluated test.
    pub record: &'a TestRecord,
    /// Its start time, when readable.
    pub started_at: Option<i64>,
    /// The shift's place in the store's order.
    pub shift_seq: i64,
    /// The row's place among the shift's tests.
    pub row_index: i64,
    /// When the row was stored (UTC).
    pub stored_at: i64,
}

/// The tests table's file columns (`part` and `shift` are in the folder names).
pub fn test_columns<'a>() -> Vec<ColumnDef<TestRow<'a>>> {
    type R<'b> = TestRow<'b>;
    vec![
        ColumnDef { name: "lot", kind: Kind::Text, unit: "", doc: "lot the export names", get: |r: &R| text(r.record.lot.as_deref()) },
        ColumnDef { name: "serial", kind: Kind::Text, unit: "", doc: "serial number of the tested spring", get: |r: &R| text(r.record.serial.as_deref()) },
        ColumnDef { name: "test_id", kind: Kind::Text, unit: "", doc: "test identifier (serial and the start of the content hash)", get: |r: &R| text(Some(&r.record.test_id)) },
        ColumnDef { name: "file", kind: Kind::Text, unit: "", doc: "export file as found in the shift folder", get: |r: &R| text(Some(&r.record.file)) },
        ColumnDef { name: "content_hash", kind: Kind::Text, unit: "", doc: "BLAKE3 hash of the export's bytes, hex", get: |r: &R| text(Some(&r.record.content_hash)) },
        ColumnDef { name: "rig", kind: Kind::Text, unit: "", doc: "rig that ran the test", get: |r: &R| text(r.record.rig.as_deref()) },
        ColumnDef { name: "operator", kind: Kind::Text, unit: "", doc: "operator", get: |r: &R| text(r.record.operator.as_deref()) },
        ColumnDef { name: "started", kind: Kind::Text, unit: "", doc: "start time as the rig wrote it", get: |r: &R| text(r.record.started.as_deref()) },
        ColumnDef { name: "started_at", kind: Kind::Time, unit: "plant clock", doc: "`started` read as a time; null when unreadable", get: |r: &R| t(r.started_at) },
        ColumnDef { name: "rig_format", kind: Kind::Text, unit: "", doc: "rig-format plugin that read the export", get: |r: &R| text(Some(&r.record.rig_format)) },
        ColumnDef { name: "spec_file", kind: Kind::Text, unit: "", doc: "part spec judged against", get: |r: &R| text(r.record.spec_file.as_deref()) },
        ColumnDef { name: "spec_revision", kind: Kind::Text, unit: "", doc: "drawing revision of that spec", get: |r: &R| text(r.record.spec_revision.as_deref()) },
        ColumnDef { name: "evaluated_cycle", kind: Kind::U32, unit: "", doc: "cycle the metrics come from (from 1)", get: |r: &R| Value::U32(Some(r.record.metrics.evaluated_cycle)) },
        ColumnDef { name: "cycles", kind: Kind::U32, unit: "", doc: "cycles in the curve", get: |r: &R| Value::U32(Some(r.record.metrics.cycles)) },
        ColumnDef { name: "rate_nmm_per_deg", kind: Kind::F64, unit: "N·mm/°", doc: "spring rate: least-squares slope in the window", get: |r: &R| f(r.record.metrics.rate_nmm_per_deg) },
        ColumnDef { name: "rate_r2", kind: Kind::F64, unit: "", doc: "R² of the rate fit", get: |r: &R| f(r.record.metrics.rate_r2) },
        ColumnDef { name: "rate_stderr_nmm_per_deg", kind: Kind::F64, unit: "N·mm/°", doc: "standard error of the rate", get: |r: &R| f(r.record.metrics.rate_stderr_nmm_per_deg) },
        ColumnDef { name: "intercept_nmm", kind: Kind::F64, unit: "N·mm", doc: "intercept of the fit at 0°", get: |r: &R| f(r.record.metrics.intercept_nmm) },
        ColumnDef { name: "free_angle_deg", kind: Kind::F64, unit: "°", doc: "free (zero-torque) angle α0", get: |r: &R| f(r.record.metrics.free_angle_deg) },
        ColumnDef { name: "rate_unavailable", kind: Kind::Text, unit: "", doc: "why the rate is missing, in words", get: |r: &R| text(r.record.metrics.rate_unavailable.as_deref()) },
        ColumnDef { name: "torque_nmm_at", kind: Kind::Json, unit: "N·mm", doc: "torque on the loading stroke by angle: object, keys are angles in degrees as text (`\"45\"`, `\"22.5\"`)", get: |r: &R| json(&r.record.metrics.torque_nmm_at) },
        ColumnDef { name: "hysteresis_pct_at", kind: Kind::Json, unit: "%", doc: "(load − unload)/load torque by angle: object keyed like `torque_nmm_at`", get: |r: &R| json(&r.record.metrics.hysteresis_pct_at) },
        ColumnDef { name: "energy_loss_pct", kind: Kind::F64, unit: "%", doc: "energy lost between the strokes, % of the loading area", get: |r: &R| f(r.record.metrics.energy_loss_pct) },
        ColumnDef { name: "linearity_pct", kind: Kind::F64, unit: "%", doc: "largest residual from the fitted line, % of the maximum torque", get: |r: &R| f(r.record.metrics.linearity_pct) },
        ColumnDef { name: "max_torque_nmm", kind: Kind::F64, unit: "N·mm", doc: "largest torque on the evaluated loading stroke", get: |r: &R| f(Some(r.record.metrics.max_torque_nmm)) },
        ColumnDef { name: "max_angle_deg", kind: Kind::F64, unit: "°", doc: "largest angle on the evaluated loading stroke", get: |r: &R| f(Some(r.record.metrics.max_angle_deg)) },
        ColumnDef { name: "secant_rate_nmm_per_deg", kind: Kind::F64, unit: "N·mm/°", doc: "secant rate between `secant_from_deg` and `secant_to_deg`", get: |r: &R| f(r.record.metrics.secant_rate_nmm_per_deg) },
        ColumnDef { name: "secant_from_deg", kind: Kind::F64, unit: "°", doc: "first angle of the secant", get: |r: &R| f(r.record.metrics.secant_deg.map(|s| s[0])) },
        ColumnDef { name: "secant_to_deg", kind: Kind::F64, unit: "°", doc: "second angle of the secant", get: |r: &R| f(r.record.metrics.secant_deg.map(|s| s[1])) },
        ColumnDef { name: "set_deg", kind: Kind::F64, unit: "°", doc: "shift of α0 from the first to the last cycle", get: |r: &R| f(r.record.metrics.set_deg) },
        ColumnDef { name: "deflection_from_deg", kind: Kind::F64, unit: "°", doc: "start of the tested deflection", get: |r: &R| f(Some(r.record.metrics.deflection_deg[0])) },
        ColumnDef { name: "deflection_to_deg", kind: Kind::F64, unit: "°", doc: "end of the tested deflection", get: |r: &R| f(Some(r.record.metrics.deflection_deg[1])) },
        ColumnDef { name: "window_from_deg", kind: Kind::F64, unit: "°", doc: "low end of the evaluation window used", get: |r: &R| f(Some(r.record.metrics.window_deg[0])) },
        ColumnDef { name: "window_to_deg", kind: Kind::F64, unit: "°", doc: "high end of the evaluation window used", get: |r: &R| f(Some(r.record.metrics.window_deg[1])) },
        ColumnDef { name: "points_in_window", kind: Kind::I64, unit: "", doc: "loading points inside the window", get: |r: &R| Value::I64(Some(count(r.record.metrics.points_in_window as u64))) },
        ColumnDef { name: "notes", kind: Kind::Json, unit: "", doc: "notes on what could not be measured: array of strings", get: |r: &R| json(&r.record.metrics.notes) },
        ColumnDef { name: "verdict", kind: Kind::Text, unit: "", doc: "`pass`, `fail`, `invalid`; null when there was no spec", get: |r: &R| text(r.record.verdict.map(Verdict::as_str)) },
        ColumnDef { name: "findings", kind: Kind::Json, unit: "", doc: "per characteristic: array of `{characteristic, class, value, lower, upper, verdict, message}`", get: |r: &R| json(&r.record.findings) },
        ColumnDef { name: "swing", kind: Kind::Json, unit: "", doc: "a free-decay (swing) test's analysis: period, damping, κ, dynamic rate, amplitude dependence; null for a torque curve", get: |r: &R| match &r.record.swing { Some(s) => json(s), None => Value::Text(None) } },
        ColumnDef { name: "theory", kind: Kind::Json, unit: "", doc: "the drawing's theoretical rate beside the measured one (rate, ratio, band); null when the spec gives no design", get: |r: &R| match &r.record.theory { Some(t) => json(t), None => Value::Text(None) } },
        ColumnDef { name: "status", kind: Kind::Text, unit: "", doc: "`counted`, `duplicate` (same bytes as `status_ref`), `superseded` (tested again in `status_ref`) or `reference` (a rig's reference-spring check, counted toward no lot)", get: |r: &R| text(Some(r.record.status.as_str())) },
        ColumnDef { name: "status_ref", kind: Kind::Text, unit: "", doc: "the file a duplicate repeats or a superseded test was replaced by", get: |r: &R| text(match &r.record.status { TestStatus::Counted | TestStatus::Reference => None, TestStatus::Duplicate { same_as } => Some(same_as), TestStatus::Superseded { by } => Some(by) }) },
        ColumnDef { name: "shift_seq", kind: Kind::I64, unit: "", doc: "the shift's place in the store's order (kept when the shift is written again)", get: |r: &R| Value::I64(Some(r.shift_seq)) },
        ColumnDef { name: "row_index", kind: Kind::I64, unit: "", doc: "the row's place among the shift's tests as written", get: |r: &R| Value::I64(Some(r.row_index)) },
        ColumnDef { name: "stored_at", kind: Kind::Time, unit: "UTC", doc: "when the row was stored", get: |r: &R| t(Some(r.stored_at)) },
        version(),
    ]
}

/// A lot as it is written: the record and what the store adds.
pub struct LotRow<'a> {
    /// The decided lot.
    pub record: &'a LotRecord,
    /// Its place in the shift's lot list.
    pub lot_index: i64,
    /// Earliest readable start time of its counted tests in the shift.
    pub tests_from: Option<i64>,
    /// Latest readable start time of its counted tests in the shift.
    pub tests_until: Option<i64>,
    /// When it was decided.
    pub decided_at: i64,
    /// The shift's place in the store's order.
    pub shift_seq: i64,
    /// When the row was stored (UTC).
    pub stored_at: i64,
}

fn switching<'a>(r: &'a LotRow<'a>) -> Option<&'a SwitchingCount> {
    r.record.decision.as_ref().and_then(|d| d.switching.as_ref())
}

fn rate(r: &LotRow, pick: fn(&RateSummary) -> Option<f64>) -> Value {
    f(r.record.rate.as_ref().and_then(pick))
}

/// The severity a lot was inspected under: the decision's, else the shown plan's.
pub fn lot_severity(record: &LotRecord) -> Option<Severity> {
    record.decision.as_ref().and_then(|d| d.severity).or(record.plan.as_ref().map(|p| p.severity))
}

/// The lots table's file columns (`part` and `shift` are in the folder names).
pub fn lot_columns<'a>() -> Vec<ColumnDef<LotRow<'a>>> {
    type R<'b> = LotRow<'b>;
    vec![
        ColumnDef { name: "lot", kind: Kind::Text, unit: "", doc: "lot", get: |r: &R| text(Some(&r.record.lot)) },
        ColumnDef { name: "lot_index", kind: Kind::I64, unit: "", doc: "the lot's place in the shift's lot list (switching replays lots in this order)", get: |r: &R| Value::I64(Some(r.lot_index)) },
        ColumnDef { name: "quantity", kind: Kind::I64, unit: "units", doc: "units in the lot", get: |r: &R| Value::I64(Some(count(r.record.quantity))) },
        ColumnDef { name: "disposition", kind: Kind::Text, unit: "", doc: "`accept`, `hold` or `reject`", get: |r: &R| text(Some(r.record.disposition.as_str())) },
        ColumnDef { name: "severity", kind: Kind::Text, unit: "", doc: "severity inspected under: `normal`, `tightened`, `reduced`", get: |r: &R| text(lot_severity(r.record).map(Severity::as_str)) },
        ColumnDef { name: "next_severity", kind: Kind::Text, unit: "", doc: "where the part stands for its next lot: a severity or `discontinued`", get: |r: &R| text(r.record.next_severity.map(InspectionState::as_str)) },
        ColumnDef { name: "tested", kind: Kind::I64, unit: "tests", doc: "tests that count toward the lot", get: |r: &R| Value::I64(Some(count(r.record.tested))) },
        ColumnDef { name: "failed", kind: Kind::I64, unit: "tests", doc: "counted tests that failed", get: |r: &R| Value::I64(Some(count(r.record.failed))) },
        ColumnDef { name: "invalid", kind: Kind::I64, unit: "tests", doc: "counted tests that could not be judged", get: |r: &R| Value::I64(Some(count(r.record.invalid))) },
        ColumnDef { name: "plan_code_letter", kind: Kind::Text, unit: "", doc: "sample-size code letter of the plan shown", get: |r: &R| text(r.record.plan.as_ref().and_then(|p| p.code_letter.as_deref())) },
        ColumnDef { name: "plan_sample_size", kind: Kind::I64, unit: "units", doc: "sample size of the plan shown; null when the lot had no plan", get: |r: &R| Value::I64(r.record.plan.as_ref().map(|p| count(p.sample_size))) },
        ColumnDef { name: "plan_accept", kind: Kind::I64, unit: "defectives", doc: "acceptance number Ac", get: |r: &R| Value::I64(r.record.plan.as_ref().and_then(|p| p.accept).map(count)) },
        ColumnDef { name: "plan_reject", kind: Kind::I64, unit: "defectives", doc: "rejection number Re", get: |r: &R| Value::I64(r.record.plan.as_ref().and_then(|p| p.reject).map(count)) },
        ColumnDef { name: "plan_severity", kind: Kind::Text, unit: "", doc: "severity of the plan shown", get: |r: &R| text(r.record.plan.as_ref().map(|p| p.severity.as_str())) },
        ColumnDef { name: "rate_mean_nmm_per_deg", kind: Kind::F64, unit: "N·mm/°", doc: "mean spring rate of the lot", get: |r: &R| rate(r, |s| s.mean) },
        ColumnDef { name: "rate_sd_nmm_per_deg", kind: Kind::F64, unit: "N·mm/°", doc: "standard deviation of the rate", get: |r: &R| rate(r, |s| s.sd) },
        ColumnDef { name: "rate_cp", kind: Kind::F64, unit: "", doc: "Cp of the rate", get: |r: &R| rate(r, |s| s.cp) },
        ColumnDef { name: "rate_cpk", kind: Kind::F64, unit: "", doc: "Cpk of the rate", get: |r: &R| rate(r, |s| s.cpk) },
        ColumnDef { name: "rate_cpk_lower_95", kind: Kind::F64, unit: "", doc: "lower 95 % bound on Cpk", get: |r: &R| rate(r, |s| s.cpk_lower_95) },
        ColumnDef { name: "rate_pp", kind: Kind::F64, unit: "", doc: "Pp of the rate", get: |r: &R| rate(r, |s| s.pp) },
        ColumnDef { name: "rate_ppk", kind: Kind::F64, unit: "", doc: "Ppk of the rate", get: |r: &R| rate(r, |s| s.ppk) },
        ColumnDef { name: "rate_normality_p", kind: Kind::F64, unit: "", doc: "Anderson–Darling p-value of the rates", get: |r: &R| rate(r, |s| s.normality_p) },
        ColumnDef { name: "rate_method", kind: Kind::Text, unit: "", doc: "how the indices were computed (`normal`, `percentile`…)", get: |r: &R| text(r.record.rate.as_ref().and_then(|s| s.method.as_deref())) },
        ColumnDef { name: "grounds", kind: Kind::Json, unit: "", doc: "grounds of the disposition in words: array of strings", get: |r: &R| json(&r.record.grounds) },
        ColumnDef { name: "deciding_ground", kind: Kind::Text, unit: "", doc: "the ground that decided the disposition", get: |r: &R| text(r.record.deciding_ground()) },
        ColumnDef { name: "switching_severity", kind: Kind::Text, unit: "", doc: "severity of the count fed to the switching rules; null for held lots", get: |r: &R| text(switching(r).map(|s| s.severity.as_str())) },
        ColumnDef { name: "switching_sample_size", kind: Kind::I64, unit: "units", doc: "sample of the plan whose count feeds the switching rules", get: |r: &R| Value::I64(switching(r).map(|s| count(s.sample_size))) },
        ColumnDef { name: "switching_defectives", kind: Kind::I64, unit: "defectives", doc: "defectives found in that sample", get: |r: &R| Value::I64(switching(r).map(|s| count(s.defectives))) },
        ColumnDef { name: "switching_aql_pct", kind: Kind::F64, unit: "%", doc: "AQL of that plan (0 for zero-acceptance and variables plans)", get: |r: &R| f(switching(r).map(|s| s.aql_pct)) },
        ColumnDef { name: "switching_between_ac_and_re", kind: Kind::Bool, unit: "", doc: "accepted on reduced inspection with defectives between Ac and Re", get: |r: &R| Value::Bool(switching(r).map(|s| s.between_ac_and_re)) },
        ColumnDef { name: "decision", kind: Kind::Json, unit: "", doc: "the full structured decision (grounds with topics, every class's plan and counts, variables plan); null when the pipeline gave none", get: |r: &R| match &r.record.decision { Some(d) => json(d), None => Value::Text(None) } },
        ColumnDef { name: "report_html", kind: Kind::Text, unit: "", doc: "the lot's HTML report, relative to the shift's output folder", get: |r: &R| text(Some(&r.record.report_html)) },
        ColumnDef { name: "report_md", kind: Kind::Text, unit: "", doc: "the lot's Markdown report, relative to the shift's output folder", get: |r: &R| text(Some(&r.record.report_md)) },
        ColumnDef { name: "duplicates", kind: Kind::Json, unit: "", doc: "files of the lot repeating another file's bytes: array of `{file, same_as, lot}`", get: |r: &R| json(&r.record.duplicates) },
        ColumnDef { name: "superseded", kind: Kind::Json, unit: "", doc: "earlier tests of serials tested again: array of `{serial, file, started, by}`", get: |r: &R| json(&r.record.superseded) },
        ColumnDef { name: "decided_by", kind: Kind::Text, unit: "", doc: "the ground that decided the disposition, in words", get: |r: &R| text(r.record.decided_by.as_deref()) },
        ColumnDef { name: "plans", kind: Kind::Json, unit: "", doc: "every plan applied to the lot (attribute classes and the variables plan), the deciding one marked", get: |r: &R| json(&r.record.plans) },
        ColumnDef { name: "spec_file", kind: Kind::Text, unit: "", doc: "the spec file the lot was judged against", get: |r: &R| text(r.record.spec_file.as_deref()) },
        ColumnDef { name: "spec_revision", kind: Kind::Text, unit: "", doc: "that spec's drawing revision", get: |r: &R| text(r.record.spec_revision.as_deref()) },
        ColumnDef { name: "rejected_files", kind: Kind::Json, unit: "", doc: "the lot's own files that could not be read, with reasons", get: |r: &R| json(&r.record.rejected_files) },
        ColumnDef { name: "rigs", kind: Kind::Json, unit: "", doc: "the rigs the lot was tested on, with their calibration due dates", get: |r: &R| json(&r.record.rigs) },
        ColumnDef { name: "coiler", kind: Kind::Text, unit: "", doc: "the coiler that made the lot, as the lot list gives it", get: |r: &R| text(r.record.wire.coiler.as_deref()) },
        ColumnDef { name: "wire_lot", kind: Kind::Text, unit: "", doc: "the lot's wire material lot, as the lot list gives it", get: |r: &R| text(r.record.wire.wire_lot.as_deref()) },
        ColumnDef { name: "wire_d_mm", kind: Kind::F64, unit: "mm", doc: "the lot's measured wire diameter", get: |r: &R| f(r.record.wire.wire_d_mm) },
        ColumnDef { name: "mean_d_mm", kind: Kind::F64, unit: "mm", doc: "the lot's measured mean coil diameter", get: |r: &R| f(r.record.wire.mean_d_mm) },
        ColumnDef { name: "statistics", kind: Kind::Json, unit: "", doc: "the lot's statistics per toleranced characteristic (limits, mean, s, capability indices with their bounds and the reasons any are absent)", get: |r: &R| json(&r.record.statistics) },
        ColumnDef { name: "tests_from", kind: Kind::Time, unit: "plant clock", doc: "earliest readable start time of the lot's counted tests in the shift", get: |r: &R| t(r.tests_from) },
        ColumnDef { name: "tests_until", kind: Kind::Time, unit: "plant clock", doc: "latest readable start time of the lot's counted tests in the shift", get: |r: &R| t(r.tests_until) },
        ColumnDef { name: "decided_at", kind: Kind::Time, unit: "UTC unless the caller gave another", doc: "when the lot was decided (the shift's write time unless given)", get: |r: &R| t(Some(r.decided_at)) },
        ColumnDef { name: "shift_seq", kind: Kind::I64, unit: "", doc: "the shift's place in the store's order (kept when the shift is written again)", get: |r: &R| Value::I64(Some(r.shift_seq)) },
        ColumnDef { name: "stored_at", kind: Kind::Time, unit: "UTC", doc: "when the row was stored", get: |r: &R| t(Some(r.stored_at)) },
        version(),
    ]
}

/// What made a test's stored result stop being the part's current result for its serial.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum ReplacementKind {
    /// Another export of the same test (same start time, other bytes): a changed export.
    ChangedExport,
    /// A later test of the same serial.
    Retest,
    /// The same bytes stored again under a later shift.
    SameExport,
    /// A shift written again no longer holds the test, and nothing took its place.
    Withdrawn,
}

impl ReplacementKind {
    /// The label stored in `kind`.
    pub fn as_str(self) -> &'static str {
        match self {
            ReplacementKind::ChangedExport => "changed-export",
            ReplacementKind::Retest => "retest",
            ReplacementKind::SameExport => "same-export",
            ReplacementKind::Withdrawn => "withdrawn",
        }
    }

    fn parse(text: &str) -> Option<ReplacementKind> {
        [Self::ChangedExport, Self::Retest, Self::SameExport, Self::Withdrawn]
            .into_iter()
            .find(|k| k.as_str() == text)
    }
}

/// A stored test, as a replacement names it.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct TestRef {
    /// Shift it is stored under.
    pub shift: String,
    /// Test identifier.
    pub test_id: String,
    /// Export file.
    pub file: String,
    /// BLAKE3 hash of the export.
    pub content_hash: String,
    /// Start time as the rig wrote it.
    pub started: Option<String>,
}

/// Part, serial, old (shift, hash), new (shift, hash): one replacement event.
pub(crate) type ReplacementKey = (Option<String>, String, String, String, Option<(String, String)>);

/// One entry of the replacement log.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Replacement {
    /// The shift whose write recorded it.
    pub recorded_in: String,
    /// Part of the replaced result (`None`: the export named no part).
    pub part: Option<String>,
    /// Serial whose result changed.
    pub serial: String,
    /// Why.
    pub kind: ReplacementKind,
    /// The result that was current before.
    pub old: TestRef,
    /// The result current after (`None` for a withdrawn test).
    pub new: Option<TestRef>,
    /// When it was recorded (UTC).
    pub recorded_at: Timestamp,
}

impl Replacement {
    /// Entries with this key are the same event, recorded once.
    pub(crate) fn key(&self) -> ReplacementKey {
        (
            self.part.clone(),
            self.serial.clone(),
            self.old.shift.clone(),
            self.old.content_hash.clone(),
            self.new.as_ref().map(|n| (n.shift.clone(), n.content_hash.clone())),
        )
    }
}

/// The replacement table's file columns (`shift`, the recording shift, is the folder).
pub fn replacement_columns() -> Vec<ColumnDef<Replacement>> {
    type R = Replacement;
    vec![
        ColumnDef { name: "part", kind: Kind::Text, unit: "", doc: "part of the replaced result", get: |r: &R| text(r.part.as_deref()) },
        ColumnDef { name: "serial", kind: Kind::Text, unit: "", doc: "serial whose current result changed", get: |r: &R| text(Some(&r.serial)) },
        ColumnDef { name: "kind", kind: Kind::Text, unit: "", doc: "`changed-export` (same start time, other bytes), `retest` (other start time), `same-export` (same bytes under a later shift), `withdrawn` (gone from a shift written again)", get: |r: &R| text(Some(r.kind.as_str())) },
        ColumnDef { name: "old_shift", kind: Kind::Text, unit: "", doc: "shift of the result replaced", get: |r: &R| text(Some(&r.old.shift)) },
        ColumnDef { name: "old_test_id", kind: Kind::Text, unit: "", doc: "its test identifier", get: |r: &R| text(Some(&r.old.test_id)) },
        ColumnDef { name: "old_file", kind: Kind::Text, unit: "", doc: "its export file", get: |r: &R| text(Some(&r.old.file)) },
        ColumnDef { name: "old_content_hash", kind: Kind::Text, unit: "", doc: "its content hash", get: |r: &R| text(Some(&r.old.content_hash)) },
        ColumnDef { name: "old_started", kind: Kind::Text, unit: "", doc: "its start time as written", get: |r: &R| text(r.old.started.as_deref()) },
        ColumnDef { name: "new_shift", kind: Kind::Text, unit: "", doc: "shift of the result now current (null when withdrawn)", get: |r: &R| text(r.new.as_ref().map(|n| n.shift.as_str())) },
        ColumnDef { name: "new_test_id", kind: Kind::Text, unit: "", doc: "its test identifier", get: |r: &R| text(r.new.as_ref().map(|n| n.test_id.as_str())) },
        ColumnDef { name: "new_file", kind: Kind::Text, unit: "", doc: "its export file", get: |r: &R| text(r.new.as_ref().map(|n| n.file.as_str())) },
        ColumnDef { name: "new_content_hash", kind: Kind::Text, unit: "", doc: "its content hash", get: |r: &R| text(r.new.as_ref().map(|n| n.content_hash.as_str())) },
        ColumnDef { name: "new_started", kind: Kind::Text, unit: "", doc: "its start time as written", get: |r: &R| text(r.new.as_ref().and_then(|n| n.started.as_deref())) },
        ColumnDef { name: "recorded_at", kind: Kind::Time, unit: "UTC", doc: "when the replacement was recorded", get: |r: &R| t(Some(r.recorded_at.unix_ms())) },
        version(),
    ]
}

/// One shift of the catalog.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct StoredShift {
    /// Shift name.
    pub shift: String,
    /// Its place in the store's order, given at its first write and kept after.
    pub seq: i64,
    /// When it was first stored (UTC).
    pub first_stored_at: Timestamp,
    /// When it was last stored (UTC).
    pub stored_at: Timestamp,
    /// Parts with rows in the shift (`None`: tests whose export named no part).
    pub parts: Vec<Option<String>>,
    /// Test rows stored for the shift.
    pub tests: u64,
    /// Lot rows stored for the shift.
    pub lots: u64,
}

/// The shift catalog's columns.
pub fn shift_columns() -> Vec<ColumnDef<StoredShift>> {
    type R = StoredShift;
    vec![
        ColumnDef {
            name: "shift",
            kind: Kind::Text,
            unit: "",
            doc: "shift name",
            get: |r: &R| text(Some(&r.shift)),
        },
        ColumnDef {
            name: "shift_seq",
            kind: Kind::I64,
            unit: "",
            doc: "place in the store's order, given at the first write and kept",
            get: |r: &R| Value::I64(Some(r.seq)),
        },
        ColumnDef {
            name: "first_stored_at",
            kind: Kind::Time,
            unit: "UTC",
            doc: "first write of the shift",
            get: |r: &R| t(Some(r.first_stored_at.unix_ms())),
        },
        ColumnDef {
            name: "stored_at",
            kind: Kind::Time,
            unit: "UTC",
            doc: "last write of the shift",
            get: |r: &R| t(Some(r.stored_at.unix_ms())),
        },
        ColumnDef {
            name: "parts",
            kind: Kind::Json,
            unit: "",
            doc: "parts with rows in the shift: array of strings (null: tests naming no part)",
            get: |r: &R| json(&r.parts),
        },
        ColumnDef {
            name: "tests",
            kind: Kind::I64,
            unit: "rows",
            doc: "test rows of the shift",
            get: |r: &R| Value::I64(Some(count(r.tests))),
        },
        ColumnDef {
            name: "lots",
            kind: Kind::I64,
            unit: "rows",
            doc: "lot rows of the shift",
            get: |r: &R| Value::I64(Some(count(r.lots))),
        },
        version(),
    ]
}

/// A counted test with a serial: one row of the serial index, and what the rule "which
/// stored result of a serial is current" compares.
#[derive(Debug, Clone, PartialEq)]
pub struct SerialRow {
    /// Part (from the partition).
    pub part: Option<String>,
    /// Serial.
    pub serial: String,
    /// The shift's place in the store's order.
    pub shift_seq: i64,
    /// The test's place among its shift's tests.
    pub row_index: i64,
    /// Its start time, when readable.
    pub started_at: Option<i64>,
    /// The test.
    pub test: TestRef,
}

impl SerialRow {
    /// The later test of a serial is its current result: by start time (an unreadable one
    /// after every readable one, as a shift orders retests), then by the shift's place in
    /// the store, then by the row's place in the shift.
    pub fn order_key(&self) -> (bool, i64, i64, i64) {
        (self.started_at.is_none(), self.started_at.unwrap_or(0), self.shift_seq, self.row_index)
    }

    /// What tells two stored tests apart.
    pub fn identity(&self) -> (&str, &str, &str) {
        (&self.test.shift, &self.test.content_hash, &self.test.test_id)
    }
}

/// The serial index's file columns (`part` is the folder).
pub fn serial_columns() -> Vec<ColumnDef<SerialRow>> {
    type R = SerialRow;
    vec![
        ColumnDef {
            name: "serial",
            kind: Kind::Text,
            unit: "",
            doc: "serial of a counted test",
            get: |r: &R| text(Some(&r.serial)),
        },
        ColumnDef {
            name: "shift",
            kind: Kind::Text,
            unit: "",
            doc: "shift the test is stored under",
            get: |r: &R| text(Some(&r.test.shift)),
        },
        ColumnDef {
            name: "shift_seq",
            kind: Kind::I64,
            unit: "",
            doc: "that shift's place in the store's order",
            get: |r: &R| Value::I64(Some(r.shift_seq)),
        },
        ColumnDef {
            name: "row_index",
            kind: Kind::I64,
            unit: "",
            doc: "the test's place among the shift's tests",
            get: |r: &R| Value::I64(Some(r.row_index)),
        },
        ColumnDef {
            name: "test_id",
            kind: Kind::Text,
            unit: "",
            doc: "test identifier",
            get: |r: &R| text(Some(&r.test.test_id)),
        },
        ColumnDef {
            name: "file",
            kind: Kind::Text,
            unit: "",
            doc: "export file",
            get: |r: &R| text(Some(&r.test.file)),
        },
        ColumnDef {
            name: "content_hash",
            kind: Kind::Text,
            unit: "",
            doc: "BLAKE3 hash of the export",
            get: |r: &R| text(Some(&r.test.content_hash)),
        },
        ColumnDef {
            name: "started",
            kind: Kind::Text,
            unit: "",
            doc: "start time as written",
            get: |r: &R| text(r.test.started.as_deref()),
        },
        ColumnDef {
            name: "started_at",
            kind: Kind::Time,
            unit: "plant clock",
            doc: "start time read; null when unreadable",
            get: |r: &R| t(r.started_at),
        },
        version(),
    ]
}

/// Reads serial-index rows (or the same columns of the tests table) of one part.
pub fn read_serial_rows(
    cells: &Cells,
    part: Option<&str>,
    only_counted: bool,
) -> Result<Vec<SerialRow>, HistoryError> {
    cells.check_schema_version()?;
    let (shift, seq, row) = (cells.text("shift")?, cells.i64("shift_seq")?, cells.i64("row_index")?);
    let (serial, test_id, file) = (cells.text("serial")?, cells.text("test_id")?, cells.text("file")?);
    let (hash, started, started_at) =
        (cells.text("content_hash")?, cells.text("started")?, cells.time("started_at")?);
    let status = if only_counted { Some(cells.text("status")?) } else { None };
    let mut out = Vec::new();
    for i in 0..cells.height() {
        let Some(serial) = serial[i].clone() else { continue };
        if status.as_ref().is_some_and(|s| s[i].as_deref() != Some("counted")) {
            continue;
        }
        out.push(SerialRow {
            part: part.map(str::to_string),
            serial,
            shift_seq: required(cells, "shift_seq", i, seq[i])?,
            row_index: required(cells, "row_index", i, row[i])?,
            started_at: started_at[i],
            test: TestRef {
                shift: required(cells, "shift", i, shift[i].clone())?,
                test_id: required(cells, "test_id", i, test_id[i].clone())?,
                file: required(cells, "file", i, file[i].clone())?,
                content_hash: required(cells, "content_hash", i, hash[i].clone())?,
                started: started[i].clone(),
            },
        });
    }
    Ok(out)
}

/// Corrective action recorded for a discontinued part: its next lot restarts on tightened.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Resumption {
    /// Part number.
    pub part: String,
    /// The label it was recorded under (a shift name or a date, as the caller chose).
    pub label: String,
    /// Its place in the store's order (shared with shifts' `shift_seq`).
    pub seq: i64,
    /// Who approved which corrective action.
    pub note: String,
    /// When it was recorded (UTC).
    pub recorded_at: Timestamp,
}

/// The resumption table's columns.
pub fn resumption_columns() -> Vec<ColumnDef<Resumption>> {
    type R = Resumption;
    vec![
        ColumnDef {
            name: "part",
            kind: Kind::Text,
            unit: "",
            doc: "part resumed",
            get: |r: &R| text(Some(&r.part)),
        },
        ColumnDef {
            name: "label",
            kind: Kind::Text,
            unit: "",
            doc: "label recorded with it (shift name or date)",
            get: |r: &R| text(Some(&r.label)),
        },
        ColumnDef {
            name: "seq",
            kind: Kind::I64,
            unit: "",
            doc: "place in the store's order, shared with `shift_seq`",
            get: |r: &R| Value::I64(Some(r.seq)),
        },
        ColumnDef {
            name: "note",
            kind: Kind::Text,
            unit: "",
            doc: "who approved which corrective action",
            get: |r: &R| text(Some(&r.note)),
        },
        ColumnDef {
            name: "recorded_at",
            kind: Kind::Time,
            unit: "UTC",
            doc: "when it was recorded",
            get: |r: &R| t(Some(r.recorded_at.unix_ms())),
        },
        version(),
    ]
}

/// The column tables of every table, in Markdown, as `SCHEMA.md` carries them.
pub fn schema_markdown() -> String {
    use crate::schema::markdown_columns;
    let part = ("part", "part number (folder `part=…`); null for tests whose export named none");
    let shift = ("shift", "shift name (folder `shift=…`)");
    let recording_shift = ("shift", "the shift whose write recorded the replacement (folder `shift=…`)");
    [
        format!(
            "### `{TESTS}/part=…/shift=…/{DATA_FILE}`\n\n{}",
            markdown_columns(&[part, shift], &test_columns())
        ),
        format!(
            "### `{LOTS}/part=…/shift=…/{DATA_FILE}`\n\n{}",
            markdown_columns(&[part, shift], &lot_columns())
        ),
        format!(
            "### `{REPLACEMENTS}/shift=…/{DATA_FILE}`\n\n{}",
            markdown_columns(&[recording_shift], &replacement_columns())
        ),
        format!("### `{SERIALS}/part=…/{DATA_FILE}`\n\n{}", markdown_columns(&[part], &serial_columns())),
        format!("### `{SHIFTS}/{DATA_FILE}`\n\n{}", markdown_columns(&[], &shift_columns())),
        format!("### `{RESUMPTIONS}/{DATA_FILE}`\n\n{}", markdown_columns(&[], &resumption_columns())),
    ]
    .join("\n")
}

/// A label (`accept`, `normal`, `pass`…) read back through the type's serde names.
pub fn label<T: DeserializeOwned>(cells: &Cells, column: &str, text: &str) -> Result<T, HistoryError> {
    serde_json::from_value(serde_json::Value::String(text.to_string()))
        .map_err(|_| cells.corrupt(format!("column `{column}`: unknown label `{text}`")))
}

fn required<T>(cells: &Cells, column: &str, row: usize, value: Option<T>) -> Result<T, HistoryError> {
    value.ok_or_else(|| cells.corrupt(format!("column `{column}`, row {row}: empty, but every row has one")))
}

fn unsigned(value: i64) -> u64 {
    u64::try_from(value).unwrap_or(0)
}

/// A stored test: the record as evaluated and where the store keeps it.
#[derive(Debug, Clone, PartialEq)]
pub struct StoredTest {
    /// Shift it is stored under.
    pub shift: String,
    /// The shift's place in the store's order.
    pub shift_seq: i64,
    /// Its place among the shift's tests.
    pub row_index: i64,
    /// Its start time, when readable (plant clock).
    pub started_at: Option<Timestamp>,
    /// When it was stored (UTC).
    pub stored_at: Timestamp,
    /// The record, with `part` from the partition.
    pub record: TestRecord,
}

fn angle_map(cells: Option<BTreeMap<String, Option<f64>>>) -> BTreeMap<String, f64> {
    // JSON has no NaN; one written as null reads back as NaN rather than losing its angle.
    cells.unwrap_or_default().into_iter().map(|(k, v)| (k, v.unwrap_or(f64::NAN))).collect()
}

/// Reads test rows; `part` and `shift` come from the partition columns of that name.
pub fn read_tests(cells: &Cells) -> Result<Vec<StoredTest>, HistoryError> {
    cells.check_schema_version()?;
    let n = cells.height();
    let part = cells.text("part")?;
    let shift = cells.text("shift")?;
    let lot = cells.text("lot")?;
    let serial = cells.text("serial")?;
    let test_id = cells.text("test_id")?;
    let file = cells.text("file")?;
    let hash = cells.text("content_hash")?;
    let rig = cells.text("rig")?;
    let operator = cells.text("operator")?;
    let started = cells.text("started")?;
    let started_at = cells.time("started_at")?;
    let rig_format = cells.text("rig_format")?;
    let spec_file = cells.text("spec_file")?;
    let spec_revision = cells.text("spec_revision")?;
    let evaluated_cycle = cells.u32("evaluated_cycle")?;
    let cycles = cells.u32("cycles")?;
    let rate = cells.f64("rate_nmm_per_deg")?;
    let r2 = cells.f64("rate_r2")?;
    let stderr = cells.f64("rate_stderr_nmm_per_deg")?;
    let intercept = cells.f64("intercept_nmm")?;
    let free_angle = cells.f64("free_angle_deg")?;
    let unavailable = cells.text("rate_unavailable")?;
    let torque_at = cells.json::<BTreeMap<String, Option<f64>>>("torque_nmm_at")?;
    let hysteresis_at = cells.json::<BTreeMap<String, Option<f64>>>("hysteresis_pct_at")?;
    let energy = cells.f64("energy_loss_pct")?;
    let linearity = cells.f64("linearity_pct")?;
    let max_torque = cells.f64("max_torque_nmm")?;
    let max_angle = cells.f64("max_angle_deg")?;
    let secant = cells.f64("secant_rate_nmm_per_deg")?;
    let secant_from = cells.f64("secant_from_deg")?;
    let secant_to = cells.f64("secant_to_deg")?;
    let set = cells.f64("set_deg")?;
    let defl_from = cells.f64("deflection_from_deg")?;
    let defl_to = cells.f64("deflection_to_deg")?;
    let win_from = cells.f64("window_from_deg")?;
    let win_to = cells.f64("window_to_deg")?;
    let points = cells.i64("points_in_window")?;
    let notes = cells.json::<Vec<String>>("notes")?;
    let verdict = cells.text("verdict")?;
    let findings = cells.json::<Vec<Finding>>("findings")?;
    let swing = cells.json::<SwingMetrics>("swing")?;
    let theory = cells.json::<TheoryRate>("theory")?;
    let status = cells.text("status")?;
    let status_ref = cells.text("status_ref")?;
    let shift_seq = cells.i64("shift_seq")?;
    let row_index = cells.i64("row_index")?;
    let stored_at = cells.time("stored_at")?;
    let mut out = Vec::with_capacity(n);
    for i in 0..n {
        let status = match (required(cells, "status", i, status[i].as_deref())?, status_ref[i].clone()) {
            ("counted", _) => TestStatus::Counted,
            ("reference", _) => TestStatus::Reference,
            ("duplicate", Some(same_as)) => TestStatus::Duplicate { same_as },
            ("superseded", Some(by)) => TestStatus::Superseded { by },
            (other, _) => {
                return Err(
                    cells.corrupt(format!("row {i}: status `{other}` without a matching `status_ref`"))
                )
            }
        };
        let verdict = match verdict[i].as_deref() {
            Some(v) => Some(label::<Verdict>(cells, "verdict", v)?),
            None => None,
        };
        let secant_deg = match (secant_from[i], secant_to[i]) {
            (Some(a), Some(b)) => Some([a, b]),
            _ => None,
        };
        let metrics = CurveMetrics {
            evaluated_cycle: evaluated_cycle[i].unwrap_or(0),
            cycles: cycles[i].unwrap_or(0),
            rate_nmm_per_deg: rate[i],
            rate_r2: r2[i],
            rate_stderr_nmm_per_deg: stderr[i],
            intercept_nmm: intercept[i],
            free_angle_deg: free_angle[i],
            rate_unavailable: unavailable[i].clone(),
            torque_nmm_at: angle_map(torque_at[i].clone()),
            hysteresis_pct_at: angle_map(hysteresis_at[i].clone()),
            energy_loss_pct: energy[i],
            linearity_pct: linearity[i],
            max_torque_nmm: max_torque[i].unwrap_or(f64::NAN),
            max_angle_deg: max_angle[i].unwrap_or(f64::NAN),
            secant_rate_nmm_per_deg: secant[i],
            secant_deg,
            set_deg: set[i],
            deflection_deg: [defl_from[i].unwrap_or(f64::NAN), defl_to[i].unwrap_or(f64::NAN)],
            window_deg: [win_from[i].unwrap_or(f64::NAN), win_to[i].unwrap_or(f64::NAN)],
            points_in_window: usize::try_from(points[i].unwrap_or(0)).unwrap_or(0),
            notes: notes[i].clone().unwrap_or_default(),
        };
        let record = TestRecord {
            test_id: required(cells, "test_id", i, test_id[i].clone())?,
            file: required(cells, "file", i, file[i].clone())?,
            content_hash: required(cells, "content_hash", i, hash[i].clone())?,
            serial: serial[i].clone(),
            part: part[i].clone(),
            lot: lot[i].clone(),
            rig: rig[i].clone(),
            operator: operator[i].clone(),
            started: started[i].clone(),
            rig_format: rig_format[i].clone().unwrap_or_default(),
            spec_file: spec_file[i].clone(),
            spec_revision: spec_revision[i].clone(),
            metrics,
            verdict,
            findings: findings[i].clone().unwrap_or_default(),
            status,
            swing: swing[i].clone(),
            theory: theory[i].clone(),
        };
        out.push(StoredTest {
            shift: required(cells, "shift", i, shift[i].clone())?,
            shift_seq: shift_seq[i].unwrap_or(0),
            row_index: row_index[i].unwrap_or(0),
            started_at: started_at[i].map(Timestamp::from_unix_ms),
            stored_at: Timestamp::from_unix_ms(stored_at[i].unwrap_or(0)),
            record,
        });
    }
    Ok(out)
}

/// A stored lot: the record as decided and where the store keeps it.
#[derive(Debug, Clone, PartialEq)]
pub struct StoredLot {
    /// Shift it is stored under.
    pub shift: String,
    /// The shift's place in the store's order.
    pub shift_seq: i64,
    /// Its place in the shift's lot list.
    pub lot_index: i64,
    /// Earliest readable start time of its counted tests (plant clock).
    pub tests_from: Option<Timestamp>,
    /// Latest readable start time of its counted tests (plant clock).
    pub tests_until: Option<Timestamp>,
    /// When it was decided.
    pub decided_at: Timestamp,
    /// When it was stored (UTC).
    pub stored_at: Timestamp,
    /// The record, with `part` from the partition and the structured decision restored.
    pub record: LotRecord,
}

impl StoredLot {
    /// The time the lot is placed at on a trend: its last test, else its decision.
    pub fn trend_time(&self) -> Timestamp {
        self.tests_until.unwrap_or(self.decided_at)
    }
}

/// Reads lot rows; `part` and `shift` come from the partition columns of that name.
pub fn read_lots(cells: &Cells) -> Result<Vec<StoredLot>, HistoryError> {
    cells.check_schema_version()?;
    let n = cells.height();
    let part = cells.text("part")?;
    let shift = cells.text("shift")?;
    let lot = cells.text("lot")?;
    let lot_index = cells.i64("lot_index")?;
    let quantity = cells.i64("quantity")?;
    let disposition = cells.text("disposition")?;
    let next_severity = cells.text("next_severity")?;
    let tested = cells.i64("tested")?;
    let failed = cells.i64("failed")?;
    let invalid = cells.i64("invalid")?;
    let code_letter = cells.text("plan_code_letter")?;
    let sample_size = cells.i64("plan_sample_size")?;
    let accept = cells.i64("plan_accept")?;
    let reject = cells.i64("plan_reject")?;
    let plan_severity = cells.text("plan_severity")?;
    let rate_cols = [
        "rate_mean_nmm_per_deg",
        "rate_sd_nmm_per_deg",
        "rate_cp",
        "rate_cpk",
        "rate_cpk_lower_95",
        "rate_pp",
        "rate_ppk",
        "rate_normality_p",
    ];
    let rates = rate_cols.iter().map(|c| cells.f64(c)).collect::<Result<Vec<_>, _>>()?;
    let rate_method = cells.text("rate_method")?;
    let grounds = cells.json::<Vec<String>>("grounds")?;
    let decision = cells.json::<LotDecision>("decision")?;
    let report_html = cells.text("report_html")?;
    let report_md = cells.text("report_md")?;
    let duplicates = cells.json::<Vec<DuplicateFile>>("duplicates")?;
    let superseded = cells.json::<Vec<SupersededTest>>("superseded")?;
    let statistics = cells.json::<Vec<CharacteristicStats>>("statistics")?;
    let decided_by = cells.text("decided_by")?;
    let plans = cells.json::<Vec<PlanRow>>("plans")?;
    let spec_file = cells.text("spec_file")?;
    let spec_revision = cells.text("spec_revision")?;
    let rejected_files = cells.json::<Vec<RejectedFile>>("rejected_files")?;
    let rigs = cells.json::<Vec<RigUse>>("rigs")?;
    let coiler = cells.text("coiler")?;
    let wire_lot = cells.text("wire_lot")?;
    let wire_d = cells.f64("wire_d_mm")?;
    let mean_d = cells.f64("mean_d_mm")?;
    let tests_from = cells.time("tests_from")?;
    let tests_until = cells.time("tests_until")?;
    let decided_at = cells.time("decided_at")?;
    let shift_seq = cells.i64("shift_seq")?;
    let stored_at = cells.time("stored_at")?;
    let mut out = Vec::with_capacity(n);
    for i in 0..n {
        let plan = match sample_size[i] {
            Some(size) => Some(PlanSummary {
                code_letter: code_letter[i].clone(),
                sample_size: unsigned(size),
                accept: accept[i].map(unsigned),
                reject: reject[i].map(unsigned),
                severity: label::<Severity>(
                    cells,
                    "plan_severity",
                    &required(cells, "plan_severity", i, plan_severity[i].clone())?,
                )?,
            }),
            None => None,
        };
        let values: Vec<Option<f64>> = rates.iter().map(|c| c[i]).collect();
        let rate = if values.iter().all(Option::is_none) && rate_method[i].is_none() {
            None
        } else {
            Some(RateSummary {
                mean: values[0],
                sd: values[1],
                cp: values[2],
                cpk: values[3],
                cpk_lower_95: values[4],
                pp: values[5],
                ppk: values[6],
                normality_p: values[7],
                method: rate_method[i].clone(),
            })
        };
        let next_severity = match next_severity[i].as_deref() {
            Some(text) => Some(label::<InspectionState>(cells, "next_severity", text)?),
            None => None,
        };
        let record = LotRecord {
            lot: required(cells, "lot", i, lot[i].clone())?,
            part: required(cells, "part", i, part[i].clone())?,
            quantity: unsigned(quantity[i].unwrap_or(0)),
            disposition: label::<Disposition>(
                cells,
                "disposition",
                &required(cells, "disposition", i, disposition[i].clone())?,
            )?,
            tested: unsigned(tested[i].unwrap_or(0)),
            failed: unsigned(failed[i].unwrap_or(0)),
            invalid: unsigned(invalid[i].unwrap_or(0)),
            plan,
            next_severity,
            rate,
            grounds: grounds[i].clone().unwrap_or_default(),
            report_html: report_html[i].clone().unwrap_or_default(),
            report_md: report_md[i].clone().unwrap_or_default(),
            duplicates: duplicates[i].clone().unwrap_or_default(),
            superseded: superseded[i].clone().unwrap_or_default(),
            decision: decision[i].clone(),
            statistics: statistics[i].clone().unwrap_or_default(),
            decided_by: decided_by[i].clone(),
            plans: plans[i].clone().unwrap_or_default(),
            spec_file: spec_file[i].clone(),
            spec_revision: spec_revision[i].clone(),
            rejected_files: rejected_files[i].clone().unwrap_or_default(),
            rigs: rigs[i].clone().unwrap_or_default(),
            wire: LotWire {
                coiler: coiler[i].clone(),
                wire_lot: wire_lot[i].clone(),
                wire_d_mm: wire_d[i],
                mean_d_mm: mean_d[i],
            },
        };
        out.push(StoredLot {
            shift: required(cells, "shift", i, shift[i].clone())?,
            shift_seq: shift_seq[i].unwrap_or(0),
            lot_index: lot_index[i].unwrap_or(0),
            tests_from: tests_from[i].map(Timestamp::from_unix_ms),
            tests_until: tests_until[i].map(Timestamp::from_unix_ms),
            decided_at: Timestamp::from_unix_ms(decided_at[i].unwrap_or(0)),
            stored_at: Timestamp::from_unix_ms(stored_at[i].unwrap_or(0)),
            record,
        });
    }
    Ok(out)
}

/// Reads replacement rows; `shift` (the recording shift) comes from the partition column.
pub fn read_replacements(cells: &Cells) -> Result<Vec<Replacement>, HistoryError> {
    cells.check_schema_version()?;
    let col = |name: &str| cells.text(name);
    let (shift, part, serial, kind) = (col("shift")?, col("part")?, col("serial")?, col("kind")?);
    let old: Vec<_> = ["old_shift", "old_test_id", "old_file", "old_content_hash", "old_started"]
        .iter()
        .map(|c| col(c))
        .collect::<Result<_, _>>()?;
    let new: Vec<_> = ["new_shift", "new_test_id", "new_file", "new_content_hash", "new_started"]
        .iter()
        .map(|c| col(c))
        .collect::<Result<_, _>>()?;
    let recorded_at = cells.time("recorded_at")?;
    let mut out = Vec::with_capacity(cells.height());
    for i in 0..cells.height() {
        let kind_text = required(cells, "kind", i, kind[i].clone())?;
        let kind = ReplacementKind::parse(&kind_text)
            .ok_or_else(|| cells.corrupt(format!("column `kind`: unknown label `{kind_text}`")))?;
        let test_ref = |cols: &Vec<Vec<Option<String>>>, prefix: &str| -> Result<TestRef, HistoryError> {
            Ok(TestRef {
                shift: required(cells, &format!("{prefix}_shift"), i, cols[0][i].clone())?,
                test_id: required(cells, &format!("{prefix}_test_id"), i, cols[1][i].clone())?,
                file: required(cells, &format!("{prefix}_file"), i, cols[2][i].clone())?,
                content_hash: required(cells, &format!("{prefix}_content_hash"), i, cols[3][i].clone())?,
                started: cols[4][i].clone(),
            })
        };
        let new = if new[0][i].is_some() { Some(test_ref(&new, "new")?) } else { None };
        out.push(Replacement {
            recorded_in: required(cells, "shift", i, shift[i].clone())?,
            part: part[i].clone(),
            serial: required(cells, "serial", i, serial[i].clone())?,
            kind,
            old: test_ref(&old, "old")?,
            new,
            recorded_at: Timestamp::from_unix_ms(recorded_at[i].unwrap_or(0)),
        });
    }
    Ok(out)
}

/// Reads the shift catalog.
pub fn read_shifts(cells: &Cells) -> Result<Vec<StoredShift>, HistoryError> {
    cells.check_schema_version()?;
    let shift = cells.text("shift")?;
    let seq = cells.i64("shift_seq")?;
    let first = cells.time("first_stored_at")?;
    let stored = cells.time("stored_at")?;
    let parts = cells.json::<Vec<Option<String>>>("parts")?;
    let tests = cells.i64("tests")?;
    let lots = cells.i64("lots")?;
    (0..cells.height())
        .map(|i| {
            Ok(StoredShift {
                shift: required(cells, "shift", i, shift[i].clone())?,
                seq: required(cells, "shift_seq", i, seq[i])?,
                first_stored_at: Timestamp::from_unix_ms(first[i].unwrap_or(0)),
                stored_at: Timestamp::from_unix_ms(stored[i].unwrap_or(0)),
                parts: parts[i].clone().unwrap_or_default(),
                tests: unsigned(tests[i].unwrap_or(0)),
                lots: unsigned(lots[i].unwrap_or(0)),
            })
        })
        .collect()
}

/// Reads the resumptions.
pub fn read_resumptions(cells: &Cells) -> Result<Vec<Resumption>, HistoryError> {
    cells.check_schema_version()?;
    let part = cells.text("part")?;
    let label = cells.text("label")?;
    let seq = cells.i64("seq")?;
    let note = cells.text("note")?;
    let recorded = cells.time("recorded_at")?;
    (0..cells.height())
        .map(|i| {
            Ok(Resumption {
                part: required(cells, "part", i, part[i].clone())?,
                label: label[i].clone().unwrap_or_default(),
                seq: required(cells, "seq", i, seq[i])?,
                note: note[i].clone().unwrap_or_default(),
                recorded_at: Timestamp::from_unix_ms(recorded[i].unwrap_or(0)),
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    #[test]
    fn schema_md_describes_every_column_as_the_code_writes_it() {
        let document = include_str!("../SCHEMA.md");
        let generated = super::schema_markdown();
        for table in generated.split("\n### ") {
            let table = table.trim_start_matches("### ");
            assert!(document.contains(table), "SCHEMA.md lacks or differs from:\n### {table}");
        }
    }
}
