//! Tidy export tables for data tools: one row per topic and word, per
//! document and topic, or per topic, each with ids, names and credible
//! intervals, in CSV (RFC 4180: a header row, fields quoted when they hold a
//! comma, a quote or a line break, quotes doubled, CRLF line ends; UTF-8
//! without a byte-order mark) or JSON Lines (one object per line, the same
//! fields, `null` for a missing value).
//!
//! Rows come in a stable order (topics by index, words by weight, documents
//! in corpus order). Numbers that are measurements are always written as
//! floating point (`0.0`, `1e-7`), counts and indices as integers, flags as
//! `true`/`false`, so pandas, R and polars infer the same column types with
//! their defaults. A `label` and a `date` column appear in the
//! document-topics table only when some document has one (a column with no
//! value at all would load as a float column of missing values).
//!
//! Known limit: a word or label that spells a missing-value marker of a
//! reader's defaults (pandas reads `null`, `NA`, `nan` and a few more as
//! missing, R reads `NA`) loads as missing; pass `keep_default_na=False`
//! (pandas) or `na.strings = character()` (R) where that matters.

use std::io::{self, Write};

use rayon::prelude::*;
use serde::Serialize;

use crate::evaluate::compare::top_topic;
use crate::evaluate::uncertainty::UncertaintyError;
use crate::model::Model;
use crate::publish::names::TopicNames;
use crate::report::WordLimit;

/// Which table to export.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum ExportTable {
    /// One row per topic and word: the topic's heaviest words with weights and intervals.
    TopicWords,
    /// One row per document and topic: every topic share of every document with its interval.
    DocumentTopics,
    /// One row per topic: id, name, share of all words, alpha, leading documents, top words.
    Topics,
}

/// The file format of an export.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum ExportFormat {
    /// Comma-separated values (RFC 4180) with a header row.
    Csv,
    /// JSON Lines: one JSON object per row.
    Jsonl,
}

/// Why an export failed.
#[derive(Debug, thiserror::Error)]
pub enum ExportError {
    /// Writing failed (a closed pipe included).
    #[error(transparent)]
    Io(#[from] io::Error),
    /// A credible interval failed (a damaged model).
    #[error("credible interval: {0}")]
    Interval(#[from] UncertaintyError),
    /// A row could not be encoded.
    #[error("encoding a row: {0}")]
    Encode(String),
}

impl From<csv::Error> for ExportError {
    fn from(error: csv::Error) -> ExportError {
        if error.is_io_error() {
            match error.into_kind() {
                csv::ErrorKind::Io(io) => ExportError::Io(io),
                other => ExportError::Encode(format!("{other:?}")),
            }
        } else {
            ExportError::Encode(error.to_string())
        }
    }
}

/// What an export needs besides the model.
#[derive(Clone, Copy, Debug)]
pub struct ExportSettings<'a> {
    /// Editors' topic names, by id (run roots only).
    pub names: Option<&'a TopicNames>,
    /// Words per topic in the topic-words table.
    pub words: WordLimit,
    /// Probability of the credible intervals.
    pub level: f64,
}

/// One row of the topic-words table.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TopicWordRow {
    /// Index of the topic in the model (0-based).
    pub topic: usize,
    /// The topic's id (kept from run to run under a run root).
    pub topic_id: u32,
    /// The editors' name, else the topic's three heaviest words.
    pub topic_name: String,
    /// Whether `topic_name` was given by the editors.
    pub named: bool,
    /// 1 for the heaviest word.
    pub rank: usize,
    /// The word as people write it (a stem's most frequent surface form).
    pub word: String,
    /// The model's vocabulary entry (the stem, when words were stemmed).
    pub vocabulary_word: String,
    /// Posterior mean of the word's weight in the topic.
    pub weight: f64,
    pub low: f64,
    pub high: f64,
}

/// One row of the document-topics table.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DocumentTopicRow {
    /// The document's id.
    pub document: String,
    /// Its position in the corpus (0-based).
    pub document_index: usize,
    #[serde(skip_serializing_if = "Skip::is_skipped")]
    pub label: Skip<String>,
    #[serde(skip_serializing_if = "Skip::is_skipped")]
    pub date: Skip<String>,
    pub topic: usize,
    pub topic_id: u32,
    pub topic_name: String,
    /// Posterior mean share of the topic in the document.
    pub share: f64,
    pub low: f64,
    pub high: f64,
}

/// One row of the topics table.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TopicRow {
    pub topic: usize,
    pub topic_id: u32,
    pub topic_name: String,
    pub named: bool,
    /// Share of all tokens.
    pub share: f64,
    /// The topic's alpha (its prior weight in every document).
    pub alpha: f64,
    /// Documents whose largest share is this topic.
    pub leading_documents: usize,
    /// The heaviest words, separated by spaces.
    pub top_words: String,
}

/// A column present in every row or in none: `Absent` leaves it out of the
/// table, `Value(None)` is an empty field (CSV) or `null` (JSON Lines).
#[derive(Clone, Debug, PartialEq)]
pub enum Skip<T> {
    Absent,
    Value(Option<T>),
}

impl<T> Skip<T> {
    fn is_skipped(&self) -> bool {
        matches!(self, Skip::Absent)
    }
}

impl<T: Serialize> Serialize for Skip<T> {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match self {
            Skip::Absent => serializer.serialize_none(),
            Skip::Value(value) => value.serialize(serializer),
        }
    }
}

/// Writes rows in one format.
enum RowWriter<'w> {
    Csv(Box<csv::Writer<&'w mut dyn Write>>),
    Jsonl(&'w mut dyn Write),
}

impl<'w> RowWriter<'w> {
    fn new(out: &'w mut dyn Write, format: ExportFormat) -> RowWriter<'w> {
        match format {
            ExportFormat::Csv => RowWriter::Csv(Box::new(
                csv::WriterBuilder::new()
                    .terminator(csv::Terminator::CRLF)
                    .quote_style(csv::QuoteStyle::Necessary)
                    .from_writer(out),
            )),
            ExportFormat::Jsonl => RowWriter::Jsonl(out),
        }
    }

    fn row<R: Serialize>(&mut self, row: &R) -> Result<(), ExportError> {
        match self {
            RowWriter::Csv(writer) => writer.serialize(row)?,
            RowWriter::Jsonl(out) => {
                serde_json::to_writer(&mut **out, row).map_err(|err| match err.io_error_kind() {
                    Some(kind) => ExportError::Io(io::Error::new(kind, err.to_string())),
                    None => ExportError::Encode(err.to_string()),
                })?;
                out.write_all(b"\n")?;
            }
        }
        Ok(())
    }

    fn finish(self) -> Result<(), ExportError> {
        match self {
            RowWriter::Csv(mut writer) => writer.flush()?,
            RowWriter::Jsonl(out) => out.flush()?,
        }
        Ok(())
    }
}

/// The heaviest words of a row, heaviest first (ties: lower id); all words
/// the topic counted for [`WordLimit::All`].
fn ranked_words(model: &Model, topic: usize, row: &[f64], limit: WordLimit) -> Vec<u32> {
    let mut words: Vec<u32> = match limit {
        WordLimit::All => (0..row.len() as u32)
            .filter(|&word| model.topic_has_word(topic, word as usize))
            .collect(),
        WordLimit::Top(_) => (0..row.len() as u32).collect(),
    };
    let by_weight = |a: &u32, b: &u32| row[*b as usize].total_cmp(&row[*a as usize]).then(a.cmp(b));
    if let WordLimit::Top(n) = limit
        && n > 0
        && words.len() > n
    {
        words.select_nth_unstable_by(n - 1, by_weight);
        words.truncate(n);
    }
    words.sort_by(by_weight);
    words
}

/// The names of every topic: `(name, given by the editors)`.
fn topic_names(model: &Model, names: Option<&TopicNames>, rows: &[Vec<f64>]) -> Vec<(String, bool)> {
    (0..model.n_topics())
        .map(|topic| {
            let id = model.topic_ids.get(topic).copied().unwrap_or(topic as u32);
            match names.and_then(|names| names.get(id)) {
                Some(name) => (name.to_string(), true),
                None => {
                    let top = ranked_words(model, topic, &rows[topic], WordLimit::Top(3));
                    let words: Vec<&str> = top.iter().map(|&w| model.corpus.vocabulary.display(w)).collect();
                    (words.join(" · "), false)
                }
            }
        })
        .collect()
}

/// Documents whose topic rows are computed together (in parallel) before
/// they are written in order.
const DOCUMENT_BATCH: usize = 512;

/// Writes one export table of `model` to `out`.
pub fn write_table(
    out: &mut dyn Write,
    model: &Model,
    table: ExportTable,
    format: ExportFormat,
    settings: &ExportSettings<'_>,
) -> Result<(), ExportError> {
    let n_topics = model.n_topics();
    let rows: Vec<Vec<f64>> = (0..n_topics)
        .into_par_iter()
        .map(|topic| model.topic_word_row(topic))
        .collect();
    let names = topic_names(model, settings.names, &rows);
    let id_of = |topic: usize| model.topic_ids.get(topic).copied().unwrap_or(topic as u32);
    let vocabulary = &model.corpus.vocabulary;
    let mut writer = RowWriter::new(out, format);
    match table {
        ExportTable::TopicWords => {
            for (topic, row) in rows.iter().enumerate() {
                let words = ranked_words(model, topic, row, settings.words);
                let topic_rows: Vec<TopicWordRow> = words
                    .par_iter()
                    .enumerate()
                    .map(|(rank, &word)| {
                        let interval = model.topic_word_interval(topic, word as usize, settings.level)?;
                        Ok(TopicWordRow {
                            topic,
                            topic_id: id_of(topic),
                            topic_name: names[topic].0.clone(),
                            named: names[topic].1,
                            rank: rank + 1,
                            word: vocabulary.display(word).to_string(),
                            vocabulary_word: vocabulary.word(word).to_string(),
                            weight: row[word as usize],
                            low: interval.low,
                            high: interval.high,
                        })
                    })
                    .collect::<Result<_, ExportError>>()?;
                for row in &topic_rows {
                    writer.row(row)?;
                }
            }
        }
        ExportTable::DocumentTopics => {
            let documents = &model.corpus.documents;
            let has_labels = documents.iter().any(|info| info.label.is_some());
            let has_dates = documents.iter().any(|info| info.date.is_some());
            for batch in (0..documents.len()).collect::<Vec<_>>().chunks(DOCUMENT_BATCH) {
                let batch_rows: Vec<Vec<DocumentTopicRow>> = batch
                    .par_iter()
                    .map(|&doc| {
                        let info = &documents[doc];
                        let shares = model.doc_topic_shares(doc);
                        let intervals = model.doc_topic_intervals(doc, settings.level)?;
                        Ok((0..n_topics)
                            .map(|topic| DocumentTopicRow {
                                document: info.id.clone(),
                                document_index: doc,
                                label: if has_labels {
                                    Skip::Value(info.label.clone())
                                } else {
                                    Skip::Absent
                                },
                                date: if has_dates {
                                    Skip::Value(info.date.clone())
                                } else {
                                    Skip::Absent
                                },
                                topic,
                                topic_id: id_of(topic),
                                topic_name: names[topic].0.clone(),
                                share: shares[topic],
                                low: intervals[topic].low,
                                high: intervals[topic].high,
                            })
                            .collect())
                    })
                    .collect::<Result<_, ExportError>>()?;
                for row in batch_rows.iter().flatten() {
                    writer.row(row)?;
                }
            }
        }
        ExportTable::Topics => {
            let shares = model.topic_token_shares();
            let leading: Vec<usize> = (0..model.corpus.n_docs())
                .into_par_iter()
                .map(|doc| top_topic(&model.doc_topic_shares(doc)))
                .collect();
            let mut leading_documents = vec![0usize; n_topics];
            for topic in leading {
                leading_documents[topic] += 1;
            }
            let top_words = match settings.words {
                WordLimit::Top(n) => WordLimit::Top(n),
                WordLimit::All => WordLimit::Top(crate::settings::DEFAULT_TOP_WORDS),
            };
            for (topic, row) in rows.iter().enumerate() {
                let words: Vec<&str> = ranked_words(model, topic, row, top_words)
                    .into_iter()
                    .map(|word| vocabulary.display(word))
                    .collect();
                writer.row(&TopicRow {
                    topic,
                    topic_id: id_of(topic),
                    topic_name: names[topic].0.clone(),
                    named: names[topic].1,
                    share: shares[topic],
                    alpha: model.priors.alpha[topic],
                    leading_documents: leading_documents[topic],
                    top_words: words.join(" "),
                })?;
            }
        }
    }
    writer.finish()
}
