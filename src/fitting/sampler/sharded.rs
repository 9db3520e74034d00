//! Parallel sweeps over a fixed grid of blocks.
//!
//! The documents are cut into P contiguous shards and the vocabulary into P
//! contiguous word groups, both of about equal token counts; block (p, q)
//! holds the tokens of shard p whose word is in group q. A sweep runs P
//! epochs; in epoch e the P blocks (p, (p + e) mod P) are sampled in
//! parallel. No two blocks of an epoch share a document or a word, so each
//! block reads and writes its documents' topics and its words' rows of the
//! word-topic table exactly, with no copy and no lock. Only the topic totals
//! `n_k` are shared: each block samples against the totals as of the start
//! of the epoch plus its own changes, and the changes are added up after the
//! epoch (the stale-count approximation of Newman, Asuncion, Smyth & Welling
//! 2009, JMLR 10, applied to the K totals only). The grid is the diagonal
//! partition of Yan, Xu & Qi (NIPS 2009; from memory). With P = 1 a sweep is
//! exactly sequential.
//!
//! P depends on the corpus and the settings, never on the thread count, and
//! every block draws from its own random stream seeded by (seed, iteration,
//! block); integer totals add up the same in any order. So the same seed
//! gives the same state for any number of threads.
//!
//! The sampler keeps its own copy of the tokens: documents stay contiguous
//! and in corpus order, but within a document tokens are sorted by word, so
//! that a block's tokens of one document are contiguous. It also keeps a
//! word-major list of every token and its current topic ([`WordRecord`] says
//! where a word's entries are), from which word proposals draw; entries of a
//! word group are written only by the block that owns the group.

use std::ops::Range;
use std::sync::Mutex;

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use super::counts::{RowLayout, RowsMut};
use super::exact::{ExactKernel, ExactScratch};
use super::metropolis::MetropolisKernel;
use super::{CountState, Priors, Topic};
use crate::ingest::corpus::Corpus;

/// The kernel a [`ShardedSampler`] runs on each block.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BlockKernel {
    /// Exact draws from the full conditional, O(K) per token.
    Exact,
    /// Metropolis-Hastings with O(1) document and word proposals.
    Metropolis,
}

/// The most shards chosen automatically: enough blocks per epoch to keep
/// eight threads busy, while each document is visited (its topic counts
/// rebuilt) only this many times per sweep.
pub const MAX_AUTO_SHARDS: usize = 8;
/// The largest corpus the sampler takes (token positions are 32-bit, and
/// counts stay below 2^31).
pub const MAX_TOKENS: usize = i32::MAX as usize;

impl BlockKernel {
    /// Tokens per shard aimed at when the shard count is chosen
    /// automatically. Each document is visited once per epoch, and a visit
    /// costs a pass over the document; that weighs more against the exact
    /// kernel's cheap tokens at small K, so its shards are larger.
    pub fn tokens_per_shard(self) -> usize {
        match self {
            BlockKernel::Exact => 1 << 19,
            BlockKernel::Metropolis => 1 << 18,
        }
    }

    /// The expected cost of each word's tokens, by which word groups are
    /// balanced; both kernels' costs follow a word's token count `n_w` and
    /// its document frequency `df_w` (tokens are ordered by word within a
    /// document, so a document's run of one word is contiguous):
    ///
    /// - exact: a full O(K) pass for the first token of a run, an O(1) update
    ///   for each repeat, so `df_w + n_w / 8`;
    /// - Metropolis-Hastings: about the same work per token, but a token of a
    ///   rare word misses the cache for its row and word list, which a run of
    ///   a frequent word keeps warm; measured per token, blocks of rare words
    ///   took about twice as long, so `n_w + df_w`.
    fn word_costs(self, corpus: &Corpus, word_tokens: &[u64]) -> Vec<u64> {
        let mut doc_frequency = vec![0u64; word_tokens.len()];
        let mut last_doc = vec![usize::MAX; word_tokens.len()];
        for doc in 0..corpus.n_docs() {
            for &word in corpus.doc_tokens(doc) {
                if std::mem::replace(&mut last_doc[word as usize], doc) != doc {
                    doc_frequency[word as usize] += 1;
                }
            }
        }
        word_tokens
            .iter()
            .zip(&doc_frequency)
            .map(|(&tokens, &documents)| match self {
                BlockKernel::Exact => documents + tokens.div_ceil(8),
                BlockKernel::Metropolis => documents + tokens,
            })
            .collect()
    }
}

/// The shard count used when none is given: one per
/// [`BlockKernel::tokens_per_shard`] tokens, between 1 and [`MAX_AUTO_SHARDS`].
pub fn default_shards(n_tokens: usize, kernel: BlockKernel) -> usize {
    n_tokens
        .div_ceil(kernel.tokens_per_shard())
        .clamp(1, MAX_AUTO_SHARDS)
}

/// The constants of one sweep of the driver's kernel.
enum Sampling<'a> {
    Exact(ExactKernel<'a>),
    Metropolis(MetropolisKernel<'a>),
}

/// One shard: a contiguous range of documents and of their tokens.
#[derive(Clone, Debug, PartialEq)]
pub struct Shard {
    /// Position of the shard.
    pub index: usize,
    /// The documents.
    pub docs: Range<usize>,
    /// Their tokens.
    pub tokens: Range<usize>,
}

/// Cuts the corpus into `n_shards` document ranges with about equal token
/// counts (fewer when the corpus has fewer documents; none empty).
pub fn plan_shards(corpus: &Corpus, n_shards: usize) -> Vec<Shard> {
    let n_docs = corpus.n_docs();
    let n_tokens = corpus.n_tokens() as u64;
    let n_shards = n_shards.clamp(1, n_docs.max(1));
    let mut shards = Vec::with_capacity(n_shards);
    let mut first_doc = 0usize;
    for part in 1..=n_shards {
        let target = n_tokens * part as u64 / n_shards as u64;
        // End the shard at the document boundary nearest the target.
        let mut last_doc = first_doc;
        while last_doc < n_docs
            && (last_doc == first_doc
                || corpus.offsets[last_doc + 1].abs_diff(target) <= corpus.offsets[last_doc].abs_diff(target))
        {
            last_doc += 1;
        }
        if part == n_shards {
            last_doc = n_docs;
        }
        if last_doc > first_doc {
            shards.push(Shard {
                index: shards.len(),
                docs: first_doc..last_doc,
                tokens: corpus.offsets[first_doc] as usize..corpus.offsets[last_doc] as usize,
            });
        }
        first_doc = last_doc;
    }
    shards
}

/// Cuts the words `0..word_costs.len()` into `n_groups` contiguous ranges
/// with about equal total cost; returns the `n_groups + 1` bounds (a range
/// may be empty when one word costs more than a group's share).
pub fn plan_word_groups(word_costs: &[u64], n_groups: usize) -> Vec<usize> {
    let total: u64 = word_costs.iter().sum();
    let mut bounds = vec![0usize];
    let mut word = 0usize;
    let mut seen = 0u64;
    for group in 1..n_groups {
        let target = total * group as u64 / n_groups as u64;
        while word < word_costs.len() && seen < target {
            seen += word_costs[word];
            word += 1;
        }
        bounds.push(word);
    }
    bounds.push(word_costs.len());
    bounds
}

/// The random stream of one block in one sweep: xoshiro256++ seeded from a
/// SplitMix64 mix of (seed, iteration, block).
pub fn block_stream(seed: u64, iteration: u64, block: usize) -> Xoshiro256PlusPlus {
    let mut mixed = splitmix64(seed ^ 0x5EED_0F5A_A4D5);
    mixed = splitmix64(mixed ^ iteration);
    mixed = splitmix64(mixed ^ block as u64);
    Xoshiro256PlusPlus::seed_from_u64(mixed)
}

/// SplitMix64's finaliser (Steele, Lea & Flood 2014), a bijective mixer.
fn splitmix64(value: u64) -> u64 {
    let mut z = value.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// What the kernels need to know of a word, in one place so that one cache
/// line serves a token: its word-topic row and its range in the word-major list.
#[derive(Clone, Copy, Debug)]
pub struct WordRecord {
    /// The word's row in the word-topic table.
    pub row: RowLayout,
    /// First entry of the word in the word-major list.
    pub first: usize,
    /// Tokens of the word.
    pub len: usize,
}

/// Packs a word-major entry: the token's position in the sampler's order and its topic.
#[inline]
pub fn pack_entry(position: usize, topic: Topic) -> u64 {
    ((position as u64) << 16) | u64::from(topic)
}

/// Unpacks a word-major entry.
#[inline]
pub fn unpack_entry(entry: u64) -> (usize, Topic) {
    ((entry >> 16) as usize, (entry & 0xFFFF) as Topic)
}

/// Per-thread scratch space, reused across blocks.
#[derive(Debug)]
pub struct Workspace {
    /// Topic totals as of the start of the epoch plus the current block's changes.
    pub topic_totals: Vec<u64>,
    /// Dense topic counts of the document being sampled (zero between documents).
    pub doc_counts: Vec<u32>,
    /// The current block's token positions.
    pub positions: Vec<u32>,
    /// Sum of the topic-total changes of the blocks sampled this epoch.
    totals_change: Vec<i64>,
    /// Scratch of the exact kernel.
    pub exact: ExactScratch,
}

/// What every block of an epoch reads and none writes.
pub struct BlockContext<'a> {
    /// Document offsets (the same in corpus and sampler order).
    pub offsets: &'a [u64],
    /// Word of each token, in sampler order.
    pub words: &'a [u32],
    /// Entry slot of each token, in sampler order.
    pub slot_of: &'a [u32],
    /// Per word: row and entry range.
    pub records: &'a [WordRecord],
    /// Where each document's word groups start (see `ShardedSampler::doc_groups`).
    pub doc_groups: &'a [u32],
    /// Entries per document in `doc_groups` (P + 1).
    pub groups_stride: usize,
    /// Topic totals at the start of the epoch.
    pub start_totals: &'a [u64],
    pub n_topics: usize,
    pub seed: u64,
    pub iteration: u64,
}

/// One block's exclusive share of the state.
pub struct Block<'a> {
    /// Block number `p * P + q`, which names its random stream.
    pub index: usize,
    /// Shard p.
    pub shard: &'a Shard,
    /// Word group q.
    pub group: usize,
    /// The shard's topics (sampler order), from position `shard.tokens.start`.
    pub topics: &'a mut [Topic],
    /// Word group q's entries, from slot `first_slot`.
    pub entries: &'a mut [u64],
    pub first_slot: usize,
    /// Word group q's rows of the word-topic table.
    pub rows: RowsMut<'a>,
}

/// A sampler that sweeps over a grid of blocks in parallel. It keeps
/// per-corpus working memory between sweeps; it is rebuilt, not saved, when
/// a model is loaded.
#[derive(Debug)]
pub struct ShardedSampler {
    kernel: BlockKernel,
    shards: Vec<Shard>,
    word_bounds: Vec<usize>,
    slot_bounds: Vec<usize>,
    /// Word of each token, in sampler order.
    words: Vec<u32>,
    /// Corpus position of each token in sampler order.
    source: Vec<u32>,
    /// Topic of each token, in sampler order (valid during a sweep).
    topics: Vec<Topic>,
    /// Entry slot of each token, in sampler order.
    slot_of: Vec<u32>,
    /// Word-major entries (`pack_entry`).
    entries: Vec<u64>,
    /// `word_first[w]..word_first[w + 1]` are word w's entries.
    word_first: Vec<usize>,
    /// For document d, `doc_groups[d * (P + 1) + q]` is the sampler position
    /// where its tokens of word group q start.
    doc_groups: Vec<u32>,
    /// Expected cost of block (p, q) at `block_costs[p * P + q]`, in the
    /// units of `BlockKernel::word_costs`.
    block_costs: Vec<f64>,
    records: Vec<WordRecord>,
    workspaces: Vec<Mutex<Option<Workspace>>>,
}

impl ShardedSampler {
    /// Prepares sweeps of `corpus` with `kernel` on a grid of `n_shards` x
    /// `n_shards` blocks (fewer when the corpus has fewer documents).
    ///
    /// # Panics
    /// When the corpus has more than [`MAX_TOKENS`] tokens (`fit` refuses
    /// such corpora first).
    pub fn new(corpus: &Corpus, n_shards: usize, kernel: BlockKernel) -> ShardedSampler {
        let n_tokens = corpus.n_tokens();
        assert!(n_tokens <= MAX_TOKENS, "at most {MAX_TOKENS} tokens");
        let n_words = corpus.vocabulary.len();
        let shards = plan_shards(corpus, n_shards);
        let n_groups = shards.len();
        let word_tokens = super::word_token_counts(corpus);
        let word_costs = kernel.word_costs(corpus, &word_tokens);
        let word_bounds = plan_word_groups(&word_costs, n_groups);
        let mut group_of_word = vec![0u32; n_words];
        for (group, pair) in word_bounds.windows(2).enumerate() {
            group_of_word[pair[0]..pair[1]].fill(group as u32);
        }

        // Sampler order: documents in corpus order, tokens within a document by word.
        let mut source: Vec<u32> = (0..n_tokens as u32).collect();
        let mut doc_groups = Vec::with_capacity(corpus.n_docs() * (n_groups + 1));
        for doc_idx in 0..corpus.n_docs() {
            let range = corpus.offsets[doc_idx] as usize..corpus.offsets[doc_idx + 1] as usize;
            source[range.clone()].sort_by_key(|&token| (corpus.tokens[token as usize], token));
            let mut position = range.start;
            for group in 0..=n_groups {
                while position < range.end
                    && (group_of_word[corpus.tokens[source[position] as usize] as usize] as usize) < group
                {
                    position += 1;
                }
                doc_groups.push(if group == n_groups { range.end } else { position } as u32);
            }
        }
        let words: Vec<u32> = source
            .iter()
            .map(|&token| corpus.tokens[token as usize])
            .collect();
        // A block's cost: its tokens, each weighted by its word's cost per token.
        let mut block_costs = vec![0.0; n_groups * n_groups];
        for shard in &shards {
            for position in shard.tokens.clone() {
                let word = words[position] as usize;
                let group = group_of_word[word] as usize;
                block_costs[shard.index * n_groups + group] +=
                    word_costs[word] as f64 / word_tokens[word] as f64;
            }
        }

        // Word-major entries and each token's slot.
        let mut word_first = vec![0usize; n_words + 1];
        for (word, &count) in word_tokens.iter().enumerate() {
            word_first[word + 1] = word_first[word] + count as usize;
        }
        let mut next = word_first.clone();
        let mut entries = vec![0u64; n_tokens];
        let mut slot_of = vec![0u32; n_tokens];
        for (position, &word) in words.iter().enumerate() {
            let slot = &mut next[word as usize];
            entries[*slot] = pack_entry(position, 0);
            slot_of[position] = *slot as u32;
            *slot += 1;
        }
        let slot_bounds = word_bounds.iter().map(|&word| word_first[word]).collect();

        ShardedSampler {
            kernel,
            shards,
            word_bounds,
            slot_bounds,
            words,
            source,
            topics: vec![0; n_tokens],
            slot_of,
            entries,
            word_first,
            doc_groups,
            block_costs,
            records: Vec::new(),
            workspaces: Vec::new(),
        }
    }

    /// The document shards (P of them).
    pub fn shards(&self) -> &[Shard] {
        &self.shards
    }

    /// Bytes of working memory held besides the state.
    pub fn heap_bytes(&self) -> usize {
        let workspaces: usize = self
            .workspaces
            .iter()
            .map(|slot| {
                slot.lock().expect("workspace lock").as_ref().map_or(0, |ws| {
                    ws.topic_totals.len() * 16 + ws.doc_counts.len() * 4 + ws.positions.capacity() * 4
                })
            })
            .sum();
        self.words.len() * 4
            + self.source.len() * 4
            + self.topics.len() * std::mem::size_of::<Topic>()
            + self.slot_of.len() * 4
            + self.entries.len() * 8
            + self.doc_groups.len() * 4
            + self.block_costs.len() * 8
            + self.records.len() * std::mem::size_of::<WordRecord>()
            + workspaces
    }

    /// One sweep of the kernel over every block.
    pub fn sweep(
        &mut self,
        state: &mut CountState,
        corpus: &Corpus,
        priors: &Priors,
        seed: u64,
        iteration: u64,
    ) {
        let kernel = self.kernel;
        self.load(state, kernel == BlockKernel::Metropolis);
        let n_groups = self.shards.len();
        let sampling = match kernel {
            BlockKernel::Exact => Sampling::Exact(ExactKernel::new(priors, state.n_topics, state.n_words)),
            BlockKernel::Metropolis => {
                Sampling::Metropolis(MetropolisKernel::new(priors, state.n_topics, state.n_words))
            }
        };
        let n_threads = rayon::current_num_threads().max(1);
        while self.workspaces.len() < n_threads {
            self.workspaces.push(Mutex::new(None));
        }
        let ShardedSampler {
            shards,
            word_bounds,
            slot_bounds,
            words,
            topics,
            slot_of,
            entries,
            doc_groups,
            block_costs,
            records,
            workspaces,
            ..
        } = self;
        let doc_groups = &*doc_groups;
        let workspaces = &*workspaces;
        for epoch in 0..n_groups {
            let start_totals = state.topic_totals.clone();
            let context = BlockContext {
                offsets: &corpus.offsets,
                words,
                slot_of,
                records,
                doc_groups,
                groups_stride: n_groups + 1,
                start_totals: &start_totals,
                n_topics: state.n_topics,
                seed,
                iteration,
            };
            let mut topic_parts = split_by(topics, shards.iter().map(|shard| shard.tokens.end));
            let mut entry_parts: Vec<Option<&mut [u64]>> =
                split_by(entries, slot_bounds[1..].iter().copied())
                    .into_iter()
                    .map(Some)
                    .collect();
            let mut row_parts: Vec<Option<RowsMut<'_>>> = state
                .word_topic
                .split_by_words(word_bounds)
                .into_iter()
                .map(Some)
                .collect();
            let mut blocks: Vec<Block<'_>> = shards
                .iter()
                .zip(topic_parts.drain(..))
                .map(|(shard, topics)| {
                    let group = (shard.index + epoch) % n_groups;
                    Block {
                        index: shard.index * n_groups + group,
                        shard,
                        group,
                        topics,
                        entries: entry_parts[group].take().expect("each group once per epoch"),
                        first_slot: slot_bounds[group],
                        rows: row_parts[group].take().expect("each group once per epoch"),
                    }
                })
                .collect();
            // Costliest blocks first, handed out one at a time, so that
            // threads finish an epoch close together.
            blocks.sort_by(|a, b| block_costs[b.index].total_cmp(&block_costs[a.index]));
            let run_block = |block: Block<'_>| {
                let slot_idx = rayon::current_thread_index().unwrap_or(0) % workspaces.len();
                let mut slot = workspaces[slot_idx].lock().expect("workspace lock");
                let workspace = slot.get_or_insert_with(|| Workspace {
                    topic_totals: vec![0; context.n_topics],
                    doc_counts: vec![0; context.n_topics],
                    positions: Vec::new(),
                    totals_change: vec![0; context.n_topics],
                    exact: ExactScratch::default(),
                });
                workspace.topic_totals.copy_from_slice(context.start_totals);
                match &sampling {
                    Sampling::Exact(exact) => exact.sample_block(&context, block, workspace),
                    Sampling::Metropolis(metropolis) => metropolis.sample_block(&context, block, workspace),
                }
                for ((change, &now), &before) in workspace
                    .totals_change
                    .iter_mut()
                    .zip(&workspace.topic_totals)
                    .zip(context.start_totals)
                {
                    *change += now as i64 - before as i64;
                }
            };
            if n_threads == 1 || blocks.len() == 1 {
                blocks.into_iter().for_each(run_block);
            } else {
                blocks.into_par_iter().with_max_len(1).for_each(run_block);
            }
            for slot in workspaces {
                if let Some(workspace) = slot.lock().expect("workspace lock").as_mut() {
                    for (total, change) in state.topic_totals.iter_mut().zip(&mut workspace.totals_change) {
                        *total = total
                            .checked_add_signed(*change)
                            .expect("topic totals stay non-negative");
                        *change = 0;
                    }
                }
            }
        }
        self.store(state);
    }

    /// Copies the state's topics into sampler order, and into the word-major
    /// list when `with_entries` (only the Metropolis-Hastings kernel reads it).
    fn load(&mut self, state: &CountState, with_entries: bool) {
        if self.records.len() != state.n_words {
            let word_first = &self.word_first;
            self.records = (0..state.n_words)
                .map(|word| WordRecord {
                    row: state.word_topic.layout(word),
                    first: word_first[word],
                    len: word_first[word + 1] - word_first[word],
                })
                .collect();
        }
        let source = &self.source;
        let assignments = &state.assignments;
        self.topics
            .par_chunks_mut(1 << 14)
            .zip(source.par_chunks(1 << 14))
            .for_each(|(topics, source)| {
                for (topic, &token) in topics.iter_mut().zip(source) {
                    *topic = assignments[token as usize];
                }
            });
        if !with_entries {
            return;
        }
        let topics = &self.topics;
        self.entries.par_chunks_mut(1 << 14).for_each(|entries| {
            for entry in entries {
                let (position, _) = unpack_entry(*entry);
                *entry = pack_entry(position, topics[position]);
            }
        });
    }

    /// Copies the topics back into the state's corpus order.
    fn store(&self, state: &mut CountState) {
        let parts = split_by(
            &mut state.assignments,
            self.shards.iter().map(|shard| shard.tokens.end),
        );
        parts
            .into_par_iter()
            .zip(&self.shards)
            .for_each(|(assignments, shard)| {
                let first = shard.tokens.start;
                for position in shard.tokens.clone() {
                    assignments[self.source[position] as usize - first] = self.topics[position];
                }
            });
    }
}

/// Cuts `items` at the given increasing end positions (the last one must be
/// `items.len()`).
fn split_by<T>(items: &mut [T], ends: impl Iterator<Item = usize>) -> Vec<&mut [T]> {
    let mut parts = Vec::new();
    let mut rest = items;
    let mut consumed = 0usize;
    for end in ends {
        let (part, tail) = std::mem::take(&mut rest).split_at_mut(end - consumed);
        parts.push(part);
        consumed = end;
        rest = tail;
    }
    parts
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::vocab::Vocabulary;

    fn corpus(doc_lens: &[usize]) -> Corpus {
        let vocabulary = Vocabulary::from_parts(vec!["a".into(), "b".into()], vec![1, 1], vec![1, 1]);
        let docs = doc_lens
            .iter()
            .map(|&n| (0..n).map(|i| (i % 2) as u32).collect())
            .collect();
        Corpus::from_documents(vocabulary, docs)
    }

    #[test]
    fn shards_cover_every_document_once_with_balanced_tokens() {
        // Source: common practice — a partition: contiguous, disjoint, complete.
        let corpus = corpus(&[5, 1, 7, 3, 3, 9, 2, 2, 4, 4]);
        for n_shards in 1..=12 {
            let shards = plan_shards(&corpus, n_shards);
            assert!(shards.len() <= n_shards.min(10));
            assert_eq!(shards.first().unwrap().docs.start, 0);
            assert_eq!(shards.last().unwrap().docs.end, 10);
            for pair in shards.windows(2) {
                assert_eq!(pair[0].docs.end, pair[1].docs.start);
                assert_eq!(pair[0].tokens.end, pair[1].tokens.start);
            }
            for (idx, shard) in shards.iter().enumerate() {
                assert_eq!(shard.index, idx);
                assert!(!shard.docs.is_empty());
            }
        }
        let shards = plan_shards(&corpus, 2);
        assert_eq!(shards.len(), 2);
        let sizes: Vec<usize> = shards.iter().map(|s| s.tokens.len()).collect();
        assert!(sizes[0].abs_diff(sizes[1]) <= 9, "{sizes:?}");
    }

    #[test]
    fn word_groups_are_contiguous_and_balanced() {
        // Source: common practice — contiguous ranges covering every word once.
        let tokens = [50u64, 20, 10, 10, 5, 5];
        assert_eq!(plan_word_groups(&tokens, 1), vec![0, 6]);
        assert_eq!(plan_word_groups(&tokens, 2), vec![0, 1, 6]);
        let three = plan_word_groups(&tokens, 3);
        assert_eq!(three.len(), 4);
        assert!(three.windows(2).all(|pair| pair[0] <= pair[1]));
        assert_eq!((three[0], three[3]), (0, 6));
    }

    #[test]
    fn default_shard_count_depends_on_tokens_and_kernel_only() {
        // Source: common practice — the plan must not depend on the machine.
        for kernel in [BlockKernel::Exact, BlockKernel::Metropolis] {
            let per = kernel.tokens_per_shard();
            assert_eq!(default_shards(0, kernel), 1);
            assert_eq!(default_shards(per, kernel), 1);
            assert_eq!(default_shards(per + 1, kernel), 2);
            assert_eq!(default_shards(usize::MAX / 2, kernel), MAX_AUTO_SHARDS);
        }
    }

    #[test]
    fn streams_differ_by_seed_iteration_and_block() {
        // Source: common practice — independent streams per (seed, iteration, block).
        use rand::Rng;
        let first = |seed, iteration, block| block_stream(seed, iteration, block).next_u64();
        let base = first(1, 1, 1);
        assert_eq!(base, first(1, 1, 1));
        assert_ne!(base, first(2, 1, 1));
        assert_ne!(base, first(1, 2, 1));
        assert_ne!(base, first(1, 1, 2));
        assert_ne!(first(1, 2, 1), first(1, 1, 2));
    }

    #[test]
    fn sampler_order_groups_each_document_by_word() {
        // Source: common practice — a within-document permutation keeps every token once.
        let corpus = corpus(&[3, 4, 2]);
        let sampler = ShardedSampler::new(&corpus, 2, BlockKernel::Exact);
        let mut seen = sampler.source.clone();
        seen.sort_unstable();
        assert_eq!(seen, (0..9).collect::<Vec<u32>>());
        for doc in 0..3 {
            let range = corpus.offsets[doc] as usize..corpus.offsets[doc + 1] as usize;
            assert!(
                sampler.words[range.clone()]
                    .windows(2)
                    .all(|pair| pair[0] <= pair[1])
            );
            assert!(
                sampler.source[range]
                    .iter()
                    .all(|&t| (corpus.offsets[doc]..corpus.offsets[doc + 1]).contains(&u64::from(t)))
            );
        }
        for (slot, &entry) in sampler.entries.iter().enumerate() {
            let (position, _) = unpack_entry(entry);
            assert_eq!(sampler.slot_of[position] as usize, slot);
        }
    }
}
