//! Topic listings: each topic's share of the tokens and its heaviest words
//! with their weights `phi_kw` and credible intervals.

use std::io::{self, Write};

use serde::Serialize;

use super::ListingFormat;
use super::numbers::{Numbers, tsv_field};
use crate::evaluate::uncertainty::UncertaintyError;
use crate::model::Model;
use crate::publish::names::TopicNames;

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
    /// The topic's id (its index outside a run root).
    pub topic: u32,
    /// The editors' name of the topic, when the model belongs to a run root
    /// whose names file names it (see [`name_topics`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
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
                topic: model.topic_ids[topic_idx],
                name: None,
                share: shares[topic_idx],
                words: words
                    .into_iter()
                    .map(|(w, weight)| {
                        let interval = model.topic_word_interval(topic_idx, w as usize, level)?;
                        Ok(WeightedWord {
                            word: model.corpus.vocabulary.display(w).to_string(),
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

/// Gives each listed topic its editors' name, if it has one.
pub fn name_topics(topics: &mut [TopicListing], names: &TopicNames) {
    for topic in topics {
        topic.name = names.get(topic.topic).map(str::to_string);
    }
}

/// Writes topic listings in the chosen format, numbers of TSV and JSON with
/// `numbers`' significant digits. TSV lines are
/// `topic<TAB>rank<TAB>word<TAB>weight` (rank from 1; this layout is a
/// contract with downstream tools, so intervals appear in the table and JSON
/// only); when some topic has a name, a fifth column `name` follows (empty
/// for a topic without one).
pub fn write_topics(
    out: &mut dyn Write,
    topics: &[TopicListing],
    format: ListingFormat,
    numbers: Numbers,
) -> io::Result<()> {
    match format {
        ListingFormat::Tsv => {
            let named = topics.iter().any(|topic| topic.name.is_some());
            writeln!(
                out,
                "topic\trank\tword\tweight{}",
                if named { "\tname" } else { "" }
            )?;
            for topic in topics {
                let name = topic.name.as_deref().map(tsv_field).unwrap_or_default();
                for (rank, word) in topic.words.iter().enumerate() {
                    write!(
                        out,
                        "{}\t{}\t{}\t{}",
                        topic.topic,
                        rank + 1,
                        tsv_field(&word.word),
                        numbers.text(word.weight)
                    )?;
                    if named {
                        write!(out, "\t{name}")?;
                    }
                    writeln!(out)?;
                }
            }
        }
        ListingFormat::Json => {
            let mut value = serde_json::json!({ "topics": topics });
            numbers.round_json(&mut value);
            serde_json::to_writer_pretty(&mut *out, &value)?;
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
                    .map(|w| {
                        format!(
                            "{} {:.3} [{:.3}-{:.3}]",
                            tsv_field(&w.word),
                            w.weight,
                            w.low,
                            w.high
                        )
                    })
                    .collect();
                let name = topic
                    .name
                    .as_deref()
                    .map(|name| format!("{}: ", tsv_field(name)))
                    .unwrap_or_default();
                writeln!(
                    out,
                    "{:>5}  {:>5.1}%  {name}{}",
                    topic.topic,
                    100.0 * topic.share,
                    words.join(", ")
                )?;
            }
        }
    }
    Ok(())
}
