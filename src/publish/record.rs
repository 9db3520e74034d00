//! `run.json`, the record of one run under a run root: what was done and
//! how long each stage took, the counts, the scores, the gate's verdict, and
//! for every topic its id, predecessor and drift. Monitoring reads it:
//! `gate.passed` and the `topics` entries are a contract.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::PublishError;
use super::gate::GateOutcome;
use crate::fitting::warm::WarmStart;

/// Version of the run.json layout.
pub const RUN_RECORD_VERSION: u32 = 1;

/// Seconds spent in one stage.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StageTime {
    pub stage: String,
    pub seconds: f64,
}

/// One topic of the new model.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TopicRecord {
    pub id: u32,
    /// Index of the topic in this run's model.
    pub index: usize,
    /// The editor's name, when the names file has one.
    pub name: Option<String>,
    /// The id of the published topic it took over, or null for a new topic.
    pub predecessor: Option<u32>,
    /// Jensen-Shannon distance to the published topic of its best
    /// assignment (null when nothing was published or no old topic was left).
    pub distance: Option<f64>,
    /// Token share of the predecessor in the published model.
    pub prevalence_before: Option<f64>,
    /// Token share in this run's model.
    pub prevalence_after: f64,
    pub top_words: Vec<String>,
    pub words_gained: Vec<String>,
    pub words_lost: Vec<String>,
}

/// Document and token counts of the run.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunCounts {
    pub documents_read: usize,
    pub documents_kept: usize,
    pub documents_skipped: usize,
    /// Skipped documents by reason (the diagnostics are in build.json).
    pub skipped_by_reason: std::collections::BTreeMap<String, usize>,
    pub documents_held_out: usize,
    pub tokens: usize,
    pub vocabulary: usize,
    pub topics: usize,
}

/// Quality figures of the run.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunScores {
    pub heldout_perplexity: Option<f64>,
    /// The published model's perplexity on the same held-out documents.
    pub published_heldout_perplexity: Option<f64>,
    pub mean_npmi: Option<f64>,
    pub mean_umass: Option<f64>,
    pub log_likelihood: f64,
    /// Relative change of the mean log-likelihood between the halves of
    /// the post-burn-in trace (see summary.json's `convergence`).
    pub convergence: Option<f64>,
}

/// The whole record.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunRecord {
    pub format_version: u32,
    pub themata_version: String,
    /// The run folder's name.
    pub run: String,
    pub config: String,
    pub started: String,
    pub finished: String,
    /// The run that was published when this one started (null on the first).
    pub previous: Option<String>,
    /// Whether this run became the published one.
    pub published: bool,
    pub stages: Vec<StageTime>,
    pub counts: RunCounts,
    pub scores: RunScores,
    /// How the fit started from the published model, when it did.
    pub warm_start: Option<WarmStart>,
    pub match_threshold: f64,
    pub gate: GateOutcome,
    pub topics: Vec<TopicRecord>,
    /// Ids of published topics that no topic of this run took over.
    pub retired: Vec<u32>,
}

/// The name of the run record in a run folder.
pub const RUN_RECORD_FILE: &str = "run.json";

impl RunRecord {
    /// Reads the run record of run folder `dir`, if it has one.
    pub fn load(dir: &Path) -> Result<Option<RunRecord>, PublishError> {
        let path = dir.join(RUN_RECORD_FILE);
        let bytes = match std::fs::read(&path) {
            Ok(bytes) => bytes,
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => return Ok(None),
            Err(source) => return Err(PublishError::Io { path, source }),
        };
        serde_json::from_slice(&bytes)
            .map(Some)
            .map_err(|err| PublishError::Damaged {
                path,
                detail: format!("line {}: {err}", err.line()),
            })
    }
}
