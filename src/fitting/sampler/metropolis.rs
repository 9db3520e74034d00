//! The fast kernel: Metropolis-Hastings steps with proposals drawn in O(1),
//! alternating a document proposal and a word proposal (the cycle proposal
//! of Yuan et al., WWW 2015), each drawn by picking a random token of the
//! document or of the word (as in Chen et al., VLDB 2016), so that no table
//! has to be built or kept fresh.
//!
//! For token i of word w in document d, with current topic s and every count
//! taken with token i removed (`n_dk`, `n_kw`, `n_k`), the target is
//! `p(k) ∝ (n_dk + alpha_k)(n_kw + beta_w)/(n_k + b0)`.
//!
//! - Document proposal `q(k) ∝ n_dk + [k = s] + alpha_k`: with probability
//!   `n_d / (n_d + a0)` the topic of a uniformly chosen token of the document
//!   (token i itself holds s), otherwise a draw from alpha. Acceptance of t:
//!   `min(1, (n_tw + beta_w)(n_s + b0) / ((n_sw + beta_w)(n_t + b0)))`.
//! - Word proposal `q(k) ∝ n_kw + [k = s] + beta_w`: with probability
//!   `n_w / (n_w + K beta_w)` the topic of a uniformly chosen token of the
//!   word, otherwise a uniform topic. Acceptance of t:
//!   `min(1, (n_dt + alpha_t)(n_s + b0) / ((n_ds + alpha_s)(n_t + b0)))`.
//!
//! Both proposals count token i at its current topic, which is why the
//! document (resp. word) factor cancels from the ratio: the proposal is
//! `q(t | s)` and the reverse move `q(s | t)` differs exactly by that factor.
//! Each step leaves the conditional of token i invariant, so a sweep is a
//! valid Gibbs-within-Metropolis sweep of the same posterior as the reference
//! sampler. Token i's stored topic follows the chain, so both proposals see
//! its current topic.

use rand::RngExt;
use rand_distr::Distribution;
use rand_distr::weighted::WeightedAliasIndex;

use super::block::{Block, BlockContext, BlockKernel, WordRecord, block_stream};
use super::counts::{RowLayout, RowsMut};
use super::prefetch::prefetch;
use super::{Priors, Topic};

/// Document-then-word proposal pairs per token and sweep. Measured on a
/// 1M-token corpus with K = 1000 (`themata bench`'s convergence case), the
/// sweeps needed to reach the reference's log-likelihood after 200 sweeps
/// were 1090, 590, 430 and 350 for 1 to 4 pairs, at 0.17, 0.18, 0.20 and
/// 0.23 s a sweep: three pairs reach it in 0.8 of the time of two while
/// costing 11% more per sweep.
pub const CYCLES_PER_TOKEN: usize = 3;

/// Tokens ahead whose word record is prefetched.
const RECORD_AHEAD: usize = 8;
/// Tokens ahead whose word proposals are drawn and prefetched.
const PLAN_AHEAD: usize = 4;
/// Size of the ring of planned tokens (at least `PLAN_AHEAD + 1`).
const PLAN_RING: usize = 8;

/// A word proposal drawn ahead of its use.
#[derive(Clone, Copy, Debug)]
enum WordPick {
    /// The entry (a token of the word) at this slot of the word-major list.
    Entry(usize),
    /// A uniform topic.
    Uniform(Topic),
}

/// A document proposal drawn ahead of its use.
#[derive(Clone, Copy, Debug)]
enum DocPick {
    /// The token at this index of the block's topics.
    Token(usize),
    /// A draw from alpha.
    Prior(Topic),
}

/// What is drawn ahead for one token.
#[derive(Clone, Copy, Debug)]
struct Plan {
    row: RowLayout,
    beta: f64,
    doc_picks: [DocPick; CYCLES_PER_TOKEN],
    word_picks: [WordPick; CYCLES_PER_TOKEN],
}

impl Default for Plan {
    fn default() -> Plan {
        Plan {
            row: RowLayout::default(),
            beta: 0.0,
            doc_picks: [DocPick::Prior(0); CYCLES_PER_TOKEN],
            word_picks: [WordPick::Uniform(0); CYCLES_PER_TOKEN],
        }
    }
}

/// The document of the token being planned: its tokens are
/// `start..start + len` of the block's topics.
#[derive(Clone, Copy, Debug, Default)]
struct DocSpan {
    start: usize,
    len: usize,
}

/// How the proposal from alpha is drawn.
enum AlphaDraw {
    /// Symmetric alpha: a uniform topic.
    Uniform,
    /// Asymmetric alpha: Walker's alias method (rand_distr's table).
    Alias(WeightedAliasIndex<f64>),
}

/// The per-sweep constants of the Metropolis-Hastings kernel.
pub struct MetropolisKernel<'a> {
    priors: &'a Priors,
    alpha_sum: f64,
    alpha_draw: AlphaDraw,
    beta_sum: f64,
    n_topics: usize,
}

/// Scratch space of the Metropolis-Hastings kernel (per thread, reused
/// across blocks).
#[derive(Debug, Default)]
pub struct MetropolisScratch {
    /// Dense topic counts of the document being sampled (zero between documents).
    doc_counts: Vec<u32>,
    /// The current block's token positions.
    positions: Vec<u32>,
    /// The word of each of those positions.
    words: Vec<u32>,
    /// For each word of the block's group, the slot in the word-major list
    /// of its next token in this block.
    next_slot: Vec<usize>,
}

impl MetropolisKernel<'_> {
    /// Tokens per shard aimed at when the shard count is chosen
    /// automatically (smaller shards than the exact kernel's: see
    /// `ExactKernel::TOKENS_PER_SHARD`).
    pub const TOKENS_PER_SHARD: usize = 1 << 18;

    /// The expected cost of a word with `tokens` tokens in `documents`
    /// documents: about the same work per token as the exact kernel's
    /// repeats, but a token of a rare word misses the cache for its row and
    /// word list, which a run of a frequent word keeps warm; measured per
    /// token, blocks of rare words took about twice as long, so `n_w + df_w`.
    pub fn word_cost(tokens: u64, documents: u64, _shards: u64) -> u64 {
        documents + tokens
    }
}

impl<'a> MetropolisKernel<'a> {
    /// The kernel for one sweep with these priors.
    pub fn new(priors: &'a Priors, n_topics: usize, n_words: usize) -> MetropolisKernel<'a> {
        let symmetric = priors.alpha.windows(2).all(|pair| pair[0] == pair[1]);
        let alpha_draw = if symmetric {
            AlphaDraw::Uniform
        } else {
            AlphaDraw::Alias(
                WeightedAliasIndex::new(priors.alpha.clone()).expect("alpha values are positive and finite"),
            )
        };
        MetropolisKernel {
            priors,
            alpha_sum: priors.alpha_sum(),
            alpha_draw,
            beta_sum: priors.beta_sum(n_words),
            n_topics,
        }
    }

    /// Draws the proposals of a token of `word` in document `doc`: for each
    /// cycle, a uniformly chosen token of the document with probability
    /// `n_d / (n_d + a0)`, else a draw from alpha; and a uniformly chosen
    /// token of the word with probability `n_w / (n_w + K beta_w)`, else a
    /// uniform topic. Which token is chosen does not depend on the state.
    #[inline]
    fn plan(&self, records: &[WordRecord], word: u32, doc: DocSpan, rng: &mut impl rand::Rng) -> Plan {
        let doc_len = doc.len as f64;
        let doc_scale = doc_len + self.alpha_sum;
        let mut doc_picks = [DocPick::Prior(0); CYCLES_PER_TOKEN];
        for pick in &mut doc_picks {
            let draw = rng.random::<f64>() * doc_scale;
            *pick = if draw < doc_len {
                DocPick::Token(doc.start + draw as usize)
            } else {
                DocPick::Prior(self.draw_from_alpha(rng))
            };
        }
        let record = records[word as usize];
        let beta = self.priors.beta_of(word as usize);
        let word_len = record.len as f64;
        let scale = word_len + self.n_topics as f64 * beta;
        let mut word_picks = [WordPick::Uniform(0); CYCLES_PER_TOKEN];
        for pick in &mut word_picks {
            let draw = rng.random::<f64>() * scale;
            *pick = if draw < word_len {
                WordPick::Entry(record.first + draw as usize)
            } else {
                // Given `draw >= n_w`, `(draw - n_w) / beta` is uniform on [0, K).
                let topic = ((draw - word_len) / beta) as usize;
                WordPick::Uniform(topic.min(self.n_topics - 1) as Topic)
            };
        }
        Plan {
            row: record.row,
            beta,
            doc_picks,
            word_picks,
        }
    }

    #[inline]
    fn draw_from_alpha(&self, rng: &mut impl rand::Rng) -> Topic {
        match &self.alpha_draw {
            AlphaDraw::Uniform => rng.random_range(0..self.n_topics as u32) as Topic,
            AlphaDraw::Alias(table) => table.sample(rng) as Topic,
        }
    }
}

impl BlockKernel for MetropolisKernel<'_> {
    type Scratch = MetropolisScratch;
    const USES_WORD_LIST: bool = true;

    /// Samples every token of `block` once, document by document.
    ///
    /// The loop is pipelined: the word record of the token [`RECORD_AHEAD`]
    /// places ahead is prefetched, and the proposals of the token
    /// [`PLAN_AHEAD`] places ahead are drawn: the word proposals' entries are
    /// prefetched, and so are the word counts of the document proposals'
    /// topics as the document holds them then. Which token a proposal picks
    /// does not depend on the state; the topic it proposes is read from that
    /// token when the proposal is used, so drawing ahead changes nothing but
    /// the order of the random stream. Prefetching the document proposals'
    /// counts made a sweep about 10% faster at K = 1000 (1M tokens, one
    /// thread, medians of alternating runs).
    fn sample_block(
        &self,
        context: &BlockContext<'_>,
        block: Block<'_>,
        topic_totals: &mut [u64],
        scratch: &mut MetropolisScratch,
    ) {
        let Block {
            index,
            shard,
            group,
            words: group_words,
            topics,
            entries,
            first_slot,
            mut rows,
            ..
        } = block;
        scratch.doc_counts.resize(self.n_topics, 0);
        let MetropolisScratch {
            doc_counts,
            positions,
            words,
            next_slot,
        } = scratch;
        let mut rng = block_stream(context.seed, context.iteration, index);
        let records = context.records;
        let first_token = shard.tokens.start;
        let stride = context.groups_stride;
        positions.clear();
        words.clear();
        for doc in shard.docs.clone() {
            let groups = &context.doc_groups[doc * stride..(doc + 1) * stride];
            let doc_start = context.offsets[doc] as usize;
            for position in groups[group]..groups[group + 1] {
                positions.push(position);
                words.push(context.word_at(doc_start, position as usize));
            }
        }
        // A block visits each word's tokens of its shard in sampler order,
        // which is the order of the word-major list; so the k-th token of
        // word w visited here has slot `shard_slots[p * V + w] + k`.
        let shard_slots =
            &context.shard_slots[shard.index * records.len()..(shard.index + 1) * records.len()];
        next_slot.clear();
        next_slot.extend(shard_slots[group_words.clone()].iter().map(|&slot| slot as usize));
        let n_positions = positions.len();
        let beta_sum = self.beta_sum;
        let alpha = self.priors.alpha.as_slice();
        // The document of the token being planned, found by a second walk
        // over the shard's documents that runs PLAN_AHEAD tokens ahead.
        let mut plan_docs = shard.docs.clone();
        let mut plan_doc_end = first_token;
        let mut plan_doc = DocSpan::default();
        let mut doc_of = |position: usize| {
            while position >= plan_doc_end {
                let doc = plan_docs.next().expect("the block's tokens lie in its shard");
                let start = context.offsets[doc] as usize;
                plan_doc_end = context.offsets[doc + 1] as usize;
                plan_doc = DocSpan {
                    start: start - first_token,
                    len: plan_doc_end - start,
                };
            }
            plan_doc
        };
        let mut plans = [Plan::default(); PLAN_RING];
        for (ahead, plan) in plans.iter_mut().enumerate().take(PLAN_AHEAD.min(n_positions)) {
            let position = positions[ahead] as usize;
            *plan = self.plan(records, words[ahead], doc_of(position), &mut rng);
        }
        let mut docs = shard.docs.clone();
        let (mut doc_start, mut doc_end) = (first_token, first_token);
        for step in 0..n_positions {
            let position = positions[step] as usize;
            if position >= doc_end {
                for &topic in &topics[doc_start - first_token..doc_end - first_token] {
                    doc_counts[topic as usize] -= 1;
                }
                while position >= doc_end {
                    let doc = docs.next().expect("the block's tokens lie in its shard");
                    doc_start = context.offsets[doc] as usize;
                    doc_end = context.offsets[doc + 1] as usize;
                }
                for &topic in &topics[doc_start - first_token..doc_end - first_token] {
                    doc_counts[topic as usize] += 1;
                }
            }
            if let Some(&ahead) = words.get(step + RECORD_AHEAD) {
                prefetch(records, ahead as usize);
            }
            if let Some(&ahead) = positions.get(step + PLAN_AHEAD) {
                let ahead = ahead as usize;
                let plan = self.plan(records, words[step + PLAN_AHEAD], doc_of(ahead), &mut rng);
                for pick in plan.word_picks {
                    if let WordPick::Entry(slot) = pick {
                        prefetch(entries, slot - first_slot);
                    }
                }
                rows.prefetch(plan.row, topics[ahead - first_token]);
                // The word counts of the proposed topics, as the document's
                // tokens hold them now (a token that moves before the
                // proposal is used only wastes the hint).
                for pick in plan.doc_picks {
                    let topic = match pick {
                        DocPick::Token(index) => topics[index],
                        DocPick::Prior(topic) => topic,
                    };
                    rows.prefetch(plan.row, topic);
                }
                plans[(step + PLAN_AHEAD) % PLAN_RING] = plan;
            }
            let plan = plans[step % PLAN_RING];
            let beta = plan.beta;
            let local = position - first_token;
            let my_slot = {
                let next = &mut next_slot[words[step] as usize - group_words.start];
                *next += 1;
                *next - 1
            };
            // Token i leaves the document and topic counts here; it stays in
            // the word-topic table, which is read as `n_kw - [k = start]` and
            // changed at the end only if the topic moved.
            let start = topics[local];
            doc_counts[start as usize] -= 1;
            topic_totals[start as usize] -= 1;
            let word_count_without =
                |rows: &RowsMut<'_>, topic: Topic| rows.get(plan.row, topic) - u32::from(topic == start);
            let mut current = start;
            // n_{current,w} without token i, when known.
            let mut current_word_count = None;

            for (doc_pick, word_pick) in plan.doc_picks.into_iter().zip(plan.word_picks) {
                // Document proposal.
                let proposed = match doc_pick {
                    DocPick::Token(index) => topics[index],
                    DocPick::Prior(topic) => topic,
                };
                if proposed != current {
                    let proposed_count = word_count_without(&rows, proposed);
                    let current_count =
                        *current_word_count.get_or_insert_with(|| word_count_without(&rows, current));
                    let ratio = (f64::from(proposed_count) + beta)
                        * (topic_totals[current as usize] as f64 + beta_sum)
                        / ((f64::from(current_count) + beta)
                            * (topic_totals[proposed as usize] as f64 + beta_sum));
                    if rng.random::<f64>() < ratio {
                        current = proposed;
                        current_word_count = Some(proposed_count);
                        topics[local] = current;
                    }
                }

                // Word proposal.
                let proposed = match word_pick {
                    // Token i's own entry holds its topic as of the start
                    // of its steps; it proposes the current one.
                    WordPick::Entry(slot) if slot == my_slot => current,
                    WordPick::Entry(slot) => entries[slot - first_slot],
                    WordPick::Uniform(topic) => topic,
                };
                if proposed != current {
                    let ratio = (f64::from(doc_counts[proposed as usize]) + alpha[proposed as usize])
                        * (topic_totals[current as usize] as f64 + beta_sum)
                        / ((f64::from(doc_counts[current as usize]) + alpha[current as usize])
                            * (topic_totals[proposed as usize] as f64 + beta_sum));
                    if rng.random::<f64>() < ratio {
                        current = proposed;
                        current_word_count = None;
                        topics[local] = current;
                    }
                }
            }

            doc_counts[current as usize] += 1;
            topic_totals[current as usize] += 1;
            if current != start {
                rows.decrement(plan.row, start);
                rows.increment(plan.row, current);
                entries[my_slot - first_slot] = current;
            }
        }
        for &topic in &topics[doc_start - first_token..doc_end - first_token] {
            doc_counts[topic as usize] -= 1;
        }
    }
}
