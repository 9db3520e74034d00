//! Topic coherence. This module owns the counting of how often a topic's top
//! words occur and co-occur in a reference collection (whole documents, or a
//! boolean sliding window whose every position is a virtual document) and
//! the three coherence scores built on those counts (UMass, mean NPMI and
//! C_V). It works on plain data only: documents are slices of word ids,
//! topics are lists of word ids, so it knows nothing of the vocabulary, the
//! sampler or the saved model. The per-topic summary numbers are in
//! [`super::diagnostics`].
//!
//! Only the words that appear in some topic's top list are counted, and only
//! the pairs of words that share a topic, so memory stays proportional to the
//! number of topics times the square of the list length, whatever the size of
//! the reference collection.

use std::collections::HashMap;

use serde::{Deserialize, Serialize};
use thiserror::Error;

/// What can go wrong when counting a reference collection or scoring a topic. Each message says what was wrong and what to do.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum CoherenceError {
    /// The reference collection has no word to count.
    #[error(
        "the reference collection has nothing to count: {documents} document(s) were given and none \
         holds a word; pass the training documents (or another non-empty collection) as the reference"
    )]
    EmptyReference {
        /// How many documents were given (all of them empty).
        documents: usize,
    },
    /// A sliding window must hold at least two positions.
    #[error(
        "a sliding window of {window} word(s) is too small: two words can only co-occur in a window of \
         at least 2; use 10 for NPMI or 110 for C_V"
    )]
    WindowTooSmall {
        /// The window size that was asked for.
        window: usize,
    },
    /// The smoothing constant is negative, not a number, or too large for the
    /// number of windows.
    #[error(
        "epsilon {epsilon} is not a usable smoothing constant for {windows} window(s): it must be a \
         finite number, at least 0 and below 1/{windows} (the probability of a single window); use a \
         tiny value such as 1e-12"
    )]
    EpsilonOutOfRange {
        /// The epsilon that was given.
        epsilon: f64,
        /// The number of windows in the reference it was used with.
        windows: u64,
    },
    /// Coherence compares words in pairs, so a topic needs two top words.
    #[error("{count} top word(s) were given; coherence compares pairs of words, so give at least 2")]
    TooFewTopWords {
        /// How many top words were given.
        count: usize,
    },
    /// A top word was not among the words the reference was built to count.
    #[error(
        "word id {word_id} was not in any top-word list when the reference was built, so it was not \
         counted; build the reference from the same topics that are being scored"
    )]
    WordNotTracked {
        /// The word id that was not counted.
        word_id: u32,
    },
    /// Two top words were counted, but never as a pair (they were in no common
    /// topic when the reference was built).
    #[error(
        "words {first} and {second} were in no common top-word list when the reference was built, so \
         their co-occurrence was not counted; build the reference from the same topics that are being \
         scored"
    )]
    PairNotTracked {
        /// The first word id of the pair.
        first: u32,
        /// The second word id of the pair.
        second: u32,
    },
    /// An error while scoring one topic of a batch.
    #[error("topic {topic}")]
    Topic {
        /// Index of the topic (its position in the list of topics).
        topic: usize,
        /// What went wrong with it.
        #[source]
        source: Box<CoherenceError>,
    },
}

/// Which words and which pairs of words are counted, and where each count is
/// stored.
#[derive(Debug, Clone)]
struct TrackedWords {
    /// Slot of each counted word.
    slot_of_word: HashMap<u32, usize>,
    /// For each slot, the slots it is paired with and the index of each pair.
    partners: Vec<Vec<(usize, usize)>>,
    /// Index of each pair, keyed by (smaller slot, larger slot).
    pair_of_slots: HashMap<(usize, usize), usize>,
}

impl TrackedWords {
    fn from_topics(topics_top_words: &[Vec<u32>]) -> Self {
        let mut slot_of_word: HashMap<u32, usize> = HashMap::new();
        let mut partners: Vec<Vec<(usize, usize)>> = Vec::new();
        let mut pair_of_slots: HashMap<(usize, usize), usize> = HashMap::new();
        for top_words in topics_top_words {
            let slots: Vec<usize> = top_words
                .iter()
                .map(|&word_id| {
                    let next_slot = slot_of_word.len();
                    *slot_of_word.entry(word_id).or_insert_with(|| {
                        partners.push(Vec::new());
                        next_slot
                    })
                })
                .collect();
            for (position, &first) in slots.iter().enumerate() {
                for &second in &slots[position + 1..] {
                    if first == second {
                        continue;
                    }
                    let key = (first.min(second), first.max(second));
                    let next_pair = pair_of_slots.len();
                    if let std::collections::hash_map::Entry::Vacant(entry) = pair_of_slots.entry(key) {
                        entry.insert(next_pair);
                        partners[first].push((second, next_pair));
                        partners[second].push((first, next_pair));
                    }
                }
            }
        }
        Self {
            slot_of_word,
            partners,
            pair_of_slots,
        }
    }

    fn slot_count(&self) -> usize {
        self.partners.len()
    }

    fn pair_count(&self) -> usize {
        self.pair_of_slots.len()
    }
}

/// Counts of counting units (whole documents or window positions) holding
/// each tracked word and each tracked pair.
#[derive(Debug, Clone)]
struct CooccurrenceCounts {
    tracked: TrackedWords,
    /// Units holding each slot's word.
    word_units: Vec<u64>,
    /// Units holding both words of each pair.
    pair_units: Vec<u64>,
    /// Number of counting units.
    units: u64,
    /// Number of documents given, empty ones included.
    documents: usize,
}

/// Running state of a scan of one document by a sliding window. A word's
/// presence is tracked as an interval of window positions: it opens when the
/// word's count inside the window goes from 0 to 1 and closes when it falls
/// back to 0, adding the interval's length to the word's total. A pair's
/// interval is open while both its words are inside the window. This costs
/// work only when a word enters or leaves the window, not at every position.
struct WindowScan<'a> {
    partners: &'a [Vec<(usize, usize)>],
    inside: Vec<u32>,
    word_opened_at: Vec<u64>,
    pair_opened_at: Vec<u64>,
    word_units: Vec<u64>,
    pair_units: Vec<u64>,
}

impl WindowScan<'_> {
    fn enter(&mut self, slot: usize, position: u64) {
        self.inside[slot] += 1;
        if self.inside[slot] == 1 {
            self.word_opened_at[slot] = position;
            for &(partner, pair) in &self.partners[slot] {
                if self.inside[partner] > 0 {
                    self.pair_opened_at[pair] = position;
                }
            }
        }
    }

    fn leave(&mut self, slot: usize, position: u64) {
        self.inside[slot] -= 1;
        if self.inside[slot] == 0 {
            self.close(slot, position);
        }
    }

    /// Closes the intervals of a word whose count has just reached 0, at the
    /// first window position that no longer holds it.
    fn close(&mut self, slot: usize, position: u64) {
        self.word_units[slot] += position - self.word_opened_at[slot];
        for &(partner, pair) in &self.partners[slot] {
            if self.inside[partner] > 0 {
                self.pair_units[pair] += position - self.pair_opened_at[pair];
            }
        }
    }
}

impl CooccurrenceCounts {
    /// Counts `documents`. With `window` = None each document is one unit;
    /// with Some(size) each window position is one unit, and a non-empty
    /// document shorter than the window is exactly one unit.
    fn count<I>(
        documents: I,
        topics_top_words: &[Vec<u32>],
        window: Option<usize>,
    ) -> Result<Self, CoherenceError>
    where
        I: IntoIterator,
        I::Item: AsRef<[u32]>,
    {
        if let Some(size) = window
            && size < 2
        {
            return Err(CoherenceError::WindowTooSmall { window: size });
        }
        let tracked = TrackedWords::from_topics(topics_top_words);
        let mut scan = WindowScan {
            partners: &tracked.partners,
            inside: vec![0; tracked.slot_count()],
            word_opened_at: vec![0; tracked.slot_count()],
            pair_opened_at: vec![0; tracked.pair_count()],
            word_units: vec![0; tracked.slot_count()],
            pair_units: vec![0; tracked.pair_count()],
        };
        let mut units: u64 = 0;
        let mut document_count = 0;
        let mut slots: Vec<Option<usize>> = Vec::new();
        for document in documents {
            document_count += 1;
            let tokens = document.as_ref();
            if tokens.is_empty() {
                continue;
            }
            slots.clear();
            slots.extend(
                tokens
                    .iter()
                    .map(|word_id| tracked.slot_of_word.get(word_id).copied()),
            );
            let span = window.map_or(tokens.len(), |size| size.min(tokens.len()));
            let last_start = tokens.len() - span;
            for &slot in slots[..span].iter().flatten() {
                scan.enter(slot, 0);
            }
            for start in 1..=last_start {
                let position = start as u64;
                if let Some(slot) = slots[start - 1] {
                    scan.leave(slot, position);
                }
                if let Some(slot) = slots[start + span - 1] {
                    scan.enter(slot, position);
                }
            }
            let end = (last_start + 1) as u64;
            for &slot in slots[last_start..].iter().flatten() {
                if scan.inside[slot] > 0 {
                    scan.inside[slot] = 0;
                    scan.close(slot, end);
                }
            }
            units += end;
        }
        if units == 0 {
            return Err(CoherenceError::EmptyReference {
                documents: document_count,
            });
        }
        let WindowScan {
            word_units,
            pair_units,
            ..
        } = scan;
        Ok(Self {
            tracked,
            word_units,
            pair_units,
            units,
            documents: document_count,
        })
    }

    fn slot(&self, word_id: u32) -> Result<usize, CoherenceError> {
        self.tracked
            .slot_of_word
            .get(&word_id)
            .copied()
            .ok_or(CoherenceError::WordNotTracked { word_id })
    }

    fn frequency(&self, word_id: u32) -> Result<u64, CoherenceError> {
        Ok(self.word_units[self.slot(word_id)?])
    }

    /// Units holding both words; a word paired with itself gives its own
    /// frequency.
    fn joint_frequency(&self, first: u32, second: u32) -> Result<u64, CoherenceError> {
        let first_slot = self.slot(first)?;
        let second_slot = self.slot(second)?;
        if first_slot == second_slot {
            return Ok(self.word_units[first_slot]);
        }
        let key = (first_slot.min(second_slot), first_slot.max(second_slot));
        match self.tracked.pair_of_slots.get(&key) {
            Some(&pair) => Ok(self.pair_units[pair]),
            None => Err(CoherenceError::PairNotTracked { first, second }),
        }
    }
}

/// Document frequencies in a reference collection: for each word of interest
/// D(v), the number of documents holding it, and for each pair of words that
/// share a topic D(v, v'), the number of documents holding both. This is the
/// reference the UMass score uses (Mimno et al. 2011 count on the training
/// documents themselves).
#[derive(Debug, Clone)]
pub struct DocumentCooccurrence {
    counts: CooccurrenceCounts,
}

impl DocumentCooccurrence {
    /// Counts `documents` (each a slice or vector of word ids), tracking the
    /// words of `topics_top_words` (one list per topic) and every pair of
    /// words in a common list. Words outside the lists are ignored. Empty
    /// documents count as documents but hold no word.
    ///
    /// Fails with [`CoherenceError::EmptyReference`] when no document holds a
    /// word (including when there are no documents).
    pub fn from_documents<I>(documents: I, topics_top_words: &[Vec<u32>]) -> Result<Self, CoherenceError>
    where
        I: IntoIterator,
        I::Item: AsRef<[u32]>,
    {
        Ok(Self {
            counts: CooccurrenceCounts::count(documents, topics_top_words, None)?,
        })
    }

    /// Number of documents that were given, empty ones included.
    pub fn document_count(&self) -> usize {
        self.counts.documents
    }

    /// D(v): documents holding `word_id`, or None when the word was not in
    /// any top-word list.
    pub fn document_frequency(&self, word_id: u32) -> Option<u64> {
        self.counts.frequency(word_id).ok()
    }

    /// D(v, v'): documents holding both words, or None when the two words
    /// were in no common top-word list. A word paired with itself gives D(v).
    pub fn co_document_frequency(&self, first: u32, second: u32) -> Option<u64> {
        self.counts.joint_frequency(first, second).ok()
    }
}

/// Counts over a boolean sliding window (Röder, Both & Hinneburg, WSDM 2015):
/// a window of `window` consecutive token positions slides one position at a
/// time over each document, and every position is a virtual document in
/// which a word either occurs or not (how many times does not matter).
///
/// How documents turn into windows, exactly:
/// - a document of n >= `window` tokens gives n - `window` + 1 windows,
///   starting at positions 0, 1, ..., n - `window`;
/// - a document of 1 <= n < `window` tokens gives exactly one window, the
///   whole document, so when the window is larger than every document the
///   counts are plain document frequencies, one virtual document per document;
/// - an empty document gives no window.
///
/// Positions are those of the document as given: words that are not counted
/// still take up room in the window.
#[derive(Debug, Clone)]
pub struct WindowCooccurrence {
    counts: CooccurrenceCounts,
    window: usize,
}

impl WindowCooccurrence {
    /// Slides a window of `window` positions over `documents`, tracking the
    /// words of `topics_top_words` and every pair of words in a common list.
    ///
    /// Fails with [`CoherenceError::WindowTooSmall`] when `window` < 2, and
    /// with [`CoherenceError::EmptyReference`] when there is no window at all
    /// (no documents, or only empty ones).
    pub fn from_documents<I>(
        documents: I,
        topics_top_words: &[Vec<u32>],
        window: usize,
    ) -> Result<Self, CoherenceError>
    where
        I: IntoIterator,
        I::Item: AsRef<[u32]>,
    {
        Ok(Self {
            counts: CooccurrenceCounts::count(documents, topics_top_words, Some(window))?,
            window,
        })
    }

    /// The window size, in token positions.
    pub fn window_size(&self) -> usize {
        self.window
    }

    /// Number of windows (virtual documents), the denominator of every
    /// probability.
    pub fn window_count(&self) -> u64 {
        self.counts.units
    }

    /// Number of documents that were given, empty ones included.
    pub fn document_count(&self) -> usize {
        self.counts.documents
    }

    /// Windows holding `word_id`, or None when the word was not in any
    /// top-word list.
    pub fn window_frequency(&self, word_id: u32) -> Option<u64> {
        self.counts.frequency(word_id).ok()
    }

    /// Windows holding both words, or None when the two words were in no
    /// common top-word list. A word paired with itself gives its own count.
    pub fn co_window_frequency(&self, first: u32, second: u32) -> Option<u64> {
        self.counts.joint_frequency(first, second).ok()
    }
}

fn require_pairs(top_words: &[u32]) -> Result<(), CoherenceError> {
    if top_words.len() < 2 {
        return Err(CoherenceError::TooFewTopWords {
            count: top_words.len(),
        });
    }
    Ok(())
}

fn check_epsilon(epsilon: f64, windows: u64) -> Result<(), CoherenceError> {
    if !epsilon.is_finite() || epsilon < 0.0 || epsilon * windows as f64 >= 1.0 {
        return Err(CoherenceError::EpsilonOutOfRange { epsilon, windows });
    }
    Ok(())
}

/// UMass coherence (Mimno, Wallach, Talley, Leenders & McCallum, EMNLP 2011)
/// of `top_words`, given in decreasing probability v_1, ..., v_M:
///
/// C = sum over m = 2..M, l = 1..m-1 of ln( (D(v_m, v_l) + 1) / D(v_l) )
///
/// with D the document frequencies of `reference`, normally the training
/// documents. It is 0 or below; closer to 0 is more coherent. The score is
/// not symmetric: each word is judged against the words ranked above it.
///
/// A word absent from the reference (D(v_l) = 0) leaves the term undefined:
/// every pair whose higher-ranked word v_l is absent is skipped (adds
/// nothing), and if every pair is skipped the score is 0. A lower-ranked word
/// v_m that is absent is not skipped, its terms are ln(1 / D(v_l)).
/// [`score_topics`] reports how many top words were absent.
///
/// Fails when fewer than 2 words are given, or when a word or pair was not
/// tracked by `reference`.
pub fn umass(top_words: &[u32], reference: &DocumentCooccurrence) -> Result<f64, CoherenceError> {
    require_pairs(top_words)?;
    let counts = &reference.counts;
    let mut total = 0.0;
    for (rank, &lower) in top_words.iter().enumerate().skip(1) {
        for &higher in &top_words[..rank] {
            let joint = counts.joint_frequency(lower, higher)?;
            let higher_frequency = counts.frequency(higher)?;
            if higher_frequency == 0 {
                continue;
            }
            total += ((joint + 1) as f64 / higher_frequency as f64).ln();
        }
    }
    Ok(total)
}

/// Normalised pointwise mutual information (Bouma 2009) of two words, with
/// probabilities from the window counts of `reference` divided by its number
/// of windows:
///
/// PMI = ln( (P(a,b) + epsilon) / (P(a) P(b)) ),
/// NPMI = PMI / -ln( P(a,b) + epsilon ),
///
/// between -1 and 1: 1 when the words only occur together, 0 when they occur
/// independently, -1 when they never occur together.
///
/// The ends of the range are taken as Bouma defines them rather than from the
/// smoothed formula: when the two words share no window (which includes a
/// word that never occurs, where P(a) P(b) = 0 would make the formula
/// undefined) the value is exactly -1, and when both words are in every
/// window it is exactly 1. Other values are clamped to [-1, 1] so that
/// `epsilon` cannot push them out by rounding.
///
/// `epsilon` must be finite, at least 0 and below 1 / (number of windows);
/// 1e-12 is the usual value.
pub fn pair_npmi(
    first: u32,
    second: u32,
    reference: &WindowCooccurrence,
    epsilon: f64,
) -> Result<f64, CoherenceError> {
    let counts = &reference.counts;
    check_epsilon(epsilon, counts.units)?;
    let joint = counts.joint_frequency(first, second)?;
    let first_frequency = counts.frequency(first)?;
    let second_frequency = counts.frequency(second)?;
    if joint == 0 {
        return Ok(-1.0);
    }
    if joint == counts.units {
        return Ok(1.0);
    }
    let windows = counts.units as f64;
    let joint_probability = joint as f64 / windows + epsilon;
    let independent_probability = (first_frequency as f64 / windows) * (second_frequency as f64 / windows);
    let pmi = (joint_probability / independent_probability).ln();
    let normaliser = -joint_probability.ln();
    if normaliser <= 0.0 {
        // Only reachable when rounding takes joint_probability to 1: the pair
        // is in all windows but a vanishing share of them.
        return Ok(1.0);
    }
    Ok((pmi / normaliser).clamp(-1.0, 1.0))
}

/// Mean NPMI of `top_words` over all M(M-1)/2 pairs of distinct positions,
/// each pair scored by [`pair_npmi`] on a sliding-window `reference`
/// (Lau, Newman & Baldwin, EACL 2014 favour this score; Röder et al. 2015 use
/// a window of 10). Between -1 and 1; higher is more coherent.
pub fn npmi(top_words: &[u32], reference: &WindowCooccurrence, epsilon: f64) -> Result<f64, CoherenceError> {
    require_pairs(top_words)?;
    let mut total = 0.0;
    let mut pairs = 0usize;
    for (position, &first) in top_words.iter().enumerate() {
        for &second in &top_words[position + 1..] {
            total += pair_npmi(first, second, reference, epsilon)?;
            pairs += 1;
        }
    }
    Ok(total / pairs as f64)
}

fn cosine_similarity(left: &[f64], right: &[f64]) -> f64 {
    let dot: f64 = left.iter().zip(right).map(|(a, b)| a * b).sum();
    let left_norm = left.iter().map(|a| a * a).sum::<f64>().sqrt();
    let right_norm = right.iter().map(|b| b * b).sum::<f64>().sqrt();
    if left_norm == 0.0 || right_norm == 0.0 {
        return 0.0;
    }
    dot / (left_norm * right_norm)
}

/// C_V coherence (Röder, Both & Hinneburg, WSDM 2015) of `top_words`
/// W = {w_1, ..., w_N}, on a sliding-window `reference` (the paper uses a
/// boolean sliding window of 110):
///
/// - segmentation "one-set": each single word {w_i} is paired with the set
///   of all top words W;
/// - indirect confirmation: each word has a context vector
///   v(w_i) = ( NPMI(w_i, w_j) ) for j = 1..N, NPMI to the power 1 and the
///   word itself included (its NPMI with itself is 1 when it occurs in some
///   but not all windows); the set's vector is the sum of the word vectors,
///   v(W) = sum_i v(w_i); the confirmation of the pair is the cosine
///   similarity of v(w_i) and v(W);
/// - aggregation: C_V is the arithmetic mean of the N cosines.
///
/// NPMI is [`pair_npmi`] with `epsilon`, so a word that never occurs has a
/// vector of -1 entries. A cosine with a zero-length vector is taken as 0.
/// The result lies in [-1, 1]; higher is more coherent.
pub fn cv(top_words: &[u32], reference: &WindowCooccurrence, epsilon: f64) -> Result<f64, CoherenceError> {
    require_pairs(top_words)?;
    let size = top_words.len();
    let mut context_vectors = vec![vec![0.0; size]; size];
    for row in 0..size {
        for column in row..size {
            let value = pair_npmi(top_words[row], top_words[column], reference, epsilon)?;
            context_vectors[row][column] = value;
            context_vectors[column][row] = value;
        }
    }
    let mut set_vector = vec![0.0; size];
    for vector in &context_vectors {
        for (total, value) in set_vector.iter_mut().zip(vector) {
            *total += value;
        }
    }
    let total: f64 = context_vectors
        .iter()
        .map(|vector| cosine_similarity(vector, &set_vector))
        .sum();
    Ok(total / size as f64)
}

/// Settings of [`score_topics`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CoherenceSettings {
    /// Sliding window for NPMI, in token positions (Röder et al. 2015 use 10).
    pub npmi_window: usize,
    /// Sliding window for C_V, in token positions (Röder et al. 2015 use 110).
    pub cv_window: usize,
    /// Smoothing constant added to joint probabilities in NPMI.
    pub epsilon: f64,
}

impl Default for CoherenceSettings {
    /// Windows 10 and 110 and epsilon 1e-12.
    fn default() -> Self {
        Self {
            npmi_window: 10,
            cv_window: 110,
            epsilon: 1e-12,
        }
    }
}

/// The three coherence scores of one topic.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TopicCoherence {
    /// Index of the topic in the list that was scored.
    pub topic: usize,
    /// UMass score on whole documents (0 or below, closer to 0 is better).
    pub umass: f64,
    /// Mean NPMI over pairs, on the NPMI window (-1 to 1, higher is better).
    pub npmi: f64,
    /// C_V on the C_V window (-1 to 1, higher is better).
    pub cv: f64,
    /// How many of the topic's top words occur in no reference document. UMass
    /// skips the pairs in which such a word is the higher-ranked one, and its
    /// NPMI with every word is -1.
    pub unseen_words: usize,
}

/// Means of the coherence scores over topics.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CoherenceMeans {
    /// Mean UMass score.
    pub umass: f64,
    /// Mean of the topics' mean NPMI.
    pub npmi: f64,
    /// Mean C_V.
    pub cv: f64,
}

fn in_topic(topic: usize) -> impl Fn(CoherenceError) -> CoherenceError {
    move |source| CoherenceError::Topic {
        topic,
        source: Box::new(source),
    }
}

/// Scores every topic of `topics_top_words` (one list of word ids per topic,
/// in decreasing probability) against `documents`: UMass on whole documents,
/// NPMI on a window of `settings.npmi_window`, C_V on a window of
/// `settings.cv_window`. The documents are read once per distinct counting
/// scheme (two or three passes).
///
/// ```
/// use themata::evaluate::coherence::{CoherenceSettings, score_topics};
///
/// let documents: Vec<Vec<u32>> = vec![vec![0, 1], vec![0, 1, 2], vec![0], vec![2]];
/// let topics = vec![vec![0, 1, 2]];
/// let scores = score_topics(&topics, &documents, &CoherenceSettings::default()).unwrap();
/// assert!((scores[0].umass - (2.0f64 / 3.0).ln()).abs() < 1e-12);
/// ```
///
/// Fails when a setting is out of range, a topic has fewer than 2 top words
/// (reported with its index), or no document holds a word.
pub fn score_topics<D: AsRef<[u32]>>(
    topics_top_words: &[Vec<u32>],
    documents: &[D],
    settings: &CoherenceSettings,
) -> Result<Vec<TopicCoherence>, CoherenceError> {
    for size in [settings.npmi_window, settings.cv_window] {
        if size < 2 {
            return Err(CoherenceError::WindowTooSmall { window: size });
        }
    }
    for (topic, top_words) in topics_top_words.iter().enumerate() {
        require_pairs(top_words).map_err(in_topic(topic))?;
    }
    let document_reference = DocumentCooccurrence::from_documents(documents, topics_top_words)?;
    let npmi_reference =
        WindowCooccurrence::from_documents(documents, topics_top_words, settings.npmi_window)?;
    let separate_cv_reference = if settings.cv_window == settings.npmi_window {
        None
    } else {
        Some(WindowCooccurrence::from_documents(
            documents,
            topics_top_words,
            settings.cv_window,
        )?)
    };
    let cv_reference = separate_cv_reference.as_ref().unwrap_or(&npmi_reference);
    for reference in [&npmi_reference, cv_reference] {
        check_epsilon(settings.epsilon, reference.window_count())?;
    }
    let mut scores = Vec::with_capacity(topics_top_words.len());
    for (topic, top_words) in topics_top_words.iter().enumerate() {
        let unseen_words = top_words
            .iter()
            .filter(|&&word_id| document_reference.document_frequency(word_id) == Some(0))
            .count();
        scores.push(TopicCoherence {
            topic,
            umass: umass(top_words, &document_reference).map_err(in_topic(topic))?,
            npmi: npmi(top_words, &npmi_reference, settings.epsilon).map_err(in_topic(topic))?,
            cv: cv(top_words, cv_reference, settings.epsilon).map_err(in_topic(topic))?,
            unseen_words,
        });
    }
    Ok(scores)
}

/// Means of each score over `scores`, or None when there are no topics.
pub fn mean_coherence(scores: &[TopicCoherence]) -> Option<CoherenceMeans> {
    if scores.is_empty() {
        return None;
    }
    let count = scores.len() as f64;
    Some(CoherenceMeans {
        umass: scores.iter().map(|score| score.umass).sum::<f64>() / count,
        npmi: scores.iter().map(|score| score.npmi).sum::<f64>() / count,
        cv: scores.iter().map(|score| score.cv).sum::<f64>() / count,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    const A: u32 = 0;

    const B: u32 = 1;

    const C: u32 = 2;

    const D: u32 = 3;

    const E: u32 = 4;

    /// A word that no topic lists, so it is never counted.
    const FILLER: u32 = 99;

    fn assert_close(actual: f64, expected: f64, tolerance: f64) {
        assert!(
            (actual - expected).abs() <= tolerance,
            "expected {expected}, got {actual} (tolerance {tolerance})"
        );
    }

    /// Documents {a,b},{a,b},{a},{c}: with whole documents (or any window of
    /// at least 2) as units, P(a) = 3/4, P(b) = 2/4, P(a,b) = 2/4, P(c) = 1/4,
    /// P(a,c) = P(b,c) = 0.
    fn npmi_fixture_documents() -> Vec<Vec<u32>> {
        vec![vec![A, B], vec![A, B], vec![A], vec![C]]
    }

    #[test]
    fn umass_matches_the_methods_fixture() {
        // Source: METHODS.md section 8 (UMass fixture); formula of Mimno et al. 2011, section 4.
        // D(a)=3, D(b)=2, D(c)=2, D(a,b)=2, D(a,c)=1, D(b,c)=1. With top words [a,b,c]:
        //   m=b, l=a: ln((D(b,a)+1)/D(a)) = ln(3/3) = 0
        //   m=c, l=a: ln((D(c,a)+1)/D(a)) = ln(2/3)
        //   m=c, l=b: ln((D(c,b)+1)/D(b)) = ln(2/2) = 0
        // so only (c, a) contributes and C = ln(2/3).
        let documents = vec![vec![A, B], vec![A, B, C], vec![A], vec![C]];
        let topics = vec![vec![A, B, C]];
        let reference = DocumentCooccurrence::from_documents(&documents, &topics).unwrap();
        assert_eq!(reference.document_frequency(A), Some(3));
        assert_eq!(reference.document_frequency(B), Some(2));
        assert_eq!(reference.document_frequency(C), Some(2));
        assert_eq!(reference.co_document_frequency(A, B), Some(2));
        assert_eq!(reference.co_document_frequency(C, A), Some(1));
        assert_eq!(reference.co_document_frequency(B, C), Some(1));
        assert_eq!(reference.document_count(), 4);
        assert_close(umass(&[A, B, C], &reference).unwrap(), (2.0f64 / 3.0).ln(), 1e-12);
    }

    #[test]
    fn umass_judges_each_word_against_the_words_ranked_above_it() {
        // Source: Mimno et al. 2011 formula (METHODS.md section 4), worked by hand on the section 8
        // documents with the ranking reversed to [c,b,a]:
        //   m=b, l=c: ln((1+1)/2) = 0;  m=a, l=c: ln((1+1)/2) = 0;  m=a, l=b: ln((2+1)/2) = ln(3/2).
        let documents = vec![vec![A, B], vec![A, B, C], vec![A], vec![C]];
        let topics = vec![vec![C, B, A]];
        let reference = DocumentCooccurrence::from_documents(&documents, &topics).unwrap();
        assert_close(umass(&[C, B, A], &reference).unwrap(), 1.5f64.ln(), 1e-12);
    }

    #[test]
    fn umass_skips_pairs_whose_higher_ranked_word_is_absent() {
        // Source: Mimno et al. 2011 formula; D(v_l) = 0 makes the term undefined, and this module
        // documents that such pairs are skipped. Word e is listed but occurs in no document.
        let documents = vec![vec![A, B], vec![A, B, C], vec![A], vec![C]];
        let topics = vec![vec![E, A], vec![A, E]];
        let reference = DocumentCooccurrence::from_documents(&documents, &topics).unwrap();
        assert_eq!(reference.document_frequency(E), Some(0));
        // [e, a]: the only pair has l = e with D(e) = 0, so it is skipped and the sum is empty.
        assert_eq!(umass(&[E, A], &reference).unwrap(), 0.0);
        // [a, e]: m = e, l = a: ln((D(e,a)+1)/D(a)) = ln(1/3).
        assert_close(umass(&[A, E], &reference).unwrap(), (1.0f64 / 3.0).ln(), 1e-12);
        let scores = score_topics(&topics, &documents, &CoherenceSettings::default()).unwrap();
        assert_eq!(scores[0].unseen_words, 1);
        assert_eq!(scores[0].umass, 0.0);
        // Source: Bouma 2009, NPMI = -1 for words that never occur together.
        assert_eq!(scores[0].npmi, -1.0);
    }

    #[test]
    fn npmi_matches_the_methods_fixture() {
        // Source: METHODS.md section 8 (NPMI fixture): P(a)=0.75, P(b)=0.5, P(a,b)=0.5 gives
        // PMI ln(4/3) = 0.2876821 and NPMI 0.4150375 (values given to 7 decimals).
        // Four documents shorter than the window of 10, so each is exactly one window.
        let documents = npmi_fixture_documents();
        let topics = vec![vec![A, B, C]];
        let reference = WindowCooccurrence::from_documents(&documents, &topics, 10).unwrap();
        assert_eq!(reference.window_count(), 4);
        assert_eq!(reference.window_frequency(A), Some(3));
        assert_eq!(reference.window_frequency(B), Some(2));
        assert_eq!(reference.co_window_frequency(A, B), Some(2));
        let value = pair_npmi(A, B, &reference, 1e-12).unwrap();
        assert_close(value, 0.4150375, 5e-8);
        // NPMI = PMI / -ln P(a,b), so PMI = NPMI * ln 2 here.
        assert_close(value * 2.0f64.ln(), 0.2876821, 5e-8);
        assert_close(pair_npmi(B, A, &reference, 1e-12).unwrap(), value, 1e-15);
    }

    #[test]
    fn npmi_of_a_topic_is_the_mean_over_its_pairs() {
        // Source: METHODS.md sections 4 and 8; Bouma 2009 for the -1 of pairs that never co-occur.
        // Pairs of [a,b,c]: NPMI(a,b) = ln(4/3)/ln 2, NPMI(a,c) = NPMI(b,c) = -1 (never together),
        // so the mean is (ln(4/3)/ln 2 - 2) / 3 = -0.5283208...
        let documents = npmi_fixture_documents();
        let topics = vec![vec![A, B, C]];
        let reference = WindowCooccurrence::from_documents(&documents, &topics, 10).unwrap();
        let expected = ((4.0f64 / 3.0).ln() / 2.0f64.ln() - 2.0) / 3.0;
        assert_close(npmi(&[A, B, C], &reference, 1e-12).unwrap(), expected, 1e-9);
    }

    #[test]
    fn npmi_reaches_its_bounds_and_zero_under_independence() {
        // Source: Bouma 2009: NPMI is 1 for words that only occur together, -1 for words that never
        // occur together, 0 for independent words.
        let topics = vec![vec![A, B]];
        // Only together: P(a) = P(b) = P(a,b) = 1/2, NPMI = ln(2)/ln(2) = 1.
        let together = WindowCooccurrence::from_documents([vec![A, B], vec![C]], &topics, 10).unwrap();
        assert_close(pair_npmi(A, B, &together, 1e-12).unwrap(), 1.0, 1e-9);
        // Never together.
        let apart = WindowCooccurrence::from_documents([vec![A], vec![B]], &topics, 10).unwrap();
        assert_eq!(pair_npmi(A, B, &apart, 1e-12).unwrap(), -1.0);
        // Independent: P(a) = P(b) = 1/2, P(a,b) = 1/4 = P(a) P(b), so PMI = 0.
        let independent =
            WindowCooccurrence::from_documents([vec![A, B], vec![A], vec![B], vec![C]], &topics, 10).unwrap();
        assert_close(pair_npmi(A, B, &independent, 1e-12).unwrap(), 0.0, 1e-9);
        // Both words in every window: the pair only occurs together, 1 by the documented rule.
        let everywhere = WindowCooccurrence::from_documents([vec![A, B], vec![B, A]], &topics, 10).unwrap();
        assert_eq!(pair_npmi(A, B, &everywhere, 1e-12).unwrap(), 1.0);
        // Source: Bouma 2009: NPMI lies in [-1, 1]; checked on every pair of a mixed reference.
        let mixed = WindowCooccurrence::from_documents(
            [
                vec![A, B, C],
                vec![A, D],
                vec![B, B, E],
                vec![C, D, E, A],
                vec![E],
            ],
            &[vec![A, B, C, D, E]],
            2,
        )
        .unwrap();
        for first in [A, B, C, D, E] {
            for second in [A, B, C, D, E] {
                let value = pair_npmi(first, second, &mixed, 1e-12).unwrap();
                assert!((-1.0..=1.0).contains(&value), "NPMI({first},{second}) = {value}");
            }
        }
    }

    #[test]
    fn sliding_window_counts_a_hand_worked_document() {
        // Source: common practice (boolean sliding window, Röder et al. 2015): document
        // [a,b,c,a,d] with window 3 has 5-3+1 = 3 windows: [a,b,c], [b,c,a], [c,a,d].
        //   a: 3, b: 2, c: 3, d: 1; (a,b): 2, (a,c): 3, (a,d): 1, (b,c): 2, (b,d): 0, (c,d): 1.
        let topics = vec![vec![A, B, C, D]];
        let reference = WindowCooccurrence::from_documents([vec![A, B, C, A, D]], &topics, 3).unwrap();
        assert_eq!(reference.window_size(), 3);
        assert_eq!(reference.window_count(), 3);
        let frequencies: Vec<Option<u64>> = [A, B, C, D]
            .iter()
            .map(|&w| reference.window_frequency(w))
            .collect();
        assert_eq!(frequencies, vec![Some(3), Some(2), Some(3), Some(1)]);
        let pairs = [(A, B, 2), (A, C, 3), (A, D, 1), (B, C, 2), (B, D, 0), (C, D, 1)];
        for (first, second, expected) in pairs {
            assert_eq!(
                reference.co_window_frequency(first, second),
                Some(expected),
                "pair ({first},{second})"
            );
            assert_eq!(
                reference.co_window_frequency(second, first),
                Some(expected),
                "pair ({second},{first})"
            );
        }
    }

    #[test]
    fn sliding_window_counts_a_word_that_leaves_and_comes_back() {
        // Source: common practice (boolean sliding window): [a,b,x,x,b,a] with window 2 has the
        // 5 windows [a,b], [b,x], [x,x], [x,b], [b,a]; a is in 2, b in 4, both in 2. The filler x is
        // not counted but takes up positions.
        let topics = vec![vec![A, B]];
        let reference =
            WindowCooccurrence::from_documents([vec![A, B, FILLER, FILLER, B, A]], &topics, 2).unwrap();
        assert_eq!(reference.window_count(), 5);
        assert_eq!(reference.window_frequency(A), Some(2));
        assert_eq!(reference.window_frequency(B), Some(4));
        assert_eq!(reference.co_window_frequency(A, B), Some(2));
        assert_eq!(reference.window_frequency(FILLER), None);
    }

    #[test]
    fn window_larger_than_every_document_makes_each_document_one_window() {
        // Source: the documented rule of WindowCooccurrence (a document shorter than the window is
        // exactly one window; a document as long as the window gives n - window + 1 = 1 window), so
        // with a window larger than every document the counts equal the document frequencies.
        let documents = vec![
            vec![A],
            vec![A, B],
            vec![B, C, A],
            vec![C, C, D, A],
            vec![D, B, B],
        ];
        let topics = vec![vec![A, B, C, D]];
        let windows = WindowCooccurrence::from_documents(&documents, &topics, 50).unwrap();
        let whole = DocumentCooccurrence::from_documents(&documents, &topics).unwrap();
        assert_eq!(windows.window_count(), 5);
        assert_eq!(windows.document_count(), 5);
        for first in [A, B, C, D] {
            assert_eq!(windows.window_frequency(first), whole.document_frequency(first));
            for second in [A, B, C, D] {
                assert_eq!(
                    windows.co_window_frequency(first, second),
                    whole.co_document_frequency(first, second)
                );
            }
        }
        // By hand: a is in documents 1-4, (a,b) in documents 2 and 3, (c,d) in document 4 only.
        assert_eq!(whole.document_frequency(A), Some(4));
        assert_eq!(whole.co_document_frequency(A, B), Some(2));
        assert_eq!(whole.co_document_frequency(C, D), Some(1));
        // A document exactly as long as the window is one window too.
        let exact = WindowCooccurrence::from_documents([vec![A, B, C]], &topics, 3).unwrap();
        assert_eq!(exact.window_count(), 1);
    }

    #[test]
    fn empty_documents_give_no_window() {
        // Source: the documented rule of WindowCooccurrence: an empty document gives no window.
        let topics = vec![vec![A, B]];
        let documents: Vec<Vec<u32>> = vec![vec![], vec![A, B], vec![]];
        let reference = WindowCooccurrence::from_documents(&documents, &topics, 10).unwrap();
        assert_eq!(reference.window_count(), 1);
        assert_eq!(reference.document_count(), 3);
    }

    /// Straightforward enumeration of every window, for cross-checking.
    fn brute_force_counts(
        documents: &[Vec<u32>],
        window: usize,
        first: u32,
        second: u32,
    ) -> (u64, u64, u64, u64) {
        let (mut windows, mut first_count, mut second_count, mut both) = (0, 0, 0, 0);
        for document in documents {
            if document.is_empty() {
                continue;
            }
            let span = window.min(document.len());
            for start in 0..=document.len() - span {
                let slice = &document[start..start + span];
                windows += 1;
                let has_first = slice.contains(&first);
                let has_second = slice.contains(&second);
                first_count += u64::from(has_first);
                second_count += u64::from(has_second);
                both += u64::from(has_first && has_second);
            }
        }
        (windows, first_count, second_count, both)
    }

    #[test]
    fn sliding_window_agrees_with_enumerating_every_window() {
        // Source: common practice (boolean sliding window definition, Röder et al. 2015), checked
        // by enumerating each window's contents directly on a generated corpus.
        let mut state: u64 = 12345;
        let mut next_word = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((state >> 33) % 7) as u32
        };
        let documents: Vec<Vec<u32>> = (0..40)
            .map(|length| (0..(length % 13)).map(|_| next_word()).collect())
            .collect();
        let topics = vec![vec![0, 1, 2], vec![2, 3, 4, 5]];
        for window in [2, 3, 5, 8, 20] {
            let reference = WindowCooccurrence::from_documents(&documents, &topics, window).unwrap();
            for top_words in &topics {
                for &first in top_words {
                    for &second in top_words {
                        let (windows, first_count, second_count, both) =
                            brute_force_counts(&documents, window, first, second);
                        assert_eq!(reference.window_count(), windows, "window {window}");
                        assert_eq!(reference.window_frequency(first), Some(first_count));
                        assert_eq!(reference.window_frequency(second), Some(second_count));
                        assert_eq!(
                            reference.co_window_frequency(first, second),
                            Some(both),
                            "window {window}, pair ({first},{second})"
                        );
                    }
                }
            }
            // Words 0 and 5 share no topic, so their pair is not counted.
            assert_eq!(reference.co_window_frequency(0, 5), None);
        }
    }

    #[test]
    fn cv_matches_a_hand_computed_case() {
        // Source: definition of C_V in Röder, Both & Hinneburg 2015 (one-set segmentation, NPMI
        // context vectors, cosine, mean), worked by hand on the METHODS.md section 8 NPMI reference.
        // With x = NPMI(a,b) = ln(4/3)/ln 2, NPMI(a,c) = NPMI(b,c) = -1 and each word's NPMI with
        // itself 1, the context vectors are
        //   v(a) = (1, x, -1), v(b) = (x, 1, -1), v(c) = (-1, -1, 1), and v(W) = (x, x, -1).
        //   cos(v(a), v(W)) = cos(v(b), v(W)) = (x + x^2 + 1) / (sqrt(2 + x^2) sqrt(2x^2 + 1))
        //   cos(v(c), v(W)) = -(2x + 1) / (sqrt(3) sqrt(2x^2 + 1))
        // C_V = (2 cos(a) + cos(c)) / 3 = 0.3154541... (x = 0.4150375).
        let documents = npmi_fixture_documents();
        let topics = vec![vec![A, B, C]];
        let reference = WindowCooccurrence::from_documents(&documents, &topics, 110).unwrap();
        let x = (4.0f64 / 3.0).ln() / 2.0f64.ln();
        let cos_a = (x + x * x + 1.0) / ((2.0 + x * x).sqrt() * (2.0 * x * x + 1.0).sqrt());
        let cos_c = -(2.0 * x + 1.0) / (3.0f64.sqrt() * (2.0 * x * x + 1.0).sqrt());
        let expected = (2.0 * cos_a + cos_c) / 3.0;
        assert_close(expected, 0.3154541, 1e-7);
        assert_close(cv(&[A, B, C], &reference, 1e-12).unwrap(), expected, 1e-9);
    }

    #[test]
    fn cv_is_one_for_words_that_always_cooccur() {
        // Source: Röder et al. 2015 definition: words that only occur together have NPMI 1 with each
        // other and themselves (Bouma 2009), so all context vectors are equal and every cosine is 1.
        let topics = vec![vec![A, B, C]];
        let documents = vec![vec![A, B, C], vec![C, A, B], vec![D], vec![E, D]];
        let reference = WindowCooccurrence::from_documents(&documents, &topics, 110).unwrap();
        assert_close(cv(&[A, B, C], &reference, 1e-12).unwrap(), 1.0, 1e-9);
        // The same when they fill every window (NPMI 1 by the documented rule).
        let everywhere =
            WindowCooccurrence::from_documents([vec![A, B, C], vec![B, C, A]], &topics, 110).unwrap();
        assert_close(cv(&[A, B, C], &everywhere, 1e-12).unwrap(), 1.0, 1e-12);
        // Source: Röder et al. 2015 definition, by hand: with documents {a,b}, {c}, {d}, a and b only
        // occur together (NPMI 1) and c never meets them (NPMI -1), so v(a) = v(b) = (1, 1, -1),
        // v(c) = (-1, -1, 1), v(W) = (1, 1, -1); the cosines are 1, 1 and -1, and C_V = 1/3.
        let split = WindowCooccurrence::from_documents([vec![A, B], vec![C], vec![D]], &topics, 110).unwrap();
        assert_close(cv(&[A, B, C], &split, 1e-12).unwrap(), 1.0 / 3.0, 1e-9);
    }

    #[test]
    fn score_topics_combines_the_three_scores() {
        // Source: METHODS.md section 8 fixtures, through the batch function: UMass ln(2/3) on whole
        // documents; the documents are shorter than both windows, so NPMI and C_V see one window per
        // document (P(a) = 3/4, P(b) = 1/2, P(c) = 1/2, P(a,b) = 1/2, P(a,c) = P(b,c) = 1/4).
        let documents: Vec<&[u32]> = vec![&[A, B], &[A, B, C], &[A], &[C]];
        let topics = vec![vec![A, B, C], vec![C, A]];
        let settings = CoherenceSettings::default();
        assert_eq!(
            settings,
            CoherenceSettings {
                npmi_window: 10,
                cv_window: 110,
                epsilon: 1e-12
            }
        );
        let scores = score_topics(&topics, &documents, &settings).unwrap();
        assert_eq!(scores.len(), 2);
        assert_eq!(scores[0].topic, 0);
        assert_eq!(scores[1].topic, 1);
        assert_close(scores[0].umass, (2.0f64 / 3.0).ln(), 1e-12);
        // Topic [c, a]: m = a, l = c: ln((D(a,c)+1)/D(c)) = ln(2/2) = 0.
        assert_close(scores[1].umass, 0.0, 1e-12);
        // NPMI(c,a) by hand: P(a,c) = 1/4, P(a)P(c) = 3/8, ln(2/3) / ln 4.
        assert_close(scores[1].npmi, (2.0f64 / 3.0).ln() / 4.0f64.ln(), 1e-9);
        let windows = WindowCooccurrence::from_documents(&documents, &topics, 110).unwrap();
        assert_close(scores[0].cv, cv(&[A, B, C], &windows, 1e-12).unwrap(), 1e-15);
        assert_close(scores[0].npmi, npmi(&[A, B, C], &windows, 1e-12).unwrap(), 1e-15);
        assert_eq!(scores[0].unseen_words, 0);
        // The same window for both scores gives the same results.
        let same_window = CoherenceSettings {
            npmi_window: 10,
            cv_window: 10,
            epsilon: 1e-12,
        };
        let again = score_topics(&topics, &documents, &same_window).unwrap();
        assert_close(again[0].cv, scores[0].cv, 1e-15);
        // Source: common practice: a negative smoothing constant is refused before any topic is scored.
        let negative = CoherenceSettings {
            epsilon: -1.0,
            ..CoherenceSettings::default()
        };
        assert_eq!(
            score_topics(&topics, &documents, &negative).unwrap_err(),
            CoherenceError::EpsilonOutOfRange {
                epsilon: -1.0,
                windows: 4
            }
        );
        // Source: arithmetic mean.
        let means = mean_coherence(&scores).unwrap();
        assert_close(means.umass, (scores[0].umass + scores[1].umass) / 2.0, 1e-15);
        assert_close(means.npmi, (scores[0].npmi + scores[1].npmi) / 2.0, 1e-15);
        assert_close(means.cv, (scores[0].cv + scores[1].cv) / 2.0, 1e-15);
        assert_eq!(mean_coherence(&[]), None);
    }

    #[test]
    fn empty_references_are_refused() {
        // Source: common practice: frequencies of an empty collection are undefined (0/0).
        let topics = vec![vec![A, B]];
        let none: Vec<Vec<u32>> = Vec::new();
        assert_eq!(
            DocumentCooccurrence::from_documents(&none, &topics).unwrap_err(),
            CoherenceError::EmptyReference { documents: 0 }
        );
        assert_eq!(
            WindowCooccurrence::from_documents(&none, &topics, 10).unwrap_err(),
            CoherenceError::EmptyReference { documents: 0 }
        );
        let blank: Vec<Vec<u32>> = vec![vec![], vec![]];
        assert_eq!(
            DocumentCooccurrence::from_documents(&blank, &topics).unwrap_err(),
            CoherenceError::EmptyReference { documents: 2 }
        );
        assert_eq!(
            score_topics(&topics, &blank, &CoherenceSettings::default()).unwrap_err(),
            CoherenceError::EmptyReference { documents: 2 }
        );
    }

    #[test]
    fn windows_below_two_are_refused() {
        // Source: common practice: a co-occurrence needs two positions in one window.
        let topics = vec![vec![A, B]];
        let documents = vec![vec![A, B]];
        for window in [0, 1] {
            assert_eq!(
                WindowCooccurrence::from_documents(&documents, &topics, window).unwrap_err(),
                CoherenceError::WindowTooSmall { window }
            );
        }
        let settings = CoherenceSettings {
            cv_window: 1,
            ..CoherenceSettings::default()
        };
        assert_eq!(
            score_topics(&topics, &documents, &settings).unwrap_err(),
            CoherenceError::WindowTooSmall { window: 1 }
        );
        assert!(WindowCooccurrence::from_documents(&documents, &topics, 2).is_ok());
    }

    #[test]
    fn bad_scoring_inputs_are_refused() {
        // Source: common practice: coherence is defined over pairs of counted words.
        let documents = npmi_fixture_documents();
        let topics = vec![vec![A, B], vec![C, D]];
        let windows = WindowCooccurrence::from_documents(&documents, &topics, 10).unwrap();
        let whole = DocumentCooccurrence::from_documents(&documents, &topics).unwrap();
        assert_eq!(
            umass(&[A], &whole).unwrap_err(),
            CoherenceError::TooFewTopWords { count: 1 }
        );
        assert_eq!(
            npmi(&[], &windows, 1e-12).unwrap_err(),
            CoherenceError::TooFewTopWords { count: 0 }
        );
        assert_eq!(
            cv(&[A], &windows, 1e-12).unwrap_err(),
            CoherenceError::TooFewTopWords { count: 1 }
        );
        assert_eq!(
            umass(&[A, E], &whole).unwrap_err(),
            CoherenceError::WordNotTracked { word_id: E }
        );
        assert_eq!(
            npmi(&[A, C], &windows, 1e-12).unwrap_err(),
            CoherenceError::PairNotTracked { first: A, second: C }
        );
        for epsilon in [-1e-12, f64::NAN, f64::INFINITY, 0.25] {
            // 0.25 is 1/4 with 4 windows: no longer below the probability of one window.
            assert!(matches!(
                pair_npmi(A, B, &windows, epsilon).unwrap_err(),
                CoherenceError::EpsilonOutOfRange { windows: 4, .. }
            ));
        }
        // Source: Bouma 2009 NPMI without smoothing, P(a,b)=0.5: epsilon 0 is allowed.
        assert_close(
            pair_npmi(A, B, &windows, 0.0).unwrap(),
            (4.0f64 / 3.0).ln() / 2.0f64.ln(),
            1e-12,
        );
        let short_topic = vec![vec![A, B], vec![C]];
        let error = score_topics(&short_topic, &documents, &CoherenceSettings::default()).unwrap_err();
        assert_eq!(
            error,
            CoherenceError::Topic {
                topic: 1,
                source: Box::new(CoherenceError::TooFewTopWords { count: 1 })
            }
        );
        assert_eq!(error.to_string(), "topic 1");
        let source = std::error::Error::source(&error)
            .map(|inner| inner.to_string())
            .unwrap_or_default();
        assert!(source.contains("at least 2"), "{source}");
    }
}
