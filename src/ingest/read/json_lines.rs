//! JSON Lines: one object per line, streamed through one reused buffer;
//! every line that cannot be used becomes a diagnostic with its line.

use std::io::BufRead;
use std::path::PathBuf;

use serde_json::Value;

use super::{
    BYTE_ORDER_MARK, Collector, DiagnosticKind, Origin, READ_BUFFER_BYTES, RawDocument, ReadError,
    ReadOptions,
};

/// A line buffer that grew past this for one long line is given back, so one
/// huge record does not keep its memory for the rest of the stream.
const LINE_BUFFER_KEEP_BYTES: usize = 4 * 1024 * 1024;

/// Streams JSON Lines from `reader`, one reused buffer for all lines.
///
/// `origin_name` names the input in origins, fallback ids and errors.
pub(super) fn read_json_lines<R: BufRead>(
    mut reader: R,
    origin_name: &str,
    options: &ReadOptions,
    collector: &mut Collector<'_>,
) -> Result<(), ReadError> {
    let mut buffer: Vec<u8> = Vec::with_capacity(READ_BUFFER_BYTES);
    let mut line_number: u64 = 0;
    let mut fields = FieldsSeen::default();
    // Set once a line ended without a line break: the read after it found
    // the end of the input. A file still being written may have more by
    // the next read, but the input ends at the first end seen (POSIX
    // read(2) returns 0 there), so only this last line can be cut short.
    let mut ended = false;
    loop {
        buffer.clear();
        let line = if ended {
            LineRead::End
        } else {
            let (line, at_end) = read_line_capped(&mut reader, &mut buffer, options.max_document_bytes)
                .map_err(|source| ReadError::Io {
                    path: PathBuf::from(origin_name),
                    source,
                })?;
            ended = at_end;
            line
        };
        if line == LineRead::End {
            if fields.objects > 0 && !fields.text_field {
                return Err(ReadError::MissingTextField {
                    path: PathBuf::from(origin_name),
                    field: options.text_field.clone(),
                    seen: fields.names,
                });
            }
            return Ok(());
        }
        line_number += 1;
        if line == LineRead::TooLong {
            collector.counts.records_seen += 1;
            collector.skip_too_long(
                origin_name.to_string(),
                Some(line_number),
                None,
                options.max_document_bytes,
            );
        } else {
            let mut line = buffer.as_slice();
            if line_number == 1 {
                line = line.strip_prefix(BYTE_ORDER_MARK).unwrap_or(line);
            }
            read_json_line(line, line_number, origin_name, options, collector, &mut fields);
        }
        if buffer.capacity() > LINE_BUFFER_KEEP_BYTES {
            buffer = Vec::with_capacity(READ_BUFFER_BYTES);
        }
    }
}

/// What [`read_line_capped`] found.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum LineRead {
    /// A line (with its line break, if any) is in the buffer.
    Line,
    /// A line longer than the limit was read past; the buffer holds its start.
    TooLong,
    /// The input has ended.
    End,
}

/// Reads one line into `buffer` (cleared by the caller), keeping at most
/// `limit` bytes of it: the rest of a longer line is read and dropped, so
/// memory stays bounded by the limit however long the line. The flag is
/// set when the line had no line break because the input ended after it.
fn read_line_capped<R: BufRead>(
    reader: &mut R,
    buffer: &mut Vec<u8>,
    limit: usize,
) -> std::io::Result<(LineRead, bool)> {
    let mut seen = 0usize;
    loop {
        let available = match reader.fill_buf() {
            Ok(available) => available,
            Err(error) if error.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(error) => return Err(error),
        };
        if available.is_empty() {
            return Ok(match seen {
                0 => (LineRead::End, true),
                _ if seen > limit => (LineRead::TooLong, true),
                _ => (LineRead::Line, true),
            });
        }
        let (taken, complete) = match available.iter().position(|&byte| byte == b'\n') {
            Some(end) => (end + 1, true),
            None => (available.len(), false),
        };
        // The line break does not count against the limit.
        let content = taken - usize::from(complete);
        if seen.saturating_add(content) <= limit {
            buffer.extend_from_slice(available.get(..taken).unwrap_or(available));
        }
        seen = seen.saturating_add(content);
        reader.consume(taken);
        if complete {
            return Ok(if seen > limit {
                (LineRead::TooLong, false)
            } else {
                (LineRead::Line, false)
            });
        }
    }
}

/// Field names shown when no record has the text field.
const FIELD_NAMES_SHOWN: usize = 12;

/// What the objects of one input had, for the checks made at its end.
#[derive(Default)]
struct FieldsSeen {
    /// Lines that held a JSON object.
    objects: usize,
    /// Whether any of them had the text field.
    text_field: bool,
    /// The first few field names seen, in first-seen order.
    names: Vec<String>,
}

/// Handles one line of JSON Lines (with its line break, if any).
fn read_json_line(
    raw: &[u8],
    line_number: u64,
    origin_name: &str,
    options: &ReadOptions,
    collector: &mut Collector<'_>,
    seen: &mut FieldsSeen,
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
    seen.objects += 1;
    seen.text_field |= fields.contains_key(&options.text_field);
    for name in fields.keys() {
        if seen.names.len() < FIELD_NAMES_SHOWN && !seen.names.contains(name) {
            seen.names.push(name.clone());
        }
    }
    collector.note_fields(options, |name| fields.contains_key(name));
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
    let date = match scalar_field(fields.get(&options.date_field)) {
        Ok(date) => date.map(|date| date.trim().to_string()),
        Err(kind) => {
            let message = format!(
                "field `{}` must be a string or a number, not {kind}",
                options.date_field
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
        date,
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

#[cfg(test)]
mod tests {
    use super::super::test_support::*;
    use super::super::*;
    use super::*;
    use std::io::{self, BufReader, Cursor, Read};

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
    fn a_line_longer_than_the_limit_is_skipped_and_the_next_one_read() {
        // Source: common practice (a size limit per record, as in log
        // shippers; the limit counts the line without its line break).
        let long = format!("{{\"id\":\"long\",\"text\":\"{}\"}}", "tide ".repeat(100));
        let bytes =
            format!("{{\"id\":\"a\",\"text\":\"seed\"}}\n{long}\r\n{{\"id\":\"b\",\"text\":\"soil\"}}");
        for limit in [long.len() - 1, 40] {
            let options = ReadOptions {
                max_document_bytes: limit,
                ..options_with(InputFormat::Jsonl)
            };
            let outcome = run_json_lines(bytes.as_bytes(), &options);
            assert_eq!(outcome.ids(), ["a", "b"], "limit {limit}");
            assert_eq!(outcome.diagnostics.len(), 1);
            assert_eq!(outcome.diagnostics[0].kind, DiagnosticKind::TooLong);
            assert_eq!(outcome.diagnostics[0].origin.line, Some(2));
            assert!(
                outcome.diagnostics[0]
                    .message
                    .contains(&format!("longer than {limit} bytes"))
            );
        }
        // A line of exactly the limit is read (its `\n` is not counted, its `\r` is).
        let options = ReadOptions {
            max_document_bytes: long.len() + 1,
            ..options_with(InputFormat::Jsonl)
        };
        assert_eq!(
            run_json_lines(bytes.as_bytes(), &options).ids(),
            ["a", "long", "b"]
        );
    }

    #[test]
    fn json_lines_field_names_come_from_the_options() {
        let options = ReadOptions {
            date_field: "when".into(),
            format: InputFormat::Jsonl,
            text_field: "body".into(),
            id_field: "key".into(),
            label_field: "topic".into(),
            unique_ids: true,
            named_fields: Vec::new(),
            max_document_bytes: 1000,
        };
        let bytes = b"{\"key\": \"k1\", \"body\": \"the body\", \"topic\": \"t\", \"when\": \" 2024-03-01 \", \"text\": \"ignored\"}\n{\"text\": \"only text\"}\n";
        let outcome = run_json_lines(bytes, &options);
        // Source: common practice (field names are settings, not fixed).
        assert_eq!(outcome.ids(), ["k1"]);
        assert_eq!(outcome.documents[0].text, "the body");
        assert_eq!(outcome.documents[0].date.as_deref(), Some("2024-03-01"));
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
            unique_ids: true,
            counts: ReadCounts::default(),
            named_found: Vec::new(),
            records_read: false,
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
}
