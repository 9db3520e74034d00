//! What people and tools read: topics with their top words, document
//! mixtures, and how numbers and text fields are printed. Each output shape
//! is its own type; the writers render them as an aligned table, TSV or
//! JSON.
//!
//! - `topics`: each topic's heaviest words with their weights.
//! - `documents`: each document's topic shares, cut down to the topics worth
//!   reading, in a long or a wide layout.
//! - `numbers`: significant digits and TSV escapes, shared by every writer.
//! - `html`: the self-contained HTML report; `export`: the tidy export
//!   tables; `dates`: the reading of document dates.

pub mod dates;
mod documents;
pub mod export;
pub mod html;
pub mod numbers;
mod topics;

pub use documents::{
    DEFAULT_MIN_SHARE, DEFAULT_WIDE_SLOTS, DocumentLayout, DocumentRow, DocumentView, ListingPlan,
    TopicSelection, TopicShare, UNPLACED, document_rows, placement_row, write_documents,
};
pub use topics::{TopicListing, WeightedWord, WordLimit, name_topics, topic_listings, write_topics};

/// How a listing is printed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, clap::ValueEnum, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ListingFormat {
    /// Aligned columns for reading.
    #[default]
    Table,
    /// Tab-separated values with a header line.
    Tsv,
    /// One JSON document.
    Json,
}
