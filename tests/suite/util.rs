//! Helpers shared by the integration tests: a temporary folder per test and
//! a command builder for the `themata` binary.

use std::path::{Path, PathBuf};

use assert_cmd::Command;

/// A temporary folder that lives as long as the test.
pub struct Scratch {
    folder: tempfile::TempDir,
}

impl Scratch {
    /// A fresh empty folder.
    pub fn new() -> Scratch {
        Scratch {
            folder: tempfile::tempdir().expect("temporary folder"),
        }
    }

    /// Path of `name` inside the folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.folder.path().join(name)
    }

    /// Writes a file (creating parent folders) and returns its path.
    pub fn write(&self, name: &str, contents: impl AsRef<[u8]>) -> PathBuf {
        let path = self.path(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("create parent");
        }
        std::fs::write(&path, contents).expect("write file");
        path
    }

    /// The folder itself.
    pub fn root(&self) -> &Path {
        self.folder.path()
    }
}

/// The `themata` binary, run from `dir`.
pub fn themata(dir: &Path) -> Command {
    let mut command = Command::cargo_bin("themata").expect("binary built");
    command.current_dir(dir);
    command
}
