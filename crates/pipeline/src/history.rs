//! The plant's results history as the shift engine uses it: opened once per run (which
//! takes the plant's lock), fed as one more sink, and read back for each part's
//! switching standing.
//!
//! The history (`crates/history`, Hive-partitioned Parquet under the plant's history
//! folder) is the one record of state that crosses shifts. A plant that still has the
//! older `switching.jsonl` in its history folder gets it carried over once, the first
//! time the history is opened with no lot stored: every entry becomes a stored lot (or
//! resumption) under its shift, and the file is renamed `switching.jsonl.imported` so it
//! is never read twice.

use crate::open::OpenPlant;
use crate::sink::{LotEvent, ShiftSink, ShiftStart, SinkError};
use crate::switching::{EntryKind, SwitchingEntry, SwitchingRecord, SwitchingRecordError, SWITCHING_FILE};
use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;
use std::time::Duration;
use twistlot_history::{HistoryError, HistoryStore, ReplayEvent, Timestamp};
use twistlot_model::{
    Disposition, Ground, GroundTopic, LotDecision, LotRecord, ShiftRecord, SwitchingCount, TestRecord,
};

/// How long a run waits for another run to release the plant's history before refusing.
pub const LOCK_WAIT: Duration = Duration::from_secs(10);

/// Why the history could not be used.
#[derive(Debug, thiserror::Error)]
pub enum HistoryOpenError {
    /// The store could not be opened, read or written.
    #[error(transparent)]
    Store(#[from] HistoryError),
    /// The old switching record could not be read for carrying over.
    #[error("cannot carry the old switching record over into the history")]
    Import(#[source] SwitchingRecordError),
    /// The old switching record could not be set aside after carrying it over.
    #[error("the old switching record {} was carried over but could not be renamed", path.display())]
    Retire {
        /// The file.
        path: std::path::PathBuf,
        /// What the file system said.
        #[source]
        source: std::io::Error,
    },
}

/// What a command does with the history.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Access {
    /// Reads it only (planning, standings): an old `switching.jsonl` is read where the
    /// history holds no lot yet, but not carried over.
    Read,
    /// Writes it (a shift, a resumption): an old `switching.jsonl` is carried over first.
    Write,
}

/// The plant's history, opened for this run (the lock is held until it is dropped), with
/// anything opening it had to report.
pub struct OpenedHistory {
    /// The store.
    pub store: HistoryStore,
    /// What a person should know: a lock taken over, a write completed or undone, an old
    /// switching record carried over.
    pub notes: Vec<String>,
    /// An old switching record read instead of an empty history (read access only).
    legacy: Option<SwitchingRecord>,
}

/// Opens the plant's history, when it keeps one; with write access an old
/// `switching.jsonl` is carried over into it first.
pub fn open_history(plant: &OpenPlant, access: Access) -> Result<Option<OpenedHistory>, HistoryOpenError> {
    let Some(dir) = plant.history_dir.as_deref() else { return Ok(None) };
    let options = twistlot_history::OpenOptions { create: false, lock_wait: LOCK_WAIT };
    let mut store = HistoryStore::open(dir, &options)?;
    let mut notes = Vec::new();
    let report = store.open_report();
    if let Some(stale) = &report.stale_lock {
        notes.push(format!(
            "the history's lock was left by a run that ended without releasing it ({stale:?}); taken over"
        ));
    }
    if report.recovery != Default::default() {
        notes.push(format!("a write an earlier run left unfinished was settled: {:?}", report.recovery));
    }
    let mut legacy = None;
    match access {
        Access::Write => {
            if let Some(note) = carry_over_switching_record(&mut store, dir)? {
                notes.push(note);
            }
        }
        Access::Read => {
            if dir.join(SWITCHING_FILE).is_file() && store.switching_replay()?.is_empty() {
                legacy = Some(SwitchingRecord::load(dir).map_err(HistoryOpenError::Import)?);
            }
        }
    }
    Ok(Some(OpenedHistory { store, notes, legacy }))
}

/// Carries `switching.jsonl` over into an empty history once; returns what was done.
fn carry_over_switching_record(
    store: &mut HistoryStore,
    dir: &Path,
) -> Result<Option<String>, HistoryOpenError> {
    let path = dir.join(SWITCHING_FILE);
    if !path.is_file() || !store.switching_replay()?.is_empty() {
        return Ok(None);
    }
    let record = SwitchingRecord::load(dir).map_err(HistoryOpenError::Import)?;
    let mut shifts: Vec<(String, Vec<LotRecord>)> = Vec::new();
    let mut resumptions = 0;
    for entry in record.entries() {
        if entry.kind == EntryKind::Resume {
            // Everything before it must be stored first, so it replays in its place.
            flush(store, &mut shifts)?;
            let note = entry.note.clone().unwrap_or_default();
            store.record_resumption(&entry.part, &entry.shift, &note, Timestamp::now())?;
            resumptions += 1;
            continue;
        }
        match shifts.last_mut() {
            Some((shift, lots)) if *shift == entry.shift => lots.push(carried_lot(entry)),
            _ => shifts.push((entry.shift.clone(), vec![carried_lot(entry)])),
        }
    }
    let lots: usize = shifts.iter().map(|(_, l)| l.len()).sum();
    flush(store, &mut shifts)?;
    let retired = path.with_extension("jsonl.imported");
    std::fs::rename(&path, &retired)
        .map_err(|source| HistoryOpenError::Retire { path: path.clone(), source })?;
    Ok(Some(format!(
        "carried the switching record {} over into the history ({lots} lot(s), {resumptions} resumption(s)); \
         the file is kept as {}",
        path.display(),
        retired.display()
    )))
}

fn flush(
    store: &mut HistoryStore,
    shifts: &mut Vec<(String, Vec<LotRecord>)>,
) -> Result<(), HistoryOpenError> {
    for (shift, lots) in shifts.drain(..) {
        store.write_shift_at(&shift, std::iter::empty(), &lots, Timestamp::now())?;
    }
    Ok(())
}

/// A lot as the old switching record knew it: its outcome and the count it fed.
fn carried_lot(entry: &SwitchingEntry) -> LotRecord {
    let disposition = match entry.kind {
        EntryKind::Accept => Disposition::Accept,
        EntryKind::Reject => Disposition::Reject,
        EntryKind::Hold | EntryKind::Resume => Disposition::Hold,
    };
    let switching = entry.severity.map(|severity| SwitchingCount {
        severity,
        sample_size: entry.sample_size,
        defectives: entry.defectives,
        aql_pct: entry.aql_pct,
        between_ac_and_re: entry.between_ac_and_re,
    });
    let text = "carried over from the switching record (no test results were kept with it)";
    LotRecord {
        lot: entry.lot.clone().unwrap_or_default(),
        part: entry.part.clone(),
        quantity: 0,
        disposition,
        tested: 0,
        failed: 0,
        invalid: 0,
        plan: None,
        next_severity: None,
        rate: None,
        grounds: vec![text.to_string()],
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
        decision: Some(LotDecision {
            disposition,
            severity: entry.severity,
            grounds: vec![Ground::note(GroundTopic::Switching, text)],
            deciding: None,
            classes: Vec::new(),
            variables: None,
            shown_class: None,
            switching,
        }),
        statistics: Vec::new(),
    }
}

/// Every stored lot and resumption, as switching replays them. A lot stored under more
/// than one shift (the same lots run again from another folder) counts once, where it
/// was stored last: switching is keyed by lot, not by the shift folder's name.
pub fn switching_record(history: &OpenedHistory) -> Result<SwitchingRecord, HistoryOpenError> {
    if let Some(legacy) = &history.legacy {
        return Ok(legacy.clone());
    }
    let store = &history.store;
    let replay = store.switching_replay()?;
    let mut last_of: BTreeMap<(String, String), usize> = BTreeMap::new();
    for (index, entry) in replay.iter().enumerate() {
        if let Some(lot) = &entry.lot {
            last_of.insert((entry.part.clone(), lot.clone()), index);
        }
    }
    let kept: BTreeSet<usize> = last_of.into_values().collect();
    let entries = replay
        .iter()
        .enumerate()
        .filter(|(index, entry)| entry.lot.is_none() || kept.contains(index))
        .map(|(_, entry)| {
            let count = entry.switching.as_ref();
            SwitchingEntry {
                part: entry.part.clone(),
                shift: entry.shift.clone(),
                lot: entry.lot.clone(),
                kind: match entry.event {
                    ReplayEvent::Resume => EntryKind::Resume,
                    ReplayEvent::Lot(Disposition::Accept) => EntryKind::Accept,
                    ReplayEvent::Lot(Disposition::Reject) => EntryKind::Reject,
                    ReplayEvent::Lot(Disposition::Hold) => EntryKind::Hold,
                },
                severity: count.map(|c| c.severity).or(entry.severity),
                sample_size: count.map_or(0, |c| c.sample_size),
                defectives: count.map_or(0, |c| c.defectives),
                aql_pct: count.map_or(0.0, |c| c.aql_pct),
                between_ac_and_re: count.is_some_and(|c| c.between_ac_and_re),
                note: entry.note.clone(),
            }
        })
        .collect();
    Ok(SwitchingRecord::from_entries(store.folder(), entries))
}

/// The history as a shift sink: it keeps the shift's tests and decided lots and stores
/// them when the shift ends, replacing whatever the shift had stored. It is fed last, so
/// the history only ever holds lots whose reports exist; and it holds the plant's lock
/// from the start of the run, so two runs never interleave.
pub struct HistorySink {
    store: HistoryStore,
    shift: String,
    tests: Vec<TestRecord>,
    lots: Vec<LotRecord>,
}

impl HistorySink {
    /// A sink storing into `store`.
    pub fn new(store: HistoryStore) -> HistorySink {
        HistorySink { store, shift: String::new(), tests: Vec::new(), lots: Vec::new() }
    }
}

impl ShiftSink for HistorySink {
    fn name(&self) -> String {
        format!("history {}", self.store.folder().display())
    }

    fn start(&mut self, shift: &ShiftStart<'_>) -> Result<(), SinkError> {
        self.shift = shift.shift.to_string();
        Ok(())
    }

    fn test(&mut self, test: &TestRecord) -> Result<(), SinkError> {
        self.tests.push(test.clone());
        Ok(())
    }

    fn lot(&mut self, lot: &LotEvent<'_>) -> Result<(), SinkError> {
        self.lots.push(lot.record.clone());
        Ok(())
    }

    fn end(&mut self, _shift: &ShiftRecord) -> Result<(), SinkError> {
        self.store.write_shift(&self.shift, &self.tests, &self.lots).map_err(SinkError::History)?;
        Ok(())
    }
}
