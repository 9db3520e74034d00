//! The corpus: documents as word ids over a fixed vocabulary, together with
//! the tokenizer settings that produced them. Built from raw inputs by
//! streaming (raw text is dropped as soon as it is tokenized) and stored as
//! a framed corpus file.

use std::collections::BTreeMap;
use std::path::PathBuf;

use serde::{Deserialize, Serialize};

use crate::ingest::read::{
    self, Diagnostic, DiagnosticKind, Origin, RawDocument, ReadCounts, ReadError, ReadOptions,
};
use crate::ingest::tokenize::{TokenizeError, Tokenizer, TokenizerSettings};
use crate::ingest::vocab::{PruneReport, PruneRules, VocabBuilder, Vocabulary};

/// What is known of one document besides its tokens.
#[derive(Clone, Debug, PartialEq)]
pub struct DocumentInfo {
    /// The document's id (file path, or the id field of its record).
    pub id: String,
    /// The document's label, when the input has one; kept as metadata only.
    pub label: Option<String>,
    /// The document's date as written in the input, when it has one.
    pub date: Option<String>,
    /// Where it was read from (`file` or `file:line`).
    pub source: String,
}

/// A tokenized corpus.
#[derive(Clone, Debug, PartialEq)]
pub struct Corpus {
    /// How the text was cut into tokens.
    pub tokenizer: TokenizerSettings,
    /// The words and their training statistics.
    pub vocabulary: Vocabulary,
    /// One entry per document.
    pub documents: Vec<DocumentInfo>,
    /// `offsets[d]..offsets[d + 1]` are document `d`'s positions in `tokens`.
    pub offsets: Vec<u64>,
    /// Word ids of all documents, document after document.
    pub tokens: Vec<u32>,
}

impl Corpus {
    /// Number of documents.
    pub fn n_docs(&self) -> usize {
        self.documents.len()
    }

    /// Number of tokens.
    pub fn n_tokens(&self) -> usize {
        self.tokens.len()
    }

    /// The word ids of document `doc_idx`.
    pub fn doc_tokens(&self, doc_idx: usize) -> &[u32] {
        &self.tokens[self.offsets[doc_idx] as usize..self.offsets[doc_idx + 1] as usize]
    }

    /// Builds a corpus in memory from word-id documents (tests and generators).
    pub fn from_documents(vocabulary: Vocabulary, docs: Vec<Vec<u32>>) -> Corpus {
        let mut offsets = vec![0u64];
        let mut tokens = Vec::new();
        let mut documents = Vec::new();
        for (idx, doc) in docs.into_iter().enumerate() {
            tokens.extend_from_slice(&doc);
            offsets.push(tokens.len() as u64);
            documents.push(DocumentInfo {
                id: format!("doc-{idx}"),
                label: None,
                date: None,
                source: String::new(),
            });
        }
        Corpus {
            tokenizer: TokenizerSettings::default(),
            vocabulary,
            documents,
            offsets,
            tokens,
        }
    }
}

/// Everything `build` needs besides the input paths.
#[derive(Clone, Debug)]
pub struct BuildSettings {
    pub read: ReadOptions,
    pub tokenizer: TokenizerSettings,
    pub prune: PruneRules,
    /// Cut documents longer than this many tokens into chunks of it (see
    /// [`chunk_id`]); `None` keeps every document whole.
    pub split_every: Option<usize>,
}

/// A build warns about a document holding more than this share of all
/// tokens (and more than twice the share an even split would give it): it
/// shapes topics on its own.
pub const LARGE_DOCUMENT_SHARE: f64 = 0.2;

/// Separates a document's id from its chunk number in chunk ids.
pub const CHUNK_SEPARATOR: char = '#';

/// The id of chunk `number` (from 1) of document `id`: `id#number`.
pub fn chunk_id(id: &str, number: usize) -> String {
    format!("{id}{CHUNK_SEPARATOR}{number}")
}

/// The documents of `corpus` with their chunks gathered: for each document
/// as read, its id and the range of corpus documents it became (one, or its
/// chunks `id#1`, `id#2`, ... when it was split). Chunks are told by what
/// only splitting makes: consecutive documents read from the same place
/// (file and line) whose ids are one id with `#1`, `#2`, ... appended.
pub fn chunk_groups(corpus: &Corpus) -> Vec<(String, std::ops::Range<usize>)> {
    let documents = &corpus.documents;
    let mut groups = Vec::new();
    let mut doc_idx = 0;
    while doc_idx < documents.len() {
        let first = &documents[doc_idx];
        let parent = first.id.strip_suffix(&format!("{CHUNK_SEPARATOR}1")).filter(|_| {
            documents
                .get(doc_idx + 1)
                .is_some_and(|next| next.source == first.source)
        });
        let mut end = doc_idx + 1;
        if let Some(parent) = parent {
            while end < documents.len()
                && documents[end].source == first.source
                && documents[end].id == chunk_id(parent, end - doc_idx + 1)
            {
                end += 1;
            }
        }
        let id = match parent {
            Some(parent) if end - doc_idx > 1 => parent.to_string(),
            _ => {
                end = doc_idx + 1;
                first.id.clone()
            }
        };
        groups.push((id, doc_idx..end));
        doc_idx = end;
    }
    groups
}

/// What happened during a build, for the summary and the report.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
pub struct BuildSummary {
    /// Documents (files or records) considered.
    pub documents_read: usize,
    /// Documents in the corpus.
    pub documents_kept: usize,
    /// Skipped documents by reason.
    pub skipped: BTreeMap<String, usize>,
    /// Every skipped document with where it came from and why.
    pub diagnostics: Vec<Diagnostic>,
    /// Tokens in the corpus.
    pub tokens: usize,
    /// Tokens the tokenizer produced before vocabulary pruning.
    pub tokens_before_pruning: usize,
    /// Words in the vocabulary.
    pub vocabulary: usize,
    /// How pruning shrank the vocabulary.
    pub pruning: PruneReport,
    /// Documents cut into chunks by `--split-every` (each chunk is counted
    /// in `documents_kept`).
    #[serde(default, skip_serializing_if = "is_zero")]
    pub documents_split: usize,
    /// What is worth saying once about the inputs (a named field no record
    /// has, a document that holds a large share of all tokens).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub warnings: Vec<String>,
}

/// Problems that stop a build.
#[derive(Debug, thiserror::Error)]
pub enum CorpusError {
    #[error(transparent)]
    Read(#[from] ReadError),
    #[error(transparent)]
    Tokenize(#[from] TokenizeError),
    /// Every document was skipped; the summary says why (per reason, and
    /// how many words each pruning rule removed) and lists them.
    #[error(
        "no document has any words left ({}); check the inputs, the text field and the pruning settings",
        .summary.describe()
    )]
    Empty { summary: Box<BuildSummary> },
    /// More tokens than a corpus may hold.
    #[error(
        "the corpus would hold {tokens} tokens, more than the {MAX_TOKENS} a corpus can hold; build it from fewer documents, prune more words (--max-words, --min-docs) or split the collection"
    )]
    TooManyTokens { tokens: usize },
}

fn is_zero(value: &usize) -> bool {
    *value == 0
}

impl BuildSummary {
    /// Skipped documents per reason, e.g. `empty 1, no_tokens 3`.
    pub fn skipped_reasons(&self) -> String {
        self.skipped
            .iter()
            .map(|(reason, count)| format!("{reason} {count}"))
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// What was read, kept and skipped (per reason), and how pruning shrank
    /// the vocabulary, in one line.
    pub fn describe(&self) -> String {
        let skipped: usize = self.skipped.values().sum();
        let reasons = if self.skipped.is_empty() {
            String::new()
        } else {
            format!(": {}", self.skipped_reasons())
        };
        let pruning = &self.pruning;
        format!(
            "{} read, {} kept, {} skipped{reasons}; {} of {} tokens kept; vocabulary {} of {} words seen, dropped: {} too rare, {} too common, {} over the cap, {} listed",
            self.documents_read,
            self.documents_kept,
            skipped,
            self.tokens,
            self.tokens_before_pruning,
            self.vocabulary,
            pruning.words_seen,
            pruning.too_rare,
            pruning.too_common,
            pruning.over_cap,
            pruning.dropped_by_list
        )
    }
}

fn kind_name(kind: DiagnosticKind) -> String {
    serde_json::to_value(kind)
        .ok()
        .and_then(|value| value.as_str().map(str::to_string))
        .unwrap_or_else(|| format!("{kind:?}"))
}

/// The most tokens a corpus may hold, 2^31 - 1: the sampler keeps token
/// positions in 32 bits and counts below 2^31. `build` refuses a larger
/// corpus rather than write a file that no fit could use.
pub const MAX_TOKENS: usize = i32::MAX as usize;

/// Refuses a corpus of more than [`MAX_TOKENS`] kept tokens.
fn check_token_count(tokens: usize) -> Result<(), CorpusError> {
    if tokens > MAX_TOKENS {
        return Err(CorpusError::TooManyTokens { tokens });
    }
    Ok(())
}

/// Reads, tokenizes and prunes the inputs into a corpus (`themata build`).
pub fn build(inputs: &[PathBuf], settings: &BuildSettings) -> Result<(Corpus, BuildSummary), CorpusError> {
    build_from(settings, &mut |diagnostics, warnings, sink| {
        read::read_documents(inputs, &settings.read, diagnostics, warnings, sink)
    })
}

/// Tokenizes and prunes documents already in memory into a corpus, exactly
/// as [`build`] does with documents read from files (the same rules for
/// empty documents and repeated ids, the same tokenizer, pruning, chunking
/// and warnings). Each document's `origin` becomes its recorded source.
/// The Python package builds corpora from lists and data frames this way.
pub fn build_from_documents(
    documents: Vec<RawDocument>,
    settings: &BuildSettings,
) -> Result<(Corpus, BuildSummary), CorpusError> {
    let mut documents = Some(documents);
    build_from(settings, &mut |diagnostics, _warnings, sink| {
        let documents = documents.take().unwrap_or_default();
        Ok(read::offer_documents(
            documents,
            &settings.read,
            diagnostics,
            sink,
        ))
    })
}

/// Where [`build_from`] gets its documents: a call that hands every usable
/// document to the sink (recording skipped ones and warnings) and returns
/// the counts of what it saw.
type DocumentSource<'a> = dyn FnMut(
        &mut Vec<Diagnostic>,
        &mut Vec<String>,
        &mut dyn FnMut(RawDocument),
    ) -> Result<ReadCounts, ReadError>
    + 'a;

/// The build itself: tokenize what `source` hands over, count, prune, drop
/// documents left empty and summarise.
fn build_from(
    settings: &BuildSettings,
    source: &mut DocumentSource<'_>,
) -> Result<(Corpus, BuildSummary), CorpusError> {
    let tokenizer = Tokenizer::new(&settings.tokenizer)?;
    let mut vocab = VocabBuilder::new();
    let mut documents: Vec<DocumentInfo> = Vec::new();
    let mut offsets: Vec<u64> = vec![0];
    let mut tokens: Vec<u32> = Vec::new();
    let mut diagnostics: Vec<Diagnostic> = Vec::new();
    let mut no_tokens: Vec<Diagnostic> = Vec::new();
    let mut warnings: Vec<String> = Vec::new();
    let mut documents_split = 0usize;
    let counts = source(&mut diagnostics, &mut warnings, &mut |doc| {
        let start = tokens.len();
        vocab.start_document();
        // Chunk boundaries: a new chunk (a new document for the
        // vocabulary's counts) starts every `split_every` tokens.
        let mut boundaries = vec![start];
        let mut next_chunk = |tokens: &Vec<u32>, vocab: &mut VocabBuilder| {
            if let Some(every) = settings.split_every
                && tokens.len() - boundaries[boundaries.len() - 1] == every
            {
                boundaries.push(tokens.len());
                vocab.start_document();
            }
        };
        if tokenizer.stems() {
            tokenizer.for_each_token_with_surface(&doc.text, &mut |token, surface| {
                next_chunk(&tokens, &mut vocab);
                tokens.push(vocab.add_token_with_surface(token, surface));
            });
        } else {
            tokenizer.for_each_token(&doc.text, &mut |token| {
                next_chunk(&tokens, &mut vocab);
                tokens.push(vocab.add_token(token));
            });
        }
        if tokens.len() == start {
            vocab.remove_document(&[]);
            no_tokens.push(Diagnostic {
                kind: DiagnosticKind::NoTokens,
                origin: doc.origin.clone(),
                document: Some(doc.id.clone()),
                message: format!("document `{}` has no tokens after tokenizing", doc.id),
            });
            return;
        }
        boundaries.push(tokens.len());
        let chunks = boundaries.len() - 1;
        if chunks > 1 {
            documents_split += 1;
        }
        let source = doc.origin.to_string();
        for (number, &end) in boundaries.iter().enumerate().skip(1) {
            offsets.push(end as u64);
            documents.push(DocumentInfo {
                id: if chunks > 1 {
                    chunk_id(&doc.id, number)
                } else {
                    doc.id.clone()
                },
                label: doc.label.clone(),
                date: doc.date.clone(),
                source: source.clone(),
            });
        }
    })?;
    diagnostics.append(&mut no_tokens);
    let tokens_before_pruning = tokens.len();
    let (vocabulary, remap, pruning) = vocab.finish(&settings.prune);

    // Rewrite provisional ids to final ids in place, dropping pruned words and
    // documents left with nothing.
    let mut kept_docs = Vec::with_capacity(documents.len());
    let mut new_offsets = vec![0u64];
    let mut write = 0usize;
    for (doc_idx, info) in documents.into_iter().enumerate() {
        let (start, end) = (offsets[doc_idx] as usize, offsets[doc_idx + 1] as usize);
        let doc_start = write;
        for read_pos in start..end {
            if let Some(word) = remap[tokens[read_pos] as usize] {
                tokens[write] = word;
                write += 1;
            }
        }
        if write == doc_start {
            diagnostics.push(Diagnostic {
                kind: DiagnosticKind::NoTokens,
                origin: parse_origin(&info.source),
                document: Some(info.id.clone()),
                message: format!(
                    "document `{}` has no words left after vocabulary pruning",
                    info.id
                ),
            });
            continue;
        }
        new_offsets.push(write as u64);
        kept_docs.push(info);
    }
    tokens.truncate(write);
    check_token_count(tokens.len())?;
    tokens.shrink_to_fit();
    warnings.extend(large_documents(&kept_docs, &new_offsets, settings.split_every));

    let mut skipped = BTreeMap::new();
    for diagnostic in &diagnostics {
        *skipped.entry(kind_name(diagnostic.kind)).or_insert(0) += 1;
    }
    let summary = BuildSummary {
        warnings,
        documents_split,
        documents_read: counts.records_seen,
        documents_kept: kept_docs.len(),
        skipped,
        diagnostics,
        tokens: tokens.len(),
        tokens_before_pruning,
        vocabulary: vocabulary.len(),
        pruning,
    };
    if kept_docs.is_empty() {
        return Err(CorpusError::Empty {
            summary: Box::new(summary),
        });
    }
    let corpus = Corpus {
        tokenizer: settings.tokenizer.clone(),
        vocabulary,
        documents: kept_docs,
        offsets: new_offsets,
        tokens,
    };
    Ok((corpus, summary))
}

/// Warnings about documents that hold more than [`LARGE_DOCUMENT_SHARE`] of
/// all tokens and more than twice an even share.
fn large_documents(documents: &[DocumentInfo], offsets: &[u64], split_every: Option<usize>) -> Vec<String> {
    let total = offsets.last().copied().unwrap_or(0) as f64;
    if total == 0.0 {
        return Vec::new();
    }
    let even = 1.0 / documents.len() as f64;
    let threshold = LARGE_DOCUMENT_SHARE.max(2.0 * even);
    let advice = match split_every {
        Some(every) => {
            format!("it is still longer than the others; a smaller --split-every than {every} cuts it finer")
        }
        None => {
            "cut long documents into chunks with --split-every N (split_every in a config file), e.g. 500"
                .to_string()
        }
    };
    documents
        .iter()
        .enumerate()
        .filter_map(|(doc_idx, info)| {
            let length = offsets[doc_idx + 1] - offsets[doc_idx];
            let share = length as f64 / total;
            (share > threshold).then(|| {
                format!(
                    "document `{}` holds {:.0}% of all tokens ({length} of {total}); one document this large shapes topics on its own: {advice}",
                    info.id,
                    100.0 * share
                )
            })
        })
        .collect()
}

fn parse_origin(source: &str) -> Origin {
    match source.rsplit_once(':') {
        Some((file, line)) if line.parse::<u64>().is_ok() => Origin {
            file: file.to_string(),
            line: line.parse().ok(),
        },
        _ => Origin {
            file: source.to_string(),
            line: None,
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_corpus_over_the_token_limit_is_refused_at_build() {
        // Source: the sampler's own limit (fitting::sampler::MAX_TOKENS, 32-bit
        // positions; common practice for i32-indexed arrays).
        assert!(check_token_count(MAX_TOKENS).is_ok());
        let error = check_token_count(MAX_TOKENS + 1).unwrap_err().to_string();
        assert!(
            error.contains("2147483648 tokens, more than the 2147483647"),
            "{error}"
        );
    }

    fn settings(split_every: Option<usize>) -> BuildSettings {
        BuildSettings {
            read: ReadOptions::default(),
            tokenizer: TokenizerSettings::default()
                .with_length_bounds(1, 40)
                .with_stopwords(Vec::new(), vec!["none".into()]),
            prune: PruneRules {
                min_docs: 1,
                max_doc_share: 1.0,
                ..PruneRules::default()
            },
            split_every,
        }
    }

    /// One long document (25 tokens) and two short ones (3 tokens each).
    fn inputs(folder: &std::path::Path) -> Vec<PathBuf> {
        let long: Vec<String> = (0..25).map(|idx| format!("w{}", idx % 7)).collect();
        let lines = [
            serde_json::json!({"id": "long", "text": long.join(" "), "label": "big"}),
            serde_json::json!({"id": "b", "text": "w1 w2 w3"}),
            serde_json::json!({"id": "c", "text": "w4 w5 w6"}),
        ];
        let text: String = lines.iter().map(|line| format!("{line}\n")).collect();
        let path = folder.join("docs.jsonl");
        std::fs::write(&path, text).unwrap();
        vec![path]
    }

    #[test]
    fn a_document_holding_most_tokens_is_warned_about() {
        // Source: issue 11, item 5 — warn when one document holds more than
        // a stated share of the tokens (here 25 of 31, above 20% and above
        // twice the even share of 1/3).
        let folder = tempfile::tempdir().unwrap();
        let (corpus, summary) = build(&inputs(folder.path()), &settings(None)).unwrap();
        assert_eq!(corpus.n_docs(), 3);
        assert_eq!(summary.warnings.len(), 1, "{:?}", summary.warnings);
        assert!(
            summary.warnings[0].starts_with("document `long` holds 81% of all tokens (25 of 31)"),
            "{}",
            summary.warnings[0]
        );
        assert!(summary.warnings[0].contains("--split-every"));
    }

    #[test]
    fn split_every_cuts_chunks_named_after_their_document() {
        // Source: issue 11, item 5 — chunks of N tokens, ids derived from the
        // document id; each chunk is a document of its own (the last one
        // shorter), and chunk_groups finds them again.
        let folder = tempfile::tempdir().unwrap();
        let (corpus, summary) = build(&inputs(folder.path()), &settings(Some(10))).unwrap();
        let ids: Vec<&str> = corpus.documents.iter().map(|d| d.id.as_str()).collect();
        assert_eq!(ids, ["long#1", "long#2", "long#3", "b", "c"]);
        let lengths: Vec<usize> = (0..corpus.n_docs()).map(|d| corpus.doc_tokens(d).len()).collect();
        assert_eq!(lengths, [10, 10, 5, 3, 3]);
        assert!(
            corpus.documents[..3]
                .iter()
                .all(|d| d.label.as_deref() == Some("big"))
        );
        assert_eq!(summary.documents_split, 1);
        assert_eq!(summary.documents_kept, 5);
        assert_eq!(summary.documents_read, 3);
        assert_eq!(
            chunk_groups(&corpus),
            [
                ("long".to_string(), 0..3),
                ("b".to_string(), 3..4),
                ("c".to_string(), 4..5)
            ]
        );
        // Documents with chunk-like ids that were not split stay whole.
        let mut lookalike = corpus.clone();
        lookalike.documents[3].id = "b#1".into();
        assert_eq!(chunk_groups(&lookalike)[1], ("b#1".to_string(), 3..4));
    }

    #[test]
    fn documents_in_memory_build_the_corpus_their_file_builds() {
        // Source: the project's rule of one implementation (issue 17): the
        // same records, read from a JSON Lines file or handed over in
        // memory, give the same corpus (ids, labels, vocabulary, tokens);
        // only the recorded sources differ. The reader's rules hold too:
        // an empty text and a repeated id are skipped with a diagnostic
        // (common practice, as for files).
        let folder = tempfile::tempdir().unwrap();
        let (from_file, file_summary) = build(&inputs(folder.path()), &settings(Some(10))).unwrap();
        let long: Vec<String> = (0..25).map(|idx| format!("w{}", idx % 7)).collect();
        let records = [
            ("long", long.join(" "), Some("big")),
            ("blank", "   ".to_string(), None),
            ("b", "w1 w2 w3".to_string(), None),
            ("b", "a repeated id".to_string(), None),
            ("c", "w4 w5 w6".to_string(), None),
        ];
        let documents: Vec<RawDocument> = records
            .iter()
            .enumerate()
            .map(|(idx, (id, text, label))| RawDocument {
                id: id.to_string(),
                text: text.clone(),
                label: label.map(str::to_string),
                date: None,
                origin: Origin {
                    file: "<memory>".into(),
                    line: Some(idx as u64 + 1),
                },
            })
            .collect();
        let (in_memory, summary) = build_from_documents(documents, &settings(Some(10))).unwrap();
        assert_eq!(in_memory.vocabulary, from_file.vocabulary);
        assert_eq!(in_memory.tokens, from_file.tokens);
        assert_eq!(in_memory.offsets, from_file.offsets);
        let described = |corpus: &Corpus| -> Vec<(String, Option<String>)> {
            corpus
                .documents
                .iter()
                .map(|doc| (doc.id.clone(), doc.label.clone()))
                .collect()
        };
        assert_eq!(described(&in_memory), described(&from_file));
        assert_eq!(in_memory.documents[3].source, "<memory>:3");
        assert_eq!(summary.documents_read, 5);
        assert_eq!(summary.documents_split, file_summary.documents_split);
        let kinds: Vec<DiagnosticKind> = summary.diagnostics.iter().map(|d| d.kind).collect();
        assert_eq!(kinds, [DiagnosticKind::Empty, DiagnosticKind::DuplicateId]);
        assert!(matches!(
            build_from_documents(Vec::new(), &settings(None)),
            Err(CorpusError::Empty { .. })
        ));
    }
}
