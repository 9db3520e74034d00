//! Choosing the number of topics: fit each candidate K with several seeds on
//! the same training documents, score held-out perplexity and coherence,
//! measure stability across seeds, and recommend a K by a stated rule.
//!
//! The rule: **the smallest K whose mean held-out perplexity is within
//! [`PERPLEXITY_TOLERANCE`] (2%) of the lowest mean held-out perplexity of
//! all candidates.** Perplexity rewards extra topics only while they explain
//! held-out words; past the true structure the gains fall inside the noise
//! of the estimate, and the smaller model is preferred.

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;
use serde::Serialize;

use crate::evaluate::coherence::CoherenceSettings;
use crate::evaluate::compare::match_topics;
use crate::evaluate::score::{self, ScoreError, ScoreSettings};
use crate::fitting::fit::{self, FitError, FitSettings};
use crate::ingest::corpus::Corpus;
use crate::settings::{self, SettingsError};

/// Why a sweep could not run.
#[derive(Debug, thiserror::Error)]
pub enum KSearchError {
    #[error(transparent)]
    Fit(#[from] FitError),
    #[error(transparent)]
    Settings(#[from] SettingsError),
    #[error("the held-out fraction keeps no document out; raise --holdout")]
    NoHeldOut,
    #[error("scoring failed: {0}")]
    Scoring(#[from] ScoreError),
}

/// Relative distance from the best perplexity within which the smallest K wins.
pub const PERPLEXITY_TOLERANCE: f64 = 0.02;

/// What to sweep.
#[derive(Clone, Debug)]
pub struct KSearchSettings {
    /// Candidate numbers of topics.
    pub topics: Vec<usize>,
    /// Seeds fitted per candidate.
    pub seeds: Vec<u64>,
    /// Fraction of documents held out (the same documents for every run).
    pub holdout: f64,
    /// Everything else about each fit (`n_topics` and `seed` are replaced).
    pub fit: FitSettings,
}

/// One candidate K, averaged over seeds.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct KSearchRow {
    pub topics: usize,
    pub seeds: usize,
    /// Mean document-completion perplexity of the held-out documents.
    pub heldout_perplexity: f64,
    /// Standard deviation of the perplexity across seeds (0 with one seed).
    pub perplexity_sd: f64,
    /// Mean NPMI (window 10) of the top 10 words on the training documents.
    pub npmi: f64,
    /// Mean UMass of the top 10 words on the training documents.
    pub umass: f64,
    /// Mean Jensen-Shannon distance of Hungarian-matched topics between
    /// every pair of seeds (0 = identical topics); `None` with one seed.
    pub stability: Option<f64>,
}

/// Which end of the candidates the recommendation sits at, if either: then
/// the best K may lie outside the range tried.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum RangeEdge {
    /// The smallest candidate: fewer topics may do as well.
    Smallest,
    /// The largest candidate: more topics may do better.
    Largest,
}

/// The sweep's table and recommendation.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct KSearchReport {
    pub rows: Vec<KSearchRow>,
    pub recommended_topics: usize,
    pub rule: String,
    /// Set when the recommended K is the smallest or largest of two or more
    /// candidates.
    pub recommended_at_edge: Option<RangeEdge>,
    pub training_documents: usize,
    pub heldout_documents: usize,
}

/// One fit of the sweep has finished.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FitDone {
    pub topics: usize,
    pub seed: u64,
    /// Fits finished so far, this one included.
    pub done: usize,
    /// Fits in the whole sweep.
    pub total: usize,
    /// Its held-out perplexity.
    pub heldout_perplexity: f64,
}

/// One fitted run of the sweep.
struct RunResult {
    topics: usize,
    perplexity: f64,
    npmi: f64,
    umass: f64,
    phi: Vec<Vec<f64>>,
}

/// Fits every (K, seed) pair, spread over the current thread pool, calling
/// `on_fit` (from whichever worker ran it) as each fit finishes.
pub fn run_k_search(
    corpus: &Corpus,
    settings: &KSearchSettings,
    on_fit: &(dyn Fn(FitDone) + Sync),
) -> Result<KSearchReport, KSearchError> {
    let mask = score::holdout_mask(corpus, settings.holdout, 0x5eed);
    let (train, held) = score::split_corpus(corpus, &mask);
    if held.n_docs() == 0 {
        return Err(KSearchError::NoHeldOut);
    }
    let held_docs = score::corpus_documents(&held);
    for &topics in &settings.topics {
        let candidate = FitSettings {
            n_topics: topics,
            ..settings.fit.clone()
        };
        settings::check_fit_settings(&candidate)?;
        fit::resolve(&train, &candidate)?;
    }
    let jobs: Vec<(usize, u64)> = settings
        .topics
        .iter()
        .flat_map(|&k| settings.seeds.iter().map(move |&seed| (k, seed)))
        .collect();
    let finished = AtomicUsize::new(0);
    let results: Vec<RunResult> = jobs
        .par_iter()
        .map(|&(topics, seed)| {
            let fit_settings = FitSettings {
                n_topics: topics,
                seed,
                ..settings.fit.clone()
            };
            let (model, _) = fit::fit(train.clone(), &fit_settings, &mut |_| {})?;
            let scored = score::score_heldout(
                &model,
                &held_docs,
                &ScoreSettings {
                    seed,
                    ..ScoreSettings::default()
                },
            )?;
            let documents: Vec<&[u32]> = (0..model.corpus.n_docs())
                .map(|d| model.corpus.doc_tokens(d))
                .collect();
            let coherence =
                score::coherence_report(&model, &documents, "training", &CoherenceSettings::default(), 10)?;
            let perplexity = scored.heldout_perplexity.unwrap_or(f64::INFINITY);
            on_fit(FitDone {
                topics,
                seed,
                done: finished.fetch_add(1, Ordering::Relaxed) + 1,
                total: jobs.len(),
                heldout_perplexity: perplexity,
            });
            Ok(RunResult {
                topics,
                perplexity,
                npmi: coherence.npmi,
                umass: coherence.umass,
                phi: model.topic_word_matrix(),
            })
        })
        .collect::<Result<_, KSearchError>>()?;
    let rows: Vec<KSearchRow> = settings
        .topics
        .iter()
        .map(|&topics| summarise(topics, results.iter().filter(|r| r.topics == topics).collect()))
        .collect();
    let best = rows
        .iter()
        .map(|r| r.heldout_perplexity)
        .fold(f64::INFINITY, f64::min);
    let recommended_topics = rows
        .iter()
        .filter(|r| r.heldout_perplexity <= best * (1.0 + PERPLEXITY_TOLERANCE))
        .map(|r| r.topics)
        .min()
        .unwrap_or(settings.topics[0]);
    let smallest = settings.topics.iter().min().copied();
    let largest = settings.topics.iter().max().copied();
    let recommended_at_edge = if settings.topics.len() < 2 {
        None
    } else if Some(recommended_topics) == largest {
        Some(RangeEdge::Largest)
    } else if Some(recommended_topics) == smallest {
        Some(RangeEdge::Smallest)
    } else {
        None
    };
    Ok(KSearchReport {
        rows,
        recommended_topics,
        recommended_at_edge,
        rule: format!(
            "the smallest K whose mean held-out perplexity is within {:.0}% of the lowest",
            100.0 * PERPLEXITY_TOLERANCE
        ),
        training_documents: train.n_docs(),
        heldout_documents: held.n_docs(),
    })
}

fn summarise(topics: usize, runs: Vec<&RunResult>) -> KSearchRow {
    let n = runs.len() as f64;
    let mean = |f: &dyn Fn(&RunResult) -> f64| runs.iter().map(|r| f(r)).sum::<f64>() / n;
    let perplexity = mean(&|r| r.perplexity);
    let perplexity_sd = if runs.len() > 1 {
        (runs
            .iter()
            .map(|r| (r.perplexity - perplexity).powi(2))
            .sum::<f64>()
            / (n - 1.0))
            .sqrt()
    } else {
        0.0
    };
    let mut distances = Vec::new();
    for (i, a) in runs.iter().enumerate() {
        for b in &runs[i + 1..] {
            let matched = match_topics(&a.phi, &b.phi);
            distances.push(matched.iter().map(|m| m.distance).sum::<f64>() / matched.len() as f64);
        }
    }
    KSearchRow {
        topics,
        seeds: runs.len(),
        heldout_perplexity: perplexity,
        perplexity_sd,
        npmi: mean(&|r| r.npmi),
        umass: mean(&|r| r.umass),
        stability: (!distances.is_empty()).then(|| distances.iter().sum::<f64>() / distances.len() as f64),
    }
}

/// The report as TSV: one line per K, real numbers written by `number`.
pub fn to_tsv(report: &KSearchReport, number: &dyn Fn(f64) -> String) -> String {
    let mut out = String::from(
        "topics\tseeds\theldout_perplexity\tperplexity_sd\tnpmi\tumass\tstability\trecommended\n",
    );
    for row in &report.rows {
        out.push_str(&format!(
            "{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\n",
            row.topics,
            row.seeds,
            number(row.heldout_perplexity),
            number(row.perplexity_sd),
            number(row.npmi),
            number(row.umass),
            row.stability.map_or(String::new(), number),
            row.topics == report.recommended_topics
        ));
    }
    out
}
