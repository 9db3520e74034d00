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
