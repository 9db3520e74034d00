//! What `report` and `export` read beside a model folder: the topic names of
//! its run root, its run record, what its build skipped and its held-out
//! perplexity. None of these is required; one that is missing is absent, one
//! that cannot be read becomes a warning (printed, and shown in the report)
//! rather than a failure, since the model itself is fine.

use std::path::Path;

use themata::ingest::corpus::BuildSummary;
use themata::publish::names::{self, TopicNames};
use themata::publish::record::RunRecord;

/// The build record a run folder holds.
pub const BUILD_FILE: &str = "build.json";

/// The side files of a model folder, as far as they could be read.
#[derive(Default)]
pub struct FolderContext {
    pub names: Option<TopicNames>,
    pub record: Option<RunRecord>,
    pub build: Option<BuildSummary>,
    pub heldout_perplexity: Option<f64>,
    pub warnings: Vec<String>,
}

impl FolderContext {
    /// Reads what there is beside the model in `dir`; problems become
    /// warnings, printed on stderr as they are found.
    pub fn read(dir: &Path) -> FolderContext {
        let mut context = FolderContext::default();
        let mut warnings = Vec::new();
        let mut warn = |text: String| {
            eprintln!("themata: warning: {text}");
            warnings.push(text);
        };
        match names::names_for_model_dir(dir) {
            Ok(names) => context.names = (!names.is_empty()).then_some(names),
            Err(err) => warn(format!("{err}; topics are shown without names")),
        }
        match RunRecord::load(dir) {
            Ok(record) => context.record = record,
            Err(err) => warn(format!("{err}; drift against the previous run is left out")),
        }
        let build_path = dir.join(BUILD_FILE);
        match std::fs::read(&build_path) {
            Ok(bytes) => match serde_json::from_slice::<BuildSummary>(&bytes) {
                Ok(build) => context.build = Some(build),
                Err(err) => warn(format!(
                    "{}: cannot be read ({err}); skipped-document counts are left out",
                    build_path.display()
                )),
            },
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => {}
            Err(err) => warn(format!("{}: {err}", build_path.display())),
        }
        let summary_path = dir.join(themata::model::folder::SUMMARY_FILE);
        match std::fs::read(&summary_path) {
            Ok(bytes) => match serde_json::from_slice::<serde_json::Value>(&bytes) {
                Ok(summary) => {
                    context.heldout_perplexity = summary
                        .get("heldout_perplexity")
                        .and_then(serde_json::Value::as_f64)
                }
                Err(err) => warn(format!(
                    "{}: cannot be read ({err}); held-out perplexity is left out",
                    summary_path.display()
                )),
            },
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => {}
            Err(err) => warn(format!("{}: {err}", summary_path.display())),
        }
        context.warnings = warnings;
        context
    }
}

/// The editors' topic names for the model in `dir` when it belongs to a run
/// root with a names file; a names file that cannot be read is a warning
/// (the listing goes on without names).
pub fn names_beside(dir: &Path) -> Option<TopicNames> {
    match names::names_for_model_dir(dir) {
        Ok(names) => (!names.is_empty()).then_some(names),
        Err(err) => {
            eprintln!("themata: warning: {err}; topics are shown without names");
            None
        }
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

/// Refuses an output path whose folder does not exist or that names a folder.
pub fn check_out_path(out: &Path) -> Result<(), super::Failure> {
    if out.is_dir() {
        return Err(super::Failure::bad_input(anyhow::anyhow!(
            "{}: is a folder; --out names the file to write",
            out.display()
        )));
    }
    let parent = match out.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent,
        _ => Path::new("."),
    };
    if !parent.is_dir() {
        return Err(super::Failure::bad_input(anyhow::anyhow!(
            "{}: no such folder; create it first or choose another --out",
            parent.display()
        )));
    }
    Ok(())
}

/// The report page a run writes into its folder.
pub const REPORT_FILE: &str = "report.html";

/// Writes the report of `model` into a staged output folder (`run`).
pub fn stage_report(
    staged: &themata::model::format::StagedFolder,
    model: &themata::model::Model,
    context: &themata::report::html::ReportContext<'_>,
) -> Result<(), super::Failure> {
    let page = themata::report::html::render(model, context).map_err(super::Failure::system)?;
    staged.write(REPORT_FILE, page.as_bytes())?;
    Ok(())
}
