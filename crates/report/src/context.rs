//! What the templates read: the model's own records plus the few things only a
//! document needs (when it was made, the charts this crate drew, the cautions).
//!
//! The records are the ones `summary.json`, `tests.csv`, the sinks and the history
//! carry ([`twistlot_model::record`]); nothing here copies them into look-alikes. An
//! `Option` that is `None` shows as "—" in HTML and Markdown and as an empty field in
//! CSV, so a missing value is never mistaken for zero.

use crate::charts::SvgMarkup;
use serde::{Deserialize, Serialize};
use twistlot_model::{
    CharacteristicStats, ClassDecision, LotDecision, LotRecord, PartSpec, RejectedFile, ShiftRecord,
    TestRecord,
};

/// The three charts of a lot report, drawn by this crate.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Charts {
    /// Histogram of the lot's spring rates.
    pub rate_histogram_svg: SvgMarkup,
    /// Overlaid torque-vs-angle curves with tolerance windows.
    pub curves_svg: SvgMarkup,
    /// Operating characteristic of the plan with the lot's point.
    pub oc_curve_svg: SvgMarkup,
}

/// Everything one lot acceptance report shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotReport {
    /// When the report was made, already formatted.
    pub generated_at: String,
    /// Shift name.
    pub shift: String,
    /// Plant name.
    pub plant: String,
    /// The lot as decided.
    pub lot: LotRecord,
    /// The decision with its structured grounds (absent when the lot could not be sampled).
    pub decision: Option<LotDecision>,
    /// The plan shown as "the plan applied" (see `LotDecision::shown_class`).
    pub shown: Option<ClassDecision>,
    /// The spec judged against, when there was one.
    pub spec: Option<PartSpec>,
    /// The spec's file, or "no spec".
    pub spec_file: String,
    /// Every test of the lot (counted, duplicate, superseded), in file order.
    pub tests: Vec<TestRecord>,
    /// Statistics per toleranced characteristic.
    pub statistics: Vec<CharacteristicStats>,
    /// Files that were not evaluated.
    pub rejected_files: Vec<RejectedFile>,
    /// Cautions printed at the foot; see [`default_cautions`].
    pub cautions: Vec<String>,
    /// The charts.
    pub charts: Charts,
}

impl LotReport {
    /// A report context for `lot`; `shown` and `statistics` come from the lot record.
    pub fn new(lot: LotRecord, tests: Vec<TestRecord>, spec: Option<(PartSpec, String)>) -> LotReport {
        let decision = lot.decision.clone();
        let shown = decision.as_ref().and_then(|d| d.shown_plan().cloned());
        let statistics = lot.statistics.clone();
        let (spec, spec_file) = match spec {
            Some((spec, file)) => (Some(spec), file),
            None => (None, "no spec".to_string()),
        };
        LotReport {
            generated_at: String::new(),
            shift: String::new(),
            plant: String::new(),
            lot,
            decision,
            shown,
            spec,
            spec_file,
            tests,
            statistics,
            rejected_files: Vec::new(),
            cautions: default_cautions(),
            charts: Charts::default(),
        }
    }
}

/// Everything the shift summary shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ShiftSummary {
    /// When the summary was made, already formatted.
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
