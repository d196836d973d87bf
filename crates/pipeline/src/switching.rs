//! The switching record: each part's decided lots, in order, kept in the plant's history
//! folder so that inspection severity carries from one shift to the next.
//!
//! The record is a JSON Lines file, one entry per decided lot (and one per resumption
//! after discontinuation). A part's [`SwitchingState`] is never stored; it is replayed
//! from the entries, so the file stays readable. Entries are keyed by lot: a lot decided
//! again replaces its entry in place, whichever shift folder it was run from, so no lot
//! is ever counted twice.

use crate::open::OpenPlant;
use crate::plugins::Schemes;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use twistlot_model::{Disposition, InspectionState, LotDecision};
use twistlot_sampling::{
    Conditions, LotOutcome, LotStanding, Severity, SwitchingRules, SwitchingState, Transition,
};

/// The record's file name inside the history folder.
pub const SWITCHING_FILE: &str = "switching.jsonl";

/// What happened to a part at one entry of the record.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum EntryKind {
    /// The lot was accepted on original inspection.
    Accept,
    /// The lot was not accepted.
    Reject,
    /// The lot is held: not decided, so it does not count toward switching.
    Hold,
    /// Inspection restarts on tightened after corrective action (the scheme's discontinuation rule).
    Resume,
}

/// One line of the record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SwitchingEntry {
    /// Part number.
    pub part: String,
    /// Shift the entry belongs to (the shift folder's name).
    pub shift: String,
    /// Lot, for lot entries.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lot: Option<String>,
    /// What happened.
    pub kind: EntryKind,
    /// Severity the lot was inspected under.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub severity: Option<Severity>,
    /// Units in the sample of the plan shown for the lot.
    #[serde(default)]
    pub sample_size: u64,
    /// Defectives found in that sample.
    #[serde(default)]
    pub defectives: u64,
    /// AQL of that plan, percent (0 for zero-acceptance and variables plans).
    #[serde(default)]
    pub aql_pct: f64,
    /// Accepted on reduced inspection with defectives between Ac and Re.
    #[serde(default)]
    pub between_ac_and_re: bool,
    /// Who recorded a resumption and why.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

impl SwitchingEntry {
    /// The entry a decided lot adds to its part's record.
    pub fn for_decision(part: &str, lot: &str, shift: &str, decision: &LotDecision) -> SwitchingEntry {
        let count = decision.switching.as_ref();
        SwitchingEntry {
            part: part.to_string(),
            shift: shift.to_string(),
            lot: Some(lot.to_string()),
            kind: match decision.disposition {
                Disposition::Accept => EntryKind::Accept,
                Disposition::Reject => EntryKind::Reject,
                Disposition::Hold => EntryKind::Hold,
            },
            severity: count.map(|c| c.severity),
            sample_size: count.map_or(0, |c| c.sample_size),
            defectives: count.map_or(0, |c| c.defectives),
            aql_pct: count.map_or(0.0, |c| c.aql_pct),
            between_ac_and_re: count.is_some_and(|c| c.between_ac_and_re),
            note: None,
        }
    }
}

/// Why the switching record cannot be used.
#[derive(Debug, thiserror::Error)]
pub enum SwitchingRecordError {
    /// The file exists but cannot be read or written.
    #[error("{file}: {message}")]
    Io {
        /// The record file.
        file: String,
        /// What went wrong.
        message: String,
    },
    /// A line is not a valid entry.
    #[error("{file}:{line}: {message}")]
    Entry {
        /// The record file.
        file: String,
        /// 1-based line number.
        line: usize,
        /// What is wrong, naming the field where serde can.
        message: String,
    },
}

/// Where a part stands before a shift, replayed from the record.
#[derive(Debug, Clone, PartialEq)]
pub struct PartStanding {
    /// The replayed state.
    pub state: SwitchingState,
    /// The last transition and the lot that caused it, if any.
    pub last_transition: Option<(Transition, String)>,
}

/// The switching record of a plant, loaded in full (it holds one short line per lot).
#[derive(Debug, Clone, PartialEq)]
pub struct SwitchingRecord {
    path: PathBuf,
    entries: Vec<SwitchingEntry>,
}

impl SwitchingRecord {
    /// A record of `entries` (oldest first), kept in `source` (the history folder).
    pub fn from_entries(source: &Path, entries: Vec<SwitchingEntry>) -> SwitchingRecord {
        SwitchingRecord { path: source.to_path_buf(), entries }
    }

    /// Reads the older `switching.jsonl` in `history_dir` (carried over into the history
    /// once, see [`crate::history`]); a missing file is an empty record.
    pub fn load(history_dir: &Path) -> Result<Self, SwitchingRecordError> {
        let path = history_dir.join(SWITCHING_FILE);
        let file = path.display().to_string();
        let text = match std::fs::read_to_string(&path) {
            Ok(text) => text,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => String::new(),
            Err(e) => return Err(SwitchingRecordError::Io { file, message: format!("cannot read: {e}") }),
        };
        let mut entries = Vec::new();
        for (index, line) in text.lines().enumerate() {
            if line.trim().is_empty() {
                continue;
            }
            let entry: SwitchingEntry =
                serde_json::from_str(line).map_err(|e| SwitchingRecordError::Entry {
                    file: file.clone(),
                    line: index + 1,
                    message: format!("not a switching entry: {e}"),
                })?;
            if entry.part.trim().is_empty() {
                return Err(SwitchingRecordError::Entry {
                    file: file.clone(),
                    line: index + 1,
                    message: "field `part` is empty".to_string(),
                });
            }
            if entry.kind != EntryKind::Resume && entry.lot.is_none() {
                return Err(SwitchingRecordError::Entry {
                    file: file.clone(),
                    line: index + 1,
                    message: "field `lot` is missing; every lot entry names its lot".to_string(),
                });
            }
            entries.push(entry);
        }
        Ok(SwitchingRecord { path, entries })
    }

    /// The record's file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// All entries, oldest first.
    pub fn entries(&self) -> &[SwitchingEntry] {
        &self.entries
    }

    /// Replays `part`'s entries that precede the first entry of any of `lots` (all of them
    /// when none of the lots is recorded yet): where the part stood before those lots.
    pub fn standing_before(
        &self,
        part: &str,
        lots: &[String],
        rules: &SwitchingRules,
        conditions: &Conditions,
    ) -> PartStanding {
        let end = self.first_of(lots).unwrap_or(self.entries.len());
        replay(&self.entries[..end], part, rules, conditions)
    }

    /// Index of the first lot entry of any of `lots`.
    fn first_of(&self, lots: &[String]) -> Option<usize> {
        self.entries
            .iter()
            .position(|e| e.kind != EntryKind::Resume && e.lot.as_ref().is_some_and(|l| lots.contains(l)))
    }

    /// Replays every entry of `part`: where it stands now.
    pub fn standing_now(&self, part: &str, rules: &SwitchingRules, conditions: &Conditions) -> PartStanding {
        replay(&self.entries, part, rules, conditions)
    }

    /// Puts `entries` in the record keyed by lot: every earlier entry of one of their lots
    /// is removed, whichever shift folder recorded it, and the new entries take the place
    /// of the first one removed (the end of the record when none of the lots was recorded).
    /// Resumptions stay where they are.
    pub fn replace_lots(&mut self, entries: Vec<SwitchingEntry>) {
        let lots: Vec<String> = entries.iter().filter_map(|e| e.lot.clone()).collect();
        // Nothing before the first replaced entry is removed, so that index stays valid.
        let at = self.first_of(&lots).unwrap_or(self.entries.len());
        self.entries
            .retain(|e| e.kind == EntryKind::Resume || !e.lot.as_ref().is_some_and(|l| lots.contains(l)));
        self.entries.splice(at..at, entries);
    }

    /// Adds an entry at the end.
    pub fn push(&mut self, entry: SwitchingEntry) {
        self.entries.push(entry);
    }

    /// Writes the record: to a temporary file first, then renamed, so a crash never leaves half a record.
    pub fn save(&self) -> Result<(), SwitchingRecordError> {
        let file = self.path.display().to_string();
        let io = |message: String| SwitchingRecordError::Io { file: file.clone(), message };
        if let Some(parent) = self.path.parent() {
            std::fs::create_dir_all(parent).map_err(|e| io(format!("cannot create the folder: {e}")))?;
        }
        let mut text = String::new();
        for entry in &self.entries {
            let line =
                serde_json::to_string(entry).map_err(|e| io(format!("cannot encode an entry: {e}")))?;
            text.push_str(&line);
            text.push('\n');
        }
        let temporary = self.path.with_extension("jsonl.partial");
        std::fs::write(&temporary, text).map_err(|e| io(format!("cannot write: {e}")))?;
        std::fs::rename(&temporary, &self.path).map_err(|e| io(format!("cannot replace: {e}")))
    }
}

/// Feeds `part`'s entries among `entries`, oldest first, to a fresh standing.
fn replay(
    entries: &[SwitchingEntry],
    part: &str,
    rules: &SwitchingRules,
    conditions: &Conditions,
) -> PartStanding {
    let mut standing = PartStanding::fresh();
    for entry in entries.iter().filter(|e| e.part == part) {
        standing.feed(entry, rules, conditions);
    }
    standing
}

impl PartStanding {
    /// Where the part stands, in the form the lot decision takes.
    pub fn lot_standing(&self, explanation: String) -> LotStanding {
        LotStanding { severity: self.state.severity, discontinued: self.state.discontinued, explanation }
    }

    /// The part's state for its next lot.
    pub fn inspection_state(&self) -> InspectionState {
        InspectionState::of(self.state.severity, self.state.discontinued)
    }

    /// A part with no record: normal inspection, nothing counted.
    pub fn fresh() -> Self {
        PartStanding { state: SwitchingState::new(), last_transition: None }
    }

    /// Feeds one entry; returns the transition it caused. Held lots change nothing.
    pub fn feed(
        &mut self,
        entry: &SwitchingEntry,
        rules: &SwitchingRules,
        conditions: &Conditions,
    ) -> Option<Transition> {
        let accepted = match entry.kind {
            EntryKind::Resume => {
                self.state.resume();
                self.last_transition = None;
                return None;
            }
            EntryKind::Hold => return None,
            EntryKind::Accept => true,
            EntryKind::Reject => false,
        };
        let outcome = LotOutcome {
            accepted,
            between_ac_and_re: entry.between_ac_and_re,
            sample_size: entry.sample_size,
            defectives: entry.defectives,
            aql_pct: entry.aql_pct,
        };
        let transition = self.state.record(rules, &outcome, conditions);
        if let Some(transition) = transition {
            self.last_transition = Some((transition, entry.lot.clone().unwrap_or_default()));
        }
        transition
    }
}

/// One line on how a part came to its severity, for the lot's grounds.
pub fn describe_standing(standing: &PartStanding, rules: &SwitchingRules) -> String {
    let state = &standing.state;
    let cause = match &standing.last_transition {
        Some((Transition::ToTightened, lot)) => format!(
            "since lot {lot}: {} of {} consecutive lots not accepted",
            rules.tightened_after_rejected, rules.tightened_within_lots
        ),
        Some((Transition::TightenedToNormal, lot)) => format!(
            "back to normal since lot {lot}: {} consecutive lots accepted on tightened",
            rules.normal_after_accepted
        ),
        Some((Transition::ToReduced, lot)) => format!(
            "since lot {lot}: {} consecutive lots accepted, production steady and reduced inspection approved",
            rules.reduced_after_accepted
        ),
        Some((Transition::ReducedToNormal, lot)) => format!("back to normal since lot {lot}"),
        Some((Transition::Discontinue, lot)) => format!("discontinued since lot {lot}"),
        None if state.severity == Severity::Tightened => "restarted on tightened after corrective action".to_string(),
        None => "no switch recorded".to_string(),
    };
    format!(
        "inspection severity {} ({cause}; {} lot(s) on this severity, {} not accepted)",
        state.severity, state.lots_on_severity, state.rejected_on_severity
    )
}

/// One part's standing, as `twistlot switching` prints it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StandingRow {
    /// Part number.
    pub part: String,
    /// Where the part stands for its next lot.
    pub severity: InspectionState,
    /// Lots inspected since the current severity began.
    pub lots_on_severity: u32,
    /// Lots not accepted since the current severity began.
    pub rejected_on_severity: u32,
    /// The last switch and the lot that caused it.
    pub last_switch: Option<String>,
    /// Lot entries in the record for this part (held lots included).
    pub recorded_lots: usize,
    /// How the part came to its severity, in words.
    pub explanation: String,
}

/// Why the switching record of a plant cannot be shown or changed.
#[derive(Debug, thiserror::Error)]
pub enum SwitchingError {
    /// The plant names no history folder.
    #[error("{0}: the plant config names no `history` folder, so no switching record is kept")]
    NoHistory(String),
    /// The record is broken.
    #[error(transparent)]
    Record(#[from] SwitchingRecordError),
    /// The history cannot be opened, read or written.
    #[error("cannot use the plant's history")]
    History(#[from] crate::history::HistoryOpenError),
    /// The part cannot be resumed.
    #[error("{0}")]
    Refused(String),
}

/// The plant's history (opened, so its lock is held), the switching record replayed from
/// it, and the switching rules of each part whose spec names a loaded scheme.
fn open_plant_record(
    plant: &OpenPlant,
    access: crate::history::Access,
) -> Result<(crate::history::OpenedHistory, SwitchingRecord, BTreeMap<String, SwitchingRules>), SwitchingError>
{
    let history = crate::history::open_history(plant, access)?.ok_or_else(|| {
        SwitchingError::NoHistory(
            plant.config.as_ref().map_or("no plant config".to_string(), |c| c.path.display().to_string()),
        )
    })?;
    let record = crate::history::switching_record(&history)?;
    let rules = plant
        .specs
        .parts()
        .filter_map(|part| {
            let spec = &plant.specs.get(part)?.spec;
            part_rules(spec, &plant.schemes).map(|rules| (part.to_string(), rules.clone()))
        })
        .collect();
    Ok((history, record, rules))
}

/// The switching rules of the scheme the part's spec names, when that scheme loaded.
pub(crate) fn part_rules<'a>(
    spec: &twistlot_model::PartSpec,
    schemes: &'a Schemes,
) -> Option<&'a SwitchingRules> {
    let sampling = spec.sampling.as_ref()?;
    schemes.get(&sampling.scheme).map(|scheme| &scheme.switching)
}

fn standing_row(
    part: &str,
    record: &SwitchingRecord,
    rules: &SwitchingRules,
    conditions: &Conditions,
) -> StandingRow {
    let standing = record.standing_now(part, rules, conditions);
    StandingRow {
        part: part.to_string(),
        severity: standing.inspection_state(),
        lots_on_severity: standing.state.lots_on_severity,
        rejected_on_severity: standing.state.rejected_on_severity,
        last_switch: standing
            .last_transition
            .as_ref()
            .map(|(t, lot)| format!("{} at lot {lot}", transition_name(*t))),
        recorded_lots: record
            .entries()
            .iter()
            .filter(|e| e.part == part && e.kind != EntryKind::Resume)
            .count(),
        explanation: describe_standing(&standing, rules),
    }
}

fn transition_name(transition: Transition) -> &'static str {
    match transition {
        Transition::ToTightened => "to tightened",
        Transition::TightenedToNormal => "tightened to normal",
        Transition::ToReduced => "to reduced",
        Transition::ReducedToNormal => "reduced to normal",
        Transition::Discontinue => "discontinued",
    }
}

/// What a transition does to the part, in words for a lot's grounds.
pub fn transition_consequence(transition: Transition) -> &'static str {
    match transition {
        Transition::ToTightened => "moves the part to tightened inspection",
        Transition::TightenedToNormal => "returns the part to normal inspection",
        Transition::ToReduced => "moves the part to reduced inspection",
        Transition::ReducedToNormal => "returns the part from reduced to normal inspection",
        Transition::Discontinue => "discontinues acceptance under the scheme until corrective action",
    }
}

/// Every part of the plant (with a spec naming a loaded scheme) and where it stands now.
pub fn plant_standings(plant: &OpenPlant) -> Result<Vec<StandingRow>, SwitchingError> {
    let (_history, record, rules) = open_plant_record(plant, crate::history::Access::Read)?;
    Ok(rules
        .iter()
        .map(|(part, rules)| standing_row(part, &record, rules, &conditions(plant, part)))
        .collect())
}

/// The switching conditions the plant config states for a part (none: steady, not approved).
pub fn conditions(plant: &OpenPlant, part: &str) -> Conditions {
    match &plant.config {
        Some(config) => config.switching.conditions(part),
        None => Conditions { production_steady: true, reduced_approved: false },
    }
}

/// Records the supplier's corrective action for a discontinued part: its next lot is
/// inspected on tightened. Refused for a part that is not discontinued.
pub fn resume_part(
    plant: &OpenPlant,
    part: &str,
    note: &str,
    label: &str,
) -> Result<StandingRow, SwitchingError> {
    let (mut history, mut record, rules) = open_plant_record(plant, crate::history::Access::Write)?;
    let Some(part_rules) = rules.get(part) else {
        return Err(SwitchingError::Refused(format!(
            "part `{part}` has no spec in the plant's parts folder naming a sampling scheme that loads"
        )));
    };
    if note.trim().is_empty() {
        return Err(SwitchingError::Refused(
            "say who approved the corrective action and what it was (--note)".to_string(),
        ));
    }
    let conditions = conditions(plant, part);
    if !record.standing_now(part, part_rules, &conditions).state.discontinued {
        return Err(SwitchingError::Refused(format!(
            "part `{part}` is not discontinued; resuming is only for a part whose acceptance was stopped"
        )));
    }
    record.push(SwitchingEntry {
        part: part.to_string(),
        shift: label.to_string(),
        lot: None,
        kind: EntryKind::Resume,
        severity: Some(Severity::Tightened),
        sample_size: 0,
        defectives: 0,
        aql_pct: 0.0,
        between_ac_and_re: false,
        note: Some(note.trim().to_string()),
    });
    history
        .store
        .record_resumption(part, label, note.trim(), twistlot_history::Timestamp::now())
        .map_err(crate::history::HistoryOpenError::Store)?;
    Ok(standing_row(part, &record, part_rules, &conditions))
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_sampling::Scheme;

    fn rules() -> SwitchingRules {
        Scheme::shipped().unwrap().switching
    }

    const STEADY: Conditions = Conditions { production_steady: true, reduced_approved: false };

    fn lot(part: &str, shift: &str, name: &str, kind: EntryKind) -> SwitchingEntry {
        SwitchingEntry {
            part: part.into(),
            shift: shift.into(),
            lot: Some(name.into()),
            kind,
            severity: Some(Severity::Normal),
            sample_size: 32,
            defectives: u64::from(kind == EntryKind::Reject) * 4,
            aql_pct: 1.0,
            between_ac_and_re: false,
            note: None,
        }
    }

    fn record(entries: Vec<SwitchingEntry>) -> SwitchingRecord {
        SwitchingRecord { path: PathBuf::from("history/switching.jsonl"), entries }
    }

    #[test]
    fn two_rejections_in_five_lots_tighten_the_next_shift() {
        // MIL-STD-105E §8.3.1 (normal → tightened: 2 of 5 consecutive lots not accepted).
        let r = record(vec![
            lot("P", "s1", "a", EntryKind::Accept),
            lot("P", "s1", "b", EntryKind::Reject),
            lot("Q", "s1", "q", EntryKind::Reject),
            lot("P", "s2", "c", EntryKind::Accept),
            lot("P", "s2", "d", EntryKind::Reject),
        ]);
        let before_s2 = r.standing_before("P", &["c".into(), "d".into()], &rules(), &STEADY);
        assert_eq!(before_s2.state.severity, Severity::Normal);
        let after = r.standing_before("P", &["e".into()], &rules(), &STEADY);
        assert_eq!(after.state.severity, Severity::Tightened);
        assert_eq!(after.last_transition, Some((Transition::ToTightened, "d".to_string())));
        assert!(describe_standing(&after, &rules()).contains("since lot d"));
        // Another part's rejection never counts for this one.
        assert_eq!(r.standing_now("Q", &rules(), &STEADY).state.severity, Severity::Normal);
    }

    #[test]
    fn held_lots_do_not_count_and_resume_restarts_on_tightened() {
        let mut entries: Vec<SwitchingEntry> =
            (0..6).map(|i| lot("P", "s1", &format!("h{i}"), EntryKind::Hold)).collect();
        let r = record(entries.clone());
        let standing = r.standing_now("P", &rules(), &STEADY);
        assert_eq!(standing.state.lots_on_severity, 0);
        entries.push(SwitchingEntry {
            kind: EntryKind::Resume,
            lot: None,
            ..lot("P", "s2", "", EntryKind::Resume)
        });
        let standing = record(entries).standing_now("P", &rules(), &STEADY);
        assert_eq!(standing.state.severity, Severity::Tightened);
        assert!(!standing.state.discontinued);
    }

    #[test]
    fn deciding_lots_again_replaces_their_entries_in_place() {
        let mut r = record(vec![
            lot("P", "s1", "a", EntryKind::Accept),
            lot("P", "s2", "b", EntryKind::Reject),
            lot("P", "s3", "c", EntryKind::Accept),
        ]);
        r.replace_lots(vec![lot("P", "s2", "b", EntryKind::Accept), lot("P", "s2", "b2", EntryKind::Hold)]);
        let lots: Vec<_> = r.entries().iter().map(|e| (e.lot.clone().unwrap(), e.kind)).collect();
        assert_eq!(
            lots,
            vec![
                ("a".to_string(), EntryKind::Accept),
                ("b".to_string(), EntryKind::Accept),
                ("b2".to_string(), EntryKind::Hold),
                ("c".to_string(), EntryKind::Accept),
            ]
        );
        r.replace_lots(vec![lot("P", "s4", "d", EntryKind::Reject)]);
        assert_eq!(r.entries().last().and_then(|e| e.lot.as_deref()), Some("d"));
    }

    #[test]
    fn the_same_lot_run_from_another_folder_is_not_counted_twice() {
        let mut r = record(vec![
            lot("P", "2026-12-01-late", "a", EntryKind::Reject),
            lot("P", "2026-12-01-late", "b", EntryKind::Accept),
        ]);
        // The same two lots, copied to a folder of another name and decided again.
        let again = vec![
            lot("P", "copy-of-late", "a", EntryKind::Reject),
            lot("P", "copy-of-late", "b", EntryKind::Accept),
        ];
        let before = r.standing_before("P", &["a".into(), "b".into()], &rules(), &STEADY);
        assert_eq!(before.state.lots_on_severity, 0, "judged from before its own lots, wherever it runs");
        r.replace_lots(again);
        assert_eq!(r.entries().len(), 2);
        assert!(r.entries().iter().all(|e| e.shift == "copy-of-late"));
        let now = r.standing_now("P", &rules(), &STEADY);
        // Common practice, no published source: two lots, one not accepted, each counted once.
        assert_eq!((now.state.lots_on_severity, now.state.rejected_on_severity), (2, 1));
    }

    #[test]
    fn the_record_round_trips_and_bad_lines_are_named() {
        let dir = tempfile::tempdir().unwrap();
        let mut r = SwitchingRecord::load(dir.path()).unwrap();
        assert!(r.entries().is_empty());
        r.push(lot("P", "s1", "a", EntryKind::Reject));
        r.save().unwrap();
        let back = SwitchingRecord::load(dir.path()).unwrap();
        assert_eq!(back.entries(), r.entries());

        let path = dir.path().join(SWITCHING_FILE);
        let good = std::fs::read_to_string(&path).unwrap();
        std::fs::write(&path, format!("{good}{}\n", good.replace("\"reject\"", "\"rejekt\""))).unwrap();
        let err = SwitchingRecord::load(dir.path()).unwrap_err().to_string();
        assert!(err.contains("switching.jsonl:2:") && err.contains("rejekt"), "{err}");
        std::fs::write(&path, "{\"part\":\"P\",\"shift\":\"s\",\"kind\":\"accept\"}\n").unwrap();
        let err = SwitchingRecord::load(dir.path()).unwrap_err().to_string();
        assert!(err.contains(":1:") && err.contains("`lot`"), "{err}");
    }
}
