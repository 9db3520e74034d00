//! The model folder: what `fit` and `run` write and every other command
//! reads. It holds [`MODEL_FILE`] and [`SUMMARY_FILE`] (the marker that makes
//! a folder themata output), is written whole through a
//! [`StagedFolder`], and has its checkpoint in a file beside it
//! ([`checkpoint_path`]).

use std::path::{Path, PathBuf};

use super::Model;
use super::format::{FormatError, OUTPUT_MARKER, StagedFolder};
use super::summary::FitSummary;

/// The model file inside a model folder.
pub const MODEL_FILE: &str = "model.bin";
/// The summary inside a model folder; its presence marks the folder as
/// themata output that may be replaced.
pub const SUMMARY_FILE: &str = OUTPUT_MARKER;

/// Why a model folder could not be read.
#[derive(Debug, thiserror::Error)]
pub enum FolderError {
    /// The folder holds no model file.
    #[error(
        "{}: no model here (expected {MODEL_FILE}); pass a folder written by `themata fit` or `themata run`",
        .dir.display()
    )]
    NoModel { dir: PathBuf },
    /// The model file is missing, damaged or unreadable.
    #[error(transparent)]
    File(#[from] FormatError),
}

impl FolderError {
    /// True when the error is about the folder's content rather than the system.
    pub fn is_bad_input(&self) -> bool {
        match self {
            FolderError::NoModel { .. } => true,
            FolderError::File(err) => err.is_bad_input(),
        }
    }
}

/// Where the checkpoint of a run writing the model folder `out` lives: a
/// file beside it, `OUT.checkpoint`.
pub fn checkpoint_path(out: &Path) -> PathBuf {
    let name = out
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_else(|| "model".into());
    out.with_file_name(format!("{name}.checkpoint"))
}

/// Loads the model of a model folder.
pub fn load_model(dir: &Path) -> Result<Model, FolderError> {
    let path = dir.join(MODEL_FILE);
    if !path.is_file() {
        return Err(FolderError::NoModel {
            dir: dir.to_path_buf(),
        });
    }
    Ok(Model::load(&path)?)
}

/// Writes the model file and the summary into a staged folder (which may
/// hold other files of the same output).
pub fn stage_model(staged: &StagedFolder, model: &Model, summary: &FitSummary) -> Result<(), FormatError> {
    let bytes = model.encode(&staged.path(MODEL_FILE))?;
    staged.write(MODEL_FILE, &bytes)?;
    drop(bytes);
    let summary_path = staged.path(SUMMARY_FILE);
    let mut json = serde_json::to_vec_pretty(summary).map_err(|err| FormatError::Encode {
        path: summary_path,
        kind: "summary",
        detail: err.to_string(),
    })?;
    json.push(b'\n');
    staged.write(SUMMARY_FILE, &json)
}

/// Writes the model folder `out` whole (replacing an earlier model folder
/// there) and removes the checkpoint of the run that made it.
pub fn write_model_folder(out: &Path, model: &Model, summary: &FitSummary) -> Result<(), FormatError> {
    let staged = StagedFolder::begin(out)?;
    stage_model(&staged, model, summary)?;
    staged.commit()?;
    remove_checkpoint(out)
}

/// Removes the checkpoint beside the model folder `out`, if there is one.
pub fn remove_checkpoint(out: &Path) -> Result<(), FormatError> {
    remove_file_if_any(&checkpoint_path(out))
}

/// Removes a file, when there is one (a checkpoint left by a finished run).
pub fn remove_file_if_any(path: &Path) -> Result<(), FormatError> {
    match std::fs::remove_file(path) {
        Ok(()) => Ok(()),
        Err(err) if err.kind() == std::io::ErrorKind::NotFound => Ok(()),
        Err(source) => Err(FormatError::Io {
            path: path.to_path_buf(),
            source,
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_checkpoint_sits_beside_the_folder() {
        // Source: common practice — a file beside the output, not inside
        // the folder that is swapped in whole.
        assert_eq!(
            checkpoint_path(Path::new("runs/model")),
            Path::new("runs/model.checkpoint")
        );
        assert_eq!(
            checkpoint_path(Path::new("model/")),
            Path::new("model.checkpoint")
        );
    }

    #[test]
    fn a_folder_without_a_model_is_named_in_the_error() {
        let folder = tempfile::tempdir().unwrap();
        let err = load_model(folder.path()).unwrap_err();
        assert!(err.is_bad_input());
        assert!(err.to_string().contains("no model here"), "{err}");
    }
}
