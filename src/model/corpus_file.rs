//! The corpus file and the corpus part of the model file: their on-disk
//! shapes, written from borrowed data and read into owned data, and the
//! checks a decoded corpus must pass before anything uses it.
//!
//! postcard writes struct fields in declaration order and enum variants by
//! position, so these shapes are the format: they belong to this module,
//! not to the in-memory [`Corpus`], and are never reordered. A change of
//! shape is a new format version with a reader of its own.

#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing,
        clippy::panic
    )
)]

use std::collections::HashSet;
use std::path::Path;

use serde::{Deserialize, Serialize, Serializer};

use super::format::{self, FileKind, FormatError};
use crate::fitting::sampler::MAX_TOKENS;
use crate::ingest::corpus::{Corpus, DocumentInfo};
use crate::ingest::tokenize::TokenizerSettings;
use crate::ingest::vocab::Vocabulary;

/// Writes `corpus` as a corpus file, crash-safely.
pub fn save_corpus(corpus: &Corpus, path: &Path) -> Result<(), FormatError> {
    format::write_file(FileKind::Corpus, &CorpusOut::of(corpus), path)
}

/// The encoded corpus file image of `corpus` (for staged writes).
pub fn encode_corpus(corpus: &Corpus, path: &Path) -> Result<Vec<u8>, FormatError> {
    format::encode(FileKind::Corpus, &CorpusOut::of(corpus), path)
}

/// Reads a corpus file of any readable version and checks its contents.
pub fn load_corpus(path: &Path) -> Result<Corpus, FormatError> {
    decode_corpus(format::read_bytes(path)?, path)
}

/// Decodes a corpus file image of any readable version and checks its
/// contents (`path` names it in errors).
pub fn decode_corpus(bytes: Vec<u8>, path: &Path) -> Result<Corpus, FormatError> {
    let shape = format::decode_versioned(FileKind::Corpus, &bytes, path, |version, payload| {
        if version == 1 {
            Ok(format::decode_payload::<CorpusV1>(payload, path)?.upgrade())
        } else {
            format::decode_payload::<CorpusV2>(payload, path)
        }
    })?;
    drop(bytes);
    shape.into_corpus(path)
}

/// The corpus as written (format 2 of the corpus file; also inside model
/// files of format 3).
#[derive(Serialize)]
pub(super) struct CorpusOut<'a> {
    tokenizer: TokenizerOut<'a>,
    vocabulary: VocabularyOut<'a>,
    #[serde(serialize_with = "documents_out")]
    documents: &'a [DocumentInfo],
    offsets: &'a [u64],
    pub(super) tokens: &'a [u32],
}

impl<'a> CorpusOut<'a> {
    pub(super) fn of(corpus: &'a Corpus) -> CorpusOut<'a> {
        let tokenizer = &corpus.tokenizer;
        CorpusOut {
            tokenizer: TokenizerOut {
                lowercase: tokenizer.lowercase,
                drop_numbers: tokenizer.drop_numbers,
                min_length: tokenizer.min_length as u64,
                max_length: tokenizer.max_length as u64,
                stopwords: &tokenizer.stopwords,
                stopword_sources: &tokenizer.stopword_sources,
                stemmer: tokenizer.stemmer.as_deref(),
            },
            vocabulary: VocabularyOut {
                words: corpus.vocabulary.words(),
                word_counts: corpus.vocabulary.word_counts(),
                doc_counts: corpus.vocabulary.doc_counts(),
                surface_forms: corpus.vocabulary.surface_forms(),
            },
            documents: &corpus.documents,
            offsets: &corpus.offsets,
            tokens: &corpus.tokens,
        }
    }
}

fn documents_out<S: Serializer>(documents: &&[DocumentInfo], serializer: S) -> Result<S::Ok, S::Error> {
    serializer.collect_seq(documents.iter().map(|document| DocumentOut {
        id: &document.id,
        label: document.label.as_deref(),
        date: document.date.as_deref(),
        source: &document.source,
    }))
}

#[derive(Serialize)]
struct TokenizerOut<'a> {
    lowercase: bool,
    drop_numbers: bool,
    min_length: u64,
    max_length: u64,
    stopwords: &'a [String],
    stopword_sources: &'a [String],
    stemmer: Option<&'a str>,
}

#[derive(Serialize)]
struct VocabularyOut<'a> {
    words: &'a [String],
    word_counts: &'a [u64],
    doc_counts: &'a [u32],
    surface_forms: &'a [String],
}

#[derive(Serialize)]
struct DocumentOut<'a> {
    id: &'a str,
    label: Option<&'a str>,
    date: Option<&'a str>,
    source: &'a str,
}

/// The corpus as read (format 2; the same shape as [`CorpusOut`]).
#[derive(Deserialize)]
pub(super) struct CorpusV2 {
    tokenizer: TokenizerV1,
    vocabulary: VocabularyV2,
    documents: Vec<DocumentV2>,
    offsets: Vec<u64>,
    tokens: Vec<u32>,
}

#[derive(Deserialize)]
struct VocabularyV2 {
    words: Vec<String>,
    word_counts: Vec<u64>,
    doc_counts: Vec<u32>,
    surface_forms: Vec<String>,
}

#[derive(Deserialize)]
struct DocumentV2 {
    id: String,
    label: Option<String>,
    date: Option<String>,
    source: String,
}

/// The corpus of format 1 (also inside model files of formats 1 and 2): no
/// surface forms, no dates.
#[derive(Deserialize)]
pub(super) struct CorpusV1 {
    tokenizer: TokenizerV1,
    vocabulary: VocabularyV1,
    documents: Vec<DocumentV1>,
    offsets: Vec<u64>,
    tokens: Vec<u32>,
}

impl CorpusV1 {
    /// The same corpus in the format-2 shape.
    pub(super) fn upgrade(self) -> CorpusV2 {
        CorpusV2 {
            tokenizer: self.tokenizer,
            vocabulary: VocabularyV2 {
                words: self.vocabulary.words,
                word_counts: self.vocabulary.word_counts,
                doc_counts: self.vocabulary.doc_counts,
                surface_forms: Vec::new(),
            },
            documents: self
                .documents
                .into_iter()
                .map(|document| DocumentV2 {
                    id: document.id,
                    label: document.label,
                    date: None,
                    source: document.source,
                })
                .collect(),
            offsets: self.offsets,
            tokens: self.tokens,
        }
    }
}

#[derive(Deserialize)]
struct TokenizerV1 {
    lowercase: bool,
    drop_numbers: bool,
    min_length: u64,
    max_length: u64,
    stopwords: Vec<String>,
    stopword_sources: Vec<String>,
    stemmer: Option<String>,
}

#[derive(Deserialize)]
struct VocabularyV1 {
    words: Vec<String>,
    word_counts: Vec<u64>,
    doc_counts: Vec<u32>,
}

#[derive(Deserialize)]
struct DocumentV1 {
    id: String,
    label: Option<String>,
    source: String,
}

impl CorpusV2 {
    /// The corpus in memory, once every invariant is checked: word lists of
    /// one length (surface forms: none or one per word) without repeats, sane token length bounds, offsets that
    /// start at 0, never decrease and end at the token count, one offset
    /// per document plus one, and every token a vocabulary word.
    pub(super) fn into_corpus(self, path: &Path) -> Result<Corpus, FormatError> {
        let invalid = |detail: String| FormatError::Invalid {
            path: path.to_path_buf(),
            detail,
        };
        let vocabulary = self.vocabulary;
        let n_words = vocabulary.words.len();
        if !vocabulary.surface_forms.is_empty() && vocabulary.surface_forms.len() != n_words {
            return Err(invalid(format!(
                "the vocabulary has {n_words} words but {} surface forms",
                vocabulary.surface_forms.len()
            )));
        }
        if vocabulary.word_counts.len() != n_words || vocabulary.doc_counts.len() != n_words {
            return Err(invalid(format!(
                "the vocabulary has {n_words} words but {} token counts and {} document counts",
                vocabulary.word_counts.len(),
                vocabulary.doc_counts.len()
            )));
        }
        let mut seen = HashSet::with_capacity(n_words);
        if let Some(word) = vocabulary.words.iter().find(|word| !seen.insert(word.as_str())) {
            return Err(invalid(format!("the vocabulary lists the word `{word}` twice")));
        }
        drop(seen);
        let tokenizer = self.tokenizer;
        if tokenizer.min_length == 0 || tokenizer.max_length < tokenizer.min_length {
            return Err(invalid(format!(
                "the token length bounds {}..{} are not usable",
                tokenizer.min_length, tokenizer.max_length
            )));
        }
        if self.tokens.len() > MAX_TOKENS {
            return Err(invalid(format!(
                "{} tokens is more than the {MAX_TOKENS} a corpus can hold",
                self.tokens.len()
            )));
        }
        if self.offsets.len() != self.documents.len() + 1 || self.offsets.first() != Some(&0) {
            return Err(invalid(format!(
                "{} document offsets for {} documents (expected one more offset than documents, starting at 0)",
                self.offsets.len(),
                self.documents.len()
            )));
        }
        if let Some(doc) = self
            .offsets
            .iter()
            .zip(self.offsets.iter().skip(1))
            .position(|(start, end)| start > end)
        {
            return Err(invalid(format!("the offsets of document {doc} decrease")));
        }
        if self.offsets.last().copied() != Some(self.tokens.len() as u64) {
            return Err(invalid(format!(
                "the document offsets end at {} but there are {} tokens",
                self.offsets.last().copied().unwrap_or(0),
                self.tokens.len()
            )));
        }
        if let Some((position, word)) = self
            .tokens
            .iter()
            .enumerate()
            .find(|&(_, &word)| word as usize >= n_words)
        {
            return Err(invalid(format!(
                "token {position} is word {word} of a vocabulary of {n_words} words"
            )));
        }
        Ok(Corpus {
            tokenizer: TokenizerSettings {
                lowercase: tokenizer.lowercase,
                drop_numbers: tokenizer.drop_numbers,
                min_length: usize::try_from(tokenizer.min_length).unwrap_or(usize::MAX),
                max_length: usize::try_from(tokenizer.max_length).unwrap_or(usize::MAX),
                stopwords: tokenizer.stopwords,
                stopword_sources: tokenizer.stopword_sources,
                stemmer: tokenizer.stemmer,
            },
            vocabulary: Vocabulary::from_parts(
                vocabulary.words,
                vocabulary.word_counts,
                vocabulary.doc_counts,
            )
            .with_surface_forms(vocabulary.surface_forms),
            documents: self
                .documents
                .into_iter()
                .map(|document| DocumentInfo {
                    id: document.id,
                    label: document.label,
                    date: document.date,
                    source: document.source,
                })
                .collect(),
            offsets: self.offsets,
            tokens: self.tokens,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn corpus() -> Corpus {
        let vocabulary = Vocabulary::from_parts(
            vec!["quay".into(), "tide".into(), "ferry".into()],
            vec![3, 2, 1],
            vec![2, 2, 1],
        );
        let mut corpus = Corpus::from_documents(vocabulary, vec![vec![0, 1, 0], vec![1, 2, 0]]);
        corpus.documents[1].label = Some("harbour".into());
        corpus.documents[0].date = Some("2024-03-01".into());
        corpus.vocabulary =
            corpus
                .vocabulary
                .with_surface_forms(vec!["quays".into(), "tides".into(), "ferry".into()]);
        corpus
    }

    fn decode(bytes: &[u8]) -> Result<Corpus, FormatError> {
        let path = Path::new("c.bin");
        format::decode_versioned(FileKind::Corpus, bytes, path, |_, payload| {
            format::decode_payload::<CorpusV2>(payload, path)
        })?
        .into_corpus(path)
    }

    #[test]
    fn what_is_written_reads_back_equal() {
        // Source: common practice — a file format must round-trip.
        let corpus = corpus();
        let bytes = encode_corpus(&corpus, Path::new("c.bin")).unwrap();
        assert_eq!(decode(&bytes).unwrap(), corpus);
    }

    /// Encodes a corpus shape with one field broken by `damage`.
    fn with_damage(damage: impl FnOnce(&mut CorpusParts)) -> Vec<u8> {
        let corpus = corpus();
        let mut parts = CorpusParts {
            words: corpus.vocabulary.words().to_vec(),
            word_counts: corpus.vocabulary.word_counts().to_vec(),
            doc_counts: corpus.vocabulary.doc_counts().to_vec(),
            documents: corpus.documents.clone(),
            offsets: corpus.offsets.clone(),
            tokens: corpus.tokens.clone(),
            min_length: 3,
        };
        damage(&mut parts);
        let mut out = CorpusOut::of(&corpus);
        out.vocabulary = VocabularyOut {
            words: &parts.words,
            word_counts: &parts.word_counts,
            doc_counts: &parts.doc_counts,
            surface_forms: &[],
        };
        out.tokenizer.min_length = parts.min_length;
        out.documents = &parts.documents;
        out.offsets = &parts.offsets;
        out.tokens = &parts.tokens;
        format::encode(FileKind::Corpus, &out, Path::new("c.bin")).unwrap()
    }

    struct CorpusParts {
        words: Vec<String>,
        word_counts: Vec<u64>,
        doc_counts: Vec<u32>,
        documents: Vec<DocumentInfo>,
        offsets: Vec<u64>,
        tokens: Vec<u32>,
        min_length: u64,
    }

    #[test]
    fn a_valid_checksum_over_inconsistent_contents_is_refused_with_a_reason() {
        // Source: common practice — a checksum proves the bytes arrived, not
        // that the writer was right; every invariant is checked on load.
        type Damage = Box<dyn FnOnce(&mut CorpusParts)>;
        let cases: Vec<(Damage, &str)> = vec![
            (Box::new(|p| p.tokens[4] = 7), "token 4 is word 7"),
            (Box::new(|p| p.offsets[1] = 9), "offsets of document 1 decrease"),
            (
                Box::new(|p| p.offsets.pop().map(drop).unwrap_or(())),
                "document offsets for 2 documents",
            ),
            (
                Box::new(|p| *p.offsets.last_mut().unwrap() = 5),
                "end at 5 but there are 6 tokens",
            ),
            (Box::new(|p| p.words[2] = "quay".into()), "the word `quay` twice"),
            (Box::new(|p| p.word_counts.push(1)), "3 words but 4 token counts"),
            (Box::new(|p| p.min_length = 0), "token length bounds"),
        ];
        for (damage, expected) in cases {
            let err = decode(&with_damage(damage)).unwrap_err();
            assert!(matches!(err, FormatError::Invalid { .. }), "{err}");
            assert!(err.is_bad_input());
            assert!(
                err.to_string().contains(expected),
                "{err} (expected `{expected}`)"
            );
        }
    }

    #[test]
    fn every_single_byte_change_and_every_truncation_of_a_corpus_file_is_refused() {
        // Source: as for model files (CRC-32 catches every changed byte of
        // the payload; the header is checked; an older version's shape must
        // not decode a newer payload into a corpus): every value of every
        // byte is tried.
        let path = Path::new("c.bin");
        let bytes = encode_corpus(&corpus(), path).unwrap();
        for position in 0..bytes.len() {
            for value in 0..=255u8 {
                if value == bytes[position] {
                    continue;
                }
                let mut changed = bytes.clone();
                changed[position] = value;
                assert!(
                    decode_corpus(changed, path).is_err(),
                    "byte {position} set to {value} loaded"
                );
            }
        }
        for cut in 0..bytes.len() {
            assert!(
                decode_corpus(bytes[..cut].to_vec(), path).is_err(),
                "cut at {cut} loaded"
            );
        }
        assert_eq!(decode_corpus(bytes, path).unwrap(), corpus());
    }
}
