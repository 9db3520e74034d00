//! What the report shows, computed from a model and what is known of the
//! run that made it, before anything is drawn: the overview figures, one
//! entry per topic (words with intervals, prevalence, NPMI, representative
//! documents, drift, place on the map, share over time), the tables by
//! period and by label, the traces, and the compact document table.
//!
//! Documents are visited once, in parallel over fixed chunks whose partial
//! sums are added in chunk order, so the figures (and the report's bytes)
//! never depend on the thread count; no D x K matrix is held.

use std::collections::BTreeMap;

use rayon::prelude::*;

use super::ReportError;
use super::mds;
use crate::evaluate::coherence::{self, CoherenceSettings, WindowCooccurrence};
use crate::evaluate::drift;
use crate::fitting::fit::{self, Convergence};
use crate::fitting::sampler::BetaPrior;
use crate::ingest::corpus::BuildSummary;
use crate::model::Model;
use crate::publish::names::TopicNames;
use crate::publish::record::RunRecord;
use crate::publish::side_files::FolderContext;
use crate::report::dates::{self, CalendarDate, Timeline};

/// Representative documents listed on a topic's card.
pub const REPRESENTATIVE_DOCUMENTS: usize = 4;
/// Top words whose coherence (NPMI) a card shows.
pub const COHERENCE_WORDS: usize = 10;
/// Words of a document's opening shown as its snippet.
pub const SNIPPET_WORDS: usize = 30;
/// Labels given a column of their own in the label table; the rest share one.
pub const LABEL_COLUMNS: usize = 16;
/// Documents per chunk of the parallel pass (fixed, so sums do not depend on
/// the thread count).
const CHUNK: usize = 2048;

/// What is known of a model besides the model itself.
#[derive(Clone, Debug)]
pub struct ReportContext<'a> {
    /// A short name for the model: its folder's or its run's name.
    pub title: String,
    /// Editors' topic names, by topic id (run roots only).
    pub names: Option<&'a TopicNames>,
    /// The run record, when the model is a run folder of a run root.
    pub record: Option<&'a RunRecord>,
    /// What the build skipped, when the folder recorded it.
    pub build: Option<&'a BuildSummary>,
    /// Held-out perplexity, when the fit kept documents out.
    pub heldout_perplexity: Option<f64>,
    /// Words listed per topic.
    pub top_words: usize,
    /// Probability of the credible intervals.
    pub level: f64,
    /// Notes to show at the top (for example a names file that did not parse).
    pub warnings: Vec<String>,
}

impl<'a> ReportContext<'a> {
    /// The context of a model read from a folder: `title`, and what the
    /// folder's side files say (names, run record, build, held-out
    /// perplexity, warnings about side files that could not be read).
    pub fn of_folder(
        title: String,
        side: &'a FolderContext,
        top_words: usize,
        level: f64,
    ) -> ReportContext<'a> {
        ReportContext {
            title,
            names: side.names.as_ref(),
            record: side.record.as_ref(),
            build: side.build.as_ref(),
            heldout_perplexity: side.heldout_perplexity,
            top_words,
            level,
            warnings: side.warnings.clone(),
        }
    }
}

/// One of a topic's heaviest words.
#[derive(Clone, Debug, PartialEq)]
pub struct WordFact {
    pub word: String,
    pub weight: f64,
    pub low: f64,
    pub high: f64,
}

/// A document that shows a topic well.
#[derive(Clone, Debug, PartialEq)]
pub struct RepresentativeDocument {
    pub id: String,
    pub label: Option<String>,
    pub date: Option<String>,
    pub share: f64,
    pub low: f64,
    pub high: f64,
    /// The opening words as the model reads them.
    pub snippet: String,
    /// Whether the document goes on after the snippet.
    pub truncated: bool,
    pub tokens: u64,
}

/// How a topic relates to the topic it took over in the previous run.
#[derive(Clone, Debug, PartialEq)]
pub struct DriftFact {
    /// The previous run's name.
    pub previous_run: Option<String>,
    pub predecessor: Option<u32>,
    pub distance: Option<f64>,
    pub prevalence_before: Option<f64>,
    pub words_gained: Vec<String>,
    pub words_lost: Vec<String>,
}

/// One topic as the report shows it.
#[derive(Clone, Debug, PartialEq)]
pub struct TopicFact {
    pub index: usize,
    pub id: u32,
    /// The editors' name, when given.
    pub name: Option<String>,
    pub words: Vec<WordFact>,
    /// Share of all tokens.
    pub prevalence: f64,
    /// Mean NPMI of the heaviest words (None when it could not be computed).
    pub npmi: Option<f64>,
    pub documents: Vec<RepresentativeDocument>,
    /// Documents whose largest share is this topic.
    pub leading_documents: usize,
    pub drift: Option<DriftFact>,
    /// Place on the map (classical scaling of Jensen-Shannon distances).
    pub position: (f64, f64),
    /// Share of the tokens of each period (empty without dates).
    pub over_time: Vec<f64>,
}

impl TopicFact {
    /// The name to show: the editors' name, else the three heaviest words.
    pub fn title(&self) -> String {
        match &self.name {
            Some(name) => name.clone(),
            None => self
                .words
                .iter()
                .take(3)
                .map(|word| word.word.as_str())
                .collect::<Vec<_>>()
                .join(" · "),
        }
    }
}

/// How the priors were set.
#[derive(Clone, Debug, PartialEq)]
pub struct PriorFacts {
    pub alpha_learned: bool,
    pub alpha_sum: f64,
    pub alpha_min: f64,
    pub alpha_max: f64,
    pub beta_learned: bool,
    /// The symmetric beta, or the range of a per-word beta.
    pub beta_low: f64,
    pub beta_high: f64,
}

/// What the build read and skipped.
#[derive(Clone, Debug, PartialEq)]
pub struct BuildFacts {
    pub documents_read: usize,
    pub documents_kept: usize,
    pub skipped_by_reason: BTreeMap<String, usize>,
}

impl BuildFacts {
    /// Skipped documents, all reasons.
    pub fn skipped(&self) -> usize {
        self.skipped_by_reason.values().sum()
    }
}

/// The overview figures.
#[derive(Clone, Debug, PartialEq)]
pub struct Overview {
    pub documents: usize,
    pub tokens: usize,
    pub vocabulary: usize,
    pub topics: usize,
    pub iterations: u64,
    pub burn_in: u64,
    pub samples: usize,
    pub sampler: String,
    pub seed: u64,
    pub priors: PriorFacts,
    pub heldout_perplexity: Option<f64>,
    pub mean_npmi: Option<f64>,
    pub build: Option<BuildFacts>,
    pub convergence: Convergence,
    pub level: f64,
}

/// How documents' dates read.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct DateCounts {
    /// Documents placed on the time axis.
    pub placed: usize,
    /// Documents without a date.
    pub missing: usize,
    /// Documents whose date is not an ISO 8601 date.
    pub unreadable: usize,
    /// One unreadable date and its document, for the note.
    pub example: Option<(String, String)>,
}

/// Prevalence over time.
#[derive(Clone, Debug, PartialEq)]
pub struct TimeFacts {
    pub step: String,
    pub periods: Vec<String>,
    pub documents: Vec<usize>,
}

/// Prevalence by label.
#[derive(Clone, Debug, PartialEq)]
pub struct LabelFacts {
    /// Column headings: the most frequent labels, then possibly "other".
    pub columns: Vec<String>,
    /// Documents in each column.
    pub documents: Vec<usize>,
    /// Per topic, its share of the tokens of each column's documents.
    pub shares: Vec<Vec<f64>>,
    /// Documents with no label.
    pub unlabelled: usize,
    /// Distinct labels in all.
    pub distinct: usize,
}

/// The traces of the fit.
#[derive(Clone, Debug, PartialEq)]
pub struct Traces {
    pub log_likelihood: Vec<(u64, f64)>,
    /// Per recorded sweep, every topic's alpha (learned alpha only).
    pub alpha: Option<Vec<(u64, Vec<f64>)>>,
    /// The symmetric beta per recorded sweep (learned beta only).
    pub beta: Option<Vec<(u64, f64)>>,
    pub burn_in: u64,
}

/// One row of the document browser.
#[derive(Clone, Debug, PartialEq)]
pub struct DocumentRow {
    pub id: String,
    /// Index into [`DocumentTable::labels`].
    pub label: Option<usize>,
    /// The date as read (ISO 8601), when readable.
    pub date: Option<String>,
    pub tokens: u64,
    /// Index of the topic with the largest share, and that share.
    pub top: (usize, f64),
    /// The second largest.
    pub second: (usize, f64),
}

/// Every document, compactly.
#[derive(Clone, Debug, PartialEq)]
pub struct DocumentTable {
    /// Distinct labels, most frequent first.
    pub labels: Vec<String>,
    pub rows: Vec<DocumentRow>,
}

/// Everything the page shows.
#[derive(Clone, Debug, PartialEq)]
pub struct Facts {
    pub title: String,
    pub overview: Overview,
    pub topics: Vec<TopicFact>,
    pub dates: DateCounts,
    pub time: Option<TimeFacts>,
    pub labels: Option<LabelFacts>,
    pub traces: Traces,
    pub documents: DocumentTable,
    /// The previous run this one was compared with (run roots only).
    pub previous_run: Option<String>,
    pub warnings: Vec<String>,
}

/// Partial sums of one chunk of documents.
struct ChunkSums {
    rows: Vec<DocumentRow>,
    /// Per topic, the chunk's best `(share, doc)` candidates.
    best: Vec<Vec<(f64, usize)>>,
    /// Per period, topic-weighted tokens (K each) and tokens.
    period_topic: Vec<Vec<f64>>,
    period_tokens: Vec<f64>,
    period_documents: Vec<usize>,
    /// Per label column, topic-weighted tokens and tokens.
    label_topic: Vec<Vec<f64>>,
    label_tokens: Vec<f64>,
    label_documents: Vec<usize>,
    leading: Vec<usize>,
}

/// Keeps the `limit` best `(share, doc)` pairs, best first (ties: earlier document).
fn keep_best(best: &mut Vec<(f64, usize)>, candidate: (f64, usize), limit: usize) {
    let better = |a: &(f64, usize), b: &(f64, usize)| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1));
    if best.len() == limit
        && best
            .last()
            .is_some_and(|last| better(&candidate, last) != std::cmp::Ordering::Less)
    {
        return;
    }
    let at = best.partition_point(|kept| better(kept, &candidate) == std::cmp::Ordering::Less);
    best.insert(at, candidate);
    best.truncate(limit);
}

/// The two largest shares (first on ties).
fn top_two(shares: &[f64]) -> ((usize, f64), (usize, f64)) {
    let mut first = (0, f64::NEG_INFINITY);
    let mut second = (0, f64::NEG_INFINITY);
    for (topic, &share) in shares.iter().enumerate() {
        if share > first.1 {
            second = first;
            first = (topic, share);
        } else if share > second.1 {
            second = (topic, share);
        }
    }
    if shares.len() < 2 {
        second = (first.0, 0.0);
    }
    (first, second)
}

/// A topic's heaviest word ids, heaviest first (ties: lower id).
fn heaviest(row: &[f64], n: usize) -> Vec<u32> {
    let by_weight = |a: &u32, b: &u32| row[*b as usize].total_cmp(&row[*a as usize]).then(a.cmp(b));
    let mut order: Vec<u32> = (0..row.len() as u32).collect();
    let n = n.min(order.len());
    if n == 0 {
        return Vec::new();
    }
    if n < order.len() {
        order.select_nth_unstable_by(n - 1, by_weight);
        order.truncate(n);
    }
    order.sort_by(by_weight);
    order
}

fn prior_facts(model: &Model) -> PriorFacts {
    let alpha = &model.priors.alpha;
    let (beta_low, beta_high) = match &model.priors.beta {
        BetaPrior::Symmetric(value) => (*value, *value),
        BetaPrior::Asymmetric(values) => values
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(low, high), &v| {
                (low.min(v), high.max(v))
            }),
    };
    PriorFacts {
        alpha_learned: model.schedule.learn_alpha,
        alpha_sum: model.priors.alpha_sum(),
        alpha_min: alpha.iter().copied().fold(f64::INFINITY, f64::min),
        alpha_max: alpha.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        beta_learned: model.schedule.learn_beta,
        beta_low,
        beta_high,
    }
}

/// Gathers everything the report shows.
pub fn gather(model: &Model, context: &ReportContext<'_>) -> Result<Facts, ReportError> {
    let n_topics = model.n_topics();
    let n_docs = model.corpus.n_docs();
    let vocabulary = &model.corpus.vocabulary;
    let mut warnings = context.warnings.clone();

    // Topics: heaviest words (for the cards and for coherence).
    let listed = context.top_words.max(1);
    let per_topic: Vec<(Vec<u32>, Vec<WordFact>)> = (0..n_topics)
        .into_par_iter()
        .map(|topic| {
            let row = model.topic_word_row(topic);
            let words = heaviest(&row, listed.max(COHERENCE_WORDS));
            let facts = words
                .iter()
                .take(listed)
                .map(|&word| {
                    let interval = model.topic_word_interval(topic, word as usize, context.level)?;
                    Ok(WordFact {
                        word: vocabulary.display(word).to_string(),
                        weight: row[word as usize],
                        low: interval.low,
                        high: interval.high,
                    })
                })
                .collect::<Result<Vec<_>, ReportError>>()?;
            Ok((words, facts))
        })
        .collect::<Result<_, ReportError>>()?;
    let (heaviest_words, word_facts): (Vec<Vec<u32>>, Vec<Vec<WordFact>>) = per_topic.into_iter().unzip();

    // Coherence of each topic's heaviest words on the training documents.
    let coherence_words: Vec<Vec<u32>> = heaviest_words
        .iter()
        .map(|words| words.iter().take(COHERENCE_WORDS).copied().collect())
        .collect();
    let documents: Vec<&[u32]> = (0..n_docs).map(|doc| model.corpus.doc_tokens(doc)).collect();
    let settings = CoherenceSettings::default();
    // Counting the windows is one sequential pass over the tokens; the map's
    // distances run in parallel beside it.
    let (reference, positions) = rayon::join(
        || WindowCooccurrence::from_documents(&documents, &coherence_words, settings.npmi_window),
        || mds::classical_scaling(&drift::distances_within(model)),
    );
    let npmi: Vec<Option<f64>> = match reference {
        Ok(reference) => coherence_words
            .iter()
            .map(|words| coherence::npmi(words, &reference, settings.epsilon).ok())
            .collect(),
        Err(err) => {
            warnings.push(format!("coherence could not be computed: {err}"));
            vec![None; n_topics]
        }
    };
    let scored: Vec<f64> = npmi.iter().flatten().copied().collect();
    let mean_npmi = (!scored.is_empty()).then(|| scored.iter().sum::<f64>() / scored.len() as f64);

    // Dates and labels.
    let mut date_counts = DateCounts::default();
    let parsed: Vec<Option<CalendarDate>> = model
        .corpus
        .documents
        .iter()
        .map(|info| match &info.date {
            None => {
                date_counts.missing += 1;
                None
            }
            Some(text) => {
                let date = dates::parse_date(text);
                if date.is_none() {
                    date_counts.unreadable += 1;
                    if date_counts.example.is_none() {
                        date_counts.example = Some((info.id.clone(), text.clone()));
                    }
                }
                date
            }
        })
        .collect();
    let known: Vec<CalendarDate> = parsed.iter().flatten().copied().collect();
    let timeline = Timeline::covering(&known);
    let periods: Vec<Option<usize>> = parsed
        .iter()
        .map(|date| date.and_then(|date| timeline.as_ref().and_then(|axis| axis.index(&date))))
        .collect();
    date_counts.placed = periods.iter().flatten().count();
    let n_periods = timeline.as_ref().map_or(0, Timeline::len);

    let mut label_counts: BTreeMap<&str, usize> = BTreeMap::new();
    for info in &model.corpus.documents {
        if let Some(label) = &info.label {
            *label_counts.entry(label.as_str()).or_insert(0) += 1;
        }
    }
    let mut labels: Vec<(&str, usize)> = label_counts.into_iter().collect();
    labels.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(b.0)));
    let label_index: BTreeMap<&str, usize> = labels
        .iter()
        .enumerate()
        .map(|(index, &(label, _))| (label, index))
        .collect();
    let label_columns = labels.len().min(LABEL_COLUMNS) + usize::from(labels.len() > LABEL_COLUMNS);

    // One pass over the documents.
    let chunks: Vec<ChunkSums> = (0..n_docs.div_ceil(CHUNK))
        .into_par_iter()
        .map(|chunk| {
            let mut sums = ChunkSums {
                rows: Vec::with_capacity(CHUNK),
                best: vec![Vec::new(); n_topics],
                period_topic: vec![vec![0.0; n_topics]; n_periods],
                period_tokens: vec![0.0; n_periods],
                period_documents: vec![0; n_periods],
                label_topic: vec![vec![0.0; n_topics]; label_columns],
                label_tokens: vec![0.0; label_columns],
                label_documents: vec![0; label_columns],
                leading: vec![0; n_topics],
            };
            for doc in chunk * CHUNK..((chunk + 1) * CHUNK).min(n_docs) {
                let info = &model.corpus.documents[doc];
                let shares = model.doc_topic_shares(doc);
                let tokens = model.doc_len(doc);
                for (topic, &share) in shares.iter().enumerate() {
                    keep_best(&mut sums.best[topic], (share, doc), REPRESENTATIVE_DOCUMENTS);
                }
                if let Some(period) = periods[doc] {
                    for (total, &share) in sums.period_topic[period].iter_mut().zip(&shares) {
                        *total += tokens as f64 * share;
                    }
                    sums.period_tokens[period] += tokens as f64;
                    sums.period_documents[period] += 1;
                }
                let label = info
                    .label
                    .as_deref()
                    .and_then(|label| label_index.get(label).copied());
                if let Some(label) = label {
                    let column = label.min(LABEL_COLUMNS);
                    for (total, &share) in sums.label_topic[column].iter_mut().zip(&shares) {
                        *total += tokens as f64 * share;
                    }
                    sums.label_tokens[column] += tokens as f64;
                    sums.label_documents[column] += 1;
                }
                let (top, second) = top_two(&shares);
                sums.leading[top.0] += 1;
                sums.rows.push(DocumentRow {
                    id: info.id.clone(),
                    label,
                    date: parsed[doc].map(|date| date.iso()),
                    tokens,
                    top,
                    second,
                });
            }
            sums
        })
        .collect();
    let mut rows = Vec::with_capacity(n_docs);
    let mut best: Vec<Vec<(f64, usize)>> = vec![Vec::new(); n_topics];
    let mut period_topic = vec![vec![0.0; n_topics]; n_periods];
    let mut period_tokens = vec![0.0; n_periods];
    let mut period_documents = vec![0usize; n_periods];
    let mut label_topic = vec![vec![0.0; n_topics]; label_columns];
    let mut label_tokens = vec![0.0; label_columns];
    let mut label_documents = vec![0usize; label_columns];
    let mut leading = vec![0usize; n_topics];
    for sums in chunks {
        rows.extend(sums.rows);
        for (kept, candidates) in best.iter_mut().zip(sums.best) {
            for candidate in candidates {
                keep_best(kept, candidate, REPRESENTATIVE_DOCUMENTS);
            }
        }
        let add = |totals: &mut Vec<Vec<f64>>, part: Vec<Vec<f64>>| {
            for (total, part) in totals.iter_mut().zip(part) {
                for (value, add) in total.iter_mut().zip(part) {
                    *value += add;
                }
            }
        };
        add(&mut period_topic, sums.period_topic);
        add(&mut label_topic, sums.label_topic);
        for (value, add) in period_tokens.iter_mut().zip(sums.period_tokens) {
            *value += add;
        }
        for (value, add) in period_documents.iter_mut().zip(sums.period_documents) {
            *value += add;
        }
        for (value, add) in label_tokens.iter_mut().zip(sums.label_tokens) {
            *value += add;
        }
        for (value, add) in label_documents.iter_mut().zip(sums.label_documents) {
            *value += add;
        }
        for (value, add) in leading.iter_mut().zip(sums.leading) {
            *value += add;
        }
    }

    // Representative documents with their intervals and snippets.
    let representative: Vec<Vec<RepresentativeDocument>> = best
        .par_iter()
        .enumerate()
        .map(|(topic, candidates)| {
            candidates
                .iter()
                .map(|&(share, doc)| {
                    let info = &model.corpus.documents[doc];
                    let interval = model.doc_topic_interval(doc, topic, context.level)?;
                    let tokens = model.corpus.doc_tokens(doc);
                    let snippet: Vec<&str> = tokens
                        .iter()
                        .take(SNIPPET_WORDS)
                        .map(|&word| vocabulary.display(word))
                        .collect();
                    Ok(RepresentativeDocument {
                        id: info.id.clone(),
                        label: info.label.clone(),
                        date: info.date.clone(),
                        share,
                        low: interval.low,
                        high: interval.high,
                        snippet: snippet.join(" "),
                        truncated: tokens.len() > SNIPPET_WORDS,
                        tokens: tokens.len() as u64,
                    })
                })
                .collect::<Result<Vec<_>, ReportError>>()
        })
        .collect::<Result<_, _>>()?;

    let prevalence = model.topic_token_shares();
    let previous_run = context.record.and_then(|record| record.previous.clone());
    let topics: Vec<TopicFact> = word_facts
        .into_iter()
        .zip(representative)
        .enumerate()
        .map(|(index, (words, documents))| {
            let id = model.topic_ids.get(index).copied().unwrap_or(index as u32);
            let drift = context
                .record
                .filter(|record| record.previous.is_some())
                .and_then(|record| record.topics.iter().find(|topic| topic.index == index))
                .map(|topic| DriftFact {
                    previous_run: previous_run.clone(),
                    predecessor: topic.predecessor,
                    distance: topic.distance,
                    prevalence_before: topic.prevalence_before,
                    words_gained: topic.words_gained.clone(),
                    words_lost: topic.words_lost.clone(),
                });
            TopicFact {
                index,
                id,
                name: context.names.and_then(|names| names.get(id)).map(str::to_string),
                words,
                prevalence: prevalence[index],
                npmi: npmi[index],
                documents,
                leading_documents: leading[index],
                drift,
                position: positions.get(index).copied().unwrap_or((0.0, 0.0)),
                over_time: (0..n_periods)
                    .map(|period| {
                        if period_tokens[period] > 0.0 {
                            period_topic[period][index] / period_tokens[period]
                        } else {
                            0.0
                        }
                    })
                    .collect(),
            }
        })
        .collect();

    let time = timeline.map(|axis| TimeFacts {
        step: axis.step.name(),
        periods: axis.labels.clone(),
        documents: period_documents,
    });
    let label_facts = (!labels.is_empty()).then(|| {
        let mut columns: Vec<String> = labels
            .iter()
            .take(LABEL_COLUMNS)
            .map(|(label, _)| label.to_string())
            .collect();
        if labels.len() > LABEL_COLUMNS {
            columns.push(format!("{} other labels", labels.len() - LABEL_COLUMNS));
        }
        LabelFacts {
            columns,
            documents: label_documents,
            shares: (0..n_topics)
                .map(|topic| {
                    label_topic
                        .iter()
                        .zip(&label_tokens)
                        .map(|(column, &tokens)| if tokens > 0.0 { column[topic] / tokens } else { 0.0 })
                        .collect()
                })
                .collect(),
            unlabelled: n_docs - labels.iter().map(|(_, count)| count).sum::<usize>(),
            distinct: labels.len(),
        }
    });

    let overview = Overview {
        documents: n_docs,
        tokens: model.corpus.n_tokens(),
        vocabulary: vocabulary.len(),
        topics: n_topics,
        iterations: model.iterations_done,
        burn_in: model.schedule.burn_in,
        samples: model.samples.len().max(1),
        sampler: model.schedule.sampler.name().to_string(),
        seed: model.seed,
        priors: prior_facts(model),
        heldout_perplexity: context.heldout_perplexity,
        mean_npmi,
        build: context.build.map(|build| BuildFacts {
            documents_read: build.documents_read,
            documents_kept: build.documents_kept,
            skipped_by_reason: build.skipped.clone(),
        }),
        convergence: fit::convergence(model),
        level: context.level,
    };
    let traces = Traces {
        log_likelihood: model.trace.clone(),
        alpha: model.schedule.learn_alpha.then(|| model.alpha_trace.clone()),
        beta: (model.schedule.learn_beta && matches!(model.priors.beta, BetaPrior::Symmetric(_)))
            .then(|| model.beta_trace.clone()),
        burn_in: model.schedule.burn_in,
    };
    Ok(Facts {
        title: context.title.clone(),
        overview,
        topics,
        dates: date_counts,
        time,
        labels: label_facts,
        traces,
        documents: DocumentTable {
            labels: labels.iter().map(|(label, _)| label.to_string()).collect(),
            rows,
        },
        previous_run,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_best_candidates_are_kept_in_order() {
        // Source: common practice — a bounded top-n list, ties to the
        // earlier item, equal to sorting everything and taking n.
        let shares = [0.2, 0.9, 0.5, 0.9, 0.1, 0.7];
        let mut best = Vec::new();
        for (doc, &share) in shares.iter().enumerate() {
            keep_best(&mut best, (share, doc), 3);
        }
        assert_eq!(best, vec![(0.9, 1), (0.9, 3), (0.7, 5)]);
        assert_eq!(top_two(&[0.1, 0.6, 0.3]), ((1, 0.6), (2, 0.3)));
        assert_eq!(top_two(&[0.5, 0.5]), ((0, 0.5), (1, 0.5)));
        assert_eq!(heaviest(&[0.1, 0.4, 0.4, 0.1], 2), vec![1, 2]);
    }
}
