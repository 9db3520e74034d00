//! A fitted model: the training corpus, the priors, every token's topic and
//! the counts they imply, the posterior samples kept at the end of the run,
//! the traces, and what is needed to continue sampling. Also the estimates
//! read from it: topic-word and document-topic shares averaged over the
//! samples, with credible intervals from their Dirichlet posteriors.
//!
//! **Invariant:** the in-memory [`Model`] and the on-disk `ModelFile` are
//! separate types; sampler internals are not serialized directly.

pub mod format;

use std::path::Path;

use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use crate::evaluate::uncertainty::{self, Interval, UncertaintyError};
use crate::fitting::fit::{SamplerKind, Schedule};
use crate::fitting::sampler::{BetaPrior, CountState, MAX_TOPICS, Priors, Topic};
use crate::ingest::corpus::Corpus;
use format::{FileKind, FormatError};

/// Sparse rows of counts: for each row, `(column, count)` pairs with count > 0,
/// columns increasing.
pub type SparseRows = Vec<Vec<(u32, u32)>>;

/// One posterior sample kept for the estimates.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Sample {
    /// The sweep after which it was taken.
    pub iteration: u64,
    /// The priors at that sweep.
    pub priors: Priors,
    /// Per topic: (word, tokens of that word in the topic).
    pub topic_word: SparseRows,
    /// Per document: (topic, tokens of the document in the topic).
    pub doc_topic: SparseRows,
    /// Tokens per topic.
    pub topic_totals: Vec<u64>,
}

impl Sample {
    /// The sample of `model`'s current state.
    pub fn of(model: &Model, iteration: u64) -> Sample {
        let (topic_word, doc_topic) = sparse_counts(&model.state, &model.corpus);
        Sample {
            iteration,
            priors: model.priors.clone(),
            topic_word,
            doc_topic,
            topic_totals: model.state.topic_totals.clone(),
        }
    }

    fn count(row: &[(u32, u32)], column: usize) -> u32 {
        row.binary_search_by_key(&(column as u32), |&(c, _)| c)
            .map_or(0, |idx| row[idx].1)
    }
}

/// A fitted model in memory.
#[derive(Clone, Debug)]
pub struct Model {
    /// The training corpus (with vocabulary and tokenizer settings).
    pub corpus: Corpus,
    /// The priors now (learned priors change during fitting).
    pub priors: Priors,
    /// Assignments and counts now.
    pub state: CountState,
    /// Sweeps done so far.
    pub iterations_done: u64,
    /// Sweep count at which the current run ends.
    pub target: u64,
    /// Burn-in, learning, sampling and trace plan.
    pub schedule: Schedule,
    /// The seed the run started from.
    pub seed: u64,
    /// The random stream, where the last sweep left it.
    pub rng: Xoshiro256PlusPlus,
    /// `(iteration, log p(w, z))` pairs recorded during fitting.
    pub trace: Vec<(u64, f64)>,
    /// `(iteration, alpha)` at the start and after each learning step.
    pub alpha_trace: Vec<(u64, Vec<f64>)>,
    /// `(iteration, beta)` for a symmetric beta, at the start and after each learning step.
    pub beta_trace: Vec<(u64, f64)>,
    /// Posterior samples of the current run (the last one is the final state).
    pub samples: Vec<Sample>,
}

/// The on-disk shape of a model file (format version 2).
#[derive(Serialize, Deserialize)]
struct ModelFile {
    corpus: Corpus,
    n_topics: u32,
    priors: Priors,
    assignments: Vec<Topic>,
    /// Per topic: (word, tokens of that word in the topic) for the current state.
    topic_word: SparseRows,
    /// Per document: (topic, tokens of the document in the topic) for the current state.
    doc_topic: SparseRows,
    iterations_done: u64,
    target: u64,
    schedule: Schedule,
    seed: u64,
    rng: Xoshiro256PlusPlus,
    trace: Vec<(u64, f64)>,
    alpha_trace: Vec<(u64, Vec<f64>)>,
    beta_trace: Vec<(u64, f64)>,
    samples: Vec<Sample>,
}

/// The schedule of format version 1 (written by the reference sampler only).
#[derive(Deserialize)]
struct ScheduleV1 {
    burn_in: u64,
    learn_alpha: bool,
    learn_beta: bool,
    learn_every: u64,
    samples: u64,
    lag: u64,
    trace_every: u64,
}

/// The on-disk shape of format version 1: 32-bit topic ids and no sampler
/// or shard count in the schedule.
#[derive(Deserialize)]
struct ModelFileV1 {
    corpus: Corpus,
    n_topics: u32,
    priors: Priors,
    assignments: Vec<u32>,
    topic_word: SparseRows,
    doc_topic: SparseRows,
    iterations_done: u64,
    target: u64,
    schedule: ScheduleV1,
    seed: u64,
    rng: Xoshiro256PlusPlus,
    trace: Vec<(u64, f64)>,
    alpha_trace: Vec<(u64, Vec<f64>)>,
    beta_trace: Vec<(u64, f64)>,
    samples: Vec<Sample>,
}

impl ModelFileV1 {
    /// The same model in the current shape; it continues with the sampler
    /// that wrote it. `None` when it has more topics than 16-bit ids hold.
    fn upgrade(self) -> Option<ModelFile> {
        if self.n_topics as usize > MAX_TOPICS {
            return None;
        }
        let assignments = self
            .assignments
            .into_iter()
            .map(|topic| Topic::try_from(topic).ok())
            .collect::<Option<Vec<Topic>>>()?;
        let old = self.schedule;
        Some(ModelFile {
            corpus: self.corpus,
            n_topics: self.n_topics,
            priors: self.priors,
            assignments,
            topic_word: self.topic_word,
            doc_topic: self.doc_topic,
            iterations_done: self.iterations_done,
            target: self.target,
            schedule: Schedule {
                sampler: SamplerKind::Reference,
                shards: 1,
                burn_in: old.burn_in,
                learn_alpha: old.learn_alpha,
                learn_beta: old.learn_beta,
                learn_every: old.learn_every,
                samples: old.samples,
                lag: old.lag,
                trace_every: old.trace_every,
            },
            seed: self.seed,
            rng: self.rng,
            trace: self.trace,
            alpha_trace: self.alpha_trace,
            beta_trace: self.beta_trace,
            samples: self.samples,
        })
    }
}

/// The topic-word and document-topic counts of a state as sparse rows.
fn sparse_counts(state: &CountState, corpus: &Corpus) -> (SparseRows, SparseRows) {
    let mut topic_word: SparseRows = vec![Vec::new(); state.n_topics];
    for word_idx in 0..state.n_words {
        for (topic, count) in state.word_topic.row_pairs(word_idx) {
            topic_word[topic as usize].push((word_idx as u32, count));
        }
    }
    let doc_topic = (0..corpus.n_docs())
        .map(|doc_idx| state.doc_topic_pairs(corpus, doc_idx))
        .collect();
    (topic_word, doc_topic)
}

/// Columns of the topic-word matrix: `phi_kw` for every topic k of one word
/// w, averaged over the samples, computed from the sparse counts on demand.
/// Each value is the same, bit for bit, as in [`Model::topic_word_row`]: the
/// same terms are added in the same order.
pub struct TopicWordColumns<'a> {
    model: &'a Model,
    /// The current state as a sample, when no samples were kept.
    current: Option<Sample>,
}

impl TopicWordColumns<'_> {
    /// Number of topics, the length of a column.
    pub fn n_topics(&self) -> usize {
        self.model.n_topics()
    }

    /// Writes `phi_kw` of word `word_idx` for every topic k into `column`
    /// (resized to K).
    pub fn fill(&self, word_idx: usize, column: &mut Vec<f64>) {
        let samples = match &self.current {
            Some(current) => std::slice::from_ref(current),
            None => self.model.samples.as_slice(),
        };
        let n_words = self.model.state.n_words;
        column.clear();
        column.resize(self.n_topics(), 0.0);
        let weight = 1.0 / samples.len() as f64;
        for sample in samples {
            let beta = sample.priors.beta_of(word_idx);
            let beta_sum = sample.priors.beta_sum(n_words);
            for (topic_idx, value) in column.iter_mut().enumerate() {
                let denominator = sample.topic_totals[topic_idx] as f64 + beta_sum;
                *value += weight * beta / denominator;
                let count = Sample::count(&sample.topic_word[topic_idx], word_idx);
                if count > 0 {
                    *value += weight * f64::from(count) / denominator;
                }
            }
        }
    }
}

impl Model {
    /// Number of topics.
    pub fn n_topics(&self) -> usize {
        self.state.n_topics
    }

    /// Runs `f` on the samples the estimates average: the kept samples, or
    /// the current state when none were kept yet.
    fn with_samples<T>(&self, f: impl FnOnce(&[Sample]) -> T) -> T {
        if self.samples.is_empty() {
            f(&[Sample::of(self, self.iterations_done)])
        } else {
            f(&self.samples)
        }
    }

    /// Length of document `doc_idx` in tokens.
    pub fn doc_len(&self, doc_idx: usize) -> u64 {
        self.corpus.offsets[doc_idx + 1] - self.corpus.offsets[doc_idx]
    }

    /// Topic `topic_idx`'s word distribution, `phi_kw = (n_kw + beta_w) / (n_k + b0)`
    /// averaged over the samples, for every word.
    pub fn topic_word_row(&self, topic_idx: usize) -> Vec<f64> {
        let n_words = self.state.n_words;
        self.with_samples(|samples| {
            let mut row = vec![0.0; n_words];
            let weight = 1.0 / samples.len() as f64;
            for sample in samples {
                let denominator = sample.topic_totals[topic_idx] as f64 + sample.priors.beta_sum(n_words);
                for (word_idx, value) in row.iter_mut().enumerate() {
                    *value += weight * sample.priors.beta_of(word_idx) / denominator;
                }
                for &(word, count) in &sample.topic_word[topic_idx] {
                    row[word as usize] += weight * f64::from(count) / denominator;
                }
            }
            row
        })
    }

    /// The topic-word shares of one word at a time (a column of `phi`), for
    /// callers that must not hold the K x V matrix; see [`TopicWordColumns`].
    pub fn topic_word_columns(&self) -> TopicWordColumns<'_> {
        let current = self
            .samples
            .is_empty()
            .then(|| Sample::of(self, self.iterations_done));
        TopicWordColumns { model: self, current }
    }

    /// The full topic-word matrix `phi` (K rows of V).
    pub fn topic_word_matrix(&self) -> Vec<Vec<f64>> {
        (0..self.n_topics()).map(|k| self.topic_word_row(k)).collect()
    }

    /// Credible interval at `level` of `phi_kw`, from the Beta marginals of
    /// the Dirichlet posterior of topic `topic_idx` in each sample.
    pub fn topic_word_interval(
        &self,
        topic_idx: usize,
        word_idx: usize,
        level: f64,
    ) -> Result<Interval, UncertaintyError> {
        let n_words = self.state.n_words;
        self.with_samples(|samples| {
            let components: Vec<(f64, f64)> = samples
                .iter()
                .map(|sample| {
                    let count = Sample::count(&sample.topic_word[topic_idx], word_idx);
                    (
                        f64::from(count) + sample.priors.beta_of(word_idx),
                        sample.topic_totals[topic_idx] as f64 + sample.priors.beta_sum(n_words),
                    )
                })
                .collect();
            uncertainty::mixture_share_interval(&components, level)
        })
    }

    /// Document-topic shares `theta_dk = (n_dk + alpha_k) / (n_d + a0)` of one
    /// document, averaged over the samples.
    pub fn doc_topic_shares(&self, doc_idx: usize) -> Vec<f64> {
        let n_topics = self.n_topics();
        let doc_len = self.doc_len(doc_idx) as f64;
        self.with_samples(|samples| {
            let mut shares = vec![0.0; n_topics];
            let weight = 1.0 / samples.len() as f64;
            for sample in samples {
                let denominator = doc_len + sample.priors.alpha_sum();
                for (topic_idx, share) in shares.iter_mut().enumerate() {
                    *share += weight * sample.priors.alpha[topic_idx] / denominator;
                }
                for &(topic, count) in &sample.doc_topic[doc_idx] {
                    shares[topic as usize] += weight * f64::from(count) / denominator;
                }
            }
            shares
        })
    }

    /// Credible intervals at `level` of each topic share of a document, from
    /// the Beta marginals of Dirichlet(alpha + n_d) in each sample (a mixture
    /// when several samples were kept).
    pub fn doc_topic_intervals(&self, doc_idx: usize, level: f64) -> Result<Vec<Interval>, UncertaintyError> {
        let doc_len = self.doc_len(doc_idx) as f64;
        self.with_samples(|samples| {
            (0..self.n_topics())
                .map(|topic_idx| {
                    let components: Vec<(f64, f64)> = samples
                        .iter()
                        .map(|sample| {
                            let count = Sample::count(&sample.doc_topic[doc_idx], topic_idx);
                            (
                                f64::from(count) + sample.priors.alpha[topic_idx],
                                doc_len + sample.priors.alpha_sum(),
                            )
                        })
                        .collect();
                    uncertainty::mixture_share_interval(&components, level)
                })
                .collect()
        })
    }

    /// Share of all tokens assigned to each topic, averaged over the samples.
    pub fn topic_token_shares(&self) -> Vec<f64> {
        let total = self.corpus.n_tokens().max(1) as f64;
        let n_topics = self.n_topics();
        self.with_samples(|samples| {
            let mut shares = vec![0.0; n_topics];
            for sample in samples {
                for (share, &n) in shares.iter_mut().zip(&sample.topic_totals) {
                    *share += n as f64 / total / samples.len() as f64;
                }
            }
            shares
        })
    }

    /// Whether the topic has any tokens of the word in any sample.
    pub fn topic_has_word(&self, topic_idx: usize, word_idx: usize) -> bool {
        self.with_samples(|samples| {
            samples
                .iter()
                .any(|s| Sample::count(&s.topic_word[topic_idx], word_idx) > 0)
        })
    }

    /// Writes the model file crash-safely.
    pub fn save(&self, path: &Path) -> Result<(), FormatError> {
        format::write_file(FileKind::Model, &self.to_file(), path)
    }

    /// The encoded model file image (for staged writes).
    pub fn encode(&self, path: &Path) -> Result<Vec<u8>, FormatError> {
        format::encode(FileKind::Model, &self.to_file(), path)
    }

    fn to_file(&self) -> ModelFile {
        let (topic_word, doc_topic) = sparse_counts(&self.state, &self.corpus);
        ModelFile {
            corpus: self.corpus.clone(),
            n_topics: self.n_topics() as u32,
            priors: self.priors.clone(),
            assignments: self.state.assignments.clone(),
            topic_word,
            doc_topic,
            iterations_done: self.iterations_done,
            target: self.target,
            schedule: self.schedule.clone(),
            seed: self.seed,
            rng: self.rng.clone(),
            trace: self.trace.clone(),
            alpha_trace: self.alpha_trace.clone(),
            beta_trace: self.beta_trace.clone(),
            samples: self.samples.clone(),
        }
    }

    /// Reads a model file and checks that its counts agree with its assignments.
    pub fn load(path: &Path) -> Result<Model, FormatError> {
        let bytes = format::read_bytes(path)?;
        let mut too_many_topics = false;
        let file: ModelFile = format::decode_versioned(FileKind::Model, &bytes, path, |version, payload| {
            if version == 1 {
                let old: ModelFileV1 = postcard::from_bytes(payload)?;
                match old.upgrade() {
                    Some(file) => Ok(file),
                    None => {
                        too_many_topics = true;
                        Err(postcard::Error::DeserializeBadEncoding)
                    }
                }
            } else {
                postcard::from_bytes(payload)
            }
        })
        .map_err(|err| match err {
            FormatError::Decode { path, .. } if too_many_topics => FormatError::Decode {
                path,
                detail: format!(
                    "the model has more than {MAX_TOPICS} topics, which this version cannot load"
                ),
            },
            other => other,
        })?;
        let mut corpus = file.corpus;
        corpus.vocabulary.rebuild_index();
        let bad = |detail: &str| FormatError::Decode {
            path: path.to_path_buf(),
            detail: detail.to_string(),
        };
        let n_topics = file.n_topics as usize;
        let n_words = corpus.vocabulary.len();
        let priors_fit = |priors: &Priors| {
            priors.alpha.len() == n_topics
                && match &priors.beta {
                    BetaPrior::Symmetric(_) => true,
                    BetaPrior::Asymmetric(values) => values.len() == n_words,
                }
        };
        if n_topics == 0
            || !priors_fit(&file.priors)
            || file.assignments.len() != corpus.n_tokens()
            || n_topics > MAX_TOPICS
            || file.assignments.iter().any(|&topic| topic as usize >= n_topics)
            || file.schedule.shards == 0
        {
            return Err(bad("topic assignments do not fit the model's topics and tokens"));
        }
        let samples_fit = file.samples.iter().all(|s| {
            priors_fit(&s.priors)
                && s.topic_word.len() == n_topics
                && s.doc_topic.len() == corpus.n_docs()
                && s.topic_totals.len() == n_topics
                && s.topic_word
                    .iter()
                    .flatten()
                    .all(|&(w, _)| (w as usize) < n_words)
                && s.doc_topic
                    .iter()
                    .flatten()
                    .all(|&(k, _)| (k as usize) < n_topics)
        });
        if !samples_fit {
            return Err(bad(
                "a posterior sample does not fit the model's topics, words and documents",
            ));
        }
        let state = CountState::from_assignments(&corpus, n_topics, file.assignments);
        let (topic_word, doc_topic) = sparse_counts(&state, &corpus);
        if topic_word != file.topic_word || doc_topic != file.doc_topic {
            return Err(bad("stored counts disagree with the topic assignments"));
        }
        Ok(Model {
            corpus,
            priors: file.priors,
            state,
            iterations_done: file.iterations_done,
            target: file.target,
            schedule: file.schedule,
            seed: file.seed,
            rng: file.rng,
            trace: file.trace,
            alpha_trace: file.alpha_trace,
            beta_trace: file.beta_trace,
            samples: file.samples,
        })
    }
}
