//! The shift run: every export of a shift folder read or accounted for, every part
//! judged, every listed lot decided, and every result pushed into the shift's sinks.
//!
//! The run has three steps, each in its own function so each can be tested alone:
//! 1. [`collect`]: exports stream through the evaluator in file order; one
//!    [`TestRecord`] is kept per file, and curves for the lot charts are chosen while
//!    streaming ([`CurveKeeper`]: flagged first, then a fixed number per lot).
//! 2. [`retests::settle`]: duplicate files and superseded retests stop counting.
//! 3. [`decide_and_push`]: tests go to the sinks in file order; each listed lot is
//!    decided by `sampling::decide_lot` at the severity its part's switching history
//!    earned, and goes to the sinks; the shift's record goes last.
//!
//! Reference-spring exports are marked before step 2 and verify their rigs
//! ([`crate::reference`]); when the output folder holds this shift's plan, the summary
//! sets it beside what was tested ([`crate::plan_check`]).

pub mod retests;

use crate::evaluate::{evaluate_each, CurvePreview, EvaluateOptions, Evaluated, SpecSource};
use crate::history::HistorySink;
use crate::open::{OpenError, OpenPlant};
use crate::outputs::{
    lot_file_name, verdict_counts, ExecSink, ReportWriter, SummaryJsonWriter, TestsCsvWriter,
};
use crate::plan_check::{PlanFile, PlanFileError};
use crate::plant::UnknownRigs;
use crate::reference;
use crate::sink::{LotCurve, LotEvent, ShiftStart, SinkSet, StoppedBy};
use crate::switching::{
    conditions, describe_standing, part_rules, transition_consequence, PartStanding, SwitchingEntry,
    SwitchingRecord,
};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use twistlot_history::HistoryStore;
use twistlot_ingest::{expand_inputs, IngestError};
use twistlot_model::record::{start_key, start_seconds};
use twistlot_model::spec::{torque_label, DYNAMIC_RATE, FREQUENCY};
use twistlot_model::{
    CharacteristicStats, DocumentError, GroundTopic, Limits, ListedLot, LotDecision, LotList, LotRecord,
    LotSource, LotWire, PlanSummary, RateSummary, RejectedFile, RigUse, ShiftRecord, TestRecord, TestStatus,
    UnlistedLot, Verdict,
};
use twistlot_sampling::{characteristic_value, decide_lot, LotInput};
use twistlot_stats::{anderson_darling, angle_key, lot_capability, OrderedValue, Subgrouping};

/// The shift's lot list file, inside the shift folder.
pub const LOT_LIST: &str = "lots.yaml";
/// Points kept per curve for the overlay chart.
pub const PREVIEW_POINTS: usize = 300;
/// Curves drawn per lot (failed and invalid ones first); a lot with more tests says how
/// many of them its chart draws.
pub const CURVES_PER_CHART: usize = 60;

/// Why a shift could not be run at all (problems with single files never stop it).
#[derive(Debug, thiserror::Error)]
pub enum ShiftError {
    /// The lot list cannot be read.
    #[error("cannot read the shift's lot list {}", path.display())]
    ReadLotList {
        /// The file.
        path: PathBuf,
        /// What the file system said.
        #[source]
        source: std::io::Error,
    },
    /// The lot list does not parse.
    #[error("the shift's lot list is not valid")]
    LotList(#[source] DocumentError),
    /// Something the plant provides (templates, sinks) cannot be set up.
    #[error(transparent)]
    Open(#[from] OpenError),
    /// The plant's history cannot be opened or read.
    #[error("cannot use the plant's history")]
    History(#[source] crate::history::HistoryOpenError),
    /// An output that must not go missing could not be written.
    #[error(transparent)]
    Sink(#[from] StoppedBy),
    /// The shift's plan is in the output folder but cannot be read.
    #[error(transparent)]
    Plan(#[from] PlanFileError),
    /// The shift folder holds no export at all, so there is nothing to decide a lot on.
    #[error(
        "the shift folder {} holds no rig exports (only {}); copy the rigs' exports into it, or check the path",
        .dir.display(),
        if .skipped.is_empty() { "nothing".to_string() } else { .skipped.join(", ") }
    )]
    NoExports {
        /// The shift folder.
        dir: PathBuf,
        /// The files it does hold that are not exports.
        skipped: Vec<String>,
    },
}

/// Files of a shift folder that are not exports, by name, with what they are. A folder
/// walk skips them (and says so); a file named on the command line is always read.
pub fn not_an_export(path: &Path) -> Option<&'static str> {
    let name = path.file_name()?.to_str()?;
    if name == LOT_LIST {
        Some("the shift's lot list, not an export")
    } else if name.starts_with("plan.") || name.starts_with("plan-") {
        Some("the shift's test plan, not an export")
    } else {
        None
    }
}

/// The files to read from command-line paths: every file of each folder (recursively)
/// except the shift's own files ([`not_an_export`]), which are returned as skipped; paths
/// that do not exist come back as rejections.
pub fn shift_inputs(inputs: &[PathBuf]) -> (Vec<PathBuf>, Vec<IngestError>, Vec<RejectedFile>) {
    let (mut files, mut missing, mut skipped) = (Vec::new(), Vec::new(), Vec::new());
    for input in inputs {
        let (found, not_found) = expand_inputs(std::slice::from_ref(input));
        missing.extend(not_found);
        if !input.is_dir() {
            files.extend(found);
            continue;
        }
        for file in found {
            match not_an_export(&file) {
                Some(what) => skipped.push(RejectedFile::new(file.display().to_string(), what)),
                None => files.push(file),
            }
        }
    }
    (files, missing, skipped)
}

/// The listed lot a file's name or folders name, as a whole word (`L2612-041-018.dat`
/// → `L2612-041`); the longest wins, so `L-10` is not taken for `L-1`.
pub fn lot_from_file_name<'a>(file: &str, lots: &'a [ListedLot]) -> Option<&'a str> {
    let word_edge = |c: Option<char>| c.is_none_or(|c| !c.is_ascii_alphanumeric());
    lots.iter()
        .map(|l| l.lot.as_str())
        .filter(|lot| !lot.is_empty())
        .filter(|lot| {
            file.match_indices(lot).any(|(at, _)| {
                word_edge(file[..at].chars().next_back()) && {
                    // A lot followed by `-NNN` (a part number in the lot) still counts; `L-1` in `L-10` does not.
                    let next = file[at + lot.len()..].chars().next();
                    word_edge(next)
                }
            })
        })
        .max_by_key(|lot| lot.len())
}

/// Reads the shift's lot list.
pub fn load_lot_list(shift_dir: &Path) -> Result<Vec<ListedLot>, ShiftError> {
    Ok(read_lot_list(shift_dir)?.lots)
}

/// Reads the shift's lot list with its shift hours.
pub fn read_lot_list(shift_dir: &Path) -> Result<LotList, ShiftError> {
    let path = shift_dir.join(LOT_LIST);
    let text = std::fs::read_to_string(&path)
        .map_err(|source| ShiftError::ReadLotList { path: path.clone(), source })?;
    LotList::from_yaml(&path.display().to_string(), &text).map_err(ShiftError::LotList)
}

/// The current UTC time as RFC 3339 to the second, for record entries.
pub fn utc_stamp() -> String {
    let now = time::OffsetDateTime::now_utc();
    let now = now.replace_nanosecond(0).unwrap_or(now);
    now.format(&time::format_description::well_known::Rfc3339)
        .unwrap_or_else(|_| now.unix_timestamp().to_string())
}

/// Curves kept for each lot's overlay chart, chosen while the exports stream past.
///
/// At most `per_lot` curves per lot: flagged ones (failed or invalid) take a place
/// before passing ones, and among equals the earlier file keeps its place, so the
/// choice is the same on every run and never needs every curve at once.
#[derive(Debug, Default)]
pub struct CurveKeeper {
    per_lot: usize,
    lots: BTreeMap<String, Vec<KeptCurve>>,
    seen: BTreeMap<String, usize>,
}

#[derive(Debug)]
struct KeptCurve {
    test_index: usize,
    label: String,
    verdict: Option<Verdict>,
    flagged: bool,
    preview: CurvePreview,
}

impl CurveKeeper {
    /// A keeper of at most `per_lot` curves per lot.
    pub fn new(per_lot: usize) -> CurveKeeper {
        CurveKeeper { per_lot, ..CurveKeeper::default() }
    }

    /// Offers test `test_index`'s curve; it is kept or dropped at once.
    pub fn offer(&mut self, test_index: usize, test: &TestRecord, preview: CurvePreview) {
        let lot = test.lot.clone().unwrap_or_default();
        *self.seen.entry(lot.clone()).or_default() += 1;
        let flagged = test.verdict != Some(Verdict::Pass);
        let kept = self.lots.entry(lot).or_default();
        let curve = KeptCurve {
            test_index,
            label: test.label().to_string(),
            verdict: test.verdict,
            flagged,
            preview,
        };
        if kept.len() < self.per_lot {
            kept.push(curve);
        } else if flagged {
            if let Some(last_passing) = kept.iter().rposition(|c| !c.flagged) {
                kept.remove(last_passing);
                kept.push(curve);
            }
        }
    }

    /// The kept curves of `lot` whose tests still count, flagged first, with how many
    /// counted tests of the lot had a curve.
    pub fn take(&mut self, lot: &str, tests: &[TestRecord]) -> (Vec<LotCurve>, usize) {
        let mut kept = self.lots.remove(lot).unwrap_or_default();
        kept.retain(|c| tests.get(c.test_index).is_some_and(|t| t.status.is_counted()));
        kept.sort_by_key(|c| (!c.flagged, c.test_index));
        let offered = self.seen.get(lot).copied().unwrap_or(0);
        // Duplicates and superseded retests were offered too but are not drawn.
        let not_counted = tests
            .iter()
            .filter(|t| t.lot.as_deref().unwrap_or_default() == lot && !t.status.is_counted())
            .count();
        let seen = offered.saturating_sub(not_counted).max(kept.len());
        let curves = kept
            .into_iter()
            .map(|c| LotCurve { label: c.label, verdict: c.verdict, preview: c.preview })
            .collect();
        (curves, seen)
    }
}

/// What step 1 gathers from a shift folder.
#[derive(Debug, Default)]
pub struct CollectedTests {
    /// One record per evaluated file, in file order.
    pub tests: Vec<TestRecord>,
    /// Curves for the lot charts.
    pub curves: CurveKeeper,
    /// Files that were not evaluated, with the reason (and the lot, when the file's
    /// metadata named it before the problem).
    pub rejected: Vec<RejectedFile>,
    /// Export files found plus paths that could not be listed (skipped files excluded).
    pub files_total: u64,
    /// Files of the shift folder skipped by name because they are not exports.
    pub skipped: Vec<RejectedFile>,
    /// Warnings that decide nothing (exports from rigs the plant config does not list).
    pub warnings: Vec<String>,
}

/// Step 1: reads and evaluates every export of the shift folder, in file order.
///
/// The shift's own files (the lot list, a test plan) are skipped by name. An export from
/// a rig the plant config does not list is warned about, or rejected when the plant says
/// `unknown_rigs: refuse`.
pub fn collect(
    plant: &OpenPlant,
    shift_dir: &Path,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> CollectedTests {
    let (files, missing, skipped) = shift_inputs(&[shift_dir.to_path_buf()]);
    let total = files.len();
    let mut collected = CollectedTests {
        curves: CurveKeeper::new(CURVES_PER_CHART),
        rejected: missing.iter().map(|err| rejected_file(plant, err)).collect(),
        files_total: (total + missing.len()) as u64,
        skipped,
        ..CollectedTests::default()
    };
    let options = EvaluateOptions {
        preview_points: PREVIEW_POINTS,
        physics: plant.physics(),
        reference_angles: reference::reference_angles(plant),
        ..EvaluateOptions::default()
    };
    let rigs = RigCheck::of(plant);
    let mut unknown: BTreeMap<String, Vec<String>> = BTreeMap::new();
    let mut done = 0;
    evaluate_each(
        &files,
        &plant.formats,
        SpecSource::ByPart(&plant.specs),
        &plant.checks,
        &options,
        |evaluated| {
            match evaluated {
                Evaluated::Test { record, preview } => match rigs.problem(&record) {
                    Some(problem) if rigs.policy == UnknownRigs::Refuse => collected.rejected.push(RejectedFile {
                        lot: record.lot.clone(),
                        lot_from: record.lot.as_ref().map(|_| LotSource::Metadata),
                        ..RejectedFile::new(
                            record.file.clone(),
                            format!("{problem}; the plant config refuses exports from rigs it does not list (`unknown_rigs: refuse`)"),
                        )
                    }),
                    problem => {
                        if let Some(problem) = problem {
                            unknown.entry(problem).or_default().push(record.file.clone());
                        }
                        if let Some(preview) = preview {
                            collected.curves.offer(collected.tests.len(), &record, preview);
                        }
                        collected.tests.push(*record);
                    }
                },
                Evaluated::Rejected(err) => collected.rejected.push(rejected_file(plant, &err)),
            }
            done += 1;
            progress(done, total);
        },
    );
    if rigs.listed.is_empty() && !collected.tests.is_empty() {
        collected.warnings.push(
            "the plant config lists no rigs, so no export's rig could be checked against it (add them under `rigs:`)"
                .to_string(),
        );
    } else {
        for (problem, files) in unknown {
            let first = files.first().cloned().unwrap_or_default();
            collected.warnings.push(format!(
                "{problem}: {} export(s) evaluated all the same (first: {first}); list the rig under `rigs:` with its \
                 calibration due date, or set `unknown_rigs: refuse`",
                files.len()
            ));
        }
    }
    collected
}

/// A rejected file, with the lot its metadata lines name, if any (read again: only
/// rejected files pay for that).
fn rejected_file(plant: &OpenPlant, err: &IngestError) -> RejectedFile {
    let lot =
        twistlot_ingest::rejected_file_lot(Path::new(&err.file), &plant.formats, err.rig_format.as_deref());
    RejectedFile {
        lot_from: lot.as_ref().map(|_| LotSource::Metadata),
        lot,
        ..RejectedFile::new(err.file.clone(), err.reason())
    }
}

/// The plant's rig list, to check each export's rig against.
struct RigCheck {
    listed: Vec<String>,
    policy: UnknownRigs,
}

impl RigCheck {
    fn of(plant: &OpenPlant) -> RigCheck {
        let config = plant.config.as_ref();
        RigCheck {
            listed: config.map(|c| c.rigs.iter().map(|r| r.name.clone()).collect()).unwrap_or_default(),
            policy: config.map(|c| c.unknown_rigs).unwrap_or_default(),
        }
    }

    /// What is wrong with a test's rig, in words; `None` when the plant lists it (or lists
    /// no rigs at all, which is warned about once).
    fn problem(&self, test: &TestRecord) -> Option<String> {
        if self.listed.is_empty() {
            return None;
        }
        match &test.rig {
            Some(rig) if self.listed.contains(rig) => None,
            Some(rig) => Some(format!("rig `{rig}` is not in the plant config's rig list")),
            None => Some("the export names no rig".to_string()),
        }
    }
}

/// Each part's switching standing during a shift: replayed from the record before the
/// shift, then fed this shift's lots in lot-list order.
struct Standings<'a> {
    plant: &'a OpenPlant,
    record: Option<&'a SwitchingRecord>,
    /// This shift's lots: each part is judged from its entries before any of them.
    lots: Vec<String>,
    parts: BTreeMap<String, PartStanding>,
}

impl Standings<'_> {
    fn lot_standing(&mut self, part: &str) -> Option<twistlot_sampling::LotStanding> {
        let rules = part_rules(&self.plant.specs.get(part)?.spec, &self.plant.schemes)?;
        let conditions = conditions(self.plant, part);
        let standing = self.parts.entry(part.to_string()).or_insert_with(|| match self.record {
            Some(record) => record.standing_before(part, &self.lots, rules, &conditions),
            None => PartStanding::fresh(),
        });
        let explanation = match self.record {
            Some(record) => format!(
                "{}, from the switching record {}",
                describe_standing(standing, rules),
                record.path().display()
            ),
            None => "inspection severity normal: the plant config names no history folder, so no switching \
                     record is kept and every shift starts on normal inspection"
                .to_string(),
        };
        Some(standing.lot_standing(explanation))
    }

    /// Feeds a decided lot; returns the part's state for its next lot and notes a switch.
    fn feed(
        &mut self,
        part: &str,
        entry: &SwitchingEntry,
        decision: &mut LotDecision,
    ) -> Option<PartStanding> {
        let rules = part_rules(&self.plant.specs.get(part)?.spec, &self.plant.schemes)?;
        let conditions = conditions(self.plant, part);
        let standing = self.parts.get_mut(part)?;
        if let Some(transition) = standing.feed(entry, rules, &conditions) {
            decision.note(
                GroundTopic::Switching,
                format!(
                    "under the scheme's switching rules this lot's outcome {} from its next lot on",
                    transition_consequence(transition)
                ),
            );
        }
        Some(standing.clone())
    }
}

/// What step 3 works from besides the tests.
#[derive(Debug, Clone, Copy)]
pub struct ShiftRun<'a> {
    /// The opened plant.
    pub plant: &'a OpenPlant,
    /// Shift name.
    pub shift: &'a str,
    /// The shift's lot list.
    pub lots: &'a [ListedLot],
    /// The switching record as it was before the shift, when the plant keeps one.
    pub record: Option<&'a SwitchingRecord>,
    /// When the outputs were made, already formatted.
    pub generated_at: &'a str,
    /// Output folder.
    pub out_dir: &'a Path,
    /// The shift's plan and its file, when the output folder holds one.
    pub plan: Option<(&'a Path, &'a PlanFile)>,
}

/// Step 3: pushes the tests and the decided lots into `sinks`; returns the shift's record.
pub fn decide_and_push(
    run: &ShiftRun<'_>,
    collected: CollectedTests,
    duplicates: Vec<twistlot_model::DuplicateFile>,
    sinks: &mut SinkSet,
) -> Result<ShiftRecord, ShiftError> {
    let ShiftRun { plant, shift, lots, record, generated_at, out_dir, plan } = *run;
    let mut collected = collected;
    sinks.start(&ShiftStart { shift, plant: plant.name(), out_dir, generated_at })?;
    for test in &collected.tests {
        sinks.test(test)?;
    }
    // An unreadable file whose metadata did not name its lot may still name it in its path.
    for rejected in collected.rejected.iter_mut().filter(|r| r.lot.is_none()) {
        if let Some(lot) = lot_from_file_name(&rejected.file, lots) {
            rejected.lot = Some(lot.to_string());
            rejected.lot_from = Some(LotSource::FileName);
        }
    }
    let listed: std::collections::BTreeSet<&str> = lots.iter().map(|l| l.lot.as_str()).collect();
    let unassigned_rejected =
        collected.rejected.iter().filter(|r| !r.lot.as_deref().is_some_and(|l| listed.contains(l))).count();
    let tests = &collected.tests;
    let verifications = reference::verify_rigs(plant, tests);
    let mut standings = Standings {
        plant,
        record,
        lots: lots.iter().map(|l| l.lot.clone()).collect(),
        parts: BTreeMap::new(),
    };
    let mut summary = ShiftRecord {
        shift: shift.to_string(),
        files_total: collected.files_total,
        files_accepted: tests.len() as u64,
        files_rejected: collected.rejected.clone(),
        lots: Vec::new(),
        unlisted_tests: Vec::new(),
        sink_failures: Vec::new(),
        switching_record: record.map(|r| r.path().display().to_string()),
        cautions: twistlot_report::default_cautions(),
        duplicates: duplicates.clone(),
        rig_verifications: verifications.clone(),
        plan: plan.map(|(file, plan)| crate::plan_check::compare(file, plan, lots, tests)),
        unlisted_lots: Vec::new(),
        spec_problems: plant.specs.problems().to_vec(),
        skipped_files: collected.skipped.clone(),
        warnings: collected.warnings.clone(),
    };
    for listed in lots {
        let lot_tests: Vec<&TestRecord> =
            tests.iter().filter(|t| t.lot.as_deref() == Some(listed.lot.as_str())).collect();
        let counted: Vec<&TestRecord> = lot_tests.iter().copied().filter(|t| t.status.is_counted()).collect();
        let spec = plant.specs.get(&listed.part);
        let standing = standings.lot_standing(&listed.part);
        let unverified = reference::unverified_for(plant, &verifications, &counted);
        let mut decision = match spec {
            None => {
                let problems: Vec<String> =
                    plant.specs.problems_for(&listed.part).map(|p| p.reason.clone()).collect();
                let reason = if problems.is_empty() {
                    format!("no spec for part `{}` in the plant's parts folder", listed.part)
                } else {
                    format!(
                        "the spec for part `{}` does not load, so the lot cannot be judged until it is fixed: {}",
                        listed.part,
                        problems.join("; ")
                    )
                };
                LotDecision::hold(GroundTopic::Evidence, reason, None)
            }
            Some(entry) => {
                let input = LotInput {
                    lot: &listed.lot,
                    lot_size: listed.quantity,
                    spec: &entry.spec,
                    standing: standing.as_ref(),
                    tests: &counted,
                    beyond_sample: plant.config.as_ref().map(|c| c.beyond_sample).unwrap_or_default(),
                    variables_normality_p: variables_normality(&entry.spec, &counted),
                    non_normal: plant.config.as_ref().map(|c| c.variables_non_normal).unwrap_or_default(),
                    unverified_rigs: &unverified,
                };
                decide_lot(&input, |name| plant.schemes.get(name).map(|s| s.as_ref()))
            }
        };
        crate::dynamic::note_theory(&mut decision, &counted);
        let entry = SwitchingEntry::for_decision(&listed.part, &listed.lot, shift, &decision);
        let next = standings.feed(&listed.part, &entry, &mut decision);
        let subgroups =
            plant.config.as_ref().and_then(|c| c.capability.subgroup_size).map(|size| Subgrouping { size });
        let statistics = spec.map(|e| lot_statistics(&e.spec, &counted, subgroups)).unwrap_or_default();
        let (tested, failed, invalid) = verdict_counts(counted.iter().copied());
        let lot_file = lot_file_name(&listed.lot);
        let lot_record = LotRecord {
            lot: listed.lot.clone(),
            part: listed.part.clone(),
            quantity: listed.quantity,
            disposition: decision.disposition,
            tested,
            failed,
            invalid,
            plan: decision.shown_plan().zip(decision.severity).map(|(shown, severity)| PlanSummary {
                code_letter: Some(shown.plan.code_letter.clone()),
                sample_size: shown.plan.sample_size,
                accept: Some(shown.plan.accept),
                reject: Some(shown.plan.reject),
                severity,
            }),
            next_severity: next.as_ref().map(PartStanding::inspection_state),
            // A part tested only by free swing has its dynamic rate as its rate.
            rate: statistics
                .iter()
                .find(|s| s.characteristic == "rate")
                .or_else(|| statistics.iter().find(|s| s.characteristic == DYNAMIC_RATE))
                .map(|s| RateSummary::of(&s.capability)),
            grounds: decision.grounds.iter().map(|g| g.text.clone()).collect(),
            decided_by: decision.deciding_ground().map(|g| g.text.clone()),
            report_html: format!("lots/{lot_file}.html"),
            report_md: format!("lots/{lot_file}.md"),
            duplicates: duplicates
                .iter()
                .filter(|d| d.lot.as_deref() == Some(listed.lot.as_str()))
                .cloned()
                .collect(),
            superseded: retests::superseded(lot_tests.iter().copied()),
            plans: decision.plan_rows(),
            spec_file: spec.map(|e| e.path.display().to_string()),
            spec_revision: spec.map(|e| e.spec.revision.clone()),
            rejected_files: collected
                .rejected
                .iter()
                .filter(|r| r.lot.as_deref() == Some(listed.lot.as_str()))
                .cloned()
                .collect(),
            rigs: rig_uses(plant, &lot_tests),
            wire: LotWire {
                coiler: listed.coiler.clone(),
                wire_lot: listed.wire_lot.clone(),
                wire_d_mm: listed.wire_d_mm,
                mean_d_mm: listed.mean_d_mm,
            },
            decision: Some(decision),
            statistics,
        };
        let (curves, curves_seen) = collected.curves.take(&listed.lot, tests);
        let event = LotEvent {
            record: &lot_record,
            tests: &lot_tests,
            curves: &curves,
            curves_seen,
            spec,
            scheme: spec
                .and_then(|e| e.spec.sampling.as_ref())
                .and_then(|s| plant.schemes.get(&s.scheme))
                .map(|s| s.as_ref()),
            unassigned_rejected,
        };
        sinks.lot(&event)?;
        summary.lots.push(lot_record);
    }
    let mut unlisted: BTreeMap<Option<String>, UnlistedLot> = BTreeMap::new();
    let unlisted_test = |t: &&TestRecord| {
        t.status != TestStatus::Reference && !listed.contains(t.lot.as_deref().unwrap_or(""))
    };
    for test in tests.iter().filter(unlisted_test) {
        let lot = test.lot.as_deref().filter(|l| !l.is_empty());
        summary.unlisted_tests.push(format!(
            "{} (lot `{}` is not on the shift's lot list)",
            test.file,
            lot.unwrap_or("none")
        ));
        let group = unlisted.entry(lot.map(str::to_string)).or_insert_with(|| UnlistedLot {
            lot: lot.map(str::to_string),
            parts: Vec::new(),
            tested: 0,
            failed: 0,
            invalid: 0,
            files: Vec::new(),
        });
        group.files.push(test.file.clone());
        if let Some(part) = &test.part {
            if !group.parts.contains(part) {
                group.parts.push(part.clone());
            }
        }
        let (tested, failed, invalid) = verdict_counts(std::iter::once(test));
        group.tested += tested;
        group.failed += failed;
        group.invalid += invalid;
    }
    summary.unlisted_lots = unlisted.into_values().collect();
    summary.sink_failures = sinks.failures().to_vec();
    sinks.end(&summary)?;
    Ok(summary)
}

/// The rigs that tested a lot, with the calibration due date the plant config records
/// for each and whether a test started after it.
fn rig_uses(plant: &OpenPlant, tests: &[&TestRecord]) -> Vec<RigUse> {
    let mut uses: BTreeMap<&str, RigUse> = BTreeMap::new();
    for test in tests {
        let Some(rig) = test.rig.as_deref() else { continue };
        let entry = plant.config.as_ref().and_then(|c| c.rig(rig));
        let due = entry.and_then(|e| e.calibration_due);
        let use_ = uses.entry(rig).or_insert_with(|| RigUse {
            rig: rig.to_string(),
            tests: 0,
            last_test: None,
            calibration_due: due.map(|d| d.to_string()),
            lapsed: false,
            listed: entry.is_some(),
        });
        use_.tests += 1;
        let started = test.started.as_deref().and_then(|s| start_key(s).map(|key| (key, s)));
        if let Some((key, text)) = started {
            if use_.last_test.as_deref().and_then(start_key).is_none_or(|last| key > last) {
                use_.last_test = Some(text.to_string());
            }
            // Both keys are plant-local times written alike, so they compare as text.
            if due.and_then(|d| start_key(&d.to_string())).is_some_and(|due| key > due) {
                use_.lapsed = true;
            }
        }
    }
    uses.into_values().collect()
}

/// The Anderson–Darling p-value of the values a part's variables plan judges, when it
/// has one and there are enough values for the test.
fn variables_normality(spec: &twistlot_model::PartSpec, tests: &[&TestRecord]) -> Option<f64> {
    let plan = spec.sampling.as_ref()?.variables.as_ref()?;
    let valid = tests.iter().filter(|t| t.verdict_or_invalid() != Verdict::Invalid);
    let values: Vec<f64> = valid.filter_map(|t| characteristic_value(t, &plan.characteristic)).collect();
    anderson_darling(&values).map(|n| n.p_value)
}

/// A lot's statistics of the rate, of every toleranced free angle and torque, and of the
/// dynamic rate and frequency of swing tests, in start-time order (then serial), never in
/// file order.
fn lot_statistics(
    spec: &twistlot_model::PartSpec,
    tests: &[&TestRecord],
    subgroups: Option<Subgrouping>,
) -> Vec<CharacteristicStats> {
    let mut statistics = Vec::new();
    let mut push = |name: String, unit: &str, limits: Limits, value: &dyn Fn(&TestRecord) -> Option<f64>| {
        let values: Vec<OrderedValue> = tests
            .iter()
            .filter_map(|t| {
                Some(OrderedValue {
                    value: value(t)?,
                    started_s: t.started.as_deref().and_then(start_seconds),
                    key: format!("{}\u{0}{}", t.serial.as_deref().unwrap_or(""), t.file),
                })
            })
            .collect();
        if values.is_empty() && name == "rate" {
            return;
        }
        statistics.push(CharacteristicStats {
            characteristic: name,
            unit: unit.to_string(),
            lower: limits.lower,
            upper: limits.upper,
            capability: lot_capability(&values, limits, subgroups),
        })
    };
    let rate_limits = spec.characteristics.rate_nmm_per_deg.as_ref().map(|r| r.limits()).unwrap_or_default();
    push("rate".into(), "N·mm/°", rate_limits, &|t| t.metrics.rate_nmm_per_deg);
    if let Some(free) = &spec.characteristics.free_angle_deg {
        push("free_angle".into(), "°", free.limits(), &|t| t.metrics.free_angle_deg);
    }
    for torque in &spec.characteristics.torque_at {
        let key = angle_key(torque.angle_deg);
        push(torque_label(torque.angle_deg), "N·mm", torque.limits(), &|t| {
            t.metrics.torque_nmm_at.get(&key).copied()
        });
    }
    if let Some(dynamic) = &spec.characteristics.dynamic {
        if let Some(rate) = &dynamic.rate_nmm_per_deg {
            push(DYNAMIC_RATE.into(), "N·mm/°", rate.limits(), &|t| t.swing.as_ref()?.rate_nmm_per_deg);
        }
        if let Some(frequency) = &dynamic.frequency_hz {
            push(FREQUENCY.into(), "Hz", frequency.limits(), &|t| {
                t.swing.as_ref().map(|s| s.natural_frequency_hz)
            });
        }
    }
    statistics
}

/// The sinks every shift feeds, in order: reports, tests CSV, the plant's exec sinks,
/// `summary.json`, and last the history (so it only holds lots whose reports exist).
pub fn standard_sinks(
    plant: &OpenPlant,
    out_dir: &Path,
    history: Option<HistoryStore>,
) -> Result<SinkSet, ShiftError> {
    let mut sinks = SinkSet::default();
    sinks.push(Box::new(
        ReportWriter::new(plant.renderer()?, out_dir, CURVES_PER_CHART).with_approval(plant.approval.clone()),
    ));
    let (torque_angles, hysteresis_angles) = metric_angles(plant);
    sinks.push(Box::new(
        TestsCsvWriter::new(plant.renderer()?, out_dir).with_angles(torque_angles, hysteresis_angles),
    ));
    for (manifest, folder) in plant.sinks()? {
        sinks.push(Box::new(ExecSink::new(manifest, folder, out_dir)));
    }
    sinks.push(Box::new(SummaryJsonWriter::new(out_dir)));
    if let Some(store) = history {
        sinks.push(Box::new(HistorySink::new(store)));
    }
    Ok(sinks)
}

/// The angles the plant's specs and checks measure torque and hysteresis at, as the
/// metrics' map keys, in increasing order: `tests.csv` gets one column for each.
pub fn metric_angles(plant: &OpenPlant) -> (Vec<String>, Vec<String>) {
    let (mut torque, mut hysteresis): (Vec<f64>, Vec<f64>) = (Vec::new(), Vec::new());
    for entry in plant.specs.entries() {
        let options = twistlot_stats::MetricOptions::from_spec(&entry.spec)
            .with_check_angles(plant.checks.checks(), Some(&entry.spec.part));
        torque.extend(options.torque_angles_deg);
        hysteresis.extend(options.hysteresis_angles_deg);
    }
    let keys = |mut angles: Vec<f64>| {
        angles.sort_by(f64::total_cmp);
        angles.dedup();
        angles.into_iter().map(angle_key).collect()
    };
    (keys(torque), keys(hysteresis))
}

/// Runs the shift in `shift_dir`, writing into `out_dir`. `progress(done, total)` is
/// called as exports finish.
pub fn run_shift(
    plant: &OpenPlant,
    shift_dir: &Path,
    out_dir: &Path,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<ShiftRecord, ShiftError> {
    let lots = load_lot_list(shift_dir)?;
    let shift = shift_dir.file_name().map(|n| n.to_string_lossy().to_string()).unwrap_or_default();
    // Opened before any export, so that a broken or busy history stops the run before work
    // is spent on it; the plant's lock is held from here to the end of the run.
    let history =
        crate::history::open_history(plant, crate::history::Access::Write).map_err(ShiftError::History)?;
    let notes: Vec<String> = history.iter().flat_map(|h| h.notes.iter().cloned()).collect();
    let record = match &history {
        Some(h) => Some(crate::history::switching_record(h).map_err(ShiftError::History)?),
        None => None,
    };
    let found_plan = crate::plan_check::find_plan(out_dir, &shift)?;
    let mut collected = collect(plant, shift_dir, progress);
    if collected.files_total == 0 {
        return Err(ShiftError::NoExports {
            dir: shift_dir.to_path_buf(),
            skipped: collected.skipped.iter().map(|s| s.file.clone()).collect(),
        });
    }
    collected.warnings.extend(notes);
    let mut sinks = standard_sinks(plant, out_dir, history.map(|h| h.store))?;
    reference::mark_references(plant, &mut collected.tests);
    let duplicates = retests::settle(&mut collected.tests);
    let generated_at = plant.stamp_now();
    let run = ShiftRun {
        plant,
        shift: &shift,
        lots: &lots,
        record: record.as_ref(),
        generated_at: &generated_at,
        out_dir,
        plan: found_plan.as_ref().map(|(file, plan)| (file.as_path(), plan)),
    };
    decide_and_push(&run, collected, duplicates, &mut sinks)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::open::OpenOptions;
    use crate::sink::{LotEvent, ShiftSink, SinkError};
    use std::cell::RefCell;
    use std::rc::Rc;
    use twistlot_model::{CurveMetrics, Disposition, Finding, TestStatus};

    fn test(file: &str, lot: &str, verdict: Verdict, rate: f64) -> TestRecord {
        TestRecord {
            test_id: file.into(),
            file: file.into(),
            content_hash: file.into(),
            serial: Some(file.trim_end_matches(".csv").into()),
            part: Some("TS-2210".into()),
            lot: Some(lot.into()),
            rig: Some("RIG-N".into()),
            operator: None,
            started: Some("2026-12-01T10:00".into()),
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics: CurveMetrics { rate_nmm_per_deg: Some(rate), ..CurveMetrics::default() },
            verdict: Some(verdict),
            findings: match verdict {
                Verdict::Pass => Vec::new(),
                other => vec![Finding {
                    characteristic: "rate".into(),
                    class: twistlot_model::CharacteristicClass::Major,
                    value: Some(rate),
                    lower: None,
                    upper: None,
                    verdict: other,
                    message: "out".into(),
                }],
            },
            status: TestStatus::Counted,
            swing: None,
            theory: None,
        }
    }

    fn preview(points: usize) -> CurvePreview {
        CurvePreview { angle_deg: vec![0.0; points], torque_nmm: vec![0.0; points] }
    }

    #[test]
    fn the_curve_keeper_keeps_flagged_curves_first_and_a_fixed_number() {
        let mut keeper = CurveKeeper::new(3);
        let mut tests = Vec::new();
        for (i, verdict) in
            [Verdict::Pass, Verdict::Pass, Verdict::Pass, Verdict::Fail, Verdict::Pass, Verdict::Invalid]
                .iter()
                .enumerate()
        {
            let t = test(&format!("t{i}.csv"), "L", *verdict, 29.0);
            keeper.offer(i, &t, preview(i + 1));
            tests.push(t);
        }
        // Another lot's curves are kept apart.
        let other = test("o.csv", "M", Verdict::Pass, 29.0);
        keeper.offer(6, &other, preview(1));
        tests.push(other);
        let (kept, seen) = keeper.take("L", &tests);
        assert_eq!(seen, 6);
        let labels: Vec<(&str, Option<Verdict>)> =
            kept.iter().map(|c| (c.label.as_str(), c.verdict)).collect();
        assert_eq!(
            labels,
            [("t3", Some(Verdict::Fail)), ("t5", Some(Verdict::Invalid)), ("t0", Some(Verdict::Pass))]
        );
        // A curve whose test stopped counting (a superseded retest) is not drawn.
        let mut keeper = CurveKeeper::new(3);
        keeper.offer(0, &tests[0], preview(1));
        tests[0].status = TestStatus::Superseded { by: "t9.csv".into() };
        assert!(keeper.take("L", &tests).0.is_empty());
    }

    /// Records every event it is given, in order.
    struct Recorder(Rc<RefCell<Vec<String>>>);

    impl ShiftSink for Recorder {
        fn name(&self) -> String {
            "recorder".into()
        }
        fn start(&mut self, shift: &ShiftStart<'_>) -> Result<(), SinkError> {
            self.0.borrow_mut().push(format!("start {}", shift.shift));
            Ok(())
        }
        fn test(&mut self, test: &TestRecord) -> Result<(), SinkError> {
            self.0.borrow_mut().push(format!("test {} {}", test.file, test.status.as_str()));
            Ok(())
        }
        fn lot(&mut self, lot: &LotEvent<'_>) -> Result<(), SinkError> {
            let record = lot.record;
            self.0.borrow_mut().push(format!(
                "lot {} {} tested {} of {} tests",
                record.lot,
                record.disposition,
                record.tested,
                lot.tests.len()
            ));
            Ok(())
        }
        fn end(&mut self, shift: &ShiftRecord) -> Result<(), SinkError> {
            self.0.borrow_mut().push(format!("end {} lots", shift.lots.len()));
            Ok(())
        }
    }

    fn plant() -> (tempfile::TempDir, OpenPlant) {
        let dir = tempfile::tempdir().unwrap();
        let parts = dir.path().join("parts");
        std::fs::create_dir_all(&parts).unwrap();
        let spec =
            std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../sample_lots/parts/TS-2210.yaml");
        let spec = std::env::var_os("CARGO_MANIFEST_DIR")
            .map(|d| std::path::PathBuf::from(d).join("../../sample_lots/parts/TS-2210.yaml"))
            .unwrap_or(spec);
        std::fs::copy(spec, parts.join("TS-2210.yaml")).unwrap();
        std::fs::write(dir.path().join("plant.yaml"), "plant: unit test plant\nparts: parts\n").unwrap();
        let options =
            OpenOptions { plant_file: Some(dir.path().join("plant.yaml")), ..OpenOptions::default() };
        let plant = OpenPlant::open(&options).unwrap();
        (dir, plant)
    }

    #[test]
    fn sinks_get_every_test_in_file_order_then_each_lot_then_the_end() {
        let (dir, plant) = plant();
        let events = Rc::new(RefCell::new(Vec::new()));
        let mut sinks = SinkSet::default();
        sinks.push(Box::new(Recorder(events.clone())));
        let mut tests = vec![
            test("a.csv", "L-1", Verdict::Pass, 29.0),
            test("b.csv", "L-1", Verdict::Pass, 29.1),
            test("c.csv", "L-9", Verdict::Pass, 29.2),
        ];
        tests[1].content_hash = tests[0].content_hash.clone();
        let mut collected = CollectedTests { files_total: 3, ..CollectedTests::default() };
        collected.tests = tests;
        let duplicates = retests::settle(&mut collected.tests);
        let lots = LotList::from_yaml("lots.yaml", "lots:\n  - { lot: L-1, part: TS-2210, quantity: 500 }\n")
            .unwrap()
            .lots;
        let run = ShiftRun {
            plant: &plant,
            shift: "S",
            lots: &lots,
            record: None,
            generated_at: "now",
            out_dir: dir.path(),
            plan: None,
        };
        let summary = decide_and_push(&run, collected, duplicates, &mut sinks).unwrap();
        assert_eq!(
            *events.borrow(),
            [
                "start S",
                "test a.csv counted",
                "test b.csv duplicate",
                "test c.csv counted",
                "lot L-1 hold tested 1 of 2 tests",
                "end 1 lots",
            ]
        );
        let lot = &summary.lots[0];
        assert_eq!(lot.disposition, Disposition::Hold);
        assert!(lot.deciding_ground().unwrap().contains("too few valid tests"), "{:?}", lot.grounds);
        assert_eq!(lot.duplicates.len(), 1);
        assert_eq!(summary.unlisted_tests, ["c.csv (lot `L-9` is not on the shift's lot list)"]);
        // With no history folder the lot is judged on normal inspection, and says why.
        assert!(lot.grounds[0].contains("no history folder"), "{:?}", lot.grounds);
    }

    fn listed(lots: &[&str]) -> Vec<ListedLot> {
        let text: String = std::iter::once("lots:\n".to_string())
            .chain(lots.iter().map(|l| format!("  - {{ lot: \"{l}\", part: P, quantity: 10 }}\n")))
            .collect();
        LotList::from_yaml("lots.yaml", &text).unwrap().lots
    }

    #[test]
    fn a_file_name_names_its_lot_only_as_a_whole_word() {
        let lots = listed(&["L-1", "L-10", "L2612-041"]);
        assert_eq!(lot_from_file_name("shift/rig-c/L2612-041-018.dat", &lots), Some("L2612-041"));
        assert_eq!(lot_from_file_name("shift/L-10/007.txt", &lots), Some("L-10"), "L-1 is not L-10");
        assert_eq!(lot_from_file_name("shift/rig-a/L-1_007.txt", &lots), Some("L-1"));
        assert_eq!(lot_from_file_name("shift/rig-a/XL-1.txt", &lots), None, "no match inside a word");
        assert_eq!(lot_from_file_name("shift/rig-a/0007.txt", &lots), None);
    }

    #[test]
    fn the_lot_list_and_plans_are_skipped_in_folders_and_read_when_named() {
        let dir = tempfile::tempdir().unwrap();
        for name in ["lots.yaml", "plan.json", "a.csv", "sub/lots.yaml", "sub/b.csv"] {
            let path = dir.path().join(name);
            std::fs::create_dir_all(path.parent().unwrap()).unwrap();
            std::fs::write(path, "x").unwrap();
        }
        let (files, missing, skipped) = shift_inputs(&[dir.path().to_path_buf()]);
        let names = |paths: Vec<String>| -> Vec<String> {
            let root = dir.path().display().to_string();
            paths
                .into_iter()
                .map(|p| p.trim_start_matches(&root).trim_start_matches('/').to_string())
                .collect()
        };
        assert_eq!(names(files.iter().map(|f| f.display().to_string()).collect()), ["a.csv", "sub/b.csv"]);
        assert!(missing.is_empty());
        let skipped_names = names(skipped.iter().map(|s| s.file.clone()).collect());
        assert_eq!(skipped_names, ["lots.yaml", "plan.json", "sub/lots.yaml"]);
        assert!(skipped[0].reason.contains("lot list") && skipped[1].reason.contains("test plan"));
        // Named on the command line, a file is read whatever its name.
        let (files, _, skipped) = shift_inputs(&[dir.path().join("lots.yaml")]);
        assert_eq!((files.len(), skipped.len()), (1, 0));
        let (_, missing, _) = shift_inputs(&[dir.path().join("nope")]);
        assert_eq!(missing.len(), 1);
    }
}
