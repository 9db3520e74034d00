//! The run root's counters, in `ROOT/counters.json`: the next run number and
//! the next fresh topic id. Numbers are reserved by writing the file
//! (atomically) before anything uses them, so a run killed half way leaves
//! gaps, never a number used twice.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::PublishError;
use crate::model::format::write_atomic;

/// The counter file's layout version.
pub const COUNTERS_VERSION: u32 = 1;

/// What the counter file holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Counters {
    pub format_version: u32,
    /// The number the next run gets.
    pub next_run: u64,
    /// The id the next new topic gets; every id below it was handed out.
    pub next_topic_id: u32,
}

impl Default for Counters {
    fn default() -> Counters {
        Counters {
            format_version: COUNTERS_VERSION,
            next_run: 1,
            next_topic_id: 0,
        }
    }
}

impl Counters {
    /// Reads the counters (the defaults when the file does not exist yet).
    pub fn load(path: &Path) -> Result<Counters, PublishError> {
        let text = match std::fs::read_to_string(path) {
            Ok(text) => text,
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => return Ok(Counters::default()),
            Err(source) => {
                return Err(PublishError::Io {
                    path: path.to_path_buf(),
                    source,
                });
            }
        };
        let counters: Counters = serde_json::from_str(&text).map_err(|err| PublishError::Damaged {
            path: path.to_path_buf(),
            detail: format!("line {}: {err}", err.line()),
        })?;
        if counters.format_version != COUNTERS_VERSION {
            return Err(PublishError::Damaged {
                path: path.to_path_buf(),
                detail: format!(
                    "counter file version {} (this build reads {COUNTERS_VERSION})",
                    counters.format_version
                ),
            });
        }
        if counters.next_run == 0 {
            return Err(PublishError::Damaged {
                path: path.to_path_buf(),
                detail: "run numbers start at 1".to_string(),
            });
        }
        Ok(counters)
    }

    /// Writes the counters crash-safely.
    pub fn save(&self, path: &Path) -> Result<(), PublishError> {
        let mut json = serde_json::to_vec_pretty(self).map_err(|err| PublishError::Io {
            path: path.to_path_buf(),
            source: std::io::Error::other(err),
        })?;
        json.push(b'\n');
        write_atomic(path, &json).map_err(PublishError::from)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counters_round_trip_and_damage_is_named() {
        // Source: common practice — state files round-trip and a damaged one
        // is refused with its path, never silently reset.
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("counters.json");
        assert_eq!(Counters::load(&path).unwrap(), Counters::default());
        let counters = Counters {
            next_run: 12,
            next_topic_id: 57,
            ..Counters::default()
        };
        counters.save(&path).unwrap();
        assert_eq!(Counters::load(&path).unwrap(), counters);
        std::fs::write(&path, "{\"format_version\": 1, \"next_run\": \"x\"}").unwrap();
        let err = Counters::load(&path).unwrap_err().to_string();
        assert!(err.contains("counters.json") && err.contains("line 1"), "{err}");
        std::fs::write(
            &path,
            "{\"format_version\": 9, \"next_run\": 1, \"next_topic_id\": 0}",
        )
        .unwrap();
        assert!(
            Counters::load(&path)
                .unwrap_err()
                .to_string()
                .contains("version 9")
        );
    }
}
