//! The plain O(K) collapsed Gibbs sweep: for each token, remove it from the
//! counts, compute the unnormalised conditional for every topic, draw by a
//! linear scan of the cumulative sum, add it back. Kept straightforward on
//! purpose: it is the oracle that faster samplers are tested against and
//! the baseline `themata bench` measures them against.
//!
//! It reads counts as the classic dense layout would: the document's topic
//! counts sit in one dense row (filled from its assignments when the
//! document starts), and a word stored as a sparse row is spread into a
//! dense row of K counters before its K weights are computed, which costs
//! a few per cent of the O(K) loop.

use rand::RngExt;

use super::{CountState, Priors, Topic};
use crate::ingest::corpus::Corpus;

/// One full sweep over every token of `corpus`, in document order.
pub fn sweep_reference(state: &mut CountState, corpus: &Corpus, priors: &Priors, rng: &mut impl rand::Rng) {
    let n_topics = state.n_topics;
    let beta_sum = priors.beta_sum(state.n_words);
    let mut weights = vec![0.0f64; n_topics];
    let mut doc_counts = vec![0u32; n_topics];
    let mut word_row = vec![0u32; n_topics];
    for doc_idx in 0..corpus.n_docs() {
        let start = corpus.offsets[doc_idx] as usize;
        let end = corpus.offsets[doc_idx + 1] as usize;
        for &topic in &state.assignments[start..end] {
            doc_counts[topic as usize] += 1;
        }
        for token_idx in start..end {
            let word_idx = corpus.tokens[token_idx] as usize;
            let beta = priors.beta_of(word_idx);
            let old = state.assignments[token_idx];
            doc_counts[old as usize] -= 1;
            state.word_topic.decrement(word_idx, old);
            state.topic_totals[old as usize] -= 1;

            let word_counts = state.word_topic.row_dense(word_idx, &mut word_row);
            let mut total = 0.0;
            for ((((weight, &word_count), &topic_total), &doc_count), &alpha) in weights
                .iter_mut()
                .zip(word_counts)
                .zip(&state.topic_totals)
                .zip(&doc_counts)
                .zip(&priors.alpha)
            {
                let word_part = (f64::from(word_count) + beta) / (topic_total as f64 + beta_sum);
                let doc_part = f64::from(doc_count) + alpha;
                total += word_part * doc_part;
                *weight = total;
            }
            state.word_topic.clear_dense(word_idx, &mut word_row);
            let target = rng.random::<f64>() * total;
            let new = weights
                .iter()
                .position(|&cumulative| target < cumulative)
                .unwrap_or(n_topics - 1) as Topic;

            state.assignments[token_idx] = new;
            doc_counts[new as usize] += 1;
            state.word_topic.increment(word_idx, new);
            state.topic_totals[new as usize] += 1;
        }
        for &topic in &state.assignments[start..end] {
            doc_counts[topic as usize] -= 1;
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
    let old = state.assignments[token_idx];
    state.word_topic.decrement(word_idx, old);
    state.topic_totals[old as usize] -= 1;
    let beta = priors.beta_of(word_idx);
    let mut weights: Vec<f64> = (0..n_topics)
        .map(|topic_idx| {
            let doc_count =
                state.doc_topic_count(corpus, doc_idx, topic_idx) - u32::from(topic_idx == old as usize);
            (f64::from(state.word_topic_count(word_idx, topic_idx)) + beta)
                / (state.topic_totals[topic_idx] as f64 + beta_sum)
                * (f64::from(doc_count) + priors.alpha[topic_idx])
        })
        .collect();
    state.word_topic.increment(word_idx, old);
    state.topic_totals[old as usize] += 1;
    let total: f64 = weights.iter().sum();
    for weight in &mut weights {
        *weight /= total;
    }
    weights
}
