//! What `report`, `export` and `run` share about the report: reading a
//! model folder's side files (the library's `publish::side_files`) with
//! their warnings printed, the output-path checks, staging `report.html`.

use std::path::Path;

use themata::publish::names::TopicNames;
use themata::publish::side_files::names_of;
pub use themata::publish::side_files::{FolderContext, model_title};

/// Reads what there is beside the model in `dir`, printing on stderr a
/// warning for each side file that could not be read.
pub fn read_side_files(dir: &Path) -> FolderContext {
    let context = FolderContext::read(dir);
    for warning in &context.warnings {
        eprintln!("themata: warning: {warning}");
    }
    context
}

/// The editors' topic names for the model in `dir` when it belongs to a run
/// root with a names file; a names file that cannot be read is a warning
/// (the listing goes on without names).
pub fn names_beside(dir: &Path) -> Option<TopicNames> {
    names_of(dir).unwrap_or_else(|warning| {
        eprintln!("themata: warning: {warning}");
        None
    })
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
