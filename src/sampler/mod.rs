//! Collapsed Gibbs sampling for LDA: the count state, the Dirichlet priors,
//! the joint log-likelihood, and the samplers that sweep over tokens.
//!
//! The conditional for one token (Griffiths & Steyvers 2004) is
//! `p(z_i = k | rest) ∝ (n_kw + beta_w) / (n_k + b0) * (n_dk + alpha_k)`,
//! with the token's own assignment removed from every count.
//!
//! This module does no I/O.

mod reference;

pub use reference::{conditional, sweep_reference};

use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use statrs::function::gamma::ln_gamma;

use crate::corpus::Corpus;

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

/// Topic assignments of every token and the counts they imply.
#[derive(Clone, Debug, PartialEq)]
pub struct CountState {
    /// Number of topics, K.
    pub n_topics: usize,
    /// Number of vocabulary words, V.
    pub n_words: usize,
    /// Topic of each token, parallel to `Corpus::tokens`.
    pub assignments: Vec<u32>,
    /// `doc_topic[d * K + k]` = tokens of document d assigned to topic k.
    pub doc_topic: Vec<u32>,
    /// `word_topic[w * K + k]` = tokens of word w assigned to topic k.
    pub word_topic: Vec<u32>,
    /// `topic_totals[k]` = tokens assigned to topic k.
    pub topic_totals: Vec<u64>,
}

impl CountState {
    /// Builds the counts implied by `assignments` over `corpus`.
    pub fn from_assignments(corpus: &Corpus, n_topics: usize, assignments: Vec<u32>) -> CountState {
        let n_words = corpus.vocabulary.len();
        let mut state = CountState {
            n_topics,
            n_words,
            assignments,
            doc_topic: vec![0; corpus.n_docs() * n_topics],
            word_topic: vec![0; n_words * n_topics],
            topic_totals: vec![0; n_topics],
        };
        for doc_idx in 0..corpus.n_docs() {
            let start = corpus.offsets[doc_idx] as usize;
            for (pos, &word) in corpus.doc_tokens(doc_idx).iter().enumerate() {
                let topic = state.assignments[start + pos] as usize;
                state.doc_topic[doc_idx * n_topics + topic] += 1;
                state.word_topic[word as usize * n_topics + topic] += 1;
                state.topic_totals[topic] += 1;
            }
        }
        state
    }

    /// Assigns every token a topic drawn uniformly at random.
    pub fn random(corpus: &Corpus, n_topics: usize, rng: &mut impl rand::Rng) -> CountState {
        use rand::RngExt;
        let assignments = (0..corpus.n_tokens())
            .map(|_| rng.random_range(0..n_topics as u32))
            .collect();
        CountState::from_assignments(corpus, n_topics, assignments)
    }

    /// Tokens of document `doc_idx` in topic `topic_idx`.
    pub fn doc_topic_count(&self, doc_idx: usize, topic_idx: usize) -> u32 {
        self.doc_topic[doc_idx * self.n_topics + topic_idx]
    }

    /// Tokens of word `word_idx` in topic `topic_idx`.
    pub fn word_topic_count(&self, word_idx: usize, topic_idx: usize) -> u32 {
        self.word_topic[word_idx * self.n_topics + topic_idx]
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
/// forms, which allow asymmetric priors). Per-topic and per-document terms
/// are computed in parallel and summed in a fixed order, so the value does
/// not depend on the number of threads.
pub fn log_likelihood(state: &CountState, corpus: &Corpus, priors: &Priors) -> LogLikelihood {
    let n_topics = state.n_topics;
    let n_words = state.n_words;
    let beta_sum = priors.beta_sum(n_words);
    let beta_lgamma_sum: f64 = (0..n_words).map(|w| ln_gamma(priors.beta_of(w))).sum();
    let per_topic: Vec<f64> = (0..n_topics)
        .into_par_iter()
        .map(|topic_idx| {
            let mut sum = ln_gamma(beta_sum) - beta_lgamma_sum;
            for word_idx in 0..n_words {
                let count = state.word_topic_count(word_idx, topic_idx);
                let beta = priors.beta_of(word_idx);
                if count > 0 {
                    sum += ln_gamma(f64::from(count) + beta);
                } else {
                    sum += ln_gamma(beta);
                }
            }
            sum - ln_gamma(state.topic_totals[topic_idx] as f64 + beta_sum)
        })
        .collect();
    let alpha_sum = priors.alpha_sum();
    let alpha_lgamma_sum: f64 = priors.alpha.iter().map(|&a| ln_gamma(a)).sum();
    let alpha_lgamma: Vec<f64> = priors.alpha.iter().map(|&a| ln_gamma(a)).collect();
    let per_doc: Vec<f64> = (0..corpus.n_docs())
        .into_par_iter()
        .map(|doc_idx| {
            let mut sum = ln_gamma(alpha_sum) - alpha_lgamma_sum;
            for (topic_idx, &alpha) in priors.alpha.iter().enumerate() {
                let count = state.doc_topic_count(doc_idx, topic_idx);
                sum += if count > 0 {
                    ln_gamma(f64::from(count) + alpha)
                } else {
                    alpha_lgamma[topic_idx]
                };
            }
            let doc_len = (corpus.offsets[doc_idx + 1] - corpus.offsets[doc_idx]) as f64;
            sum - ln_gamma(doc_len + alpha_sum)
        })
        .collect();
    LogLikelihood {
        words: per_topic.iter().sum(),
        topics: per_doc.iter().sum(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::vocab::Vocabulary;

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
