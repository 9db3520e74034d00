//! `summary.json`, the readable summary of a model folder: what was fitted
//! and how, the traces, convergence, held-out perplexity and resources.
//! Downstream tooling reads these names; [`SUMMARY_VERSION`] says which
//! layout a file has.

use serde::Serialize;

use super::Model;
use crate::evaluate::compare::{LabelAgreement, label_agreement};
use crate::evaluate::score::HeldOutScore;
use crate::fitting::fit::{self, Convergence};
use crate::fitting::sampler::BetaPrior;

/// The `summary.json` of a model folder. Downstream tooling reads these names.
#[derive(Clone, Debug, Serialize)]
pub struct FitSummary {
    pub format_version: u32,
    pub themata_version: String,
    pub documents: usize,
    pub tokens: usize,
    pub vocabulary: usize,
    pub topics: usize,
    pub iterations: u64,
    pub burn_in: u64,
    pub seed: u64,
    pub threads: usize,
    pub sampler: String,
    /// Shards of the block grid the sampler ran on (1 for the reference).
    pub shards: u32,
    pub alpha: Vec<f64>,
    pub beta: serde_json::Value,
    pub sampling_seconds: f64,
    pub tokens_per_second: f64,
    pub log_likelihood: f64,
    pub log_likelihood_trace: Vec<(u64, f64)>,
    pub learned_alpha: bool,
    pub learned_beta: bool,
    pub alpha_trace: Vec<(u64, Vec<f64>)>,
    pub beta_trace: Vec<(u64, f64)>,
    pub samples: u64,
    pub lag: u64,
    pub sample_iterations: Vec<u64>,
    pub convergence: Convergence,
    /// Held-out perplexity of the documents `--holdout` kept out (null without).
    pub heldout_perplexity: Option<f64>,
    /// The held-out scoring behind it.
    pub heldout: Option<HeldOutScore>,
    /// Peak resident memory of the process that fitted the model, in bytes
    /// (null where the system does not tell).
    pub peak_rss_bytes: Option<u64>,
    /// The id of each topic, by index (0..K-1 outside a run root; under a
    /// run root, ids kept from run to run).
    pub topic_ids: Vec<u32>,
    /// How well the training documents' top topics agree with their labels
    /// (normalised mutual information; null when no document has a label).
    pub label_agreement: Option<LabelAgreement>,
    /// The ranks of an MPI job that fitted the model and what each sent
    /// (absent when one process fitted it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ranks: Option<RanksSummary>,
}

/// The ranks of a distributed fit and the bytes each sent.
#[derive(Clone, Debug, Serialize)]
pub struct RanksSummary {
    /// The number of ranks, R.
    pub ranks: usize,
    /// Sweeps run in this job (fewer than `iterations` after a resume).
    pub sweeps: u64,
    /// Bytes each rank sent per sweep (ring, topic-total sums and gathers), by rank.
    pub bytes_sent_per_sweep: Vec<u64>,
    /// Of those, the word groups passed around the ring, by rank.
    pub ring_bytes_per_sweep: Vec<u64>,
    /// What the communication model of ARCHITECTURE.md predicts for the ring.
    pub predicted_ring_bytes_per_sweep: u64,
    /// Bytes each rank sent in the whole job, by rank.
    pub bytes_sent: Vec<u64>,
    /// Seconds each rank spent in the exchanges at the end of each epoch
    /// (passing word groups, summing the topic totals), waiting for slower
    /// ranks included; part of `sampling_seconds`.
    pub exchange_seconds: Vec<f64>,
}

/// Version of the summary.json layout.
pub const SUMMARY_VERSION: u32 = 1;

impl FitSummary {
    /// Records the held-out score of the documents kept out of training.
    pub fn with_heldout(mut self, score: HeldOutScore) -> FitSummary {
        self.heldout_perplexity = score.heldout_perplexity;
        self.heldout = Some(score);
        self
    }

    /// Summarises a fitted model and the timing of the run that fitted it.
    pub fn new(model: &Model, threads: usize, sampling_seconds: f64, tokens_per_second: f64) -> FitSummary {
        FitSummary {
            format_version: SUMMARY_VERSION,
            themata_version: env!("CARGO_PKG_VERSION").to_string(),
            documents: model.corpus.n_docs(),
            tokens: model.corpus.n_tokens(),
            vocabulary: model.corpus.vocabulary.len(),
            topics: model.n_topics(),
            iterations: model.iterations_done,
            burn_in: model.schedule.burn_in,
            seed: model.seed,
            threads,
            sampler: model.schedule.sampler.name().to_string(),
            shards: model.schedule.shards,
            alpha: model.priors.alpha.clone(),
            beta: match &model.priors.beta {
                BetaPrior::Symmetric(value) => serde_json::json!(value),
                BetaPrior::Asymmetric(values) => serde_json::json!(values),
            },
            sampling_seconds,
            tokens_per_second,
            log_likelihood: model.trace.last().map_or(f64::NAN, |&(_, value)| value),
            log_likelihood_trace: model.trace.clone(),
            learned_alpha: model.schedule.learn_alpha,
            learned_beta: model.schedule.learn_beta,
            alpha_trace: model.alpha_trace.clone(),
            beta_trace: model.beta_trace.clone(),
            samples: model.schedule.samples,
            lag: model.schedule.lag,
            sample_iterations: model.samples.iter().map(|s| s.iteration).collect(),
            convergence: fit::convergence(model),
            heldout_perplexity: None,
            heldout: None,
            peak_rss_bytes: None,
            topic_ids: model.topic_ids.clone(),
            label_agreement: label_agreement(model),
            ranks: None,
        }
    }

    /// Records the ranks of the MPI job that fitted the model.
    pub fn with_ranks(mut self, ranks: Option<RanksSummary>) -> FitSummary {
        self.ranks = ranks;
        self
    }

    /// Records the peak resident memory of the fitting process.
    pub fn with_peak_rss(mut self, bytes: Option<u64>) -> FitSummary {
        self.peak_rss_bytes = bytes;
        self
    }
}
