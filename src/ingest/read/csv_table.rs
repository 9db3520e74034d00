//! CSV with a header row: records streamed one at a time, each placed on
//! the line it starts on, every unusable record a diagnostic with its line.

use std::collections::VecDeque;
use std::io::{self, Read};
use std::path::PathBuf;

use super::{
    BYTE_ORDER_MARK, Collector, DiagnosticKind, Origin, READ_BUFFER_BYTES, RawDocument, ReadError,
    ReadOptions,
};

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
///
/// It also follows the quoting of RFC 4180 as the csv reader does (a quote
/// opens a quoted field only at the start of a field; inside one, a doubled
/// quote stands for a quote and a single one closes it), to tell when the
/// input ends inside a quoted field: the csv reader then silently takes
/// everything from the opening quote to the end of the input as one field.
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
    /// Every `\n` byte seen so far.
    line_feeds_seen: u64,
    /// Where the quoting rules stand after the bytes seen so far.
    quoting: Quoting,
    /// The line the current record starts on.
    record_line: u64,
    /// Set when the input ended inside a quoted field: the line of the
    /// record that opened it.
    unterminated: Option<u64>,
    /// Leading bytes that matched the UTF-8 byte order mark.
    mark_bytes: u64,
    /// Whether the last byte seen was `\n` (or nothing was seen).
    ends_with_line_feed: bool,
}

/// The state of RFC 4180 quoting between two bytes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Quoting {
    /// Before the first byte of a record (blank lines stay here).
    RecordStart,
    /// Before the first byte of a field that is not the record's first.
    FieldStart,
    /// Inside a field that did not start with a quote.
    Unquoted,
    /// Inside a quoted field.
    Quoted,
    /// Just after a quote inside a quoted field: a closing quote, or the
    /// first of a doubled one.
    QuoteInQuoted,
}

impl<R: Read> LineTrackingReader<R> {
    fn new(inner: R) -> Self {
        LineTrackingReader {
            inner,
            offset: 0,
            line_feeds: VecDeque::new(),
            carriage_returns: VecDeque::new(),
            line_feeds_before: 0,
            line_feeds_seen: 0,
            quoting: Quoting::RecordStart,
            record_line: 1,
            unterminated: None,
            mark_bytes: 0,
            ends_with_line_feed: true,
        }
    }

    /// Follows the quoting rules over one byte.
    fn follow(&mut self, byte: u8) {
        let line_break = byte == b'\n' || byte == b'\r';
        self.quoting = match (self.quoting, byte) {
            (Quoting::Quoted, b'"') => Quoting::QuoteInQuoted,
            (Quoting::Quoted, _) => Quoting::Quoted,
            (Quoting::QuoteInQuoted, b'"') => Quoting::Quoted,
            (_, b',') => Quoting::FieldStart,
            (_, _) if line_break => Quoting::RecordStart,
            (Quoting::RecordStart | Quoting::FieldStart, b'"') => Quoting::Quoted,
            _ => Quoting::Unquoted,
        };
    }

    /// The line of the record that opened a quoted field the input never
    /// closed, once the input has ended.
    fn unterminated_record_line(&self) -> Option<u64> {
        self.unterminated
    }

    /// Lines seen so far (a last line without a line break counts).
    fn lines_seen(&self) -> u64 {
        self.line_feeds_seen + u64::from(!self.ends_with_line_feed)
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
        for (index, &byte) in buffer.get(..read).unwrap_or_default().iter().enumerate() {
            let at = self.offset + index as u64;
            // The csv reader skips a byte order mark before the header.
            if self.mark_bytes == at && BYTE_ORDER_MARK.get(at as usize) == Some(&byte) {
                self.mark_bytes += 1;
                continue;
            }
            if self.quoting == Quoting::RecordStart && byte != b'\n' && byte != b'\r' {
                self.record_line = self.line_feeds_seen + 1;
            }
            self.follow(byte);
            self.ends_with_line_feed = byte == b'\n';
            match byte {
                b'\n' => {
                    self.line_feeds.push_back(at);
                    self.line_feeds_seen += 1;
                }
                b'\r' => self.carriage_returns.push_back(at),
                _ => {}
            }
        }
        self.offset += read as u64;
        if read == 0 && !buffer.is_empty() && self.quoting == Quoting::Quoted {
            self.unterminated = Some(self.record_line);
        }
        Ok(read)
    }
}

/// Streams CSV records (header row first) from `reader`.
pub(super) fn read_csv<R: Read>(
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
    collector.note_fields(options, |name| find(name).is_some());
    let id_column = find(&options.id_field);
    let label_column = find(&options.label_field);
    let date_column = find(&options.date_field);

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
        if let Some(line) = csv_reader.get_ref().unterminated_record_line()
            && origin.line == Some(line)
        {
            let last = csv_reader.get_ref().lines_seen();
            let message = format!(
                "a quoted field of this record is never closed, so everything up to the end of the input (lines {line} to {last}) was read as one field; close the quote (a quote inside a quoted field is written twice: \"\")"
            );
            collector.skip(DiagnosticKind::BadRecord, origin, None, message);
            continue;
        }
        if record.as_slice().len() > options.max_document_bytes {
            collector.skip_too_long(origin.file, origin.line, None, options.max_document_bytes);
            continue;
        }
        if record.len() != columns.len() {
            let fields = match record.len() {
                1 => "1 field".to_string(),
                count => format!("{count} fields"),
            };
            let message = format!("record has {fields} but the header row has {}", columns.len());
            collector.skip(DiagnosticKind::BadRecord, origin, None, message);
            continue;
        }
        // Every column index is below the header's length, which the record's
        // was checked to equal; a missing field would read as empty.
        let cell = |column: usize| std::str::from_utf8(record.get(column).unwrap_or_default());
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
        let date = match date_column.map(cell) {
            None => None,
            Some(Ok(date)) if date.trim().is_empty() => None,
            Some(Ok(date)) => Some(date.trim().to_string()),
            Some(Err(_)) => {
                collector.skip(
                    DiagnosticKind::InvalidUtf8,
                    origin,
                    Some(id),
                    not_utf8(&options.date_field),
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
            date,
            origin,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::super::test_support::*;
    use super::super::*;

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
    fn an_unterminated_quote_is_a_bad_record_not_a_swallowed_file() {
        // Source: RFC 4180 §2.5-2.7 — a field that starts with a quote ends
        // at the next single quote; without one, the record (and with it
        // every line after it) is malformed. Issue 11, item 3: it must be a
        // diagnostic with its file and line, also when it is the last record.
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(
            folder.path(),
            "bad.csv",
            b"id,text\n1,harbour boat fishing\n2,harbour boat net\n3,\"unterminated harbour boat\n4,fine text here harbour\n",
        );
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        assert_eq!(outcome.ids(), ["1", "2"]);
        assert_eq!(outcome.kinds(), [DiagnosticKind::BadRecord]);
        let diagnostic = &outcome.diagnostics[0];
        assert_eq!(diagnostic.origin.line, Some(4));
        assert!(
            diagnostic.message.contains("never closed") && diagnostic.message.contains("lines 4 to 5"),
            "{}",
            diagnostic.message
        );
        assert_eq!(
            outcome.counts(),
            ReadCounts {
                records_seen: 3,
                documents_emitted: 2
            }
        );
        // The same at the end of the file, with CRLF line ends and no final
        // line break.
        let path = write(
            folder.path(),
            "end.csv",
            b"id,text\r\na,\"closed \"\"quote\"\" fine\"\r\nb,\"open to the end",
        );
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        assert_eq!(outcome.ids(), ["a"]);
        assert_eq!(outcome.documents[0].text, "closed \"quote\" fine");
        assert_eq!(outcome.diagnostics.len(), 1);
        assert_eq!(outcome.diagnostics[0].origin.line, Some(3));
        assert!(outcome.diagnostics[0].message.contains("lines 3 to 3"));
        // A quote inside an unquoted field is kept as it is (the csv reader's
        // lenient reading), and a quoted field may hold line breaks.
        let path = write(
            folder.path(),
            "lenient.csv",
            b"id,text\nx,a 5\" pipe\ny,\"two\nlines\"\nz,last\n",
        );
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        assert_eq!(outcome.ids(), ["x", "y", "z"]);
        assert!(outcome.diagnostics.is_empty());
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
}
