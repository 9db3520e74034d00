//! A fitted model: the training corpus, the priors, every token's topic and
//! the counts they imply, the posterior samples kept at the end of the run,
//! the traces, and what is needed to continue sampling. Also the estimates
//! read from it: topic-word and document-topic shares averaged over the
//! samples, with credible intervals from their Dirichlet posteriors.
//!
//! The files live beside it: [`format`] frames every binary file and writes
//! crash-safely, `file` holds the model file's own shapes and checks,
//! [`corpus_file`] the corpus file's.
//!
//! **Invariant:** the in-memory [`Model`] and the on-disk shapes are
//! separate types; sampler internals are not serialized directly.

pub mod corpus_file;
mod file;
pub mod folder;
pub mod format;
pub mod summary;

use std::ops::Range;
use std::path::Path;

use rand_xoshiro::Xoshiro256PlusPlus;

use crate::evaluate::uncertainty::{self, Interval, UncertaintyError};
use crate::fitting::sampler::{CountState, Priors};
use crate::fitting::schedule::Schedule;
use crate::ingest::corpus::Corpus;
use format::FormatError;

/// Sparse rows of counts: for each row, `(column, count)` pairs with count > 0,
/// columns increasing.
pub type SparseRows = Vec<Vec<(u32, u32)>>;

/// One posterior sample kept for the estimates.
#[derive(Clone, Debug, PartialEq)]
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
    /// The id of each topic, by index: `0..K` for a model fitted on its own;
    /// under a run root, ids carried over from the published model by
    /// matching, so that a topic keeps its id (and its name) from run to run.
    pub topic_ids: Vec<u32>,
}

/// The topic-word and document-topic counts of a state as sparse rows.
pub(crate) fn sparse_counts(state: &CountState, corpus: &Corpus) -> (SparseRows, SparseRows) {
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

/// The `(a_k, A)` pair of one document's topic share in each sample: the
/// Beta marginal of its Dirichlet(alpha + n_d) posterior.
fn share_components(
    samples: &[Sample],
    docs: Range<usize>,
    topic_idx: usize,
    doc_len: f64,
) -> Vec<(f64, f64)> {
    samples
        .iter()
        .map(|sample| {
            let count: u32 = docs
                .clone()
                .map(|doc_idx| Sample::count(&sample.doc_topic[doc_idx], topic_idx))
                .sum();
            (
                f64::from(count) + sample.priors.alpha[topic_idx],
                doc_len + sample.priors.alpha_sum(),
            )
        })
        .collect()
}

/// Columns of the topic-word matrix: `phi_kw` for every topic k of one word
/// w, averaged over the samples, computed from the sparse counts on demand.
/// Each value is the same, bit for bit, as in [`Model::topic_word_row`]: the
/// same terms are added in the same order.
///
/// For the words from `first_word` on, each sample's counts are kept word by
/// word (at most 8 bytes per non-zero count of those words), so a column
/// costs O(K + its non-zero counts) per sample; earlier words are looked up
/// topic by topic.
pub struct TopicWordColumns<'a> {
    model: &'a Model,
    /// The current state as a sample, when no samples were kept.
    current: Option<Sample>,
    first_word: usize,
    /// Per sample: `n_k + b0` for every topic.
    denominators: Vec<Vec<f64>>,
    /// Per sample: where each word's `(topic, count)` entries start, for
    /// words `first_word..V`, and one past the last.
    starts: Vec<Vec<usize>>,
    /// Per sample: the entries, topics increasing within a word.
    entries: Vec<Vec<(u32, u32)>>,
}

impl TopicWordColumns<'_> {
    /// Number of topics, the length of a column.
    pub fn n_topics(&self) -> usize {
        self.model.n_topics()
    }

    fn samples(&self) -> &[Sample] {
        match &self.current {
            Some(current) => std::slice::from_ref(current),
            None => self.model.samples.as_slice(),
        }
    }

    /// Writes `phi_kw` of word `word_idx` for every topic k into `column`
    /// (resized to K).
    pub fn fill(&self, word_idx: usize, column: &mut Vec<f64>) {
        let samples = self.samples();
        column.clear();
        column.resize(self.n_topics(), 0.0);
        let weight = 1.0 / samples.len() as f64;
        for (sample_idx, sample) in samples.iter().enumerate() {
            let beta = sample.priors.beta_of(word_idx);
            let denominators = &self.denominators[sample_idx];
            if word_idx >= self.first_word {
                for (value, &denominator) in column.iter_mut().zip(denominators) {
                    *value += weight * beta / denominator;
                }
                let local = word_idx - self.first_word;
                let starts = &self.starts[sample_idx];
                for &(topic, count) in &self.entries[sample_idx][starts[local]..starts[local + 1]] {
                    column[topic as usize] += weight * f64::from(count) / denominators[topic as usize];
                }
            } else {
                for (topic_idx, (value, &denominator)) in column.iter_mut().zip(denominators).enumerate() {
                    *value += weight * beta / denominator;
                    let count = Sample::count(&sample.topic_word[topic_idx], word_idx);
                    if count > 0 {
                        *value += weight * f64::from(count) / denominator;
                    }
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
    /// callers that must not hold the K x V matrix; the words from
    /// `first_word` on are indexed for fast columns (see [`TopicWordColumns`]).
    pub fn topic_word_columns(&self, first_word: usize) -> TopicWordColumns<'_> {
        let current = self
            .samples
            .is_empty()
            .then(|| Sample::of(self, self.iterations_done));
        let n_words = self.state.n_words;
        let first_word = first_word.min(n_words);
        let samples = current
            .as_ref()
            .map_or(self.samples.as_slice(), std::slice::from_ref);
        let mut denominators = Vec::with_capacity(samples.len());
        let mut all_starts = Vec::with_capacity(samples.len());
        let mut all_entries = Vec::with_capacity(samples.len());
        for sample in samples {
            let beta_sum = sample.priors.beta_sum(n_words);
            denominators.push(sample.topic_totals.iter().map(|&n| n as f64 + beta_sum).collect());
            let mut starts = vec![0usize; n_words - first_word + 1];
            for row in &sample.topic_word {
                for &(word, _) in row {
                    if word as usize >= first_word {
                        starts[word as usize - first_word + 1] += 1;
                    }
                }
            }
            for local in 1..starts.len() {
                starts[local] += starts[local - 1];
            }
            let mut next = starts.clone();
            let mut entries = vec![(0u32, 0u32); *starts.last().unwrap_or(&0)];
            for (topic, row) in sample.topic_word.iter().enumerate() {
                for &(word, count) in row {
                    if word as usize >= first_word {
                        let slot = &mut next[word as usize - first_word];
                        entries[*slot] = (topic as u32, count);
                        *slot += 1;
                    }
                }
            }
            all_starts.push(starts);
            all_entries.push(entries);
        }
        TopicWordColumns {
            model: self,
            current,
            first_word,
            denominators,
            starts: all_starts,
            entries: all_entries,
        }
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
        self.documents_topic_shares(doc_idx..doc_idx + 1)
    }

    /// The topic shares of documents `docs` taken as one document (their
    /// tokens' topics counted together), averaged over the samples; for one
    /// document, [`Model::doc_topic_shares`].
    pub fn documents_topic_shares(&self, docs: Range<usize>) -> Vec<f64> {
        let n_topics = self.n_topics();
        let doc_len = docs.clone().map(|doc_idx| self.doc_len(doc_idx)).sum::<u64>() as f64;
        self.with_samples(|samples| {
            let mut shares = vec![0.0; n_topics];
            let weight = 1.0 / samples.len() as f64;
            for sample in samples {
                let denominator = doc_len + sample.priors.alpha_sum();
                for (topic_idx, share) in shares.iter_mut().enumerate() {
                    *share += weight * sample.priors.alpha[topic_idx] / denominator;
                }
                for doc_idx in docs.clone() {
                    for &(topic, count) in &sample.doc_topic[doc_idx] {
                        shares[topic as usize] += weight * f64::from(count) / denominator;
                    }
                }
            }
            shares
        })
    }

    /// Credible intervals at `level` of each topic share of a document, from
    /// the Beta marginals of Dirichlet(alpha + n_d) in each sample (a mixture
    /// when several samples were kept).
    pub fn doc_topic_intervals(&self, doc_idx: usize, level: f64) -> Result<Vec<Interval>, UncertaintyError> {
        (0..self.n_topics())
            .map(|topic_idx| self.documents_topic_interval(doc_idx..doc_idx + 1, topic_idx, level))
            .collect()
    }

    /// The credible interval at `level` of one topic's share of documents
    /// `docs` taken as one document (see [`Model::doc_topic_intervals`]).
    pub fn documents_topic_interval(
        &self,
        docs: Range<usize>,
        topic_idx: usize,
        level: f64,
    ) -> Result<Interval, UncertaintyError> {
        let doc_len = docs.clone().map(|doc_idx| self.doc_len(doc_idx)).sum::<u64>() as f64;
        self.with_samples(|samples| {
            let components = share_components(samples, docs, topic_idx, doc_len);
            uncertainty::mixture_share_interval(&components, level)
        })
    }

    /// Credible interval at `level` of one topic share of one document (the
    /// same value as that topic's entry of [`Model::doc_topic_intervals`],
    /// without computing the others).
    pub fn doc_topic_interval(
        &self,
        doc_idx: usize,
        topic_idx: usize,
        level: f64,
    ) -> Result<Interval, UncertaintyError> {
        self.documents_topic_interval(doc_idx..doc_idx + 1, topic_idx, level)
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
        file::save(self, path)
    }

    /// The encoded model file image (for staged writes).
    pub fn encode(&self, path: &Path) -> Result<Vec<u8>, FormatError> {
        file::encode(self, path)
    }

    /// Reads a model file (format 1 or 2) and checks everything in it: the
    /// corpus, the priors, the assignments against the stored counts, the
    /// schedule, the samples (see `file`).
    pub fn load(path: &Path) -> Result<Model, FormatError> {
        file::load(path)
    }

    /// [`Model::load`] on a model file image already in memory (`path`
    /// names it in errors); the fuzz targets and tests feed it bytes.
    pub fn decode(bytes: Vec<u8>, path: &Path) -> Result<Model, FormatError> {
        file::decode(bytes, path)
    }
}
