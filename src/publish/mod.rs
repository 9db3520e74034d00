//! Publishing runs for nightly retraining. A run root holds one folder per
//! run, named by UTC date-time and run number so that they sort by time,
//! and a pointer, `ROOT/current`, to the published one; topics keep their
//! ids from run to run (matched against the published model), editors keep
//! their names for them in `ROOT/names.toml`, and a quality gate decides
//! whether a finished run replaces the published one.
//!
//! The root's layout:
//!
//! ```text
//! ROOT/
//!   current            symlink to runs/<run> (the published run)
//!   counters           next run number, next fresh topic id (with a CRC)
//!   names.toml         topic names by id, kept by editors
//!   lock               held by the running process; names its holder
//!   runs/<stamp>-<n>/  a published (or kept) run: model, summary, run.json, log
//!   runs/<stamp>-<n>.rejected/   a run the gate refused
//! ```

#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing,
        clippy::panic
    )
)]

pub mod clock;
pub mod counters;
pub mod gate;
pub mod identity;
pub mod lock;
pub mod names;
pub mod record;
pub mod root;
pub mod side_files;

use std::path::PathBuf;

use crate::model::format::FormatError;

/// What can go wrong with a run root.
#[derive(Debug, thiserror::Error)]
pub enum PublishError {
    /// Another run holds the root.
    #[error("{path}: another run holds the lock ({holder}); wait for it to finish, or check that process")]
    Locked { path: PathBuf, holder: String },
    /// A state file of the root cannot be read as such.
    #[error("{path}: damaged ({detail}); restore it from a backup or remove it to start the count again")]
    Damaged { path: PathBuf, detail: String },
    /// The names file does not parse.
    #[error("{path}:{line}: {detail}")]
    Names {
        path: PathBuf,
        line: usize,
        detail: String,
    },
    /// The pointer names something that is not a run folder of the root.
    #[error("{path}: the pointer names `{target}`, which is not a run folder of this root")]
    BadPointer { path: PathBuf, target: String },
    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    #[error(transparent)]
    File(#[from] FormatError),
}

impl PublishError {
    /// True when the error is about the root's content or a held lock
    /// rather than a failing system.
    pub fn is_bad_input(&self) -> bool {
        match self {
            PublishError::Io { .. } => false,
            PublishError::File(err) => err.is_bad_input(),
            _ => true,
        }
    }
}
