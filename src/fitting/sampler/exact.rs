//! The exact kernel for few topics: each token's topic is drawn from its
//! full conditional, as in the reference sweep, but without a division in
//! the O(K) loop. Following the coefficient caching of Yao, Mimno &
//! McCallum (KDD 2009), the conditional is written
//!
//! `p(k) ∝ (n_kw + beta_w) * c_k`, with `c_k = (n_dk + alpha_k) / (n_k + b0)`,
//!
//! and `c_k` is kept up to date as counts change: `1 / (n_k + b0)` is kept
//! per topic and recomputed for the two topics a token leaves and joins, and
//! `c_k` is refreshed for those topics and for the topics of the document
//! being sampled when it starts and ends (or, when the driver keeps the
//! documents' topic counts in a table, for all K topics from the
//! document's row when it starts: one pass over K instead of counting the
//! document's tokens at each of its P visits a sweep). The K weights are then one
//! multiply-add each, summed in blocks of eight so that the draw compares
//! against at most K/8 + 8 cumulative sums, counting rather than branching.
//!
//! Sparse word rows are spread into K dense counters first, so the weights
//! are always visited in topic order and the draw never depends on how a
//! sparse row happens to be laid out.
//!
//! Within a document the sampler orders tokens by word, so a word used
//! several times comes back to back; for such a repeat only the two weights
//! whose counts changed since the previous token are recomputed.

use rand::RngExt;

use super::block::{Block, BlockContext, BlockKernel, block_stream};
use super::prefetch::prefetch;
use super::{Priors, Topic};

/// Weights summed together before the draw scans them.
const CHUNK: usize = 8;
/// Tokens ahead whose word record is prefetched.
const RECORD_AHEAD: usize = 4;

/// The sum of eight weights as a balanced tree (three dependent additions
/// instead of seven).
#[inline(always)]
fn tree_sum(w: &[f64; CHUNK]) -> f64 {
    ((w[0] + w[1]) + (w[2] + w[3])) + ((w[4] + w[5]) + (w[6] + w[7]))
}

/// The topic drawn by `u` (uniform in [0, 1)) from `weights` in chunks of
/// `CHUNK` with their sums `chunk_sums`: the first topic whose cumulative
/// weight exceeds `u` times the total, the total being the chunk sums added
/// in order (`cumulative` is scratch of the chunks' length). The last chunk
/// and the chunk's last topic take any excess from rounding.
///
/// Positions are found by counting the cumulative sums at or below the
/// target rather than by subtracting weight after weight from it until it
/// goes below the next, so there is no branch whose outcome is a coin toss:
/// such a scan mispredicts its exit once per level, and each misprediction
/// throws away the work begun on the next token. In exact arithmetic both
/// find the same topic; in floating point they can differ only when the
/// target falls within a few units in the last place of a boundary.
#[inline(always)]
fn draw(chunk_sums: &[f64], cumulative: &mut [f64], weights: &[f64], n_topics: usize, u: f64) -> Topic {
    let n_chunks = chunk_sums.len();
    let mut total = 0.0;
    for (slot, &sum) in cumulative.iter_mut().zip(chunk_sums) {
        total += sum;
        *slot = total;
    }
    let target = u * total;
    let chunk = count_at_or_below(&cumulative[..n_chunks - 1], target);
    let target = target - if chunk == 0 { 0.0 } else { cumulative[chunk - 1] };
    let first = chunk * CHUNK;
    let last = (first + CHUNK).min(n_topics) - 1;
    let mut within = 0.0;
    let mut passed = 0;
    for &weight in &weights[first..last] {
        within += weight;
        passed += usize::from(within <= target);
    }
    (first + passed) as Topic
}

/// How many of `bounds` (non-decreasing) are at or below `target`.
#[inline(always)]
fn count_at_or_below(bounds: &[f64], target: f64) -> usize {
    bounds.iter().map(|&bound| usize::from(bound <= target)).sum()
}

/// The per-sweep constants of the exact kernel.
pub struct ExactKernel<'a> {
    priors: &'a Priors,
    beta_sum: f64,
    n_topics: usize,
}

/// Scratch space of the exact kernel (per thread, reused across blocks).
#[derive(Debug, Default)]
pub struct ExactScratch {
    /// Dense topic counts of the document being sampled (zero between documents).
    doc_counts: Vec<u32>,
    /// `1 / (n_k + b0)` from the block's view of the totals.
    inverse_total: Vec<f64>,
    /// `c_k = (n_dk + alpha_k) / (n_k + b0)` for the current document.
    coefficient: Vec<f64>,
    /// The current token's weights.
    weights: Vec<f64>,
    /// Sums of `CHUNK` consecutive weights.
    chunk_sums: Vec<f64>,
    /// The chunk sums added up in order (the draw's cumulative sums).
    cumulative: Vec<f64>,
    /// Dense copy of a sparse word row (all zero between tokens).
    word_row: Vec<u32>,
    /// The topics the current document has used during this visit.
    distinct: Vec<Topic>,
}

impl ExactKernel<'_> {
    /// Tokens per shard aimed at when the shard count is chosen
    /// automatically. Each document is visited once per epoch, and a visit
    /// costs a pass over the document; that weighs more against this
    /// kernel's cheap tokens at small K than against the MH kernel's, so its
    /// shards are larger.
    pub const TOKENS_PER_SHARD: usize = 1 << 19;

    /// The expected cost of a word with `tokens` tokens in `documents`
    /// documents: a full O(K) pass for the first token of a document's run
    /// of the word, an O(1) update for each repeat, so `df_w + n_w / 8`.
    /// (The kernel goes document by document, so a word costs nothing to
    /// set up in a block: the shards it is met in do not count.)
    pub fn word_cost(tokens: u64, documents: u64, _shards: u64) -> u64 {
        documents + tokens.div_ceil(8)
    }
}

impl<'a> ExactKernel<'a> {
    /// The kernel for one sweep with these priors.
    pub fn new(priors: &'a Priors, n_topics: usize, n_words: usize) -> ExactKernel<'a> {
        ExactKernel {
            priors,
            beta_sum: priors.beta_sum(n_words),
            n_topics,
        }
    }
}

impl BlockKernel for ExactKernel<'_> {
    type Scratch = ExactScratch;
    // The word-major list is read only by the Metropolis-Hastings kernel.
    const USES_WORD_LIST: bool = false;
    const USES_DOC_TABLE: bool = true;

    /// Samples every token of `block` once, document by document.
    fn sample_block(
        &self,
        context: &BlockContext<'_>,
        block: Block<'_>,
        topic_totals: &mut [u64],
        exact: &mut ExactScratch,
    ) {
        let Block {
            index,
            shard,
            group,
            topics,
            doc_topics,
            mut rows,
            ..
        } = block;
        let n_topics = self.n_topics;
        let n_chunks = n_topics.div_ceil(CHUNK);
        exact.inverse_total.resize(n_topics, 0.0);
        exact.coefficient.resize(n_topics, 0.0);
        exact.weights.resize(n_chunks * CHUNK, 0.0);
        exact.chunk_sums.resize(n_chunks, 0.0);
        exact.cumulative.resize(n_chunks, 0.0);
        exact.word_row.resize(n_topics, 0);
        exact.doc_counts.resize(n_topics, 0);
        let ExactScratch {
            doc_counts,
            inverse_total,
            coefficient,
            weights,
            chunk_sums,
            cumulative,
            word_row,
            distinct,
        } = exact;
        // Plain slices, so that the hot loops need not reload vector headers.
        let (inverse_total, coefficient) = (inverse_total.as_mut_slice(), coefficient.as_mut_slice());
        let (weights, chunk_sums) = (weights.as_mut_slice(), chunk_sums.as_mut_slice());
        let cumulative = cumulative.as_mut_slice();
        let (word_row, doc_counts) = (word_row.as_mut_slice(), doc_counts.as_mut_slice());
        // Weights past K stay zero: they pad the last chunk.
        weights.fill(0.0);
        let beta_sum = self.beta_sum;
        let alpha = self.priors.alpha.as_slice();
        for topic in 0..n_topics {
            inverse_total[topic] = 1.0 / (topic_totals[topic] as f64 + beta_sum);
            coefficient[topic] = alpha[topic] * inverse_total[topic];
        }
        let mut rng = block_stream(context.seed, context.iteration, index);
        let first_token = shard.tokens.start;
        let stride = context.groups_stride;
        for doc in shard.docs.clone() {
            let groups = &context.doc_groups[doc * stride..(doc + 1) * stride];
            let (first, end) = (groups[group] as usize, groups[group + 1] as usize);
            if first == end {
                continue;
            }
            let doc_range =
                context.offsets[doc] as usize - first_token..context.offsets[doc + 1] as usize - first_token;
            let table_row = if doc_topics.is_empty() {
                // Count the document's topics, noting each distinct one once, so
                // that refreshing and later resetting their coefficients costs
                // one step per topic, not per token.
                // (Written without a branch on the count: early on, whether a
                // topic is new to the document is a coin toss.)
                distinct.clear();
                distinct.resize(doc_range.len() + 1, 0);
                let mut n_distinct = 0;
                for &topic in &topics[doc_range] {
                    let count = &mut doc_counts[topic as usize];
                    distinct[n_distinct] = topic;
                    n_distinct += usize::from(*count == 0);
                    *count += 1;
                }
                distinct.truncate(n_distinct);
                for &topic in distinct.iter() {
                    let topic = topic as usize;
                    coefficient[topic] = (f64::from(doc_counts[topic]) + alpha[topic]) * inverse_total[topic];
                }
                None
            } else {
                // The counts kept from visit to visit: every coefficient is
                // computed from them in one pass over K (the same values as
                // above: a topic absent from the document gets
                // `(0 + alpha_k) / (n_k + b0)`, which is `alpha_k / (n_k + b0)`).
                distinct.clear();
                let row = &mut doc_topics[(doc - shard.docs.start) * n_topics..][..n_topics];
                for (((count, &kept), (coefficient, &alpha)), &inverse) in doc_counts
                    .iter_mut()
                    .zip(&*row)
                    .zip(coefficient.iter_mut().zip(alpha))
                    .zip(&*inverse_total)
                {
                    *count = u32::from(kept);
                    *coefficient = (f64::from(*count) + alpha) * inverse;
                }
                Some(row)
            };
            // The word and new topic of the token just sampled in this document.
            let mut repeat_of: Option<(usize, Topic)> = None;
            let doc_start = context.offsets[doc] as usize;
            for position in first..end {
                if position + RECORD_AHEAD < end {
                    prefetch(
                        context.records,
                        context.word_at(doc_start, position + RECORD_AHEAD) as usize,
                    );
                }
                let local = position - first_token;
                let word = context.word_at(doc_start, position) as usize;
                let row = context.records[word].row;
                let beta = self.priors.beta_of(word);
                let old = topics[local];
                let moved = |topic: usize, change: i64, doc_counts: &mut [u32], totals: &mut [u64]| {
                    doc_counts[topic] = doc_counts[topic].wrapping_add_signed(change as i32);
                    totals[topic] = totals[topic].wrapping_add_signed(change);
                    let inverse = 1.0 / (totals[topic] as f64 + beta_sum);
                    (inverse, (f64::from(doc_counts[topic]) + alpha[topic]) * inverse)
                };
                (inverse_total[old as usize], coefficient[old as usize]) =
                    moved(old as usize, -1, doc_counts, topic_totals);
                rows.decrement(row, old);

                let counts = rows.dense_row(row, word_row);
                match repeat_of {
                    // The same dense word as the token before: its weights
                    // still hold except for the topic that token joined and
                    // the one this token left, so only those are redone (the
                    // result is bit for bit what a full pass gives).
                    Some((previous_word, joined)) if previous_word == word && row.is_dense() => {
                        for topic in [joined as usize, old as usize] {
                            weights[topic] = (f64::from(counts[topic] as i32) + beta) * coefficient[topic];
                            let chunk = topic / CHUNK;
                            chunk_sums[chunk] = tree_sum(
                                weights[chunk * CHUNK..chunk * CHUNK + CHUNK]
                                    .try_into()
                                    .expect("a whole chunk"),
                            );
                        }
                    }
                    _ => {
                        // Counts are below 2^31 (a corpus has fewer tokens), so
                        // they convert as signed integers, which vectorises.
                        for ((weight, &count), &coefficient) in
                            weights.iter_mut().zip(counts).zip(&*coefficient)
                        {
                            *weight = (f64::from(count as i32) + beta) * coefficient;
                        }
                        for (chunk_sum, chunk) in chunk_sums.iter_mut().zip(weights.chunks_exact(CHUNK)) {
                            *chunk_sum = tree_sum(chunk.try_into().expect("a whole chunk"));
                        }
                    }
                }
                rows.clear_dense(row, word_row);
                let new = draw(chunk_sums, cumulative, weights, n_topics, rng.random::<f64>());

                rows.increment(row, new);
                if doc_counts[new as usize] == 0 {
                    distinct.push(new);
                }
                (inverse_total[new as usize], coefficient[new as usize]) =
                    moved(new as usize, 1, doc_counts, topic_totals);
                topics[local] = new;
                repeat_of = Some((word, new));
            }
            match table_row {
                None => {
                    for &topic in distinct.iter() {
                        let topic = topic as usize;
                        doc_counts[topic] = 0;
                        coefficient[topic] = alpha[topic] * inverse_total[topic];
                    }
                }
                Some(row) => {
                    // Counts fit: a document has at most `u16::MAX` tokens here.
                    for (kept, count) in row.iter_mut().zip(doc_counts.iter_mut()) {
                        *kept = *count as u16;
                        *count = 0;
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    /// Chunk sums and padded weights of `weights`, as the kernel builds them.
    fn chunked(weights: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let mut padded = weights.to_vec();
        padded.resize(weights.len().div_ceil(CHUNK) * CHUNK, 0.0);
        let sums = padded
            .chunks_exact(CHUNK)
            .map(|chunk| tree_sum(chunk.try_into().expect("a whole chunk")))
            .collect();
        (sums, padded)
    }

    #[test]
    fn draw_is_the_inverse_of_the_cumulative_distribution() {
        // Source: common practice — inverse-CDF sampling: the drawn index
        // is the first whose cumulative weight exceeds u times the total.
        // Small integer weights keep every sum exact in f64, so the counted
        // draw must match the integer inverse CDF exactly, for K not a
        // multiple of the chunk, below it, and with zero weights among them.
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(21);
        for n_topics in [1, 2, 7, 8, 9, 16, 100, 1000] {
            for _ in 0..20 {
                let weights: Vec<f64> = (0..n_topics)
                    .map(|_| f64::from(rng.random_range(0u32..4)))
                    .collect();
                let total: f64 = weights.iter().sum();
                if total == 0.0 {
                    continue;
                }
                let (sums, padded) = chunked(&weights);
                let mut cumulative = vec![0.0; sums.len()];
                for step in 0..200 {
                    let u = f64::from(step) / 200.0;
                    let target = u * total;
                    let mut running = 0.0;
                    let expected = weights
                        .iter()
                        .position(|&weight| {
                            running += weight;
                            running > target
                        })
                        .expect("target below the total");
                    let drawn = draw(&sums, &mut cumulative, &padded, n_topics, u);
                    assert_eq!(
                        drawn as usize, expected,
                        "K = {n_topics}, u = {u}, weights {weights:?}"
                    );
                    assert!(weights[expected] > 0.0, "a topic without weight was drawn");
                }
            }
        }
    }

    #[test]
    fn draw_at_the_largest_u_names_the_last_topic() {
        // Source: common practice — the largest u below one,
        // 1 - 2^-53, puts the target past every cumulative sum but the
        // last, so the last topic is drawn (and never one past K).
        for n_topics in [1, 3, 8, 13, 100] {
            let weights = vec![0.1; n_topics];
            let (sums, padded) = chunked(&weights);
            let mut cumulative = vec![0.0; sums.len()];
            let drawn = draw(
                &sums,
                &mut cumulative,
                &padded,
                n_topics,
                1.0 - f64::EPSILON / 2.0,
            );
            assert_eq!(drawn as usize, n_topics - 1);
        }
    }
}
