//! Document listings: each document's topic shares with credible
//! intervals, cut down to the topics worth reading (those above a share, the
//! N largest, or every topic), and the writers of the two layouts: long (one
//! row per document and topic, for tools) and wide (one row per document,
//! its largest topics side by side, for spreadsheets and reading).
//!
//! Intervals are computed only for the topics a row lists: they cost far
//! more than the shares.

use std::io::{self, Write};
use std::ops::Range;

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::ListingFormat;
use super::numbers::{Numbers, tsv_field};
use crate::evaluate::score::{Placement, ScoreError};
use crate::evaluate::uncertainty::UncertaintyError;
use crate::ingest::corpus::chunk_groups;
use crate::model::Model;
use crate::publish::names::TopicNames;

/// A topic is listed when its share is at least this, by default.
pub const DEFAULT_MIN_SHARE: f64 = 0.01;
/// Topics side by side in the wide layout, by default.
pub const DEFAULT_WIDE_SLOTS: usize = 3;
/// What the topic column of a document that could not be placed (no word
/// the model knows) says.
pub const UNPLACED: &str = "unplaced";

/// How document rows are laid out in TSV.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, clap::ValueEnum, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum DocumentLayout {
    /// One row per document and listed topic.
    #[default]
    Long,
    /// One row per document, its listed topics side by side.
    Wide,
}

/// Which topics of a document are listed.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum TopicSelection {
    /// Topics whose share is at least `min_share`, largest first, at most
    /// `top` of them; the largest topic is always listed, so no document
    /// goes missing from a listing.
    Largest { min_share: f64, top: Option<usize> },
    /// Every topic, in topic order.
    All,
}

impl TopicSelection {
    /// The listed topics of a document with these shares, in listing order
    /// (share descending, ties by topic; topic order for [`TopicSelection::All`]).
    pub fn pick(&self, shares: &[f64]) -> Vec<usize> {
        match *self {
            TopicSelection::All => (0..shares.len()).collect(),
            TopicSelection::Largest { min_share, top } => {
                let by_share = |a: &usize, b: &usize| shares[*b].total_cmp(&shares[*a]).then(a.cmp(b));
                let mut picked: Vec<usize> = (0..shares.len()).filter(|&k| shares[k] >= min_share).collect();
                if picked.is_empty() {
                    picked.extend((0..shares.len()).min_by(by_share));
                }
                picked.sort_by(by_share);
                if let Some(top) = top {
                    picked.truncate(top);
                }
                picked
            }
        }
    }

    /// Topic columns of the wide layout for a model of `n_topics` topics.
    pub fn wide_slots(&self, n_topics: usize) -> usize {
        match *self {
            TopicSelection::All => n_topics,
            TopicSelection::Largest { top, .. } => top.unwrap_or(DEFAULT_WIDE_SLOTS).min(n_topics),
        }
    }
}

/// A document listing as the user asked for it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ListingPlan {
    pub numbers: Numbers,
    pub selection: TopicSelection,
    pub layout: DocumentLayout,
    /// List a document cut into chunks once, its chunks summed back.
    pub merge_chunks: bool,
}

/// One listed topic of a document: its share and credible interval.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct TopicShare {
    /// The topic's id (its index outside a run root).
    pub topic: u32,
    pub share: f64,
    pub low: f64,
    pub high: f64,
}

/// One document as listed.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DocumentRow {
    pub document: String,
    pub label: Option<String>,
    /// Tokens the shares rest on (words the model knows).
    pub tokens: usize,
    /// Tokens of words the model does not know (new documents only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unknown_tokens: Option<usize>,
    /// False for a new document with no word the model knows: it has no
    /// shares, only the prior, so none are listed.
    pub placed: bool,
    /// The listed topics, in listing order.
    pub topics: Vec<TopicShare>,
}

/// Every training document's listed topics with credible intervals at
/// `level`, computed only for the listed topics. With `merge_chunks`, a
/// document cut into chunks at build time is one row: its chunks' topic
/// counts summed, as if it had been one document (`Model::
/// documents_topic_shares`). Rows are computed in parallel and kept in
/// document order.
pub fn document_rows(
    model: &Model,
    selection: TopicSelection,
    level: f64,
    merge_chunks: bool,
) -> Result<Vec<DocumentRow>, UncertaintyError> {
    let groups: Vec<(String, Range<usize>)> = if merge_chunks {
        chunk_groups(&model.corpus)
    } else {
        model
            .corpus
            .documents
            .iter()
            .enumerate()
            .map(|(doc_idx, info)| (info.id.clone(), doc_idx..doc_idx + 1))
            .collect()
    };
    groups
        .into_par_iter()
        .map(|(document, docs)| {
            let info = &model.corpus.documents[docs.start];
            let shares = model.documents_topic_shares(docs.clone());
            let topics = selection
                .pick(&shares)
                .into_iter()
                .map(|topic| {
                    let interval = model.documents_topic_interval(docs.clone(), topic, level)?;
                    Ok(TopicShare {
                        topic: model.topic_ids[topic],
                        share: shares[topic],
                        low: interval.low,
                        high: interval.high,
                    })
                })
                .collect::<Result<_, UncertaintyError>>()?;
            Ok(DocumentRow {
                document,
                label: info.label.clone(),
                tokens: docs.map(|doc_idx| model.doc_len(doc_idx) as usize).sum(),
                unknown_tokens: None,
                placed: true,
                topics,
            })
        })
        .collect()
}

/// A new document placed by `assign` as a listed row, intervals at `level`
/// for the listed topics only. A document with no word the model knows is
/// not placed and lists no topic. `topic_ids` are the model's ids by index.
pub fn placement_row(
    placement: &Placement,
    alpha: &[f64],
    topic_ids: &[u32],
    selection: TopicSelection,
    level: f64,
) -> Result<DocumentRow, ScoreError> {
    let topics = if placement.no_known_words {
        Vec::new()
    } else {
        selection
            .pick(&placement.shares)
            .into_iter()
            .map(|topic| {
                let interval = placement.interval(alpha, topic, level)?;
                Ok(TopicShare {
                    topic: topic_ids[topic],
                    share: placement.shares[topic],
                    low: interval.low,
                    high: interval.high,
                })
            })
            .collect::<Result<_, ScoreError>>()?
    };
    Ok(DocumentRow {
        document: placement.document.clone(),
        label: None,
        tokens: placement.tokens,
        unknown_tokens: Some(placement.unknown_tokens),
        placed: !placement.no_known_words,
        topics,
    })
}

/// How rows are printed: layout, topic columns of the wide layout, digits,
/// and the editors' topic names when the model belongs to a run root.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DocumentView<'a> {
    pub layout: DocumentLayout,
    /// Topic columns of the wide layout.
    pub slots: usize,
    pub numbers: Numbers,
    /// Names by topic id; with names, every topic column is followed by a
    /// name column (empty for a topic no editor named).
    pub names: Option<&'a TopicNames>,
}

impl<'a> DocumentView<'a> {
    /// The view of `plan` for a model of `n_topics` topics.
    pub fn of(plan: &ListingPlan, n_topics: usize) -> DocumentView<'a> {
        DocumentView {
            layout: plan.layout,
            slots: plan.selection.wide_slots(n_topics),
            numbers: plan.numbers,
            names: None,
        }
    }

    /// The same view in another layout.
    pub fn with_layout(self, layout: DocumentLayout) -> DocumentView<'a> {
        DocumentView { layout, ..self }
    }

    /// The same view with the topics' names (none when `names` is empty).
    pub fn with_names(self, names: Option<&'a TopicNames>) -> DocumentView<'a> {
        DocumentView {
            names: names.filter(|names| !names.is_empty()),
            ..self
        }
    }

    /// The name of topic `id` as a TSV field (empty when unnamed).
    fn name_field(&self, id: u32) -> String {
        self.names
            .and_then(|names| names.get(id))
            .map(|name| tsv_field(name).into_owned())
            .unwrap_or_default()
    }

    /// The TSV header line. Long: `document topic share low high`; wide:
    /// `document label` then `topic_i share_i low_i high_i` for i from 1.
    /// With names, `name` (`name_i`) closes each topic's group of columns.
    pub fn write_tsv_header(&self, out: &mut dyn Write) -> io::Result<()> {
        let named = self.names.is_some();
        match self.layout {
            DocumentLayout::Long if named => writeln!(out, "document\ttopic\tshare\tlow\thigh\tname"),
            DocumentLayout::Long => writeln!(out, "document\ttopic\tshare\tlow\thigh"),
            DocumentLayout::Wide => {
                write!(out, "document\tlabel")?;
                for slot in 1..=self.slots {
                    write!(out, "\ttopic_{slot}\tshare_{slot}\tlow_{slot}\thigh_{slot}")?;
                    if named {
                        write!(out, "\tname_{slot}")?;
                    }
                }
                writeln!(out)
            }
        }
    }

    /// The TSV line(s) of one document. A document that was not placed gets
    /// one row with `unplaced` in its (first) topic column and no numbers.
    pub fn write_tsv_row(&self, out: &mut dyn Write, row: &DocumentRow) -> io::Result<()> {
        let document = tsv_field(&row.document);
        let text = |value: f64| self.numbers.text(value);
        match self.layout {
            DocumentLayout::Long => {
                let name_tail = if self.names.is_some() { "\t" } else { "" };
                if !row.placed {
                    return writeln!(out, "{document}\t{UNPLACED}\t\t\t{name_tail}");
                }
                for topic in &row.topics {
                    write!(
                        out,
                        "{document}\t{}\t{}\t{}\t{}",
                        topic.topic,
                        text(topic.share),
                        text(topic.low),
                        text(topic.high)
                    )?;
                    if self.names.is_some() {
                        write!(out, "\t{}", self.name_field(topic.topic))?;
                    }
                    writeln!(out)?;
                }
                Ok(())
            }
            DocumentLayout::Wide => {
                let label = row.label.as_deref().map(tsv_field).unwrap_or_default();
                write!(out, "{document}\t{label}")?;
                let named = self.names.is_some();
                for slot in 0..self.slots {
                    match row.topics.get(slot) {
                        Some(topic) if row.placed => {
                            write!(
                                out,
                                "\t{}\t{}\t{}\t{}",
                                topic.topic,
                                text(topic.share),
                                text(topic.low),
                                text(topic.high)
                            )?;
                            if named {
                                write!(out, "\t{}", self.name_field(topic.topic))?;
                            }
                        }
                        _ if slot == 0 && !row.placed => write!(out, "\t{UNPLACED}\t\t\t")?,
                        _ => write!(out, "\t\t\t\t")?,
                    }
                    if named && !(row.placed && slot < row.topics.len()) {
                        write!(out, "\t")?;
                    }
                }
                writeln!(out)
            }
        }
    }

    /// One document as a JSON value, numbers rounded to the precision.
    /// With names, each listed topic carries `name` (null when unnamed).
    pub fn json_value(&self, row: &DocumentRow) -> serde_json::Value {
        let mut value = serde_json::to_value(row).unwrap_or(serde_json::Value::Null);
        self.numbers.round_json(&mut value);
        if let Some(names) = self.names
            && let Some(topics) = value.get_mut("topics").and_then(serde_json::Value::as_array_mut)
        {
            for topic in topics {
                let name = topic
                    .get("topic")
                    .and_then(serde_json::Value::as_u64)
                    .and_then(|id| u32::try_from(id).ok())
                    .and_then(|id| names.get(id));
                if let Some(object) = topic.as_object_mut() {
                    object.insert("name".into(), name.map_or(serde_json::Value::Null, Into::into));
                }
            }
        }
        value
    }

    /// One document as one line of JSON.
    pub fn write_json_line(&self, out: &mut dyn Write, row: &DocumentRow) -> io::Result<()> {
        serde_json::to_writer(&mut *out, &self.json_value(row))?;
        writeln!(out)
    }
}

/// Writes document rows: TSV in the view's layout, one JSON document
/// `{"documents": [...]}`, or a table of each document's listed topics (at
/// most the wide layout's columns) with shares and intervals to two decimals.
pub fn write_documents(
    out: &mut dyn Write,
    rows: &[DocumentRow],
    format: ListingFormat,
    view: &DocumentView,
) -> io::Result<()> {
    match format {
        ListingFormat::Tsv => {
            view.write_tsv_header(out)?;
            for row in rows {
                view.write_tsv_row(out, row)?;
            }
        }
        ListingFormat::Json => {
            let documents: Vec<serde_json::Value> = rows.iter().map(|row| view.json_value(row)).collect();
            serde_json::to_writer_pretty(&mut *out, &serde_json::json!({ "documents": documents }))?;
            writeln!(out)?;
        }
        ListingFormat::Table => {
            let width = rows
                .iter()
                .map(|row| tsv_field(&row.document).chars().count())
                .max()
                .unwrap_or(8)
                .clamp(8, 40);
            writeln!(
                out,
                "{:<width$}  largest topic shares [credible interval]",
                "document"
            )?;
            for row in rows {
                let topics: Vec<String> = if row.placed {
                    row.topics
                        .iter()
                        .take(view.slots)
                        .map(|t| {
                            let name = view
                                .names
                                .and_then(|names| names.get(t.topic))
                                .map(|name| format!(" ({})", tsv_field(name)))
                                .unwrap_or_default();
                            format!("{}{name}: {:.2} [{:.2}-{:.2}]", t.topic, t.share, t.low, t.high)
                        })
                        .collect()
                } else {
                    vec![UNPLACED.to_string()]
                };
                writeln!(
                    out,
                    "{:<width$}  {}",
                    tsv_field(&row.document),
                    topics.join("   ")
                )?;
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn topics_above_the_threshold_largest_first_and_never_none() {
        // Source: issue 15, item 4 — topics whose share is at least a
        // threshold, or the N largest; the largest is kept so that every
        // document appears (issue 11, item 9).
        let shares = [0.05, 0.6, 0.005, 0.3, 0.045];
        let above = TopicSelection::Largest {
            min_share: 0.01,
            top: None,
        };
        assert_eq!(above.pick(&shares), [1, 3, 0, 4]);
        let top_two = TopicSelection::Largest {
            min_share: 0.0,
            top: Some(2),
        };
        assert_eq!(top_two.pick(&shares), [1, 3]);
        let nothing_passes = TopicSelection::Largest {
            min_share: 0.9,
            top: None,
        };
        assert_eq!(nothing_passes.pick(&shares), [1]);
        assert_eq!(TopicSelection::All.pick(&shares), [0, 1, 2, 3, 4]);
        // Ties go to the lower topic.
        assert_eq!(top_two.pick(&[0.25, 0.5, 0.25]), [1, 0]);
        assert_eq!(above.wide_slots(100), DEFAULT_WIDE_SLOTS);
        assert_eq!(top_two.wide_slots(100), 2);
        assert_eq!(TopicSelection::All.wide_slots(7), 7);
    }

    fn row(placed: bool) -> DocumentRow {
        DocumentRow {
            document: "letters/a\tb.txt".into(),
            label: Some("post".into()),
            tokens: 12,
            unknown_tokens: None,
            placed,
            topics: if placed {
                vec![
                    TopicShare {
                        topic: 4,
                        share: 0.712345678,
                        low: 0.5,
                        high: 0.8512345,
                    },
                    TopicShare {
                        topic: 0,
                        share: 0.2,
                        low: 0.0000123456789,
                        high: 0.4,
                    },
                ]
            } else {
                Vec::new()
            },
        }
    }

    fn tsv(view: &DocumentView, rows: &[DocumentRow]) -> String {
        let mut out = Vec::new();
        write_documents(&mut out, rows, ListingFormat::Tsv, view).unwrap();
        String::from_utf8(out).unwrap()
    }

    #[test]
    fn long_and_wide_tsv_have_fixed_columns() {
        // Source: IANA media type text/tab-separated-values (every record has
        // the header's number of fields, none holds a tab); six significant
        // digits as printf("%.6g") writes them (ISO C11 7.21.6.1).
        let view = DocumentView {
            layout: DocumentLayout::Long,
            slots: 3,
            numbers: Numbers::default(),
            names: None,
        };
        assert_eq!(
            tsv(&view, &[row(true), row(false)]),
            "document\ttopic\tshare\tlow\thigh\n\
             letters/a\\tb.txt\t4\t0.712346\t0.5\t0.851235\n\
             letters/a\\tb.txt\t0\t0.2\t1.23457e-05\t0.4\n\
             letters/a\\tb.txt\tunplaced\t\t\t\n"
        );
        let wide = view.with_layout(DocumentLayout::Wide);
        let text = tsv(&wide, &[row(true), row(false)]);
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(
            lines[0],
            "document\tlabel\ttopic_1\tshare_1\tlow_1\thigh_1\ttopic_2\tshare_2\tlow_2\thigh_2\ttopic_3\tshare_3\tlow_3\thigh_3"
        );
        assert_eq!(
            lines[1],
            "letters/a\\tb.txt\tpost\t4\t0.712346\t0.5\t0.851235\t0\t0.2\t1.23457e-05\t0.4\t\t\t\t"
        );
        assert_eq!(
            lines[2],
            "letters/a\\tb.txt\tpost\tunplaced\t\t\t\t\t\t\t\t\t\t\t"
        );
        for line in &lines {
            assert_eq!(line.split('\t').count(), 2 + 4 * 3, "{line}");
        }
    }

    #[test]
    fn json_rows_carry_rounded_numbers() {
        // Source: RFC 8259 (JSON numbers); the digits are this module's rule.
        let view = DocumentView {
            layout: DocumentLayout::Long,
            slots: 3,
            numbers: Numbers::with_precision(3),
            names: None,
        };
        let mut out = Vec::new();
        view.write_json_line(&mut out, &row(true)).unwrap();
        let value: serde_json::Value = serde_json::from_slice(&out).unwrap();
        assert_eq!(value["topics"][0]["share"], 0.712);
        assert_eq!(value["topics"][0]["topic"], 4);
        assert_eq!(value["placed"], true);
        assert!(value.get("unknown_tokens").is_none());
    }
}
