//! What the block driver ([`super::sharded`]) and the kernels share: a
//! block's exclusive share of the state, what every block of an epoch
//! reads, the word-major entries, each block's random stream, and the
//! [`BlockKernel`] trait a kernel implements. Kernels depend on this file
//! and the driver on the kernels, never the other way round.

use std::ops::Range;

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

use super::Topic;
use super::counts::{RowLayout, RowsMut};

/// A kernel: samples every token of one block once. Built for one sweep
/// (it may hold the priors of that sweep); shared by the threads of the
/// sweep, each of which has its own [`BlockKernel::Scratch`].
pub trait BlockKernel: Sync {
    /// Scratch space of one thread, reused across the blocks it samples.
    type Scratch: Default + Send;
    /// Whether the kernel reads the word-major entries (the driver then
    /// keeps their topics current).
    const USES_WORD_LIST: bool;
    /// Whether the kernel reads each document's topic counts from
    /// [`Block::doc_topics`] and keeps them current, when the driver has
    /// room for them (see `sharded::doc_table_fits`).
    const USES_DOC_TABLE: bool = false;

    /// Samples every token of `block` once. `topic_totals` holds the totals
    /// as of the start of the epoch; the kernel adds its own changes to it.
    fn sample_block(
        &self,
        context: &BlockContext<'_>,
        block: Block<'_>,
        topic_totals: &mut [u64],
        scratch: &mut Self::Scratch,
    );
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

/// Where each token sits in the sampler's order: for position `i` of a
/// document in the sampler's order (tokens sorted by word), the offset of
/// that token within the document in corpus order. Offsets take 16 bits
/// when every document has at most 65,536 tokens, 32 bits otherwise.
#[derive(Clone, Debug)]
pub enum LocalOrder {
    /// Offsets of documents of at most 65,536 tokens.
    Narrow(Vec<u16>),
    /// Offsets when some document is longer.
    Wide(Vec<u32>),
}

impl LocalOrder {
    /// Offsets for `n_tokens` tokens in documents of at most `longest` tokens, all zero.
    pub fn zeroed(n_tokens: usize, longest: usize) -> LocalOrder {
        if longest <= 1 << 16 {
            LocalOrder::Narrow(vec![0; n_tokens])
        } else {
            LocalOrder::Wide(vec![0; n_tokens])
        }
    }

    /// The corpus offset within its document of the token at sampler `position`.
    #[inline(always)]
    pub fn get(&self, position: usize) -> usize {
        match self {
            LocalOrder::Narrow(offsets) => offsets[position] as usize,
            LocalOrder::Wide(offsets) => offsets[position] as usize,
        }
    }

    /// Sets the offset of sampler `position` (which fits: see [`LocalOrder::zeroed`]).
    pub fn set(&mut self, position: usize, offset: usize) {
        match self {
            LocalOrder::Narrow(offsets) => offsets[position] = offset as u16,
            LocalOrder::Wide(offsets) => offsets[position] = offset as u32,
        }
    }

    /// Bytes held.
    pub fn heap_bytes(&self) -> usize {
        match self {
            LocalOrder::Narrow(offsets) => offsets.len() * 2,
            LocalOrder::Wide(offsets) => offsets.len() * 4,
        }
    }
}

/// What every block of an epoch reads and none writes.
pub struct BlockContext<'a> {
    /// Document offsets (the same in corpus and sampler order).
    pub offsets: &'a [u64],
    /// The corpus's word ids, in corpus order.
    pub tokens: &'a [u32],
    /// Where each sampler position's token sits in corpus order.
    pub local: &'a LocalOrder,
    /// Per word: row and entry range.
    pub records: &'a [WordRecord],
    /// Where each document's word groups start (see `ShardedSampler::doc_groups`).
    pub doc_groups: &'a [u32],
    /// Entries per document in `doc_groups` (P + 1).
    pub groups_stride: usize,
    /// For kernels that read the word-major list: `shard_slots[p * V + w]`
    /// is the slot of shard p's first token of word w (the tokens of a word
    /// are listed in sampler order, so shard p's follow on from there).
    /// Empty for the other kernels.
    pub shard_slots: &'a [u32],
    /// Topic totals at the start of the epoch.
    pub start_totals: &'a [u64],
    pub n_topics: usize,
    pub seed: u64,
    pub iteration: u64,
}

impl BlockContext<'_> {
    /// The word of the token at sampler `position`, in the document whose
    /// first token is at `doc_start`.
    #[inline(always)]
    pub fn word_at(&self, doc_start: usize, position: usize) -> u32 {
        self.tokens[doc_start + self.local.get(position)]
    }
}

/// One block's exclusive share of the state.
pub struct Block<'a> {
    /// Block number `p * P + q`, which names its random stream.
    pub index: usize,
    /// Shard p.
    pub shard: &'a Shard,
    /// Word group q.
    pub group: usize,
    /// The words of group q.
    pub words: Range<usize>,
    /// The shard's topics in sampler order, from position `shard.tokens.start`.
    pub topics: &'a mut [Topic],
    /// The topic counts of the shard's documents, K per document from
    /// `shard.docs.start`, when the kernel keeps them and they fit; empty
    /// otherwise.
    pub doc_topics: &'a mut [u16],
    /// Word group q's entries of the word-major list (each token's topic),
    /// from slot `first_slot`; empty for kernels that do not read the list.
    pub entries: &'a mut [Topic],
    pub first_slot: usize,
    /// Word group q's rows of the word-topic table.
    pub rows: RowsMut<'a>,
}

/// The random stream of one block in one sweep: xoshiro256++ seeded from a
/// SplitMix64 mix of (seed, iteration, block).
pub fn block_stream(seed: u64, iteration: u64, block: usize) -> Xoshiro256PlusPlus {
    let mut mixed = splitmix64(seed ^ 0x5EED_0F5A_A4D5);
    mixed = splitmix64(mixed ^ iteration);
    mixed = splitmix64(mixed ^ block as u64);
    Xoshiro256PlusPlus::seed_from_u64(mixed)
}

/// SplitMix64's step and finaliser (Steele, Lea & Flood 2014), a bijective
/// mixer: the one used wherever a seed is split into independent streams.
pub fn splitmix64(value: u64) -> u64 {
    let mut z = value.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

#[cfg(test)]
mod tests {
    use super::*;

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
}
