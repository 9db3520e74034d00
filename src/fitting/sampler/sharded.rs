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
//! The sampler visits tokens in its own order: documents stay contiguous and
//! in corpus order, but within a document tokens are sorted by word, so that
//! a block's tokens of one document are contiguous. It keeps no copy of the
//! tokens or topics for that: only each position's offset within its
//! document in corpus order ([`LocalOrder`], 16 bits a token for documents
//! of up to 65,536 tokens), by which a sweep permutes the state's topics
//! into its order in place at the start and back at the end, and by which a
//! kernel finds a position's word in the corpus. For kernels that read it,
//! it also keeps a word-major list of every token's current topic
//! ([`WordRecord`] says where a word's entries are), from which word
//! proposals draw; entries of a word group are written only by the block
//! that owns the group.

use std::ops::Range;
use std::sync::Mutex;

use rayon::prelude::*;

use super::block::{Block, BlockContext, BlockKernel, LocalOrder, Shard, WordRecord};
use super::counts::RowsMut;
use super::exact::ExactKernel;
use super::metropolis::MetropolisKernel;
use super::sparse::SparseKernel;
use super::{CountState, Priors, Topic};
use crate::fitting::schedule::SamplerKind;
use crate::ingest::corpus::Corpus;

/// The most shards chosen automatically: enough blocks per epoch to keep
/// eight threads busy, while each document is visited (its topic counts
/// rebuilt) only this many times per sweep.
pub const MAX_AUTO_SHARDS: usize = 8;
/// The largest corpus the sampler takes (token positions are 32-bit, and
/// counts stay below 2^31); `build` refuses a larger corpus already.
pub const MAX_TOKENS: usize = crate::ingest::corpus::MAX_TOKENS;

/// Tokens per shard aimed at when the shard count is chosen automatically
/// (the reference sweep is not sharded).
pub fn tokens_per_shard(kind: SamplerKind) -> Option<usize> {
    match kind {
        SamplerKind::Reference => None,
        SamplerKind::Exact => Some(ExactKernel::TOKENS_PER_SHARD),
        SamplerKind::Metropolis => Some(MetropolisKernel::TOKENS_PER_SHARD),
        SamplerKind::Sparse => Some(SparseKernel::TOKENS_PER_SHARD),
    }
}

/// The expected cost of each word's tokens under the kernel of `kind`, by
/// which word groups are balanced: the kernel's cost of a word with `n_w`
/// tokens in `df_w` documents of `s_w` of the `shards` (tokens are ordered
/// by word within a document, so a document's run of one word is
/// contiguous; a word met in `s_w` shards is set up in `s_w` blocks).
fn word_costs(kind: SamplerKind, corpus: &Corpus, word_tokens: &[u64], shards: &[Shard]) -> Vec<u64> {
    let n_words = word_tokens.len();
    let mut doc_frequency = vec![0u64; n_words];
    let mut shard_frequency = vec![0u64; n_words];
    let mut last_doc = vec![usize::MAX; n_words];
    let mut last_shard = vec![usize::MAX; n_words];
    for shard in shards {
        for doc in shard.docs.clone() {
            for &word in corpus.doc_tokens(doc) {
                let word = word as usize;
                if std::mem::replace(&mut last_doc[word], doc) != doc {
                    doc_frequency[word] += 1;
                    if std::mem::replace(&mut last_shard[word], shard.index) != shard.index {
                        shard_frequency[word] += 1;
                    }
                }
            }
        }
    }
    let cost = match kind {
        SamplerKind::Metropolis => MetropolisKernel::word_cost,
        SamplerKind::Sparse => SparseKernel::word_cost,
        SamplerKind::Exact | SamplerKind::Reference => ExactKernel::word_cost,
    };
    word_tokens
        .iter()
        .zip(&doc_frequency)
        .zip(&shard_frequency)
        .map(|((&tokens, &documents), &shards)| cost(tokens, documents, shards))
        .collect()
}

/// Tokens from which a corpus gets at least two shards when the count is
/// chosen automatically. Below a kernel's `TOKENS_PER_SHARD` one shard
/// would leave every thread but one idle; measured on two threads (sweeps of
/// a 61k-token corpus of short real-text documents), two shards sweep 1.2x
/// (exact, K = 50), 1.3x (sparse, K = 1000) and 1.7x (Metropolis-Hastings,
/// K = 1000) as fast as one, and 1.4x and 1.9x for sparse and MH on 233k
/// tokens.
pub const TWO_SHARDS_FROM: usize = 1 << 15;

/// The shard count used when none is given: one per kernel-specific number
/// of tokens (`TOKENS_PER_SHARD` of the kernel), at least 2 from
/// [`TWO_SHARDS_FROM`] tokens, between 1 and [`MAX_AUTO_SHARDS`]; 1 for the
/// reference sweep. It depends on the corpus alone, never on the threads.
pub fn default_shards(n_tokens: usize, kind: SamplerKind) -> usize {
    tokens_per_shard(kind).map_or(1, |per_shard| {
        let least = if n_tokens >= TWO_SHARDS_FROM { 2 } else { 1 };
        n_tokens.div_ceil(per_shard).clamp(least, MAX_AUTO_SHARDS)
    })
}

/// What a distributed sweep asks of the other ranks at the end of each
/// epoch (see `fitting::distributed`): the ranks form a ring, rank r
/// samples the shards `r m .. (r + 1) m` (m = P / R), and after each epoch
/// it hands the word group its first shard used to the previous rank and
/// takes the group its last shard uses next from the next rank.
pub trait EpochLink {
    /// Replaces `changes`, this rank's change of each topic total in the
    /// epoch, by the sum of every rank's changes (integers: the order of
    /// addition cannot change the result).
    fn sum_changes(&mut self, changes: &mut [i64]);
    /// Sends one word group's cells of the word-topic table and its
    /// word-major entries to the previous rank, and receives the next
    /// rank's group into `cells_in` and `entries_in` (whose lengths the
    /// receiver knows: the table's layout is the same on every rank).
    fn pass_group(
        &mut self,
        cells: &[u32],
        entries: &[Topic],
        cells_in: &mut [u32],
        entries_in: &mut [Topic],
    );
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

/// Whether the kernel of `kind` reads the word-major list.
fn uses_word_list(kind: SamplerKind) -> bool {
    match kind {
        SamplerKind::Exact => ExactKernel::USES_WORD_LIST,
        SamplerKind::Metropolis => MetropolisKernel::USES_WORD_LIST,
        SamplerKind::Sparse => SparseKernel::USES_WORD_LIST,
        SamplerKind::Reference => false,
    }
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
    /// Corpus offset within its document of each sampler position.
    local: LocalOrder,
    /// Word-major list: the topic of every token, word by word, each word's
    /// tokens in sampler order (empty when the kernel does not read it).
    entries: Vec<Topic>,
    /// `word_first[w]..word_first[w + 1]` are word w's entries.
    word_first: Vec<usize>,
    /// `shard_slots[p * V + w]`: the slot of shard p's first token of word w
    /// (empty when the kernel does not read the word-major list).
    shard_slots: Vec<u32>,
    /// For document d, `doc_groups[d * (P + 1) + q]` is the sampler position
    /// where its tokens of word group q start.
    doc_groups: Vec<u32>,
    /// Expected cost of block (p, q) at `block_costs[p * P + q]`, in the
    /// units of the kernel's word cost.
    block_costs: Vec<f64>,
    records: Vec<WordRecord>,
    /// The shards this process samples: all of them, or one rank's share
    /// in a distributed fit ([`ShardedSampler::set_ring`]).
    own: Range<usize>,
    /// Whether the word-major list is kept current from sweep to sweep (in
    /// a distributed fit, where only the home groups' entries are current
    /// on a rank between sweeps) instead of rebuilt from the state.
    entries_current: bool,
    /// For kernels that keep them and when they are small enough (see
    /// [`doc_table_fits`]): each document's topic counts, K per document,
    /// counted from the state at the start of each sweep; empty otherwise.
    doc_topics: Vec<u16>,
    /// Tokens of the corpus's longest document (for [`doc_table_fits`]).
    longest: usize,
    /// Whether `doc_topics` may be kept at all (tests turn it off to
    /// compare the two ways of counting).
    doc_table_allowed: bool,
}

/// Whether a sweep keeps every document's topic counts in a table
/// (`ShardedSampler::doc_topics`) for a kernel that can use it: when no
/// document is too long for 16-bit counts and the table takes at most 4
/// bytes a token (K at most twice the mean document length). A kernel
/// without it counts a document's topics afresh each time it visits the
/// document, P times a sweep.
pub fn doc_table_fits(n_docs: usize, n_tokens: usize, longest: usize, n_topics: usize) -> bool {
    longest <= usize::from(u16::MAX) && n_docs.saturating_mul(n_topics) <= 2 * n_tokens
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
        let word_costs = word_costs(kind, corpus, &word_tokens, &shards);
        let word_bounds = plan_word_groups(&word_costs, n_groups);
        let mut group_of_word = vec![0u32; n_words];
        for (group, pair) in word_bounds.windows(2).enumerate() {
            group_of_word[pair[0]..pair[1]].fill(group as u32);
        }

        // Sampler order: documents in corpus order, tokens within a document
        // by word (ties in corpus order). A block's cost: its tokens, each
        // weighted by its word's cost per token.
        let longest = (0..corpus.n_docs())
            .map(|doc| (corpus.offsets[doc + 1] - corpus.offsets[doc]) as usize)
            .max()
            .unwrap_or(0);
        let mut local = LocalOrder::zeroed(n_tokens, longest);
        let mut doc_groups = Vec::with_capacity(corpus.n_docs() * (n_groups + 1));
        let mut block_costs = vec![0.0; n_groups * n_groups];
        let mut order: Vec<u32> = Vec::new();
        for shard in &shards {
            for doc_idx in shard.docs.clone() {
                let range = corpus.offsets[doc_idx] as usize..corpus.offsets[doc_idx + 1] as usize;
                let doc_tokens = &corpus.tokens[range.clone()];
                order.clear();
                order.extend(0..doc_tokens.len() as u32);
                // A stable sort, so tokens of one word keep their corpus order.
                order.sort_by_key(|&offset| doc_tokens[offset as usize]);
                for (rank, &offset) in order.iter().enumerate() {
                    local.set(range.start + rank, offset as usize);
                    let word = doc_tokens[offset as usize] as usize;
                    block_costs[shard.index * n_groups + group_of_word[word] as usize] +=
                        word_costs[word] as f64 / word_tokens[word] as f64;
                }
                let mut rank = 0;
                for group in 0..=n_groups {
                    while rank < order.len()
                        && (group_of_word[doc_tokens[order[rank] as usize] as usize] as usize) < group
                    {
                        rank += 1;
                    }
                    doc_groups.push(if group == n_groups {
                        range.end
                    } else {
                        range.start + rank
                    } as u32);
                }
            }
        }

        // The word-major list: each word's tokens, shard after shard.
        let mut word_first = vec![0usize; n_words + 1];
        for (word, &count) in word_tokens.iter().enumerate() {
            word_first[word + 1] = word_first[word] + count as usize;
        }
        let (entries, shard_slots) = if uses_word_list(kind) {
            let mut seen = vec![0usize; n_words];
            let mut shard_slots = Vec::with_capacity(n_groups * n_words);
            for shard in &shards {
                shard_slots.extend((0..n_words).map(|word| (word_first[word] + seen[word]) as u32));
                for &word in &corpus.tokens[shard.tokens.clone()] {
                    seen[word as usize] += 1;
                }
            }
            (vec![0; n_tokens], shard_slots)
        } else {
            (Vec::new(), Vec::new())
        };
        let slot_bounds = word_bounds.iter().map(|&word| word_first[word]).collect();

        Some(ShardedSampler {
            kind,
            shards,
            word_bounds,
            slot_bounds,
            local,
            entries,
            word_first,
            shard_slots,
            doc_groups,
            block_costs,
            records: Vec::new(),
            own: 0..n_groups,
            entries_current: false,
            doc_topics: Vec::new(),
            longest,
            doc_table_allowed: true,
        })
    }

    /// The document shards (P of them).
    pub fn shards(&self) -> &[Shard] {
        &self.shards
    }

    /// Makes this the sampler of rank `rank` of `ranks` in a distributed fit:
    /// it samples only the shards `rank m .. (rank + 1) m`, m = P / ranks.
    pub fn set_ring(&mut self, rank: usize, ranks: usize) -> Result<(), String> {
        let n_shards = self.shards.len();
        if ranks == 0 || rank >= ranks || !n_shards.is_multiple_of(ranks) {
            return Err(format!(
                "the block grid has {n_shards} shards, which {ranks} ranks cannot share equally; fit with --shards a multiple of {ranks}"
            ));
        }
        let per_rank = n_shards / ranks;
        self.own = rank * per_rank..(rank + 1) * per_rank;
        Ok(())
    }

    /// The shards this process samples.
    pub fn own_shards(&self) -> Range<usize> {
        self.own.clone()
    }

    /// The documents of the shards this process samples.
    pub fn own_docs(&self) -> Range<usize> {
        self.shards[self.own.start].docs.start..self.shards[self.own.end - 1].docs.end
    }

    /// The tokens of the shards this process samples.
    pub fn own_tokens(&self) -> Range<usize> {
        self.shards[self.own.start].tokens.start..self.shards[self.own.end - 1].tokens.end
    }

    /// The words of the groups whose rows are current here between sweeps
    /// (group q starts each sweep with shard q).
    pub fn home_words(&self) -> Range<usize> {
        self.word_bounds[self.own.start]..self.word_bounds[self.own.end]
    }

    /// The word group bounds (P + 1 of them).
    pub fn word_bounds(&self) -> &[usize] {
        &self.word_bounds
    }

    /// Entries of the word-major list (N for the kernels that read it, else 0).
    pub fn word_list_len(&self) -> usize {
        self.entries.len()
    }

    /// Whether the last sweep kept every document's topic counts in a table.
    pub fn keeps_doc_table(&self) -> bool {
        !self.doc_topics.is_empty()
    }

    /// Never keeps the documents' topic counts in a table: the kernel
    /// counts a document's topics at each visit instead (for tests).
    pub fn count_documents_each_visit(&mut self) {
        self.doc_table_allowed = false;
        self.doc_topics = Vec::new();
    }

    /// Bytes of working memory held besides the state.
    pub fn heap_bytes(&self) -> usize {
        self.local.heap_bytes()
            + self.entries.len() * std::mem::size_of::<Topic>()
            + self.word_first.len() * std::mem::size_of::<usize>()
            + self.shard_slots.len() * 4
            + self.doc_groups.len() * 4
            + self.block_costs.len() * 8
            + self.records.len() * std::mem::size_of::<WordRecord>()
            + self.doc_topics.len() * 2
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
        self.sweep_linked(state, corpus, priors, seed, iteration, None);
    }

    /// One sweep; with a link, this rank's share of a distributed sweep
    /// (see [`ShardedSampler::set_ring`] and [`EpochLink`]).
    pub fn sweep_linked(
        &mut self,
        state: &mut CountState,
        corpus: &Corpus,
        priors: &Priors,
        seed: u64,
        iteration: u64,
        link: Option<&mut dyn EpochLink>,
    ) {
        let (n_topics, n_words) = (state.n_topics, state.n_words);
        match self.kind {
            SamplerKind::Exact => {
                let kernel = ExactKernel::new(priors, n_topics, n_words);
                self.sweep_with(&kernel, state, corpus, seed, iteration, link);
            }
            SamplerKind::Metropolis => {
                let kernel = MetropolisKernel::new(priors, n_topics, n_words);
                self.sweep_with(&kernel, state, corpus, seed, iteration, link);
            }
            SamplerKind::Sparse => {
                let kernel = SparseKernel::new(priors, n_topics, n_words);
                self.sweep_with(&kernel, state, corpus, seed, iteration, link);
            }
            // `new` builds no driver for the reference sweep.
            SamplerKind::Reference => unreachable!("the reference sweep does not run on the block grid"),
        }
    }

    /// One sweep of `kernel` over every block, epoch by epoch. The state's
    /// topics are in sampler order from `load` to `store`.
    pub(super) fn sweep_with<K: BlockKernel>(
        &mut self,
        kernel: &K,
        state: &mut CountState,
        corpus: &Corpus,
        seed: u64,
        iteration: u64,
        mut link: Option<&mut dyn EpochLink>,
    ) {
        self.load(state, corpus, K::USES_DOC_TABLE);
        let own = self.own.clone();
        let n_groups = self.shards.len();
        let n_threads = rayon::current_num_threads().max(1);
        let workspaces: Vec<Mutex<Option<Workspace<K::Scratch>>>> =
            (0..n_threads).map(|_| Mutex::new(None)).collect();
        let ShardedSampler {
            shards,
            word_bounds,
            slot_bounds,
            local,
            entries,
            shard_slots,
            doc_groups,
            block_costs,
            records,
            doc_topics,
            ..
        } = self;
        let table_width = if doc_topics.is_empty() { 0 } else { state.n_topics };
        let with_entries = !entries.is_empty();
        for epoch in 0..n_groups {
            let start_totals = state.topic_totals.clone();
            let context = BlockContext {
                offsets: &corpus.offsets,
                tokens: &corpus.tokens,
                local,
                records,
                doc_groups,
                groups_stride: n_groups + 1,
                shard_slots,
                start_totals: &start_totals,
                n_topics: state.n_topics,
                seed,
                iteration,
            };
            let mut topic_parts = split_by(
                &mut state.assignments,
                shards.iter().map(|shard| shard.tokens.end),
            );
            let mut count_parts = split_by(
                doc_topics,
                shards.iter().map(|shard| shard.docs.end * table_width),
            );
            let mut entry_parts: Vec<Option<&mut [Topic]>> = if with_entries {
                split_by(entries, slot_bounds[1..].iter().copied())
                    .into_iter()
                    .map(Some)
                    .collect()
            } else {
                (0..n_groups).map(|_| Some(&mut [][..])).collect()
            };
            let mut row_parts: Vec<Option<RowsMut<'_>>> = state
                .word_topic
                .split_by_words(word_bounds)
                .into_iter()
                .map(Some)
                .collect();
            let mut blocks: Vec<Block<'_>> = shards
                .iter()
                .zip(topic_parts.drain(..).zip(count_parts.drain(..)))
                .filter(|(shard, _)| own.contains(&shard.index))
                .map(|(shard, (topics, doc_topics))| {
                    let group = (shard.index + epoch) % n_groups;
                    Block {
                        index: shard.index * n_groups + group,
                        shard,
                        group,
                        words: word_bounds[group]..word_bounds[group + 1],
                        topics,
                        doc_topics,
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
            let mut changes = vec![0i64; state.n_topics];
            for slot in &workspaces {
                if let Some(workspace) = slot.lock().expect("workspace lock").as_mut() {
                    for (sum, change) in changes.iter_mut().zip(&mut workspace.totals_change) {
                        *sum += *change;
                        *change = 0;
                    }
                }
            }
            if let Some(link) = link.as_deref_mut() {
                link.sum_changes(&mut changes);
            }
            for (total, change) in state.topic_totals.iter_mut().zip(&changes) {
                *total = total
                    .checked_add_signed(*change)
                    .expect("topic totals stay non-negative");
            }
            if let Some(link) = link.as_deref_mut()
                && own.len() < n_groups
            {
                // The ring: the group shard `own.start` used goes to the
                // previous rank, whose last shard uses it next; the group
                // this rank's last shard uses next comes from the next rank.
                let send = (own.start + epoch) % n_groups;
                let receive = (own.end + epoch) % n_groups;
                let table = &mut state.word_topic;
                let cells_of = |group: usize| {
                    (
                        table.cell_start(word_bounds[group]),
                        table.cell_start(word_bounds[group + 1]),
                    )
                };
                let (send_range, receive_range) = (cells_of(send), cells_of(receive));
                let (send_cells, receive_cells) =
                    disjoint(table.cells_mut(0..state.n_words), send_range, receive_range);
                let (send_entries, receive_entries) = if with_entries {
                    disjoint(
                        entries,
                        (slot_bounds[send], slot_bounds[send + 1]),
                        (slot_bounds[receive], slot_bounds[receive + 1]),
                    )
                } else {
                    (&[][..], &mut [][..])
                };
                link.pass_group(send_cells, send_entries, receive_cells, receive_entries);
            }
        }
        if link.is_some() {
            self.entries_current = true;
        }
        self.store(state, corpus);
    }

    /// Puts the state's topics into sampler order (document by document, in
    /// place), counts each document's topics into `doc_topics` when the
    /// kernel keeps them (`doc_table`) and they fit, and copies the topics
    /// into the word-major list when the kernel reads it.
    fn load(&mut self, state: &mut CountState, corpus: &Corpus, doc_table: bool) {
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
        let n_topics = state.n_topics;
        let width = if doc_table
            && self.doc_table_allowed
            && doc_table_fits(corpus.n_docs(), corpus.n_tokens(), self.longest, n_topics)
        {
            n_topics
        } else {
            0
        };
        self.doc_topics.clear();
        self.doc_topics.resize(corpus.n_docs() * width, 0);
        self.doc_topics.shrink_to_fit();
        let local = &self.local;
        let offsets = &corpus.offsets;
        let own = self.own.clone();
        split_by(
            &mut state.assignments,
            self.shards.iter().map(|shard| shard.tokens.end),
        )
        .into_par_iter()
        .zip(split_by(
            &mut self.doc_topics,
            self.shards.iter().map(|shard| shard.docs.end * width),
        ))
        .zip(&self.shards)
        .filter(|(_, shard)| own.contains(&shard.index))
        .for_each(|((topics, doc_topics), shard)| {
            let first = shard.tokens.start;
            let mut corpus_order: Vec<Topic> = Vec::new();
            for doc in shard.docs.clone() {
                let range = offsets[doc] as usize - first..offsets[doc + 1] as usize - first;
                corpus_order.clear();
                corpus_order.extend_from_slice(&topics[range.clone()]);
                for (position, topic) in (first + range.start..).zip(&mut topics[range]) {
                    *topic = corpus_order[local.get(position)];
                }
                if width > 0 {
                    let row = &mut doc_topics[(doc - shard.docs.start) * width..][..width];
                    for &topic in &corpus_order {
                        row[topic as usize] += 1;
                    }
                }
            }
        });
        if self.entries.is_empty() || self.entries_current {
            return;
        }
        // Documents of shards not sampled here stay in corpus order.
        let own_docs = self.own_docs();
        let n_groups = self.shards.len();
        let stride = n_groups + 1;
        let (word_bounds, word_first, doc_groups) = (&self.word_bounds, &self.word_first, &self.doc_groups);
        let (tokens, topics) = (&corpus.tokens, &state.assignments);
        let slot_bounds = &self.slot_bounds;
        split_by(&mut self.entries, slot_bounds[1..].iter().copied())
            .into_par_iter()
            .enumerate()
            .for_each(|(group, entries)| {
                let words = word_bounds[group]..word_bounds[group + 1];
                let mut next: Vec<usize> = word_first[words.clone()]
                    .iter()
                    .map(|&first| first - slot_bounds[group])
                    .collect();
                for doc in 0..corpus.n_docs() {
                    let doc_start = offsets[doc] as usize;
                    let run = doc_groups[doc * stride + group] as usize
                        ..doc_groups[doc * stride + group + 1] as usize;
                    let sampler_order = own_docs.contains(&doc);
                    for position in run {
                        let corpus_position = doc_start + local.get(position);
                        let word = tokens[corpus_position] as usize;
                        let slot = &mut next[word - words.start];
                        entries[*slot] = topics[if sampler_order { position } else { corpus_position }];
                        *slot += 1;
                    }
                }
            });
    }

    /// Puts the state's topics back into corpus order.
    fn store(&self, state: &mut CountState, corpus: &Corpus) {
        let local = &self.local;
        let offsets = &corpus.offsets;
        let own = self.own.clone();
        split_by(
            &mut state.assignments,
            self.shards.iter().map(|shard| shard.tokens.end),
        )
        .into_par_iter()
        .zip(&self.shards)
        .filter(|(_, shard)| own.contains(&shard.index))
        .for_each(|(topics, shard)| {
            let first = shard.tokens.start;
            let mut sampler_order: Vec<Topic> = Vec::new();
            for doc in shard.docs.clone() {
                let range = offsets[doc] as usize - first..offsets[doc + 1] as usize - first;
                sampler_order.clear();
                sampler_order.extend_from_slice(&topics[range.clone()]);
                for (position, &topic) in (first + range.start..).zip(&sampler_order) {
                    topics[range.start + local.get(position)] = topic;
                }
            }
        });
    }
}

/// Two disjoint ranges `(start, end)` of `items`, the first to read and the
/// second to write.
fn disjoint<T>(items: &mut [T], read: (usize, usize), write: (usize, usize)) -> (&[T], &mut [T]) {
    if read.1 <= write.0 {
        let (head, tail) = items.split_at_mut(write.0);
        (&head[read.0..read.1], &mut tail[..write.1 - write.0])
    } else {
        assert!(write.1 <= read.0, "the ranges overlap");
        let (head, tail) = items.split_at_mut(read.0);
        (&tail[..read.1 - read.0], &mut head[write.0..write.1])
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

    /// Words `w0`, `w1`, ... each counted once.
    fn numbered_vocabulary(n_words: usize) -> Vocabulary {
        Vocabulary::from_parts(
            (0..n_words).map(|w| format!("w{w}")).collect(),
            vec![1; n_words],
            vec![1; n_words],
        )
    }

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
    fn word_costs_count_documents_and_shards_of_each_word() {
        // Source: common practice — document and shard frequencies counted
        // by hand for a small corpus: word 0 ("a") is in every document of
        // both shards, word 2 ("c") twice in one document of the second.
        let vocabulary = Vocabulary::from_parts(
            vec!["a".into(), "b".into(), "c".into()],
            vec![1, 1, 1],
            vec![1, 1, 1],
        );
        let docs = vec![vec![0, 1, 0], vec![0, 1], vec![0, 2, 2], vec![0]];
        let corpus = Corpus::from_documents(vocabulary, docs);
        let shards = plan_shards(&corpus, 2);
        assert_eq!(shards.len(), 2);
        assert_eq!((shards[0].docs.clone(), shards[1].docs.clone()), (0..2, 2..4));
        let word_tokens = super::super::word_token_counts(&corpus);
        assert_eq!(word_tokens, vec![5, 2, 2]);
        // (tokens, documents, shards) per word: a (5, 4, 2), b (2, 2, 1), c (2, 1, 1).
        let expected = |cost: fn(u64, u64, u64) -> u64| vec![cost(5, 4, 2), cost(2, 2, 1), cost(2, 1, 1)];
        assert_eq!(
            word_costs(SamplerKind::Sparse, &corpus, &word_tokens, &shards),
            expected(SparseKernel::word_cost)
        );
        assert_eq!(
            word_costs(SamplerKind::Metropolis, &corpus, &word_tokens, &shards),
            expected(MetropolisKernel::word_cost)
        );
        assert_eq!(
            word_costs(SamplerKind::Exact, &corpus, &word_tokens, &shards),
            expected(ExactKernel::word_cost)
        );
        // The sparse kernel's set-up term: a word met in two shards costs
        // more than the same tokens met in one.
        assert!(SparseKernel::word_cost(5, 4, 2) > SparseKernel::word_cost(5, 4, 1));
    }

    #[test]
    fn the_document_table_is_kept_only_when_small_and_narrow() {
        // Source: common practice — the rule as documented: at most 4 bytes
        // a token (K * D <= 2 N) and no document past 16-bit counts.
        assert!(doc_table_fits(10, 500, 100, 100));
        assert!(!doc_table_fits(10, 500, 100, 101));
        assert!(doc_table_fits(10, 1_000_000, 65_535, 100));
        assert!(!doc_table_fits(10, 1_000_000, 65_536, 100));
        assert!(!doc_table_fits(usize::MAX, usize::MAX / 4, 1, 3));
    }

    #[test]
    fn the_document_table_changes_no_draw() {
        // Source: common practice — the exact kernel's coefficients
        // (n_dk + alpha_k) / (n_k + b0) are the same numbers whether n_dk is
        // counted at each visit or kept in a table, so the same seed must
        // give the same state bit for bit, on one thread and on two.
        use crate::fitting::sampler::{BetaPrior, CountState, Priors};
        use rand::SeedableRng;
        let n_words = 12;
        let vocabulary = numbered_vocabulary(n_words);
        let docs: Vec<Vec<u32>> = (0..20)
            .map(|d| {
                (0..30 + d)
                    .map(|i| ((i * 7 + d * 5 + i / 3) % n_words) as u32)
                    .collect()
            })
            .collect();
        let corpus = Corpus::from_documents(vocabulary, docs);
        let n_topics = 8;
        let priors = Priors {
            alpha: (0..n_topics).map(|k| 0.1 + 0.05 * k as f64).collect(),
            beta: BetaPrior::Symmetric(0.1),
        };
        let start = CountState::random(
            &corpus,
            n_topics,
            &mut rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(4),
        );
        let run = |table: bool, threads: usize| {
            let mut state = start.clone();
            let mut sampler = ShardedSampler::new(&corpus, 3, SamplerKind::Exact).unwrap();
            if !table {
                sampler.count_documents_each_visit();
            }
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            for iteration in 1..=3 {
                pool.install(|| sampler.sweep(&mut state, &corpus, &priors, 9, iteration));
            }
            assert_eq!(sampler.keeps_doc_table(), table);
            state
        };
        let counted = run(false, 1);
        assert_ne!(counted, start, "three sweeps moved no token");
        assert_eq!(run(true, 1), counted);
        assert_eq!(run(true, 2), counted);
    }

    #[test]
    fn default_shard_count_depends_on_tokens_and_kernel_only() {
        // Source: common practice — the plan must not depend on the machine.
        assert_eq!(default_shards(usize::MAX / 2, SamplerKind::Reference), 1);
        for kernel in [SamplerKind::Exact, SamplerKind::Metropolis, SamplerKind::Sparse] {
            let per = tokens_per_shard(kernel).unwrap();
            assert_eq!(default_shards(0, kernel), 1);
            assert_eq!(default_shards(TWO_SHARDS_FROM - 1, kernel), 1);
            assert_eq!(default_shards(TWO_SHARDS_FROM, kernel), 2);
            assert_eq!(default_shards(2 * per, kernel), 2);
            assert_eq!(default_shards(2 * per + 1, kernel), 3);
            assert_eq!(default_shards(usize::MAX / 2, kernel), MAX_AUTO_SHARDS);
        }
    }

    #[test]
    fn sampler_order_groups_each_document_by_word() {
        // Source: common practice — a within-document permutation keeps every token once.
        let corpus = corpus(&[3, 4, 2]);
        let sampler = ShardedSampler::new(&corpus, 2, SamplerKind::Exact).unwrap();
        for doc in 0..3 {
            let range = corpus.offsets[doc] as usize..corpus.offsets[doc + 1] as usize;
            let mut offsets: Vec<usize> = range
                .clone()
                .map(|position| sampler.local.get(position))
                .collect();
            let words: Vec<u32> = offsets
                .iter()
                .map(|&offset| corpus.tokens[range.start + offset])
                .collect();
            assert!(words.windows(2).all(|pair| pair[0] <= pair[1]), "{words:?}");
            offsets.sort_unstable();
            assert_eq!(offsets, (0..range.len()).collect::<Vec<usize>>());
        }
    }

    #[test]
    fn a_sweep_leaves_topics_in_corpus_order_with_narrow_and_wide_offsets() {
        // Source: common practice — after a sweep the assignments, read in
        // corpus order, must imply exactly the counts the sweep kept.
        use crate::fitting::sampler::{BetaPrior, CountState, Priors};
        use rand::SeedableRng;
        let n_words = 7;
        let vocabulary = numbered_vocabulary(n_words);
        // A document longer than 65,536 tokens needs 32-bit offsets.
        for lens in [vec![30usize, 5, 12, 40], vec![70_000, 9, 300]] {
            let docs = lens
                .iter()
                .enumerate()
                .map(|(d, &n)| {
                    (0..n)
                        .map(|i| ((i * 5 + d * 3 + i / 7) % n_words) as u32)
                        .collect()
                })
                .collect();
            let corpus = Corpus::from_documents(vocabulary.clone(), docs);
            let priors = Priors {
                alpha: vec![0.3; 4],
                beta: BetaPrior::Symmetric(0.1),
            };
            for kind in [SamplerKind::Exact, SamplerKind::Metropolis, SamplerKind::Sparse] {
                let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(5);
                let mut state = CountState::random(&corpus, 4, &mut rng);
                let mut sampler = ShardedSampler::new(&corpus, 2, kind).unwrap();
                assert_eq!(matches!(sampler.local, LocalOrder::Wide(_)), lens[0] > 1 << 16);
                for iteration in 1..=2 {
                    sampler.sweep(&mut state, &corpus, &priors, 3, iteration);
                }
                let recounted = CountState::from_assignments(&corpus, 4, state.assignments.clone());
                assert_eq!(recounted, state, "{kind:?}, documents of {lens:?} tokens");
            }
        }
    }
}
