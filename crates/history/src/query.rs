//! The queries trending and switching need, over the stored tables.

use crate::escape::Partition;
use crate::schema::Cells;
use crate::store::current_of;
use crate::store::HistoryStore;
use crate::tables::{label, read_serial_rows, LOTS, TESTS};
use crate::time::Timestamp;
use crate::{HistoryError, Table};
use polars::prelude::*;
use std::collections::{BTreeMap, BTreeSet};
use std::fmt;
use std::str::FromStr;
use twistlot_model::record::{angle_key, Disposition, InspectionState, LotWire, Severity, SwitchingCount};
use twistlot_model::spec::Verdict;

/// A test metric a trend can follow, named as the command line names it.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum Metric {
    /// `rate`: spring rate, N·mm/°.
    Rate,
    /// `free_angle`: free angle α0, °.
    FreeAngle,
    /// `torque@ANGLE`: torque on the loading stroke at ANGLE (key as stored, e.g. `45`), N·mm.
    TorqueAt(String),
    /// `hysteresis@ANGLE`: hysteresis at ANGLE, %.
    HysteresisAt(String),
    /// `energy_loss`: energy loss between the strokes, %.
    EnergyLoss,
    /// `linearity`: largest residual from the line, % of the maximum torque.
    Linearity,
    /// `set`: shift of α0 across cycles, °.
    Set,
    /// `secant_rate`: secant rate, N·mm/°.
    SecantRate,
    /// `max_torque`: largest torque on the loading stroke, N·mm.
    MaxTorque,
}

/// A metric name that is not one of [`Metric`]'s.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "`{0}` is not a metric (use rate, free_angle, torque@ANGLE, hysteresis@ANGLE, energy_loss, linearity, set, secant_rate or max_torque; ANGLE in degrees, e.g. torque@45)"
)]
pub struct UnknownMetric(pub String);

impl FromStr for Metric {
    type Err = UnknownMetric;
    fn from_str(text: &str) -> Result<Metric, UnknownMetric> {
        let trimmed = text.trim();
        let angle = |rest: &str| -> Result<String, UnknownMetric> {
            let value: f64 = rest.trim().parse().map_err(|_| UnknownMetric(text.to_string()))?;
            if !value.is_finite() {
                return Err(UnknownMetric(text.to_string()));
            }
            // The stored key of 45.0 is `45`: the same spelling the evaluation writes.
            Ok(angle_key(value))
        };
        if let Some(rest) = trimmed.strip_prefix("torque@") {
            return Ok(Metric::TorqueAt(angle(rest)?));
        }
        if let Some(rest) = trimmed.strip_prefix("hysteresis@") {
            return Ok(Metric::HysteresisAt(angle(rest)?));
        }
        match trimmed {
            "rate" => Ok(Metric::Rate),
            "free_angle" => Ok(Metric::FreeAngle),
            "energy_loss" => Ok(Metric::EnergyLoss),
            "linearity" => Ok(Metric::Linearity),
            "set" => Ok(Metric::Set),
            "secant_rate" => Ok(Metric::SecantRate),
            "max_torque" => Ok(Metric::MaxTorque),
            _ => Err(UnknownMetric(text.to_string())),
        }
    }
}

impl fmt::Display for Metric {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Metric::Rate => f.write_str("rate"),
            Metric::FreeAngle => f.write_str("free_angle"),
            Metric::TorqueAt(angle) => write!(f, "torque@{angle}"),
            Metric::HysteresisAt(angle) => write!(f, "hysteresis@{angle}"),
            Metric::EnergyLoss => f.write_str("energy_loss"),
            Metric::Linearity => f.write_str("linearity"),
            Metric::Set => f.write_str("set"),
            Metric::SecantRate => f.write_str("secant_rate"),
            Metric::MaxTorque => f.write_str("max_torque"),
        }
    }
}

impl Metric {
    /// The tests-table column the metric is read from.
    pub fn column(&self) -> &'static str {
        match self {
            Metric::Rate => "rate_nmm_per_deg",
            Metric::FreeAngle => "free_angle_deg",
            Metric::TorqueAt(_) => "torque_nmm_at",
            Metric::HysteresisAt(_) => "hysteresis_pct_at",
            Metric::EnergyLoss => "energy_loss_pct",
            Metric::Linearity => "linearity_pct",
            Metric::Set => "set_deg",
            Metric::SecantRate => "secant_rate_nmm_per_deg",
            Metric::MaxTorque => "max_torque_nmm",
        }
    }

    /// The unit of the metric's values.
    pub fn unit(&self) -> &'static str {
        match self {
            Metric::Rate | Metric::SecantRate => "N·mm/°",
            Metric::FreeAngle | Metric::Set => "°",
            Metric::TorqueAt(_) | Metric::MaxTorque => "N·mm",
            Metric::HysteresisAt(_) | Metric::EnergyLoss | Metric::Linearity => "%",
        }
    }
}

/// One counted test's value of a metric.
#[derive(Debug, Clone, PartialEq)]
pub struct TestValue {
    /// Shift it is stored under.
    pub shift: String,
    /// The shift's place in the store's order.
    pub shift_seq: i64,
    /// Its place among the shift's tests.
    pub row_index: i64,
    /// Lot the export names.
    pub lot: Option<String>,
    /// Serial.
    pub serial: Option<String>,
    /// Test identifier.
    pub test_id: String,
    /// Export file.
    pub file: String,
    /// Start time as written.
    pub started: Option<String>,
    /// Start time read (plant clock).
    pub started_at: Option<Timestamp>,
    /// Verdict.
    pub verdict: Option<Verdict>,
    /// False when a later stored test of the same serial (a retest, a changed export in
    /// a later shift) is the serial's current result.
    pub current: bool,
    /// The metric's value (`None`: not measured).
    pub value: Option<f64>,
}

/// One lot of a part, as a trend reads it.
#[derive(Debug, Clone, PartialEq)]
pub struct LotTrendRow {
    /// Shift it is stored under.
    pub shift: String,
    /// The shift's place in the store's order.
    pub shift_seq: i64,
    /// Its place in the shift's lot list.
    pub lot_index: i64,
    /// Lot.
    pub lot: String,
    /// Units in the lot.
    pub quantity: u64,
    /// When the lot was decided.
    pub decided_at: Timestamp,
    /// Earliest readable start time of its counted tests (plant clock).
    pub tests_from: Option<Timestamp>,
    /// Latest readable start time of its counted tests (plant clock).
    pub tests_until: Option<Timestamp>,
    /// Counted tests.
    pub tested: u64,
    /// Counted tests that failed.
    pub failed: u64,
    /// Counted tests that could not be judged.
    pub invalid: u64,
    /// Mean rate, N·mm/°.
    pub rate_mean_nmm_per_deg: Option<f64>,
    /// Standard deviation of the rate, N·mm/°.
    pub rate_sd_nmm_per_deg: Option<f64>,
    /// Disposition.
    pub disposition: Disposition,
    /// Severity inspected under.
    pub severity: Option<Severity>,
    /// Where the part stood for its next lot.
    pub next_severity: Option<InspectionState>,
    /// What the lot fed to the switching rules (absent for held lots).
    pub switching: Option<SwitchingCount>,
    /// Coiler, wire lot and measured diameters, as the lot list gave them.
    pub wire: LotWire,
}

impl LotTrendRow {
    /// Where the lot sits on a time axis: its last test, else its decision.
    pub fn time(&self) -> Timestamp {
        self.tests_until.unwrap_or(self.decided_at)
    }
}

/// What an entry of the switching replay is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ReplayEvent {
    /// A decided lot and its disposition (held lots are listed; they count for nothing).
    Lot(Disposition),
    /// Corrective action recorded for a discontinued part.
    Resume,
}

/// One lot or resumption, in the order switching replays them.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplayEntry {
    /// The shift's (or the resumption's) place in the store's order.
    pub seq: i64,
    /// The lot's place in its shift's lot list (0 for a resumption).
    pub position: i64,
    /// Part.
    pub part: String,
    /// Shift (for a resumption: the label it was recorded under).
    pub shift: String,
    /// Lot (`None` for a resumption).
    pub lot: Option<String>,
    /// What it is.
    pub event: ReplayEvent,
    /// Severity the lot was inspected under.
    pub severity: Option<Severity>,
    /// The count fed to the switching rules (absent for held lots and resumptions).
    pub switching: Option<SwitchingCount>,
    /// The resumption's note.
    pub note: Option<String>,
}

fn parse_label<T: serde::de::DeserializeOwned>(
    cells: &Cells,
    column: &str,
    text: Option<&str>,
) -> Result<Option<T>, HistoryError> {
    text.map(|t| label::<T>(cells, column, t)).transpose()
}

fn unsigned(value: Option<i64>) -> u64 {
    value.and_then(|v| u64::try_from(v).ok()).unwrap_or(0)
}

/// The switching counts of a frame's rows (`None` where the lot fed none).
fn switching_counts(cells: &Cells) -> Result<Vec<Option<SwitchingCount>>, HistoryError> {
    let severity = cells.text("switching_severity")?;
    let sample = cells.i64("switching_sample_size")?;
    let defectives = cells.i64("switching_defectives")?;
    let aql = cells.f64("switching_aql_pct")?;
    let between = cells.bool("switching_between_ac_and_re")?;
    (0..cells.height())
        .map(|i| {
            let Some(severity) =
                parse_label::<Severity>(cells, "switching_severity", severity[i].as_deref())?
            else {
                return Ok(None);
            };
            Ok(Some(SwitchingCount {
                severity,
                sample_size: unsigned(sample[i]),
                defectives: unsigned(defectives[i]),
                aql_pct: aql[i].unwrap_or(0.0),
                between_ac_and_re: between[i].unwrap_or(false),
            }))
        })
        .collect()
}

const SWITCHING_COLUMNS: [&str; 5] = [
    "switching_severity",
    "switching_sample_size",
    "switching_defectives",
    "switching_aql_pct",
    "switching_between_ac_and_re",
];

impl HistoryStore {
    /// `part`'s lots in time order: by the last test of each lot (the decision time for a
    /// lot without a readable test time), then stored order. For trends.
    pub fn part_lots(&self, part: &str) -> Result<Vec<LotTrendRow>, HistoryError> {
        let partition = Partition::new("part", part)?;
        let mut columns = vec![
            "shift",
            "shift_seq",
            "lot_index",
            "lot",
            "quantity",
            "decided_at",
            "tests_from",
            "tests_until",
            "tested",
            "failed",
            "invalid",
            "rate_mean_nmm_per_deg",
            "rate_sd_nmm_per_deg",
            "disposition",
            "severity",
            "next_severity",
            "coiler",
            "wire_lot",
            "wire_d_mm",
            "mean_d_mm",
            "schema_version",
        ];
        columns.extend(SWITCHING_COLUMNS);
        let Some((df, folder)) = self.part_frame(LOTS, &partition, &columns)? else { return Ok(Vec::new()) };
        let cells = Cells::new(&df, &folder);
        cells.check_schema_version()?;
        let (shift, seq, index, lot) =
            (cells.text("shift")?, cells.i64("shift_seq")?, cells.i64("lot_index")?, cells.text("lot")?);
        let (quantity, decided, from, until) = (
            cells.i64("quantity")?,
            cells.time("decided_at")?,
            cells.time("tests_from")?,
            cells.time("tests_until")?,
        );
        let (tested, failed, invalid) = (cells.i64("tested")?, cells.i64("failed")?, cells.i64("invalid")?);
        let (mean, sd) = (cells.f64("rate_mean_nmm_per_deg")?, cells.f64("rate_sd_nmm_per_deg")?);
        let (disposition, severity, next) =
            (cells.text("disposition")?, cells.text("severity")?, cells.text("next_severity")?);
        let switching = switching_counts(&cells)?;
        let (coiler, wire_lot) = (cells.text("coiler")?, cells.text("wire_lot")?);
        let (wire_d, mean_d) = (cells.f64("wire_d_mm")?, cells.f64("mean_d_mm")?);
        let mut rows = Vec::with_capacity(cells.height());
        for i in 0..cells.height() {
            let disposition =
                parse_label::<Disposition>(&cells, "disposition", disposition[i].as_deref())?
                    .ok_or_else(|| cells.corrupt(format!("column `disposition`, row {i}: empty")))?;
            rows.push(LotTrendRow {
                shift: shift[i].clone().unwrap_or_default(),
                shift_seq: seq[i].unwrap_or(0),
                lot_index: index[i].unwrap_or(0),
                lot: lot[i].clone().unwrap_or_default(),
                quantity: unsigned(quantity[i]),
                decided_at: Timestamp::from_unix_ms(decided[i].unwrap_or(0)),
                tests_from: from[i].map(Timestamp::from_unix_ms),
                tests_until: until[i].map(Timestamp::from_unix_ms),
                tested: unsigned(tested[i]),
                failed: unsigned(failed[i]),
                invalid: unsigned(invalid[i]),
                rate_mean_nmm_per_deg: mean[i],
                rate_sd_nmm_per_deg: sd[i],
                disposition,
                severity: parse_label(&cells, "severity", severity[i].as_deref())?,
                next_severity: parse_label(&cells, "next_severity", next[i].as_deref())?,
                switching: switching[i].clone(),
                wire: LotWire {
                    coiler: coiler[i].clone(),
                    wire_lot: wire_lot[i].clone(),
                    wire_d_mm: wire_d[i],
                    mean_d_mm: mean_d[i],
                },
            });
        }
        rows.sort_by_key(|r| (r.time(), r.shift_seq, r.lot_index));
        Ok(rows)
    }

    /// `part`'s counted tests (duplicates and superseded retests left out) and their value
    /// of `metric`, started at or after `since` when given (tests without a readable start
    /// time are then left out), in time order. `current` tells which are still their
    /// serial's result.
    pub fn part_tests(
        &self,
        part: &str,
        metric: &Metric,
        since: Option<Timestamp>,
    ) -> Result<Vec<TestValue>, HistoryError> {
        let partition = Partition::new("part", part)?;
        let columns = [
            "shift",
            "shift_seq",
            "row_index",
            "lot",
            "serial",
            "test_id",
            "file",
            "content_hash",
            "started",
            "started_at",
            "verdict",
            "status",
            "schema_version",
            metric.column(),
        ];
        let Some((df, folder)) = self.part_frame(TESTS, &partition, &columns)? else { return Ok(Vec::new()) };
        let cells = Cells::new(&df, &folder);
        cells.check_schema_version()?;
        // The serial's current result, from the same rows (no second read of the part).
        let candidates = read_serial_rows(&cells, partition.value(), true)?;
        let current: BTreeSet<(&str, &str)> = current_of(&candidates)
            .values()
            .map(|c| (c.test.shift.as_str(), c.test.content_hash.as_str()))
            .collect();
        let (shift, seq, row, lot) =
            (cells.text("shift")?, cells.i64("shift_seq")?, cells.i64("row_index")?, cells.text("lot")?);
        let (serial, test_id, file, hash) =
            (cells.text("serial")?, cells.text("test_id")?, cells.text("file")?, cells.text("content_hash")?);
        let (started, started_at, verdict, status) = (
            cells.text("started")?,
            cells.time("started_at")?,
            cells.text("verdict")?,
            cells.text("status")?,
        );
        let values: Vec<Option<f64>> = match metric {
            Metric::TorqueAt(angle) | Metric::HysteresisAt(angle) => cells
                .json::<BTreeMap<String, Option<f64>>>(metric.column())?
                .into_iter()
                .map(|map| map.and_then(|m| m.get(angle).copied().flatten()))
                .collect(),
            _ => cells.f64(metric.column())?,
        };
        let mut out = Vec::new();
        for i in 0..cells.height() {
            if status[i].as_deref() != Some("counted") {
                continue;
            }
            let started_at = started_at[i].map(Timestamp::from_unix_ms);
            if let Some(since) = since {
                if started_at.is_none_or(|t| t < since) {
                    continue;
                }
            }
            let shift = shift[i].clone().unwrap_or_default();
            let hash = hash[i].clone().unwrap_or_default();
            out.push(TestValue {
                current: serial[i].is_none() || current.contains(&(shift.as_str(), hash.as_str())),
                shift,
                shift_seq: seq[i].unwrap_or(0),
                row_index: row[i].unwrap_or(0),
                lot: lot[i].clone(),
                serial: serial[i].clone(),
                test_id: test_id[i].clone().unwrap_or_default(),
                file: file[i].clone().unwrap_or_default(),
                started: started[i].clone(),
                started_at,
                verdict: parse_label(&cells, "verdict", verdict[i].as_deref())?,
                value: values[i],
            });
        }
        out.sort_by_key(|v| (v.started_at.is_none(), v.started_at, v.shift_seq, v.row_index));
        Ok(out)
    }

    /// Every lot of every part and every resumption, in stored order: by the shift's place
    /// in the store (kept when a shift is written again), then lot-list order; a
    /// resumption sits where it was recorded. Feed a part's entries to its switching state
    /// in this order; entries with `seq` below a shift's are the ones before it.
    pub fn switching_replay(&self) -> Result<Vec<ReplayEntry>, HistoryError> {
        let mut entries = Vec::new();
        if let Some(scan) = self.scan(Table::Lots)? {
            let folder = self.folder().join(LOTS);
            let mut columns: Vec<Expr> = [
                "part",
                "shift",
                "shift_seq",
                "lot_index",
                "lot",
                "disposition",
                "severity",
                "schema_version",
            ]
            .iter()
            .map(|c| col(*c))
            .collect();
            columns.extend(SWITCHING_COLUMNS.iter().map(|c| col(*c)));
            let df = scan.select(columns).collect().map_err(|source| HistoryError::Polars {
                path: folder.clone(),
                action: "read the lots for switching",
                source,
            })?;
            let cells = Cells::new(&df, &folder);
            cells.check_schema_version()?;
            let (part, shift, seq, index, lot) = (
                cells.text("part")?,
                cells.text("shift")?,
                cells.i64("shift_seq")?,
                cells.i64("lot_index")?,
                cells.text("lot")?,
            );
            let (disposition, severity) = (cells.text("disposition")?, cells.text("severity")?);
            let switching = switching_counts(&cells)?;
            for i in 0..cells.height() {
                let disposition =
                    parse_label::<Disposition>(&cells, "disposition", disposition[i].as_deref())?
                        .ok_or_else(|| cells.corrupt(format!("column `disposition`, row {i}: empty")))?;
                entries.push(ReplayEntry {
                    seq: seq[i].unwrap_or(0),
                    position: index[i].unwrap_or(0),
                    part: part[i].clone().unwrap_or_default(),
                    shift: shift[i].clone().unwrap_or_default(),
                    lot: lot[i].clone(),
                    event: ReplayEvent::Lot(disposition),
                    severity: parse_label(&cells, "severity", severity[i].as_deref())?,
                    switching: switching[i].clone(),
                    note: None,
                });
            }
        }
        for resumption in self.resumptions()? {
            entries.push(ReplayEntry {
                seq: resumption.seq,
                position: 0,
                part: resumption.part,
                shift: resumption.label,
                lot: None,
                event: ReplayEvent::Resume,
                severity: Some(Severity::Tightened),
                switching: None,
                note: Some(resumption.note),
            });
        }
        entries.sort_by(|a, b| (a.seq, a.position, &a.part).cmp(&(b.seq, b.position, &b.part)));
        Ok(entries)
    }
}
