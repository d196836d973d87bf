//! The write protocol that keeps every shift wholly stored or absent.
//!
//! 1. **Stage**: every new file is written under `_staging/<txid>/` in the history
//!    folder (the same file system as the tables, so a rename moves it atomically) and
//!    flushed to disk. Nothing a reader lists has changed.
//! 2. **Journal**: the list of renames (staged file → table file) and deletions is written
//!    to `_staging/<txid>/journal.json`, flushed, and renamed to `<history>/journal.json`.
//!    That rename is the commit point.
//! 3. **Apply**: each staged file is renamed over its table file, each deletion done,
//!    and the folders flushed.
//! 4. **Finish**: `journal.json` is removed, then `_staging/<txid>/`.
//!
//! Recovery (on open, before any write): a `journal.json` is applied again from the top
//! (every step is idempotent: a rename whose staged file is gone was done), then removed;
//! whatever is left in `_staging/` belongs to a write that never committed and is deleted.
//! So a write killed at any point leaves its shift as before (killed before the commit
//! point) or as written (killed after it), once the history is next opened.

use crate::HistoryError;
use serde::{Deserialize, Serialize};
use std::fs::File;
use std::io::Write;
use std::path::{Component, Path, PathBuf};

/// The journal's name in the history folder while a write is being applied.
pub const JOURNAL: &str = "journal.json";
/// The folder new files are written in before they are moved into the tables.
pub const STAGING: &str = "_staging";

/// A point of the write protocol, as the fault-injection hook of the tests sees it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Step {
    /// A new file was written and flushed under `_staging/` (its table path given).
    Staged(String),
    /// The journal was written and flushed under `_staging/`, not yet committed.
    JournalStaged,
    /// The journal was renamed into place: the write is committed.
    Committed,
    /// One staged file was moved over its table file.
    Renamed(String),
    /// One table file of the shift was deleted.
    Deleted(String),
    /// The journal was removed: the write is complete.
    Finished,
}

/// Called after every step; an error stops the write there, leaving the files as a crash would.
pub type StepHook = Box<dyn FnMut(&Step) -> Result<(), HistoryError> + Send>;

#[derive(Debug, Serialize, Deserialize)]
struct Journal {
    /// What the write was, for a person reading a leftover journal.
    label: String,
    renames: Vec<(String, String)>,
    deletes: Vec<String>,
}

fn io_error<'a>(path: &'a Path, action: &'static str) -> impl FnOnce(std::io::Error) -> HistoryError + 'a {
    move |source| HistoryError::Io { path: path.to_path_buf(), action, source }
}

/// Flushes a folder's entries (new names, renames) to disk; a no-op where folders cannot be opened.
fn sync_dir(dir: &Path) -> Result<(), HistoryError> {
    #[cfg(unix)]
    {
        File::open(dir).and_then(|d| d.sync_all()).map_err(io_error(dir, "flush the folder"))?;
    }
    #[cfg(not(unix))]
    let _ = dir;
    Ok(())
}

/// Writes `bytes` to a new file at `path` and flushes it.
fn write_synced(path: &Path, bytes: &[u8]) -> Result<(), HistoryError> {
    let mut file = File::create(path).map_err(io_error(path, "create"))?;
    file.write_all(bytes).map_err(io_error(path, "write"))?;
    file.sync_all().map_err(io_error(path, "flush"))
}

/// True for a journal path that stays inside the history folder.
fn is_inside(relative: &str) -> bool {
    let path = Path::new(relative);
    !relative.is_empty() && path.components().all(|c| matches!(c, Component::Normal(_)))
}

/// One write in progress.
pub struct Transaction<'a> {
    root: &'a Path,
    id: String,
    label: String,
    renames: Vec<(String, String)>,
    deletes: Vec<String>,
    hook: Option<&'a mut StepHook>,
}

impl<'a> Transaction<'a> {
    /// Starts a write in the history folder `root`.
    pub fn begin(root: &'a Path, label: &str, hook: Option<&'a mut StepHook>) -> Result<Self, HistoryError> {
        let id = transaction_id();
        let dir = root.join(STAGING).join(&id);
        std::fs::create_dir_all(&dir).map_err(io_error(&dir, "create the staging folder"))?;
        Ok(Transaction { root, id, label: label.to_string(), renames: Vec::new(), deletes: Vec::new(), hook })
    }

    fn step(&mut self, step: Step) -> Result<(), HistoryError> {
        match self.hook.as_mut() {
            Some(hook) => hook(&step),
            None => Ok(()),
        }
    }

    fn staging(&self) -> PathBuf {
        self.root.join(STAGING).join(&self.id)
    }

    /// Stages the new content of the table file `relative` (a path inside the history folder).
    pub fn stage(&mut self, relative: &str, bytes: &[u8]) -> Result<(), HistoryError> {
        let staged = format!("{STAGING}/{}/{}.parquet", self.id, self.renames.len());
        write_synced(&self.root.join(&staged), bytes)?;
        self.renames.push((staged, relative.to_string()));
        self.step(Step::Staged(relative.to_string()))
    }

    /// Deletes the table file `relative` when the write is applied.
    pub fn delete(&mut self, relative: &str) {
        self.deletes.push(relative.to_string());
    }

    /// Commits and applies the write. Before the commit point an error undoes it (the
    /// staged files are removed); after it, the journal stays for the next open to finish.
    pub fn commit(mut self) -> Result<(), HistoryError> {
        let result = self.commit_inner();
        if let Err(HistoryError::StepFailed { .. }) = result {
            // An injected crash: leave everything exactly as a killed process would.
            return result;
        }
        if result.is_err() && !self.root.join(JOURNAL).exists() {
            let _ = std::fs::remove_dir_all(self.staging());
        }
        result
    }

    fn commit_inner(&mut self) -> Result<(), HistoryError> {
        let journal = Journal {
            label: self.label.clone(),
            renames: self.renames.clone(),
            deletes: self.deletes.clone(),
        };
        let text = serde_json::to_vec_pretty(&journal).map_err(|e| HistoryError::Corrupt {
            path: self.root.join(JOURNAL),
            message: format!("cannot encode the journal: {e}"),
        })?;
        let staged_journal = self.staging().join(JOURNAL);
        write_synced(&staged_journal, &text)?;
        sync_dir(&self.staging())?;
        self.step(Step::JournalStaged)?;
        let journal_path = self.root.join(JOURNAL);
        std::fs::rename(&staged_journal, &journal_path)
            .map_err(io_error(&journal_path, "commit the journal"))?;
        sync_dir(self.root)?;
        self.step(Step::Committed)?;
        apply(self.root, &journal, &mut |step| match self.hook.as_mut() {
            Some(hook) => hook(&step),
            None => Ok(()),
        })?;
        std::fs::remove_file(&journal_path)
            .map_err(io_error(&journal_path, "remove the finished journal"))?;
        sync_dir(self.root)?;
        self.step(Step::Finished)?;
        let _ = std::fs::remove_dir_all(self.staging());
        Ok(())
    }
}

/// Applies a committed journal; each step is safe to repeat.
fn apply(
    root: &Path,
    journal: &Journal,
    step: &mut dyn FnMut(Step) -> Result<(), HistoryError>,
) -> Result<(), HistoryError> {
    let journal_path = root.join(JOURNAL);
    for (staged, target) in &journal.renames {
        if !is_inside(staged) || !is_inside(target) {
            return Err(HistoryError::Corrupt {
                path: journal_path.clone(),
                message: format!("names a path outside the history folder: `{staged}` → `{target}`"),
            });
        }
        let (from, to) = (root.join(staged), root.join(target));
        if from.exists() {
            let parent = to.parent().unwrap_or(root);
            std::fs::create_dir_all(parent).map_err(io_error(parent, "create the partition folder"))?;
            std::fs::rename(&from, &to).map_err(io_error(&to, "move the new file into place"))?;
            sync_dir(parent)?;
            if let Some(grandparent) = parent.parent() {
                sync_dir(grandparent)?;
            }
        } else if !to.exists() {
            return Err(HistoryError::Corrupt {
                path: journal_path.clone(),
                message: format!("neither the staged file `{staged}` nor its target `{target}` exists"),
            });
        }
        step(Step::Renamed(target.clone()))?;
    }
    for target in &journal.deletes {
        if !is_inside(target) {
            return Err(HistoryError::Corrupt {
                path: journal_path.clone(),
                message: format!("names a path outside the history folder: `{target}`"),
            });
        }
        let path = root.join(target);
        match std::fs::remove_file(&path) {
            Ok(()) => {}
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => return Err(HistoryError::Io { path, action: "remove a partition file", source: e }),
        }
        remove_empty_folders(root, &path)?;
        step(Step::Deleted(target.clone()))?;
    }
    Ok(())
}

/// Removes the partition folders above `file` that are left empty, up to the table folder.
fn remove_empty_folders(root: &Path, file: &Path) -> Result<(), HistoryError> {
    let mut dir = file.parent();
    while let Some(folder) = dir {
        let is_partition = folder.file_name().and_then(|n| n.to_str()).is_some_and(|n| n.contains('='));
        if folder == root || !is_partition {
            break;
        }
        // Fails when not empty, which is the point.
        if std::fs::remove_dir(folder).is_err() {
            break;
        }
        if let Some(parent) = folder.parent() {
            sync_dir(parent)?;
        }
        dir = folder.parent();
    }
    Ok(())
}

/// What recovery found and did.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Recovery {
    /// A committed write that was completed: its label.
    pub completed: Option<String>,
    /// Uncommitted writes whose staged files were removed.
    pub discarded: usize,
}

/// Completes a committed write and removes uncommitted ones (the caller holds the lock).
pub fn recover(root: &Path) -> Result<Recovery, HistoryError> {
    let mut recovery = Recovery::default();
    let journal_path = root.join(JOURNAL);
    if journal_path.exists() {
        let text = std::fs::read(&journal_path).map_err(io_error(&journal_path, "read the journal"))?;
        let journal: Journal = serde_json::from_slice(&text).map_err(|e| HistoryError::Corrupt {
            path: journal_path.clone(),
            message: format!("not a journal of this store ({e}); it names the files of an unfinished write, so do not delete it without checking"),
        })?;
        apply(root, &journal, &mut |_| Ok(()))?;
        std::fs::remove_file(&journal_path)
            .map_err(io_error(&journal_path, "remove the finished journal"))?;
        sync_dir(root)?;
        recovery.completed = Some(journal.label);
    }
    let staging = root.join(STAGING);
    if staging.exists() {
        let entries = std::fs::read_dir(&staging).map_err(io_error(&staging, "list the staging folder"))?;
        for entry in entries {
            let entry = entry.map_err(io_error(&staging, "list the staging folder"))?;
            recovery.discarded += 1;
            let path = entry.path();
            let removed =
                if path.is_dir() { std::fs::remove_dir_all(&path) } else { std::fs::remove_file(&path) };
            removed.map_err(io_error(&path, "remove an unfinished write's files"))?;
        }
        let _ = std::fs::remove_dir(&staging);
    }
    Ok(recovery)
}

/// A name no other write of this or another process uses.
fn transaction_id() -> String {
    use std::sync::atomic::{AtomicU64, Ordering};
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let nanos =
        std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH).map(|d| d.as_nanos()).unwrap_or(0);
    format!("{}-{nanos}-{}", std::process::id(), COUNTER.fetch_add(1, Ordering::Relaxed))
}
