//! Folders of text files: the depth-first walk in byte order of names,
//! ids from the path as given (the folder's, then the path below it), links
//! followed but not in loops, and
//! the checks every text document gets (UTF-8, byte order mark).

use std::ffi::OsString;
use std::fs;
use std::io;
use std::path::{Path, PathBuf};

use super::{
    BYTE_ORDER_MARK, Collector, DiagnosticKind, FileKind, InputFormat, Origin, RawDocument, ReadError,
    ReadOptions, lowercase_extension, read_file,
};

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

/// The id of a text file given as (or found below) `path`: the path as
/// given, `.` parts and repeated or trailing separators dropped, parts
/// joined by `/` whatever the platform. A file found in a folder and the
/// same file given directly get the same id, as long as the path is spelled
/// the same way.
pub(super) fn path_id(path: &Path) -> String {
    use std::path::Component;
    let mut parts: Vec<String> = Vec::new();
    let mut rooted = false;
    for component in path.components() {
        match component {
            Component::CurDir => {}
            Component::RootDir => rooted = true,
            Component::Prefix(prefix) => parts.push(prefix.as_os_str().to_string_lossy().into_owned()),
            Component::ParentDir => parts.push("..".to_string()),
            Component::Normal(part) => parts.push(part.to_string_lossy().into_owned()),
        }
    }
    let joined = parts.join("/");
    if rooted { format!("/{joined}") } else { joined }
}

/// State of one recursive folder walk.
pub(super) struct FolderWalk<'a> {
    pub(super) options: &'a ReadOptions,
    /// The id of the walk's root folder ([`path_id`]), empty for `.`.
    pub(super) root_id: String,
    /// Names of the folders between the walk's root and the current folder.
    pub(super) relative: Vec<String>,
    /// Resolved paths of the folders being walked, to stop at link loops.
    pub(super) ancestors: Vec<PathBuf>,
}

impl FolderWalk<'_> {
    pub(super) fn walk(&mut self, folder: &Path, collector: &mut Collector<'_>) -> Result<(), ReadError> {
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

    /// The id of entry `name` of the current folder: the root's id, then
    /// its path below the root.
    fn relative_id(&self, name: &str) -> String {
        let mut id = self.root_id.clone();
        if !id.is_empty() && !id.ends_with('/') {
            id.push('/');
        }
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

/// Checks the bytes of one text document and offers it.
pub(super) fn offer_text(bytes: Vec<u8>, id: String, origin_name: String, collector: &mut Collector<'_>) {
    let mut text = match String::from_utf8(bytes) {
        Ok(text) => text,
        Err(error) => {
            let valid_bytes = error.utf8_error().valid_up_to();
            let newlines = error
                .as_bytes()
                .get(..valid_bytes)
                .unwrap_or_default()
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
        date: None,
        origin: Origin {
            file: origin_name,
            line: None,
        },
    });
}

#[cfg(test)]
mod tests {
    use super::super::test_support::*;
    use super::super::*;

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
            outcome.ids_below(folder.path()),
            ["A.txt", "a/sub/y.txt", "a/z.md", "a b.txt", "a.txt", "b.txt"]
        );
        // Source: common practice (ids use '/' whatever the platform); issue
        // 11, item 9: a file's id starts with its folder's path as given, so
        // it is the same when the file itself is given.
        assert_eq!(
            outcome.documents[1].id,
            format!("{}/a/sub/y.txt", folder.path().display())
        );
        let direct = run(&[folder.path().join("a/sub/y.txt")], &ReadOptions::default());
        assert_eq!(direct.ids(), [outcome.documents[1].id.as_str()]);
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
        assert_eq!(text.ids_below(folder.path()), ["notes.TXT", "readme.Md"]);
        assert_eq!(text.counts().records_seen, 2);
        let explicit_text = run(&root, &options_with(InputFormat::Text));
        assert_eq!(explicit_text.ids_below(folder.path()), ["notes.TXT", "readme.Md"]);
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
        assert_eq!(outcome.ids_below(folder.path()), ["seen.txt"]);
        assert_eq!(outcome.counts().records_seen, 1);
    }

    #[test]
    fn a_text_file_given_directly_is_named_by_the_path_as_given() {
        let folder = tempfile::tempdir().expect("temp dir");
        let path = write(folder.path(), "one.md", b"\xEF\xBB\xBFheading and words\n");
        let outcome = run(std::slice::from_ref(&path), &ReadOptions::default());
        // Source: common practice (a file named directly keeps the name it was given).
        assert_eq!(outcome.ids(), [path.to_string_lossy().as_ref()]);
        // `.` parts and doubled separators are not part of a name (POSIX
        // pathname resolution, XBD 4.13).
        let spelled = PathBuf::from(format!("{}/.//one.md", folder.path().display()));
        let outcome = run(&[spelled], &ReadOptions::default());
        assert_eq!(outcome.ids(), [path.to_string_lossy().as_ref()]);
        // Source: Unicode Standard §23.8 (U+FEFF at the start of a text is a byte
        // order mark, a signature rather than content).
        assert_eq!(outcome.documents[0].text, "heading and words\n");
    }

    #[test]
    fn a_text_file_that_is_not_utf8_is_reported_with_its_line() {
        let folder = tempfile::tempdir().expect("temp dir");
        write(folder.path(), "latin1.txt", b"first line\nsecond line\ncaf\xE9\n");
        write(folder.path(), "good.txt", b"caf\xC3\xA9");
        let outcome = run(&[folder.path().to_path_buf()], &ReadOptions::default());
        // Source: RFC 3629 §3 (E9 starts a three-byte sequence and needs continuation
        // bytes 80..BF after it; C3 A9 is U+00E9).
        assert_eq!(outcome.ids_below(folder.path()), ["good.txt"]);
        assert_eq!(outcome.documents[0].text, "café");
        assert_eq!(outcome.kinds(), [DiagnosticKind::InvalidUtf8]);
        let diagnostic = &outcome.diagnostics[0];
        let id = format!("{}/latin1.txt", folder.path().display());
        assert_eq!(diagnostic.origin.line, Some(3));
        assert_eq!(diagnostic.document.as_deref(), Some(id.as_str()));
        assert_eq!(
            diagnostic.message,
            format!("document `{id}` is not valid UTF-8 (first bad byte at byte offset 26)")
        );
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
        assert_eq!(outcome.ids_below(folder.path()), ["real.txt"]);
        assert_eq!(outcome.kinds(), [DiagnosticKind::Unreadable]);
        assert_eq!(
            outcome.diagnostics[0].document,
            Some(format!("{}/link.txt", folder.path().display()))
        );
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
        assert_eq!(
            outcome.ids_below(folder.path()),
            ["alias/inner.txt", "sub/inner.txt"]
        );
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
}
