//! The run root on disk: its layout, the pointer to the published run,
//! leftovers of killed runs, and pruning of old runs.
//!
//! The pointer `ROOT/current` is a symbolic link to `runs/<run>`, replaced
//! by creating a new link beside it and renaming it over the old one
//! (rename(2) is atomic), so a reader always finds the old run or the new
//! one. A link rather than a file holding the name: every program follows
//! it (`cd ROOT/current`, `themata show ROOT/current`, a web server), and
//! `ls -l` shows where it points. Where links are not available a file
//! holding `runs/<run>` is written the same way; themata reads either.

use std::fs;
use std::path::{Path, PathBuf};

use super::PublishError;
use super::clock::UtcTime;
use crate::model::folder::MODEL_FILE;

/// The run root a run folder belongs to: `dir` (or what it links to, such
/// as `ROOT/current`) must be `ROOT/runs/<run>` in a root with a counter
/// file. `None` for a model folder outside a root.
pub fn root_of_run_dir(dir: &Path) -> Option<RunRoot> {
    let resolved = fs::canonicalize(dir).ok()?;
    let runs = resolved.parent()?;
    let root = runs.parent()?;
    (runs.file_name()? == "runs" && root.join("counters").is_file()).then(|| RunRoot {
        path: root.to_path_buf(),
    })
}

/// Suffix of a run folder the gate refused.
pub const REJECTED_SUFFIX: &str = ".rejected";

/// A run root's paths and operations.
#[derive(Clone, Debug)]
pub struct RunRoot {
    path: PathBuf,
}

fn io_error(path: &Path) -> impl FnOnce(std::io::Error) -> PublishError + '_ {
    move |source| PublishError::Io {
        path: path.to_path_buf(),
        source,
    }
}

fn sync_folder(folder: &Path) {
    // Best effort, as for every folder sync in themata.
    if let Ok(handle) = fs::File::open(folder) {
        let _ = handle.sync_all();
    }
}

impl RunRoot {
    /// Opens the run root at `path`, creating it and its `runs/` folder when
    /// they do not exist.
    pub fn open(path: &Path) -> Result<RunRoot, PublishError> {
        let root = RunRoot {
            path: path.to_path_buf(),
        };
        fs::create_dir_all(root.runs_dir()).map_err(io_error(&root.runs_dir()))?;
        Ok(root)
    }

    /// The root folder.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The folder holding the run folders.
    pub fn runs_dir(&self) -> PathBuf {
        self.path.join("runs")
    }

    /// The pointer to the published run.
    pub fn pointer(&self) -> PathBuf {
        self.path.join("current")
    }

    /// The counter file.
    pub fn counters(&self) -> PathBuf {
        self.path.join("counters")
    }

    /// The editors' names file.
    pub fn names(&self) -> PathBuf {
        self.path.join("names.toml")
    }

    /// The checkpoint of the run in progress (with `checkpoint_every`); a
    /// run started again after a crash finishes from it when its inputs and
    /// settings match.
    pub fn checkpoint(&self) -> PathBuf {
        self.path.join("run.checkpoint")
    }

    /// The lock file.
    pub fn lock(&self) -> PathBuf {
        self.path.join("lock")
    }

    /// The folder of run `name`.
    pub fn run_dir(&self, name: &str) -> PathBuf {
        self.runs_dir().join(name)
    }

    /// The name of run number `number` started at `time`: UTC date-time and
    /// the number, so that names sort by time and never repeat.
    pub fn run_name(time: UtcTime, number: u64) -> String {
        format!("{}-{number:04}", time.compact())
    }

    /// The name of the published run, or `None` when nothing is published.
    /// A pointer that names anything but a complete run folder of this root
    /// is an error.
    pub fn published(&self) -> Result<Option<String>, PublishError> {
        let pointer = self.pointer();
        let target = match fs::symlink_metadata(&pointer) {
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => return Ok(None),
            Err(source) => return Err(io_error(&pointer)(source)),
            Ok(meta) if meta.file_type().is_symlink() => fs::read_link(&pointer)
                .map_err(io_error(&pointer))?
                .to_string_lossy()
                .into_owned(),
            Ok(_) => fs::read_to_string(&pointer)
                .map_err(io_error(&pointer))?
                .trim()
                .to_string(),
        };
        let bad = || PublishError::BadPointer {
            path: pointer.clone(),
            target: target.clone(),
        };
        let name = target.strip_prefix("runs/").ok_or_else(bad)?;
        if name.is_empty() || name.contains('/') || name.starts_with('.') || name.ends_with(REJECTED_SUFFIX) {
            return Err(bad());
        }
        if !self.run_dir(name).join(MODEL_FILE).is_file() {
            return Err(bad());
        }
        Ok(Some(name.to_string()))
    }

    /// Points `ROOT/current` at run `name`, atomically.
    pub fn point_to(&self, name: &str) -> Result<(), PublishError> {
        let temporary = self.path.join(format!(".current.tmp-{}", std::process::id()));
        let _ = fs::remove_file(&temporary);
        let target = format!("runs/{name}");
        #[cfg(unix)]
        std::os::unix::fs::symlink(&target, &temporary).map_err(io_error(&temporary))?;
        #[cfg(not(unix))]
        crate::model::format::write_atomic(&temporary, format!("{target}\n").as_bytes())?;
        fs::rename(&temporary, self.pointer()).map_err(io_error(&self.pointer()))?;
        sync_folder(&self.path);
        Ok(())
    }

    /// What killed runs left behind: staging folders in `runs/` and
    /// temporary pointers in the root (names starting with `.`).
    pub fn leftovers(&self) -> Result<Vec<PathBuf>, PublishError> {
        let mut found = Vec::new();
        for folder in [self.runs_dir(), self.path.clone()] {
            for entry in fs::read_dir(&folder).map_err(io_error(&folder))? {
                let entry = entry.map_err(io_error(&folder))?;
                let name = entry.file_name().to_string_lossy().into_owned();
                let staging =
                    folder == self.runs_dir() && name.starts_with('.') && name.contains(".staging-");
                let temporary =
                    name.starts_with(".current.tmp-") || (name.starts_with('.') && name.contains(".tmp-"));
                if staging || temporary {
                    found.push(entry.path());
                }
            }
        }
        found.sort();
        Ok(found)
    }

    /// Removes what killed runs left behind (only while holding the lock),
    /// returning what was removed.
    pub fn remove_leftovers(&self) -> Result<Vec<PathBuf>, PublishError> {
        let leftovers = self.leftovers()?;
        for path in &leftovers {
            let removed = if path.is_dir() && !path.is_symlink() {
                fs::remove_dir_all(path)
            } else {
                fs::remove_file(path)
            };
            removed.map_err(io_error(path))?;
        }
        Ok(leftovers)
    }

    /// The run folders (not rejected, not hidden), oldest first.
    pub fn runs(&self) -> Result<Vec<String>, PublishError> {
        let mut names = self.run_folders()?;
        names.retain(|name| !name.ends_with(REJECTED_SUFFIX));
        Ok(names)
    }

    fn run_folders(&self) -> Result<Vec<String>, PublishError> {
        let folder = self.runs_dir();
        let mut names = Vec::new();
        for entry in fs::read_dir(&folder).map_err(io_error(&folder))? {
            let entry = entry.map_err(io_error(&folder))?;
            let name = entry.file_name().to_string_lossy().into_owned();
            if !name.starts_with('.') && entry.path().is_dir() {
                names.push(name);
            }
        }
        names.sort();
        Ok(names)
    }

    /// Removes runs beyond the newest `keep` (never the published one), and
    /// rejected runs older than the oldest run kept. Call after the pointer
    /// moved. Returns the names removed.
    pub fn prune(&self, keep: usize) -> Result<Vec<String>, PublishError> {
        let published = self.published()?;
        let runs = self.runs()?;
        let cut = runs.len().saturating_sub(keep);
        let mut removed = Vec::new();
        let oldest_kept = runs.get(cut).cloned();
        for name in runs.iter().take(cut) {
            if Some(name) != published.as_ref() {
                removed.push(name.clone());
            }
        }
        for name in self.run_folders()? {
            if name.ends_with(REJECTED_SUFFIX) && oldest_kept.as_ref().is_some_and(|oldest| &name < oldest) {
                removed.push(name);
            }
        }
        for name in &removed {
            let dir = self.run_dir(name);
            fs::remove_dir_all(&dir).map_err(io_error(&dir))?;
        }
        if !removed.is_empty() {
            sync_folder(&self.runs_dir());
        }
        removed.sort();
        Ok(removed)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fake_run(root: &RunRoot, name: &str) {
        fs::create_dir_all(root.run_dir(name)).unwrap();
        fs::write(root.run_dir(name).join(MODEL_FILE), "m").unwrap();
    }

    #[test]
    fn the_pointer_moves_atomically_and_is_checked() {
        // Source: rename(2) — renaming over an existing name replaces it
        // atomically; symlink(7) for the link itself.
        let folder = tempfile::tempdir().unwrap();
        let root = RunRoot::open(&folder.path().join("root")).unwrap();
        assert_eq!(root.published().unwrap(), None);
        fake_run(&root, "20261201T020000Z-0001");
        fake_run(&root, "20261202T020000Z-0002");
        root.point_to("20261201T020000Z-0001").unwrap();
        assert_eq!(
            root.published().unwrap().as_deref(),
            Some("20261201T020000Z-0001")
        );
        root.point_to("20261202T020000Z-0002").unwrap();
        assert_eq!(
            root.published().unwrap().as_deref(),
            Some("20261202T020000Z-0002")
        );
        assert!(
            root.pointer().join(MODEL_FILE).is_file(),
            "the link leads into the run folder"
        );
        assert!(root.leftovers().unwrap().is_empty());
        // A pointer file (systems without links) is read the same way.
        fs::remove_file(root.pointer()).unwrap();
        fs::write(root.pointer(), "runs/20261201T020000Z-0001\n").unwrap();
        assert_eq!(
            root.published().unwrap().as_deref(),
            Some("20261201T020000Z-0001")
        );
        fs::write(root.pointer(), "../elsewhere\n").unwrap();
        assert!(matches!(root.published(), Err(PublishError::BadPointer { .. })));
    }

    #[test]
    fn pruning_keeps_the_newest_runs_and_the_published_one() {
        // Source: common practice (retention by count, newest first, never
        // the live version).
        let folder = tempfile::tempdir().unwrap();
        let root = RunRoot::open(folder.path()).unwrap();
        for day in 1..=5 {
            fake_run(&root, &format!("2026120{day}T020000Z-000{day}"));
        }
        fake_run(&root, "20261201T030000Z-0009.rejected");
        fake_run(&root, "20261205T030000Z-0010.rejected");
        fs::create_dir_all(root.runs_dir().join(".20261206T020000Z-0011.staging-99")).unwrap();
        root.point_to("20261202T020000Z-0002").unwrap();
        let removed = root.prune(2).unwrap();
        assert_eq!(
            removed,
            vec![
                "20261201T020000Z-0001",
                "20261201T030000Z-0009.rejected",
                "20261203T020000Z-0003"
            ]
        );
        assert_eq!(
            root.runs().unwrap(),
            vec![
                "20261202T020000Z-0002",
                "20261204T020000Z-0004",
                "20261205T020000Z-0005"
            ]
        );
        assert_eq!(root.leftovers().unwrap().len(), 1);
        root.remove_leftovers().unwrap();
        assert!(root.leftovers().unwrap().is_empty());
        assert!(root.run_dir("20261205T030000Z-0010.rejected").is_dir());
    }

    #[test]
    fn run_names_sort_by_time() {
        // Source: common practice (ISO 8601 basic format sorts as text).
        let early = RunRoot::run_name(UtcTime::from_unix(1_000_000_000), 7);
        let late = RunRoot::run_name(UtcTime::from_unix(1_000_086_400), 8);
        assert_eq!(early, "20010909T014640Z-0007");
        assert!(early < late);
    }

    #[test]
    fn every_single_byte_change_of_the_pointer_is_refused() {
        // Source: common practice — a pointer must name a complete run
        // folder of its root; with one run in the root, any other target
        // names nothing usable. Every value of every byte of the link's
        // target is tried (NUL cannot be in a link).
        let folder = tempfile::tempdir().unwrap();
        let root = RunRoot::open(folder.path()).unwrap();
        fake_run(&root, "20261201T020000Z-0001");
        let target = b"runs/20261201T020000Z-0001".to_vec();
        for position in 0..target.len() {
            for value in 1..=255u8 {
                if value == target[position] {
                    continue;
                }
                let mut changed = target.clone();
                changed[position] = value;
                let _ = fs::remove_file(root.pointer());
                #[cfg(unix)]
                {
                    use std::os::unix::ffi::OsStrExt;
                    std::os::unix::fs::symlink(std::ffi::OsStr::from_bytes(&changed), root.pointer())
                        .unwrap();
                }
                #[cfg(not(unix))]
                fs::write(root.pointer(), &changed).unwrap();
                assert!(
                    root.published().is_err(),
                    "byte {position} set to {value} was accepted"
                );
            }
        }
        for cut in 0..target.len() {
            let _ = fs::remove_file(root.pointer());
            fs::write(root.pointer(), &target[..cut]).unwrap();
            assert!(root.published().is_err(), "cut at {cut} was accepted");
        }
        root.point_to("20261201T020000Z-0001").unwrap();
        assert!(root.published().is_ok());
    }
}
