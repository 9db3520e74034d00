//! The vocabulary: word counts and document counts gathered while reading,
//! pruning rules, and the final word list with deterministic ids.
//!
//! Word ids are assigned after pruning: most frequent word first, ties broken
//! by the word's bytes, so the same corpus always gets the same ids whatever
//! order the words were first seen in.

use std::collections::{HashMap, HashSet};

use serde::{Deserialize, Serialize};

/// Rules that decide which words stay in the vocabulary.
#[derive(Clone, Debug, PartialEq)]
pub struct PruneRules {
    /// Keep words that appear in at least this many documents.
    pub min_docs: u32,
    /// Drop words that appear in more than this share of documents (0..=1).
    pub max_doc_share: f64,
    /// Keep at most this many words (most frequent first); `None` for no cap.
    pub max_words: Option<usize>,
    /// Words always kept (if they occur at all), whatever the other rules say.
    pub keep: HashSet<String>,
    /// Words always dropped.
    pub drop: HashSet<String>,
}

/// Words are kept when found in at least this many documents, by default.
pub const DEFAULT_MIN_DOCS: u32 = 2;
/// Words found in more than this share of documents are dropped, by default.
pub const DEFAULT_MAX_DOC_SHARE: f64 = 0.5;

impl Default for PruneRules {
    fn default() -> Self {
        PruneRules {
            min_docs: DEFAULT_MIN_DOCS,
            max_doc_share: DEFAULT_MAX_DOC_SHARE,
            max_words: None,
            keep: HashSet::new(),
            drop: HashSet::new(),
        }
    }
}

/// Why words left the vocabulary, for the build summary.
#[derive(Clone, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct PruneReport {
    /// Distinct words seen before pruning.
    pub words_seen: usize,
    /// Dropped for appearing in too few documents.
    pub too_rare: usize,
    /// Dropped for appearing in too many documents.
    pub too_common: usize,
    /// Dropped by the vocabulary size cap.
    pub over_cap: usize,
    /// Dropped by the user's drop list.
    pub dropped_by_list: usize,
}

/// The final word list with per-word statistics from the training documents.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Vocabulary {
    words: Vec<String>,
    word_counts: Vec<u64>,
    doc_counts: Vec<u32>,
    /// The form each word is shown in (for a stem, a surface form it stands
    /// for); empty when every word is shown as it is.
    surface_forms: Vec<String>,
    index: HashMap<String, u32>,
}

impl Vocabulary {
    /// Builds a vocabulary from parallel lists (word, token count, document count).
    pub fn from_parts(words: Vec<String>, word_counts: Vec<u64>, doc_counts: Vec<u32>) -> Vocabulary {
        let mut vocabulary = Vocabulary {
            words,
            word_counts,
            doc_counts,
            surface_forms: Vec::new(),
            index: HashMap::new(),
        };
        vocabulary.rebuild_index();
        vocabulary
    }

    /// Restores the word → id map after decoding (it is not stored on disk).
    pub fn rebuild_index(&mut self) {
        self.index = self
            .words
            .iter()
            .enumerate()
            .map(|(id, word)| (word.clone(), id as u32))
            .collect();
    }

    /// Number of words.
    pub fn len(&self) -> usize {
        self.words.len()
    }

    /// True when there are no words.
    pub fn is_empty(&self) -> bool {
        self.words.is_empty()
    }

    /// The word with id `id`.
    pub fn word(&self, id: u32) -> &str {
        &self.words[id as usize]
    }

    /// All words in id order.
    pub fn words(&self) -> &[String] {
        &self.words
    }

    /// How word `id` is shown to people: its surface form when one was kept
    /// (a stem shows a word it stands for), else the word itself. The word
    /// stays the key for lookups.
    pub fn display(&self, id: u32) -> &str {
        self.surface_forms
            .get(id as usize)
            .unwrap_or(&self.words[id as usize])
    }

    /// The surface forms in id order (empty when words are shown as they are).
    pub fn surface_forms(&self) -> &[String] {
        &self.surface_forms
    }

    /// Sets the surface forms, one per word in id order, or none.
    ///
    /// # Panics
    /// When `forms` is neither empty nor one per word.
    pub fn with_surface_forms(mut self, forms: Vec<String>) -> Vocabulary {
        assert!(
            forms.is_empty() || forms.len() == self.words.len(),
            "one surface form per word"
        );
        self.surface_forms = forms;
        self
    }

    /// The id of `word`, if it is in the vocabulary.
    pub fn id(&self, word: &str) -> Option<u32> {
        self.index.get(word).copied()
    }

    /// Tokens of each word in the training documents, by id.
    pub fn word_counts(&self) -> &[u64] {
        &self.word_counts
    }

    /// Training documents containing each word, by id.
    pub fn doc_counts(&self) -> &[u32] {
        &self.doc_counts
    }
}

/// Gathers counts for words seen while reading; words get provisional ids in
/// first-seen order, so documents can be stored as small integers before the
/// final vocabulary is known.
///
/// When tokens are stems, [`VocabBuilder::add_token_with_surface`] also
/// counts the words each stem was made from, and the most frequent of them
/// (ties to the first in byte order) becomes the stem's surface form.
#[derive(Debug, Default)]
pub struct VocabBuilder {
    provisional: HashMap<String, u32>,
    words: Vec<String>,
    word_counts: Vec<u64>,
    doc_counts: Vec<u32>,
    last_doc: Vec<u32>,
    documents: u32,
    serial: u32,
    /// Per provisional id, the surface forms seen with their counts (kept
    /// only when surfaces are added; a stem has few forms, so a short list).
    surfaces: Vec<Vec<(String, u64)>>,
}

impl VocabBuilder {
    /// An empty builder.
    pub fn new() -> VocabBuilder {
        VocabBuilder::default()
    }

    /// Starts counting a new document; call before its tokens.
    pub fn start_document(&mut self) {
        self.documents += 1;
        self.serial += 1;
    }

    /// Counts one token of the current document and returns its provisional id.
    pub fn add_token(&mut self, token: &str) -> u32 {
        let id = match self.provisional.get(token) {
            Some(&id) => id,
            None => {
                let id = self.words.len() as u32;
                self.provisional.insert(token.to_string(), id);
                self.words.push(token.to_string());
                self.word_counts.push(0);
                self.doc_counts.push(0);
                self.last_doc.push(0);
                id
            }
        };
        let slot = id as usize;
        self.word_counts[slot] += 1;
        if self.last_doc[slot] != self.serial {
            self.last_doc[slot] = self.serial;
            self.doc_counts[slot] += 1;
        }
        id
    }

    /// [`VocabBuilder::add_token`] for a stem, counting the word it was
    /// made from as one of its surface forms.
    pub fn add_token_with_surface(&mut self, token: &str, surface: &str) -> u32 {
        let id = self.add_token(token);
        let slot = id as usize;
        if self.surfaces.len() <= slot {
            self.surfaces.resize_with(slot + 1, Vec::new);
        }
        let forms = &mut self.surfaces[slot];
        match forms.iter_mut().find(|(form, _)| form == surface) {
            Some((_, count)) => *count += 1,
            None => forms.push((surface.to_string(), 1)),
        }
        id
    }

    /// The surface form of provisional id `slot`: the most frequent, ties
    /// to the first in byte order; the word itself when none was counted.
    fn surface_of(&self, slot: usize) -> String {
        self.surfaces
            .get(slot)
            .and_then(|forms| {
                forms
                    .iter()
                    .max_by(|a, b| a.1.cmp(&b.1).then_with(|| b.0.cmp(&a.0)))
                    .map(|(form, _)| form.clone())
            })
            .unwrap_or_else(|| self.words[slot].clone())
    }

    /// Forgets the counts of a document that will not be kept (its tokens by
    /// provisional id), e.g. a document dropped after tokenizing.
    pub fn remove_document(&mut self, provisional_ids: &[u32]) {
        let mut seen = HashSet::new();
        for &id in provisional_ids {
            let slot = id as usize;
            self.word_counts[slot] -= 1;
            if seen.insert(id) {
                self.doc_counts[slot] -= 1;
            }
        }
        self.documents -= 1;
    }

    /// Documents counted so far.
    pub fn documents(&self) -> u32 {
        self.documents
    }

    /// Applies the pruning rules. Returns the vocabulary, a map from
    /// provisional id to final id (`None` for pruned words) and a report.
    pub fn finish(self, rules: &PruneRules) -> (Vocabulary, Vec<Option<u32>>, PruneReport) {
        let mut report = PruneReport {
            words_seen: self
                .words
                .iter()
                .zip(&self.word_counts)
                .filter(|(_, c)| **c > 0)
                .count(),
            ..PruneReport::default()
        };
        let max_docs = (rules.max_doc_share * f64::from(self.documents)).floor() as u64;
        let mut candidates: Vec<u32> = Vec::new();
        for (id, word) in self.words.iter().enumerate() {
            let docs = u64::from(self.doc_counts[id]);
            if self.word_counts[id] == 0 {
                continue;
            }
            if rules.drop.contains(word) {
                report.dropped_by_list += 1;
            } else if rules.keep.contains(word) {
                candidates.push(id as u32);
            } else if docs < u64::from(rules.min_docs) {
                report.too_rare += 1;
            } else if docs > max_docs {
                report.too_common += 1;
            } else {
                candidates.push(id as u32);
            }
        }
        let order = |a: &u32, b: &u32| {
            let (a, b) = (*a as usize, *b as usize);
            self.word_counts[b]
                .cmp(&self.word_counts[a])
                .then_with(|| self.words[a].cmp(&self.words[b]))
        };
        candidates.sort_by(order);
        if let Some(cap) = rules.max_words {
            // Words on the keep list survive the cap; the rest fill what is left.
            if candidates.len() > cap {
                let (kept, rest): (Vec<u32>, Vec<u32>) = candidates
                    .iter()
                    .partition(|&&id| rules.keep.contains(&self.words[id as usize]));
                let room = cap.saturating_sub(kept.len());
                report.over_cap = rest.len().saturating_sub(room);
                let mut merged: Vec<u32> = kept.into_iter().chain(rest.into_iter().take(room)).collect();
                merged.sort_by(order);
                candidates = merged;
            }
        }
        let mut remap = vec![None; self.words.len()];
        let mut words = Vec::with_capacity(candidates.len());
        let mut word_counts = Vec::with_capacity(candidates.len());
        let mut doc_counts = Vec::with_capacity(candidates.len());
        for (final_id, &id) in candidates.iter().enumerate() {
            remap[id as usize] = Some(final_id as u32);
            words.push(self.words[id as usize].clone());
            word_counts.push(self.word_counts[id as usize]);
            doc_counts.push(self.doc_counts[id as usize]);
        }
        // Surface forms are kept only when some word differs from its own
        // (with stemming), so a corpus without stems stores none.
        let surface_forms: Vec<String> = if self.surfaces.is_empty() {
            Vec::new()
        } else {
            candidates
                .iter()
                .map(|&id| self.surface_of(id as usize))
                .collect()
        };
        let surface_forms = if surface_forms.iter().zip(&words).all(|(form, word)| form == word) {
            Vec::new()
        } else {
            surface_forms
        };
        (
            Vocabulary::from_parts(words, word_counts, doc_counts).with_surface_forms(surface_forms),
            remap,
            report,
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Four documents; word document counts: a 4, b 3, c 2, d 1, e 1.
    fn builder() -> VocabBuilder {
        let mut builder = VocabBuilder::new();
        for doc in [
            vec!["a", "b", "c", "d"],
            vec!["a", "b", "c", "a"],
            vec!["a", "b", "e"],
            vec!["a"],
        ] {
            builder.start_document();
            for token in doc {
                builder.add_token(token);
            }
        }
        builder
    }

    fn rules() -> PruneRules {
        PruneRules {
            min_docs: 1,
            max_doc_share: 1.0,
            ..PruneRules::default()
        }
    }

    fn words(vocabulary: &Vocabulary) -> Vec<&str> {
        vocabulary.words().iter().map(String::as_str).collect()
    }

    #[test]
    fn counts_tokens_and_documents() {
        // Source: common practice — document frequency counts a word once per document.
        let (vocabulary, _, report) = builder().finish(&rules());
        assert_eq!(words(&vocabulary), ["a", "b", "c", "d", "e"]);
        assert_eq!(vocabulary.word_counts(), &[5, 3, 2, 1, 1]);
        assert_eq!(vocabulary.doc_counts(), &[4, 3, 2, 1, 1]);
        assert_eq!(report.words_seen, 5);
    }

    #[test]
    fn min_docs_drops_rare_words() {
        let (vocabulary, remap, report) = builder().finish(&PruneRules {
            min_docs: 2,
            ..rules()
        });
        assert_eq!(words(&vocabulary), ["a", "b", "c"]);
        assert_eq!(report.too_rare, 2);
        // d was provisional id 3; it is gone.
        assert_eq!(remap[3], None);
    }

    #[test]
    fn max_doc_share_drops_common_words() {
        // a is in 4/4 documents, b in 3/4: share 0.75 keeps b, drops a.
        let (vocabulary, _, report) = builder().finish(&PruneRules {
            max_doc_share: 0.75,
            ..rules()
        });
        assert_eq!(words(&vocabulary), ["b", "c", "d", "e"]);
        assert_eq!(report.too_common, 1);
    }

    #[test]
    fn max_words_keeps_most_frequent_with_ties_by_word() {
        let (vocabulary, _, report) = builder().finish(&PruneRules {
            max_words: Some(4),
            ..rules()
        });
        assert_eq!(words(&vocabulary), ["a", "b", "c", "d"]);
        assert_eq!(report.over_cap, 1);
    }

    #[test]
    fn keep_and_drop_lists_override() {
        let mut keep = HashSet::new();
        keep.insert("e".to_string());
        let mut drop = HashSet::new();
        drop.insert("b".to_string());
        let (vocabulary, _, report) = builder().finish(&PruneRules {
            min_docs: 2,
            keep,
            drop,
            ..rules()
        });
        assert_eq!(words(&vocabulary), ["a", "c", "e"]);
        assert_eq!(report.dropped_by_list, 1);
    }

    #[test]
    fn ids_do_not_depend_on_first_seen_order() {
        let mut builder = VocabBuilder::new();
        builder.start_document();
        for token in ["z", "y", "y", "x"] {
            builder.add_token(token);
        }
        let (vocabulary, remap, _) = builder.finish(&rules());
        assert_eq!(words(&vocabulary), ["y", "x", "z"]);
        assert_eq!(remap, vec![Some(2), Some(0), Some(1)]);
        assert_eq!(vocabulary.id("x"), Some(1));
    }

    #[test]
    fn a_stem_is_shown_as_its_most_frequent_word() {
        // Source: issue 11, item 8 — keep, per stem, its most frequent
        // surface form and show it; the stem stays the key. Ties go to the
        // first in byte order (common practice: a stable choice).
        let mut builder = VocabBuilder::new();
        builder.start_document();
        for (stem, word) in [
            ("cattl", "cattle"),
            ("ordin", "ordinance"),
            ("ordin", "ordinances"),
            ("ordin", "ordinances"),
            ("boat", "boats"),
            ("boat", "boat"),
        ] {
            builder.add_token_with_surface(stem, word);
        }
        let (vocabulary, _, _) = builder.finish(&rules());
        let shown = |stem: &str| vocabulary.display(vocabulary.id(stem).unwrap()).to_string();
        assert_eq!(shown("ordin"), "ordinances");
        assert_eq!(shown("cattl"), "cattle");
        assert_eq!(shown("boat"), "boat");
        assert_eq!(vocabulary.id("ordinances"), None, "the stem stays the key");
        // Without stems (every surface the word itself) none are stored.
        let mut plain = VocabBuilder::new();
        plain.start_document();
        plain.add_token_with_surface("harbour", "harbour");
        let (vocabulary, _, _) = plain.finish(&rules());
        assert!(vocabulary.surface_forms().is_empty());
        assert_eq!(vocabulary.display(0), "harbour");
    }

    #[test]
    fn removed_document_is_not_counted() {
        let mut builder = builder();
        builder.start_document();
        let ids: Vec<u32> = ["a", "d", "d"].iter().map(|t| builder.add_token(t)).collect();
        builder.remove_document(&ids);
        builder.start_document();
        builder.add_token("d");
        let (vocabulary, _, _) = builder.finish(&rules());
        assert_eq!(vocabulary.word_counts(), &[5, 3, 2, 2, 1]);
        assert_eq!(vocabulary.doc_counts(), &[4, 3, 2, 2, 1]);
        assert_eq!(builder_documents_after_removal(), 5);
    }

    fn builder_documents_after_removal() -> u32 {
        let mut builder = builder();
        builder.start_document();
        let id = builder.add_token("a");
        builder.remove_document(&[id]);
        builder.start_document();
        builder.documents()
    }
}
