//! The plain O(K) collapsed Gibbs sweep: for each token, remove it from the
//! counts, compute the unnormalised conditional for every topic, draw by a
//! linear scan of the cumulative sum, add it back. Kept straightforward on
//! purpose: it is the oracle that faster samplers are tested against.

use rand::RngExt;

use super::{CountState, Priors};
use crate::corpus::Corpus;

/// One full sweep over every token of `corpus`, in document order.
pub fn sweep_reference(state: &mut CountState, corpus: &Corpus, priors: &Priors, rng: &mut impl rand::Rng) {
    let n_topics = state.n_topics;
    let beta_sum = priors.beta_sum(state.n_words);
    let mut weights = vec![0.0f64; n_topics];
    for doc_idx in 0..corpus.n_docs() {
        let start = corpus.offsets[doc_idx] as usize;
        let doc_row = doc_idx * n_topics;
        for (pos, &word) in corpus.doc_tokens(doc_idx).iter().enumerate() {
            let token_idx = start + pos;
            let word_idx = word as usize;
            let word_row = word_idx * n_topics;
            let beta = priors.beta_of(word_idx);
            let old = state.assignments[token_idx] as usize;
            state.doc_topic[doc_row + old] -= 1;
            state.word_topic[word_row + old] -= 1;
            state.topic_totals[old] -= 1;

            let mut total = 0.0;
            for (topic_idx, weight) in weights.iter_mut().enumerate() {
                let word_part = (f64::from(state.word_topic[word_row + topic_idx]) + beta)
                    / (state.topic_totals[topic_idx] as f64 + beta_sum);
                let doc_part = f64::from(state.doc_topic[doc_row + topic_idx]) + priors.alpha[topic_idx];
                total += word_part * doc_part;
                *weight = total;
            }
            let target = rng.random::<f64>() * total;
            let new = weights
                .iter()
                .position(|&cumulative| target < cumulative)
                .unwrap_or(n_topics - 1);

            state.assignments[token_idx] = new as u32;
            state.doc_topic[doc_row + new] += 1;
            state.word_topic[word_row + new] += 1;
            state.topic_totals[new] += 1;
        }
    }
}

/// The normalised conditional distribution of one token's topic given all
/// others (the token at position `pos` of document `doc_idx`). The state is
/// restored before returning. Used by tests.
pub fn conditional(
    state: &mut CountState,
    corpus: &Corpus,
    priors: &Priors,
    doc_idx: usize,
    pos: usize,
) -> Vec<f64> {
    let n_topics = state.n_topics;
    let beta_sum = priors.beta_sum(state.n_words);
    let token_idx = corpus.offsets[doc_idx] as usize + pos;
    let word_idx = corpus.tokens[token_idx] as usize;
    let old = state.assignments[token_idx] as usize;
    state.doc_topic[doc_idx * n_topics + old] -= 1;
    state.word_topic[word_idx * n_topics + old] -= 1;
    state.topic_totals[old] -= 1;
    let beta = priors.beta_of(word_idx);
    let mut weights: Vec<f64> = (0..n_topics)
        .map(|topic_idx| {
            (f64::from(state.word_topic_count(word_idx, topic_idx)) + beta)
                / (state.topic_totals[topic_idx] as f64 + beta_sum)
                * (f64::from(state.doc_topic_count(doc_idx, topic_idx)) + priors.alpha[topic_idx])
        })
        .collect();
    state.doc_topic[doc_idx * n_topics + old] += 1;
    state.word_topic[word_idx * n_topics + old] += 1;
    state.topic_totals[old] += 1;
    let total: f64 = weights.iter().sum();
    for weight in &mut weights {
        *weight /= total;
    }
    weights
}
