//! The plant's lock: one run at a time writes (and reads) a plant's history.
//!
//! The lock file `<history>/twistlot.lock` is locked with the operating system's advisory
//! file lock (`flock` on Unix, `LockFileEx` on Windows), which the kernel releases when the
//! holder exits, however it exits. The file's text names the holder (pid, host, start
//! time) so that a refused run can say who holds the plant, and is emptied on a clean
//! release: a lock taken over a file that still names someone is a run that ended
//! without releasing (killed, crashed), and the takeover is reported.

use crate::time::Timestamp;
use crate::HistoryError;
use fs4::{FileExt, TryLockError};
use serde::{Deserialize, Serialize};
use std::fs::File;
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// The lock file's name inside the history folder.
pub const LOCK_FILE: &str = "twistlot.lock";

/// How often a waiting opener tries the lock again.
const RETRY: Duration = Duration::from_millis(100);

/// Who holds (or held) the plant's lock.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct LockHolder {
    /// Process id of the holder.
    pub pid: u32,
    /// Host name of the machine it runs on.
    pub host: String,
    /// When it took the lock (UTC), `YYYY-MM-DDTHH:MM:SS.mmm`.
    pub since: String,
}

impl std::fmt::Display for LockHolder {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "process {} on host `{}` (since {} UTC)", self.pid, self.host, self.since)
    }
}

/// A lock found in the file when it was taken: its holder ended without releasing it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct StaleLock {
    /// The holder named in the file.
    pub holder: LockHolder,
    /// Whether that process is gone: `Some(true)` when it runs on this host and no
    /// such process exists, `None` when that cannot be told (another host, no `/proc`).
    pub holder_gone: Option<bool>,
}

impl std::fmt::Display for StaleLock {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let state = match self.holder_gone {
            Some(true) => "which is no longer running",
            Some(false) => "whose process id is in use again by another program",
            None => "which no longer holds the lock",
        };
        write!(f, "took over the history lock left by {}, {state}; its last write, if unfinished, was completed or undone", self.holder)
    }
}

/// The plant's lock, held until dropped.
#[derive(Debug)]
pub struct PlantLock {
    file: File,
    path: PathBuf,
    holder: LockHolder,
    stale: Option<StaleLock>,
}

/// This machine's host name, as far as it can be found without a system call crate.
pub fn host_name() -> String {
    let from_proc = std::fs::read_to_string("/proc/sys/kernel/hostname").ok();
    let name =
        from_proc.or_else(|| std::env::var("HOSTNAME").ok()).or_else(|| std::env::var("COMPUTERNAME").ok());
    name.map(|n| n.trim().to_string()).filter(|n| !n.is_empty()).unwrap_or_else(|| "unknown-host".to_string())
}

/// Whether process `pid` exists on this host: `None` where that cannot be told.
fn process_exists(pid: u32) -> Option<bool> {
    let proc_root = Path::new("/proc");
    proc_root.join("self").exists().then(|| proc_root.join(pid.to_string()).exists())
}

fn read_holder(file: &mut File) -> std::io::Result<Option<LockHolder>> {
    let mut text = String::new();
    file.seek(SeekFrom::Start(0))?;
    file.read_to_string(&mut text)?;
    Ok(serde_json::from_str(text.trim()).ok())
}

impl PlantLock {
    /// Takes the lock of the history folder `folder`, waiting up to `wait` for a holder
    /// to release it. The error names the holder when the wait runs out.
    pub fn acquire(folder: &Path, wait: Duration) -> Result<PlantLock, HistoryError> {
        let path = folder.join(LOCK_FILE);
        let io = |action: &'static str| {
            let path = path.clone();
            move |source| HistoryError::Io { path, action, source }
        };
        let mut file = std::fs::OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(&path)
            .map_err(io("open the lock file"))?;
        let deadline = Instant::now() + wait;
        loop {
            // Called through the trait: std's inherent `File::try_lock` needs a newer Rust than the workspace's.
            match FileExt::try_lock(&file) {
                Ok(()) => break,
                Err(TryLockError::WouldBlock) => {
                    if Instant::now() >= deadline {
                        let holder = read_holder(&mut file).ok().flatten();
                        return Err(HistoryError::Locked { lock_file: path, holder, waited: wait });
                    }
                    std::thread::sleep(RETRY.min(deadline.saturating_duration_since(Instant::now())));
                }
                Err(TryLockError::Error(source)) => {
                    return Err(HistoryError::Io {
                        path,
                        action:
                            "lock the lock file (the history folder must be on a file system with file locks)",
                        source,
                    });
                }
            }
        }
        let host = host_name();
        let previous = read_holder(&mut file).map_err(io("read the lock file"))?;
        let stale = previous.map(|holder| {
            let holder_gone =
                if holder.host == host { process_exists(holder.pid).map(|exists| !exists) } else { None };
            StaleLock { holder, holder_gone }
        });
        let holder = LockHolder { pid: std::process::id(), host, since: Timestamp::now().to_string() };
        let text = serde_json::to_string(&holder).unwrap_or_default();
        file.set_len(0).map_err(io("write the lock file"))?;
        file.seek(SeekFrom::Start(0)).map_err(io("write the lock file"))?;
        file.write_all(text.as_bytes()).map_err(io("write the lock file"))?;
        file.sync_all().map_err(io("write the lock file"))?;
        Ok(PlantLock { file, path, holder, stale })
    }

    /// This process, as the lock file names it.
    pub fn holder(&self) -> &LockHolder {
        &self.holder
    }

    /// The lock file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The holder that ended without releasing, when the lock was taken over from one.
    pub fn stale(&self) -> Option<&StaleLock> {
        self.stale.as_ref()
    }
}

impl Drop for PlantLock {
    fn drop(&mut self) {
        // Emptied before unlocking, so the next holder does not report a takeover.
        // Errors are ignored: the kernel releases the lock when the file closes anyway.
        let _ = self.file.set_len(0);
        let _ = self.file.sync_all();
        let _ = FileExt::unlock(&self.file);
    }
}
