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
//! - Ids: a text file in a folder is named by its path below that folder with
//!   `/` separators; a text file given directly by the path as given; a record
//!   by its id field or column, or `file:line` when that is missing or empty.
//! - A document whose text is empty or only whitespace is skipped, and so is
//!   a document whose id was already handed out earlier in the same call.
//! - The input `-` is standard input, read as JSON Lines (as CSV with the CSV
//!   format, as one text document with the text format).

use std::collections::{HashSet, VecDeque};
use std::ffi::OsString;
use std::fmt;
use std::fs;
use std::io::{self, BufRead, BufReader, Read};
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use serde_json::Value;

/// The origin file name given to everything read from standard input.
pub const STDIN_ORIGIN: &str = "<stdin>";

/// The input argument that stands for standard input.
const STDIN_ARGUMENT: &str = "-";

/// The UTF-8 encoding of U+FEFF, which some writers put at the start of a file.
const BYTE_ORDER_MARK: &[u8] = b"\xEF\xBB\xBF";

/// Starting capacity of the reused JSON Lines buffer and of file readers.
const READ_BUFFER_BYTES: usize = 64 * 1024;

/// A line buffer that grew past this for one long line is given back, so one
/// huge record does not keep its memory for the rest of the stream.
const LINE_BUFFER_KEEP_BYTES: usize = 4 * 1024 * 1024;

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
}

impl Default for ReadOptions {
    fn default() -> Self {
        ReadOptions {
            format: InputFormat::Auto,
            text_field: "text".into(),
            id_field: "id".into(),
            label_field: "label".into(),
        }
    }
}

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

/// One document as read, before tokenizing.
#[derive(Clone, Debug)]
pub struct RawDocument {
    /// The document's id, unique within one call of [`read_documents`].
    pub id: String,
    /// The document's text; never empty or only whitespace.
    pub text: String,
    /// The document's label, when the input has one.
    pub label: Option<String>,
    /// Where the document was read from.
    pub origin: Origin,
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
        "{path}: the header row has no column `{column}` (columns: {}); set the text field to the column holding the text",
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
pub fn read_documents(
    inputs: &[PathBuf],
    options: &ReadOptions,
    diagnostics: &mut Vec<Diagnostic>,
    sink: &mut dyn FnMut(RawDocument),
) -> Result<ReadCounts, ReadError> {
    let mut open_stdin = || -> Box<dyn BufRead> { Box::new(io::stdin().lock()) };
    read_documents_from(inputs, options, diagnostics, sink, &mut open_stdin)
}

/// [`read_documents`] with the source of standard input passed in.
fn read_documents_from(
    inputs: &[PathBuf],
    options: &ReadOptions,
    diagnostics: &mut Vec<Diagnostic>,
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
    let mut collector = Collector {
        diagnostics,
        sink,
        seen_ids: HashSet::new(),
        counts: ReadCounts::default(),
    };
    for plan in plans {
        match plan {
            InputPlan::Stdin => read_stdin(open_stdin(), options, &mut collector)?,
            InputPlan::Folder(folder) => {
                let mut walk = FolderWalk {
                    options,
                    relative: Vec::new(),
                    ancestors: Vec::new(),
                };
                walk.walk(folder, &mut collector)?;
            }
            InputPlan::File(path, kind) => {
                let id = path.to_string_lossy().into_owned();
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
    Ok(collector.counts)
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

/// The kind a folder walk reads `path` as, or `None` when the walk passes it by.
fn kind_taken_by_folder(format: InputFormat, path: &Path) -> Option<FileKind> {
    let extension = lowercase_extension(path)?;
    match format {
        InputFormat::Auto | InputFormat::Text => {
            (extension == "txt" || extension == "md").then_some(FileKind::Text)
        }
        InputFormat::Jsonl => (extension == "jsonl" || extension == "ndjson").then_some(FileKind::JsonLines),
        InputFormat::Csv => (extension == "csv").then_some(FileKind::Csv),
    }
}

/// Holds the outputs of one call and applies the rules shared by all formats.
struct Collector<'a> {
    diagnostics: &'a mut Vec<Diagnostic>,
    sink: &'a mut dyn FnMut(RawDocument),
    seen_ids: HashSet<String>,
    counts: ReadCounts,
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
        if self.seen_ids.contains(&document.id) {
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
        self.seen_ids.insert(document.id.clone());
        self.counts.documents_emitted += 1;
        (self.sink)(document);
    }
}

/// State of one recursive folder walk.
struct FolderWalk<'a> {
    options: &'a ReadOptions,
    /// Names of the folders between the walk's root and the current folder.
    relative: Vec<String>,
    /// Resolved paths of the folders being walked, to stop at link loops.
    ancestors: Vec<PathBuf>,
}

impl FolderWalk<'_> {
    fn walk(&mut self, folder: &Path, collector: &mut Collector<'_>) -> Result<(), ReadError> {
        let folder_origin = || Origin {
            file: folder.display().to_string(),
            line: None,
        };
        let resolved = match fs::canonicalize(folder) {
            Ok(resolved) => resolved,
            Err(error) => {
                collector.skip(
                    DiagnosticKind::Unreadable,
                    folder_origin(),
                    None,
                    format!("folder cannot be resolved: {error}; its files were skipped"),
                );
                return Ok(());
            }
        };
        if let Some(ancestor) = self.ancestors.iter().find(|ancestor| **ancestor == resolved) {
            collector.skip(
                DiagnosticKind::Unreadable,
                folder_origin(),
                None,
                format!(
                    "folder links back to `{}`, which is already being read; skipped to avoid a loop",
                    ancestor.display()
                ),
            );
            return Ok(());
        }
        let names = match sorted_entry_names(folder) {
            Ok(names) => names,
            Err(error) => {
                collector.skip(
                    DiagnosticKind::Unreadable,
                    folder_origin(),
                    None,
                    format!("folder cannot be listed: {error}; its files were skipped"),
                );
                return Ok(());
            }
        };
        self.ancestors.push(resolved);
        for name in names {
            if name.as_encoded_bytes().first() == Some(&b'.') {
                continue;
            }
            let path = folder.join(&name);
            let display_name = name.to_string_lossy().into_owned();
            // `fs::metadata` follows links, so a linked folder is walked and a
            // linked file is read; a dangling link fails here.
            match fs::metadata(&path) {
                Ok(metadata) if metadata.is_dir() => {
                    self.relative.push(display_name);
                    let walked = self.walk(&path, collector);
                    self.relative.pop();
                    walked?;
                }
                Ok(_) => {
                    if let Some(kind) = kind_taken_by_folder(self.options.format, &path) {
                        let id = self.relative_id(&display_name);
                        read_file(&path, kind, id, self.options, collector)?;
                    }
                }
                Err(error) => {
                    if kind_taken_by_folder(self.options.format, &path).is_some() {
                        let id = self.relative_id(&display_name);
                        collector.counts.records_seen += 1;
                        collector.skip(
                            DiagnosticKind::Unreadable,
                            Origin {
                                file: path.display().to_string(),
                                line: None,
                            },
                            Some(id),
                            format!("cannot be opened: {error}; check the file or the link"),
                        );
                    }
                }
            }
        }
        self.ancestors.pop();
        Ok(())
    }

    /// The id of entry `name` of the current folder: its path below the root.
    fn relative_id(&self, name: &str) -> String {
        let mut id = String::new();
        for part in &self.relative {
            id.push_str(part);
            id.push('/');
        }
        id.push_str(name);
        id
    }
}

/// The names in `folder`, sorted by their bytes.
fn sorted_entry_names(folder: &Path) -> io::Result<Vec<OsString>> {
    let mut names = Vec::new();
    for entry in fs::read_dir(folder)? {
        names.push(entry?.file_name());
    }
    names.sort_by(|left, right| left.as_encoded_bytes().cmp(right.as_encoded_bytes()));
    Ok(names)
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
        match fs::read(path) {
            Ok(bytes) => offer_text(bytes, id, origin_name, collector),
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
            let mut bytes = Vec::new();
            reader.read_to_end(&mut bytes).map_err(|source| ReadError::Io {
                path: PathBuf::from(STDIN_ORIGIN),
                source,
            })?;
            collector.counts.records_seen += 1;
            offer_text(
                bytes,
                STDIN_ORIGIN.to_string(),
                STDIN_ORIGIN.to_string(),
                collector,
            );
            Ok(())
        }
    }
}

/// Checks the bytes of one text document and offers it.
fn offer_text(bytes: Vec<u8>, id: String, origin_name: String, collector: &mut Collector<'_>) {
    let mut text = match String::from_utf8(bytes) {
        Ok(text) => text,
        Err(error) => {
            let valid_bytes = error.utf8_error().valid_up_to();
            let newlines = error.as_bytes()[..valid_bytes]
                .iter()
                .filter(|byte| **byte == b'\n')
                .count();
            let line = newlines as u64 + 1;
            collector.skip(
                DiagnosticKind::InvalidUtf8,
                Origin {
                    file: origin_name,
                    line: Some(line),
                },
                Some(id.clone()),
                format!("document `{id}` is not valid UTF-8 (first bad byte at byte offset {valid_bytes})"),
            );
            return;
        }
    };
    if text.as_bytes().starts_with(BYTE_ORDER_MARK) {
        text.drain(..BYTE_ORDER_MARK.len());
    }
    collector.offer(RawDocument {
        id,
        text,
        label: None,
        origin: Origin {
            file: origin_name,
            line: None,
        },
    });
}

/// Streams JSON Lines from `reader`, one reused buffer for all lines.
///
/// `origin_name` names the input in origins, fallback ids and errors.
fn read_json_lines<R: BufRead>(
    mut reader: R,
    origin_name: &str,
    options: &ReadOptions,
    collector: &mut Collector<'_>,
) -> Result<(), ReadError> {
    let mut buffer: Vec<u8> = Vec::with_capacity(READ_BUFFER_BYTES);
    let mut line_number: u64 = 0;
    loop {
        buffer.clear();
        let read = reader
            .read_until(b'\n', &mut buffer)
            .map_err(|source| ReadError::Io {
                path: PathBuf::from(origin_name),
                source,
            })?;
        if read == 0 {
            return Ok(());
        }
        line_number += 1;
        let mut line = buffer.as_slice();
        if line_number == 1 {
            line = line.strip_prefix(BYTE_ORDER_MARK).unwrap_or(line);
        }
        read_json_line(line, line_number, origin_name, options, collector);
        if buffer.capacity() > LINE_BUFFER_KEEP_BYTES {
            buffer = Vec::with_capacity(READ_BUFFER_BYTES);
        }
    }
}

/// Handles one line of JSON Lines (with its line break, if any).
fn read_json_line(
    raw: &[u8],
    line_number: u64,
    origin_name: &str,
    options: &ReadOptions,
    collector: &mut Collector<'_>,
) {
    let line = raw.trim_ascii();
    if line.is_empty() {
        return;
    }
    collector.counts.records_seen += 1;
    let origin = Origin {
        file: origin_name.to_string(),
        line: Some(line_number),
    };
    let text = match std::str::from_utf8(line) {
        Ok(text) => text,
        Err(error) => {
            let column = error.valid_up_to() + 1;
            collector.skip(
                DiagnosticKind::InvalidUtf8,
                origin,
                None,
                format!("line is not valid UTF-8 (first bad byte at column {column})"),
            );
            return;
        }
    };
    let value: Value = match serde_json::from_str(text) {
        Ok(value) => value,
        Err(error) => {
            let full = error.to_string();
            let position = format!(" at line {} column {}", error.line(), error.column());
            let reason = full.strip_suffix(&position).unwrap_or(&full);
            let message = format!("line is not valid JSON: {reason} (column {})", error.column());
            collector.skip(DiagnosticKind::BadRecord, origin, None, message);
            return;
        }
    };
    let Value::Object(mut fields) = value else {
        let message = format!("line holds a JSON {}, not an object", json_kind(&value));
        collector.skip(DiagnosticKind::BadRecord, origin, None, message);
        return;
    };
    let id = match scalar_field(fields.get(&options.id_field)) {
        Ok(Some(id)) => id,
        Ok(None) => origin.to_string(),
        Err(kind) => {
            let message = format!(
                "field `{}` must be a string or a number, not {kind}",
                options.id_field
            );
            collector.skip(DiagnosticKind::BadRecord, origin, None, message);
            return;
        }
    };
    let label = match scalar_field(fields.get(&options.label_field)) {
        Ok(label) => label,
        Err(kind) => {
            let message = format!(
                "field `{}` must be a string or a number, not {kind}",
                options.label_field
            );
            collector.skip(DiagnosticKind::BadRecord, origin, Some(id), message);
            return;
        }
    };
    let text = match fields.remove(&options.text_field) {
        Some(Value::String(text)) => text,
        other => {
            let found = match &other {
                None => String::new(),
                Some(value) => format!(" (it is {})", json_kind_with_article(value)),
            };
            let message = format!("field `{}` is missing or not a string{found}", options.text_field);
            collector.skip(DiagnosticKind::BadRecord, origin, Some(id), message);
            return;
        }
    };
    collector.offer(RawDocument {
        id,
        text,
        label,
        origin,
    });
}

/// A string or number field as text; `Ok(None)` when missing, null or blank,
/// `Err` with the kind of value found otherwise.
fn scalar_field(value: Option<&Value>) -> Result<Option<String>, &'static str> {
    match value {
        None | Some(Value::Null) => Ok(None),
        Some(Value::String(text)) if text.trim().is_empty() => Ok(None),
        Some(Value::String(text)) => Ok(Some(text.clone())),
        Some(Value::Number(number)) => Ok(Some(number.to_string())),
        Some(other) => Err(json_kind_with_article(other)),
    }
}

fn json_kind(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "boolean",
        Value::Number(_) => "number",
        Value::String(_) => "string",
        Value::Array(_) => "array",
        Value::Object(_) => "object",
    }
}

fn json_kind_with_article(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a string",
        Value::Array(_) => "an array",
        Value::Object(_) => "an object",
    }
}

/// Turns a failure of the CSV reader into a [`ReadError`].
fn csv_failure(error: csv::Error, origin_name: &str) -> ReadError {
    let path = PathBuf::from(origin_name);
    let problem = format!("the header row cannot be read ({error})");
    match error.into_kind() {
        csv::ErrorKind::Io(source) => ReadError::Io { path, source },
        _ => ReadError::BadHeader { path, problem },
    }
}

/// Wraps a CSV input and notes where its line breaks are, so a record's byte
/// offset can be turned into the line the record starts on.
///
/// The csv reader's own `Position::line()` reports the line before the
/// record after a CRLF record end or after blank lines, and CRLF is the
/// line break RFC 4180 prescribes. Offsets are dropped once a record past
/// them has been placed, so memory stays bounded by what the csv reader
/// buffers ahead plus the current record.
struct LineTrackingReader<R> {
    inner: R,
    /// Bytes handed to the csv reader so far.
    offset: u64,
    /// Offsets of `\n` bytes at or after the last placed record.
    line_feeds: VecDeque<u64>,
    /// Offsets of `\r` bytes at or after the last placed record.
    carriage_returns: VecDeque<u64>,
    /// `\n` bytes before the last placed record.
    line_feeds_before: u64,
}

impl<R: Read> LineTrackingReader<R> {
    fn new(inner: R) -> Self {
        LineTrackingReader {
            inner,
            offset: 0,
            line_feeds: VecDeque::new(),
            carriage_returns: VecDeque::new(),
            line_feeds_before: 0,
        }
    }

    /// The 1-based line of the first byte at or after `offset` that is not a
    /// line break (a record's position can point at the `\n` of a CRLF or at
    /// skipped blank lines). Offsets must be asked for in increasing order.
    fn line_at(&mut self, offset: u64) -> u64 {
        let mut first = offset;
        while self.line_feeds.binary_search(&first).is_ok()
            || self.carriage_returns.binary_search(&first).is_ok()
        {
            first += 1;
        }
        while self
            .line_feeds
            .front()
            .is_some_and(|&line_feed| line_feed < first)
        {
            self.line_feeds.pop_front();
            self.line_feeds_before += 1;
        }
        while self
            .carriage_returns
            .front()
            .is_some_and(|&carriage_return| carriage_return < first)
        {
            self.carriage_returns.pop_front();
        }
        self.line_feeds_before + 1
    }
}

impl<R: Read> Read for LineTrackingReader<R> {
    fn read(&mut self, buffer: &mut [u8]) -> io::Result<usize> {
        let read = self.inner.read(buffer)?;
        for (index, byte) in buffer[..read].iter().enumerate() {
            match byte {
                b'\n' => self.line_feeds.push_back(self.offset + index as u64),
                b'\r' => self.carriage_returns.push_back(self.offset + index as u64),
                _ => {}
            }
        }
        self.offset += read as u64;
        Ok(read)
    }
}

/// Streams CSV records (header row first) from `reader`.
fn read_csv<R: Read>(
    reader: R,
    origin_name: &str,
    options: &ReadOptions,
    collector: &mut Collector<'_>,
) -> Result<(), ReadError> {
    // Field counts are checked here against the header, so that a bad record
    // becomes a diagnostic with its line instead of a reader error.
    let mut csv_reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .buffer_capacity(READ_BUFFER_BYTES)
        .from_reader(LineTrackingReader::new(reader));
    let header = csv_reader
        .byte_headers()
        .map_err(|error| csv_failure(error, origin_name))?
        .clone();
    if header.is_empty() {
        return Err(ReadError::BadHeader {
            path: PathBuf::from(origin_name),
            problem: "the file is empty, so there is no header row".to_string(),
        });
    }
    let mut columns = Vec::with_capacity(header.len());
    for (index, name) in header.iter().enumerate() {
        match std::str::from_utf8(name) {
            Ok(name) => columns.push(name.to_string()),
            Err(_) => {
                return Err(ReadError::BadHeader {
                    path: PathBuf::from(origin_name),
                    problem: format!("column {} of the header row is not valid UTF-8", index + 1),
                });
            }
        }
    }
    let find = |field: &str| columns.iter().position(|name| name == field);
    let Some(text_column) = find(&options.text_field) else {
        return Err(ReadError::MissingColumn {
            path: PathBuf::from(origin_name),
            column: options.text_field.clone(),
            available: columns,
        });
    };
    let id_column = find(&options.id_field);
    let label_column = find(&options.label_field);

    let mut record = csv::ByteRecord::new();
    loop {
        match csv_reader.read_byte_record(&mut record) {
            Ok(true) => {}
            Ok(false) => return Ok(()),
            Err(error) if error.is_io_error() => return Err(csv_failure(error, origin_name)),
            Err(error) => {
                // Not expected from a flexible byte reader; kept as a skip.
                collector.counts.records_seen += 1;
                let origin = Origin {
                    file: origin_name.to_string(),
                    line: error
                        .position()
                        .map(|position| csv_reader.get_mut().line_at(position.byte())),
                };
                collector.skip(
                    DiagnosticKind::BadRecord,
                    origin,
                    None,
                    format!("record cannot be read: {error}"),
                );
                continue;
            }
        }
        collector.counts.records_seen += 1;
        let origin = Origin {
            file: origin_name.to_string(),
            line: record
                .position()
                .map(|position| csv_reader.get_mut().line_at(position.byte())),
        };
        if record.len() != columns.len() {
            let message = format!(
                "record has {} fields but the header row has {}",
                record.len(),
                columns.len()
            );
            collector.skip(DiagnosticKind::BadRecord, origin, None, message);
            continue;
        }
        let cell = |column: usize| std::str::from_utf8(&record[column]);
        let not_utf8 = |field: &str| format!("field `{field}` is not valid UTF-8");
        let id = match id_column.map(cell) {
            None => origin.to_string(),
            Some(Ok(id)) if id.trim().is_empty() => origin.to_string(),
            Some(Ok(id)) => id.to_string(),
            Some(Err(_)) => {
                collector.skip(
                    DiagnosticKind::InvalidUtf8,
                    origin,
                    None,
                    not_utf8(&options.id_field),
                );
                continue;
            }
        };
        let label = match label_column.map(cell) {
            None => None,
            Some(Ok(label)) if label.trim().is_empty() => None,
            Some(Ok(label)) => Some(label.to_string()),
            Some(Err(_)) => {
                collector.skip(
                    DiagnosticKind::InvalidUtf8,
                    origin,
                    Some(id),
                    not_utf8(&options.label_field),
                );
                continue;
            }
        };
        let text = match cell(text_column) {
            Ok(text) => text.to_string(),
            Err(_) => {
                collector.skip(
                    DiagnosticKind::InvalidUtf8,
                    origin,
                    Some(id),
                    not_utf8(&options.text_field),
                );
                continue;
            }
        };
        collector.offer(RawDocument {
            id,
            text,
            label,
            origin,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Cursor;

    /// What one call produced.
    struct Outcome {
        result: Result<ReadCounts, ReadError>,
        documents: Vec<RawDocument>,
        diagnostics: Vec<Diagnostic>,
    }

    impl Outcome {
        fn ids(&self) -> Vec<&str> {
            self.documents
                .iter()
                .map(|document| document.id.as_str())
                .collect()
        }

        fn kinds(&self) -> Vec<DiagnosticKind> {
            self.diagnostics
                .iter()
                .map(|diagnostic| diagnostic.kind)
                .collect()
        }

        fn counts(&self) -> ReadCounts {
            *self.result.as_ref().expect("reading should succeed")
        }
    }

    fn options_with(format: InputFormat) -> ReadOptions {
        ReadOptions {
            format,
            ..ReadOptions::default()
        }
    }

    fn run_with_stdin(inputs: &[PathBuf], options: &ReadOptions, stdin: &[u8]) -> Outcome {
        let mut documents = Vec::new();
        let mut diagnostics = Vec::new();
        let stdin = stdin.to_vec();
        let mut open_stdin = move || -> Box<dyn BufRead> { Box::new(Cursor::new(stdin.clone())) };
        let result = read_documents_from(
            inputs,
            options,
            &mut diagnostics,
            &mut |document| documents.push(document),
            &mut open_stdin,
        );
        Outcome {
            result,
            documents,
            diagnostics,
        }
    }

    fn run(inputs: &[PathBuf], options: &ReadOptions) -> Outcome {
        run_with_stdin(inputs, options, b"")
    }

    /// Runs the JSON Lines reader over in-memory bytes named `mem.jsonl`.
    fn run_json_lines(bytes: &[u8], options: &ReadOptions) -> Outcome {
        let mut documents = Vec::new();
        let mut diagnostics = Vec::new();
        let mut sink = |document| documents.push(document);
        let mut collector = Collector {
            diagnostics: &mut diagnostics,
            sink: &mut sink,
            seen_ids: HashSet::new(),
            counts: ReadCounts::default(),
        };
        let result = read_json_lines(Cursor::new(bytes), "mem.jsonl", options, &mut collector)
            .map(|()| collector.counts);
        Outcome {
            result,
            documents,
            diagnostics,
        }
    }

    fn write(root: &Path, relative: &str, bytes: &[u8]) -> PathBuf {
        let path = root.join(relative);
        fs::create_dir_all(path.parent().expect("test paths have a parent")).expect("create test folder");
        fs::write(&path, bytes).expect("write test file");
        path
    }

    #[test]
    fn folder_is_walked_depth_first_in_byte_order_with_relative_ids() {
        let folder = tempfile::tempdir().expect("temp dir");
        for name in ["b.txt", "a.txt", "A.txt", "a/z.md", "a/sub/y.txt", "a b.txt"] {
            write(folder.path(), name, format!("words of {name}").as_bytes());
        }
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        // Source: RFC 20 (ASCII) code table: ' ' 0x20 < 'A' 0x41 < 'a' 0x61, so
        // byte order puts "A.txt" first; a name sorts before any longer name it
        // is a prefix of ("a" before "a.txt") — common practice for byte-wise order.
        assert_eq!(
            outcome.ids(),
            ["A.txt", "a/sub/y.txt", "a/z.md", "a b.txt", "a.txt", "b.txt"]
        );
        // Source: common practice (ids use '/' whatever the platform).
        let nested = &outcome.documents[1];
        assert_eq!(nested.text, "words of a/sub/y.txt");
        assert_eq!(
            nested.origin.file,
            folder.path().join("a/sub/y.txt").display().to_string()
        );
        assert_eq!(nested.origin.line, None);
        assert_eq!(nested.label, None);
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 6,
                documents_emitted: 6
            }
        );
    }

    #[test]
    fn folder_takes_only_the_extensions_of_its_format_ignoring_case() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "notes.TXT", b"upper case extension");
        write(folder.path(), "readme.Md", b"mixed case extension");
        write(folder.path(), "data.json", b"{\"text\": \"not taken\"}");
        write(
            folder.path(),
            "rows.jsonl",
            b"{\"id\": \"j1\", \"text\": \"line one\"}\n",
        );
        write(
            folder.path(),
            "more.NDJSON",
            b"{\"id\": \"j2\", \"text\": \"line two\"}\n",
        );
        write(folder.path(), "table.csv", b"id,text\nc1,cell text\n");
        write(folder.path(), "image.png", b"\x89PNG");
        write(folder.path(), "no_extension", b"plain");
        let root = [folder.path().to_path_buf()];
        // Source: common practice (file extensions compared without regard to case).
        let text = run(&root, &ReadOptions::default());
        assert_eq!(text.ids(), ["notes.TXT", "readme.Md"]);
        assert_eq!(text.counts().records_seen, 2);
        let explicit_text = run(&root, &options_with(InputFormat::Text));
        assert_eq!(explicit_text.ids(), ["notes.TXT", "readme.Md"]);
        // Source: JSON Lines convention (.jsonl; .ndjson is the NDJSON spelling of the same format).
        let json_lines = run(&root, &options_with(InputFormat::Jsonl));
        assert_eq!(json_lines.ids(), ["j2", "j1"]);
        // Source: RFC 4180 §3 (registered file extension .csv).
        let csv = run(&root, &options_with(InputFormat::Csv));
        assert_eq!(csv.ids(), ["c1"]);
        assert!(
            text.diagnostics.is_empty() && json_lines.diagnostics.is_empty() && csv.diagnostics.is_empty()
        );
    }

    #[test]
    fn hidden_files_and_folders_are_skipped() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "seen.txt", b"visible");
        write(folder.path(), ".hidden.txt", b"hidden file");
        write(folder.path(), ".git/inside.txt", b"hidden folder");
        write(folder.path(), "sub/.also.md", b"hidden in a sub folder");
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        // Source: common practice (Unix convention: names starting with '.' are hidden).
        assert_eq!(outcome.ids(), ["seen.txt"]);
        assert_eq!(outcome.counts().records_seen, 1);
    }

    #[test]
    fn a_text_file_given_directly_is_named_by_the_path_as_given() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(folder.path(), "one.md", b"\xEF\xBB\xBFheading and words\n");
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        // Source: common practice (a file named directly keeps the name it was given).
        assert_eq!(outcome.ids(), [path.to_string_lossy().as_ref()]);
        // Source: Unicode Standard §23.8 (U+FEFF at the start of a text is a byte
        // order mark, a signature rather than content).
        assert_eq!(outcome.documents[0].text, "heading and words\n");
    }

    #[test]
    fn an_unknown_extension_needs_an_explicit_format() {
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
    fn a_missing_path_stops_before_anything_is_read() {
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
    fn no_inputs_is_an_error() {
        let outcome = run(&[], &ReadOptions::default());
        // Source: common practice (an empty input list is a usage mistake, not an empty corpus).
        assert!(matches!(outcome.result, Err(ReadError::NoInputs)));
    }

    #[test]
    fn json_lines_fields_ids_and_labels() {
        let bytes = concat!(
            "{\"id\": \"first\", \"text\": \"alpha beta\", \"label\": \"news\"}\n",
            "{\"id\": 42, \"text\": \"gamma\", \"label\": 7}\n",
            "{\"text\": \"no id here\"}\n",
            "{\"id\": null, \"text\": \"null id\", \"label\": null}\n",
            "{\"id\": 2.5, \"text\": \"fraction id\"}\n",
        );
        let outcome = run_json_lines(bytes.as_bytes(), &ReadOptions::default());
        // Source: JSON Lines convention (one JSON value per line); RFC 8259 §6
        // (numbers written as digits, so 42 reads back as "42").
        assert_eq!(
            outcome.ids(),
            ["first", "42", "mem.jsonl:3", "mem.jsonl:4", "2.5"]
        );
        let labels: Vec<Option<&str>> = outcome
            .documents
            .iter()
            .map(|document| document.label.as_deref())
            .collect();
        assert_eq!(labels, [Some("news"), Some("7"), None, None, None]);
        assert_eq!(
            outcome.documents[2].origin,
            Origin {
                file: "mem.jsonl".into(),
                line: Some(3)
            }
        );
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 5,
                documents_emitted: 5
            }
        );
    }

    #[test]
    fn json_lines_field_names_come_from_the_options() {
        let options = ReadOptions {
            format: InputFormat::Jsonl,
            text_field: "body".into(),
            id_field: "key".into(),
            label_field: "topic".into(),
        };
        let bytes = b"{\"key\": \"k1\", \"body\": \"the body\", \"topic\": \"t\", \"text\": \"ignored\"}\n{\"text\": \"only text\"}\n";
        let outcome = run_json_lines(bytes, &options);
        // Source: common practice (field names are settings, not fixed).
        assert_eq!(outcome.ids(), ["k1"]);
        assert_eq!(outcome.documents[0].text, "the body");
        assert_eq!(outcome.documents[0].label.as_deref(), Some("t"));
        assert_eq!(outcome.kinds(), [DiagnosticKind::BadRecord]);
        assert_eq!(
            outcome.diagnostics[0].message,
            "field `body` is missing or not a string"
        );
        assert_eq!(
            outcome.diagnostics[0].to_string(),
            "mem.jsonl:2: field `body` is missing or not a string"
        );
    }

    #[test]
    fn json_lines_blank_lines_are_skipped_and_line_breaks_may_be_crlf() {
        let bytes = b"\n{\"text\": \"one\"}\r\n   \r\n\t\n{\"text\": \"two\"}";
        let outcome = run_json_lines(bytes, &ReadOptions::default());
        // Source: RFC 8259 §2 (CR, LF, space and tab are insignificant whitespace),
        // JSON Lines convention ("\r\n" line ends are read like "\n"; the last line
        // may lack its line break); skipping blank lines is common practice.
        assert_eq!(outcome.ids(), ["mem.jsonl:2", "mem.jsonl:5"]);
        assert_eq!(outcome.documents[0].text, "one");
        assert!(outcome.diagnostics.is_empty());
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 2,
                documents_emitted: 2
            }
        );
    }

    #[test]
    fn json_lines_string_escapes_are_decoded() {
        let bytes = br#"{"text": "caf\u00e9 \"quoted\"\ttab\nnew line \ud83d\ude00 \/"}"#;
        let outcome = run_json_lines(bytes, &ReadOptions::default());
        // Source: RFC 8259 §7 (\uXXXX escapes, surrogate pairs for characters
        // outside the BMP: \ud83d\ude00 is U+1F600, and \" \t \n \/).
        assert_eq!(
            outcome.documents[0].text,
            "café \"quoted\"\ttab\nnew line \u{1F600} /"
        );
    }

    #[test]
    fn json_lines_missing_or_non_string_text_is_a_bad_record() {
        let bytes = concat!(
            "{\"id\": \"a\"}\n",
            "{\"id\": \"b\", \"text\": 12}\n",
            "{\"id\": \"c\", \"text\": [\"x\"]}\n",
            "{\"id\": \"d\", \"text\": null}\n",
            "{\"id\": true, \"text\": \"bad id\"}\n",
            "{\"id\": \"f\", \"text\": \"bad label\", \"label\": {\"x\": 1}}\n",
        );
        let outcome = run_json_lines(bytes.as_bytes(), &ReadOptions::default());
        // Source: common practice (a record without usable text is reported, not guessed at).
        assert!(outcome.documents.is_empty());
        assert_eq!(outcome.kinds(), vec![DiagnosticKind::BadRecord; 6]);
        let messages: Vec<&str> = outcome
            .diagnostics
            .iter()
            .map(|diagnostic| diagnostic.message.as_str())
            .collect();
        assert_eq!(
            messages,
            [
                "field `text` is missing or not a string",
                "field `text` is missing or not a string (it is a number)",
                "field `text` is missing or not a string (it is an array)",
                "field `text` is missing or not a string (it is null)",
                "field `id` must be a string or a number, not a boolean",
                "field `label` must be a string or a number, not an object",
            ]
        );
        assert_eq!(outcome.diagnostics[1].document.as_deref(), Some("b"));
        let lines: Vec<Option<u64>> = outcome
            .diagnostics
            .iter()
            .map(|diagnostic| diagnostic.origin.line)
            .collect();
        assert_eq!(lines, [Some(1), Some(2), Some(3), Some(4), Some(5), Some(6)]);
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 6,
                documents_emitted: 0
            }
        );
    }

    #[test]
    fn json_lines_malformed_json_is_a_bad_record_with_its_line() {
        let bytes = concat!(
            "{\"text\": \"good\"}\n",
            "{\"text\": \"trailing comma\",}\n",
            "{'text': 'single quotes'}\n",
            "{\"text\": \"unclosed\"\n",
            "{\"text\": \"lone \\ud800 surrogate\"}\n",
            "{\"text\": \"two values\"} {\"text\": \"on one line\"}\n",
            "{\"text\": \"also good\"}\n",
        );
        let outcome = run_json_lines(bytes.as_bytes(), &ReadOptions::default());
        // Source: RFC 8259 §4 (members are separated by commas, no trailing comma;
        // names are strings in double quotes), §2 (an object ends with '}'), §8.2
        // with Unicode §3.9 (a lone surrogate is not a character); JSON Lines
        // convention (one value per line).
        assert_eq!(outcome.ids(), ["mem.jsonl:1", "mem.jsonl:7"]);
        assert_eq!(outcome.kinds(), vec![DiagnosticKind::BadRecord; 5]);
        let lines: Vec<Option<u64>> = outcome
            .diagnostics
            .iter()
            .map(|diagnostic| diagnostic.origin.line)
            .collect();
        assert_eq!(lines, [Some(2), Some(3), Some(4), Some(5), Some(6)]);
        for diagnostic in &outcome.diagnostics {
            assert!(
                diagnostic.message.starts_with("line is not valid JSON: "),
                "{}",
                diagnostic.message
            );
            assert!(
                !diagnostic.message.contains(" at line "),
                "{}",
                diagnostic.message
            );
        }
    }

    #[test]
    fn json_lines_values_other_than_objects_are_bad_records() {
        let bytes = b"[\"text\", \"in an array\"]\n\"just a string\"\n17\n";
        let outcome = run_json_lines(bytes, &ReadOptions::default());
        // Source: JSON Lines convention allows any JSON value per line (RFC 8259 §2);
        // needing an object to find named fields is common practice.
        assert!(outcome.documents.is_empty());
        let messages: Vec<&str> = outcome
            .diagnostics
            .iter()
            .map(|diagnostic| diagnostic.message.as_str())
            .collect();
        assert_eq!(
            messages,
            [
                "line holds a JSON array, not an object",
                "line holds a JSON string, not an object",
                "line holds a JSON number, not an object",
            ]
        );
    }

    #[test]
    fn json_lines_invalid_utf8_is_reported_with_its_line() {
        let mut bytes = Vec::new();
        bytes.extend_from_slice(b"{\"text\": \"fine\"}\n");
        bytes.extend_from_slice(b"{\"text\": \"bad \xFF byte\"}\n");
        bytes.extend_from_slice(b"{\"text\": \"overlong \xC0\xAF slash\"}\n");
        bytes.extend_from_slice(b"{\"text\": \"latin-1 caf\xE9\"}\n");
        bytes.extend_from_slice(b"{\"text\": \"fine again\"}\n");
        let outcome = run_json_lines(&bytes, &ReadOptions::default());
        // Source: RFC 8259 §8.1 (JSON text exchanged between systems MUST be UTF-8);
        // RFC 3629 §1 and §3 (bytes C0, C1, F5..FF never appear; E9 must be followed by
        // continuation bytes).
        assert_eq!(outcome.ids(), ["mem.jsonl:1", "mem.jsonl:5"]);
        assert_eq!(outcome.kinds(), vec![DiagnosticKind::InvalidUtf8; 3]);
        let lines: Vec<Option<u64>> = outcome
            .diagnostics
            .iter()
            .map(|diagnostic| diagnostic.origin.line)
            .collect();
        assert_eq!(lines, [Some(2), Some(3), Some(4)]);
        // Byte 0xFF of line 2 is its 15th byte.
        assert_eq!(
            outcome.diagnostics[0].message,
            "line is not valid UTF-8 (first bad byte at column 15)"
        );
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 5,
                documents_emitted: 2
            }
        );
    }

    #[test]
    fn json_lines_byte_order_mark_on_the_first_line_is_ignored() {
        let outcome = run_json_lines(
            b"\xEF\xBB\xBF{\"text\": \"after the mark\"}\n",
            &ReadOptions::default(),
        );
        // Source: RFC 8259 §8.1 (parsers MAY ignore a byte order mark rather than
        // treat it as an error).
        assert_eq!(outcome.documents[0].text, "after the mark");
        assert!(outcome.diagnostics.is_empty());
    }

    #[test]
    fn json_lines_long_lines_between_short_ones() {
        let long_text = "word ".repeat(1_200_000);
        let mut bytes = Vec::new();
        bytes.extend_from_slice(b"{\"text\": \"short\"}\n");
        bytes.extend_from_slice(serde_json::json!({ "text": long_text }).to_string().as_bytes());
        bytes.extend_from_slice(b"\n{\"text\": \"short again\"}\n");
        let outcome = run_json_lines(&bytes, &ReadOptions::default());
        // Source: common practice (a line longer than the kept buffer is still read
        // whole, and the lines after it are unaffected).
        assert_eq!(outcome.documents.len(), 3);
        assert_eq!(outcome.documents[1].text.len(), long_text.len());
        assert_eq!(outcome.documents[2].text, "short again");
    }

    /// A reader that gives some bytes, then fails.
    struct BreaksAfter {
        bytes: Cursor<Vec<u8>>,
    }

    impl Read for BreaksAfter {
        fn read(&mut self, buffer: &mut [u8]) -> io::Result<usize> {
            match self.bytes.read(buffer)? {
                0 => Err(io::Error::new(io::ErrorKind::BrokenPipe, "pipe closed")),
                read => Ok(read),
            }
        }
    }

    #[test]
    fn a_stream_that_breaks_part_way_is_an_io_error() {
        let reader = BufReader::new(BreaksAfter {
            bytes: Cursor::new(b"{\"text\": \"before the break\"}\n{\"text\": \"cut".to_vec()),
        });
        let mut documents = Vec::new();
        let mut diagnostics = Vec::new();
        let mut sink = |document: RawDocument| documents.push(document.id);
        let mut collector = Collector {
            diagnostics: &mut diagnostics,
            sink: &mut sink,
            seen_ids: HashSet::new(),
            counts: ReadCounts::default(),
        };
        let result = read_json_lines(reader, STDIN_ORIGIN, &ReadOptions::default(), &mut collector);
        // Source: common practice (a failed read is an error, not the end of the input).
        match result {
            Err(ReadError::Io { path, source }) => {
                assert_eq!(path, PathBuf::from("<stdin>"));
                assert_eq!(source.kind(), io::ErrorKind::BrokenPipe);
            }
            other => panic!("expected Io, got {other:?}"),
        }
        assert_eq!(documents, ["<stdin>:1"]);
    }

    #[test]
    fn stdin_is_read_as_json_lines() {
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
    fn duplicate_ids_keep_the_first_document() {
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
    fn empty_and_whitespace_documents_are_skipped() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "a/b.txt", b"");
        write(folder.path(), "c.txt", b" \t\r\n\n");
        write(folder.path(), "d.txt", "\u{3000}\u{00A0}\u{2028}".as_bytes());
        write(folder.path(), "e.txt", b"real words");
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        // Source: Unicode PropList.txt White_Space (U+3000, U+00A0 and U+2028 are white space).
        assert_eq!(outcome.ids(), ["e.txt"]);
        assert_eq!(outcome.kinds(), vec![DiagnosticKind::Empty; 3]);
        assert_eq!(outcome.diagnostics[0].message, "document `a/b.txt` is empty");
        assert_eq!(outcome.diagnostics[0].document.as_deref(), Some("a/b.txt"));
        assert_eq!(
            outcome.diagnostics[1].message,
            "document `c.txt` holds only whitespace"
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

    #[test]
    fn a_text_file_that_is_not_utf8_is_reported_with_its_line() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "latin1.txt", b"first line\nsecond line\ncaf\xE9\n");
        write(folder.path(), "good.txt", b"caf\xC3\xA9");
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        // Source: RFC 3629 §3 (E9 starts a three-byte sequence and needs continuation
        // bytes 80..BF after it; C3 A9 is U+00E9).
        assert_eq!(outcome.ids(), ["good.txt"]);
        assert_eq!(outcome.documents[0].text, "café");
        assert_eq!(outcome.kinds(), [DiagnosticKind::InvalidUtf8]);
        let diagnostic = &outcome.diagnostics[0];
        assert_eq!(diagnostic.origin.line, Some(3));
        assert_eq!(diagnostic.document.as_deref(), Some("latin1.txt"));
        assert_eq!(
            diagnostic.message,
            "document `latin1.txt` is not valid UTF-8 (first bad byte at byte offset 26)"
        );
    }

    #[test]
    fn csv_quoting_rules_and_record_lines() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(
            folder.path(),
            "table.csv",
            b"label,text,id\r\nsport,\"commas, inside\",r1\r\nnews,\"a \"\"quoted\"\" word\",r2\r\n,\"two\r\nlines\",r3\r\nx,after the multi-line record,\r\n",
        );
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        // Source: RFC 4180 §2.1 (CRLF ends records), §2.6 (fields with commas or line
        // breaks are quoted), §2.7 (a quote inside a quoted field is doubled), §2.3
        // (header row); record lines count physical lines, header = line 1.
        let file = path.display().to_string();
        let fallback_id = format!("{file}:6");
        assert_eq!(outcome.ids(), ["r1", "r2", "r3", fallback_id.as_str()]);
        let texts: Vec<&str> = outcome
            .documents
            .iter()
            .map(|document| document.text.as_str())
            .collect();
        assert_eq!(
            texts,
            [
                "commas, inside",
                "a \"quoted\" word",
                "two\r\nlines",
                "after the multi-line record"
            ]
        );
        let labels: Vec<Option<&str>> = outcome
            .documents
            .iter()
            .map(|document| document.label.as_deref())
            .collect();
        assert_eq!(labels, [Some("sport"), Some("news"), None, Some("x")]);
        let lines: Vec<Option<u64>> = outcome
            .documents
            .iter()
            .map(|document| document.origin.line)
            .collect();
        assert_eq!(lines, [Some(2), Some(3), Some(4), Some(6)]);
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 4,
                documents_emitted: 4
            }
        );
    }

    #[test]
    fn csv_lines_stay_right_after_blank_lines_and_mixed_line_ends() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(
            folder.path(),
            "gaps.csv",
            b"id,text\r\n\r\na,one\n\n\nb,two\r\nc,\"x\r\ny\"\nd,three",
        );
        let outcome = run(&[path], &ReadOptions::default());
        // Source: common practice (blank lines between records are skipped, and a
        // reported line is the physical line where the record starts, counting LF bytes).
        assert_eq!(outcome.ids(), ["a", "b", "c", "d"]);
        let lines: Vec<Option<u64>> = outcome
            .documents
            .iter()
            .map(|document| document.origin.line)
            .collect();
        assert_eq!(lines, [Some(3), Some(6), Some(7), Some(9)]);
    }

    #[test]
    fn csv_without_id_column_uses_file_and_line() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(
            folder.path(),
            "plain.csv",
            b"\xEF\xBB\xBFtext\nfirst row\nsecond row\n",
        );
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        // Source: common practice (spreadsheet programs write a UTF-8 byte order mark
        // before the header; it is not part of the first column's name).
        let file = path.display().to_string();
        assert_eq!(outcome.ids(), [format!("{file}:2"), format!("{file}:3")]);
        assert!(outcome.documents.iter().all(|document| document.label.is_none()));
    }

    #[test]
    fn csv_missing_text_column_names_the_columns_there_are() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(folder.path(), "table.csv", b"id,body,label\n1,words,x\n");
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        // Source: RFC 4180 §2.3 (the header row names the fields).
        match &outcome.result {
            Err(
                error @ ReadError::MissingColumn {
                    path: reported,
                    column,
                    available,
                },
            ) => {
                assert_eq!(reported, &path);
                assert_eq!(column, "text");
                assert_eq!(available, &["id", "body", "label"]);
                let message = error.to_string();
                assert!(message.contains("table.csv"), "{message}");
                assert!(
                    message.contains("no column `text` (columns: `id`, `body`, `label`)"),
                    "{message}"
                );
            }
            other => panic!("expected MissingColumn, got {other:?}"),
        }
        let with_body = ReadOptions {
            text_field: "body".into(),
            ..ReadOptions::default()
        };
        assert_eq!(run(std::slice::from_ref(&path), &with_body).ids(), ["1"]);
    }

    #[test]
    fn csv_empty_file_has_no_header() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(folder.path(), "empty.csv", b"");
        let outcome = run(&[path], &ReadOptions::default());
        // Source: RFC 4180 §2.3 (this reader requires the optional header row).
        match &outcome.result {
            Err(error @ ReadError::BadHeader { .. }) => {
                assert!(error.to_string().contains("no header row"), "{error}");
            }
            other => panic!("expected BadHeader, got {other:?}"),
        }
    }

    #[test]
    fn csv_record_with_the_wrong_number_of_fields_is_a_bad_record() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(
            folder.path(),
            "table.csv",
            b"id,text\na,one\nb,two,extra\nc\nd,four\n",
        );
        let outcome = run(&[path], &ReadOptions::default());
        // Source: RFC 4180 §2.4 (each record holds the same number of fields as the header).
        assert_eq!(outcome.ids(), ["a", "d"]);
        assert_eq!(
            outcome.kinds(),
            [DiagnosticKind::BadRecord, DiagnosticKind::BadRecord]
        );
        let lines: Vec<Option<u64>> = outcome
            .diagnostics
            .iter()
            .map(|diagnostic| diagnostic.origin.line)
            .collect();
        assert_eq!(lines, [Some(3), Some(4)]);
        assert_eq!(
            outcome.diagnostics[0].message,
            "record has 3 fields but the header row has 2"
        );
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 4,
                documents_emitted: 2
            }
        );
    }

    #[test]
    fn csv_invalid_utf8_in_a_record_is_reported_with_its_line() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(
            folder.path(),
            "table.csv",
            b"id,text,label\na,fine,x\nb,bad \xFF byte,y\nc,fine too,\xFE\nd,still fine,z\n",
        );
        let outcome = run(&[path], &ReadOptions::default());
        // Source: RFC 3629 §1 (bytes FE and FF never appear in UTF-8); RFC 4180 §2
        // says nothing of encodings, so the check is on the fields this reader uses.
        assert_eq!(outcome.ids(), ["a", "d"]);
        assert_eq!(
            outcome.kinds(),
            [DiagnosticKind::InvalidUtf8, DiagnosticKind::InvalidUtf8]
        );
        assert_eq!(outcome.diagnostics[0].origin.line, Some(3));
        assert_eq!(outcome.diagnostics[0].document.as_deref(), Some("b"));
        assert_eq!(outcome.diagnostics[0].message, "field `text` is not valid UTF-8");
        assert_eq!(outcome.diagnostics[1].origin.line, Some(4));
        assert_eq!(outcome.diagnostics[1].message, "field `label` is not valid UTF-8");
    }

    #[cfg(unix)]
    #[test]
    fn a_dangling_link_in_a_folder_is_unreadable() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "real.txt", b"words");
        std::os::unix::fs::symlink(folder.path().join("gone.txt"), folder.path().join("link.txt"))
            .expect("symlink");
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        // Source: POSIX open() (ENOENT for a link whose target does not exist).
        assert_eq!(outcome.ids(), ["real.txt"]);
        assert_eq!(outcome.kinds(), [DiagnosticKind::Unreadable]);
        assert_eq!(outcome.diagnostics[0].document.as_deref(), Some("link.txt"));
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 2,
                documents_emitted: 1
            }
        );
    }

    #[cfg(unix)]
    #[test]
    fn a_folder_link_loop_is_not_followed_forever() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "sub/inner.txt", b"inner words");
        std::os::unix::fs::symlink(folder.path(), folder.path().join("sub/back")).expect("symlink");
        std::os::unix::fs::symlink(folder.path().join("sub"), folder.path().join("alias")).expect("symlink");
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        // Source: common practice (walkers that follow links stop at a link to an
        // ancestor); a link to a sibling folder is read again under its own name.
        assert_eq!(outcome.ids(), ["alias/inner.txt", "sub/inner.txt"]);
        assert_eq!(
            outcome.kinds(),
            [DiagnosticKind::Unreadable, DiagnosticKind::Unreadable]
        );
        assert!(
            outcome.diagnostics[0].message.contains("links back"),
            "{}",
            outcome.diagnostics[0].message
        );
    }

    #[test]
    fn diagnostic_kinds_have_stable_snake_case_names() {
        let names: Vec<String> = [
            DiagnosticKind::Unreadable,
            DiagnosticKind::InvalidUtf8,
            DiagnosticKind::Empty,
            DiagnosticKind::BadRecord,
            DiagnosticKind::DuplicateId,
            DiagnosticKind::NoTokens,
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
                "\"no_tokens\""
            ]
        );
    }
}
