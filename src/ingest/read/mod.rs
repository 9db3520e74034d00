//! Reading raw documents: folders of text files, JSON Lines, CSV and stdin.
//!
//! This module owns the step from input paths to [`RawDocument`]s. It decides
//! the format of each input, walks folders in a fixed order, streams JSON
//! Lines and CSV record by record, and turns every unusable file or record
//! into a [`Diagnostic`] instead of stopping. Only problems that make a whole
//! input unusable (a missing path, an unknown format, a CSV without the text
//! column, a stream that breaks part way) stop reading with a [`ReadError`].
//!
//! Rules worth knowing:
//! - Folders are walked depth first, entries of each folder in byte order of
//!   their names; names starting with `.` are skipped. Linked folders are
//!   followed, except a link back into a folder being walked.
//! - Ids: a text file is named by its path as given (for a file found in a
//!   folder, the folder's path as given and then the path below it), `.`
//!   parts dropped and `/` between parts, so a file has the same id whether
//!   its folder or the file itself was passed; a record by its id field or
//!   column, or `file:line` when that is missing or empty.
//! - A document whose text is empty or only whitespace is skipped, and so is
//!   a document whose id was already handed out earlier in the same call
//!   (unless `unique_ids` is off, as for `assign`).
//! - The input `-` is standard input, read as JSON Lines (as CSV with the CSV
//!   format, as one text document with the text format).

#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing,
        clippy::panic
    )
)]

mod csv_table;
mod folder;
mod json_lines;
mod origin;

use std::collections::HashSet;
use std::fs;
use std::io::{self, BufRead, BufReader, Read};
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use csv_table::read_csv;
use folder::{FolderWalk, offer_text, path_id};
use json_lines::read_json_lines;
pub use origin::{Diagnostic, DiagnosticKind, Origin};

/// The origin file name given to everything read from standard input.
pub const STDIN_ORIGIN: &str = "<stdin>";

/// The input argument that stands for standard input.
const STDIN_ARGUMENT: &str = "-";

/// The UTF-8 encoding of U+FEFF, which some writers put at the start of a file.
const BYTE_ORDER_MARK: &[u8] = b"\xEF\xBB\xBF";

/// Starting capacity of the reused JSON Lines buffer and of file readers.
const READ_BUFFER_BYTES: usize = 64 * 1024;

/// The longest document read by default, in bytes (a text file, a JSON
/// line or a CSV record): 32 MiB, some thirty times a long novel. A longer
/// one is skipped with a diagnostic, so that one runaway record cannot
/// exhaust memory.
pub const DEFAULT_MAX_DOCUMENT_BYTES: usize = 32 * 1024 * 1024;

/// The field or column holding a document's text when none is named.
pub const DEFAULT_TEXT_FIELD: &str = "text";
/// The field or column holding a document's id when none is named.
pub const DEFAULT_ID_FIELD: &str = "id";
/// The field or column holding a document's label when none is named.
pub const DEFAULT_LABEL_FIELD: &str = "label";

/// The field or column holding a document's date when none is named.
pub const DEFAULT_DATE_FIELD: &str = "date";

/// How to interpret an input path.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "lowercase")]
pub enum InputFormat {
    /// Decide from the file extension (.txt/.md text, .jsonl/.ndjson JSON Lines, .csv CSV).
    #[default]
    Auto,
    /// One document per file.
    Text,
    /// One JSON object per line.
    Jsonl,
    /// Comma-separated values with a header row.
    Csv,
}

/// What an optional field of a record is for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FieldRole {
    Id,
    Label,
    Date,
}

impl FieldRole {
    fn name(self) -> &'static str {
        match self {
            FieldRole::Id => "id",
            FieldRole::Label => "label",
            FieldRole::Date => "date",
        }
    }

    /// What documents do without the field.
    fn without(self) -> &'static str {
        match self {
            FieldRole::Id => "documents are named by file and line instead; check the field name",
            FieldRole::Label => "no document has a label; check the field name",
            FieldRole::Date => "no document has a date; check the field name",
        }
    }
}

/// An optional field the user named, to be warned about when no record has it.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct NamedField {
    pub role: FieldRole,
    pub name: String,
}

/// Resolved reading options.
#[derive(Clone, Debug)]
pub struct ReadOptions {
    /// The format of every input, or [`InputFormat::Auto`] to go by extension.
    pub format: InputFormat,
    /// The JSON field or CSV column holding the document text (required).
    pub text_field: String,
    /// The JSON field or CSV column holding the document id (optional).
    pub id_field: String,
    /// The JSON field or CSV column holding the document label (optional).
    pub label_field: String,
    /// The JSON field or CSV column holding the document date (optional).
    pub date_field: String,
    /// Skip a document whose id an earlier one had (true for building a
    /// corpus, where ids name documents; `assign` streams and keeps nothing
    /// per document, so it places every document whatever its id).
    pub unique_ids: bool,
    /// Optional fields the user named (rather than left at their
    /// defaults): a warning says so when no record of any input has one.
    pub named_fields: Vec<NamedField>,
    /// The longest document read, in bytes of its file, JSON line or CSV
    /// record; a longer one is skipped with a [`DiagnosticKind::TooLong`]
    /// diagnostic. A JSON line or text file is never held beyond this; a
    /// CSV record is held whole by the CSV parser before it is measured.
    pub max_document_bytes: usize,
}

impl Default for ReadOptions {
    fn default() -> Self {
        ReadOptions {
            format: InputFormat::Auto,
            text_field: DEFAULT_TEXT_FIELD.into(),
            id_field: DEFAULT_ID_FIELD.into(),
            label_field: DEFAULT_LABEL_FIELD.into(),
            date_field: DEFAULT_DATE_FIELD.into(),
            unique_ids: true,
            named_fields: Vec::new(),
            max_document_bytes: DEFAULT_MAX_DOCUMENT_BYTES,
        }
    }
}

/// One document as read, before tokenizing.
#[derive(Clone, Debug)]
pub struct RawDocument {
    /// The document's id, unique within one call of [`read_documents`].
    pub id: String,
    /// The document's text; never empty or only whitespace.
    pub text: String,
    /// The document's label, when the input has one.
    pub label: Option<String>,
    /// The document's date as written in the input, when it has one (not
    /// checked here: a report counts the dates it cannot read).
    pub date: Option<String>,
    /// Where the document was read from.
    pub origin: Origin,
}

/// Problems that stop reading altogether.
#[derive(Debug, thiserror::Error)]
pub enum ReadError {
    /// An input path does not exist.
    #[error("{path}: no such file or folder; check the path")]
    Missing {
        /// The input as given.
        path: PathBuf,
    },
    /// The list of inputs is empty.
    #[error("no inputs given; pass one or more files or folders, or `-` to read JSON Lines from stdin")]
    NoInputs,
    /// A file's format cannot be told from its extension.
    #[error("{path}: cannot tell the format from the file extension; pass --format text|jsonl|csv")]
    UnknownFormat {
        /// The file as given.
        path: PathBuf,
    },
    /// A CSV header row lacks the text column.
    #[error(
        "{path}: the header row has no column `{column}` (columns: {}); name the column holding the text with --text-field (text_field in a config file)",
        list_columns(.available)
    )]
    MissingColumn {
        /// The CSV file.
        path: PathBuf,
        /// The text column that was asked for.
        column: String,
        /// The columns the header row does name.
        available: Vec<String>,
    },
    /// No record of a JSON Lines input has the text field.
    #[error(
        "{path}: no record has the text field `{field}` (fields seen: {}); name the field holding the text with --text-field (text_field in a config file)",
        list_columns(.seen)
    )]
    MissingTextField {
        /// The input.
        path: PathBuf,
        /// The text field that was asked for.
        field: String,
        /// Field names the records do have (the first few).
        seen: Vec<String>,
    },
    /// A CSV input has no usable header row.
    #[error("{path}: {problem}; a CSV input must start with a header row naming its columns")]
    BadHeader {
        /// The CSV file.
        path: PathBuf,
        /// What is wrong with the header row.
        problem: String,
    },
    /// Reading an opened input failed part way.
    #[error("{path}: reading failed part way: {source}; check the input and run again")]
    Io {
        /// The input being read ([`STDIN_ORIGIN`] for stdin).
        path: PathBuf,
        /// The underlying failure.
        source: io::Error,
    },
}

fn list_columns(columns: &[String]) -> String {
    if columns.is_empty() {
        "none".to_string()
    } else {
        columns
            .iter()
            .map(|name| format!("`{name}`"))
            .collect::<Vec<_>>()
            .join(", ")
    }
}

/// Counts of what was read.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct ReadCounts {
    /// Every file or record considered, whether used or skipped.
    pub records_seen: usize,
    /// The documents handed to the sink.
    pub documents_emitted: usize,
}

/// Reads every input, handing each good document to `sink` and recording problems in `diagnostics`.
///
/// All inputs are checked (existence, format) before anything is read, so a
/// mistyped path fails fast. Documents are handed over in input order, and
/// within a folder in walk order.
///
/// `warnings` receives what is worth saying once about the whole call: an
/// optional field the user named that no record of any input has.
pub fn read_documents(
    inputs: &[PathBuf],
    options: &ReadOptions,
    diagnostics: &mut Vec<Diagnostic>,
    warnings: &mut Vec<String>,
    sink: &mut dyn FnMut(RawDocument),
) -> Result<ReadCounts, ReadError> {
    let mut open_stdin = || -> Box<dyn BufRead> { Box::new(io::stdin().lock()) };
    read_documents_from(inputs, options, diagnostics, warnings, sink, &mut open_stdin)
}

/// Reads one stream the way standard input is read: in `options.format`
/// (JSON Lines for [`InputFormat::Auto`], one text document for
/// [`InputFormat::Text`]), named [`STDIN_ORIGIN`] in origins. The fuzz
/// targets and tests feed it bytes.
pub fn read_stream(
    reader: Box<dyn BufRead>,
    options: &ReadOptions,
    diagnostics: &mut Vec<Diagnostic>,
    warnings: &mut Vec<String>,
    sink: &mut dyn FnMut(RawDocument),
) -> Result<ReadCounts, ReadError> {
    let mut reader = Some(reader);
    let mut open_stdin = || -> Box<dyn BufRead> { reader.take().unwrap_or_else(|| Box::new(io::empty())) };
    let inputs = [PathBuf::from(STDIN_ARGUMENT)];
    read_documents_from(&inputs, options, diagnostics, warnings, sink, &mut open_stdin)
}

/// [`read_documents`] with the source of standard input passed in.
fn read_documents_from(
    inputs: &[PathBuf],
    options: &ReadOptions,
    diagnostics: &mut Vec<Diagnostic>,
    warnings: &mut Vec<String>,
    sink: &mut dyn FnMut(RawDocument),
    open_stdin: &mut dyn FnMut() -> Box<dyn BufRead>,
) -> Result<ReadCounts, ReadError> {
    if inputs.is_empty() {
        return Err(ReadError::NoInputs);
    }
    let plans = inputs
        .iter()
        .map(|path| plan_input(path, options.format))
        .collect::<Result<Vec<_>, _>>()?;
    let mut collector = Collector::new(options, diagnostics, sink);
    for plan in plans {
        match plan {
            InputPlan::Stdin => read_stdin(open_stdin(), options, &mut collector)?,
            InputPlan::Folder(folder) => {
                let mut walk = FolderWalk {
                    options,
                    root_id: path_id(folder),
                    relative: Vec::new(),
                    ancestors: Vec::new(),
                };
                walk.walk(folder, &mut collector)?;
            }
            InputPlan::File(path, kind) => {
                let id = path_id(path);
                read_file(path, kind, id, options, &mut collector)?;
            }
            InputPlan::Unopenable(path, error) => {
                collector.counts.records_seen += 1;
                collector.skip(
                    DiagnosticKind::Unreadable,
                    Origin {
                        file: path.display().to_string(),
                        line: None,
                    },
                    None,
                    format!("cannot be opened: {error}; check its permissions"),
                );
            }
        }
    }
    if collector.records_read {
        for (field, found) in options.named_fields.iter().zip(&collector.named_found) {
            if !found {
                warnings.push(format!(
                    "no record of any input has the {} field `{}`; {}",
                    field.role.name(),
                    field.name,
                    field.role.without()
                ));
            }
        }
    }
    Ok(collector.counts)
}

/// Hands documents already in memory (for example a list of texts from a
/// caller of the library) to `sink` under the same rules as files: a
/// document whose text is empty or only whitespace is skipped, and so is one
/// whose id an earlier one had (when `options.unique_ids` is on). Every
/// document counts as one record seen.
pub fn offer_documents(
    documents: impl IntoIterator<Item = RawDocument>,
    options: &ReadOptions,
    diagnostics: &mut Vec<Diagnostic>,
    sink: &mut dyn FnMut(RawDocument),
) -> ReadCounts {
    let mut collector = Collector::new(options, diagnostics, sink);
    for document in documents {
        collector.counts.records_seen += 1;
        collector.offer(document);
    }
    collector.counts
}

/// How a file's content is laid out.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum FileKind {
    Text,
    JsonLines,
    Csv,
}

/// What to do with one input, decided before anything is read.
enum InputPlan<'a> {
    Stdin,
    Folder(&'a Path),
    File(&'a Path, FileKind),
    Unopenable(&'a Path, io::Error),
}

fn plan_input(path: &Path, format: InputFormat) -> Result<InputPlan<'_>, ReadError> {
    if path.as_os_str() == STDIN_ARGUMENT {
        return Ok(InputPlan::Stdin);
    }
    match fs::metadata(path) {
        Ok(metadata) if metadata.is_dir() => Ok(InputPlan::Folder(path)),
        Ok(_) => {
            let kind = match format {
                InputFormat::Auto => kind_from_extension(path),
                InputFormat::Text => Some(FileKind::Text),
                InputFormat::Jsonl => Some(FileKind::JsonLines),
                InputFormat::Csv => Some(FileKind::Csv),
            };
            match kind {
                Some(kind) => Ok(InputPlan::File(path, kind)),
                None => Err(ReadError::UnknownFormat {
                    path: path.to_path_buf(),
                }),
            }
        }
        Err(error)
            if matches!(
                error.kind(),
                io::ErrorKind::NotFound | io::ErrorKind::NotADirectory
            ) =>
        {
            Err(ReadError::Missing {
                path: path.to_path_buf(),
            })
        }
        Err(error) => Ok(InputPlan::Unopenable(path, error)),
    }
}

/// The lowercased extension of `path`, if it has one.
fn lowercase_extension(path: &Path) -> Option<String> {
    path.extension()
        .map(|extension| extension.to_string_lossy().to_ascii_lowercase())
}

fn kind_from_extension(path: &Path) -> Option<FileKind> {
    match lowercase_extension(path)?.as_str() {
        "txt" | "md" => Some(FileKind::Text),
        "jsonl" | "ndjson" => Some(FileKind::JsonLines),
        "csv" => Some(FileKind::Csv),
        _ => None,
    }
}

/// Holds the outputs of one call and applies the rules shared by all formats.
struct Collector<'a> {
    diagnostics: &'a mut Vec<Diagnostic>,
    sink: &'a mut dyn FnMut(RawDocument),
    seen_ids: HashSet<String>,
    unique_ids: bool,
    counts: ReadCounts,
    /// Per entry of `ReadOptions::named_fields`: whether some record had it.
    named_found: Vec<bool>,
    /// Whether any record-based input (JSON Lines, CSV) was read.
    records_read: bool,
}

impl<'a> Collector<'a> {
    /// A collector for one call with `options`, empty.
    fn new(
        options: &ReadOptions,
        diagnostics: &'a mut Vec<Diagnostic>,
        sink: &'a mut dyn FnMut(RawDocument),
    ) -> Collector<'a> {
        Collector {
            diagnostics,
            sink,
            seen_ids: HashSet::new(),
            unique_ids: options.unique_ids,
            counts: ReadCounts::default(),
            named_found: vec![false; options.named_fields.len()],
            records_read: false,
        }
    }

    /// Notes the fields a record (or a CSV header) has.
    fn note_fields(&mut self, options: &ReadOptions, mut has: impl FnMut(&str) -> bool) {
        self.records_read = true;
        for (field, found) in options.named_fields.iter().zip(self.named_found.iter_mut()) {
            if !*found && has(&field.name) {
                *found = true;
            }
        }
    }
}

impl Collector<'_> {
    fn skip(&mut self, kind: DiagnosticKind, origin: Origin, document: Option<String>, message: String) {
        self.diagnostics.push(Diagnostic {
            kind,
            origin,
            document,
            message,
        });
    }

    /// Skips a document longer than `limit` bytes.
    fn skip_too_long(&mut self, file: String, line: Option<u64>, document: Option<String>, limit: usize) {
        let what = match (&document, line) {
            (Some(id), _) => format!("document `{id}`"),
            (None, Some(_)) => "the record on this line".to_string(),
            (None, None) => "the document".to_string(),
        };
        let message = format!(
            "{what} is longer than {limit} bytes and is skipped; raise --max-document-bytes (max_document_bytes in [input]) to read it, or split it"
        );
        self.skip(DiagnosticKind::TooLong, Origin { file, line }, document, message);
    }

    /// Hands `document` to the sink unless it is empty or its id was used before.
    fn offer(&mut self, document: RawDocument) {
        if document.text.trim().is_empty() {
            let message = if document.text.is_empty() {
                format!("document `{}` is empty", document.id)
            } else {
                format!("document `{}` holds only whitespace", document.id)
            };
            self.skip(DiagnosticKind::Empty, document.origin, Some(document.id), message);
            return;
        }
        if self.unique_ids && self.seen_ids.contains(&document.id) {
            let message = format!(
                "document id `{}` was already used by an earlier document; this one is skipped",
                document.id
            );
            self.skip(
                DiagnosticKind::DuplicateId,
                document.origin,
                Some(document.id),
                message,
            );
            return;
        }
        if self.unique_ids {
            self.seen_ids.insert(document.id.clone());
        }
        self.counts.documents_emitted += 1;
        (self.sink)(document);
    }
}

/// Reads one file; `id` names it when it is a text file.
fn read_file(
    path: &Path,
    kind: FileKind,
    id: String,
    options: &ReadOptions,
    collector: &mut Collector<'_>,
) -> Result<(), ReadError> {
    let origin_name = path.display().to_string();
    if kind == FileKind::Text {
        collector.counts.records_seen += 1;
        match fs::File::open(path).and_then(|file| read_capped(file, options.max_document_bytes)) {
            Ok(Some(bytes)) => offer_text(bytes, id, origin_name, collector),
            Ok(None) => collector.skip_too_long(origin_name, None, Some(id), options.max_document_bytes),
            Err(error) => collector.skip(
                DiagnosticKind::Unreadable,
                Origin {
                    file: origin_name,
                    line: None,
                },
                Some(id.clone()),
                format!("document `{id}` cannot be read: {error}"),
            ),
        }
        return Ok(());
    }
    let file = match fs::File::open(path) {
        Ok(file) => file,
        Err(error) => {
            collector.counts.records_seen += 1;
            collector.skip(
                DiagnosticKind::Unreadable,
                Origin {
                    file: origin_name,
                    line: None,
                },
                None,
                format!("cannot be opened: {error}; check its permissions"),
            );
            return Ok(());
        }
    };
    if kind == FileKind::JsonLines {
        let reader = BufReader::with_capacity(READ_BUFFER_BYTES, file);
        read_json_lines(reader, &origin_name, options, collector)
    } else {
        read_csv(file, &origin_name, options, collector)
    }
}

/// Reads `reader` to its end when it holds at most `limit` bytes; `None`
/// (after reading `limit + 1` bytes, no more) when it holds more.
fn read_capped(reader: impl io::Read, limit: usize) -> io::Result<Option<Vec<u8>>> {
    let mut bytes = Vec::new();
    let cap = u64::try_from(limit).unwrap_or(u64::MAX).saturating_add(1);
    reader.take(cap).read_to_end(&mut bytes)?;
    Ok((bytes.len() <= limit).then_some(bytes))
}

/// Reads standard input in the format asked for (JSON Lines by default).
fn read_stdin(
    mut reader: Box<dyn BufRead>,
    options: &ReadOptions,
    collector: &mut Collector<'_>,
) -> Result<(), ReadError> {
    match options.format {
        InputFormat::Auto | InputFormat::Jsonl => read_json_lines(reader, STDIN_ORIGIN, options, collector),
        InputFormat::Csv => read_csv(reader, STDIN_ORIGIN, options, collector),
        InputFormat::Text => {
            let bytes =
                read_capped(&mut reader, options.max_document_bytes).map_err(|source| ReadError::Io {
                    path: PathBuf::from(STDIN_ORIGIN),
                    source,
                })?;
            collector.counts.records_seen += 1;
            let name = STDIN_ORIGIN.to_string();
            match bytes {
                Some(bytes) => offer_text(bytes, name.clone(), name, collector),
                None => collector.skip_too_long(name.clone(), None, Some(name), options.max_document_bytes),
            }
            Ok(())
        }
    }
}

#[cfg(test)]
mod test_support {
    //! What the reader tests of every input kind share: running a call and
    //! looking at what it produced.

    use super::*;
    use std::io::Cursor;

    /// What one call produced.
    pub(super) struct Outcome {
        pub(super) result: Result<ReadCounts, ReadError>,
        pub(super) documents: Vec<RawDocument>,
        pub(super) diagnostics: Vec<Diagnostic>,
        pub(super) warnings: Vec<String>,
    }

    impl Outcome {
        pub(super) fn ids(&self) -> Vec<&str> {
            self.documents
                .iter()
                .map(|document| document.id.as_str())
                .collect()
        }

        /// The ids with the id of the folder `root` and its `/` taken off
        /// the front (ids of files found in a folder start with it).
        pub(super) fn ids_below(&self, root: &Path) -> Vec<String> {
            let prefix = format!("{}/", path_id(root));
            self.documents
                .iter()
                .map(|document| {
                    document
                        .id
                        .strip_prefix(&prefix)
                        .unwrap_or(&document.id)
                        .to_string()
                })
                .collect()
        }

        pub(super) fn kinds(&self) -> Vec<DiagnosticKind> {
            self.diagnostics
                .iter()
                .map(|diagnostic| diagnostic.kind)
                .collect()
        }

        pub(super) fn counts(&self) -> ReadCounts {
            *self.result.as_ref().expect("reading should succeed")
        }
    }

    pub(super) fn options_with(format: InputFormat) -> ReadOptions {
        ReadOptions {
            format,
            ..ReadOptions::default()
        }
    }

    pub(super) fn run_with_stdin(inputs: &[PathBuf], options: &ReadOptions, stdin: &[u8]) -> Outcome {
        let mut documents = Vec::new();
        let mut diagnostics = Vec::new();
        let stdin = stdin.to_vec();
        let mut open_stdin = move || -> Box<dyn BufRead> { Box::new(Cursor::new(stdin.clone())) };
        let mut warnings = Vec::new();
        let result = read_documents_from(
            inputs,
            options,
            &mut diagnostics,
            &mut warnings,
            &mut |document| documents.push(document),
            &mut open_stdin,
        );
        Outcome {
            result,
            documents,
            diagnostics,
            warnings,
        }
    }

    pub(super) fn run(inputs: &[PathBuf], options: &ReadOptions) -> Outcome {
        run_with_stdin(inputs, options, b"")
    }

    /// Runs the JSON Lines reader over in-memory bytes named `mem.jsonl`.
    pub(super) fn run_json_lines(bytes: &[u8], options: &ReadOptions) -> Outcome {
        let mut documents = Vec::new();
        let mut diagnostics = Vec::new();
        let mut sink = |document| documents.push(document);
        let mut collector = Collector::new(options, &mut diagnostics, &mut sink);
        let result = read_json_lines(Cursor::new(bytes), "mem.jsonl", options, &mut collector)
            .map(|()| collector.counts);
        Outcome {
            result,
            documents,
            diagnostics,
            warnings: Vec::new(),
        }
    }

    pub(super) fn write(root: &Path, relative: &str, bytes: &[u8]) -> PathBuf {
        let path = root.join(relative);
        fs::create_dir_all(path.parent().expect("test paths have a parent")).expect("create test folder");
        fs::write(&path, bytes).expect("write test file");
        path
    }
}

#[cfg(test)]
mod tests {
    use super::test_support::*;
    use super::*;

    #[test]
    pub(super) fn an_unknown_extension_needs_an_explicit_format() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(folder.path(), "notes.rtf", b"some words");
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        // Source: common practice (refuse to guess a format; say how to name it).
        match &outcome.result {
            Err(error @ ReadError::UnknownFormat { path: reported }) => {
                assert_eq!(reported, &path);
                let message = error.to_string();
                assert!(message.contains("notes.rtf"), "{message}");
                assert!(message.contains("--format text|jsonl|csv"), "{message}");
            }
            other => panic!("expected UnknownFormat, got {other:?}"),
        }
        assert!(outcome.documents.is_empty());
        let forced = run(std::slice::from_ref(&path), &options_with(InputFormat::Text));
        assert_eq!(forced.ids(), [path.to_string_lossy().as_ref()]);
    }

    #[test]
    pub(super) fn a_missing_path_stops_before_anything_is_read() {
        let folder = tempfile::tempdir().expect("temp dir");
        let good = write(folder.path(), "good.txt", b"words");
        let missing = folder.path().join("absent.txt");
        let below_a_file = good.join("child.txt");
        // Source: common practice (check every input before the slow part starts).
        for bad in [&missing, &below_a_file] {
            let outcome = run(&[good.clone(), bad.clone()], &ReadOptions::default());
            match &outcome.result {
                Err(error @ ReadError::Missing { path }) => {
                    assert_eq!(path, bad);
                    assert!(error.to_string().contains("no such file or folder"));
                }
                other => panic!("expected Missing, got {other:?}"),
            }
            assert!(
                outcome.documents.is_empty(),
                "nothing is read when an input is missing"
            );
        }
    }

    #[test]
    pub(super) fn no_inputs_is_an_error() {
        let outcome = run(&[], &ReadOptions::default());
        // Source: common practice (an empty input list is a usage mistake, not an empty corpus).
        assert!(matches!(outcome.result, Err(ReadError::NoInputs)));
    }

    #[test]
    pub(super) fn stdin_is_read_as_json_lines() {
        let stdin = b"{\"text\": \"from stdin\"}\n{\"id\": \"s2\", \"text\": \"second\"}\n";
        let outcome = run_with_stdin(&[PathBuf::from("-")], &ReadOptions::default(), stdin);
        // Source: common practice ("-" names standard input).
        assert_eq!(outcome.ids(), ["<stdin>:1", "s2"]);
        assert_eq!(
            outcome.documents[0].origin,
            Origin {
                file: "<stdin>".into(),
                line: Some(1)
            }
        );
        // Source: RFC 4180 §2.3 (header row first; the first record is on line 2).
        let as_csv = run_with_stdin(
            &[PathBuf::from("-")],
            &options_with(InputFormat::Csv),
            b"text\nrow one\n",
        );
        assert_eq!(as_csv.ids(), ["<stdin>:2"]);
    }

    #[test]
    pub(super) fn duplicate_ids_keep_the_first_document() {
        let folder = tempfile::tempdir().expect("temp dir");
        let text_file = write(folder.path(), "x.txt", b"from the text file");
        let id = text_file.to_string_lossy().into_owned();
        let jsonl = write(
            folder.path(),
            "records.jsonl",
            serde_json::json!({ "id": id, "text": "same id as the text file" })
                .to_string()
                .as_bytes(),
        );
        let csv = write(
            folder.path(),
            "table.csv",
            b"id,text\nr1,first\nr2,second\nr1,again\n",
        );
        let outcome = run(&[text_file, jsonl, csv], &ReadOptions::default());
        // Source: common practice (ids name documents uniquely; the first one wins).
        assert_eq!(outcome.ids(), [id.as_str(), "r1", "r2"]);
        assert_eq!(outcome.documents[0].text, "from the text file");
        assert_eq!(
            outcome.kinds(),
            [DiagnosticKind::DuplicateId, DiagnosticKind::DuplicateId]
        );
        assert_eq!(outcome.diagnostics[1].document.as_deref(), Some("r1"));
        assert_eq!(outcome.diagnostics[1].origin.line, Some(4));
        assert!(outcome.diagnostics[1].message.contains("`r1` was already used"));
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 5,
                documents_emitted: 3
            }
        );
    }

    #[test]
    pub(super) fn named_fields_no_record_has_are_warned_about_once() {
        // Source: issue 11, item 7 — a label field that names a column no
        // record has: one warning for the whole call, whatever the number
        // of inputs; a text field no record of an input has: a failure
        // naming the fields there are.
        let folder = tempfile::tempdir().expect("temp dir");
        let jsonl = write(
            folder.path(),
            "a.jsonl",
            b"{\"id\": \"a\", \"text\": \"words\", \"when\": \"2024\"}\n",
        );
        let csv = write(folder.path(), "b.csv", b"id,text\nb,more words\n");
        let options = ReadOptions {
            label_field: "theme".into(),
            date_field: "when".into(),
            named_fields: vec![
                NamedField {
                    role: FieldRole::Label,
                    name: "theme".into(),
                },
                NamedField {
                    role: FieldRole::Date,
                    name: "when".into(),
                },
            ],
            ..ReadOptions::default()
        };
        let outcome = run(&[jsonl.clone(), csv], &options);
        assert_eq!(outcome.ids(), ["a", "b"]);
        assert_eq!(
            outcome.warnings,
            [
                "no record of any input has the label field `theme`; no document has a label; check the field name"
            ]
        );
        // Text files have no fields: nothing to warn about.
        let text = write(folder.path(), "c.txt", b"plain words");
        assert!(run(&[text], &options).warnings.is_empty());
        let body = ReadOptions {
            text_field: "body".into(),
            ..ReadOptions::default()
        };
        match run(&[jsonl], &body).result {
            Err(error @ ReadError::MissingTextField { .. }) => {
                let message = error.to_string();
                assert!(
                    message
                        .contains("no record has the text field `body` (fields seen: `id`, `text`, `when`)"),
                    "{message}"
                );
            }
            other => panic!("expected MissingTextField, got {other:?}"),
        }
    }

    #[test]
    pub(super) fn empty_and_whitespace_documents_are_skipped() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "a/b.txt", b"");
        write(folder.path(), "c.txt", b" \t\r\n\n");
        write(folder.path(), "d.txt", "\u{3000}\u{00A0}\u{2028}".as_bytes());
        write(folder.path(), "e.txt", b"real words");
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        let root = path_id(folder.path());
        // Source: Unicode PropList.txt White_Space (U+3000, U+00A0 and U+2028 are white space).
        assert_eq!(outcome.ids_below(folder.path()), ["e.txt"]);
        assert_eq!(outcome.kinds(), vec![DiagnosticKind::Empty; 3]);
        assert_eq!(
            outcome.diagnostics[0].message,
            format!("document `{root}/a/b.txt` is empty")
        );
        assert_eq!(outcome.diagnostics[0].document, Some(format!("{root}/a/b.txt")));
        assert_eq!(
            outcome.diagnostics[1].message,
            format!("document `{root}/c.txt` holds only whitespace")
        );
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 4,
                documents_emitted: 1
            }
        );

        let json = run_json_lines(
            b"{\"id\": \"blank\", \"text\": \"   \"}\n{\"id\": \"none\", \"text\": \"\"}\n",
            &ReadOptions::default(),
        );
        assert_eq!(json.kinds(), [DiagnosticKind::Empty, DiagnosticKind::Empty]);
        assert_eq!(
            json.diagnostics[1].to_string(),
            "mem.jsonl:2: document `none` is empty"
        );
    }
}
