//! The sparse kernel for short documents and many topics: exact draws from
//! the full conditional at a cost per token that follows the length of the
//! token's document and log K, not K.
//!
//! For token i of word w in document d, every count taken without token i,
//!
//! `p(k) ∝ (n_dk + alpha_k)(n_kw + beta_w) / (n_k + b0)`
//!
//! splits into two parts (the word-by-word decomposition of Yu, Hsieh, Yun,
//! Vishwanathan & Dhillon, WWW 2015):
//!
//! - the document part `n_dk (n_kw + beta_w) / (n_k + b0)`, non-zero only for
//!   the document's topics: summed over the document's other tokens, each
//!   token j adding `(n_{z_j,w} + beta_w) / (n_{z_j} + b0)`, and drawn by
//!   picking one of those tokens;
//! - the prior part `alpha_k (n_kw + beta_w) / (n_k + b0)`, over all K
//!   topics, kept in a sum tree (the F+ tree of Yu et al.: a complete binary
//!   tree whose every node holds the sum of its two children), which gives
//!   the total in O(1), a draw in O(log K) and a changed leaf in O(log K).
//!   Its leaves are `a_k (1 + n_kw / beta_w)` with `a_k = alpha_k / (n_k + b0)`,
//!   so that the part is `beta_w` times the tree's total.
//!
//! The tree holds one word's counts at a time, so a block visits its tokens
//! word by word (each word's tokens in sampler order) rather than document
//! by document: when the word changes, only the leaves of the topics the
//! old and the new word have tokens in change (for a word with a dense row,
//! the tree is rebuilt, O(K), once per word and block); when a token moves,
//! the leaves of its old and new topic change (their `n_k` and `n_kw`).
//! Any fixed visiting order is a valid Gibbs scan.
//!
//! A document longer than [`LONG_DOCUMENT`] tokens has its document part
//! summed over its distinct topics instead of its tokens, from a list of
//! its (topic, count) pairs sorted by topic that the block builds when it
//! starts and keeps up to date, so that the cost follows the topics the
//! document holds, at most `min(n_d, K)`.
//!
//! Every node is recomputed from its children, never adjusted by a
//! difference, so the tree is a function of the current counts alone: no
//! rounding drift, and nothing depends on the order in which the cells of a
//! sparse word row are visited (only which leaves are set). The document
//! part is summed in the document's sampler order.

use rand::RngExt;

use super::block::{Block, BlockContext, BlockKernel, block_stream};
use super::prefetch::prefetch;
use super::{Priors, Topic};

/// Topics of a word's row past which setting them in the tree costs about
/// as much as rebuilding it (for the block cost model, [`SparseKernel::word_cost`]).
const SETUP_TOPICS: u64 = 256;

/// Tokens ahead whose document's topics and offsets are prefetched.
const PREFETCH_AHEAD: usize = 4;

/// Documents longer than this many tokens have their document part summed
/// over their distinct topics rather than their tokens.
pub const LONG_DOCUMENT: usize = 64;

/// The topic counts of a block's long documents: for the shard's document
/// `i`, entries `start[i]..start[i] + len[i]` of `topics` and `counts` are
/// its topics with a count above zero, with room for `min(n_d, K)` entries
/// up to `start[i + 1]`; short documents have no room. Entries are in the
/// order the topics first appeared in the document's tokens, a new topic is
/// appended and an emptied one replaced by the last entry: an order that
/// depends only on the topics and their changes, as everything the block
/// computes must.
#[derive(Debug, Default)]
struct DocumentLists {
    start: Vec<usize>,
    len: Vec<usize>,
    topics: Vec<Topic>,
    counts: Vec<u32>,
    /// For a topic, its entry in the document being built (`usize::MAX` when none).
    entry_of: Vec<usize>,
}

impl DocumentLists {
    /// Builds the lists of `docs`, whose tokens' topics are `topics` from
    /// `offsets[docs.start]` on.
    fn build(
        &mut self,
        docs: std::ops::Range<usize>,
        offsets: &[u64],
        topics: &[Topic],
        n_topics: usize,
        long_document: usize,
    ) {
        self.start.clear();
        self.len.clear();
        self.topics.clear();
        self.counts.clear();
        self.entry_of.clear();
        self.entry_of.resize(n_topics, usize::MAX);
        let first = offsets[docs.start] as usize;
        for doc in docs {
            let range = offsets[doc] as usize - first..offsets[doc + 1] as usize - first;
            let start = self.topics.len();
            self.start.push(start);
            if range.len() <= long_document {
                self.len.push(0);
                continue;
            }
            for &topic in &topics[range.clone()] {
                let entry = &mut self.entry_of[topic as usize];
                if *entry == usize::MAX {
                    *entry = self.topics.len();
                    self.topics.push(topic);
                    self.counts.push(1);
                } else {
                    self.counts[*entry] += 1;
                }
            }
            for &topic in &self.topics[start..] {
                self.entry_of[topic as usize] = usize::MAX;
            }
            self.len.push(self.topics.len() - start);
            let room = start + range.len().min(n_topics);
            self.topics.resize(room, 0);
            self.counts.resize(room, 0);
        }
        self.start.push(self.topics.len());
    }

    /// The entries of document `doc` (an index into the shard's documents).
    #[inline]
    fn of(&self, doc: usize) -> (&[Topic], &[u32]) {
        let range = self.start[doc]..self.start[doc] + self.len[doc];
        (&self.topics[range.clone()], &self.counts[range])
    }

    /// Moves one token of document `doc` from the topic at entry `from` to
    /// topic `to`, whose entry is `to_entry` if it has one.
    #[inline]
    fn moved(&mut self, doc: usize, from: usize, to: Topic, mut to_entry: Option<usize>) {
        let start = self.start[doc];
        self.counts[start + from] -= 1;
        if self.counts[start + from] == 0 {
            // The last entry takes the emptied one's place (first, so that
            // the list never outgrows its room).
            let last = self.len[doc] - 1;
            self.topics[start + from] = self.topics[start + last];
            self.counts[start + from] = self.counts[start + last];
            self.len[doc] -= 1;
            if to_entry == Some(last) {
                to_entry = Some(from);
            }
        }
        match to_entry {
            Some(entry) => self.counts[start + entry] += 1,
            None => {
                let end = start + self.len[doc];
                self.topics[end] = to;
                self.counts[end] = 1;
                self.len[doc] += 1;
            }
        }
    }
}

/// The sum of `weights`, added up in four running parts, so that each
/// addition need not wait for the one before.
#[inline(always)]
fn sum_of(weights: &[f64]) -> f64 {
    let mut parts = [0.0; 4];
    let chunks = weights.chunks_exact(4);
    let rest = chunks.remainder();
    for chunk in chunks {
        for (part, &weight) in parts.iter_mut().zip(chunk) {
            *part += weight;
        }
    }
    let mut total = (parts[0] + parts[1]) + (parts[2] + parts[3]);
    for &weight in rest {
        total += weight;
    }
    total
}

/// The index where the running sum of `weights` first passes `target`
/// (`0 <= target <` their sum): never a zero weight; the last positive
/// weight when rounding carries the target past the end.
#[inline(always)]
fn pick(weights: &[f64], mut target: f64) -> usize {
    for (idx, &weight) in weights.iter().enumerate() {
        if target < weight {
            return idx;
        }
        target -= weight;
    }
    weights.iter().rposition(|&weight| weight > 0.0).unwrap_or(0)
}

/// A complete binary tree of sums over K leaves (padded to a power of two
/// with zeros): `nodes[1]` is the root, node i has children 2i and 2i + 1,
/// and the leaves are `nodes[width..2 width]`.
#[derive(Debug, Default)]
struct SumTree {
    width: usize,
    nodes: Vec<f64>,
}

impl SumTree {
    /// Resizes for `n_leaves` leaves; leaves are left to be set.
    fn reset(&mut self, n_leaves: usize) {
        self.width = n_leaves.next_power_of_two().max(2);
        self.nodes.clear();
        self.nodes.resize(2 * self.width, 0.0);
    }

    /// Leaf `index`, mutable, for a batch of changes followed by [`SumTree::rebuild`].
    #[inline]
    fn leaf_mut(&mut self, index: usize) -> &mut f64 {
        &mut self.nodes[self.width + index]
    }

    /// Recomputes every inner node from the leaves.
    fn rebuild(&mut self) {
        for node in (1..self.width).rev() {
            self.nodes[node] = self.nodes[2 * node] + self.nodes[2 * node + 1];
        }
    }

    /// Sets leaf `index` and recomputes the nodes above it. Each node is
    /// the sum of its two children; the child on the path is carried in a
    /// register (IEEE addition is commutative, so which child comes first
    /// does not change the sum), so that only the sibling's load waits.
    #[inline]
    fn set(&mut self, index: usize, value: f64) {
        let nodes = &mut self.nodes[..2 * self.width];
        let mut node = self.width + index;
        let mut sum = value;
        nodes[node] = sum;
        while node > 1 {
            sum += nodes[node ^ 1];
            node /= 2;
            nodes[node] = sum;
        }
    }

    /// The sum of all leaves.
    #[inline]
    fn total(&self) -> f64 {
        self.nodes[1]
    }

    /// The leaf where the running sum of leaves first exceeds `target`
    /// (`0 <= target < total`); at most `last` (rounding can carry a target
    /// at the very top into the zero padding).
    #[inline]
    fn find(&self, mut target: f64, last: usize) -> usize {
        let nodes = &self.nodes[..2 * self.width];
        let mut node = 1;
        while node < self.width {
            // Without a branch: whether to go right is a coin toss.
            let left = nodes[2 * node];
            let right = target >= left;
            target -= if right { left } else { 0.0 };
            node = 2 * node + usize::from(right);
        }
        (node - self.width).min(last)
    }
}

/// The per-sweep constants of the sparse kernel.
pub struct SparseKernel<'a> {
    priors: &'a Priors,
    beta_sum: f64,
    n_topics: usize,
    /// Documents longer than this have their document part summed over topics.
    long_document: usize,
}

/// Scratch space of the sparse kernel (per thread, reused across blocks).
#[derive(Debug, Default)]
pub struct SparseScratch {
    /// The prior part's tree for the current word.
    tree: SumTree,
    /// `1 / (n_k + b0)` from the block's view of the totals.
    inverse_total: Vec<f64>,
    /// Each topic's weight for the current word,
    /// `(n_kw + beta_w) / (beta_w (n_k + b0))`.
    topic_weight: Vec<f64>,
    /// The current word's counts as K counters when its row is sparse (all
    /// zero otherwise and between words).
    word_row: Vec<u32>,
    /// Topics whose leaf holds a non-zero count of the current (sparse) word.
    touched: Vec<Topic>,
    /// Whether a topic is in `touched`.
    in_touched: Vec<bool>,
    /// The block's tokens word by word: for word `words.start + i`, entries
    /// `word_start[i]..word_start[i + 1]` of `positions` and `docs`.
    word_start: Vec<u32>,
    positions: Vec<u32>,
    docs: Vec<u32>,
    /// The block's tokens in document order while they are sorted by word.
    unsorted: Vec<(u32, u32, u32)>,
    /// The document part's weight of each of a document's tokens or topics.
    weights: Vec<f64>,
    /// The topic counts of the shard's long documents.
    lists: DocumentLists,
}

impl SparseKernel<'_> {
    /// Tokens per shard aimed at when the shard count is chosen
    /// automatically: the Metropolis-Hastings kernel's figure. A block's
    /// own costs (sorting its tokens by word, an O(K) tree, setting each
    /// word's topics in the tree) follow its tokens, not the number of
    /// blocks; measured on the 2.45M-token real-text corpus at K = 1000, a
    /// sweep on one thread cost the same CPU time with 4, 5 and 8 shards
    /// (0.50-0.53 s), and more blocks per epoch keep two threads evenly busy.
    pub const TOKENS_PER_SHARD: usize = 1 << 18;

    /// The expected cost of a word with `tokens` tokens in `documents`
    /// documents of `shards` shards, in units of about one token: each
    /// token costs a pass over its document and O(log K), about the same
    /// for every token; on top, in each block that has the word, setting
    /// its topics into the tree and taking them out again costs about
    /// three tokens (a cold row, the word's first entries) and one more
    /// per eight topics set, which are at most its tokens and, past
    /// [`SETUP_TOPICS`], give way to a rebuild of the tree of about the
    /// same cost.
    ///
    /// Measured on one thread, one sweep each (1M synthetic tokens at
    /// K = 100, 1000 and 10,000; the 2.45M-token real-text corpus at
    /// K = 1000; 4 and 8 shards): without the set-up term the costliest
    /// word group, the rarest words' as a rule, took 1.25-1.60 times the
    /// mean group's time; with it, 1.04-1.20. A cap that follows K (where
    /// the kernel switches to rebuilding) balanced no better.
    pub fn word_cost(tokens: u64, documents: u64, shards: u64) -> u64 {
        tokens + documents / 8 + shards * (3 + tokens.min(SETUP_TOPICS) / 8)
    }
}

impl<'a> SparseKernel<'a> {
    /// The kernel for one sweep with these priors.
    pub fn new(priors: &'a Priors, n_topics: usize, n_words: usize) -> SparseKernel<'a> {
        SparseKernel {
            priors,
            beta_sum: priors.beta_sum(n_words),
            n_topics,
            long_document: LONG_DOCUMENT,
        }
    }
}

impl BlockKernel for SparseKernel<'_> {
    type Scratch = SparseScratch;
    const USES_WORD_LIST: bool = false;

    /// Samples every token of `block` once, word by word.
    fn sample_block(
        &self,
        context: &BlockContext<'_>,
        block: Block<'_>,
        topic_totals: &mut [u64],
        scratch: &mut SparseScratch,
    ) {
        let Block {
            index,
            shard,
            group,
            words,
            topics,
            mut rows,
            ..
        } = block;
        let n_topics = self.n_topics;
        let last_topic = n_topics - 1;
        let alpha = self.priors.alpha.as_slice();
        let beta_sum = self.beta_sum;
        let SparseScratch {
            tree,
            inverse_total,
            topic_weight,
            word_row,
            touched,
            in_touched,
            word_start,
            positions,
            docs,
            unsorted,
            weights,
            lists,
        } = scratch;
        word_row.clear();
        word_row.resize(n_topics, 0);
        in_touched.clear();
        in_touched.resize(n_topics, false);
        touched.clear();

        // The block's tokens, sorted by word (a counting sort; each word's
        // tokens stay in sampler order).
        let stride = context.groups_stride;
        unsorted.clear();
        word_start.clear();
        word_start.resize(words.len() + 1, 0);
        for doc in shard.docs.clone() {
            let groups = &context.doc_groups[doc * stride..(doc + 1) * stride];
            let doc_start = context.offsets[doc] as usize;
            for position in groups[group]..groups[group + 1] {
                let word = context.word_at(doc_start, position as usize);
                unsorted.push((position, doc as u32, word));
                word_start[word as usize - words.start + 1] += 1;
            }
        }
        for idx in 1..word_start.len() {
            word_start[idx] += word_start[idx - 1];
        }
        positions.clear();
        positions.resize(unsorted.len(), 0);
        docs.clear();
        docs.resize(unsorted.len(), 0);
        {
            // `word_start` is moved forward while placing and moved back after.
            for &(position, doc, word) in unsorted.iter() {
                let slot = &mut word_start[word as usize - words.start];
                positions[*slot as usize] = position;
                docs[*slot as usize] = doc;
                *slot += 1;
            }
            for idx in (1..word_start.len()).rev() {
                word_start[idx] = word_start[idx - 1];
            }
            word_start[0] = 0;
        }

        let longest = shard
            .docs
            .clone()
            .map(|doc| (context.offsets[doc + 1] - context.offsets[doc]) as usize)
            .max()
            .unwrap_or(0);
        weights.clear();
        weights.resize(longest, 0.0);
        lists.build(
            shard.docs.clone(),
            context.offsets,
            topics,
            n_topics,
            self.long_document,
        );

        // No word's counts yet: every topic's weight is 1 / (n_k + b0).
        inverse_total.clear();
        inverse_total.extend(topic_totals.iter().map(|&total| 1.0 / (total as f64 + beta_sum)));
        topic_weight.clear();
        topic_weight.extend_from_slice(inverse_total);
        tree.reset(n_topics);
        for topic in 0..n_topics {
            *tree.leaf_mut(topic) = alpha[topic] * topic_weight[topic];
        }
        tree.rebuild();
        // Setting one leaf costs a walk up the tree; past this many leaves,
        // recomputing every leaf and node is cheaper.
        let rebuild_above = 2 * n_topics / (n_topics.next_power_of_two().trailing_zeros() as usize).max(1);

        let mut rng = block_stream(context.seed, context.iteration, index);
        let first_token = shard.tokens.start;
        for (offset, pair) in word_start.windows(2).enumerate() {
            let (begin, end) = (pair[0] as usize, pair[1] as usize);
            if begin == end {
                continue;
            }
            let word = words.start + offset;
            let row = context.records[word].row;
            let inverse_beta = 1.0 / self.priors.beta_of(word);
            // The weight of a topic with `count` tokens of the word.
            let weight =
                |count: u32, inverse_total: f64| inverse_total * (1.0 + f64::from(count) * inverse_beta);

            // Put the word's counts into the weights and the tree: the
            // topics it has tokens in become `touched`.
            if row.is_dense() {
                let counts = rows.dense_row(row, word_row);
                for (topic, _) in counts.iter().enumerate().filter(|&(_, &count)| count > 0) {
                    in_touched[topic] = true;
                    touched.push(topic as Topic);
                }
            } else {
                rows.dense_row(row, word_row);
                rows.for_each_nonzero(row, |topic, _| {
                    in_touched[topic as usize] = true;
                    touched.push(topic);
                });
            }
            {
                let counts: &[u32] = if row.is_dense() {
                    rows.dense_row(row, &mut word_row[..])
                } else {
                    word_row
                };
                if touched.len() > rebuild_above {
                    for (topic, &count) in counts.iter().enumerate() {
                        topic_weight[topic] = weight(count, inverse_total[topic]);
                        *tree.leaf_mut(topic) = alpha[topic] * topic_weight[topic];
                    }
                    tree.rebuild();
                } else {
                    for &topic in touched.iter() {
                        let topic = topic as usize;
                        topic_weight[topic] = weight(counts[topic], inverse_total[topic]);
                        tree.set(topic, alpha[topic] * topic_weight[topic]);
                    }
                }
            }

            for entry in begin..end {
                // Tokens of one word lie in different documents: fetch the
                // document a few tokens ahead while this one is sampled.
                if let Some(&ahead) = positions.get(entry + PREFETCH_AHEAD) {
                    prefetch(topics, ahead as usize - first_token);
                    prefetch(context.offsets, docs[entry + PREFETCH_AHEAD] as usize);
                }
                let position = positions[entry] as usize;
                let doc = docs[entry] as usize;
                let local = position - first_token;
                let doc_range = context.offsets[doc] as usize - first_token
                    ..context.offsets[doc + 1] as usize - first_token;

                // Token i leaves its topic.
                let old = topics[local] as usize;
                let shard_doc = doc - shard.docs.start;
                let long = doc_range.len() > self.long_document;
                rows.decrement(row, old as Topic);
                topic_totals[old] -= 1;
                inverse_total[old] = 1.0 / (topic_totals[old] as f64 + beta_sum);
                let old_count = if row.is_dense() {
                    rows.get(row, old as Topic)
                } else {
                    word_row[old] -= 1;
                    word_row[old]
                };
                topic_weight[old] = weight(old_count, inverse_total[old]);
                tree.set(old, alpha[old] * topic_weight[old]);

                // The document part: over the document's other tokens, or
                // for a long document over its topics.
                // For a long document, the entry of token i's old topic.
                let mut old_entry = 0;
                let weights: &mut [f64] = if long {
                    let (list_topics, list_counts) = lists.of(shard_doc);
                    let weights = &mut weights[..list_topics.len()];
                    for (entry, ((weight, &topic), &count)) in
                        weights.iter_mut().zip(list_topics).zip(list_counts).enumerate()
                    {
                        // Counts without token i.
                        let is_old = usize::from(topic as usize == old);
                        old_entry += entry * is_old;
                        *weight = f64::from(count - is_old as u32) * topic_weight[topic as usize];
                    }
                    weights
                } else {
                    let doc_topics = &topics[doc_range.clone()];
                    let weights = &mut weights[..doc_topics.len()];
                    for (weight, &topic) in weights.iter_mut().zip(doc_topics) {
                        *weight = topic_weight[topic as usize];
                    }
                    // Token i itself is not among the others.
                    weights[local - doc_range.start] = 0.0;
                    weights
                };
                let doc_part = sum_of(weights);

                let target = rng.random::<f64>() * (doc_part + tree.total());
                let (new, new_entry) = if target < doc_part {
                    let idx = pick(weights, target);
                    if long {
                        (lists.of(shard_doc).0[idx] as usize, Some(idx))
                    } else {
                        (topics[doc_range.start + idx] as usize, None)
                    }
                } else {
                    let new = tree.find(target - doc_part, last_topic);
                    let entry = if long {
                        lists
                            .of(shard_doc)
                            .0
                            .iter()
                            .position(|&topic| topic as usize == new)
                    } else {
                        None
                    };
                    (new, entry)
                };
                if long && new != old {
                    lists.moved(shard_doc, old_entry, new as Topic, new_entry);
                }

                // Token i joins its new topic.
                topics[local] = new as Topic;
                rows.increment(row, new as Topic);
                topic_totals[new] += 1;
                inverse_total[new] = 1.0 / (topic_totals[new] as f64 + beta_sum);
                let new_count = if row.is_dense() {
                    rows.get(row, new as Topic)
                } else {
                    word_row[new] += 1;
                    word_row[new]
                };
                if !in_touched[new] {
                    in_touched[new] = true;
                    touched.push(new as Topic);
                }
                topic_weight[new] = weight(new_count, inverse_total[new]);
                tree.set(new, alpha[new] * topic_weight[new]);
            }

            // Take the word's counts out again.
            if touched.len() > rebuild_above {
                topic_weight.copy_from_slice(inverse_total);
                for topic in 0..n_topics {
                    *tree.leaf_mut(topic) = alpha[topic] * topic_weight[topic];
                }
                tree.rebuild();
            }
            for &topic in touched.iter() {
                let topic = topic as usize;
                if touched.len() <= rebuild_above {
                    topic_weight[topic] = inverse_total[topic];
                    tree.set(topic, alpha[topic] * topic_weight[topic]);
                }
                in_touched[topic] = false;
                word_row[topic] = 0;
            }
            touched.clear();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fitting::sampler::sharded::ShardedSampler;
    use crate::fitting::sampler::{BetaPrior, CountState, log_likelihood};
    use crate::fitting::schedule::SamplerKind;
    use crate::ingest::corpus::Corpus;
    use crate::ingest::vocab::Vocabulary;
    use rand::SeedableRng;

    #[test]
    fn sum_tree_totals_and_finds_like_a_running_sum() {
        // Source: common practice — a draw by descending a tree of sums
        // lands where the running sum of the leaves first passes the target.
        let leaves = [0.5, 0.0, 2.0, 1.25, 0.25];
        let mut tree = SumTree::default();
        tree.reset(leaves.len());
        for (idx, &value) in leaves.iter().enumerate() {
            tree.set(idx, value);
        }
        assert_eq!(tree.total(), 4.0);
        for (target, expected) in [
            (0.0, 0),
            (0.49, 0),
            (0.5, 2),
            (2.49, 2),
            (2.5, 3),
            (3.76, 4),
            (3.99, 4),
        ] {
            assert_eq!(tree.find(target, leaves.len() - 1), expected, "target {target}");
        }
        // A target at the total (rounding) stays on a real leaf.
        assert_eq!(tree.find(4.0, leaves.len() - 1), 4);
    }

    #[test]
    fn long_document_lists_follow_the_counts() {
        // Source: common practice — the (topic, count) list of a document
        // must equal a recount of its topics after any moves.
        let topics: Vec<Topic> = vec![3, 1, 3, 0, 1, 3, 2, 2];
        let offsets = [0u64, 2, 8];
        let mut lists = DocumentLists::default();
        lists.build(0..2, &offsets, &topics, 4, 3);
        let pairs = |lists: &DocumentLists, doc| {
            let (topics, counts) = lists.of(doc);
            let mut pairs: Vec<(Topic, u32)> = topics.iter().copied().zip(counts.iter().copied()).collect();
            pairs.sort_unstable();
            pairs
        };
        assert!(pairs(&lists, 0).is_empty());
        assert_eq!(lists.of(1).0, &[3, 0, 1, 2]);
        assert_eq!(pairs(&lists, 1), [(0, 1), (1, 1), (2, 2), (3, 2)]);
        // A token from topic 0 (entry 1, emptied) to topic 1 (entry 2).
        lists.moved(1, 1, 1, Some(2));
        assert_eq!(pairs(&lists, 1), [(1, 2), (2, 2), (3, 2)]);
        // From topic 3 (entry 0) to topic 0, which has no entry now.
        lists.moved(1, 0, 0, None);
        assert_eq!(pairs(&lists, 1), [(0, 1), (1, 2), (2, 2), (3, 1)]);
    }

    #[test]
    fn long_document_path_visits_assignments_with_the_exact_posterior() {
        // Source: p(z | w) ∝ p(w, z), enumerated over all 3^5 assignments
        // with the joint log-likelihood (Heinrich 2005, checked against
        // ../shared/METHODS.md section 8 in this module's parent). Every
        // document counts as long here (threshold 0), so the document part
        // is summed over topic lists; tolerance 0.01 as in the suite's
        // enumeration test (standard error of a frequency below 0.001).
        // Broken on purpose (the token's own count left in its document's
        // list while drawing), it missed by 0.016.
        let vocabulary = Vocabulary::from_parts(
            vec!["w0".into(), "w1".into(), "w2".into()],
            vec![2, 2, 1],
            vec![2, 2, 1],
        );
        let corpus = Corpus::from_documents(vocabulary, vec![vec![0, 1, 1], vec![2, 0]]);
        let priors = Priors {
            alpha: vec![0.3, 0.9, 0.5],
            beta: BetaPrior::Asymmetric(vec![0.2, 0.6, 1.0]),
        };
        let n_topics = 3;
        let n_states = 3usize.pow(5);
        let mut log_p = Vec::with_capacity(n_states);
        for index in 0..n_states {
            let z: Vec<Topic> = (0..5)
                .map(|pos| (index / 3usize.pow(4 - pos) % 3) as Topic)
                .collect();
            let state = CountState::from_assignments(&corpus, n_topics, z);
            log_p.push(log_likelihood(&state, &corpus, &priors).total());
        }
        let max = log_p.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let total: f64 = log_p.iter().map(|l| (l - max).exp()).sum();
        let exact: Vec<f64> = log_p.iter().map(|l| (l - max).exp() / total).collect();

        let mut kernel = SparseKernel::new(&priors, n_topics, 3);
        kernel.long_document = 0;
        let mut sampler = ShardedSampler::new(&corpus, 1, SamplerKind::Sparse).unwrap();
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(9);
        let mut state = CountState::random(&corpus, n_topics, &mut rng);
        let sweeps = 200_000;
        let mut visits = vec![0.0; n_states];
        for sweep in 0..sweeps + 100 {
            sampler.sweep_with(&kernel, &mut state, &corpus, 4, sweep as u64, None);
            if sweep >= 100 {
                let index = state.assignments.iter().fold(0, |i, &t| i * 3 + t as usize);
                visits[index] += 1.0 / sweeps as f64;
            }
        }
        let worst = exact
            .iter()
            .zip(&visits)
            .map(|(p, f)| (p - f).abs())
            .fold(0.0, f64::max);
        assert!(worst < 0.01, "largest |frequency - exact posterior| = {worst:.4}");
    }
}
