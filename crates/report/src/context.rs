//! What the templates read: the model's own records plus the few things only a
//! document needs (when it was made, the charts this crate drew, the data sheet laid
//! out as a table, who signs, the cautions).
//!
//! The records are the ones `summary.json`, `tests.csv`, the sinks and the history
//! carry ([`twistlot_model::record`]); nothing here copies them into look-alikes. An
//! `Option` that is `None` shows as "—" in HTML and Markdown and as an empty field in
//! CSV, so a missing value is never mistaken for zero.

use crate::charts::SvgMarkup;
use crate::format::{format_metric, MetricKind};
use serde::{Deserialize, Serialize};
use twistlot_model::record::test_order;
use twistlot_model::{
    Approval, CharacteristicStats, ClassDecision, LotDecision, LotRecord, PartSpec, RejectedFile,
    ShiftRecord, TestRecord, Verdict,
};

/// One chart of a characteristic's individual values.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct ValuesChart {
    /// The characteristic, e.g. `rate`.
    pub characteristic: String,
    /// The chart.
    pub svg: SvgMarkup,
}

/// The charts of a lot report, drawn by this crate.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Charts {
    /// Individual values of each toleranced characteristic over the drawing's band (rate first).
    pub values: Vec<ValuesChart>,
    /// Overlaid torque-vs-angle curves with the drawing's limits.
    pub curves_svg: SvgMarkup,
    /// Operating characteristic of the deciding plan with the lot's point.
    pub oc_curve_svg: SvgMarkup,
    /// Which plan the OC chart shows, and why that one, in words.
    pub oc_note: String,
}

/// One column of the data sheet: a characteristic judged on the parts.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DataColumn {
    /// Characteristic name as the findings give it.
    pub characteristic: String,
    /// Its unit, or empty.
    pub unit: String,
}

/// One characteristic of one part on the data sheet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DataCell {
    /// The value, printed at the metric's precision; absent when it was not measured.
    pub value: Option<String>,
    /// The verdict on it; absent when the part was not judged on this characteristic.
    pub verdict: Option<Verdict>,
}

/// One tested part on the data sheet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DataRow {
    /// Serial number.
    pub serial: Option<String>,
    /// The export file.
    pub file: String,
    /// Rig.
    pub rig: Option<String>,
    /// Operator.
    pub operator: Option<String>,
    /// Start time as the rig wrote it.
    pub started: Option<String>,
    /// `counted`, `duplicate` or `superseded`.
    pub status: String,
    /// The part's verdict.
    pub verdict: Option<Verdict>,
    /// One cell per [`DataSheet::columns`] entry.
    pub cells: Vec<DataCell>,
}

/// Every sampled part of a lot with each characteristic's value and verdict.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct DataSheet {
    /// The characteristics, in the spec's order, then any check plugins.
    pub columns: Vec<DataColumn>,
    /// The parts, in start-time order (then serial, then file).
    pub rows: Vec<DataRow>,
}

impl DataSheet {
    /// The data sheet of `tests`: one row per test, one column per characteristic any of
    /// them was judged on (the spec's characteristics first, in its order).
    pub fn of(tests: &[TestRecord], spec: Option<&PartSpec>) -> DataSheet {
        let mut names: Vec<String> =
            spec.map(|s| s.classes().into_iter().map(|(name, _)| name).collect()).unwrap_or_default();
        for test in tests {
            for finding in &test.findings {
                if !names.contains(&finding.characteristic) {
                    names.push(finding.characteristic.clone());
                }
            }
        }
        // Only columns some test was judged on: a spec characteristic no finding names
        // (there were no tests) would be an empty column.
        names.retain(|name| tests.iter().any(|t| t.findings.iter().any(|f| &f.characteristic == name)));
        let columns = names
            .iter()
            .map(|name| DataColumn {
                characteristic: name.clone(),
                unit: MetricKind::of_characteristic(name).unit().to_string(),
            })
            .collect();
        let mut ordered: Vec<&TestRecord> = tests.iter().collect();
        ordered.sort_by(|a, b| test_order(a, b));
        let rows = ordered
            .into_iter()
            .map(|t| DataRow {
                serial: t.serial.clone(),
                file: t.file.clone(),
                rig: t.rig.clone(),
                operator: t.operator.clone(),
                started: t.started.clone(),
                status: t.status.as_str().to_string(),
                verdict: t.verdict,
                cells: names
                    .iter()
                    .map(|name| {
                        let finding = t.findings.iter().find(|f| &f.characteristic == name);
                        DataCell {
                            value: finding
                                .and_then(|f| f.value)
                                .map(|v| format_metric(v, MetricKind::of_characteristic(name))),
                            verdict: finding.map(|f| f.verdict),
                        }
                    })
                    .collect(),
            })
            .collect();
        DataSheet { columns, rows }
    }
}

/// Everything one lot acceptance report shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotReport {
    /// When the report was made, plant-local time to the second with its UTC offset.
    pub generated_at: String,
    /// Shift name.
    pub shift: String,
    /// Plant name.
    pub plant: String,
    /// The lot as decided (its `plans` list every class's plan, the deciding one marked).
    pub lot: LotRecord,
    /// The decision with its structured grounds (absent when the lot could not be sampled).
    pub decision: Option<LotDecision>,
    /// The plan with the largest sample (see `LotDecision::shown_class`).
    pub shown: Option<ClassDecision>,
    /// The ground that decided the disposition, in words.
    pub deciding_ground: Option<String>,
    /// The spec judged against, when there was one.
    pub spec: Option<PartSpec>,
    /// The spec's file, or "no spec".
    pub spec_file: String,
    /// Every test of the lot (counted, duplicate, superseded), in file order.
    pub tests: Vec<TestRecord>,
    /// Every tested part with its values and verdicts.
    pub data_sheet: DataSheet,
    /// Statistics per toleranced characteristic.
    pub statistics: Vec<CharacteristicStats>,
    /// Files of this lot that were not evaluated.
    pub rejected_files: Vec<RejectedFile>,
    /// Files of the shift that were not evaluated and could not be assigned to any lot
    /// (listed in the shift summary only).
    pub unassigned_files: usize,
    /// Who signs: names from the plant config or the command line, blanks otherwise.
    pub approval: Approval,
    /// Cautions printed at the foot; see [`default_cautions`].
    pub cautions: Vec<String>,
    /// The charts.
    pub charts: Charts,
}

impl LotReport {
    /// A report context for `lot`; the decision, statistics and this lot's unreadable
    /// files come from the lot record, the data sheet from `tests`.
    pub fn new(lot: LotRecord, tests: Vec<TestRecord>, spec: Option<(PartSpec, String)>) -> LotReport {
        let decision = lot.decision.clone();
        let shown = decision.as_ref().and_then(|d| d.shown_plan().cloned());
        let deciding_ground = decision.as_ref().and_then(|d| d.deciding_ground()).map(|g| g.text.clone());
        let statistics = lot.statistics.clone();
        let rejected_files = lot.rejected_files.clone();
        let (spec, spec_file) = match spec {
            Some((spec, file)) => (Some(spec), file),
            None => (None, "no spec".to_string()),
        };
        let data_sheet = DataSheet::of(&tests, spec.as_ref());
        LotReport {
            generated_at: String::new(),
            shift: String::new(),
            plant: String::new(),
            lot,
            decision,
            shown,
            deciding_ground,
            spec,
            spec_file,
            tests,
            data_sheet,
            statistics,
            rejected_files,
            unassigned_files: 0,
            approval: Approval::default(),
            cautions: default_cautions(),
            charts: Charts::default(),
        }
    }
}

/// Everything the shift summary shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ShiftSummary {
    /// When the summary was made, plant-local time to the second with its UTC offset.
    pub generated_at: String,
    /// Plant name.
    pub plant: String,
    /// The shift as `summary.json` holds it.
    pub summary: ShiftRecord,
}

/// Context of `tests.csv.j2`, rendered once with the header and then once per test.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct TestsCsv {
    /// Print the header line.
    pub header: bool,
    /// Angles (as the metrics' map keys, e.g. `60`, `22.5`) that get a torque column each.
    pub torque_angles: Vec<String>,
    /// Angles that get a hysteresis column each.
    pub hysteresis_angles: Vec<String>,
    /// The rows, in output order.
    pub rows: Vec<TestRecord>,
}

/// Everything the HTML plan shows. `plan` is the plan as `plan.json` holds it; the
/// pipeline's type, kept generic so this crate never depends on the planner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanReport<P> {
    /// When the plan was made, already formatted.
    pub generated_at: String,
    /// Plant name.
    pub plant: String,
    /// The plan.
    pub plan: P,
    /// The Gantt chart this crate drew.
    pub gantt_svg: SvgMarkup,
    /// File names of the operators' work lists, one per rig.
    pub worklists: Vec<String>,
    /// Cautions printed at the foot; see [`plan_cautions`].
    pub cautions: Vec<String>,
}

/// One line of an operator's work list: a reference check, a setup or a lot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorkStep {
    /// 1, 2, 3… in the order the rig runs them.
    pub step: u32,
    /// `reference-check`, `setup` or `test`.
    pub kind: String,
    /// Planned start, plant-local ISO 8601.
    pub start: String,
    /// Planned end.
    pub end: String,
    /// Lot (empty for a reference check).
    pub lot: String,
    /// Part number, or the reference spring's serial.
    pub part: String,
    /// Parts to test (0 for a setup; 1 for a reference check).
    pub samples: u64,
    /// Arbor to fit, mm (absent when none is named).
    pub arbor_mm: Option<f64>,
    /// Fixture, as the plant names it.
    pub fixture: String,
    /// When the lot must ship.
    pub ship_by: Option<String>,
    /// What to do, in words.
    pub instruction: String,
}

/// Context of `worklist.csv.j2`: one rig's steps in order.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorklistCsv {
    /// The rig.
    pub rig: String,
    /// Shift name.
    pub shift: String,
    /// When the plan was made.
    pub generated_at: String,
    /// Cautions written as comment lines above the header.
    pub cautions: Vec<String>,
    /// The steps, reference check first.
    pub steps: Vec<WorkStep>,
}

/// The cautions a plan and the operators' work lists carry.
pub fn plan_cautions() -> Vec<String> {
    [
        "A loaded torsion spring stores energy and can leave a fixture violently: load and unload \
         parts with the drive at rest, keep hands and face out of the legs' path, and keep the rig's \
         guard closed while it turns.",
        "Run the reference-spring check first; a lot's tests count only after the rig has passed it, \
         and a rig past its calibration date must not test at all.",
        "Fit only the arbor the plan names or a smaller one: an arbor too large for the wound-down \
         spring binds and fakes hysteresis.",
        "This plan orders the tests; it decides nothing. The customer's drawing and specification \
         govern acceptance, and local codes and licensed practice govern safety.",
    ]
    .into_iter()
    .map(String::from)
    .collect()
}

/// The cautions every output carries unless the plant supplies its own.
pub fn default_cautions() -> Vec<String> {
    [
        "These results are computed only from the rig data supplied to this run; \
         parts, rigs or files that were not supplied are not covered.",
        "The customer's drawing and specification govern acceptance. Where this report \
         and the drawing disagree, the drawing is right and this report is wrong.",
        "Local codes and licensed engineering practice govern safety; nothing here \
         replaces them.",
        "Results are only as good as the rigs: each rig must be within its calibration \
         interval and must have been checked with a reference spring at the start of \
         the shift.",
        "A wound torsion spring stores energy and can leave a fixture violently. Keep \
         hands and faces clear of a loaded part and follow the plant's guarding rules.",
        "A disposition printed here does not release a lot by itself; release is the \
         decision of the person the plant has authorised to make it.",
    ]
    .into_iter()
    .map(String::from)
    .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_model::{CharacteristicClass, CurveMetrics, Finding, TestStatus};

    fn test(serial: &str, started: &str, rate: Option<f64>, verdict: Verdict) -> TestRecord {
        TestRecord {
            test_id: serial.into(),
            file: format!("{serial}.csv"),
            content_hash: String::new(),
            serial: Some(serial.into()),
            part: Some("P".into()),
            lot: Some("L".into()),
            rig: Some("RIG-A".into()),
            operator: Some("op".into()),
            started: Some(started.into()),
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics: CurveMetrics::default(),
            verdict: Some(verdict),
            findings: vec![Finding {
                characteristic: "rate".into(),
                class: CharacteristicClass::Major,
                value: rate,
                lower: Some(1.0),
                upper: Some(2.0),
                verdict,
                message: String::new(),
            }],
            status: TestStatus::Counted,
            swing: None,
            theory: None,
        }
    }

    #[test]
    fn the_data_sheet_has_every_part_in_start_order_with_values_at_their_precision() {
        let mut late = test("S-2", "2026-12-01T10:05", Some(1.512_345_678), Verdict::Pass);
        late.findings.push(Finding {
            characteristic: "torque@60".into(),
            value: Some(195.31099999999998),
            verdict: Verdict::Fail,
            ..late.findings[0].clone()
        });
        late.status = TestStatus::Superseded { by: "x.csv".into() };
        let early = test("S-1", "2026-12-01T10:00", None, Verdict::Invalid);
        let sheet = DataSheet::of(&[late, early], None);
        let names: Vec<&str> = sheet.columns.iter().map(|c| c.characteristic.as_str()).collect();
        assert_eq!(names, ["rate", "torque@60"]);
        assert_eq!(sheet.columns[1].unit, "N·mm");
        assert_eq!(sheet.rows[0].serial.as_deref(), Some("S-1"), "start-time order, not input order");
        assert_eq!(sheet.rows[0].cells[0], DataCell { value: None, verdict: Some(Verdict::Invalid) });
        assert_eq!(sheet.rows[0].cells[1], DataCell { value: None, verdict: None });
        // Common practice, no published source: rates to 4 decimals, torques to 2.
        assert_eq!(sheet.rows[1].cells[0].value.as_deref(), Some("1.5123"));
        assert_eq!(sheet.rows[1].cells[1].value.as_deref(), Some("195.31"));
        assert_eq!(sheet.rows[1].status, "superseded");
    }
}
