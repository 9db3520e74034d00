//! Where a document or a problem came from, and the diagnostics that say
//! why a document was skipped; shared by every input kind.

use std::fmt;

use serde::{Deserialize, Serialize};

/// Where a document or a problem came from.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Origin {
    /// The file as named by the inputs (or [`STDIN_ORIGIN`]).
    pub file: String,
    /// The 1-based line, for records and for problems with a known line.
    pub line: Option<u64>,
}

impl fmt::Display for Origin {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(line) => write!(f, "{}:{}", self.file, line),
            None => write!(f, "{}", self.file),
        }
    }
}

/// Why a document was skipped.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DiagnosticKind {
    /// A file or folder could not be opened or read.
    Unreadable,
    /// The bytes of a document, line or field are not valid UTF-8.
    InvalidUtf8,
    /// The document's text is empty or only whitespace.
    Empty,
    /// A record is malformed or lacks a usable text field.
    BadRecord,
    /// The document's id was already used by an earlier document.
    DuplicateId,
    /// The document has no tokens left (reported by the corpus builder).
    NoTokens,
    /// The document (its file, JSON line or CSV record) is longer than the
    /// limit of `max_document_bytes`.
    TooLong,
}

/// A skipped document or unusable record.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Diagnostic {
    /// What kind of problem it is.
    pub kind: DiagnosticKind,
    /// Where the problem was found.
    pub origin: Origin,
    /// The id of the document concerned, when it is known.
    pub document: Option<String>,
    /// A plain sentence saying what is wrong.
    pub message: String,
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.origin, self.message)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn diagnostic_kinds_have_stable_snake_case_names() {
        let names: Vec<String> = [
            DiagnosticKind::Unreadable,
            DiagnosticKind::InvalidUtf8,
            DiagnosticKind::Empty,
            DiagnosticKind::BadRecord,
            DiagnosticKind::DuplicateId,
            DiagnosticKind::NoTokens,
            DiagnosticKind::TooLong,
        ]
        .iter()
        .map(|kind| serde_json::to_string(kind).expect("serialize kind"))
        .collect();
        // Source: common practice (snake_case names in machine-readable reports).
        assert_eq!(
            names,
            [
                "\"unreadable\"",
                "\"invalid_utf8\"",
                "\"empty\"",
                "\"bad_record\"",
                "\"duplicate_id\"",
                "\"no_tokens\"",
                "\"too_long\""
            ]
        );
    }
}
