//! Result records: what a shift produces about each test and each lot, typed once.
//!
//! These are the records every output reads: the lot reports, `summary.json`,
//! `tests.csv`, the switching record, exec sinks and the history store. The layer-1
//! crates fill them (`stats` the metrics, `sampling` the lot decision); nothing
//! above copies them into look-alike structs.

use crate::capability::Capability;
use crate::spec::{CharacteristicClass, Finding, Verdict};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;
use std::str::FromStr;

/// A word that is not one of an enum's labels.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("`{value}` is not a {what} (use {expected})")]
pub struct UnknownLabel {
    /// What was being parsed, e.g. `severity`.
    pub what: &'static str,
    /// The text given.
    pub value: String,
    /// The accepted labels, for the message.
    pub expected: &'static str,
}

/// What is decided for a lot. Ordered by severity of consequence: a reject outranks a
/// hold, which outranks an accept, so the lot's disposition is the largest of its parts'.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Disposition {
    /// The lot meets its sampling plan (release is still a person's decision).
    Accept,
    /// No decision yet: missing or invalid tests, an unverified rig, a broken spec…
    Hold,
    /// The lot fails its sampling plan.
    Reject,
}

impl Disposition {
    /// Every disposition, in order.
    pub const ALL: [Disposition; 3] = [Disposition::Accept, Disposition::Hold, Disposition::Reject];

    /// The lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            Disposition::Accept => "accept",
            Disposition::Hold => "hold",
            Disposition::Reject => "reject",
        }
    }
}

impl fmt::Display for Disposition {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Inspection severity under a scheme's switching rules.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// Normal inspection.
    Normal,
    /// Tightened inspection.
    Tightened,
    /// Reduced inspection.
    Reduced,
}

impl Severity {
    /// Every severity.
    pub const ALL: [Severity; 3] = [Severity::Normal, Severity::Tightened, Severity::Reduced];

    /// The lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Normal => "normal",
            Severity::Tightened => "tightened",
            Severity::Reduced => "reduced",
        }
    }
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for Severity {
    type Err = UnknownLabel;
    fn from_str(text: &str) -> Result<Self, UnknownLabel> {
        match text.trim().to_ascii_lowercase().as_str() {
            "normal" => Ok(Severity::Normal),
            "tightened" => Ok(Severity::Tightened),
            "reduced" => Ok(Severity::Reduced),
            _ => Err(UnknownLabel {
                what: "severity",
                value: text.to_string(),
                expected: "normal, tightened or reduced",
            }),
        }
    }
}

/// Where a part stands for its next lot: a severity, or acceptance discontinued.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum InspectionState {
    /// Normal inspection.
    Normal,
    /// Tightened inspection.
    Tightened,
    /// Reduced inspection.
    Reduced,
    /// Acceptance discontinued until corrective action is recorded.
    Discontinued,
}

impl InspectionState {
    /// The state of a part on `severity`, or discontinued.
    pub fn of(severity: Severity, discontinued: bool) -> InspectionState {
        match (discontinued, severity) {
            (true, _) => InspectionState::Discontinued,
            (false, Severity::Normal) => InspectionState::Normal,
            (false, Severity::Tightened) => InspectionState::Tightened,
            (false, Severity::Reduced) => InspectionState::Reduced,
        }
    }

    /// The lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            InspectionState::Normal => "normal",
            InspectionState::Tightened => "tightened",
            InspectionState::Reduced => "reduced",
            InspectionState::Discontinued => "discontinued",
        }
    }
}

impl fmt::Display for InspectionState {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// A single attribute sampling plan, as picked from a scheme's tables.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct AttributePlan {
    /// Code letter of the row the plan was taken from (after following arrows).
    pub code_letter: String,
    /// Code letter the lot size gives (the scheme's Table I), before any arrow; absent in
    /// records written before it was kept.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lot_size_letter: Option<String>,
    /// Units to inspect (the lot size when `hundred_percent`).
    pub sample_size: u64,
    /// Acceptance number Ac: accept with this many defectives or fewer.
    pub accept: u64,
    /// Rejection number Re: reject with this many or more. Under reduced inspection
    /// Re may exceed Ac + 1; a count between them accepts but reinstates normal.
    pub reject: u64,
    /// Severity whose table the plan came from.
    pub severity: Severity,
    /// True when the table's sample reached the lot size, so every unit is inspected.
    pub hundred_percent: bool,
}

/// Everything measured on one test's curve.
///
/// `None` means "not measured"; the reason is in [`CurveMetrics::rate_unavailable`]
/// (for the rate and what derives from it) or in [`CurveMetrics::notes`]. Keys of the
/// angle maps are angles written as `45` or `22.5`.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct CurveMetrics {
    /// Cycle the metrics come from (from 1).
    pub evaluated_cycle: u32,
    /// Number of cycles in the curve.
    pub cycles: u32,
    /// Spring rate: least-squares slope of torque on angle in the window, N·mm/°.
    pub rate_nmm_per_deg: Option<f64>,
    /// R² of that fit.
    pub rate_r2: Option<f64>,
    /// Standard error of the rate, N·mm/°.
    pub rate_stderr_nmm_per_deg: Option<f64>,
    /// Intercept of the fit at 0°, N·mm.
    pub intercept_nmm: Option<f64>,
    /// Free (zero-torque) angle α0 = −intercept / rate, degrees.
    pub free_angle_deg: Option<f64>,
    /// Why the rate (and intercept, free angle, linearity) is missing, in words.
    pub rate_unavailable: Option<String>,
    /// Torque on the loading stroke at requested angles, N·mm.
    pub torque_nmm_at: BTreeMap<String, f64>,
    /// (load − unload) / load torque at requested angles, %.
    pub hysteresis_pct_at: BTreeMap<String, f64>,
    /// (loading area − unloading area) / loading area over the common angle range, %.
    pub energy_loss_pct: Option<f64>,
    /// Largest |residual| from the fitted line in the window, % of the maximum torque.
    pub linearity_pct: Option<f64>,
    /// Largest torque on the evaluated loading stroke, N·mm.
    pub max_torque_nmm: f64,
    /// Largest angle reached on the evaluated loading stroke, degrees.
    pub max_angle_deg: f64,
    /// Secant rate between [`CurveMetrics::secant_deg`], N·mm/°.
    pub secant_rate_nmm_per_deg: Option<f64>,
    /// Angles the secant rate was asked between, degrees.
    pub secant_deg: Option<[f64; 2]>,
    /// Shift of α0 from the first to the last cycle (positive: moved towards the load), degrees.
    pub set_deg: Option<f64>,
    /// Tested deflection `[start, end]` the window is a fraction of, degrees.
    pub deflection_deg: [f64; 2],
    /// Evaluation window actually used, `[lo, hi]`, degrees.
    pub window_deg: [f64; 2],
    /// Loading points inside the window.
    pub points_in_window: usize,
    /// Plain-word notes on anything asked for that could not be measured.
    pub notes: Vec<String>,
}

/// The key of an angle in [`CurveMetrics`]' angle maps: `45.0` → `"45"`, `22.5` → `"22.5"`.
pub fn angle_key(angle_deg: f64) -> String {
    format!("{angle_deg}")
}

/// A start time as rigs write it, made comparable: `YYYY-MM-DDTHH:MM:SS.fff`.
///
/// Read forms: ISO 8601 (`2026-12-01T14:03`, `2026-12-01 14:03:07.5`, an offset or `Z`
/// after the time is ignored, so rigs of one plant must share a clock) and day-first
/// dotted dates (`01.12.2026 14:03`). Anything else gives `None`: such tests sort after
/// the ones with a readable time, never by a guess.
pub fn start_key(started: &str) -> Option<String> {
    let text = started.trim();
    let (date, time) = text.split_once(['T', ' ']).unwrap_or((text, "00:00"));
    let (year, month, day) = if let Some((y, rest)) = date.split_once('-') {
        let (m, d) = rest.split_once('-')?;
        (y, m, d)
    } else {
        let (d, rest) = date.split_once('.')?;
        let (m, y) = rest.split_once('.')?;
        (y, m, d)
    };
    let number = |s: &str, digits: std::ops::RangeInclusive<usize>, max: u32| -> Option<u32> {
        let ok = digits.contains(&s.len()) && s.bytes().all(|b| b.is_ascii_digit());
        ok.then(|| s.parse::<u32>().ok()).flatten().filter(|v| *v <= max)
    };
    let year = number(year, 4..=4, 9999)?;
    let month = number(month, 1..=2, 12).filter(|m| *m >= 1)?;
    let day = number(day, 1..=2, 31).filter(|d| *d >= 1)?;
    let time = time.trim().trim_end_matches('Z');
    let time = time.split(['+']).next().unwrap_or(time);
    let mut parts = time.splitn(3, ':');
    let hour = number(parts.next()?, 1..=2, 23)?;
    let minute = number(parts.next()?, 2..=2, 59)?;
    let (second, fraction) = match parts.next() {
        None => (0, String::new()),
        Some(sec) => {
            let (whole, frac) = sec.split_once(['.', ',']).unwrap_or((sec, ""));
            let frac: String = frac.chars().take_while(|c| c.is_ascii_digit()).collect();
            (number(whole, 2..=2, 60)?, frac)
        }
    };
    Some(format!("{year:04}-{month:02}-{day:02}T{hour:02}:{minute:02}:{second:02}.{fraction:0<9}"))
}

/// A start time as seconds since 1970-01-01T00:00 on the plant's clock (the same forms
/// [`start_key`] reads); `None` when it cannot be read.
pub fn start_seconds(started: &str) -> Option<f64> {
    let key = start_key(started)?;
    let number = |range: std::ops::Range<usize>| key.get(range).and_then(|s| s.parse::<i64>().ok());
    let (year, month, day) = (number(0..4)?, number(5..7)?, number(8..10)?);
    let (hour, minute, second) = (number(11..13)?, number(14..16)?, number(17..19)?);
    let fraction: f64 = format!("0.{}", key.get(20..)?).parse().ok()?;
    // Days from the civil date (proleptic Gregorian), as in H. Hinnant's `days_from_civil`.
    let y = if month <= 2 { year - 1 } else { year };
    let era = y.div_euclid(400);
    let year_of_era = y - era * 400;
    let day_of_year = (153 * (month + if month > 2 { -3 } else { 9 }) + 2) / 5 + day - 1;
    let day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
    let days = era * 146_097 + day_of_era - 719_468;
    Some((days * 86_400 + hour * 3_600 + minute * 60 + second) as f64 + fraction)
}

/// The order tests are drawn in when it matters (which retest counts, which n tests a
/// plan counts): by start time, then serial, then file; tests without a readable start
/// time come after those with one. File names never decide before times and serials.
pub fn test_order(a: &TestRecord, b: &TestRecord) -> std::cmp::Ordering {
    let key = |t: &TestRecord| t.started.as_deref().and_then(start_key);
    let (ka, kb) = (key(a), key(b));
    let by_time = match (&ka, &kb) {
        (Some(x), Some(y)) => x.cmp(y),
        (Some(_), None) => std::cmp::Ordering::Less,
        (None, Some(_)) => std::cmp::Ordering::Greater,
        (None, None) => std::cmp::Ordering::Equal,
    };
    by_time.then_with(|| a.serial.cmp(&b.serial)).then_with(|| a.file.cmp(&b.file))
}

/// Whether a test counts toward its lot's sample.
#[derive(Debug, Clone, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(tag = "status", rename_all = "lowercase")]
pub enum TestStatus {
    /// The test counts.
    #[default]
    Counted,
    /// The file's bytes are identical to an earlier file's: counted once, under that file.
    Duplicate {
        /// The file that is counted.
        same_as: String,
    },
    /// The same serial was tested again later: the later test counts.
    Superseded {
        /// The file of the test that counts instead.
        by: String,
    },
    /// A reference ("master") spring's verification of its rig: not a test of any lot.
    Reference,
}

impl TestStatus {
    /// True for a test that counts toward its lot.
    pub fn is_counted(&self) -> bool {
        matches!(self, TestStatus::Counted)
    }

    /// The lower-case label.
    pub fn as_str(&self) -> &'static str {
        match self {
            TestStatus::Counted => "counted",
            TestStatus::Duplicate { .. } => "duplicate",
            TestStatus::Superseded { .. } => "superseded",
            TestStatus::Reference => "reference",
        }
    }
}

/// How a free swing's amplitude falls over the record.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum DecayShape {
    /// By a constant ratio per swing: viscous (velocity-proportional) damping.
    Exponential,
    /// By a constant amount per swing: dry (Coulomb) friction.
    Linear,
    /// Too little decay, or too much scatter, to tell the two apart.
    Undetermined,
}

/// What a free-swing (free-decay) test measured: the figures outputs carry per test.
///
/// The physics crate's analysis holds more (every peak, the fit's residual); this is the
/// part a lot report, `tests.csv`, a sink or the history needs.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SwingMetrics {
    /// The whole inertia the spring swung, kg·m², when known.
    pub inertia_kgm2: Option<f64>,
    /// Where the inertia came from: `export` (its metadata) or `spec` (`test.inertia_kgm2`).
    pub inertia_from: Option<String>,
    /// Damped period, s.
    pub period_s: f64,
    /// Observed swing frequency 1/period, Hz.
    pub frequency_hz: f64,
    /// Undamped natural frequency ω0/2π, Hz.
    pub natural_frequency_hz: f64,
    /// Logarithmic decrement per period.
    pub log_decrement: f64,
    /// Damping ratio ζ.
    pub damping_ratio: f64,
    /// Torsion constant κ = I·ω0², N·mm/rad, when the inertia is known.
    pub kappa_nmm_per_rad: Option<f64>,
    /// Dynamic rate κ·π/180, N·mm/°, when the inertia is known.
    pub rate_nmm_per_deg: Option<f64>,
    /// Period at large amplitude against small amplitude, percent.
    pub amplitude_dependence_pct: f64,
    /// Whether the amplitude dependence exceeds the analysis' flag limit.
    pub amplitude_dependence_flagged: bool,
    /// How the amplitude falls.
    pub decay: DecayShape,
    /// Dry-friction torque, N·mm, when the decay is linear and the inertia known.
    pub friction_torque_nmm: Option<f64>,
    /// Complete swings analysed.
    pub swings: usize,
    /// Amplitude of the first analysed peak, degrees.
    pub initial_amplitude_deg: f64,
    /// Equilibrium angle, degrees.
    pub equilibrium_deg: f64,
    /// What a reader should know about the numbers.
    pub notes: Vec<String>,
}

/// The rate a part's drawing predicts and how a test's measured rate compares with it.
///
/// A plausibility check on the rig, the wire and the coil count: a ratio outside the
/// band is a caution for the engineer, never a verdict on the part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TheoryRate {
    /// Theoretical rate E·d⁴/(3667·D·n) from the spec's geometry and material, N·mm/° (EN 13906-3).
    pub rate_nmm_per_deg: f64,
    /// Measured rate (static least squares, or dynamic from a swing) divided by the theoretical one.
    pub ratio: Option<f64>,
    /// The band `[lo, hi]` a plausible ratio lies in.
    pub band: [f64; 2],
    /// True when the ratio lies outside the band.
    pub outside_band: bool,
}

/// One evaluated test: where it came from, what was measured, how it was judged.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TestRecord {
    /// Test identifier (serial and the start of the content hash).
    pub test_id: String,
    /// The export file, as found.
    pub file: String,
    /// BLAKE3 hash of the export's bytes, hex.
    pub content_hash: String,
    /// Serial number of the tested part.
    pub serial: Option<String>,
    /// Part number the export names.
    pub part: Option<String>,
    /// Lot the export names.
    pub lot: Option<String>,
    /// Rig that ran the test.
    pub rig: Option<String>,
    /// Operator.
    pub operator: Option<String>,
    /// Start time as the rig wrote it.
    pub started: Option<String>,
    /// Rig format that read the file.
    pub rig_format: String,
    /// Spec file judged against, when there was one.
    pub spec_file: Option<String>,
    /// Drawing revision of that spec.
    pub spec_revision: Option<String>,
    /// The curve metrics (all absent for a free-decay test, which has no torque curve).
    #[serde(flatten)]
    pub metrics: CurveMetrics,
    /// The free-swing figures, for a free-decay test; absent for a torque curve.
    #[serde(default)]
    pub swing: Option<SwingMetrics>,
    /// The drawing's theoretical rate and this test's measured/theory ratio, when the spec's
    /// geometry gives one.
    #[serde(default)]
    pub theory: Option<TheoryRate>,
    /// Verdict, absent when there was no spec to judge against.
    pub verdict: Option<Verdict>,
    /// Findings per characteristic.
    pub findings: Vec<Finding>,
    /// Whether the test counts toward its lot (duplicates and superseded retests do not).
    #[serde(flatten)]
    pub status: TestStatus,
}

impl TestRecord {
    /// The verdict used for counting: a test without one cannot be judged, so it is invalid.
    pub fn verdict_or_invalid(&self) -> Verdict {
        self.verdict.unwrap_or(Verdict::Invalid)
    }

    /// The kind of record the test came from.
    pub fn kind(&self) -> crate::curve::RecordKind {
        if self.swing.is_some() {
            crate::curve::RecordKind::FreeDecay
        } else {
            crate::curve::RecordKind::TorqueCurve
        }
    }

    /// The rate this test measured: the least-squares rate of a torque curve, or the
    /// dynamic rate of a free swing.
    pub fn measured_rate_nmm_per_deg(&self) -> Option<f64> {
        match &self.swing {
            Some(swing) => swing.rate_nmm_per_deg,
            None => self.metrics.rate_nmm_per_deg,
        }
    }

    /// The serial, or the file when the export gave none.
    pub fn label(&self) -> &str {
        self.serial.as_deref().unwrap_or(&self.file)
    }
}

/// What a ground of a lot decision is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case", tag = "topic", content = "class")]
pub enum GroundTopic {
    /// The part's switching standing (which severity applies and why).
    Switching,
    /// The evidence as a whole: missing spec, missing tests, wrong part numbers.
    Evidence,
    /// One characteristic class's attribute plan.
    Class(CharacteristicClass),
    /// The variables (k-method) plan.
    Variables,
}

/// One reason behind a lot's disposition.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Ground {
    /// What the ground is about.
    #[serde(flatten)]
    pub topic: GroundTopic,
    /// The disposition this ground alone leads to, when it leads to one.
    pub outcome: Option<Disposition>,
    /// The ground in words.
    pub text: String,
}

impl Ground {
    /// A ground that leads to `outcome`.
    pub fn leading(topic: GroundTopic, outcome: Disposition, text: impl Into<String>) -> Ground {
        Ground { topic, outcome: Some(outcome), text: text.into() }
    }

    /// A ground that informs but decides nothing.
    pub fn note(topic: GroundTopic, text: impl Into<String>) -> Ground {
        Ground { topic, outcome: None, text: text.into() }
    }
}

/// One characteristic class's attribute plan and what the lot showed under it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ClassDecision {
    /// The class.
    pub class: CharacteristicClass,
    /// The plan (zero-acceptance classes carry Ac 0 / Re 1).
    pub plan: AttributePlan,
    /// AQL of the plan, percent (absent for zero-acceptance classes).
    pub aql_pct: Option<f64>,
    /// Valid tests counted under the plan.
    pub tested: u64,
    /// Defectives among them.
    pub defectives: u64,
    /// Defectives among valid tests beyond those counted.
    pub defectives_beyond_sample: u64,
    /// Invalid tests in the lot.
    pub invalid: u64,
    /// This class's outcome.
    pub outcome: Disposition,
}

/// The variables (k-method) plan and what the lot showed under it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariablesDecision {
    /// Characteristic judged, e.g. `rate`.
    pub characteristic: String,
    /// Designed sample size.
    pub sample_size: u64,
    /// Measured values the lot's valid tests gave (the plan judges the first `sample_size`).
    #[serde(default)]
    pub values: u64,
    /// Acceptability constant, when the plan could be designed.
    pub k: Option<f64>,
    /// Sample mean of the values used.
    pub mean: Option<f64>,
    /// σ (known) or s (estimated) of the values used.
    pub spread: Option<f64>,
    /// True when σ is the plant's known process σ, false when s is estimated.
    pub sigma_known: bool,
    /// (U − mean)/spread, when there is an upper limit.
    pub q_upper: Option<f64>,
    /// (mean − L)/spread, when there is a lower limit.
    pub q_lower: Option<f64>,
    /// Outcome of the plan.
    pub outcome: Disposition,
}

/// What a decided lot contributes to its part's switching history.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SwitchingCount {
    /// Severity the lot was inspected under.
    pub severity: Severity,
    /// Units in the sample of the plan whose count feeds the switching rules.
    pub sample_size: u64,
    /// Defectives found in that sample.
    pub defectives: u64,
    /// AQL of that plan, percent (0 for zero-acceptance and variables plans).
    pub aql_pct: f64,
    /// Accepted on reduced inspection with defectives between Ac and Re (back to normal).
    pub between_ac_and_re: bool,
}

/// A lot's decision with its grounds, as the sampling crate makes it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotDecision {
    /// The disposition.
    pub disposition: Disposition,
    /// Severity the lot was inspected under (absent when it could not be sampled at all).
    pub severity: Option<Severity>,
    /// Every ground, in the order they were found.
    pub grounds: Vec<Ground>,
    /// Index in `grounds` of the one that decided the disposition.
    pub deciding: Option<usize>,
    /// Per-class plans and counts.
    pub classes: Vec<ClassDecision>,
    /// The variables plan's result, when the part has one.
    pub variables: Option<VariablesDecision>,
    /// The class whose plan is shown as "the plan" (the one asking for the most parts).
    pub shown_class: Option<CharacteristicClass>,
    /// What the lot feeds into its part's switching history (absent for held lots).
    pub switching: Option<SwitchingCount>,
}

impl LotDecision {
    /// A held lot with one ground.
    pub fn hold(topic: GroundTopic, text: impl Into<String>, severity: Option<Severity>) -> LotDecision {
        LotDecision {
            disposition: Disposition::Hold,
            severity,
            grounds: vec![Ground::leading(topic, Disposition::Hold, text)],
            deciding: Some(0),
            classes: Vec::new(),
            variables: None,
            shown_class: None,
            switching: None,
        }
    }

    /// The ground that decided the disposition.
    pub fn deciding_ground(&self) -> Option<&Ground> {
        self.deciding.and_then(|i| self.grounds.get(i))
    }

    /// The plan shown for the lot (see [`LotDecision::shown_class`]).
    pub fn shown_plan(&self) -> Option<&ClassDecision> {
        self.shown_class.and_then(|class| self.classes.iter().find(|c| c.class == class))
    }

    /// Adds a ground after the decision was made (it decides nothing).
    pub fn note(&mut self, topic: GroundTopic, text: impl Into<String>) {
        self.grounds.push(Ground::note(topic, text));
    }

    /// The plan whose ground decided the disposition; `None` when the lot was decided on
    /// the evidence or its standing (no tests, a broken spec, acceptance discontinued…).
    pub fn deciding_plan(&self) -> Option<DecidingPlan<'_>> {
        match self.deciding_ground()?.topic {
            GroundTopic::Class(class) => {
                self.classes.iter().find(|c| c.class == class).map(DecidingPlan::Class)
            }
            GroundTopic::Variables => self.variables.as_ref().map(DecidingPlan::Variables),
            GroundTopic::Switching | GroundTopic::Evidence => None,
        }
    }

    /// Every plan of the lot, most serious class first and the variables plan last, each
    /// with what the lot showed under it and whether it decided the disposition.
    pub fn plan_rows(&self) -> Vec<PlanRow> {
        let deciding = self.deciding_ground().map(|g| g.topic);
        let mut rows: Vec<PlanRow> = self
            .classes
            .iter()
            .map(|c| PlanRow {
                kind: if c.aql_pct.is_some() { PlanKind::Attribute } else { PlanKind::ZeroAcceptance },
                class: Some(c.class),
                characteristic: None,
                severity: c.plan.severity,
                lot_size_letter: c.plan.lot_size_letter.clone(),
                code_letter: Some(c.plan.code_letter.clone()),
                sample_size: c.plan.sample_size,
                accept: Some(c.plan.accept),
                reject: Some(c.plan.reject),
                k: None,
                aql_pct: c.aql_pct,
                hundred_percent: c.plan.hundred_percent,
                tested: c.tested,
                defectives: Some(c.defectives),
                outcome: c.outcome,
                deciding: deciding == Some(GroundTopic::Class(c.class)),
            })
            .collect();
        if let Some(v) = &self.variables {
            rows.push(PlanRow {
                kind: PlanKind::Variables,
                class: None,
                characteristic: Some(v.characteristic.clone()),
                severity: self.severity.unwrap_or(Severity::Normal),
                lot_size_letter: None,
                code_letter: None,
                sample_size: v.sample_size,
                accept: None,
                reject: None,
                k: v.k,
                aql_pct: None,
                hundred_percent: false,
                tested: v.values.min(v.sample_size),
                defectives: None,
                outcome: v.outcome,
                deciding: deciding == Some(GroundTopic::Variables),
            });
        }
        rows
    }
}

/// The plan that decided a lot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DecidingPlan<'a> {
    /// A characteristic class's attribute (or zero-acceptance) plan.
    Class(&'a ClassDecision),
    /// The variables plan.
    Variables(&'a VariablesDecision),
}

/// The kind of a [`PlanRow`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum PlanKind {
    /// An attribute plan from the scheme's tables at an AQL.
    Attribute,
    /// The code letter's sample size, accepted only on zero defectives.
    ZeroAcceptance,
    /// A variables (k-method) plan.
    Variables,
}

/// One plan applied to a lot, flat, as the reports and `summary.json` list it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanRow {
    /// Attribute, zero-acceptance or variables.
    pub kind: PlanKind,
    /// The characteristic class of an attribute or zero-acceptance plan.
    pub class: Option<CharacteristicClass>,
    /// The characteristic a variables plan judges.
    pub characteristic: Option<String>,
    /// Severity whose table the plan came from (a zero-acceptance plan under reduced
    /// inspection keeps the normal sample, so it says normal).
    pub severity: Severity,
    /// Code letter the lot size gives, before any arrow.
    pub lot_size_letter: Option<String>,
    /// Code letter of the plan used, after following the table's arrows.
    pub code_letter: Option<String>,
    /// Sample size n.
    pub sample_size: u64,
    /// Acceptance number Ac.
    pub accept: Option<u64>,
    /// Rejection number Re.
    pub reject: Option<u64>,
    /// Acceptability constant k of a variables plan.
    pub k: Option<f64>,
    /// AQL of an attribute plan, percent.
    pub aql_pct: Option<f64>,
    /// Every unit of the lot is inspected.
    pub hundred_percent: bool,
    /// Valid tests (or measured values) counted under the plan.
    pub tested: u64,
    /// Defectives among them (attribute plans).
    pub defectives: Option<u64>,
    /// This plan's outcome.
    pub outcome: Disposition,
    /// True for the plan whose ground decided the lot's disposition.
    pub deciding: bool,
}

/// The plan shown for a lot in `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanSummary {
    /// Sample-size code letter.
    pub code_letter: Option<String>,
    /// Sample size.
    pub sample_size: u64,
    /// Acceptance number.
    pub accept: Option<u64>,
    /// Rejection number.
    pub reject: Option<u64>,
    /// Severity the lot was inspected under.
    pub severity: Severity,
}

/// Rate statistics of a lot in `summary.json`.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct RateSummary {
    /// Mean rate, N·mm/°.
    pub mean: Option<f64>,
    /// Standard deviation, N·mm/°.
    pub sd: Option<f64>,
    /// Cp.
    pub cp: Option<f64>,
    /// Cpk.
    pub cpk: Option<f64>,
    /// Lower 95 % bound on Cpk.
    pub cpk_lower_95: Option<f64>,
    /// Pp.
    pub pp: Option<f64>,
    /// Ppk.
    pub ppk: Option<f64>,
    /// Anderson–Darling p-value.
    pub normality_p: Option<f64>,
    /// How the indices were computed (`normal`, `percentile`…).
    pub method: Option<String>,
}

/// A lot's statistics of one characteristic, with the drawing's limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CharacteristicStats {
    /// Characteristic name, e.g. `rate`, `free_angle`, `torque@60`.
    pub characteristic: String,
    /// Unit label, e.g. `N·mm/°`.
    pub unit: String,
    /// Lower specification limit.
    pub lower: Option<f64>,
    /// Upper specification limit.
    pub upper: Option<f64>,
    /// The figures.
    #[serde(flatten)]
    pub capability: Capability,
}

impl RateSummary {
    /// The summary of a lot's rate capability.
    pub fn of(capability: &Capability) -> RateSummary {
        RateSummary {
            mean: capability.mean,
            sd: capability.sd,
            cp: capability.cp,
            cpk: capability.cpk,
            cpk_lower_95: capability.cpk_lower_95,
            pp: capability.pp,
            ppk: capability.ppk,
            normality_p: capability.normality_p,
            method: Some(capability.method.as_str().to_string()),
        }
    }
}

/// A file that was not turned into a result, and why.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RejectedFile {
    /// The file as found.
    pub file: String,
    /// The reason, in words a person can act on.
    pub reason: String,
    /// The lot the file belongs to, when that could be told without reading it whole.
    #[serde(default)]
    pub lot: Option<String>,
    /// How the lot was told.
    #[serde(default)]
    pub lot_from: Option<LotSource>,
}

impl RejectedFile {
    /// A rejected file whose lot is not known.
    pub fn new(file: impl Into<String>, reason: impl Into<String>) -> RejectedFile {
        RejectedFile { file: file.into(), reason: reason.into(), lot: None, lot_from: None }
    }
}

/// How the lot of a file that could not be read was told.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum LotSource {
    /// From the file's metadata lines, read before the problem.
    Metadata,
    /// From the file's name or folder, which holds a lot of the shift's lot list.
    FileName,
}

/// A part spec file that did not load; lots of its part are held.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct SpecProblem {
    /// The spec file.
    pub file: String,
    /// The part the file names, when that much could be read.
    pub part: Option<String>,
    /// What is wrong, with line and field.
    pub reason: String,
}

/// Exports of a lot that is not on the shift's lot list: evaluated, not decided.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct UnlistedLot {
    /// The lot the exports name (`None`: the exports name no lot).
    pub lot: Option<String>,
    /// Part numbers the exports name.
    pub parts: Vec<String>,
    /// Counted tests.
    pub tested: u64,
    /// Counted tests that failed.
    pub failed: u64,
    /// Counted tests that could not be judged.
    pub invalid: u64,
    /// The export files.
    pub files: Vec<String>,
}

/// A rig that tested parts of a lot, with what the plant config records of its calibration.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RigUse {
    /// Rig name as the exports give it.
    pub rig: String,
    /// Tests of the lot run on it.
    pub tests: u64,
    /// Latest start time of those tests, as the rig wrote it.
    pub last_test: Option<String>,
    /// Calibration due date from the plant config; `None` when the config records none.
    pub calibration_due: Option<String>,
    /// True when a test of the lot started after the calibration due date.
    pub lapsed: bool,
    /// False when the plant config does not list the rig.
    pub listed: bool,
}

/// Who signs a lot acceptance report. Names come only from the plant config or the
/// command line; a missing one leaves a blank line to sign on.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Approval {
    /// Who ran or supervised the tests.
    #[serde(default)]
    pub tested_by: Option<String>,
    /// Who reviewed the results.
    #[serde(default)]
    pub reviewed_by: Option<String>,
    /// Who releases (or rejects) the lot.
    #[serde(default)]
    pub released_by: Option<String>,
}

impl Approval {
    /// `self`, with each name `other` gives put in place of this one's.
    pub fn overridden_by(&self, other: &Approval) -> Approval {
        let pick = |a: &Option<String>, b: &Option<String>| {
            b.clone().or_else(|| a.clone()).filter(|name| !name.trim().is_empty())
        };
        Approval {
            tested_by: pick(&self.tested_by, &other.tested_by),
            reviewed_by: pick(&self.reviewed_by, &other.reviewed_by),
            released_by: pick(&self.released_by, &other.released_by),
        }
    }
}

/// A file whose bytes repeat an earlier file's, counted once.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct DuplicateFile {
    /// The repeated file (not counted).
    pub file: String,
    /// The file that is counted.
    pub same_as: String,
    /// Lot the export names, if any.
    pub lot: Option<String>,
}

/// An earlier test of a serial that was tested again.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct SupersededTest {
    /// Serial tested twice.
    pub serial: String,
    /// The earlier test's file (not counted).
    pub file: String,
    /// Its start time as the rig wrote it.
    pub started: Option<String>,
    /// The file of the later test, which counts.
    pub by: String,
}

/// What the lot list says of a lot's wire and coiling.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct LotWire {
    /// Coiler that made the lot.
    pub coiler: Option<String>,
    /// Wire material lot.
    pub wire_lot: Option<String>,
    /// Measured wire diameter, mm.
    pub wire_d_mm: Option<f64>,
    /// Measured mean coil diameter, mm.
    pub mean_d_mm: Option<f64>,
}

/// One decided lot, as `summary.json`, the reports, sinks and the history carry it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotRecord {
    /// Lot.
    pub lot: String,
    /// Part.
    pub part: String,
    /// Units in the lot.
    pub quantity: u64,
    /// The disposition.
    pub disposition: Disposition,
    /// Tests that count toward the lot.
    pub tested: u64,
    /// Counted tests that failed.
    pub failed: u64,
    /// Counted tests that could not be judged.
    pub invalid: u64,
    /// The plan shown (the class with the largest sample).
    pub plan: Option<PlanSummary>,
    /// Where the part stands for its next lot, after this lot's outcome.
    pub next_severity: Option<InspectionState>,
    /// Rate statistics.
    pub rate: Option<RateSummary>,
    /// Grounds of the disposition, in words.
    pub grounds: Vec<String>,
    /// The ground that decided the disposition, in words (one of `grounds`).
    #[serde(default)]
    pub decided_by: Option<String>,
    /// The HTML report, relative to the output folder.
    pub report_html: String,
    /// The Markdown report, relative to the output folder.
    pub report_md: String,
    /// Files of this lot whose bytes repeat another file's.
    pub duplicates: Vec<DuplicateFile>,
    /// Earlier tests of serials tested again.
    pub superseded: Vec<SupersededTest>,
    /// Every plan applied to the lot (each class's and the variables plan), the deciding one marked.
    #[serde(default)]
    pub plans: Vec<PlanRow>,
    /// The spec file judged against.
    #[serde(default)]
    pub spec_file: Option<String>,
    /// Its drawing revision.
    #[serde(default)]
    pub spec_revision: Option<String>,
    /// Export files of this lot that could not be read.
    #[serde(default)]
    pub rejected_files: Vec<RejectedFile>,
    /// Rigs that tested the lot, with their calibration due dates.
    #[serde(default)]
    pub rigs: Vec<RigUse>,
    /// The lot's wire: its material lot and measured diameter (mm) and the measured mean
    /// coil diameter (mm), as the lot list gives them; trending sets rate changes beside them.
    #[serde(default)]
    pub wire: LotWire,
    /// The full decision, with structured grounds and every class's plan.
    #[serde(skip)]
    pub decision: Option<LotDecision>,
    /// Statistics of every toleranced characteristic (rate first).
    #[serde(skip)]
    pub statistics: Vec<CharacteristicStats>,
}

impl LotRecord {
    /// The severity the lot was inspected under, and the next lot's when this one changed it.
    pub fn severity_label(&self) -> String {
        let used = self.plan.as_ref().map(|p| p.severity.as_str());
        let next = self.next_severity.map(InspectionState::as_str);
        match (used, next) {
            (Some(used), Some(next)) if next != used => format!("{used} → {next}"),
            (Some(used), _) => used.to_string(),
            (None, Some(next)) => format!("→ {next}"),
            (None, None) => "-".to_string(),
        }
    }

    /// The ground that decided the disposition, in words.
    pub fn deciding_ground(&self) -> Option<&str> {
        self.decision.as_ref().and_then(|d| d.deciding_ground()).map(|g| g.text.as_str())
    }
}

/// The shift as a whole: `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ShiftRecord {
    /// Shift name (the shift folder's name).
    pub shift: String,
    /// Export files found (the lot list excluded).
    pub files_total: u64,
    /// Files read and evaluated.
    pub files_accepted: u64,
    /// Files rejected, with reasons.
    pub files_rejected: Vec<RejectedFile>,
    /// Lots, in lot-list order.
    pub lots: Vec<LotRecord>,
    /// Tests whose lot is not on the shift's lot list (kept, not decided).
    pub unlisted_tests: Vec<String>,
    /// Sinks that failed, with reasons (results are kept all the same).
    pub sink_failures: Vec<String>,
    /// The switching record the severities came from and went to, if the plant keeps one.
    pub switching_record: Option<String>,
    /// Cautions.
    pub cautions: Vec<String>,
    /// Files whose bytes repeat another file's, counted once.
    pub duplicates: Vec<DuplicateFile>,
    /// Lots found in the exports but not on the lot list (evaluated, not decided).
    #[serde(default)]
    pub unlisted_lots: Vec<UnlistedLot>,
    /// Part spec files that did not load.
    #[serde(default)]
    pub spec_problems: Vec<SpecProblem>,
    /// Files of the shift folder that are not exports (the lot list), skipped by name.
    #[serde(default)]
    pub skipped_files: Vec<RejectedFile>,
    /// Warnings that decided nothing (an export from a rig the plant config does not list…).
    #[serde(default)]
    pub warnings: Vec<String>,
    /// Each rig's reference-spring verification in the shift (empty when the plant
    /// config records no reference spring).
    #[serde(default)]
    pub rig_verifications: Vec<RigVerification>,
    /// The shift's plan against what was tested, when a plan was found.
    #[serde(default)]
    pub plan: Option<PlanComparison>,
}

/// Where a rig stands after the shift's reference-spring checks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum VerificationStatus {
    /// Checked with its reference spring, and every check passed.
    Verified,
    /// A check deviated beyond the allowed deviation or could not be measured.
    Failed,
    /// No reference-spring export of the rig in the shift.
    Missing,
}

impl VerificationStatus {
    /// The lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            VerificationStatus::Verified => "verified",
            VerificationStatus::Failed => "failed",
            VerificationStatus::Missing => "missing",
        }
    }
}

/// One reference-spring export: the torque measured at the check angle against the
/// certified torque.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReferenceCheck {
    /// The export file.
    pub file: String,
    /// Serial of the reference spring.
    pub serial: String,
    /// Start time as the rig wrote it.
    pub started: Option<String>,
    /// Angle the torque is certified at, degrees.
    pub check_angle_deg: f64,
    /// Certified torque at that angle, N·mm.
    pub certified_torque_nmm: f64,
    /// Torque measured on the loading stroke at that angle, N·mm (absent: not reached).
    pub measured_torque_nmm: Option<f64>,
    /// (measured − certified) / certified, %.
    pub deviation_pct: Option<f64>,
    /// Largest deviation that passes, %.
    pub allowed_deviation_pct: f64,
    /// True when the deviation is within the allowed one.
    pub passed: bool,
}

/// A rig's reference-spring verification for one shift.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RigVerification {
    /// The rig.
    pub rig: String,
    /// Serial of the reference spring the plant config records for it, if any.
    pub reference: Option<String>,
    /// Verified, failed or missing.
    pub status: VerificationStatus,
    /// Why, in words (what a lot report says for a lot tested on the rig).
    pub reason: String,
    /// The reference-spring exports of the rig, in file order.
    pub checks: Vec<ReferenceCheck>,
}

/// One listed lot: what the plan asked for and what was tested.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlannedAgainstTested {
    /// Lot.
    pub lot: String,
    /// Rig the plan put it on (absent: left out of the plan).
    pub planned_rig: Option<String>,
    /// Parts the plan asked to test.
    pub planned_samples: Option<u64>,
    /// Planned start of its tests, plant-local ISO 8601.
    pub planned_start: Option<String>,
    /// Why the plan left it out, when it did.
    pub unplanned_reason: Option<String>,
    /// Tests that count toward the lot.
    pub tested: u64,
    /// Rigs its counted tests ran on, sorted (`unknown` for exports that name none).
    pub tested_rigs: Vec<String>,
    /// How reality left the plan, in words (empty when it followed it).
    pub remarks: Vec<String>,
}

/// A lot tested on a rig the plan refused for it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TestedOnRefusedRig {
    /// Lot.
    pub lot: String,
    /// Rig.
    pub rig: String,
    /// Counted tests of the lot on that rig.
    pub tests: u64,
    /// The plan's reasons for refusing the rig.
    pub reasons: Vec<String>,
}

/// The shift's plan against reality.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanComparison {
    /// The plan file read.
    pub plan_file: String,
    /// How the plan was made (`atcs+local-search`…).
    pub method: String,
    /// One row per listed lot, in lot-list order.
    pub lots: Vec<PlannedAgainstTested>,
    /// Lots tested on a rig the plan refused for them.
    pub tested_on_refused_rigs: Vec<TestedOnRefusedRig>,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dispositions_rank_reject_over_hold_over_accept() {
        let worst = [Disposition::Accept, Disposition::Reject, Disposition::Hold].into_iter().max();
        assert_eq!(worst, Some(Disposition::Reject));
        assert!(Disposition::Hold > Disposition::Accept);
    }

    #[test]
    fn severity_labels_round_trip_and_refuse_others() {
        for severity in Severity::ALL {
            assert_eq!(severity.as_str().parse::<Severity>(), Ok(severity));
        }
        let err = "bogus".parse::<Severity>().unwrap_err();
        assert!(err.to_string().contains("`bogus` is not a severity"), "{err}");
    }

    #[test]
    fn test_status_serialises_flat_beside_the_record_fields() {
        let status = TestStatus::Superseded { by: "b.csv".into() };
        let json = serde_json::to_value(&status).unwrap();
        assert_eq!(json, serde_json::json!({"status": "superseded", "by": "b.csv"}));
        assert!(!status.is_counted());
        assert!(TestStatus::default().is_counted());
    }

    #[test]
    fn start_times_in_either_form_compare_and_count_seconds() {
        assert_eq!(start_key("2026-12-01T14:03").as_deref(), Some("2026-12-01T14:03:00.000000000"));
        assert_eq!(start_key("01.12.2026 14:03:07,5").as_deref(), Some("2026-12-01T14:03:07.500000000"));
        assert_eq!(start_key("2026-12-01 14:03:07Z"), start_key("2026-12-01T14:03:07"));
        for bad in ["", "yesterday", "2026-13-01T10:00", "2026-12-01T25:00", "12/01/2026 10:00"] {
            assert_eq!(start_key(bad), None, "{bad}");
        }
        // Source: POSIX time of 2000-01-01T00:00:00Z is 946684800 (IEEE Std 1003.1, "Seconds Since the Epoch").
        assert_eq!(start_seconds("2000-01-01T00:00"), Some(946_684_800.0));
        // Common practice, no published source: one day and 90.5 s later.
        assert_eq!(start_seconds("2000-01-02T00:01:30.5"), Some(946_684_800.0 + 86_400.0 + 90.5));
        // Common practice, no published source: a leap day, as Python's datetime gives it (1709208000).
        assert_eq!(start_seconds("29.02.2024 12:00"), Some(1_709_208_000.0));
    }

    fn class(
        class: CharacteristicClass,
        n: u64,
        ac: u64,
        aql: Option<f64>,
        d: u64,
        outcome: Disposition,
    ) -> ClassDecision {
        ClassDecision {
            class,
            plan: AttributePlan {
                code_letter: "J".into(),
                lot_size_letter: Some("H".into()),
                sample_size: n,
                accept: ac,
                reject: ac + 1,
                severity: Severity::Normal,
                hundred_percent: false,
            },
            aql_pct: aql,
            tested: n,
            defectives: d,
            defectives_beyond_sample: 0,
            invalid: 0,
            outcome,
        }
    }

    #[test]
    fn plan_rows_mark_the_plan_whose_ground_decided() {
        use CharacteristicClass::*;
        let decision = LotDecision {
            disposition: Disposition::Reject,
            severity: Some(Severity::Normal),
            grounds: vec![
                Ground::leading(GroundTopic::Class(Critical), Disposition::Accept, "critical: accept"),
                Ground::leading(GroundTopic::Class(Major), Disposition::Reject, "major: reject"),
            ],
            deciding: Some(1),
            classes: vec![
                class(Critical, 80, 0, None, 0, Disposition::Accept),
                class(Major, 80, 2, Some(1.0), 3, Disposition::Reject),
            ],
            variables: None,
            shown_class: Some(Critical),
            switching: None,
        };
        let rows = decision.plan_rows();
        assert_eq!(rows.len(), 2);
        assert_eq!(rows.iter().filter(|r| r.deciding).count(), 1);
        let major = rows.iter().find(|r| r.deciding).unwrap();
        assert_eq!(
            (major.class, major.accept, major.reject, major.defectives),
            (Some(Major), Some(2), Some(3), Some(3))
        );
        assert_eq!(major.kind, PlanKind::Attribute);
        assert_eq!((major.lot_size_letter.as_deref(), major.code_letter.as_deref()), (Some("H"), Some("J")));
        assert_eq!(rows[0].kind, PlanKind::ZeroAcceptance);
        match decision.deciding_plan() {
            Some(DecidingPlan::Class(c)) => assert_eq!(c.class, Major),
            other => panic!("{other:?}"),
        }
        // A lot held on the evidence has no deciding plan.
        let held = LotDecision::hold(GroundTopic::Evidence, "no tests", None);
        assert!(held.deciding_plan().is_none() && held.plan_rows().is_empty());
    }

    #[test]
    fn approval_names_from_the_command_line_win_and_blanks_stay_blank() {
        let config =
            Approval { tested_by: Some("A".into()), reviewed_by: Some("B".into()), released_by: None };
        let line =
            Approval { reviewed_by: Some("C".into()), released_by: Some("  ".into()), ..Approval::default() };
        let merged = config.overridden_by(&line);
        assert_eq!(merged.tested_by.as_deref(), Some("A"));
        assert_eq!(merged.reviewed_by.as_deref(), Some("C"));
        assert_eq!(merged.released_by, None, "a blank name is no name");
    }

    #[test]
    fn severity_label_shows_a_change_of_severity() {
        let mut lot = LotRecord {
            lot: "L1".into(),
            part: "P".into(),
            quantity: 10,
            disposition: Disposition::Reject,
            tested: 2,
            failed: 1,
            invalid: 0,
            plan: Some(PlanSummary {
                code_letter: Some("B".into()),
                sample_size: 3,
                accept: Some(0),
                reject: Some(1),
                severity: Severity::Normal,
            }),
            next_severity: Some(InspectionState::Tightened),
            rate: None,
            grounds: Vec::new(),
            decided_by: None,
            report_html: String::new(),
            report_md: String::new(),
            duplicates: Vec::new(),
            superseded: Vec::new(),
            plans: Vec::new(),
            spec_file: None,
            spec_revision: None,
            rejected_files: Vec::new(),
            rigs: Vec::new(),
            wire: Default::default(),
            decision: None,
            statistics: Vec::new(),
        };
        assert_eq!(lot.severity_label(), "normal → tightened");
        lot.next_severity = Some(InspectionState::Normal);
        assert_eq!(lot.severity_label(), "normal");
    }
}
