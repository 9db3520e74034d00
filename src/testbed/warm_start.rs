//! The warm-start figure of `themata bench --warm-start`: a nightly case
//! where tonight's corpus is last night's plus 10% new documents from the
//! same topics, fitted cold and warm from last night's model; sweeps and
//! seconds each needs to reach the log-likelihood the cold start reaches.
//!
//! The corpus comes from the Pólya-urn form of the LDA generative process
//! (`synthetic::urn_corpus`): its documents are exchangeable, so the first
//! 10/11 of them are a corpus from the same topics and the rest are new
//! documents from those topics.

use std::ops::ControlFlow;
use std::time::Instant;

use crate::fitting::fit::{self, FitEvent, FitSettings, PriorSpec};
use crate::fitting::warm::{self, WarmStart};
use crate::ingest::corpus::Corpus;
use crate::model::Model;
use crate::testbed::bench::{Case, corpus_of};

/// What the warm-start case measured.
#[derive(Clone, Debug)]
pub struct WarmStartFigure {
    pub case: Case,
    pub night_one_documents: usize,
    pub night_two_documents: usize,
    /// The log-likelihood both runs had to reach: the mean over the cold
    /// run's last tenth of sweeps.
    pub target: f64,
    pub cold_sweeps: Option<usize>,
    pub cold_seconds: Option<f64>,
    /// Sweeps and seconds of the warm run, its start (the fold-in draws)
    /// included in the seconds.
    pub warm_sweeps: Option<usize>,
    pub warm_seconds: Option<f64>,
    /// Seconds of the warm start itself (carrying assignments over and the
    /// fold-in draws), before the first sweep.
    pub warm_start_seconds: f64,
    pub warm: WarmStart,
}

impl WarmStartFigure {
    /// Warm sweeps over cold sweeps.
    pub fn sweep_ratio(&self) -> Option<f64> {
        Some(self.warm_sweeps? as f64 / self.cold_sweeps?.max(1) as f64)
    }

    /// Warm seconds over cold seconds.
    pub fn time_ratio(&self) -> Option<f64> {
        Some(self.warm_seconds? / self.cold_seconds?.max(f64::MIN_POSITIVE))
    }
}

/// The first `n_docs` documents of `corpus`, with its vocabulary.
fn prefix(corpus: &Corpus, n_docs: usize) -> Corpus {
    let end = corpus.offsets[n_docs] as usize;
    Corpus {
        tokenizer: corpus.tokenizer.clone(),
        vocabulary: corpus.vocabulary.clone(),
        documents: corpus.documents[..n_docs].to_vec(),
        offsets: corpus.offsets[..=n_docs].to_vec(),
        tokens: corpus.tokens[..end].to_vec(),
    }
}

/// Runs `model` to its target, recording (sweep, seconds since `started`,
/// log-likelihood) after every sweep.
fn traced(model: &mut Model, started: Instant) -> Vec<(usize, f64, f64)> {
    let mut points = Vec::new();
    let mut observer = |event: FitEvent| {
        let FitEvent::Sweep {
            done, log_likelihood, ..
        } = event;
        if let Some(value) = log_likelihood {
            points.push((done as usize, started.elapsed().as_secs_f64(), value));
        }
    };
    // The settings were checked when the model started; sampling fails only
    // on a prior-learning error, which fixed priors cannot raise.
    let _ = fit::run_to_target(model, &mut observer, &mut |_| ControlFlow::Continue(()));
    points
}

/// The first point at or above `target`.
fn reached(points: &[(usize, f64, f64)], target: f64) -> Option<(usize, f64)> {
    points
        .iter()
        .find(|&&(_, _, value)| value >= target)
        .map(|&(sweep, seconds, _)| (sweep, seconds))
}

/// Measures the warm-start case on `threads` threads, `case.sweeps` sweeps
/// for last night's fit and for tonight's cold fit.
pub fn warm_start_case(case: &Case, threads: usize, progress: &mut dyn FnMut(&str)) -> WarmStartFigure {
    progress("warm start: generating the corpus");
    let night_two = corpus_of(case);
    let n_two = night_two.n_docs();
    let n_one = n_two * 10 / 11;
    let night_one = prefix(&night_two, n_one);
    let settings = FitSettings {
        trace_every: 1,
        alpha: PriorSpec::Symmetric(crate::testbed::bench::ALPHA_SUM / case.topics as f64),
        burn_in: case.sweeps as u64 / 2,
        ..FitSettings::fixed(
            case.topics,
            case.sweeps as u64,
            crate::testbed::bench::ALPHA_SUM / case.topics as f64,
            crate::testbed::bench::BETA,
            11,
        )
    };
    let pool = crate::thread_pool(threads).expect("a thread pool");
    progress("warm start: last night's fit");
    // Settings built here are valid by construction; see `fit::start`.
    let mut previous = fit::start(night_one, &settings).expect("valid bench settings");
    pool.install(|| traced(&mut previous, Instant::now()));
    progress("warm start: tonight, cold");
    let started = Instant::now();
    let mut cold = fit::start(night_two.clone(), &settings).expect("valid bench settings");
    let cold_points = pool.install(|| traced(&mut cold, started));
    let tail = &cold_points[cold_points.len() - (cold_points.len() / 10).max(1)..];
    let target = tail.iter().map(|&(_, _, value)| value).sum::<f64>() / tail.len() as f64;
    progress("warm start: tonight, warm");
    let started = Instant::now();
    let (mut warm_model, warm) = pool
        .install(|| warm::start_warm(night_two, &settings, &previous))
        .expect("valid bench settings");
    let warm_start_seconds = started.elapsed().as_secs_f64();
    let warm_points = pool.install(|| traced(&mut warm_model, started));
    let cold_reached = reached(&cold_points, target);
    let warm_reached = reached(&warm_points, target);
    WarmStartFigure {
        case: case.clone(),
        night_one_documents: n_one,
        night_two_documents: n_two,
        target,
        cold_sweeps: cold_reached.map(|(sweeps, _)| sweeps),
        cold_seconds: cold_reached.map(|(_, seconds)| seconds),
        warm_sweeps: warm_reached.map(|(sweeps, _)| sweeps),
        warm_seconds: warm_reached.map(|(_, seconds)| seconds),
        warm_start_seconds,
        warm,
    }
}
