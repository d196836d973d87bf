//! Plain-data contexts the pipeline fills and the templates read.
//!
//! Every field is already computed and already in display units; an `Option` that is
//! `None` shows as "—" in HTML and Markdown and as an empty field in CSV, so a missing
//! value is never mistaken for zero.

use crate::charts::SvgMarkup;
use serde::{Deserialize, Serialize};
use std::fmt;
use twistlot_model::Verdict;

/// What is decided for a lot.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Disposition {
    /// The lot meets the plan and may go on to release.
    Accept,
    /// The lot fails the plan.
    Reject,
    /// No decision can be made yet (missing tests, invalid curves, rig not verified…).
    Hold,
}

impl Disposition {
    /// The lower-case label used in contexts and templates.
    pub fn as_str(self) -> &'static str {
        match self {
            Disposition::Accept => "accept",
            Disposition::Reject => "reject",
            Disposition::Hold => "hold",
        }
    }
}

impl fmt::Display for Disposition {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The sampling plan that was applied to a lot, as it should be printed.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct PlanView {
    /// Scheme name, e.g. `MIL-STD-105E` or a plant plugin's name.
    pub scheme: String,
    /// Sample-size code letter, for table-driven schemes.
    pub code_letter: Option<String>,
    /// Inspection level, e.g. `II`.
    pub inspection_level: Option<String>,
    /// Acceptable quality level in percent defective.
    pub aql_pct: Option<f64>,
    /// Number of parts to test.
    pub sample_size: u64,
    /// Acceptance number (attribute plans).
    pub accept: Option<u64>,
    /// Rejection number (attribute plans).
    pub reject: Option<u64>,
    /// Acceptability constant k (variables plans).
    pub acceptability_k: Option<f64>,
    /// Inspection severity in force: `normal`, `tightened` or `reduced`.
    pub severity: String,
}

/// One part that failed or could not be judged, with the characteristic that caught it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlaggedPart {
    /// Serial as the rig export gave it.
    pub serial: Option<String>,
    /// Export file the test came from.
    pub file: String,
    /// Characteristic that caught it, e.g. `rate` or `torque@45`.
    pub characteristic: String,
    /// Measured value, when one could be measured.
    pub value: Option<f64>,
    /// Lower limit, when there is one.
    pub lower: Option<f64>,
    /// Upper limit, when there is one.
    pub upper: Option<f64>,
    /// `fail` or `invalid`.
    pub verdict: Verdict,
    /// Why, in words.
    pub message: String,
}

/// Lot statistics and capability for one characteristic.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct CharacteristicStats {
    /// Characteristic name, e.g. `rate`.
    pub characteristic: String,
    /// Unit label, e.g. `N·mm/°`.
    pub unit: String,
    /// Lower specification limit.
    pub lower: Option<f64>,
    /// Upper specification limit.
    pub upper: Option<f64>,
    /// Number of values behind the statistics.
    pub n: u64,
    /// Mean.
    pub mean: Option<f64>,
    /// Standard deviation.
    pub sd: Option<f64>,
    /// Smallest value.
    pub min: Option<f64>,
    /// Largest value.
    pub max: Option<f64>,
    /// Cp (within-lot σ).
    pub cp: Option<f64>,
    /// Lower 95 % confidence bound on Cp.
    pub cp_lower_95: Option<f64>,
    /// Cpk (within-lot σ).
    pub cpk: Option<f64>,
    /// Lower 95 % confidence bound on Cpk.
    pub cpk_lower_95: Option<f64>,
    /// Pp (overall s).
    pub pp: Option<f64>,
    /// Ppk (overall s).
    pub ppk: Option<f64>,
    /// Anderson–Darling normality p-value.
    pub normality_p: Option<f64>,
    /// How capability was computed, e.g. `normal` or `percentile`.
    pub method: String,
}

/// A file that was not turned into a result, and why.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RejectedFile {
    /// The export's path as given to the run.
    pub file: String,
    /// The reason, in words a person can act on.
    pub reason: String,
}

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
    /// Shift name or id.
    pub shift: String,
    /// Part number.
    pub part: String,
    /// Drawing/spec revision evaluated against.
    pub revision: String,
    /// Customer, when the spec names one.
    pub customer: Option<String>,
    /// Spec file evaluated against.
    pub spec_file: String,
    /// Lot number.
    pub lot: String,
    /// Lot size in parts.
    pub quantity: u64,
    /// Plan applied.
    pub plan: PlanView,
    /// The decision.
    pub disposition: Disposition,
    /// Why the decision is what it is, one sentence each.
    pub grounds: Vec<String>,
    /// Parts tested.
    pub tested: u64,
    /// Parts that failed.
    pub failed: u64,
    /// Parts whose curve did not support a verdict.
    pub invalid: u64,
    /// Failed and invalid parts in detail.
    pub flagged: Vec<FlaggedPart>,
    /// Statistics per characteristic.
    pub statistics: Vec<CharacteristicStats>,
    /// Files of this lot that were not evaluated.
    pub rejected_files: Vec<RejectedFile>,
    /// Cautions printed at the foot; see [`default_cautions`].
    pub cautions: Vec<String>,
    /// The charts.
    pub charts: Charts,
}

/// One lot's line in the shift summary.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotLine {
    /// Lot number.
    pub lot: String,
    /// Part number.
    pub part: String,
    /// The decision.
    pub disposition: Disposition,
    /// Parts tested.
    pub tested: u64,
    /// Parts that failed.
    pub failed: u64,
    /// Parts that could not be judged.
    pub invalid: u64,
    /// Inspection severity used, and the next lot's when this lot changed it ("normal → tightened").
    #[serde(default)]
    pub severity: String,
    /// The lot report's file name, relative to the summary's folder.
    pub report_file: Option<String>,
    /// Why the decision is what it is.
    pub grounds: Vec<String>,
}

/// Everything the shift summary shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ShiftSummary {
    /// Shift name or id.
    pub shift: String,
    /// When the summary was made, already formatted.
    pub generated_at: String,
    /// Export files seen.
    pub files_total: u64,
    /// Export files turned into results.
    pub files_accepted: u64,
    /// Export files not turned into results, with reasons.
    pub files_rejected: Vec<RejectedFile>,
    /// One line per lot.
    pub lots: Vec<LotLine>,
    /// Cautions printed at the foot.
    pub cautions: Vec<String>,
}

/// One test's line in the per-test CSV.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TestRow {
    /// Test id (see `TestMetadata::test_id`).
    pub test_id: String,
    /// Export file.
    pub file: String,
    /// Serial.
    pub serial: Option<String>,
    /// Part number.
    pub part: Option<String>,
    /// Lot number.
    pub lot: Option<String>,
    /// Rig id.
    pub rig: Option<String>,
    /// Operator.
    pub operator: Option<String>,
    /// Spring rate in N·mm per degree.
    pub rate_nmm_per_deg: Option<f64>,
    /// Free (zero-torque) leg angle in degrees.
    pub free_angle_deg: Option<f64>,
    /// Largest torque on the loading stroke in N·mm.
    pub max_torque_nmm: Option<f64>,
    /// Test verdict.
    pub verdict: Verdict,
    /// Failed or invalid findings, summarised in one line.
    pub findings: String,
}

/// Context of `tests.csv.j2`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct TestsCsv {
    /// The rows, in output order.
    pub rows: Vec<TestRow>,
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
