//! The HTML report of a model: one self-contained page (inline CSS, inline
//! SVG, a short inline script for the document browser; no network access)
//! that people open from a file.
//!
//! [`facts`] computes what the page shows, [`charts`] draws the charts with
//! plotters, [`mds`] places the topics on the map, [`template`] writes the
//! page with maud, [`palette`] holds the colours. Nothing here touches the
//! file system: the CLI reads the folder's other files and writes the page.
//! The page holds no time and no random id: the same model and context give
//! the same bytes.

pub mod charts;
pub mod facts;
pub mod mds;
pub mod palette;
pub mod template;

pub use facts::ReportContext;

use crate::evaluate::uncertainty::UncertaintyError;
use crate::model::Model;

/// Why a report could not be written.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// A credible interval failed (a damaged model).
    #[error("credible interval: {0}")]
    Interval(#[from] UncertaintyError),
    /// A chart could not be drawn.
    #[error("chart: {0}")]
    Chart(String),
}

/// The report of `model` as one HTML page.
pub fn render(model: &Model, context: &ReportContext<'_>) -> Result<String, ReportError> {
    let facts = facts::gather(model, context)?;
    template::page(&facts)
}
