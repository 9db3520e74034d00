//! The corpus: documents as word ids over a fixed vocabulary, together with
//! the tokenizer settings that produced them. Built from raw inputs by
//! streaming (raw text is dropped as soon as it is tokenized) and stored as
//! a framed corpus file.

use std::collections::BTreeMap;
use std::path::PathBuf;

use serde::{Deserialize, Serialize};

use crate::ingest::read::{self, Diagnostic, DiagnosticKind, Origin, ReadError, ReadOptions};
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
    /// What is worth saying once about the inputs (a named field no record has).
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

/// Reads, tokenizes and prunes the inputs into a corpus.
pub fn build(inputs: &[PathBuf], settings: &BuildSettings) -> Result<(Corpus, BuildSummary), CorpusError> {
    let tokenizer = Tokenizer::new(&settings.tokenizer)?;
    let mut vocab = VocabBuilder::new();
    let mut documents: Vec<DocumentInfo> = Vec::new();
    let mut offsets: Vec<u64> = vec![0];
    let mut tokens: Vec<u32> = Vec::new();
    let mut diagnostics: Vec<Diagnostic> = Vec::new();
    let mut no_tokens: Vec<Diagnostic> = Vec::new();
    let mut warnings: Vec<String> = Vec::new();
    let counts = read::read_documents(
        inputs,
        &settings.read,
        &mut diagnostics,
        &mut warnings,
        &mut |doc| {
            let start = tokens.len();
            vocab.start_document();
            if tokenizer.stems() {
                tokenizer.for_each_token_with_surface(&doc.text, &mut |token, surface| {
                    tokens.push(vocab.add_token_with_surface(token, surface));
                });
            } else {
                tokenizer.for_each_token(&doc.text, &mut |token| tokens.push(vocab.add_token(token)));
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
            offsets.push(tokens.len() as u64);
            documents.push(DocumentInfo {
                id: doc.id,
                label: doc.label,
                date: doc.date,
                source: doc.origin.to_string(),
            });
        },
    )?;
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
    tokens.shrink_to_fit();

    let mut skipped = BTreeMap::new();
    for diagnostic in &diagnostics {
        *skipped.entry(kind_name(diagnostic.kind)).or_insert(0) += 1;
    }
    let summary = BuildSummary {
        warnings,
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
