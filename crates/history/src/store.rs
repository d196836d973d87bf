//! The store: open a history folder under the plant's lock, write shifts, read tables.

use crate::commit::{recover, Recovery, StepHook, Transaction, JOURNAL};
use crate::escape::Partition;
use crate::lock::{LockHolder, PlantLock, StaleLock};
use crate::schema::{build_frame, Cells, ColumnDef};
use crate::tables::{
    lot_columns, read_lots, read_replacements, read_resumptions, read_serial_rows, read_shifts, read_tests,
    replacement_columns, resumption_columns, serial_columns, shift_columns, test_columns, LotRow,
    Replacement, ReplacementKind, Resumption, SerialRow, StoredLot, StoredShift, StoredTest, TestRef,
    TestRow, DATA_FILE, LOTS, REPLACEMENTS, RESUMPTIONS, SERIALS, SHIFTS, TESTS,
};
use crate::time::Timestamp;
use crate::HistoryError;
use polars::prelude::*;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::time::Duration;
use twistlot_model::record::{LotRecord, TestRecord};

/// How to open a history folder.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct OpenOptions {
    /// Create the folder (and its parents) when it does not exist; without it a missing
    /// folder is an error, so a mistyped path never starts a second, empty history.
    pub create: bool,
    /// How long to wait for another run to release the plant's lock before giving up.
    pub lock_wait: Duration,
}

/// What opening found: a lock taken over, a write completed or undone.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct OpenReport {
    /// The lock was left by a run that ended without releasing it.
    pub stale_lock: Option<StaleLock>,
    /// A killed write that was completed (committed) or undone (not committed).
    pub recovery: Recovery,
}

/// What one shift's write stored.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WriteSummary {
    /// The shift.
    pub shift: String,
    /// Its place in the store's order.
    pub seq: i64,
    /// Test rows stored for the shift.
    pub tests: u64,
    /// Lot rows stored for the shift.
    pub lots: u64,
    /// Parts with rows in the shift now.
    pub parts: Vec<Option<String>>,
    /// Parts whose partitions of the shift were removed (no longer in the shift).
    pub removed_parts: Vec<Option<String>>,
    /// Replacements this write recorded (earlier ones of the shift are kept in the log).
    pub replacements: Vec<Replacement>,
}

/// A table of the dataset, for [`HistoryStore::scan`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Table {
    /// `tests/part=…/shift=…/data.parquet`.
    Tests,
    /// `lots/part=…/shift=…/data.parquet`.
    Lots,
    /// `replacements/shift=…/data.parquet`.
    Replacements,
}

impl Table {
    fn folder(self) -> &'static str {
        match self {
            Table::Tests => TESTS,
            Table::Lots => LOTS,
            Table::Replacements => REPLACEMENTS,
        }
    }

    fn hive_keys(self) -> &'static [&'static str] {
        match self {
            Table::Tests | Table::Lots => &["part", "shift"],
            Table::Replacements => &["shift"],
        }
    }
}

/// A plant's history folder, opened under the plant's lock (released when dropped).
pub struct HistoryStore {
    root: PathBuf,
    lock: PlantLock,
    report: OpenReport,
    hook: Option<StepHook>,
}

impl std::fmt::Debug for HistoryStore {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("HistoryStore").field("root", &self.root).field("lock", &self.lock).finish()
    }
}

fn polars_error<'a>(path: &'a Path, action: &'static str) -> impl FnOnce(PolarsError) -> HistoryError + 'a {
    move |source| HistoryError::Polars { path: path.to_path_buf(), action, source }
}

/// The current result of each (part, serial).
pub(crate) fn current_of(candidates: &[SerialRow]) -> BTreeMap<(Option<String>, String), &SerialRow> {
    let mut current: BTreeMap<(Option<String>, String), &SerialRow> = BTreeMap::new();
    for c in candidates {
        let key = (c.part.clone(), c.serial.clone());
        match current.get(&key) {
            Some(best) if best.order_key() >= c.order_key() => {}
            _ => {
                current.insert(key, c);
            }
        }
    }
    current
}

fn replacement_kind(old: &SerialRow, new: &SerialRow) -> ReplacementKind {
    if old.test.content_hash == new.test.content_hash {
        ReplacementKind::SameExport
    } else if old.started_at == new.started_at
        && (old.started_at.is_some() || old.test.started == new.test.started)
    {
        ReplacementKind::ChangedExport
    } else {
        ReplacementKind::Retest
    }
}

/// The parquet bytes of a frame.
fn parquet_bytes(mut frame: DataFrame, path: &Path) -> Result<Vec<u8>, HistoryError> {
    let mut bytes = Vec::new();
    ParquetWriter::new(&mut bytes).finish(&mut frame).map_err(polars_error(path, "encode the table file"))?;
    Ok(bytes)
}

fn frame<R>(columns: &[ColumnDef<R>], rows: &[R], path: &Path) -> Result<Vec<u8>, HistoryError> {
    let df = build_frame(columns, rows).map_err(polars_error(path, "build the table"))?;
    parquet_bytes(df, path)
}

/// Reads one Parquet file (an unpartitioned table, or one partition).
fn read_file(path: &Path) -> Result<DataFrame, HistoryError> {
    let file = std::fs::File::open(path).map_err(|source| HistoryError::Io {
        path: path.to_path_buf(),
        action: "open",
        source,
    })?;
    ParquetReader::new(file).finish().map_err(polars_error(path, "read the table file"))
}

/// True when `dir` holds a `data.parquet` somewhere below it.
fn has_data(dir: &Path) -> bool {
    let Ok(entries) = std::fs::read_dir(dir) else { return false };
    entries.flatten().any(|e| {
        let path = e.path();
        if path.is_dir() {
            has_data(&path)
        } else {
            path.file_name().is_some_and(|n| n == DATA_FILE)
        }
    })
}

/// The partition folders of `key` directly inside `dir` (others are ignored).
fn partitions_in(dir: &Path, key: &'static str) -> Result<Vec<Partition>, HistoryError> {
    let entries = match std::fs::read_dir(dir) {
        Ok(entries) => entries,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(source) => return Err(HistoryError::Io { path: dir.to_path_buf(), action: "list", source }),
    };
    let mut out = Vec::new();
    for entry in entries {
        let entry =
            entry.map_err(|source| HistoryError::Io { path: dir.to_path_buf(), action: "list", source })?;
        if let Some(name) = entry.file_name().to_str() {
            if let Ok(partition) = Partition::from_folder(key, name) {
                out.push(partition);
            }
        }
    }
    out.sort();
    Ok(out)
}

fn relative(parts: &[&str]) -> String {
    parts.join("/")
}

impl HistoryStore {
    /// Opens the history in `folder`, takes the plant's lock (waiting up to
    /// `options.lock_wait`), and completes or undoes a write an earlier run left unfinished.
    pub fn open(folder: impl AsRef<Path>, options: &OpenOptions) -> Result<HistoryStore, HistoryError> {
        let root = folder.as_ref().to_path_buf();
        if !root.exists() {
            if !options.create {
                return Err(HistoryError::Missing { folder: root });
            }
            std::fs::create_dir_all(&root).map_err(|source| HistoryError::Io {
                path: root.clone(),
                action: "create the history folder",
                source,
            })?;
        }
        if !root.is_dir() {
            return Err(HistoryError::NotAFolder { path: root });
        }
        let lock = PlantLock::acquire(&root, options.lock_wait)?;
        let recovery = recover(&root)?;
        let report = OpenReport { stale_lock: lock.stale().cloned(), recovery };
        Ok(HistoryStore { root, lock, report, hook: None })
    }

    /// The history folder.
    pub fn folder(&self) -> &Path {
        &self.root
    }

    /// What opening found (a lock taken over, a write completed or undone).
    pub fn open_report(&self) -> &OpenReport {
        &self.report
    }

    /// This run, as the lock file names it.
    pub fn lock_holder(&self) -> &LockHolder {
        self.lock.holder()
    }

    /// Sets a hook called after every step of the write protocol; an error from it stops
    /// the write there, leaving the files as a crash at that point would. For tests of
    /// crash safety; production code has no reason to set one.
    pub fn set_step_hook(&mut self, hook: Option<StepHook>) {
        self.hook = hook;
    }

    /// Stores `shift`: its tests (any order; each goes to its record's part, or the null
    /// partition when the export named none) and its decided lots (in lot-list order),
    /// replacing whatever the shift had stored, decided now.
    pub fn write_shift<'a>(
        &mut self,
        shift: &str,
        tests: impl IntoIterator<Item = &'a TestRecord>,
        lots: &[LotRecord],
    ) -> Result<WriteSummary, HistoryError> {
        self.write_shift_at(shift, tests, lots, Timestamp::now())
    }

    /// [`HistoryStore::write_shift`] with the lots' decision time given (a replay of old
    /// shifts, a carried-over record).
    pub fn write_shift_at<'a>(
        &mut self,
        shift: &str,
        tests: impl IntoIterator<Item = &'a TestRecord>,
        lots: &[LotRecord],
        decided_at: Timestamp,
    ) -> Result<WriteSummary, HistoryError> {
        // A write of this session that failed part-way is finished or undone first.
        recover(&self.root)?;
        let now = Timestamp::now();
        let shift_partition = Partition::new("shift", shift)?;

        let tests: Vec<&TestRecord> = tests.into_iter().collect();
        let mut tests_by_part: BTreeMap<Partition, Vec<TestRow>> = BTreeMap::new();
        let mut new_candidates = Vec::new();
        for (index, record) in tests.iter().enumerate() {
            let partition = Partition::optional("part", record.part.as_deref()).map_err(|source| {
                HistoryError::RecordPart { record: format!("test {}", record.file), source }
            })?;
            let started_at = record.started.as_deref().and_then(Timestamp::parse).map(Timestamp::unix_ms);
            let row_index = i64::try_from(index).unwrap_or(i64::MAX);
            tests_by_part.entry(partition).or_default().push(TestRow {
                record,
                started_at,
                shift_seq: 0, // set below, once the shift's place is known
                row_index,
                stored_at: now.unix_ms(),
            });
            if let (true, Some(serial)) = (record.status.is_counted(), record.serial.as_ref()) {
                new_candidates.push(SerialRow {
                    part: record.part.clone(),
                    serial: serial.clone(),
                    shift_seq: 0,
                    row_index,
                    started_at,
                    test: TestRef {
                        shift: shift.to_string(),
                        test_id: record.test_id.clone(),
                        file: record.file.clone(),
                        content_hash: record.content_hash.clone(),
                        started: record.started.clone(),
                    },
                });
            }
        }
        let mut lots_by_part: BTreeMap<Partition, Vec<(usize, &LotRecord)>> = BTreeMap::new();
        for (index, lot) in lots.iter().enumerate() {
            let partition = Partition::new("part", &lot.part)
                .map_err(|source| HistoryError::RecordPart { record: format!("lot {}", lot.lot), source })?;
            lots_by_part.entry(partition).or_default().push((index, lot));
        }

        let mut catalog = self.shifts()?;
        let resumptions = self.resumptions()?;
        self.check_case(shift, &catalog, tests_by_part.keys().chain(lots_by_part.keys()))?;
        let existing = catalog.iter().find(|s| s.shift == shift).cloned();
        let seq = match &existing {
            Some(entry) => entry.seq,
            None => {
                catalog.iter().map(|s| s.seq).chain(resumptions.iter().map(|r| r.seq)).max().unwrap_or(0) + 1
            }
        };
        for rows in tests_by_part.values_mut() {
            rows.iter_mut().for_each(|row| row.shift_seq = seq);
        }
        new_candidates.iter_mut().for_each(|c| c.shift_seq = seq);

        let old_test_parts = self.parts_with_shift(TESTS, &shift_partition)?;
        let old_lot_parts = self.parts_with_shift(LOTS, &shift_partition)?;

        // Which stored result of each serial is current, before and after this write.
        let mut touched: BTreeSet<Partition> = old_test_parts.iter().cloned().collect();
        touched.extend(tests_by_part.keys().cloned());
        let mut stored = Vec::new();
        for part in &touched {
            stored.extend(self.candidates(part)?);
        }
        let before = current_of(&stored);
        let mut after_rows: Vec<SerialRow> =
            stored.iter().filter(|c| c.test.shift != shift).cloned().collect();
        after_rows.extend(new_candidates.iter().cloned());
        let after = current_of(&after_rows);
        let mut new_replacements = Vec::new();
        for (key, old) in &before {
            let new = after.get(key).copied().or_else(|| {
                // A serial gone from its part may have moved to another part in this shift.
                new_candidates.iter().find(|c| c.serial == key.1)
            });
            if new.is_some_and(|n| n.identity() == old.identity()) {
                continue;
            }
            new_replacements.push(Replacement {
                recorded_in: shift.to_string(),
                part: key.0.clone(),
                serial: key.1.clone(),
                kind: new.map_or(ReplacementKind::Withdrawn, |n| replacement_kind(old, n)),
                old: old.test.clone(),
                new: new.map(|n| n.test.clone()),
                recorded_at: now,
            });
        }
        let replacements_path = relative(&[REPLACEMENTS, shift_partition.folder(), DATA_FILE]);
        let mut log = match self.root.join(&replacements_path) {
            path if path.exists() => read_replacements(&Cells::new(
                &with_partition_column(read_file(&path)?, "shift", Some(shift), &path)?,
                &path,
            ))?,
            _ => Vec::new(),
        };
        let known: BTreeSet<_> = log.iter().map(Replacement::key).collect();
        let recorded: Vec<Replacement> =
            new_replacements.into_iter().filter(|r| !known.contains(&r.key())).collect();
        log.extend(recorded.iter().cloned());

        // Lots carry the time span of their counted tests.
        let mut lot_rows_by_part: BTreeMap<Partition, Vec<LotRow>> = BTreeMap::new();
        for (partition, lots) in &lots_by_part {
            let rows = lots.iter().map(|(index, record)| {
                let times = tests
                    .iter()
                    .filter(|t| t.lot.as_deref() == Some(record.lot.as_str()) && t.status.is_counted());
                let times: Vec<i64> = times
                    .filter_map(|t| t.started.as_deref().and_then(Timestamp::parse))
                    .map(Timestamp::unix_ms)
                    .collect();
                LotRow {
                    record,
                    lot_index: i64::try_from(*index).unwrap_or(i64::MAX),
                    tests_from: times.iter().min().copied(),
                    tests_until: times.iter().max().copied(),
                    decided_at: decided_at.unix_ms(),
                    shift_seq: seq,
                    stored_at: now.unix_ms(),
                }
            });
            lot_rows_by_part.insert(partition.clone(), rows.collect());
        }

        let mut parts: BTreeSet<Partition> = tests_by_part.keys().cloned().collect();
        parts.extend(lots_by_part.keys().cloned());
        let part_values: Vec<Option<String>> = parts.iter().map(|p| p.value().map(str::to_string)).collect();
        let entry = StoredShift {
            shift: shift.to_string(),
            seq,
            first_stored_at: existing.as_ref().map_or(now, |e| e.first_stored_at),
            stored_at: now,
            parts: part_values.clone(),
            tests: tests.len() as u64,
            lots: lots.len() as u64,
        };
        catalog.retain(|s| s.shift != shift);
        catalog.push(entry);
        catalog.sort_by_key(|s| s.seq);

        let mut removed: BTreeSet<Partition> = BTreeSet::new();
        let hook = self.hook.as_mut();
        let mut tx = Transaction::begin(&self.root, &format!("shift `{shift}`"), hook)?;
        let test_columns = test_columns();
        for (part, rows) in &tests_by_part {
            let path = relative(&[TESTS, part.folder(), shift_partition.folder(), DATA_FILE]);
            tx.stage(&path, &frame(&test_columns, rows, &self.root.join(&path))?)?;
        }
        let lot_columns = lot_columns();
        for (part, rows) in &lot_rows_by_part {
            let path = relative(&[LOTS, part.folder(), shift_partition.folder(), DATA_FILE]);
            tx.stage(&path, &frame(&lot_columns, rows, &self.root.join(&path))?)?;
        }
        for (table, old_parts, new_parts) in [
            (TESTS, &old_test_parts, tests_by_part.keys().collect::<BTreeSet<_>>()),
            (LOTS, &old_lot_parts, lots_by_part.keys().collect::<BTreeSet<_>>()),
        ] {
            for part in old_parts.iter().filter(|p| !new_parts.contains(p)) {
                tx.delete(&relative(&[table, part.folder(), shift_partition.folder(), DATA_FILE]));
                if !parts.contains(part) {
                    removed.insert(part.clone());
                }
            }
        }
        // The serial index of every part this write touched, as it is after the write.
        for part in &touched {
            let path = relative(&[SERIALS, part.folder(), DATA_FILE]);
            let other_shifts =
                partitions_in(&self.root.join(TESTS).join(part.folder()), "shift")?.into_iter().any(|s| {
                    s != shift_partition
                        && self.root.join(TESTS).join(part.folder()).join(s.folder()).join(DATA_FILE).exists()
                });
            if tests_by_part.contains_key(part) || other_shifts {
                let rows: Vec<SerialRow> =
                    after_rows.iter().filter(|c| c.part.as_deref() == part.value()).cloned().collect();
                tx.stage(&path, &frame(&serial_columns(), &rows, &self.root.join(&path))?)?;
            } else {
                tx.delete(&path);
            }
        }
        if !log.is_empty() {
            tx.stage(
                &replacements_path,
                &frame(&replacement_columns(), &log, &self.root.join(&replacements_path))?,
            )?;
        }
        let catalog_path = relative(&[SHIFTS, DATA_FILE]);
        tx.stage(&catalog_path, &frame(&shift_columns(), &catalog, &self.root.join(&catalog_path))?)?;
        tx.commit()?;

        Ok(WriteSummary {
            shift: shift.to_string(),
            seq,
            tests: tests.len() as u64,
            lots: lots.len() as u64,
            parts: part_values,
            removed_parts: removed.iter().map(|p| p.value().map(str::to_string)).collect(),
            replacements: recorded,
        })
    }

    /// Records corrective action for a discontinued part (its next lot restarts on
    /// tightened), after every shift stored so far. `label` is kept with it (the shift or
    /// date it belongs to). Returns its place in the store's order.
    pub fn record_resumption(
        &mut self,
        part: &str,
        label: &str,
        note: &str,
        at: Timestamp,
    ) -> Result<i64, HistoryError> {
        recover(&self.root)?;
        Partition::new("part", part)?;
        let catalog = self.shifts()?;
        let mut resumptions = self.resumptions()?;
        let seq =
            catalog.iter().map(|s| s.seq).chain(resumptions.iter().map(|r| r.seq)).max().unwrap_or(0) + 1;
        resumptions.push(Resumption {
            part: part.to_string(),
            label: label.to_string(),
            seq,
            note: note.to_string(),
            recorded_at: at,
        });
        let path = relative(&[RESUMPTIONS, DATA_FILE]);
        let hook = self.hook.as_mut();
        let mut tx = Transaction::begin(&self.root, &format!("resumption of part `{part}`"), hook)?;
        tx.stage(&path, &frame(&resumption_columns(), &resumptions, &self.root.join(&path))?)?;
        tx.commit()?;
        Ok(seq)
    }

    /// Refuses names that differ from stored ones only in letter case.
    fn check_case<'p>(
        &self,
        shift: &str,
        catalog: &[StoredShift],
        parts: impl Iterator<Item = &'p Partition>,
    ) -> Result<(), HistoryError> {
        if let Some(other) =
            catalog.iter().find(|s| s.shift != shift && s.shift.to_lowercase() == shift.to_lowercase())
        {
            return Err(HistoryError::CaseClash {
                what: "shift",
                value: shift.to_string(),
                existing: other.shift.clone(),
            });
        }
        let mut stored = partitions_in(&self.root.join(TESTS), "part")?;
        stored.extend(partitions_in(&self.root.join(LOTS), "part")?);
        for part in parts {
            let Some(value) = part.value() else { continue };
            let clash = stored
                .iter()
                .filter_map(Partition::value)
                .find(|s| *s != value && s.to_lowercase() == value.to_lowercase());
            if let Some(existing) = clash {
                return Err(HistoryError::CaseClash {
                    what: "part",
                    value: value.to_string(),
                    existing: existing.to_string(),
                });
            }
        }
        Ok(())
    }

    /// The parts whose `table` holds a file of `shift`.
    fn parts_with_shift(&self, table: &str, shift: &Partition) -> Result<Vec<Partition>, HistoryError> {
        let dir = self.root.join(table);
        Ok(partitions_in(&dir, "part")?
            .into_iter()
            .filter(|part| dir.join(part.folder()).join(shift.folder()).join(DATA_FILE).exists())
            .collect())
    }

    /// Refuses to read while a committed write of this session is unfinished.
    fn check_finished(&self) -> Result<(), HistoryError> {
        let journal = self.root.join(JOURNAL);
        if journal.exists() {
            return Err(HistoryError::Unfinished { journal });
        }
        Ok(())
    }

    /// A lazy Hive scan of `folder` (a table, or one part's folder of it) with `keys` as
    /// partition columns read from the folder names; `None` when it holds no data yet.
    fn scan_folder(&self, folder: &Path, keys: &[&str]) -> Result<Option<LazyFrame>, HistoryError> {
        self.check_finished()?;
        if !has_data(folder) {
            return Ok(None);
        }
        let hive_schema: Schema =
            keys.iter().map(|k| Field::new(PlSmallStr::from_str(k), DataType::String)).collect();
        let args = ScanArgsParquet {
            hive_options: HiveOptions {
                enabled: Some(true),
                hive_start_idx: 0,
                schema: Some(Arc::new(hive_schema)),
                try_parse_dates: false,
            },
            glob: false,
            allow_missing_columns: true,
            ..Default::default()
        };
        let path = PlRefPath::try_from_path(folder).map_err(polars_error(folder, "name the table folder"))?;
        Ok(Some(LazyFrame::scan_parquet(path, args).map_err(polars_error(folder, "scan the table"))?))
    }

    /// A lazy Hive scan of a whole table, partition columns included (`part` and `shift`,
    /// or `shift` for the replacement log); `None` while the table is empty. For queries
    /// this crate does not offer; the rows of a shift in the middle of being written are
    /// never visible, as the lock keeps writes and this store's reads apart.
    pub fn scan(&self, table: Table) -> Result<Option<LazyFrame>, HistoryError> {
        self.scan_folder(&self.root.join(table.folder()), table.hive_keys())
    }

    /// Collects `columns` of one part's rows of `table` (`tests` or `lots`), with the
    /// `part` column added from the folder.
    pub(crate) fn part_frame(
        &self,
        table: &str,
        part: &Partition,
        columns: &[&str],
    ) -> Result<Option<(DataFrame, PathBuf)>, HistoryError> {
        let folder = self.root.join(table).join(part.folder());
        let Some(scan) = self.scan_folder(&folder, &["shift"])? else { return Ok(None) };
        let select: Vec<Expr> = columns.iter().filter(|c| **c != "part").map(|c| col(*c)).collect();
        let scan = if columns.is_empty() { scan } else { scan.select(select) };
        let df = scan.collect().map_err(polars_error(&folder, "read the part's rows"))?;
        let df = with_partition_column(df, "part", part.value(), &folder)?;
        Ok(Some((df, folder)))
    }

    /// Every counted test of `part` that has a serial: from the serial index, or from the
    /// tests table when the index is missing (it is derived, so it may be deleted).
    fn candidates(&self, part: &Partition) -> Result<Vec<SerialRow>, HistoryError> {
        let index = self.root.join(SERIALS).join(part.folder()).join(DATA_FILE);
        if index.exists() {
            let df = read_file(&index)?;
            return read_serial_rows(&Cells::new(&df, &index), part.value(), false);
        }
        let columns = [
            "shift",
            "shift_seq",
            "row_index",
            "serial",
            "test_id",
            "file",
            "content_hash",
            "started",
            "started_at",
            "status",
            "schema_version",
        ];
        let Some((df, folder)) = self.part_frame(TESTS, part, &columns)? else { return Ok(Vec::new()) };
        read_serial_rows(&Cells::new(&df, &folder), part.value(), true)
    }

    /// The shift catalog, in stored order.
    pub fn shifts(&self) -> Result<Vec<StoredShift>, HistoryError> {
        self.check_finished()?;
        let path = self.root.join(SHIFTS).join(DATA_FILE);
        if !path.exists() {
            return Ok(Vec::new());
        }
        let df = read_file(&path)?;
        let mut shifts = read_shifts(&Cells::new(&df, &path))?;
        shifts.sort_by_key(|s| s.seq);
        Ok(shifts)
    }

    /// Every recorded resumption, in stored order.
    pub fn resumptions(&self) -> Result<Vec<Resumption>, HistoryError> {
        self.check_finished()?;
        let path = self.root.join(RESUMPTIONS).join(DATA_FILE);
        if !path.exists() {
            return Ok(Vec::new());
        }
        let df = read_file(&path)?;
        let mut out = read_resumptions(&Cells::new(&df, &path))?;
        out.sort_by_key(|r| r.seq);
        Ok(out)
    }

    /// Every test stored for `shift`, as evaluated, in the order they were written.
    pub fn shift_tests(&self, shift: &str) -> Result<Vec<StoredTest>, HistoryError> {
        let folder = self.root.join(TESTS);
        let Some(scan) = self.scan(Table::Tests)? else { return Ok(Vec::new()) };
        let df = scan
            .filter(col("shift").eq(lit(shift)))
            .collect()
            .map_err(polars_error(&folder, "read the shift's tests"))?;
        let mut tests = read_tests(&Cells::new(&df, &folder))?;
        tests.sort_by_key(|t| t.row_index);
        Ok(tests)
    }

    /// Every lot stored for `shift`, as decided, in lot-list order.
    pub fn shift_lots(&self, shift: &str) -> Result<Vec<StoredLot>, HistoryError> {
        let folder = self.root.join(LOTS);
        let Some(scan) = self.scan(Table::Lots)? else { return Ok(Vec::new()) };
        let df = scan
            .filter(col("shift").eq(lit(shift)))
            .collect()
            .map_err(polars_error(&folder, "read the shift's lots"))?;
        let mut lots = read_lots(&Cells::new(&df, &folder))?;
        lots.sort_by_key(|l| l.lot_index);
        Ok(lots)
    }

    /// The replacement log, oldest first.
    pub fn replacements(&self) -> Result<Vec<Replacement>, HistoryError> {
        let folder = self.root.join(REPLACEMENTS);
        let Some(scan) = self.scan(Table::Replacements)? else { return Ok(Vec::new()) };
        let df = scan.collect().map_err(polars_error(&folder, "read the replacement log"))?;
        let mut log = read_replacements(&Cells::new(&df, &folder))?;
        log.sort_by(|a, b| a.recorded_at.cmp(&b.recorded_at).then_with(|| a.serial.cmp(&b.serial)));
        Ok(log)
    }
}

/// Adds a partition column the scan did not give (the folder scanned was inside it).
pub(crate) fn with_partition_column(
    mut df: DataFrame,
    name: &str,
    value: Option<&str>,
    origin: &Path,
) -> Result<DataFrame, HistoryError> {
    if df.column(name).is_ok() {
        return Ok(df);
    }
    let column = Series::new(PlSmallStr::from_str(name), vec![value.map(str::to_string); df.height()]);
    df.with_column(column.into_column()).map_err(polars_error(origin, "add the partition column"))?;
    Ok(df)
}
