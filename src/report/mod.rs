//! What people and tools read: topics with their top words, document
//! mixtures, and the fit summary. Each output shape is its own type; the
//! writers render them as an aligned table, TSV or JSON.

use std::io::{self, Write};

use serde::Serialize;

use crate::evaluate::uncertainty::UncertaintyError;
use crate::fitting::sampler::BetaPrior;
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

/// The `summary.json` of a model folder. Downstream tooling reads these names.
#[derive(Clone, Debug, Serialize)]
pub struct FitSummary {
    pub format_version: u32,
    pub themata_version: String,
    pub documents: usize,
    pub tokens: usize,
    pub vocabulary: usize,
    pub topics: usize,
    pub iterations: u64,
    pub burn_in: u64,
    pub seed: u64,
    pub threads: usize,
    pub sampler: String,
    /// Shards of the block grid the sampler ran on (1 for the reference).
    pub shards: u32,
    pub alpha: Vec<f64>,
    pub beta: serde_json::Value,
    pub sampling_seconds: f64,
    pub tokens_per_second: f64,
    pub log_likelihood: f64,
    pub log_likelihood_trace: Vec<(u64, f64)>,
    pub learned_alpha: bool,
    pub learned_beta: bool,
    pub alpha_trace: Vec<(u64, Vec<f64>)>,
    pub beta_trace: Vec<(u64, f64)>,
    pub samples: u64,
    pub lag: u64,
    pub sample_iterations: Vec<u64>,
    pub convergence: crate::fitting::fit::Convergence,
    /// Held-out perplexity of the documents `--holdout` kept out (null without).
    pub heldout_perplexity: Option<f64>,
    /// The held-out scoring behind it.
    pub heldout: Option<crate::evaluate::score::HeldOutScore>,
    /// Peak resident memory of the process that fitted the model, in bytes
    /// (null where the system does not tell).
    pub peak_rss_bytes: Option<u64>,
}

/// Version of the summary.json layout.
pub const SUMMARY_VERSION: u32 = 1;

impl FitSummary {
    /// Records the held-out score of the documents kept out of training.
    pub fn with_heldout(mut self, score: crate::evaluate::score::HeldOutScore) -> FitSummary {
        self.heldout_perplexity = score.heldout_perplexity;
        self.heldout = Some(score);
        self
    }

    /// Summarises a fitted model and the timing of the run that fitted it.
    pub fn new(model: &Model, threads: usize, sampling_seconds: f64, tokens_per_second: f64) -> FitSummary {
        FitSummary {
            format_version: SUMMARY_VERSION,
            themata_version: env!("CARGO_PKG_VERSION").to_string(),
            documents: model.corpus.n_docs(),
            tokens: model.corpus.n_tokens(),
            vocabulary: model.corpus.vocabulary.len(),
            topics: model.n_topics(),
            iterations: model.iterations_done,
            burn_in: model.schedule.burn_in,
            seed: model.seed,
            threads,
            sampler: model.schedule.sampler.name().to_string(),
            shards: model.schedule.shards,
            alpha: model.priors.alpha.clone(),
            beta: match &model.priors.beta {
                BetaPrior::Symmetric(value) => serde_json::json!(value),
                BetaPrior::Asymmetric(values) => serde_json::json!(values),
            },
            sampling_seconds,
            tokens_per_second,
            log_likelihood: model.trace.last().map_or(f64::NAN, |&(_, value)| value),
            log_likelihood_trace: model.trace.clone(),
            learned_alpha: model.schedule.learn_alpha,
            learned_beta: model.schedule.learn_beta,
            alpha_trace: model.alpha_trace.clone(),
            beta_trace: model.beta_trace.clone(),
            samples: model.schedule.samples,
            lag: model.schedule.lag,
            sample_iterations: model.samples.iter().map(|s| s.iteration).collect(),
            convergence: crate::fitting::fit::convergence(model),
            heldout_perplexity: None,
            heldout: None,
            peak_rss_bytes: None,
        }
    }

    /// Records the peak resident memory of the fitting process.
    pub fn with_peak_rss(mut self, bytes: Option<u64>) -> FitSummary {
        self.peak_rss_bytes = bytes;
        self
    }
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
