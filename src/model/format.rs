//! On-disk framing shared by every binary file themata writes, and crash-safe
//! writing of files and output folders.
//!
//! A framed file is a 24-byte header followed by a postcard payload:
//!
//! | offset | size | field                                        |
//! |--------|------|----------------------------------------------|
//! | 0      | 8    | magic bytes naming the file kind             |
//! | 8      | 4    | format version, little-endian u32            |
//! | 12     | 8    | payload length in bytes, little-endian u64   |
//! | 20     | 4    | CRC-32 (IEEE) of the payload, little-endian  |
//! | 24     | n    | payload (postcard encoding)                  |
//!
//! The header is checked (magic, version, length, checksum) before a single
//! payload byte is decoded. Nothing outside this module knows the byte layout.

#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing,
        clippy::panic
    )
)]

use std::fs::{self, File};
use std::io::{self, Read, Write};
use std::path::{Path, PathBuf};

use serde::Serialize;
use serde::de::DeserializeOwned;

/// Length of the fixed header in bytes.
pub const HEADER_LEN: usize = 24;

/// The kinds of framed file, each with its own magic bytes and current version.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FileKind {
    /// A tokenized corpus written by `themata build`.
    Corpus,
    /// A fitted model written by `themata fit`.
    Model,
}

impl FileKind {
    /// The magic bytes at the start of the file.
    pub fn magic(self) -> &'static [u8; 8] {
        match self {
            FileKind::Corpus => b"THMTCRP\x01",
            FileKind::Model => b"THMTMDL\x01",
        }
    }

    /// The format version this build writes.
    pub fn current_version(self) -> u32 {
        match self {
            FileKind::Corpus => 2,
            FileKind::Model => 3,
        }
    }

    /// The oldest format version this build still reads.
    pub fn oldest_version(self) -> u32 {
        match self {
            FileKind::Corpus => 1,
            FileKind::Model => 1,
        }
    }

    /// A human name for messages.
    pub fn name(self) -> &'static str {
        match self {
            FileKind::Corpus => "corpus",
            FileKind::Model => "model",
        }
    }
}

/// Problems reading or writing framed files and output folders.
#[derive(Debug, thiserror::Error)]
pub enum FormatError {
    #[error("{path}: no such file; check the path")]
    Missing { path: PathBuf },
    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: io::Error,
    },
    #[error(
        "{path}: not a themata {expected} file (unexpected magic bytes); check that you passed the right file"
    )]
    BadMagic { path: PathBuf, expected: &'static str },
    #[error(
        "{path}: {kind} format version {found} is not supported by this build (it reads versions {oldest} to {newest}); {}",
        if found > newest { "it was written by a newer themata: read it with that version, or rebuild it with this one" } else { "rebuild the file with this version of themata" }
    )]
    UnsupportedVersion {
        path: PathBuf,
        kind: &'static str,
        found: u32,
        oldest: u32,
        newest: u32,
    },
    #[error(
        "{path}: file is truncated or padded (header says {expected} payload bytes, found {found}); the file is damaged, rebuild it"
    )]
    BadLength {
        path: PathBuf,
        expected: u64,
        found: u64,
    },
    #[error("{path}: checksum mismatch (the file is damaged); rebuild it")]
    BadChecksum { path: PathBuf },
    #[error("{path}: payload cannot be decoded ({detail}); the file is damaged, rebuild it")]
    Decode { path: PathBuf, detail: String },
    #[error(
        "{path}: the file decodes but its contents are inconsistent ({detail}); it is damaged or was not written by themata, rebuild it"
    )]
    Invalid { path: PathBuf, detail: String },
    #[error("{path}: cannot encode {kind} ({detail})")]
    Encode {
        path: PathBuf,
        kind: &'static str,
        detail: String,
    },
    #[error(
        "{path}: exists and is not a themata output folder (no {marker}); choose another folder or remove it"
    )]
    NotOutputFolder { path: PathBuf, marker: &'static str },
}

impl FormatError {
    fn io(path: &Path, source: io::Error) -> FormatError {
        FormatError::Io {
            path: path.to_path_buf(),
            source,
        }
    }

    /// True when the error is about the file's content rather than the system.
    pub fn is_bad_input(&self) -> bool {
        !matches!(self, FormatError::Io { .. } | FormatError::Encode { .. })
    }
}

/// Encodes `value` as a framed file image (header + payload). The payload
/// is encoded straight after room left for the header, so the image is the
/// only copy of the encoded value.
pub fn encode<T: Serialize>(kind: FileKind, value: &T, path: &Path) -> Result<Vec<u8>, FormatError> {
    let mut bytes = postcard::to_extend(value, vec![0u8; HEADER_LEN]).map_err(|err| FormatError::Encode {
        path: path.to_path_buf(),
        kind: kind.name(),
        detail: err.to_string(),
    })?;
    let payload_len = (bytes.len() - HEADER_LEN) as u64;
    let checksum = crc32fast::hash(bytes.get(HEADER_LEN..).unwrap_or_default());
    let mut header = Vec::with_capacity(HEADER_LEN);
    header.extend_from_slice(kind.magic());
    header.extend_from_slice(&kind.current_version().to_le_bytes());
    header.extend_from_slice(&payload_len.to_le_bytes());
    header.extend_from_slice(&checksum.to_le_bytes());
    // The image starts with HEADER_LEN bytes of room (`to_extend` above).
    bytes.splice(..HEADER_LEN, header);
    Ok(bytes)
}

/// Decodes a whole payload as `T`; bytes left over make it an error.
pub fn decode_payload<T: DeserializeOwned>(payload: &[u8], path: &Path) -> Result<T, FormatError> {
    let decode_error = |detail: String| FormatError::Decode {
        path: path.to_path_buf(),
        detail,
    };
    let (value, rest) = postcard::take_from_bytes(payload).map_err(|err| decode_error(err.to_string()))?;
    if !rest.is_empty() {
        return Err(decode_error(format!(
            "{} bytes left over after the contents",
            rest.len()
        )));
    }
    Ok(value)
}

/// Checks the header of a framed file image (any version from
/// [`FileKind::oldest_version`] to the current one) and decodes its payload
/// with `decode_payload(version, payload)`.
pub fn decode_versioned<T>(
    kind: FileKind,
    bytes: &[u8],
    path: &Path,
    decode_payload: impl FnOnce(u32, &[u8]) -> Result<T, FormatError>,
) -> Result<T, FormatError> {
    let path_buf = || path.to_path_buf();
    if bytes.get(..8) != Some(kind.magic().as_slice()) {
        return Err(FormatError::BadMagic {
            path: path_buf(),
            expected: kind.name(),
        });
    }
    let Some((header, payload)) = bytes.split_first_chunk::<HEADER_LEN>() else {
        return Err(FormatError::BadLength {
            path: path_buf(),
            expected: HEADER_LEN as u64,
            found: bytes.len() as u64,
        });
    };
    let &[
        _,
        _,
        _,
        _,
        _,
        _,
        _,
        _,
        v0,
        v1,
        v2,
        v3,
        l0,
        l1,
        l2,
        l3,
        l4,
        l5,
        l6,
        l7,
        c0,
        c1,
        c2,
        c3,
    ] = header;
    let version = u32::from_le_bytes([v0, v1, v2, v3]);
    if !(kind.oldest_version()..=kind.current_version()).contains(&version) {
        return Err(FormatError::UnsupportedVersion {
            path: path_buf(),
            kind: kind.name(),
            found: version,
            oldest: kind.oldest_version(),
            newest: kind.current_version(),
        });
    }
    let length = u64::from_le_bytes([l0, l1, l2, l3, l4, l5, l6, l7]);
    let checksum = u32::from_le_bytes([c0, c1, c2, c3]);
    if payload.len() as u64 != length {
        return Err(FormatError::BadLength {
            path: path_buf(),
            expected: length,
            found: payload.len() as u64,
        });
    }
    if crc32fast::hash(payload) != checksum {
        return Err(FormatError::BadChecksum { path: path_buf() });
    }
    decode_payload(version, payload)
}

/// Reads a framed file whole (see [`decode_versioned`]).
pub fn read_bytes(path: &Path) -> Result<Vec<u8>, FormatError> {
    let mut bytes = Vec::new();
    File::open(path)
        .and_then(|mut file| file.read_to_end(&mut bytes))
        .map_err(|err| match err.kind() {
            io::ErrorKind::NotFound => FormatError::Missing {
                path: path.to_path_buf(),
            },
            _ => FormatError::io(path, err),
        })?;
    Ok(bytes)
}

/// Encodes `value` and writes it to `path` crash-safely.
pub fn write_file<T: Serialize>(kind: FileKind, value: &T, path: &Path) -> Result<(), FormatError> {
    let bytes = encode(kind, value, path)?;
    write_atomic(path, &bytes)
}

/// Writes `bytes` to `path` so that a reader sees either the old file or the
/// complete new one: write a temporary file in the same folder, fsync it,
/// rename it over the target, fsync the folder.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), FormatError> {
    let mut file = AtomicFile::create(path)?;
    file.write_all(bytes).map_err(|err| FormatError::io(path, err))?;
    file.commit()
}

/// A file written as a stream and put in place only when complete: bytes go
/// to a temporary file beside the target; [`AtomicFile::commit`] syncs it and
/// renames it over the target (as [`write_atomic`] does for bytes in
/// memory). Dropped without a commit, it removes the temporary file and
/// leaves the target as it was.
pub struct AtomicFile {
    path: PathBuf,
    temp: PathBuf,
    file: Option<io::BufWriter<File>>,
}

impl AtomicFile {
    /// Starts writing `path`.
    pub fn create(path: &Path) -> Result<AtomicFile, FormatError> {
        let folder = parent_of(path);
        let name = path
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_else(|| "output".into());
        let temp = folder.join(format!(".{name}.tmp-{}", std::process::id()));
        let file = File::create(&temp).map_err(|err| FormatError::io(path, err))?;
        Ok(AtomicFile {
            path: path.to_path_buf(),
            temp,
            file: Some(io::BufWriter::new(file)),
        })
    }

    /// Syncs the written bytes and renames the file into place (fsyncing
    /// the folder); on failure the temporary file is removed.
    pub fn commit(mut self) -> Result<(), FormatError> {
        let Some(file) = self.file.take() else {
            return Ok(());
        };
        let result = (|| -> io::Result<()> {
            let file = file.into_inner().map_err(io::IntoInnerError::into_error)?;
            file.sync_all()?;
            drop(file);
            fs::rename(&self.temp, &self.path)?;
            sync_folder(&parent_of(&self.path));
            Ok(())
        })();
        if result.is_err() {
            let _ = fs::remove_file(&self.temp);
        }
        result.map_err(|err| FormatError::io(&self.path, err))
    }
}

impl Write for AtomicFile {
    fn write(&mut self, bytes: &[u8]) -> io::Result<usize> {
        match &mut self.file {
            Some(file) => file.write(bytes),
            None => Err(io::Error::other("the file was already committed")),
        }
    }

    fn flush(&mut self) -> io::Result<()> {
        match &mut self.file {
            Some(file) => file.flush(),
            None => Ok(()),
        }
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        // Still holding the file: never committed, so the target stays as it was.
        if self.file.take().is_some() {
            let _ = fs::remove_file(&self.temp);
        }
    }
}

fn parent_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

fn sync_folder(folder: &Path) {
    // Best effort: not every platform lets a folder be opened for syncing.
    if let Ok(handle) = File::open(folder) {
        let _ = handle.sync_all();
    }
}

/// The file that marks a folder as a themata output folder.
pub const OUTPUT_MARKER: &str = "summary.json";

/// An output folder under construction. Files are written into a hidden
/// staging folder beside the target; [`StagedFolder::commit`] swaps it into
/// place in one step, so a run killed at any moment leaves the previous
/// complete folder (or no folder) behind, never a half-written one.
pub struct StagedFolder {
    target: PathBuf,
    staging: PathBuf,
    committed: bool,
}

impl StagedFolder {
    /// Starts a staged write of `target`. Refuses an existing folder that is
    /// not a themata output folder, so user files are never swept away.
    pub fn begin(target: &Path) -> Result<StagedFolder, FormatError> {
        if target.exists() && !target.join(OUTPUT_MARKER).is_file() {
            let empty = fs::read_dir(target)
                .map(|mut entries| entries.next().is_none())
                .unwrap_or(false);
            if !empty {
                return Err(FormatError::NotOutputFolder {
                    path: target.to_path_buf(),
                    marker: OUTPUT_MARKER,
                });
            }
        }
        let parent = parent_of(target);
        fs::create_dir_all(&parent).map_err(|err| FormatError::io(&parent, err))?;
        let name = target
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_else(|| "output".into());
        let staging = parent.join(format!(".{name}.staging-{}", std::process::id()));
        if staging.exists() {
            fs::remove_dir_all(&staging).map_err(|err| FormatError::io(&staging, err))?;
        }
        fs::create_dir(&staging).map_err(|err| FormatError::io(&staging, err))?;
        Ok(StagedFolder {
            target: target.to_path_buf(),
            staging,
            committed: false,
        })
    }

    /// Path of a file inside the staging folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.staging.join(name)
    }

    /// Writes one file into the staging folder (synced to disk).
    pub fn write(&self, name: &str, bytes: &[u8]) -> Result<(), FormatError> {
        let path = self.path(name);
        let result = File::create(&path).and_then(|mut file| {
            file.write_all(bytes)?;
            file.sync_all()
        });
        result.map_err(|err| FormatError::io(&path, err))
    }

    /// Swaps the staging folder into place.
    pub fn commit(mut self) -> Result<PathBuf, FormatError> {
        sync_folder(&self.staging);
        let io_err = |err| FormatError::io(&self.target, err);
        if self.target.exists() {
            swap_folders(&self.staging, &self.target).map_err(io_err)?;
            // The staging path now holds the previous output.
            fs::remove_dir_all(&self.staging).map_err(io_err)?;
        } else {
            fs::rename(&self.staging, &self.target).map_err(io_err)?;
        }
        sync_folder(&parent_of(&self.target));
        self.committed = true;
        Ok(self.target.clone())
    }

    /// Moves the staging folder into place under another name in the same
    /// folder (a run the gate refused is kept as `<run>.rejected`); the
    /// name must be free.
    pub fn commit_as(mut self, name: &str) -> Result<PathBuf, FormatError> {
        let target = parent_of(&self.target).join(name);
        sync_folder(&self.staging);
        if target.exists() {
            return Err(FormatError::NotOutputFolder {
                path: target,
                marker: OUTPUT_MARKER,
            });
        }
        fs::rename(&self.staging, &target).map_err(|err| FormatError::io(&target, err))?;
        sync_folder(&parent_of(&target));
        self.committed = true;
        Ok(target)
    }
}

impl Drop for StagedFolder {
    fn drop(&mut self) {
        if !self.committed {
            let _ = fs::remove_dir_all(&self.staging);
        }
    }
}

/// Exchanges two folders atomically where the system can (Linux
/// `renameat2(RENAME_EXCHANGE)`), else by two renames.
#[allow(unsafe_code)]
fn swap_folders(a: &Path, b: &Path) -> io::Result<()> {
    #[cfg(target_os = "linux")]
    {
        use std::ffi::CString;
        use std::os::unix::ffi::OsStrExt;
        let a_c = CString::new(a.as_os_str().as_bytes())
            .map_err(|_| io::Error::new(io::ErrorKind::InvalidInput, "path has a NUL byte"))?;
        let b_c = CString::new(b.as_os_str().as_bytes())
            .map_err(|_| io::Error::new(io::ErrorKind::InvalidInput, "path has a NUL byte"))?;
        // SAFETY: both pointers are valid NUL-terminated strings that outlive the call.
        let rc = unsafe {
            libc::renameat2(
                libc::AT_FDCWD,
                a_c.as_ptr(),
                libc::AT_FDCWD,
                b_c.as_ptr(),
                libc::RENAME_EXCHANGE,
            )
        };
        if rc == 0 {
            return Ok(());
        }
        let err = io::Error::last_os_error();
        if !matches!(err.raw_os_error(), Some(libc::EINVAL) | Some(libc::ENOSYS)) {
            return Err(err);
        }
    }
    // Fallback: move the old folder aside, move the new one in, and leave the
    // old one at `a` for the caller to remove.
    let aside = a.with_extension("previous");
    fs::rename(b, &aside)?;
    fs::rename(a, b)?;
    fs::rename(&aside, a)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_streamed_file_appears_only_when_committed() {
        // Source: common practice (POSIX rename(2) replaces the target in one
        // step): an abandoned write leaves the old file and no temporary file.
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("table.csv");
        std::fs::write(&path, b"old").unwrap();
        let mut abandoned = AtomicFile::create(&path).unwrap();
        abandoned.write_all(b"half").unwrap();
        drop(abandoned);
        assert_eq!(std::fs::read(&path).unwrap(), b"old");
        assert_eq!(std::fs::read_dir(folder.path()).unwrap().count(), 1);
        let mut file = AtomicFile::create(&path).unwrap();
        file.write_all(b"new, whole").unwrap();
        file.commit().unwrap();
        assert_eq!(std::fs::read(&path).unwrap(), b"new, whole");
        assert_eq!(std::fs::read_dir(folder.path()).unwrap().count(), 1);
    }

    /// Decodes a test payload, whatever the version in the header.
    fn decode<T: DeserializeOwned>(kind: FileKind, bytes: &[u8], path: &Path) -> Result<T, FormatError> {
        decode_versioned(kind, bytes, path, |_, payload| decode_payload(payload, path))
    }

    #[derive(serde::Serialize, serde::Deserialize, Debug, PartialEq)]
    struct Sample {
        words: Vec<String>,
        counts: Vec<u32>,
    }

    fn sample() -> Sample {
        Sample {
            words: vec!["harbour".into(), "tide".into()],
            counts: vec![3, 1, 4, 1, 5],
        }
    }

    #[test]
    fn round_trip_through_a_file() {
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("x.bin");
        write_file(FileKind::Corpus, &sample(), &path).unwrap();
        let back: Sample = decode(FileKind::Corpus, &read_bytes(&path).unwrap(), &path).unwrap();
        assert_eq!(back, sample());
    }

    #[test]
    fn every_flipped_byte_and_every_truncation_is_refused() {
        // Source: common practice — a CRC-32 detects every single-byte error,
        // and the header fields are checked before decoding.
        let path = Path::new("x.bin");
        let bytes = encode(FileKind::Model, &sample(), path).unwrap();
        for index in 0..bytes.len() {
            let mut damaged = bytes.clone();
            damaged[index] ^= 0x20;
            assert!(
                decode::<Sample>(FileKind::Model, &damaged, path).is_err(),
                "flip at {index}"
            );
        }
        for len in 0..bytes.len() {
            assert!(
                decode::<Sample>(FileKind::Model, &bytes[..len], path).is_err(),
                "cut at {len}"
            );
        }
    }

    #[test]
    fn wrong_kind_and_version_are_named() {
        let path = Path::new("x.bin");
        let bytes = encode(FileKind::Model, &sample(), path).unwrap();
        let err = decode::<Sample>(FileKind::Corpus, &bytes, path).unwrap_err();
        assert!(err.to_string().contains("not a themata corpus file"), "{err}");
        let mut newer = bytes.clone();
        newer[8..12].copy_from_slice(&99u32.to_le_bytes());
        let err = decode::<Sample>(FileKind::Model, &newer, path).unwrap_err();
        assert!(err.to_string().contains("version 99"), "{err}");
    }

    #[test]
    fn staged_folder_replaces_previous_output_whole() {
        let root = tempfile::tempdir().unwrap();
        let target = root.path().join("out");
        let first = StagedFolder::begin(&target).unwrap();
        first.write(OUTPUT_MARKER, b"{\"run\":1}").unwrap();
        first.write("extra.txt", b"old").unwrap();
        first.commit().unwrap();
        let second = StagedFolder::begin(&target).unwrap();
        second.write(OUTPUT_MARKER, b"{\"run\":2}").unwrap();
        // Before commit the old output is untouched.
        assert_eq!(fs::read(target.join(OUTPUT_MARKER)).unwrap(), b"{\"run\":1}");
        second.commit().unwrap();
        assert_eq!(fs::read(target.join(OUTPUT_MARKER)).unwrap(), b"{\"run\":2}");
        assert!(!target.join("extra.txt").exists());
        let leftovers: Vec<_> = fs::read_dir(root.path()).unwrap().collect();
        assert_eq!(leftovers.len(), 1, "staging folders were cleaned up");
    }

    #[test]
    fn abandoned_stage_leaves_old_output() {
        let root = tempfile::tempdir().unwrap();
        let target = root.path().join("out");
        let first = StagedFolder::begin(&target).unwrap();
        first.write(OUTPUT_MARKER, b"1").unwrap();
        first.commit().unwrap();
        {
            let second = StagedFolder::begin(&target).unwrap();
            second.write(OUTPUT_MARKER, b"2").unwrap();
        }
        assert_eq!(fs::read(target.join(OUTPUT_MARKER)).unwrap(), b"1");
    }

    #[test]
    fn refuses_a_folder_of_user_files() {
        let root = tempfile::tempdir().unwrap();
        fs::write(root.path().join("thesis.tex"), "mine").unwrap();
        let err = StagedFolder::begin(root.path()).err().unwrap();
        assert!(err.to_string().contains("not a themata output folder"), "{err}");
    }
}
