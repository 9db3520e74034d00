//! What a model folder may hold beside the model, as far as the report and
//! the exports use it: the topic names of its run root, its run record,
//! what its build skipped (`build.json`) and its held-out perplexity (from
//! `summary.json`). None of these is required; one that is missing is
//! absent, one that cannot be read becomes a warning rather than a failure,
//! since the model itself is fine. The command line and the Python package
//! both read a folder's side files here.

use std::path::Path;

use crate::ingest::corpus::BuildSummary;
use crate::model::folder::SUMMARY_FILE;
use crate::publish::names::{self, TopicNames};
use crate::publish::record::RunRecord;

/// The build record a run folder holds.
pub const BUILD_FILE: &str = "build.json";

/// The side files of a model folder, as far as they could be read.
#[derive(Default)]
pub struct FolderContext {
    pub names: Option<TopicNames>,
    pub record: Option<RunRecord>,
    pub build: Option<BuildSummary>,
    pub heldout_perplexity: Option<f64>,
    /// One sentence per side file that exists but could not be read.
    pub warnings: Vec<String>,
}

/// The editors' topic names for the model in `dir`: `None` outside a run
/// root or when no topic is named; a names file that cannot be read gives
/// the warning to show (the caller goes on without names).
pub fn names_of(dir: &Path) -> Result<Option<TopicNames>, String> {
    match names::names_for_model_dir(dir) {
        Ok(names) => Ok((!names.is_empty()).then_some(names)),
        Err(err) => Err(format!("{err}; topics are shown without names")),
    }
}

impl FolderContext {
    /// Reads what there is beside the model in `dir`; problems become
    /// `warnings`, in the order they were found.
    pub fn read(dir: &Path) -> FolderContext {
        let mut context = FolderContext::default();
        let mut warnings = Vec::new();
        match names_of(dir) {
            Ok(names) => context.names = names,
            Err(warning) => warnings.push(warning),
        }
        match RunRecord::load(dir) {
            Ok(record) => context.record = record,
            Err(err) => warnings.push(format!("{err}; drift against the previous run is left out")),
        }
        let build_path = dir.join(BUILD_FILE);
        match std::fs::read(&build_path) {
            Ok(bytes) => match serde_json::from_slice::<BuildSummary>(&bytes) {
                Ok(build) => context.build = Some(build),
                Err(err) => warnings.push(format!(
                    "{}: cannot be read ({err}); skipped-document counts are left out",
                    build_path.display()
                )),
            },
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => {}
            Err(err) => warnings.push(format!("{}: {err}", build_path.display())),
        }
        let summary_path = dir.join(SUMMARY_FILE);
        match std::fs::read(&summary_path) {
            Ok(bytes) => match serde_json::from_slice::<serde_json::Value>(&bytes) {
                Ok(summary) => {
                    context.heldout_perplexity = summary
                        .get("heldout_perplexity")
                        .and_then(serde_json::Value::as_f64)
                }
                Err(err) => warnings.push(format!(
                    "{}: cannot be read ({err}); held-out perplexity is left out",
                    summary_path.display()
                )),
            },
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => {}
            Err(err) => warnings.push(format!("{}: {err}", summary_path.display())),
        }
        context.warnings = warnings;
        context
    }
}

/// A short name for the model in `dir`: the name of the folder it resolves
/// to (so `ROOT/current` shows the run's name).
pub fn model_title(dir: &Path) -> String {
    let resolved = std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf());
    resolved
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_else(|| dir.display().to_string())
}
