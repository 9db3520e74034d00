//! One run at a time: an exclusive lock on the run root's lock file
//! (`flock` through std's `File::try_lock`), with the holder written into
//! the file so that a refused run can say who holds it. The operating
//! system drops the lock when its process ends, however it ends, so a lock
//! file still naming a holder when the lock is free was left by a process
//! that died; the next run takes it over and says so.

use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::PublishError;
use super::clock::UtcTime;

/// Who holds (or last held) the lock.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Holder {
    pub pid: u32,
    pub host: String,
    /// When the holder started, RFC 3339 UTC.
    pub started: String,
    /// The config file of the holder's run.
    pub config: String,
}

impl std::fmt::Display for Holder {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "process {} on {}, started {}, config {}",
            self.pid, self.host, self.started, self.config
        )
    }
}

impl Holder {
    /// This process, running `config`.
    pub fn this_process(config: &Path) -> Holder {
        let host = std::fs::read_to_string("/proc/sys/kernel/hostname")
            .map(|name| name.trim().to_string())
            .ok()
            .filter(|name| !name.is_empty())
            .unwrap_or_else(|| "unknown host".to_string());
        Holder {
            pid: std::process::id(),
            host,
            started: UtcTime::now().rfc3339(),
            config: config.display().to_string(),
        }
    }
}

/// The held lock of a run root; released (and the holder cleared) when dropped.
#[derive(Debug)]
pub struct RootLock {
    file: File,
    path: PathBuf,
    /// The holder found in the file when the lock was taken: a process
    /// that ended without releasing it.
    pub taken_over: Option<Holder>,
}

impl RootLock {
    /// Takes the lock at `path` for `holder`, or fails at once with
    /// [`PublishError::Locked`] naming the process that holds it.
    pub fn acquire(path: &Path, holder: &Holder) -> Result<RootLock, PublishError> {
        let io = |source| PublishError::Io {
            path: path.to_path_buf(),
            source,
        };
        let mut file = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(path)
            .map_err(io)?;
        let mut text = String::new();
        // The holder's note is advisory: unreadable text is treated as none.
        let _ = file.read_to_string(&mut text);
        let previous: Option<Holder> = serde_json::from_str(text.trim()).ok();
        match file.try_lock() {
            Ok(()) => {}
            Err(std::fs::TryLockError::WouldBlock) => {
                return Err(PublishError::Locked {
                    path: path.to_path_buf(),
                    holder: previous.map_or_else(
                        || "a process that has not written its name yet".into(),
                        |h| h.to_string(),
                    ),
                });
            }
            Err(std::fs::TryLockError::Error(source)) => return Err(io(source)),
        }
        let note = serde_json::to_string(holder).map_err(|err| io(std::io::Error::other(err)))?;
        file.set_len(0).map_err(io)?;
        file.seek(SeekFrom::Start(0)).map_err(io)?;
        file.write_all(note.as_bytes()).map_err(io)?;
        file.write_all(b"\n").map_err(io)?;
        file.sync_all().map_err(io)?;
        Ok(RootLock {
            file,
            path: path.to_path_buf(),
            taken_over: previous,
        })
    }

    /// The lock file.
    pub fn path(&self) -> &Path {
        &self.path
    }
}

impl Drop for RootLock {
    fn drop(&mut self) {
        // A clean end clears the note, so the next run knows nothing was
        // left behind; the lock itself goes with the file handle.
        let _ = self.file.set_len(0);
        let _ = self.file.sync_all();
        let _ = self.file.unlock();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn holder(pid: u32) -> Holder {
        Holder {
            pid,
            host: "test-host".into(),
            started: "2026-12-02T21:00:00Z".into(),
            config: "nightly.toml".into(),
        }
    }

    #[test]
    fn a_second_holder_is_refused_and_told_who_holds_the_lock() {
        // Source: flock(2) — an exclusive lock is refused to a second open
        // file description while the first holds it (LOCK_NB: at once).
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("lock");
        let first = RootLock::acquire(&path, &holder(11)).unwrap();
        assert_eq!(first.taken_over, None);
        let err = RootLock::acquire(&path, &holder(22)).unwrap_err();
        let message = err.to_string();
        assert!(message.contains("process 11 on test-host"), "{message}");
        assert!(message.contains("nightly.toml"), "{message}");
        drop(first);
        let second = RootLock::acquire(&path, &holder(22)).unwrap();
        assert_eq!(second.taken_over, None, "a clean release leaves no holder behind");
    }

    #[test]
    fn a_lock_left_by_a_dead_process_is_taken_over() {
        // Source: flock(2) — locks are released when the holder's file
        // descriptions close, as they do when a process dies; the note it
        // wrote stays, which is how the next run knows.
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("lock");
        std::fs::write(&path, serde_json::to_string(&holder(4242)).unwrap()).unwrap();
        let lock = RootLock::acquire(&path, &holder(7)).unwrap();
        assert_eq!(lock.taken_over, Some(holder(4242)));
        let note: Holder = serde_json::from_str(std::fs::read_to_string(&path).unwrap().trim()).unwrap();
        assert_eq!(note.pid, 7);
    }
}
