//! The results history of a plant: every evaluated test and every decided lot of every
//! shift, kept as a Hive-partitioned Parquet dataset, and the queries trending and
//! switching need.
//!
//! For: storing a shift's [`TestRecord`](twistlot_model::TestRecord)s and
//! [`LotRecord`](twistlot_model::LotRecord)s under the plant's history
//! folder ([`HistoryStore::write_shift`]) so that a re-run replaces the shift instead of
//! adding to it, a killed write leaves every shift wholly stored or absent, and two runs
//! never write at once ([`PlantLock`]); reading a part's lots in time order
//! ([`HistoryStore::part_lots`]), a part's test values of one metric
//! ([`HistoryStore::part_tests`]), and every lot and resumption in stored order for
//! replaying switching ([`HistoryStore::switching_replay`]). The layout, every column,
//! the escaping of folder names, the write protocol and the lock are described in
//! `SCHEMA.md` beside this crate.
//!
//! Not for: computing anything statistical (control charts live in `stats`), deciding
//! switching (that is `sampling`, fed by the pipeline from [`ReplayEntry`]s), or printing.
//! The files are plain Parquet in Hive folders so that other engines (DuckDB, Spark,
//! Trino, polars elsewhere) read the same history without this crate.
//!
//! Main types: [`HistoryStore`] (open, write, query), [`OpenOptions`], [`WriteSummary`],
//! [`StoredTest`], [`StoredLot`], [`LotTrendRow`], [`TestValue`], [`Metric`],
//! [`ReplayEntry`], [`Replacement`], [`StoredShift`], [`Timestamp`], [`Partition`],
//! [`HistoryError`].

mod commit;
mod escape;
mod lock;
mod query;
mod schema;
mod store;
mod tables;
mod time;

#[cfg(test)]
mod tests;

pub use commit::{Recovery, Step, StepHook, JOURNAL, STAGING};
pub use escape::{escape_value, unescape_value, IdError, Partition, MAX_FOLDER_NAME_BYTES, NULL_PARTITION};
pub use lock::{host_name, LockHolder, PlantLock, StaleLock, LOCK_FILE};
pub use query::{LotTrendRow, Metric, ReplayEntry, ReplayEvent, TestValue, UnknownMetric};
pub use schema::{Kind, SCHEMA_VERSION};
pub use store::{HistoryStore, OpenOptions, OpenReport, Table, WriteSummary};
pub use tables::{
    schema_markdown, Replacement, ReplacementKind, Resumption, StoredLot, StoredShift, StoredTest, TestRef,
    DATA_FILE, LOTS, REPLACEMENTS, RESUMPTIONS, SHIFTS, TESTS,
};
pub use time::Timestamp;

use std::path::PathBuf;
use std::time::Duration;

/// Why the history could not be opened, written or read.
#[derive(Debug, thiserror::Error)]
pub enum HistoryError {
    /// The history folder does not exist and creating it was not asked for.
    #[error(
        "history folder {} does not exist; check the plant config's `history:` entry, or create the history there explicitly",
        folder.display()
    )]
    Missing {
        /// The folder.
        folder: PathBuf,
    },
    /// The history path is not a folder.
    #[error("{} is not a folder; the history must be a folder of its own", path.display())]
    NotAFolder {
        /// The path.
        path: PathBuf,
    },
    /// Another run holds the plant's lock.
    #[error(
        "the history {} is in use{}{}; waited {:.1} s. Run again when that run has finished{}",
        lock_file.parent().map(|p| p.display().to_string()).unwrap_or_default(),
        holder.as_ref().map(|h| format!(" by {h}")).unwrap_or_default(),
        format!(" (lock file {})", lock_file.display()),
        waited.as_secs_f64(),
        holder.as_ref().map(|_| ", or, if that process is gone from its host, it will be taken over automatically").unwrap_or_default()
    )]
    Locked {
        /// The lock file.
        lock_file: PathBuf,
        /// Who holds it, when the file says.
        holder: Option<LockHolder>,
        /// How long this run waited.
        waited: Duration,
    },
    /// A file system operation failed.
    #[error("{}: cannot {action}: {source}", path.display())]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// What was being done.
        action: &'static str,
        /// The system's error.
        source: std::io::Error,
    },
    /// A part or shift name cannot name a partition folder.
    #[error("{0}")]
    Id(#[from] IdError),
    /// A record's part cannot name a partition folder; nothing of the shift was stored.
    #[error("{record}: {source}; nothing of the shift was stored")]
    RecordPart {
        /// The test's file or the lot, naming the record.
        record: String,
        /// Why the part cannot be a folder name.
        source: IdError,
    },
    /// Two names differ only in letter case, which case-insensitive file systems would merge.
    #[error(
        "{what} `{value}` differs from the stored {what} `{existing}` only in letter case; \
         on Windows and macOS both would share one folder. Use the stored spelling or another name"
    )]
    CaseClash {
        /// `part` or `shift`.
        what: &'static str,
        /// The new name.
        value: String,
        /// The stored name.
        existing: String,
    },
    /// polars failed to write or read a table.
    #[error("{}: cannot {action}: {source}", path.display())]
    Polars {
        /// The file or table folder.
        path: PathBuf,
        /// What was being done.
        action: &'static str,
        /// polars' error.
        source: polars::prelude::PolarsError,
    },
    /// A table file or the journal holds something this store did not write.
    #[error("{}: {message}", path.display())]
    Corrupt {
        /// The file or table folder.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// Rows written by a newer twistlot.
    #[error(
        "{}: written with history schema {found}, this twistlot reads up to {supported}; use the newer twistlot that wrote it",
        path.display()
    )]
    NewerSchema {
        /// The file or table folder.
        path: PathBuf,
        /// Version found.
        found: u32,
        /// Highest version this build reads.
        supported: u32,
    },
    /// A write of this session failed after its commit point; reads wait for it to be finished.
    #[error(
        "{}: a write was committed but not finished; open the history again to finish it before reading",
        journal.display()
    )]
    Unfinished {
        /// The journal file.
        journal: PathBuf,
    },
    /// The fault-injection hook stopped a write at a step (tests of crash safety only).
    #[error("write stopped at step {step:?}")]
    StepFailed {
        /// The step after which it stopped.
        step: Step,
    },
}
