//! Reading many exports: expanding folders, spreading files over cores, and
//! accounting for every file as accepted or rejected.
//!
//! Each export is read and handed straight to the caller's closure, which keeps
//! what it needs (a summary row, a metrics row) and lets the frame go. Memory
//! therefore grows with the results, not with the curves (DESIGN.md §8).

use crate::error::{IngestError, RejectKind};
use crate::format::FormatSet;
use crate::read::{read_path, Export};
use rayon::prelude::*;
use serde::Serialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// One input file's fate.
#[derive(Debug)]
pub struct FileOutcome {
    /// The file as given or found.
    pub path: PathBuf,
    /// The export, or why it was rejected.
    pub result: Result<Export, IngestError>,
}

/// Lists the files under `inputs` (folders recursively, in name order); paths that
/// do not exist come back as rejections so they are accounted for too.
pub fn expand_inputs(inputs: &[PathBuf]) -> (Vec<PathBuf>, Vec<IngestError>) {
    let mut files = Vec::new();
    let mut missing = Vec::new();
    for input in inputs {
        if input.is_dir() {
            if let Err(err) = walk(input, &mut files) {
                missing.push(err);
            }
        } else if input.is_file() {
            files.push(input.clone());
        } else {
            missing.push(IngestError::file(
                RejectKind::Io,
                &input.display().to_string(),
                "no such file or folder",
            ));
        }
    }
    (files, missing)
}

fn walk(dir: &Path, files: &mut Vec<PathBuf>) -> Result<(), IngestError> {
    let entries = std::fs::read_dir(dir).map_err(|e| {
        IngestError::file(RejectKind::Io, &dir.display().to_string(), format!("cannot list the folder: {e}"))
    })?;
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        if path.is_dir() {
            walk(&path, files)?;
        } else {
            files.push(path);
        }
    }
    Ok(())
}

/// Files read in parallel before their results are handed on, per worker thread: enough
/// to keep every core busy, small enough that memory holds only a few results at a time.
const FILES_IN_FLIGHT_PER_THREAD: usize = 8;

/// Reads every file, maps each outcome with `map` on the worker threads (where the
/// frame is turned into whatever the caller keeps, then dropped), and hands the mapped
/// results to `consume` one by one, in input order, on the calling thread.
///
/// Only a bounded window of files is in flight at once, so memory does not grow with
/// the number of files; the order makes every run's output the same.
pub fn ingest_ordered<T, M, C>(
    files: &[PathBuf],
    formats: &FormatSet,
    forced: Option<&str>,
    map: M,
    mut consume: C,
) where
    T: Send,
    M: Fn(FileOutcome) -> T + Sync + Send,
    C: FnMut(T),
{
    let window = (rayon::current_num_threads() * FILES_IN_FLIGHT_PER_THREAD).max(1);
    for chunk in files.chunks(window) {
        let mapped: Vec<T> = chunk
            .par_iter()
            .map(|path| map(FileOutcome { path: path.clone(), result: read_path(path, formats, forced) }))
            .collect();
        mapped.into_iter().for_each(&mut consume);
    }
}

/// Whether a file was read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum FileStatus {
    /// Read into a canonical frame.
    Accepted,
    /// Not read; see the reason.
    Rejected,
}

/// What `twistlot ingest` reports per file.
#[derive(Debug, Clone, Serialize)]
pub struct FileSummary {
    /// The file.
    pub file: String,
    /// Accepted or rejected.
    pub status: FileStatus,
    /// Why it was rejected (empty when accepted).
    pub reason: String,
    /// The rig format that read it (or was reading it when it failed).
    pub rig_format: Option<String>,
    /// The kind of record read (absent when rejected).
    pub record: Option<twistlot_model::RecordKind>,
    /// Number of points read.
    pub points: usize,
    /// Metadata as key → value, including `content_hash` (the path is `file`).
    pub metadata: BTreeMap<String, String>,
    /// Warnings that did not stop the file being read.
    pub warnings: Vec<String>,
    /// Serial number, kept for duplicate detection.
    #[serde(skip)]
    pub serial: Option<String>,
}

impl FileSummary {
    /// Summarises an outcome.
    pub fn from_outcome(outcome: &FileOutcome) -> FileSummary {
        let file = outcome.path.display().to_string();
        match &outcome.result {
            Ok(export) => {
                let meta = &export.metadata;
                let mut metadata = BTreeMap::new();
                for (key, value) in [
                    ("serial", &meta.serial),
                    ("part", &meta.part),
                    ("lot", &meta.lot),
                    ("rig", &meta.rig),
                    ("operator", &meta.operator),
                    ("started", &meta.started),
                ] {
                    if let Some(value) = value {
                        metadata.insert(key.to_string(), value.clone());
                    }
                }
                for (key, value) in &meta.extra {
                    metadata.insert(key.clone(), value.clone());
                }
                metadata.insert("content_hash".into(), meta.content_hash.clone());
                FileSummary {
                    file,
                    status: FileStatus::Accepted,
                    reason: String::new(),
                    rig_format: Some(export.rig_format.clone()),
                    record: Some(export.kind),
                    points: export.points(),
                    metadata,
                    warnings: Vec::new(),
                    serial: meta.serial.clone(),
                }
            }
            Err(err) => FileSummary::rejected(err),
        }
    }

    /// Summarises a rejection.
    pub fn rejected(err: &IngestError) -> FileSummary {
        FileSummary {
            file: err.file.clone(),
            status: FileStatus::Rejected,
            reason: err.reason(),
            rig_format: err.rig_format.clone(),
            record: None,
            points: 0,
            metadata: BTreeMap::new(),
            warnings: Vec::new(),
            serial: None,
        }
    }
}

/// Warns on every accepted file whose serial appears in another file of the batch;
/// both are kept, and each warning names the other files.
pub fn flag_duplicate_serials(summaries: &mut [FileSummary]) {
    let mut by_serial: BTreeMap<String, Vec<usize>> = BTreeMap::new();
    for (i, summary) in summaries.iter().enumerate() {
        if let (FileStatus::Accepted, Some(serial)) = (summary.status, &summary.serial) {
            by_serial.entry(serial.clone()).or_default().push(i);
        }
    }
    for (serial, indices) in by_serial.into_iter().filter(|(_, v)| v.len() > 1) {
        for &i in &indices {
            let others: Vec<String> =
                indices.iter().filter(|&&j| j != i).map(|&j| summaries[j].file.clone()).collect();
            summaries[i]
                .warnings
                .push(format!("serial `{serial}` is also in {}; both are kept", others.join(", ")));
        }
    }
}
