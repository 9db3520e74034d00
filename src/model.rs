//! A fitted model: the training corpus, the priors, every token's topic and
//! the counts they imply, plus what is needed to continue sampling. Also the
//! point estimates read from it (topic-word and document-topic shares).
//!
//! **Invariant:** the in-memory [`Model`] and the on-disk [`ModelFile`] are
//! separate types; sampler internals are not serialized directly.

use std::path::Path;

use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use crate::corpus::Corpus;
use crate::format::{self, FileKind, FormatError};
use crate::sampler::{CountState, Priors};

/// A fitted model in memory.
#[derive(Clone, Debug)]
pub struct Model {
    /// The training corpus (with vocabulary and tokenizer settings).
    pub corpus: Corpus,
    /// The priors the model was fitted with.
    pub priors: Priors,
    /// Assignments and counts.
    pub state: CountState,
    /// Sweeps done so far.
    pub iterations_done: u64,
    /// Burn-in sweeps of the run that produced the model.
    pub burn_in: u64,
    /// The seed the run started from.
    pub seed: u64,
    /// The random stream, where the last sweep left it.
    pub rng: Xoshiro256PlusPlus,
    /// `(iteration, log p(w, z))` pairs recorded during fitting.
    pub trace: Vec<(u64, f64)>,
}

/// Sparse rows of counts: for each row, `(column, count)` pairs with count > 0.
type SparseRows = Vec<Vec<(u32, u32)>>;

/// The on-disk shape of a model file.
#[derive(Serialize, Deserialize)]
struct ModelFile {
    corpus: Corpus,
    n_topics: u32,
    priors: Priors,
    assignments: Vec<u32>,
    /// Per topic: (word, tokens of that word in the topic).
    topic_word: SparseRows,
    /// Per document: (topic, tokens of the document in the topic).
    doc_topic: SparseRows,
    iterations_done: u64,
    burn_in: u64,
    seed: u64,
    rng: Xoshiro256PlusPlus,
    trace: Vec<(u64, f64)>,
}

impl Model {
    /// Number of topics.
    pub fn n_topics(&self) -> usize {
        self.state.n_topics
    }

    /// Topic-word share `phi_kw = (n_kw + beta_w) / (n_k + b0)`.
    pub fn topic_word_share(&self, topic_idx: usize, word_idx: usize) -> f64 {
        let beta_sum = self.priors.beta_sum(self.state.n_words);
        (f64::from(self.state.word_topic_count(word_idx, topic_idx)) + self.priors.beta_of(word_idx))
            / (self.state.topic_totals[topic_idx] as f64 + beta_sum)
    }

    /// Document-topic shares `theta_dk = (n_dk + alpha_k) / (n_d + a0)` of one document.
    pub fn doc_topic_shares(&self, doc_idx: usize) -> Vec<f64> {
        let doc_len = (self.corpus.offsets[doc_idx + 1] - self.corpus.offsets[doc_idx]) as f64;
        let denominator = doc_len + self.priors.alpha_sum();
        (0..self.n_topics())
            .map(|topic_idx| {
                (f64::from(self.state.doc_topic_count(doc_idx, topic_idx)) + self.priors.alpha[topic_idx])
                    / denominator
            })
            .collect()
    }

    /// Share of all tokens assigned to each topic.
    pub fn topic_token_shares(&self) -> Vec<f64> {
        let total = self.corpus.n_tokens().max(1) as f64;
        self.state
            .topic_totals
            .iter()
            .map(|&n| n as f64 / total)
            .collect()
    }

    /// The full topic-word matrix `phi` (K rows of V).
    pub fn topic_word_matrix(&self) -> Vec<Vec<f64>> {
        (0..self.n_topics())
            .map(|topic_idx| {
                (0..self.state.n_words)
                    .map(|word_idx| self.topic_word_share(topic_idx, word_idx))
                    .collect()
            })
            .collect()
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
        let (topic_word, doc_topic) = self.sparse_counts();
        ModelFile {
            corpus: self.corpus.clone(),
            n_topics: self.n_topics() as u32,
            priors: self.priors.clone(),
            assignments: self.state.assignments.clone(),
            topic_word,
            doc_topic,
            iterations_done: self.iterations_done,
            burn_in: self.burn_in,
            seed: self.seed,
            rng: self.rng.clone(),
            trace: self.trace.clone(),
        }
    }

    /// The topic-word and document-topic counts as sparse rows.
    fn sparse_counts(&self) -> (SparseRows, SparseRows) {
        let n_topics = self.n_topics();
        let mut topic_word: SparseRows = vec![Vec::new(); n_topics];
        for word_idx in 0..self.state.n_words {
            for (topic_idx, row) in topic_word.iter_mut().enumerate() {
                let count = self.state.word_topic_count(word_idx, topic_idx);
                if count > 0 {
                    row.push((word_idx as u32, count));
                }
            }
        }
        let doc_topic = (0..self.corpus.n_docs())
            .map(|doc_idx| {
                (0..n_topics)
                    .filter_map(|topic_idx| {
                        let count = self.state.doc_topic_count(doc_idx, topic_idx);
                        (count > 0).then_some((topic_idx as u32, count))
                    })
                    .collect()
            })
            .collect();
        (topic_word, doc_topic)
    }

    /// Reads a model file and checks that its counts agree with its assignments.
    pub fn load(path: &Path) -> Result<Model, FormatError> {
        let file: ModelFile = format::read_file(FileKind::Model, path)?;
        let mut corpus = file.corpus;
        corpus.vocabulary.rebuild_index();
        let bad = |detail: &str| FormatError::Decode {
            path: path.to_path_buf(),
            detail: detail.to_string(),
        };
        let n_topics = file.n_topics as usize;
        if n_topics == 0
            || file.priors.alpha.len() != n_topics
            || file.assignments.len() != corpus.n_tokens()
            || file.assignments.iter().any(|&topic| topic as usize >= n_topics)
        {
            return Err(bad("topic assignments do not fit the model's topics and tokens"));
        }
        let state = CountState::from_assignments(&corpus, n_topics, file.assignments);
        let stored = Model {
            corpus,
            priors: file.priors,
            state,
            iterations_done: file.iterations_done,
            burn_in: file.burn_in,
            seed: file.seed,
            rng: file.rng,
            trace: file.trace,
        };
        let (topic_word, doc_topic) = stored.sparse_counts();
        if topic_word != file.topic_word || doc_topic != file.doc_topic {
            return Err(bad("stored counts disagree with the topic assignments"));
        }
        Ok(stored)
    }
}
