//! Collapsed Gibbs sampling for LDA: the count state, the Dirichlet priors,
//! the joint log-likelihood, and the samplers that sweep over tokens.
//!
//! The conditional for one token (Griffiths & Steyvers 2004) is
//! `p(z_i = k | rest) ∝ (n_kw + beta_w) / (n_k + b0) * (n_dk + alpha_k)`,
//! with the token's own assignment removed from every count.
//!
//! This module does no I/O.

mod block;
mod counts;
mod exact;
mod metropolis;
mod prefetch;
mod reference;
mod sharded;
mod sparse;

pub use block::{BlockKernel, Shard, block_stream, splitmix64};
pub use counts::{RowLayout, RowsMut, WordTopicCounts};
pub use metropolis::CYCLES_PER_TOKEN;
pub use reference::{conditional, sweep_reference};
pub use sharded::{
    EpochLink, MAX_AUTO_SHARDS, MAX_TOKENS, ShardedSampler, TWO_SHARDS_FROM, default_shards, plan_shards,
    plan_word_groups, tokens_per_shard,
};

use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use statrs::function::gamma::ln_gamma;

use crate::ingest::corpus::Corpus;

/// The topic-word prior: one value for every word, or one per word.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub enum BetaPrior {
    /// The same concentration for every word.
    Symmetric(f64),
    /// One concentration per vocabulary word, in word-id order.
    Asymmetric(Vec<f64>),
}

/// The Dirichlet priors of a model.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Priors {
    /// Document-topic prior, one value per topic.
    pub alpha: Vec<f64>,
    /// Topic-word prior.
    pub beta: BetaPrior,
}

impl Priors {
    /// The sum of alpha, `a0`.
    pub fn alpha_sum(&self) -> f64 {
        self.alpha.iter().sum()
    }

    /// The prior weight of word `word_idx`.
    #[inline]
    pub fn beta_of(&self, word_idx: usize) -> f64 {
        match &self.beta {
            BetaPrior::Symmetric(value) => *value,
            BetaPrior::Asymmetric(values) => values[word_idx],
        }
    }

    /// The sum of beta over a vocabulary of `n_words`, `b0`.
    pub fn beta_sum(&self, n_words: usize) -> f64 {
        match &self.beta {
            BetaPrior::Symmetric(value) => value * n_words as f64,
            BetaPrior::Asymmetric(values) => values.iter().sum(),
        }
    }
}

/// A topic id. Topics are counted in 16 bits, so a model has at most
/// [`MAX_TOPICS`] topics.
pub type Topic = u16;

/// The largest number of topics a model can have.
pub const MAX_TOPICS: usize = 1 << 16;

/// Topic assignments of every token and the counts they imply, in a compact
/// layout: 16-bit topic ids in document order, word-topic counts with a
/// dense or sparse row per word ([`WordTopicCounts`]), and topic totals.
/// Document-topic counts are not stored: a document's tokens are contiguous,
/// so its counts are read off its assignments when needed
/// ([`CountState::doc_topic_pairs`]), and samplers keep one dense row for the
/// document they are in.
#[derive(Clone, Debug, PartialEq)]
pub struct CountState {
    /// Number of topics, K.
    pub n_topics: usize,
    /// Number of vocabulary words, V.
    pub n_words: usize,
    /// Topic of each token, parallel to `Corpus::tokens`.
    pub assignments: Vec<Topic>,
    /// `n_kw`, the tokens of word w assigned to topic k.
    pub word_topic: WordTopicCounts,
    /// `topic_totals[k]` = tokens assigned to topic k.
    pub topic_totals: Vec<u64>,
}

/// Tokens of each vocabulary word in `corpus`.
pub fn word_token_counts(corpus: &Corpus) -> Vec<u64> {
    let mut counts = vec![0u64; corpus.vocabulary.len()];
    for &word in &corpus.tokens {
        counts[word as usize] += 1;
    }
    counts
}

impl CountState {
    /// Builds the counts implied by `assignments` over `corpus`.
    pub fn from_assignments(corpus: &Corpus, n_topics: usize, assignments: Vec<Topic>) -> CountState {
        assert!(n_topics <= MAX_TOPICS, "at most {MAX_TOPICS} topics");
        let mut word_topic = WordTopicCounts::new(&word_token_counts(corpus), n_topics);
        let mut topic_totals = vec![0u64; n_topics];
        for (&word, &topic) in corpus.tokens.iter().zip(&assignments) {
            word_topic.increment(word as usize, topic);
            topic_totals[topic as usize] += 1;
        }
        CountState {
            n_topics,
            n_words: corpus.vocabulary.len(),
            assignments,
            word_topic,
            topic_totals,
        }
    }

    /// Assigns every token a topic drawn uniformly at random.
    pub fn random(corpus: &Corpus, n_topics: usize, rng: &mut impl rand::Rng) -> CountState {
        use rand::RngExt;
        let assignments = (0..corpus.n_tokens())
            .map(|_| rng.random_range(0..n_topics as u32) as Topic)
            .collect();
        CountState::from_assignments(corpus, n_topics, assignments)
    }

    /// The non-zero topic counts of document `doc_idx` as `(topic, count)`,
    /// topics increasing.
    pub fn doc_topic_pairs(&self, corpus: &Corpus, doc_idx: usize) -> Vec<(u32, u32)> {
        let range = corpus.offsets[doc_idx] as usize..corpus.offsets[doc_idx + 1] as usize;
        let mut topics = self.assignments[range].to_vec();
        topics.sort_unstable();
        let mut pairs: Vec<(u32, u32)> = Vec::new();
        for topic in topics {
            match pairs.last_mut() {
                Some((last, count)) if *last == u32::from(topic) => *count += 1,
                _ => pairs.push((u32::from(topic), 1)),
            }
        }
        pairs
    }

    /// Tokens of document `doc_idx` in topic `topic_idx` (a scan of the document).
    pub fn doc_topic_count(&self, corpus: &Corpus, doc_idx: usize, topic_idx: usize) -> u32 {
        let range = corpus.offsets[doc_idx] as usize..corpus.offsets[doc_idx + 1] as usize;
        self.assignments[range]
            .iter()
            .filter(|&&topic| topic as usize == topic_idx)
            .count() as u32
    }

    /// Tokens of word `word_idx` in topic `topic_idx`.
    pub fn word_topic_count(&self, word_idx: usize, topic_idx: usize) -> u32 {
        self.word_topic.get(word_idx, topic_idx as Topic)
    }

    /// Bytes of memory the state holds.
    pub fn heap_bytes(&self) -> usize {
        self.assignments.len() * std::mem::size_of::<Topic>()
            + self.word_topic.heap_bytes()
            + self.topic_totals.len() * 8
    }
}

/// The two parts of the joint log-likelihood `log p(w, z)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LogLikelihood {
    /// `log p(w | z, beta)`.
    pub words: f64,
    /// `log p(z | alpha)`.
    pub topics: f64,
}

impl LogLikelihood {
    /// `log p(w, z)`.
    pub fn total(&self) -> f64 {
        self.words + self.topics
    }
}

/// Computes the joint log-likelihood of the current state (Heinrich 2005
/// forms, which allow asymmetric priors), visiting only non-zero counts:
/// a zero count adds `lgamma(prior) - lgamma(prior) = 0` against the prior
/// term, so
///
/// `log p(w|z) = K lgamma(b0) - sum_k lgamma(n_k + b0) + sum_{n_kw > 0} [lgamma(n_kw + beta_w) - lgamma(beta_w)]`
///
/// and likewise for `log p(z|alpha)` per document. Per-word and per-document
/// terms are computed in parallel and summed in a fixed order, so the value
/// does not depend on the number of threads.
pub fn log_likelihood(state: &CountState, corpus: &Corpus, priors: &Priors) -> LogLikelihood {
    let (per_word, per_doc) =
        log_likelihood_terms(state, corpus, priors, 0..state.n_words, 0..corpus.n_docs());
    log_likelihood_from_terms(state, priors, &per_word, &per_doc)
}

/// The per-word and per-document terms of [`log_likelihood`] for the words
/// `words` and the documents `docs` (a distributed fit computes each rank's
/// part and adds the gathered terms in the same order).
pub fn log_likelihood_terms(
    state: &CountState,
    corpus: &Corpus,
    priors: &Priors,
    words: std::ops::Range<usize>,
    docs: std::ops::Range<usize>,
) -> (Vec<f64>, Vec<f64>) {
    let per_word: Vec<f64> = words
        .into_par_iter()
        .map(|word_idx| {
            let beta = priors.beta_of(word_idx);
            let beta_lgamma = ln_gamma(beta);
            let mut sum = 0.0;
            state.word_topic.for_each_nonzero(word_idx, |_, count| {
                sum += ln_gamma(f64::from(count) + beta) - beta_lgamma;
            });
            sum
        })
        .collect();
    let alpha_sum = priors.alpha_sum();
    let alpha_lgamma: Vec<f64> = priors.alpha.iter().map(|&a| ln_gamma(a)).collect();
    let per_doc: Vec<f64> = docs
        .into_par_iter()
        .map(|doc_idx| {
            let doc_len = (corpus.offsets[doc_idx + 1] - corpus.offsets[doc_idx]) as f64;
            let mut sum = ln_gamma(alpha_sum) - ln_gamma(doc_len + alpha_sum);
            for (topic, count) in state.doc_topic_pairs(corpus, doc_idx) {
                let alpha = priors.alpha[topic as usize];
                sum += ln_gamma(f64::from(count) + alpha) - alpha_lgamma[topic as usize];
            }
            sum
        })
        .collect();
    (per_word, per_doc)
}

/// [`log_likelihood`] from every word's and every document's term, added
/// in word and document order.
pub fn log_likelihood_from_terms(
    state: &CountState,
    priors: &Priors,
    per_word: &[f64],
    per_doc: &[f64],
) -> LogLikelihood {
    let beta_sum = priors.beta_sum(state.n_words);
    let totals_part: f64 = state
        .topic_totals
        .iter()
        .map(|&total| ln_gamma(beta_sum) - ln_gamma(total as f64 + beta_sum))
        .sum();
    LogLikelihood {
        words: totals_part + per_word.iter().sum::<f64>(),
        topics: per_doc.iter().sum(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::vocab::Vocabulary;

    /// The fixture of METHODS.md section 8: K=2, V=3, alpha=(0.3,0.7),
    /// beta=0.1, documents [0,0,1] and [2,2,1], z = [0,0,1] and [1,1,0].
    fn fixture() -> (Corpus, Priors, CountState) {
        let vocabulary = Vocabulary::from_parts(
            vec!["w0".into(), "w1".into(), "w2".into()],
            vec![2, 2, 2],
            vec![1, 2, 1],
        );
        let corpus = Corpus::from_documents(vocabulary, vec![vec![0, 0, 1], vec![2, 2, 1]]);
        let priors = Priors {
            alpha: vec![0.3, 0.7],
            beta: BetaPrior::Symmetric(0.1),
        };
        let state = CountState::from_assignments(&corpus, 2, vec![0, 0, 1, 1, 1, 0]);
        (corpus, priors, state)
    }

    #[test]
    fn joint_log_likelihood_matches_reference_fixture() {
        // Source: ../shared/METHODS.md section 8 (scipy gammaln), Heinrich 2005 formulas.
        let (corpus, priors, state) = fixture();
        let ll = log_likelihood(&state, &corpus, &priors);
        assert!((ll.words - -8.802321178520852).abs() < 1e-9, "{}", ll.words);
        assert!((ll.topics - -5.911821919455785).abs() < 1e-9, "{}", ll.topics);
        assert!((ll.total() - -14.714143097976638).abs() < 1e-9, "{}", ll.total());
    }

    #[test]
    fn asymmetric_beta_equal_values_match_symmetric() {
        // Source: common practice — an asymmetric prior with equal entries is the symmetric prior.
        let (corpus, mut priors, state) = fixture();
        let symmetric = log_likelihood(&state, &corpus, &priors);
        priors.beta = BetaPrior::Asymmetric(vec![0.1; 3]);
        let asymmetric = log_likelihood(&state, &corpus, &priors);
        assert!((symmetric.total() - asymmetric.total()).abs() < 1e-12);
    }

    #[test]
    fn one_token_conditional_matches_reference_fixture() {
        // Source: ../shared/METHODS.md section 8 — resampling the third token of
        // document 0 gives p = (0.96181818, 0.03818182).
        let (corpus, priors, mut state) = fixture();
        let probabilities = conditional(&mut state, &corpus, &priors, 0, 2);
        assert!((probabilities[0] - 0.96181818).abs() < 1e-8, "{probabilities:?}");
        assert!((probabilities[1] - 0.03818182).abs() < 1e-8, "{probabilities:?}");
        // The counts are restored afterwards.
        assert_eq!(state, fixture().2);
    }
}
