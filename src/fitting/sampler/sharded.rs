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

use std::sync::Mutex;

use rayon::prelude::*;

use super::block::{Block, BlockContext, BlockKernel, Shard, WordRecord, pack_entry, unpack_entry};
use super::counts::RowsMut;
use super::exact::ExactKernel;
use super::metropolis::MetropolisKernel;
use super::{CountState, Priors, Topic};
use crate::fitting::schedule::SamplerKind;
use crate::ingest::corpus::Corpus;

/// The most shards chosen automatically: enough blocks per epoch to keep
/// eight threads busy, while each document is visited (its topic counts
/// rebuilt) only this many times per sweep.
pub const MAX_AUTO_SHARDS: usize = 8;
/// The largest corpus the sampler takes (token positions are 32-bit, and
/// counts stay below 2^31).
pub const MAX_TOKENS: usize = i32::MAX as usize;

/// Tokens per shard aimed at when the shard count is chosen automatically
/// (the reference sweep is not sharded).
pub fn tokens_per_shard(kind: SamplerKind) -> Option<usize> {
    match kind {
        SamplerKind::Reference => None,
        SamplerKind::Exact => Some(ExactKernel::TOKENS_PER_SHARD),
        SamplerKind::Metropolis => Some(MetropolisKernel::TOKENS_PER_SHARD),
    }
}

/// The expected cost of each word's tokens under the kernel of `kind`, by
/// which word groups are balanced: the kernel's cost of a word with `n_w`
/// tokens in `df_w` documents (tokens are ordered by word within a
/// document, so a document's run of one word is contiguous).
fn word_costs(kind: SamplerKind, corpus: &Corpus, word_tokens: &[u64]) -> Vec<u64> {
    let mut doc_frequency = vec![0u64; word_tokens.len()];
    let mut last_doc = vec![usize::MAX; word_tokens.len()];
    for doc in 0..corpus.n_docs() {
        for &word in corpus.doc_tokens(doc) {
            if std::mem::replace(&mut last_doc[word as usize], doc) != doc {
                doc_frequency[word as usize] += 1;
            }
        }
    }
    let cost = match kind {
        SamplerKind::Metropolis => MetropolisKernel::word_cost,
        SamplerKind::Exact | SamplerKind::Reference => ExactKernel::word_cost,
    };
    word_tokens
        .iter()
        .zip(&doc_frequency)
        .map(|(&tokens, &documents)| cost(tokens, documents))
        .collect()
}

/// The shard count used when none is given: one per kernel-specific number
/// of tokens (`TOKENS_PER_SHARD` of the kernel), between 1 and
/// [`MAX_AUTO_SHARDS`]; 1 for the reference sweep.
pub fn default_shards(n_tokens: usize, kind: SamplerKind) -> usize {
    tokens_per_shard(kind).map_or(1, |per_shard| {
        n_tokens.div_ceil(per_shard).clamp(1, MAX_AUTO_SHARDS)
    })
}

/// Scratch space of one thread during a sweep, reused across blocks.
struct Workspace<S> {
    /// Topic totals as of the start of the epoch plus the current block's changes.
    topic_totals: Vec<u64>,
    /// Sum of the topic-total changes of the blocks sampled this epoch.
    totals_change: Vec<i64>,
    /// The kernel's own scratch.
    scratch: S,
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

/// A sampler that sweeps over a grid of blocks in parallel. It keeps
/// per-corpus working memory between sweeps; it is rebuilt, not saved, when
/// a model is loaded.
#[derive(Debug)]
pub struct ShardedSampler {
    /// The sampler whose kernel runs on the blocks (never the reference).
    kind: SamplerKind,
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
    /// units of the kernel's word cost.
    block_costs: Vec<f64>,
    records: Vec<WordRecord>,
}

impl ShardedSampler {
    /// Prepares sweeps of `corpus` with the kernel of `kind` on a grid of
    /// `n_shards` x `n_shards` blocks (fewer when the corpus has fewer
    /// documents). `None` for the reference sampler, which does not run on
    /// the grid.
    ///
    /// # Panics
    /// When the corpus has more than [`MAX_TOKENS`] tokens (`fit` refuses
    /// such corpora first).
    pub fn new(corpus: &Corpus, n_shards: usize, kind: SamplerKind) -> Option<ShardedSampler> {
        if !kind.is_block_parallel() {
            return None;
        }
        let n_tokens = corpus.n_tokens();
        assert!(n_tokens <= MAX_TOKENS, "at most {MAX_TOKENS} tokens");
        let n_words = corpus.vocabulary.len();
        let shards = plan_shards(corpus, n_shards);
        let n_groups = shards.len();
        let word_tokens = super::word_token_counts(corpus);
        let word_costs = word_costs(kind, corpus, &word_tokens);
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

        Some(ShardedSampler {
            kind,
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
        })
    }

    /// The document shards (P of them).
    pub fn shards(&self) -> &[Shard] {
        &self.shards
    }

    /// Bytes of working memory held besides the state.
    pub fn heap_bytes(&self) -> usize {
        self.words.len() * 4
            + self.source.len() * 4
            + self.topics.len() * std::mem::size_of::<Topic>()
            + self.slot_of.len() * 4
            + self.entries.len() * 8
            + self.doc_groups.len() * 4
            + self.block_costs.len() * 8
            + self.records.len() * std::mem::size_of::<WordRecord>()
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
        let (n_topics, n_words) = (state.n_topics, state.n_words);
        match self.kind {
            SamplerKind::Exact => {
                let kernel = ExactKernel::new(priors, n_topics, n_words);
                self.sweep_with(&kernel, state, corpus, seed, iteration);
            }
            SamplerKind::Metropolis => {
                let kernel = MetropolisKernel::new(priors, n_topics, n_words);
                self.sweep_with(&kernel, state, corpus, seed, iteration);
            }
            // `new` builds no driver for the reference sweep.
            SamplerKind::Reference => unreachable!("the reference sweep does not run on the block grid"),
        }
    }

    /// One sweep of `kernel` over every block, epoch by epoch.
    fn sweep_with<K: BlockKernel>(
        &mut self,
        kernel: &K,
        state: &mut CountState,
        corpus: &Corpus,
        seed: u64,
        iteration: u64,
    ) {
        self.load(state, K::USES_WORD_LIST);
        let n_groups = self.shards.len();
        let n_threads = rayon::current_num_threads().max(1);
        let workspaces: Vec<Mutex<Option<Workspace<K::Scratch>>>> =
            (0..n_threads).map(|_| Mutex::new(None)).collect();
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
            ..
        } = self;
        let doc_groups = &*doc_groups;
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
                    totals_change: vec![0; context.n_topics],
                    scratch: K::Scratch::default(),
                });
                workspace.topic_totals.copy_from_slice(context.start_totals);
                kernel.sample_block(
                    &context,
                    block,
                    &mut workspace.topic_totals,
                    &mut workspace.scratch,
                );
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
            for slot in &workspaces {
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
        assert_eq!(default_shards(usize::MAX / 2, SamplerKind::Reference), 1);
        for kernel in [SamplerKind::Exact, SamplerKind::Metropolis] {
            let per = tokens_per_shard(kernel).unwrap();
            assert_eq!(default_shards(0, kernel), 1);
            assert_eq!(default_shards(per, kernel), 1);
            assert_eq!(default_shards(per + 1, kernel), 2);
            assert_eq!(default_shards(usize::MAX / 2, kernel), MAX_AUTO_SHARDS);
        }
    }

    #[test]
    fn sampler_order_groups_each_document_by_word() {
        // Source: common practice — a within-document permutation keeps every token once.
        let corpus = corpus(&[3, 4, 2]);
        let sampler = ShardedSampler::new(&corpus, 2, SamplerKind::Exact).unwrap();
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
