//! The run root's counters, in `ROOT/counters`: the next run number and the
//! next fresh topic id. Numbers are reserved by writing the file
//! (atomically) before anything uses them, so a run killed half way leaves
//! gaps, never a number used twice.
//!
//! The file is four lines of text, the last a CRC-32 of the three before:
//!
//! ```text
//! themata counters 1
//! next_run 13
//! next_topic_id 57
//! crc32 5b3c1d0e
//! ```
//!
//! Any change to a byte of it (a hand edit, a damaged disk) is refused with
//! the file's name, never read as other numbers: reusing a topic id would
//! give one id two meanings.

use std::path::Path;

use super::PublishError;
use crate::model::format::write_atomic;

/// The counter file's layout version.
pub const COUNTERS_VERSION: u32 = 1;

/// What the counter file holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Counters {
    /// The number the next run gets.
    pub next_run: u64,
    /// The id the next new topic gets; every id below it was handed out.
    pub next_topic_id: u32,
}

impl Default for Counters {
    fn default() -> Counters {
        Counters {
            next_run: 1,
            next_topic_id: 0,
        }
    }
}

impl Counters {
    /// The file's text.
    fn to_text(self) -> String {
        let body = format!(
            "themata counters {COUNTERS_VERSION}\nnext_run {}\nnext_topic_id {}\n",
            self.next_run, self.next_topic_id
        );
        let checksum = crc32fast::hash(body.as_bytes());
        format!("{body}crc32 {checksum:08x}\n")
    }

    /// Parses the file's text exactly as `to_text` writes it.
    fn parse(text: &str, path: &Path) -> Result<Counters, PublishError> {
        let damaged = |detail: &str| PublishError::Damaged {
            path: path.to_path_buf(),
            detail: detail.to_string(),
        };
        let lines: Vec<&str> = text.split_inclusive('\n').collect();
        let [header, run, topic, check] = lines.as_slice() else {
            return Err(damaged("it must have four lines"));
        };
        let body_len = header.len() + run.len() + topic.len();
        let expected = format!(
            "crc32 {:08x}\n",
            crc32fast::hash(text.as_bytes().get(..body_len).unwrap_or_default())
        );
        if *check != expected {
            return Err(damaged("its checksum does not match its contents"));
        }
        if *header != format!("themata counters {COUNTERS_VERSION}\n") {
            return Err(damaged("it is not a counter file of this version"));
        }
        let number = |line: &str, key: &str| -> Result<u64, PublishError> {
            line.strip_prefix(key)
                .and_then(|rest| rest.strip_prefix(' '))
                .and_then(|rest| rest.strip_suffix('\n'))
                .filter(|digits| !digits.is_empty() && digits.bytes().all(|b| b.is_ascii_digit()))
                .and_then(|digits| digits.parse().ok())
                .ok_or_else(|| damaged(&format!("the `{key}` line is not `{key} <number>`")))
        };
        let next_run = number(run, "next_run")?;
        let next_topic_id = u32::try_from(number(topic, "next_topic_id")?)
            .map_err(|_| damaged("next_topic_id is beyond the largest topic id"))?;
        if next_run == 0 {
            return Err(damaged("run numbers start at 1"));
        }
        let counters = Counters {
            next_run,
            next_topic_id,
        };
        if counters.to_text() != text {
            return Err(damaged("it is not written the way themata writes it"));
        }
        Ok(counters)
    }

    /// Reads the counters (the defaults when the file does not exist yet).
    pub fn load(path: &Path) -> Result<Counters, PublishError> {
        let bytes = match std::fs::read(path) {
            Ok(bytes) => bytes,
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => return Ok(Counters::default()),
            Err(source) => {
                return Err(PublishError::Io {
                    path: path.to_path_buf(),
                    source,
                });
            }
        };
        let text = String::from_utf8(bytes).map_err(|_| PublishError::Damaged {
            path: path.to_path_buf(),
            detail: "it is not text".to_string(),
        })?;
        Counters::parse(&text, path)
    }

    /// Writes the counters crash-safely.
    pub fn save(&self, path: &Path) -> Result<(), PublishError> {
        write_atomic(path, self.to_text().as_bytes()).map_err(PublishError::from)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counters_round_trip() {
        // Source: common practice — state files round-trip.
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("counters");
        assert_eq!(Counters::load(&path).unwrap(), Counters::default());
        let counters = Counters {
            next_run: 12,
            next_topic_id: 57,
        };
        counters.save(&path).unwrap();
        assert_eq!(Counters::load(&path).unwrap(), counters);
    }

    #[test]
    fn every_single_byte_change_and_every_truncation_is_refused() {
        // Source: CRC-32 detects every error burst of up to 32 bits
        // (Peterson & Brown 1961; common practice), so no single changed
        // byte of the body passes the check, and a changed byte of the
        // check line no longer matches; every value of every byte is tried.
        let path = Path::new("counters");
        let text = Counters {
            next_run: 13,
            next_topic_id: 57,
        }
        .to_text();
        let bytes = text.as_bytes();
        for position in 0..bytes.len() {
            for value in 0..=255u8 {
                if value == bytes[position] {
                    continue;
                }
                let mut changed = bytes.to_vec();
                changed[position] = value;
                let Ok(changed) = String::from_utf8(changed) else {
                    continue; // refused by `load` before parsing (not text)
                };
                let result = Counters::parse(&changed, path);
                assert!(result.is_err(), "byte {position} set to {value} was accepted");
            }
        }
        for cut in 0..bytes.len() {
            assert!(Counters::parse(&text[..cut], path).is_err(), "cut at {cut}");
        }
        let err = Counters::parse("themata counters 1\n", path)
            .unwrap_err()
            .to_string();
        assert!(err.contains("counters: damaged"), "{err}");
    }
}
