//! What people and tools read: topics with their top words, document
//! mixtures, and the fit summary. Each output shape is its own type; the
//! writers render them as an aligned table, TSV or JSON. The HTML report
//! is in [`html`], the tidy export tables in [`export`], the reading of
//! document dates in [`dates`].

pub mod dates;
pub mod export;
pub mod html;

use std::io::{self, Write};

use serde::Serialize;

use crate::evaluate::uncertainty::UncertaintyError;
use crate::model::Model;

/// How a listing is printed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, clap::ValueEnum, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ListingFormat {
    /// Aligned columns for reading.
    #[default]
    Table,
    /// Tab-separated values with a header line.
    Tsv,
    /// One JSON document.
    Json,
}

/// One word of a topic with its weight `phi_kw` and a credible interval.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct WeightedWord {
    pub word: String,
    pub weight: f64,
    pub low: f64,
    pub high: f64,
}

/// A topic as shown: its share of tokens and its words by weight.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TopicListing {
    pub topic: usize,
    pub share: f64,
    pub words: Vec<WeightedWord>,
}

/// How many words to list per topic.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum WordLimit {
    /// The N heaviest words.
    Top(usize),
    /// Every word the topic has tokens of.
    All,
}

impl std::fmt::Display for WordLimit {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            WordLimit::Top(n) => write!(f, "{n}"),
            WordLimit::All => write!(f, "all"),
        }
    }
}

impl std::str::FromStr for WordLimit {
    type Err = String;

    fn from_str(text: &str) -> Result<WordLimit, String> {
        if text.eq_ignore_ascii_case("all") {
            return Ok(WordLimit::All);
        }
        match text.parse::<usize>() {
            Ok(0) | Err(_) => Err(format!("`{text}` is not a positive number or `all`")),
            Ok(n) => Ok(WordLimit::Top(n)),
        }
    }
}

/// The topics of a model with their heaviest words; word intervals at `level`.
pub fn topic_listings(
    model: &Model,
    limit: WordLimit,
    level: f64,
) -> Result<Vec<TopicListing>, UncertaintyError> {
    let shares = model.topic_token_shares();
    (0..model.n_topics())
        .map(|topic_idx| {
            let row = model.topic_word_row(topic_idx);
            let mut words: Vec<(u32, f64)> = row
                .iter()
                .enumerate()
                .filter(|&(w, _)| limit != WordLimit::All || model.topic_has_word(topic_idx, w))
                .map(|(w, &weight)| (w as u32, weight))
                .collect();
            let by_weight = |a: &(u32, f64), b: &(u32, f64)| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0));
            if let WordLimit::Top(n) = limit
                && words.len() > n
            {
                words.select_nth_unstable_by(n - 1, by_weight);
                words.truncate(n);
            }
            words.sort_by(by_weight);
            Ok(TopicListing {
                topic: topic_idx,
                share: shares[topic_idx],
                words: words
                    .into_iter()
                    .map(|(w, weight)| {
                        let interval = model.topic_word_interval(topic_idx, w as usize, level)?;
                        Ok(WeightedWord {
                            word: model.corpus.vocabulary.word(w).to_string(),
                            weight,
                            low: interval.low,
                            high: interval.high,
                        })
                    })
                    .collect::<Result<_, UncertaintyError>>()?,
            })
        })
        .collect()
}

/// Writes topic listings in the chosen format. TSV lines are
/// `topic<TAB>rank<TAB>word<TAB>weight` (rank from 1; this layout is a
/// contract with downstream tools, so intervals appear in the table and JSON
/// only).
pub fn write_topics(out: &mut dyn Write, topics: &[TopicListing], format: ListingFormat) -> io::Result<()> {
    match format {
        ListingFormat::Tsv => {
            writeln!(out, "topic\trank\tword\tweight")?;
            for topic in topics {
                for (rank, word) in topic.words.iter().enumerate() {
                    writeln!(
                        out,
                        "{}\t{}\t{}\t{}",
                        topic.topic,
                        rank + 1,
                        word.word,
                        word.weight
                    )?;
                }
            }
        }
        ListingFormat::Json => {
            serde_json::to_writer_pretty(&mut *out, &serde_json::json!({ "topics": topics }))?;
            writeln!(out)?;
        }
        ListingFormat::Table => {
            writeln!(
                out,
                "{:>5}  {:>6}  words: weight [credible interval]",
                "topic", "share"
            )?;
            for topic in topics {
                let words: Vec<String> = topic
                    .words
                    .iter()
                    .map(|w| format!("{} {:.3} [{:.3}-{:.3}]", w.word, w.weight, w.low, w.high))
                    .collect();
                writeln!(
                    out,
                    "{:>5}  {:>5.1}%  {}",
                    topic.topic,
                    100.0 * topic.share,
                    words.join(", ")
                )?;
            }
        }
    }
    Ok(())
}

/// One document's topic shares as shown.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DocumentListing {
    pub document: String,
    pub label: Option<String>,
    /// Posterior mean share of each topic.
    pub shares: Vec<f64>,
    /// Lower end of each share's credible interval.
    pub low: Vec<f64>,
    /// Upper end of each share's credible interval.
    pub high: Vec<f64>,
}

/// Every training document's posterior mean topic shares with credible
/// intervals at `level`.
pub fn document_listings(model: &Model, level: f64) -> Result<Vec<DocumentListing>, UncertaintyError> {
    model
        .corpus
        .documents
        .iter()
        .enumerate()
        .map(|(doc_idx, info)| {
            let intervals = model.doc_topic_intervals(doc_idx, level)?;
            Ok(DocumentListing {
                document: info.id.clone(),
                label: info.label.clone(),
                shares: model.doc_topic_shares(doc_idx),
                low: intervals.iter().map(|i| i.low).collect(),
                high: intervals.iter().map(|i| i.high).collect(),
            })
        })
        .collect()
}

/// Writes document mixtures. TSV lines are
/// `document<TAB>topic<TAB>share<TAB>low<TAB>high`, one per document and
/// topic; the table shows each document's three largest shares with their
/// intervals.
pub fn write_documents(
    out: &mut dyn Write,
    documents: &[DocumentListing],
    format: ListingFormat,
) -> io::Result<()> {
    match format {
        ListingFormat::Tsv => {
            writeln!(out, "document\ttopic\tshare\tlow\thigh")?;
            for doc in documents {
                for (topic, share) in doc.shares.iter().enumerate() {
                    writeln!(
                        out,
                        "{}\t{}\t{}\t{}\t{}",
                        doc.document, topic, share, doc.low[topic], doc.high[topic]
                    )?;
                }
            }
        }
        ListingFormat::Json => {
            serde_json::to_writer_pretty(&mut *out, &serde_json::json!({ "documents": documents }))?;
            writeln!(out)?;
        }
        ListingFormat::Table => {
            let width = documents
                .iter()
                .map(|d| d.document.chars().count())
                .max()
                .unwrap_or(8)
                .clamp(8, 40);
            writeln!(
                out,
                "{:<width$}  largest topic shares [credible interval]",
                "document"
            )?;
            for doc in documents {
                let mut order: Vec<usize> = (0..doc.shares.len()).collect();
                order.sort_by(|&a, &b| doc.shares[b].total_cmp(&doc.shares[a]).then(a.cmp(&b)));
                let top: Vec<String> = order
                    .iter()
                    .take(3)
                    .map(|&k| format!("{k}: {:.2} [{:.2}-{:.2}]", doc.shares[k], doc.low[k], doc.high[k]))
                    .collect();
                writeln!(out, "{:<width$}  {}", doc.document, top.join("   "))?;
            }
        }
    }
    Ok(())
}

/// Index of the largest share (first on ties).
pub fn top_topic(shares: &[f64]) -> usize {
    let mut best = 0;
    for (idx, &share) in shares.iter().enumerate() {
        if share > shares[best] {
            best = idx;
        }
    }
    best
}

/// How well documents' top topics agree with their labels.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct LabelAgreement {
    /// Normalised mutual information (arithmetic-mean normalisation).
    pub nmi: f64,
    /// Labelled documents compared.
    pub documents: usize,
    /// Distinct labels among them.
    pub labels: usize,
}

/// NMI between each labelled document's top topic and its label; `None`
/// when no document has a label.
pub fn label_agreement(documents: &[DocumentListing]) -> Option<LabelAgreement> {
    let mut names: Vec<&str> = documents.iter().filter_map(|d| d.label.as_deref()).collect();
    names.sort_unstable();
    names.dedup();
    if names.is_empty() {
        return None;
    }
    let (labels, topics): (Vec<usize>, Vec<usize>) = documents
        .iter()
        .filter_map(|doc| {
            let label = doc.label.as_deref()?;
            let label_idx = names.binary_search(&label).ok()?;
            Some((label_idx, top_topic(&doc.shares)))
        })
        .unzip();
    Some(LabelAgreement {
        nmi: crate::evaluate::compare::normalized_mutual_information(&labels, &topics),
        documents: labels.len(),
        labels: names.len(),
    })
}
