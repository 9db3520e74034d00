//! Word-topic counts `n_kw` in a compact layout: one row per word, either
//! dense (K `u32` counters) or, for a word with few tokens, a small
//! open-addressing table of `(topic, count)` cells. All rows live in one
//! flat array so a whole table copies with one `memcpy`.
//!
//! A word with `n_w` tokens has at most `min(n_w, K)` non-zero topics, so a
//! sparse row of `next_power_of_two(2 n_w)` cells never fills beyond half and
//! never grows. A row is sparse when that is at most half the size of a
//! dense one; its counts then stay below `K / 4 <= 16384` and fit 16 bits, so
//! a cell packs `topic << 16 | count` into one `u32` and 0 marks an empty
//! cell. Cells are found by linear probing and removed by backward-shift
//! deletion, so a row's contents never depend on the order of updates
//! (though its cell layout may; nothing reads the layout but this module).

use super::Topic;

/// Marks a dense row in `row_mask`.
const DENSE: u32 = u32::MAX;

/// The row layout for a word with `word_tokens` tokens among `n_topics`
/// topics: `Some(cells)` for a sparse row, `None` for a dense one.
fn sparse_cells(word_tokens: u64, n_topics: usize) -> Option<usize> {
    let cells = (2 * word_tokens.max(1)).next_power_of_two();
    (2 * cells <= n_topics as u64).then_some(cells as usize)
}

/// Home cell of `topic` in a sparse row with mask `mask`.
#[inline]
fn home(topic: Topic, mask: u32) -> u32 {
    (u32::from(topic).wrapping_mul(0x9E37_79B1) >> 15) & mask
}

#[inline]
fn cell_topic(cell: u32) -> Topic {
    (cell >> 16) as Topic
}

#[inline]
fn cell_count(cell: u32) -> u32 {
    cell & 0xFFFF
}

/// Where one word's row lives in the table (the same for every table built
/// for the same words and K, since the layout depends only on the words'
/// token counts and K).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct RowLayout {
    start: usize,
    mask: u32,
}

impl RowLayout {
    /// Whether the row is dense (K counters).
    #[inline]
    pub fn is_dense(self) -> bool {
        self.mask == DENSE
    }
}

/// Reads `topic`'s count from a row stored at `layout` in `cells`, whose
/// first element is cell `offset` of the whole table.
#[inline]
fn row_get(cells: &[u32], offset: usize, layout: RowLayout, topic: Topic) -> u32 {
    let start = layout.start - offset;
    let mask = layout.mask;
    if mask == DENSE {
        return cells[start + topic as usize];
    }
    let row = &cells[start..=start + mask as usize];
    let mut slot = home(topic, mask);
    loop {
        let cell = row[slot as usize];
        if cell == 0 {
            return 0;
        }
        if cell_topic(cell) == topic {
            return cell_count(cell);
        }
        slot = (slot + 1) & mask;
    }
}

/// Adds one to `topic`'s count in a row (see [`row_get`] for the arguments).
#[inline]
fn row_increment(cells: &mut [u32], offset: usize, layout: RowLayout, topic: Topic) {
    let start = layout.start - offset;
    let mask = layout.mask;
    if mask == DENSE {
        cells[start + topic as usize] += 1;
        return;
    }
    let row = &mut cells[start..=start + mask as usize];
    let mut slot = home(topic, mask);
    loop {
        let cell = &mut row[slot as usize];
        if *cell == 0 {
            *cell = (u32::from(topic) << 16) | 1;
            return;
        }
        if cell_topic(*cell) == topic {
            debug_assert!(cell_count(*cell) < 0xFFFF, "sparse count overflow");
            *cell += 1;
            return;
        }
        slot = (slot + 1) & mask;
    }
}

/// Takes one from `topic`'s count in a row, which must be positive.
#[inline]
fn row_decrement(cells: &mut [u32], offset: usize, layout: RowLayout, topic: Topic) {
    let start = layout.start - offset;
    let mask = layout.mask;
    if mask == DENSE {
        cells[start + topic as usize] -= 1;
        return;
    }
    let row = &mut cells[start..=start + mask as usize];
    let mut slot = home(topic, mask);
    loop {
        let cell = row[slot as usize];
        assert!(cell != 0, "decrement of an empty word-topic count");
        if cell_topic(cell) == topic {
            if cell_count(cell) > 1 {
                row[slot as usize] -= 1;
            } else {
                remove_cell(row, slot, mask);
            }
            return;
        }
        slot = (slot + 1) & mask;
    }
}

/// The counts of a row as K dense counters: a dense row as it is stored, a
/// sparse one written into `scratch` (length K, all zero on entry; undo with
/// [`row_clear_dense`]). Topics come in id order either way, so what is
/// computed from them never depends on the cell layout of a sparse row.
#[inline]
fn row_dense<'s>(cells: &'s [u32], offset: usize, layout: RowLayout, scratch: &'s mut [u32]) -> &'s [u32] {
    let start = layout.start - offset;
    if layout.mask == DENSE {
        return &cells[start..start + scratch.len()];
    }
    for &cell in &cells[start..=start + layout.mask as usize] {
        if cell != 0 {
            scratch[cell_topic(cell) as usize] = cell_count(cell);
        }
    }
    scratch
}

/// Zeroes what [`row_dense`] wrote into `scratch`.
#[inline]
fn row_clear_dense(cells: &[u32], offset: usize, layout: RowLayout, scratch: &mut [u32]) {
    if layout.mask != DENSE {
        let start = layout.start - offset;
        for &cell in &cells[start..=start + layout.mask as usize] {
            scratch[cell_topic(cell) as usize] = 0;
        }
    }
}

/// The cell holding (or first probed for) `topic` in a row, for prefetching.
#[inline]
fn row_cell(layout: RowLayout, topic: Topic) -> usize {
    if layout.mask == DENSE {
        layout.start + topic as usize
    } else {
        layout.start + home(topic, layout.mask) as usize
    }
}

/// The word-topic count table.
#[derive(Clone, Debug)]
pub struct WordTopicCounts {
    n_topics: usize,
    /// `row_start[w]` = first cell of word w's row; one extra entry at the end.
    row_start: Vec<usize>,
    /// `DENSE`, or the cell-count mask (cells - 1) of a sparse row.
    row_mask: Vec<u32>,
    cells: Vec<u32>,
}

impl WordTopicCounts {
    /// An all-zero table for words with the given token counts.
    pub fn new(word_tokens: &[u64], n_topics: usize) -> WordTopicCounts {
        let mut row_start = Vec::with_capacity(word_tokens.len() + 1);
        let mut row_mask = Vec::with_capacity(word_tokens.len());
        let mut next = 0usize;
        for &tokens in word_tokens {
            row_start.push(next);
            match sparse_cells(tokens, n_topics) {
                Some(cells) => {
                    row_mask.push(cells as u32 - 1);
                    next += cells;
                }
                None => {
                    row_mask.push(DENSE);
                    next += n_topics;
                }
            }
        }
        row_start.push(next);
        WordTopicCounts {
            n_topics,
            row_start,
            row_mask,
            cells: vec![0; next],
        }
    }

    /// Number of words.
    pub fn n_words(&self) -> usize {
        self.row_mask.len()
    }

    /// Number of topics.
    pub fn n_topics(&self) -> usize {
        self.n_topics
    }

    /// Whether word `word_idx` has a dense row.
    pub fn is_dense(&self, word_idx: usize) -> bool {
        self.row_mask[word_idx] == DENSE
    }

    /// Bytes held by the table.
    pub fn heap_bytes(&self) -> usize {
        self.cells.len() * 4 + self.row_start.len() * 8 + self.row_mask.len() * 4
    }

    /// Where word `word_idx`'s row lives.
    #[inline]
    pub fn layout(&self, word_idx: usize) -> RowLayout {
        RowLayout {
            start: self.row_start[word_idx],
            mask: self.row_mask[word_idx],
        }
    }

    /// `n_kw` for word `word_idx` and topic `topic`.
    #[inline]
    pub fn get(&self, word_idx: usize, topic: Topic) -> u32 {
        row_get(&self.cells, 0, self.layout(word_idx), topic)
    }

    /// Adds one token of word `word_idx` to `topic`.
    #[inline]
    pub fn increment(&mut self, word_idx: usize, topic: Topic) {
        let layout = self.layout(word_idx);
        row_increment(&mut self.cells, 0, layout, topic);
    }

    /// Removes one token of word `word_idx` from `topic`, which must hold one.
    #[inline]
    pub fn decrement(&mut self, word_idx: usize, topic: Topic) {
        let layout = self.layout(word_idx);
        row_decrement(&mut self.cells, 0, layout, topic);
    }

    /// Calls `f(topic, count)` for every non-zero count of word `word_idx`,
    /// in no particular order.
    pub fn for_each_nonzero(&self, word_idx: usize, mut f: impl FnMut(Topic, u32)) {
        let start = self.row_start[word_idx];
        let mask = self.row_mask[word_idx];
        if mask == DENSE {
            for (topic, &count) in self.cells[start..start + self.n_topics].iter().enumerate() {
                if count > 0 {
                    f(topic as Topic, count);
                }
            }
        } else {
            for &cell in &self.cells[start..=start + mask as usize] {
                if cell != 0 {
                    f(cell_topic(cell), cell_count(cell));
                }
            }
        }
    }

    /// The non-zero counts of word `word_idx` as `(topic, count)`, topics increasing.
    pub fn row_pairs(&self, word_idx: usize) -> Vec<(Topic, u32)> {
        let mut pairs = Vec::new();
        self.for_each_nonzero(word_idx, |topic, count| pairs.push((topic, count)));
        pairs.sort_unstable();
        pairs
    }

    /// Writes word `word_idx`'s counts into `dense` (length K, all zero on
    /// entry) and returns it; a dense row is returned as it is stored.
    pub fn row_dense<'a>(&'a self, word_idx: usize, dense: &'a mut [u32]) -> &'a [u32] {
        row_dense(&self.cells, 0, self.layout(word_idx), dense)
    }

    /// Undoes what [`row_dense`](Self::row_dense) wrote into `dense`.
    pub fn clear_dense(&self, word_idx: usize, dense: &mut [u32]) {
        row_clear_dense(&self.cells, 0, self.layout(word_idx), dense);
    }

    /// The cells of the rows of `words`, as stored (for passing a word
    /// group's rows between the ranks of a distributed fit: the layout
    /// depends only on the token counts and K, so it is the same on every rank).
    pub fn cells(&self, words: std::ops::Range<usize>) -> &[u32] {
        &self.cells[self.row_start[words.start]..self.row_start[words.end]]
    }

    /// The cells of the rows of `words`, writable.
    pub fn cells_mut(&mut self, words: std::ops::Range<usize>) -> &mut [u32] {
        &mut self.cells[self.row_start[words.start]..self.row_start[words.end]]
    }

    /// The first cell of word `word_idx`'s row (`V` gives the table's size).
    pub fn cell_start(&self, word_idx: usize) -> usize {
        self.row_start[word_idx]
    }

    /// Splits the table into disjoint mutable parts, one per range of words
    /// `bounds[i]..bounds[i + 1]` (`bounds` non-decreasing, from 0 to V).
    pub fn split_by_words(&mut self, bounds: &[usize]) -> Vec<RowsMut<'_>> {
        let mut parts = Vec::with_capacity(bounds.len().saturating_sub(1));
        let mut rest: &mut [u32] = &mut self.cells;
        let mut consumed = 0usize;
        for pair in bounds.windows(2) {
            let end = self.row_start[pair[1]];
            let (part, tail) = std::mem::take(&mut rest).split_at_mut(end - consumed);
            parts.push(RowsMut {
                words: pair[0]..pair[1],
                n_topics: self.n_topics,
                offset: consumed,
                cells: part,
            });
            consumed = end;
            rest = tail;
        }
        parts
    }
}

/// Empties `slot` of a sparse row and shifts later cells of the same probe
/// run back, so that every remaining cell stays reachable from its home.
fn remove_cell(row: &mut [u32], mut hole: u32, mask: u32) {
    row[hole as usize] = 0;
    let mut next = (hole + 1) & mask;
    loop {
        let cell = row[next as usize];
        if cell == 0 {
            return;
        }
        let want = home(cell_topic(cell), mask);
        // The cell may move to the hole when its home is not cyclically in (hole, next].
        let distance_to_next = next.wrapping_sub(want) & mask;
        let distance_to_hole = hole.wrapping_sub(want) & mask;
        if distance_to_hole < distance_to_next {
            row[hole as usize] = cell;
            row[next as usize] = 0;
            hole = next;
        }
        next = (next + 1) & mask;
    }
}

/// The rows of a range of words, borrowed mutably on their own (see
/// [`WordTopicCounts::split_by_words`]); rows are addressed by their
/// [`RowLayout`] in the whole table.
pub struct RowsMut<'a> {
    words: std::ops::Range<usize>,
    n_topics: usize,
    offset: usize,
    cells: &'a mut [u32],
}

impl RowsMut<'_> {
    /// The words whose rows these are.
    pub fn words(&self) -> std::ops::Range<usize> {
        self.words.clone()
    }

    /// `n_kw` for the word whose row is `layout` (one of these rows).
    #[inline]
    pub fn get(&self, layout: RowLayout, topic: Topic) -> u32 {
        row_get(self.cells, self.offset, layout, topic)
    }

    /// Adds one token to `topic` in the row `layout`.
    #[inline]
    pub fn increment(&mut self, layout: RowLayout, topic: Topic) {
        row_increment(self.cells, self.offset, layout, topic);
    }

    /// Removes one token from `topic` in the row `layout`.
    #[inline]
    pub fn decrement(&mut self, layout: RowLayout, topic: Topic) {
        row_decrement(self.cells, self.offset, layout, topic);
    }

    /// The counts of row `layout` as K dense counters (see [`row_dense`]).
    #[inline]
    pub fn dense_row<'s>(&'s self, layout: RowLayout, scratch: &'s mut [u32]) -> &'s [u32] {
        row_dense(self.cells, self.offset, layout, scratch)
    }

    /// Zeroes what [`dense_row`](Self::dense_row) wrote into `scratch`.
    #[inline]
    pub fn clear_dense(&self, layout: RowLayout, scratch: &mut [u32]) {
        row_clear_dense(self.cells, self.offset, layout, scratch);
    }

    /// Calls `f(topic, count)` for every non-zero count of row `layout`, in
    /// no particular order (a sparse row's cell order depends on the order
    /// of past updates): only for work whose outcome does not depend on it.
    #[inline]
    pub fn for_each_nonzero(&self, layout: RowLayout, mut f: impl FnMut(Topic, u32)) {
        let start = layout.start - self.offset;
        if layout.mask == DENSE {
            for (topic, &count) in self.cells[start..start + self.n_topics].iter().enumerate() {
                if count > 0 {
                    f(topic as Topic, count);
                }
            }
        } else {
            for &cell in &self.cells[start..=start + layout.mask as usize] {
                if cell != 0 {
                    f(cell_topic(cell), cell_count(cell));
                }
            }
        }
    }

    /// Hints that `topic`'s cell of row `layout` will be read soon.
    #[inline]
    pub fn prefetch(&self, layout: RowLayout, topic: Topic) {
        super::prefetch::prefetch(self.cells, row_cell(layout, topic).wrapping_sub(self.offset));
    }
}

impl PartialEq for WordTopicCounts {
    /// Equal counts, whatever the cell layout of sparse rows.
    fn eq(&self, other: &WordTopicCounts) -> bool {
        self.n_topics == other.n_topics
            && self.row_mask == other.row_mask
            && (0..self.n_words()).all(|w| self.row_pairs(w) == other.row_pairs(w))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn layout_is_chosen_by_word_tokens_and_topics() {
        // Source: common practice — a sparse row must hold every non-zero
        // topic of its word with room to spare; here at most half full.
        let table = WordTopicCounts::new(&[1, 3, 10, 100, 0], 64);
        assert!(!table.is_dense(0)); // 2 cells
        assert!(!table.is_dense(1)); // 8 cells
        assert!(!table.is_dense(2)); // 32 cells = half of 64
        assert!(table.is_dense(3));
        assert!(!table.is_dense(4));
    }

    proptest! {
        #[test]
        fn matches_a_dense_table_under_any_updates(
            ops in proptest::collection::vec((0usize..3, 0u16..64, any::<bool>()), 0..400)
        ) {
            // Source: common practice — a hash row must agree with a plain
            // array of counters after any sequence of increments and decrements.
            let word_tokens = [12u64, 3, 200];
            let mut table = WordTopicCounts::new(&word_tokens, 64);
            let mut dense = vec![[0u32; 64]; 3];
            let mut per_word = [0u64; 3];
            for (word, topic, add) in ops {
                if add && per_word[word] < word_tokens[word] {
                    table.increment(word, topic);
                    dense[word][topic as usize] += 1;
                    per_word[word] += 1;
                } else if !add {
                    // Remove from the first non-zero topic at or after `topic`.
                    if let Some(t) = (0..64).map(|o| (topic as usize + o) % 64).find(|&t| dense[word][t] > 0) {
                        table.decrement(word, t as Topic);
                        dense[word][t] -= 1;
                        per_word[word] -= 1;
                    }
                }
                for (w, row) in dense.iter().enumerate() {
                    for (t, &count) in row.iter().enumerate() {
                        prop_assert_eq!(table.get(w, t as Topic), count);
                    }
                }
            }
        }
    }

    #[test]
    fn split_rows_update_like_the_whole_table() {
        // Source: common practice — disjoint views must write where the table would.
        let word_tokens = [5u64, 40, 2, 9];
        let mut whole = WordTopicCounts::new(&word_tokens, 32);
        for (w, &n) in word_tokens.iter().enumerate() {
            for i in 0..n {
                whole.increment(w, (i % 7) as Topic);
            }
        }
        let mut split = whole.clone();
        for w in 0..4 {
            whole.decrement(w, 0);
            whole.increment(w, 9);
        }
        let layouts: Vec<RowLayout> = (0..4).map(|w| split.layout(w)).collect();
        let before = split.clone();
        let mut parts = split.split_by_words(&[0, 1, 1, 3, 4]);
        assert_eq!(parts.len(), 4);
        assert!(parts[1].words().is_empty());
        for part in &mut parts {
            for w in part.words() {
                assert_eq!(part.get(layouts[w], 0), before.get(w, 0));
                part.decrement(layouts[w], 0);
                part.increment(layouts[w], 9);
            }
        }
        assert_eq!(split, whole);
    }
}
