//! The shift run: every export of a shift folder read or accounted for, every part
//! judged, every listed lot decided, reports written, sinks fed.
//!
//! Exports stream through the evaluator (one result row and a thinned curve kept
//! per test); lots are then decided one by one, and each decided lot is pushed to
//! the report writer and to every configured sink. A failing sink is recorded in
//! the summary and never changes a disposition.

use crate::evaluate::{evaluate_files, EvaluateOptions, Evaluated, SpecSource, TestResult};
use crate::plant::{Plant, PlantError, SpecLibrary};
use crate::plugins::{check_manifests, PluginCatalog};
use crate::switching::{
    describe_standing, part_rules, transition_consequence, EntryKind, PartStanding, SwitchingEntry,
    SwitchingRecord,
};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use twistlot_ingest::expand_inputs;
use twistlot_model::plugin::SinkManifest;
use twistlot_model::spec::{torque_label, ClassPlan};
use twistlot_model::yaml::parse_document;
use twistlot_model::{CharacteristicClass, Limits, Manifest, PartSpec, PluginKind, Verdict};
use twistlot_report as report;
use twistlot_sampling::{
    attribute_oc, dispose, LotEvidence, Outcome, Scheme, Severity, TestEvidence, VariablesEvidence,
};
use twistlot_stats::{capability, Capability, CheckSet};

/// The shift's lot list file, inside the shift folder.
pub const LOT_LIST: &str = "lots.yaml";
/// Points kept per curve for the overlay chart.
const PREVIEW_POINTS: usize = 300;
/// Curves drawn per lot (flagged ones first).
const CURVES_PER_CHART: usize = 40;

/// One lot waiting for a decision.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ListedLot {
    /// Lot identifier, as the exports carry it.
    pub lot: String,
    /// Part number.
    pub part: String,
    /// Parts in the lot.
    pub quantity: u64,
    /// When it must ship.
    #[serde(default)]
    pub ship_by: Option<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct LotListFile {
    lots: Vec<ListedLot>,
}

/// Why a shift could not be run at all (problems with single files never stop it).
#[derive(Debug, thiserror::Error)]
pub enum ShiftError {
    /// The plant config or a spec is broken.
    #[error(transparent)]
    Plant(#[from] PlantError),
    /// The lot list is missing or broken.
    #[error("{0}")]
    LotList(String),
    /// A plugin set that cannot work (two formats with one name, a check that does not compile…).
    #[error("{0}")]
    Plugins(String),
    /// Reports could not be written.
    #[error("{0}")]
    Output(String),
    /// The switching record in the plant's history folder cannot be read or written.
    #[error("{0}")]
    History(String),
}

/// The plan a lot was decided under, as `summary.json` carries it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanSummary {
    /// Sample-size code letter.
    pub code_letter: Option<String>,
    /// Sample size.
    pub sample_size: u64,
    /// Acceptance number.
    pub accept: Option<u64>,
    /// Rejection number.
    pub reject: Option<u64>,
    /// Severity.
    pub severity: String,
}

/// Rate statistics, as `summary.json` carries them.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RateSummary {
    /// Mean rate, N·mm/°.
    pub mean: Option<f64>,
    /// Standard deviation, N·mm/°.
    pub sd: Option<f64>,
    /// Cp.
    pub cp: Option<f64>,
    /// Cpk.
    pub cpk: Option<f64>,
    /// Lower 95 % bound on Cpk (Bissell).
    pub cpk_lower_95: Option<f64>,
    /// Pp.
    pub pp: Option<f64>,
    /// Ppk.
    pub ppk: Option<f64>,
    /// Anderson–Darling p-value.
    pub normality_p: Option<f64>,
    /// `normal` or `percentile`.
    pub method: Option<String>,
}

/// One lot in `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LotSummary {
    /// Lot.
    pub lot: String,
    /// Part.
    pub part: String,
    /// Quantity.
    pub quantity: u64,
    /// `accept`, `reject` or `hold`.
    pub disposition: String,
    /// Tests evaluated.
    pub tested: u64,
    /// Tests that failed.
    pub failed: u64,
    /// Tests that could not be judged.
    pub invalid: u64,
    /// The plan (the class with the largest sample decides which one is shown).
    pub plan: Option<PlanSummary>,
    /// Severity the part's next lot is inspected under, after this lot's outcome.
    pub next_severity: Option<String>,
    /// Rate statistics.
    pub rate: Option<RateSummary>,
    /// Grounds of the disposition.
    pub grounds: Vec<String>,
    /// The HTML report, relative to the output folder.
    pub report_html: String,
    /// The Markdown report, relative to the output folder.
    pub report_md: String,
}

impl LotSummary {
    /// The severity the lot was inspected under, and the next lot's when this one changed it.
    pub fn severity_label(&self) -> String {
        let used = self.plan.as_ref().map(|p| p.severity.clone());
        match (used, &self.next_severity) {
            (Some(used), Some(next)) if *next != used => format!("{used} → {next}"),
            (Some(used), _) => used,
            (None, Some(next)) => format!("→ {next}"),
            (None, None) => "-".to_string(),
        }
    }
}

/// A rejected file in `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RejectedSummary {
    /// The file.
    pub file: String,
    /// Why.
    pub reason: String,
}

/// `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ShiftSummaryJson {
    /// Shift name (the folder's name).
    pub shift: String,
    /// Export files found (the lot list excluded).
    pub files_total: u64,
    /// Files read and evaluated.
    pub files_accepted: u64,
    /// Files rejected, with reasons.
    pub files_rejected: Vec<RejectedSummary>,
    /// Lots.
    pub lots: Vec<LotSummary>,
    /// Tests whose lot is not on the lot list (kept, not decided).
    pub unlisted_tests: Vec<String>,
    /// Sinks that failed, with reasons (results are kept all the same).
    pub sink_failures: Vec<String>,
    /// The switching record the severities came from and went to, if the plant keeps one.
    pub switching_record: Option<String>,
    /// Cautions.
    pub cautions: Vec<String>,
}

/// What a shift run produced.
#[derive(Debug, Clone)]
pub struct ShiftOutcome {
    /// The summary written to `summary.json`.
    pub summary: ShiftSummaryJson,
    /// Files written.
    pub written: Vec<PathBuf>,
}

/// Reads the shift's lot list.
pub fn load_lot_list(shift_dir: &Path) -> Result<Vec<ListedLot>, ShiftError> {
    let path = shift_dir.join(LOT_LIST);
    let text = std::fs::read_to_string(&path).map_err(|e| {
        ShiftError::LotList(format!("{}: cannot read the shift's lot list: {e}", path.display()))
    })?;
    let file: LotListFile =
        parse_document(&path.display().to_string(), &text).map_err(|e| ShiftError::LotList(e.to_string()))?;
    Ok(file.lots)
}

fn write(path: &Path, text: &str, written: &mut Vec<PathBuf>) -> Result<(), ShiftError> {
    if let Some(parent) = path.parent() {
        std::fs::create_dir_all(parent)
            .map_err(|e| ShiftError::Output(format!("cannot create {}: {e}", parent.display())))?;
    }
    std::fs::write(path, text)
        .map_err(|e| ShiftError::Output(format!("cannot write {}: {e}", path.display())))?;
    written.push(path.to_path_buf());
    Ok(())
}

/// Runs the shift. `progress(done, total)` is called as exports finish.
pub fn run_shift(
    plant: &Plant,
    shift_dir: &Path,
    out_dir: &Path,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<ShiftOutcome, ShiftError> {
    let catalog = PluginCatalog::discover(&plant.plugin_folders());
    if let Some(err) = catalog.errors().first() {
        return Err(ShiftError::Plugins(format!("a plugin does not load, fix it first: {err}")));
    }
    let formats = catalog.rig_formats().map_err(ShiftError::Plugins)?;
    let checks = CheckSet::new(&check_manifests(&catalog)).map_err(|e| ShiftError::Plugins(e.to_string()))?;
    let specs = SpecLibrary::load_dir(&plant.parts_dir)?;
    let lots = load_lot_list(shift_dir)?;
    let sinks = configured_sinks(&catalog, &plant.sinks)?;
    let schemes = catalog.sampling_schemes();
    let renderer = report::Renderer::new(&report::shipped_templates_dir(), plant.templates_dir.as_deref())
        .map_err(|e| ShiftError::Output(e.to_string()))?;
    // Read before any export so that a broken record stops the run before work is spent on it.
    let mut record = match &plant.history_dir {
        Some(dir) => Some(SwitchingRecord::load(dir).map_err(|e| ShiftError::History(e.to_string()))?),
        None => None,
    };

    let lot_list_path = shift_dir.join(LOT_LIST);
    let (files, missing) = expand_inputs(&[shift_dir.to_path_buf()]);
    let files: Vec<PathBuf> = files.into_iter().filter(|p| *p != lot_list_path).collect();
    let total = files.len();
    let done = std::sync::atomic::AtomicUsize::new(0);
    let options = EvaluateOptions { window: None, rig_format: None, preview_points: PREVIEW_POINTS };
    let results =
        evaluate_files(&files, &formats, &SpecSource::ByPart(specs.clone()), &checks, &options, &|| {
            let finished = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            progress(finished, total);
        });

    let mut rejected: Vec<RejectedSummary> =
        missing.iter().map(|e| RejectedSummary { file: e.file.clone(), reason: e.reason() }).collect();
    let mut by_lot: BTreeMap<String, Vec<TestResult>> = BTreeMap::new();
    for result in results {
        match result {
            Evaluated::Test(test) => {
                by_lot.entry(test.lot.clone().unwrap_or_default()).or_default().push(*test)
            }
            Evaluated::Rejected(err) => {
                rejected.push(RejectedSummary { file: err.file.clone(), reason: err.reason() })
            }
        }
    }
    let accepted_files: u64 = by_lot.values().map(|v| v.len() as u64).sum();
    let shift = shift_dir.file_name().map(|n| n.to_string_lossy().to_string()).unwrap_or_default();
    let cautions = report::default_cautions();
    let generated_at = utc_stamp();
    let mut written = Vec::new();
    let mut summary = ShiftSummaryJson {
        shift: shift.clone(),
        files_total: total as u64 + missing.len() as u64,
        files_accepted: accepted_files,
        files_rejected: rejected,
        lots: Vec::new(),
        unlisted_tests: Vec::new(),
        sink_failures: Vec::new(),
        switching_record: record.as_ref().map(|r| r.path().display().to_string()),
        cautions: cautions.clone(),
    };
    let rejected_views: Vec<report::RejectedFile> = summary
        .files_rejected
        .iter()
        .map(|r| report::RejectedFile { file: r.file.clone(), reason: r.reason.clone() })
        .collect();

    let mut all_tests: Vec<report::TestRow> = Vec::new();
    let mut lot_lines = Vec::new();
    let mut standings: BTreeMap<String, PartStanding> = BTreeMap::new();
    let mut shift_entries: Vec<SwitchingEntry> = Vec::new();
    for listed in &lots {
        let tests = by_lot.remove(&listed.lot).unwrap_or_default();
        let spec_entry = specs.get(&listed.part);
        let rules = spec_entry.and_then(|e| part_rules(&e.spec, &schemes));
        let conditions = plant.switching.conditions(&listed.part);
        // A part's lots in this shift are fed in lot-list order, after its earlier shifts.
        let standing = rules.map(|rules| {
            standings.entry(listed.part.clone()).or_insert_with(|| match &record {
                Some(record) => record.standing_before(&listed.part, &shift, rules, &conditions),
                None => PartStanding::fresh(),
            })
        });
        let switching = standing.as_deref().zip(rules).map(|(standing, rules)| LotSwitching {
            severity: standing.state.severity,
            discontinued: standing.state.discontinued,
            ground: match &record {
                Some(record) => {
                    format!(
                        "{}, from the switching record {}",
                        describe_standing(standing, rules),
                        record.path().display()
                    )
                }
                None => "inspection severity normal: the plant config names no history folder, so no \
                         switching record is kept and every shift starts on normal inspection"
                    .to_string(),
            },
        });
        let mut decided = decide_lot(
            listed,
            &tests,
            spec_entry.map(|e| (&e.spec, e.path.as_path())),
            &schemes,
            switching.as_ref(),
        );
        let entry = SwitchingEntry {
            part: listed.part.clone(),
            shift: shift.clone(),
            lot: Some(listed.lot.clone()),
            kind: match decided.outcome {
                Outcome::Accept => EntryKind::Accept,
                Outcome::Reject => EntryKind::Reject,
                Outcome::Hold => EntryKind::Hold,
            },
            severity: decided.counts.as_ref().map(|c| c.severity),
            sample_size: decided.counts.as_ref().map_or(0, |c| c.sample_size),
            defectives: decided.counts.as_ref().map_or(0, |c| c.defectives),
            aql_pct: decided.counts.as_ref().map_or(0.0, |c| c.aql_pct),
            between_ac_and_re: decided.counts.as_ref().is_some_and(|c| c.between_ac_and_re),
            note: None,
        };
        let next_severity = match (standing, rules) {
            (Some(standing), Some(rules)) => {
                if let Some(transition) = standing.feed(&entry, rules, &conditions) {
                    decided.grounds.push(format!(
                        "under the scheme's switching rules this lot's outcome {} from its next lot on",
                        transition_consequence(transition)
                    ));
                }
                Some(if standing.state.discontinued {
                    "discontinued".to_string()
                } else {
                    standing.state.severity.as_str().to_string()
                })
            }
            _ => None,
        };
        shift_entries.push(entry);
        let lot_file = sanitize(&listed.lot);
        let report_html = format!("lots/{lot_file}.html");
        let report_md = format!("lots/{lot_file}.md");
        let context =
            lot_report_context(listed, &tests, &decided, &shift, &generated_at, &rejected_views, &cautions);
        let html =
            renderer.render("lot_report.html.j2", &context).map_err(|e| ShiftError::Output(e.to_string()))?;
        write(&out_dir.join(&report_html), &html, &mut written)?;
        let md =
            renderer.render("lot_report.md.j2", &context).map_err(|e| ShiftError::Output(e.to_string()))?;
        write(&out_dir.join(&report_md), &md, &mut written)?;
        let lot_summary = LotSummary {
            lot: listed.lot.clone(),
            part: listed.part.clone(),
            quantity: listed.quantity,
            disposition: decided.outcome.as_str().to_string(),
            tested: tests.len() as u64,
            failed: count(&tests, Verdict::Fail),
            invalid: count(&tests, Verdict::Invalid),
            plan: decided.plan.clone(),
            next_severity,
            rate: decided.rate.as_ref().map(rate_summary),
            grounds: decided.grounds.clone(),
            report_html: report_html.clone(),
            report_md,
        };
        for sink in &sinks {
            if let Err(message) = feed_sink(sink, &lot_summary, &tests, out_dir) {
                summary.sink_failures.push(format!("sink `{}`, lot {}: {message}", sink.0.name, listed.lot));
            }
        }
        lot_lines.push(report::LotLine {
            lot: listed.lot.clone(),
            part: listed.part.clone(),
            disposition: disposition_view(decided.outcome),
            tested: lot_summary.tested,
            failed: lot_summary.failed,
            invalid: lot_summary.invalid,
            severity: lot_summary.severity_label(),
            report_file: Some(report_html),
            grounds: decided.grounds.clone(),
        });
        all_tests.extend(tests.iter().map(test_row));
        summary.lots.push(lot_summary);
    }
    for (lot, tests) in by_lot {
        for test in &tests {
            summary.unlisted_tests.push(format!(
                "{} (lot `{}` is not on the shift's lot list)",
                test.file,
                if lot.is_empty() { "none" } else { &lot }
            ));
        }
        all_tests.extend(tests.iter().map(test_row));
    }

    let shift_view = report::ShiftSummary {
        shift: shift.clone(),
        generated_at,
        files_total: summary.files_total,
        files_accepted: summary.files_accepted,
        files_rejected: rejected_views,
        lots: lot_lines,
        cautions,
    };
    let html = renderer
        .render("shift_summary.html.j2", &shift_view)
        .map_err(|e| ShiftError::Output(e.to_string()))?;
    write(&out_dir.join("shift_summary.html"), &html, &mut written)?;
    let csv = renderer
        .render("tests.csv.j2", &report::TestsCsv { rows: all_tests })
        .map_err(|e| ShiftError::Output(e.to_string()))?;
    write(&out_dir.join("tests.csv"), &csv, &mut written)?;
    let json = serde_json::to_string_pretty(&summary).map_err(|e| ShiftError::Output(e.to_string()))?;
    write(&out_dir.join("summary.json"), &json, &mut written)?;
    // Last, so that the record only ever holds lots whose reports exist.
    if let Some(record) = &mut record {
        record.replace_shift(&shift, shift_entries);
        record.save().map_err(|e| {
            ShiftError::History(format!(
                "the reports are written, but the lots could not be added to the switching record: {e}"
            ))
        })?;
    }
    Ok(ShiftOutcome { summary, written })
}

fn count(tests: &[TestResult], verdict: Verdict) -> u64 {
    tests.iter().filter(|t| t.verdict == Some(verdict)).count() as u64
}

/// A file name from a lot identifier (lots are free text in exports).
fn sanitize(lot: &str) -> String {
    let name: String = lot
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.' { c } else { '_' })
        .collect();
    if name.is_empty() || name.starts_with('.') {
        format!("lot_{name}")
    } else {
        name
    }
}

/// The current UTC time as RFC 3339, for stamping outputs and record entries.
pub fn utc_stamp() -> String {
    let now = time::OffsetDateTime::now_utc();
    now.format(&time::format_description::well_known::Rfc3339)
        .unwrap_or_else(|_| now.unix_timestamp().to_string())
}

/// OC points (percent defective, probability of acceptance) and the lot's own point.
type OcChart = (Vec<(f64, f64)>, Option<(f64, f64)>);

/// Everything decided about one lot.
struct DecidedLot {
    outcome: Outcome,
    counts: Option<SwitchingCounts>,
    grounds: Vec<String>,
    plan: Option<PlanSummary>,
    plan_view: report::PlanView,
    rate: Option<Capability>,
    statistics: Vec<(String, String, Limits, Capability)>,
    oc: Option<OcChart>,
    spec: Option<(PartSpec, PathBuf)>,
}

fn hold(grounds: Vec<String>) -> DecidedLot {
    DecidedLot {
        outcome: Outcome::Hold,
        counts: None,
        grounds,
        plan: None,
        plan_view: report::PlanView::default(),
        rate: None,
        statistics: Vec::new(),
        oc: None,
        spec: None,
    }
}

/// Sampling schemes by plugin name, loaded once per run.
type Schemes = BTreeMap<String, Result<Scheme, String>>;

/// Where the lot's part stands under the switching rules when the lot comes up.
struct LotSwitching {
    severity: Severity,
    discontinued: bool,
    /// How the part came to that severity, for the grounds.
    ground: String,
}

/// What the switching record keeps of a decided lot: the plan shown and its count.
struct SwitchingCounts {
    severity: Severity,
    sample_size: u64,
    defectives: u64,
    aql_pct: f64,
    between_ac_and_re: bool,
}

fn decide_lot(
    listed: &ListedLot,
    tests: &[TestResult],
    spec: Option<(&PartSpec, &Path)>,
    schemes: &Schemes,
    switching: Option<&LotSwitching>,
) -> DecidedLot {
    let Some((spec, spec_path)) = spec else {
        return hold(vec![format!("no spec for part `{}` in the plant's parts folder", listed.part)]);
    };
    if tests.is_empty() {
        return hold(vec![format!("no accepted export carries lot `{}`", listed.lot)]);
    }
    let Some(sampling) = &spec.sampling else {
        return hold(vec![format!("the spec for `{}` names no sampling agreement", spec.part)]);
    };
    let scheme = match schemes.get(&sampling.scheme) {
        Some(Ok(scheme)) => scheme,
        Some(Err(message)) => return hold(vec![message.clone()]),
        None => return hold(vec![format!("there is no sampling-scheme plugin named `{}`", sampling.scheme)]),
    };
    let mut grounds = Vec::new();
    if let Some(switching) = switching {
        grounds.push(switching.ground.clone());
        if switching.discontinued {
            grounds.push(format!(
                "acceptance under `{}` is discontinued for part {}: no lot is accepted until the \
                 supplier's corrective action is recorded with `twistlot switching resume {}`",
                scheme.name, spec.part, spec.part
            ));
            return hold(grounds);
        }
    }
    let severity = switching.map_or(Severity::Normal, |s| s.severity);
    let wrong_part: Vec<&str> = tests
        .iter()
        .filter(|t| t.part.as_deref() != Some(spec.part.as_str()))
        .map(|t| t.file.as_str())
        .collect();
    if !wrong_part.is_empty() {
        grounds.push(format!(
            "{} test(s) carry another part number than the lot's `{}`: {}",
            wrong_part.len(),
            spec.part,
            wrong_part.join(", ")
        ));
    }
    let evidence_tests = tests
        .iter()
        .map(|t| TestEvidence {
            test_id: t.test_id.clone(),
            verdict: t.verdict.unwrap_or(Verdict::Invalid),
            findings: t.findings.clone(),
        })
        .collect();
    let rate_limits = spec.characteristics.rate_nmm_per_deg.as_ref().map(|r| r.limits()).unwrap_or_default();
    let rates: Vec<f64> = tests.iter().filter_map(|t| t.metrics.rate_nmm_per_deg).collect();
    let variables = sampling.variables.as_ref().map(|v| VariablesEvidence {
        limits: limits_for(spec, &v.characteristic).unwrap_or_default(),
        values: tests.iter().filter_map(|t| value_for(t, &v.characteristic)).collect(),
    });
    let evidence = LotEvidence {
        lot_size: listed.quantity,
        sampling: sampling.clone(),
        severity,
        tests: evidence_tests,
        variables,
    };
    let disposition = match dispose(&evidence, scheme) {
        Ok(d) => d,
        Err(err) => {
            grounds.push(format!("the lot could not be decided: {err}"));
            return hold(grounds);
        }
    };
    let mut outcome = disposition.outcome;
    if !wrong_part.is_empty() && outcome == Outcome::Accept {
        outcome = Outcome::Hold;
    }
    grounds.extend(disposition.grounds.iter().cloned());

    // The plan shown is the one that asks for the most parts; its class's defectives give the OC point.
    // Its severity is the lot's: a zero-acceptance class keeps the normal sample under reduced.
    let shown =
        disposition.plans.iter().max_by_key(|(class, plan)| (plan.sample_size, std::cmp::Reverse(**class)));
    let plan = shown.map(|(_, p)| PlanSummary {
        code_letter: Some(p.code_letter.clone()),
        sample_size: p.sample_size,
        accept: Some(p.accept),
        reject: Some(p.reject),
        severity: severity.as_str().to_string(),
    });
    let plan_view = match shown {
        Some((class, p)) => report::PlanView {
            scheme: scheme.name.clone(),
            code_letter: Some(p.code_letter.clone()),
            inspection_level: Some(sampling.level.clone()),
            aql_pct: match class_plan(sampling, *class) {
                ClassPlan::Attribute { aql_pct } => Some(*aql_pct),
                _ => None,
            },
            sample_size: p.sample_size,
            accept: Some(p.accept),
            reject: Some(p.reject),
            acceptability_k: disposition.variables.as_ref().and_then(|v| v.k),
            severity: severity.as_str().to_string(),
        },
        None => report::PlanView { scheme: scheme.name.clone(), ..report::PlanView::default() },
    };
    let oc = shown.map(|(class, p)| {
        let points: Vec<(f64, f64)> = attribute_oc(p.sample_size, p.accept, Some(listed.quantity), 30.0, 61)
            .into_iter()
            .map(|pt| (pt.defective_pct, pt.p_accept))
            .collect();
        let observed =
            disposition.classes.iter().find(|c| c.class == *class).filter(|c| c.tested > 0).map(|c| {
                let pct = 100.0 * c.defectives as f64 / c.tested as f64;
                (
                    pct,
                    twistlot_sampling::oc::attribute_p_accept(
                        p.sample_size,
                        p.accept,
                        Some(listed.quantity),
                        pct,
                    ),
                )
            });
        (points, observed)
    });

    let mut statistics = Vec::new();
    let rate = (!rates.is_empty()).then(|| capability(&rates, rate_limits));
    if let Some(cap) = &rate {
        statistics.push(("rate".to_string(), "N·mm/°".to_string(), rate_limits, cap.clone()));
    }
    if let Some(free) = &spec.characteristics.free_angle_deg {
        let values: Vec<f64> = tests.iter().filter_map(|t| t.metrics.free_angle_deg).collect();
        statistics.push(("free_angle".into(), "°".into(), free.limits(), capability(&values, free.limits())));
    }
    for torque in &spec.characteristics.torque_at {
        let key = twistlot_stats::angle_key(torque.angle_deg);
        let values: Vec<f64> =
            tests.iter().filter_map(|t| t.metrics.torque_nmm_at.get(&key).copied()).collect();
        statistics.push((
            torque_label(torque.angle_deg),
            "N·mm".into(),
            torque.limits(),
            capability(&values, torque.limits()),
        ));
    }
    // The reduced-inspection limit number is set by an AQL, so the record keeps the count of the
    // class with the strictest AQL plan; with no AQL plan, that of the plan shown.
    let aql_of = |class: &CharacteristicClass| match class_plan(sampling, *class) {
        ClassPlan::Attribute { aql_pct } => Some(*aql_pct),
        _ => None,
    };
    let strictest = disposition
        .plans
        .iter()
        .filter_map(|(class, p)| aql_of(class).map(|aql| (aql, class, p)))
        .min_by(|a, b| a.0.total_cmp(&b.0).then(b.2.sample_size.cmp(&a.2.sample_size)))
        .map(|(_, class, p)| (class, p));
    let counts = strictest.or(shown).map(|(class, p)| SwitchingCounts {
        severity: p.severity,
        sample_size: p.sample_size,
        defectives: disposition.classes.iter().find(|c| c.class == *class).map_or(0, |c| c.defectives),
        aql_pct: aql_of(class).unwrap_or(0.0),
        between_ac_and_re: disposition.reinstate_normal,
    });
    DecidedLot {
        outcome,
        counts,
        grounds,
        plan,
        plan_view,
        rate,
        statistics,
        oc,
        spec: Some((spec.clone(), spec_path.to_path_buf())),
    }
}

fn class_plan(sampling: &twistlot_model::spec::SamplingSpec, class: CharacteristicClass) -> &ClassPlan {
    match class {
        CharacteristicClass::Critical => &sampling.critical,
        CharacteristicClass::Major => &sampling.major,
        CharacteristicClass::Minor => &sampling.minor,
    }
}

fn limits_for(spec: &PartSpec, characteristic: &str) -> Option<Limits> {
    let c = &spec.characteristics;
    match characteristic {
        "rate" | "rate_nmm_per_deg" => c.rate_nmm_per_deg.as_ref().map(|r| r.limits()),
        "free_angle" | "free_angle_deg" => c.free_angle_deg.as_ref().map(|f| f.limits()),
        other => c.torque_at.iter().find(|t| torque_label(t.angle_deg) == other).map(|t| t.limits()),
    }
}

fn value_for(test: &TestResult, characteristic: &str) -> Option<f64> {
    match characteristic {
        "rate" | "rate_nmm_per_deg" => test.metrics.rate_nmm_per_deg,
        "free_angle" | "free_angle_deg" => test.metrics.free_angle_deg,
        other => other
            .strip_prefix("torque@")
            .and_then(|angle| angle.parse::<f64>().ok())
            .and_then(|angle| test.metrics.torque_nmm_at.get(&twistlot_stats::angle_key(angle)).copied()),
    }
}

fn rate_summary(cap: &Capability) -> RateSummary {
    RateSummary {
        mean: cap.mean,
        sd: cap.sd,
        cp: cap.cp,
        cpk: cap.cpk,
        cpk_lower_95: cap.cpk_lower_95,
        pp: cap.pp,
        ppk: cap.ppk,
        normality_p: cap.normality_p,
        method: serde_json::to_value(cap.method).ok().and_then(|v| v.as_str().map(str::to_string)),
    }
}

fn disposition_view(outcome: Outcome) -> report::Disposition {
    match outcome {
        Outcome::Accept => report::Disposition::Accept,
        Outcome::Reject => report::Disposition::Reject,
        Outcome::Hold => report::Disposition::Hold,
    }
}

fn test_row(t: &TestResult) -> report::TestRow {
    let findings: Vec<String> = t
        .findings
        .iter()
        .filter(|f| f.verdict != Verdict::Pass)
        .map(|f| format!("{}: {}", f.characteristic, f.message))
        .collect();
    report::TestRow {
        test_id: t.test_id.clone(),
        file: t.file.clone(),
        serial: t.serial.clone(),
        part: t.part.clone(),
        lot: t.lot.clone(),
        rig: t.rig.clone(),
        operator: t.operator.clone(),
        rate_nmm_per_deg: t.metrics.rate_nmm_per_deg,
        free_angle_deg: t.metrics.free_angle_deg,
        max_torque_nmm: Some(t.metrics.max_torque_nmm),
        verdict: t.verdict.unwrap_or(Verdict::Invalid),
        findings: findings.join("; "),
    }
}

fn lot_report_context(
    listed: &ListedLot,
    tests: &[TestResult],
    decided: &DecidedLot,
    shift: &str,
    generated_at: &str,
    rejected: &[report::RejectedFile],
    cautions: &[String],
) -> report::LotReport {
    let flagged: Vec<report::FlaggedPart> = tests
        .iter()
        .flat_map(|t| {
            t.findings.iter().filter(|f| f.verdict != Verdict::Pass).map(move |f| report::FlaggedPart {
                serial: t.serial.clone(),
                file: t.file.clone(),
                characteristic: f.characteristic.clone(),
                value: f.value,
                lower: f.lower,
                upper: f.upper,
                verdict: f.verdict,
                message: f.message.clone(),
            })
        })
        .collect();
    let statistics = decided
        .statistics
        .iter()
        .map(|(name, unit, limits, cap)| report::CharacteristicStats {
            characteristic: name.clone(),
            unit: unit.clone(),
            lower: limits.lower,
            upper: limits.upper,
            n: cap.n as u64,
            mean: cap.mean,
            sd: cap.sd,
            min: cap.min,
            max: cap.max,
            cp: cap.cp,
            cp_lower_95: cap.cp_lower_95,
            cpk: cap.cpk,
            cpk_lower_95: cap.cpk_lower_95,
            pp: cap.pp,
            ppk: cap.ppk,
            normality_p: cap.normality_p,
            method: serde_json::to_value(cap.method)
                .ok()
                .and_then(|v| v.as_str().map(str::to_string))
                .unwrap_or_default(),
        })
        .collect();
    let spec = decided.spec.as_ref();
    let rates: Vec<f64> = tests.iter().filter_map(|t| t.metrics.rate_nmm_per_deg).collect();
    let rate_spec = spec.and_then(|(s, _)| s.characteristics.rate_nmm_per_deg.as_ref());
    let fit = decided.rate.as_ref().and_then(|c| Some((c.mean?, c.sd?)));
    let histogram = report::rate_histogram_svg(
        &rates,
        rate_spec.and_then(|r| r.limits().lower),
        rate_spec.and_then(|r| r.limits().upper),
        rate_spec.map(|r| r.nominal),
        fit,
        "N·mm/°",
    );
    let mut ordered: Vec<&TestResult> = tests.iter().collect();
    ordered.sort_by_key(|t| t.verdict == Some(Verdict::Pass));
    let lines: Vec<report::CurveLine> = ordered
        .iter()
        .take(CURVES_PER_CHART)
        .filter_map(|t| {
            t.preview.as_ref().map(|p| report::CurveLine {
                label: t.serial.clone().unwrap_or_else(|| t.test_id.clone()),
                angle_deg: p.angle_deg.clone(),
                torque_nmm: p.torque_nmm.clone(),
                flagged: t.verdict != Some(Verdict::Pass),
            })
        })
        .collect();
    let windows: Vec<report::ToleranceWindow> = spec
        .map(|(s, _)| {
            s.characteristics
                .torque_at
                .iter()
                .map(|t| report::ToleranceWindow {
                    angle_deg: t.angle_deg,
                    lower_nmm: t.limits().lower,
                    upper_nmm: t.limits().upper,
                })
                .collect()
        })
        .unwrap_or_default();
    let curves = report::curves_svg(&lines, &windows);
    let (oc_points, oc_lot) = decided.oc.clone().unwrap_or_default();
    let oc = report::oc_curve_svg(&oc_points, oc_lot, "probability of accepting a lot");
    let chart = |result: Result<report::SvgMarkup, twistlot_report::ReportError>, empty: &str| {
        result.or_else(|_| report::rate_histogram_svg(&[], None, None, None, None, empty)).ok()
    };
    report::LotReport {
        generated_at: generated_at.to_string(),
        shift: shift.to_string(),
        part: listed.part.clone(),
        revision: spec.map(|(s, _)| s.revision.clone()).unwrap_or_default(),
        customer: spec.map(|(s, _)| s.customer.clone()),
        spec_file: spec.map(|(_, p)| p.display().to_string()).unwrap_or_else(|| "no spec".into()),
        lot: listed.lot.clone(),
        quantity: listed.quantity,
        plan: decided.plan_view.clone(),
        disposition: disposition_view(decided.outcome),
        grounds: decided.grounds.clone(),
        tested: tests.len() as u64,
        failed: count(tests, Verdict::Fail),
        invalid: count(tests, Verdict::Invalid),
        flagged,
        statistics,
        rejected_files: rejected.to_vec(),
        cautions: cautions.to_vec(),
        charts: report::Charts {
            rate_histogram_svg: chart(histogram, "rate").unwrap_or_default(),
            curves_svg: chart(curves, "curves").unwrap_or_default(),
            oc_curve_svg: chart(oc, "OC curve").unwrap_or_default(),
        },
    }
}

/// The sinks the plant names, with their folders.
fn configured_sinks(
    catalog: &PluginCatalog,
    names: &[String],
) -> Result<Vec<(SinkManifest, PathBuf)>, ShiftError> {
    let mut sinks = Vec::new();
    for name in names {
        let found = catalog.of_kind(PluginKind::Sink).find_map(|(path, m)| match m {
            Manifest::Sink(sink) if sink.name == *name => {
                Some((sink.clone(), path.parent().map(Path::to_path_buf).unwrap_or_default()))
            }
            _ => None,
        });
        match found {
            Some(sink) => sinks.push(sink),
            None => {
                return Err(ShiftError::Plugins(format!(
                    "the plant config names sink `{name}`, which no plugin folder holds"
                )))
            }
        }
    }
    Ok(sinks)
}

fn feed_sink(
    sink: &(SinkManifest, PathBuf),
    lot: &LotSummary,
    tests: &[TestResult],
    out_dir: &Path,
) -> Result<(), String> {
    let request = serde_json::json!({
        "protocol": twistlot_model::plugin::EXEC_PROTOCOL,
        "plugin": sink.0.name,
        "lot": lot,
        "tests": tests,
    });
    let out = std::path::absolute(out_dir).unwrap_or_else(|_| out_dir.to_path_buf());
    twistlot_ingest::exec::run_program(
        &sink.0.exec,
        &sink.1,
        &[("{out}", &out.to_string_lossy())],
        request.to_string().as_bytes(),
    )
    .map(|_| ())
}
