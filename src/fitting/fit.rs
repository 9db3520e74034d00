//! Fitting: checks the fit settings against the corpus, initialises the
//! sampler state from the seed, runs the sweeps, learns the priors when asked
//! (Minka's fixed point with Wallach's histograms, after burn-in), records
//! the log-likelihood and prior traces, keeps posterior samples, and judges
//! convergence. Reports progress and checkpoints through callbacks and does
//! no I/O of its own.

use std::ops::{ControlFlow, Range};
use std::time::Instant;

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use crate::fitting::priors::{self, CountHistogram, HistogramBuilder, LearnSettings};
use crate::fitting::sampler::{self, BetaPrior, CountState, MAX_TOKENS, Priors, ShardedSampler};
use crate::fitting::schedule::{CorpusShape, SamplerChoice, Schedule};
use crate::ingest::corpus::Corpus;
use crate::model::{Model, Sample};

/// A prior given by the user: one value for all, one value per entry, or
/// learned from the data.
#[derive(Clone, Debug, PartialEq)]
pub enum PriorSpec {
    /// The same value everywhere.
    Symmetric(f64),
    /// One value per topic (alpha) or per word (beta).
    List(Vec<f64>),
    /// Learned from the data, starting from the default value.
    Learn,
}

impl std::str::FromStr for PriorSpec {
    type Err = String;

    /// Parses `learn`, `X` or `X,Y,...`.
    fn from_str(text: &str) -> Result<PriorSpec, String> {
        if text.trim().eq_ignore_ascii_case("learn") {
            return Ok(PriorSpec::Learn);
        }
        let values: Result<Vec<f64>, _> = text.split(',').map(|part| part.trim().parse::<f64>()).collect();
        match values {
            Ok(values) if values.len() == 1 => Ok(PriorSpec::Symmetric(values[0])),
            Ok(values) => Ok(PriorSpec::List(values)),
            Err(_) => Err(format!(
                "`{text}` is not `learn`, a number or a comma-separated list of numbers"
            )),
        }
    }
}

impl<'de> Deserialize<'de> for PriorSpec {
    /// Accepts a number, a list of numbers, or a string as for `FromStr`.
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<PriorSpec, D::Error> {
        #[derive(Deserialize)]
        #[serde(untagged)]
        enum Raw {
            Number(f64),
            List(Vec<f64>),
            Text(String),
        }
        match Raw::deserialize(deserializer)? {
            Raw::Number(value) => Ok(PriorSpec::Symmetric(value)),
            Raw::List(values) => Ok(PriorSpec::List(values)),
            Raw::Text(text) => text.parse().map_err(serde::de::Error::custom),
        }
    }
}

/// Starting value of a learned alpha (per topic) and a learned beta.
pub const LEARN_START_ALPHA: f64 = 0.1;
/// Starting value of a learned beta.
pub const LEARN_START_BETA: f64 = 0.01;

/// Gibbs sweeps of a fit, burn-in included, when none are given.
pub const DEFAULT_ITERATIONS: u64 = 1000;
/// Burn-in sweeps when none are given (at most half the iterations).
pub const DEFAULT_BURN_IN: u64 = 100;
/// Sweeps between two prior-learning steps after burn-in, by default.
pub const DEFAULT_LEARN_EVERY: u64 = 10;
/// Posterior samples kept at the end of a run, by default.
pub const DEFAULT_SAMPLES: u64 = 1;
/// Sweeps between kept samples, by default.
pub const DEFAULT_LAG: u64 = 10;
/// The seed of the random stream when none is given.
pub const DEFAULT_SEED: u64 = 1;
/// Sweeps between two log-likelihood trace points, by default.
pub const DEFAULT_TRACE_EVERY: u64 = 10;

/// Resolved fit settings.
#[derive(Clone, Debug, PartialEq)]
pub struct FitSettings {
    pub n_topics: usize,
    pub iterations: u64,
    pub burn_in: u64,
    pub alpha: PriorSpec,
    pub beta: PriorSpec,
    pub learn_every: u64,
    pub samples: u64,
    pub lag: u64,
    pub seed: u64,
    pub trace_every: u64,
    /// The sampler asked for.
    pub sampler: SamplerChoice,
    /// Shards for parallel sweeps; `None` picks one per 524,288 tokens (exact)
    /// or 262,144 tokens (Metropolis-Hastings, sparse), at most 8.
    pub shards: Option<usize>,
}

impl FitSettings {
    /// Settings with fixed priors, one sample and no learning: the plain
    /// sampler as in the worked examples.
    pub fn fixed(n_topics: usize, iterations: u64, alpha: f64, beta: f64, seed: u64) -> FitSettings {
        FitSettings {
            n_topics,
            iterations,
            burn_in: iterations / 2,
            alpha: PriorSpec::Symmetric(alpha),
            beta: PriorSpec::Symmetric(beta),
            learn_every: DEFAULT_LEARN_EVERY,
            samples: 1,
            lag: 1,
            seed,
            trace_every: DEFAULT_TRACE_EVERY,
            sampler: SamplerChoice::Auto,
            shards: None,
        }
    }
}

/// Settings that cannot work with the corpus given (the rules that need no
/// corpus are checked by `settings::check_fit_settings`).
#[derive(Debug, thiserror::Error)]
pub enum FitError {
    #[error("{topics} topics is more than the {tokens} tokens of the corpus; choose fewer topics")]
    TooManyTopics { topics: usize, tokens: usize },
    #[error("at least one iteration is needed")]
    NoIterations,
    #[error(
        "{samples} samples {lag} sweeps apart need {needed} sweeps after burn-in, but only {available} remain; lower --samples or --lag, or raise --iterations"
    )]
    SamplesDoNotFit {
        samples: u64,
        lag: u64,
        needed: u64,
        available: u64,
    },
    #[error("{name} has {found} values but needs 1 or {expected} (one per {per})")]
    PriorLength {
        name: &'static str,
        found: usize,
        expected: usize,
        per: &'static str,
    },
    #[error("the corpus has no tokens")]
    EmptyCorpus,
    #[error("the corpus has {tokens} tokens, more than the {max} a model can hold; split it")]
    CorpusTooLarge { tokens: usize, max: usize },
    #[error("learning the priors failed: {0}")]
    Learning(#[from] crate::fitting::priors::PriorError),
    #[error(
        "a warm start needs the previous model's number of topics: it has {previous} topics, this fit asks for {asked}; set topics = {previous} or start cold"
    )]
    WarmTopics { previous: usize, asked: usize },
}

/// What the caller is told while fitting.
#[derive(Clone, Copy, Debug)]
pub enum FitEvent {
    /// A sweep finished; `log_likelihood` is set when the trace recorded one.
    Sweep {
        done: u64,
        total: u64,
        log_likelihood: Option<f64>,
    },
}

/// Timing of the sampling phase.
#[derive(Clone, Copy, Debug, Default)]
pub struct FitTiming {
    /// Wall-clock seconds spent in sweeps (likelihood and learning excluded).
    pub sampling_seconds: f64,
    /// Token updates performed.
    pub token_updates: u64,
}

impl FitTiming {
    /// Token updates per second of sampling.
    pub fn tokens_per_second(&self) -> f64 {
        if self.sampling_seconds > 0.0 {
            self.token_updates as f64 / self.sampling_seconds
        } else {
            0.0
        }
    }
}

/// The prior's values for `expected` entries: one value for all, or one each.
fn expand(
    name: &'static str,
    spec: &PriorSpec,
    expected: usize,
    per: &'static str,
    learn_start: f64,
) -> Result<Vec<f64>, FitError> {
    match spec {
        PriorSpec::Learn => Ok(vec![learn_start; expected]),
        PriorSpec::Symmetric(value) => Ok(vec![*value; expected]),
        PriorSpec::List(values) if values.len() == 1 => Ok(vec![values[0]; expected]),
        PriorSpec::List(values) if values.len() == expected => Ok(values.clone()),
        PriorSpec::List(values) => Err(FitError::PriorLength {
            name,
            found: values.len(),
            expected,
            per,
        }),
    }
}

/// Checks the sample plan of a model continued for `available` sweeps.
fn check_samples(samples: u64, lag: u64, available: u64) -> Result<(), FitError> {
    let needed = (samples.max(1) - 1).saturating_mul(lag).saturating_add(1);
    if needed > available {
        return Err(FitError::SamplesDoNotFit {
            samples,
            lag,
            needed,
            available,
        });
    }
    Ok(())
}

/// Checks the settings against the corpus and resolves the starting priors
/// and the schedule. The settings are taken as checked by
/// `settings::check_fit_settings` (as `FitOptions::resolve` does); only the
/// rules that need the corpus are checked here.
pub fn resolve(corpus: &Corpus, settings: &FitSettings) -> Result<(Priors, Schedule), FitError> {
    if corpus.n_tokens() == 0 {
        return Err(FitError::EmptyCorpus);
    }
    if corpus.n_tokens() > MAX_TOKENS {
        return Err(FitError::CorpusTooLarge {
            tokens: corpus.n_tokens(),
            max: MAX_TOKENS,
        });
    }
    if settings.n_topics > corpus.n_tokens() {
        return Err(FitError::TooManyTopics {
            topics: settings.n_topics,
            tokens: corpus.n_tokens(),
        });
    }
    let alpha = expand(
        "alpha",
        &settings.alpha,
        settings.n_topics,
        "topic",
        LEARN_START_ALPHA,
    )?;
    let beta = match &settings.beta {
        PriorSpec::List(values) if values.len() > 1 => BetaPrior::Asymmetric(expand(
            "beta",
            &settings.beta,
            corpus.vocabulary.len(),
            "vocabulary word",
            LEARN_START_BETA,
        )?),
        PriorSpec::List(values) => BetaPrior::Symmetric(values[0]),
        PriorSpec::Symmetric(value) => BetaPrior::Symmetric(*value),
        PriorSpec::Learn => BetaPrior::Symmetric(LEARN_START_BETA),
    };
    let sampler = settings
        .sampler
        .resolve(&CorpusShape::of(corpus, settings.n_topics));
    let shards = if sampler.is_block_parallel() {
        settings
            .shards
            .unwrap_or_else(|| sampler::default_shards(corpus.n_tokens(), sampler))
            .min(corpus.n_docs().max(1))
    } else {
        1
    };
    let schedule = Schedule {
        sampler,
        shards: u32::try_from(shards).unwrap_or(u32::MAX),
        burn_in: settings.burn_in,
        learn_alpha: settings.alpha == PriorSpec::Learn,
        learn_beta: settings.beta == PriorSpec::Learn,
        learn_every: settings.learn_every,
        samples: settings.samples,
        lag: settings.lag,
        trace_every: settings.trace_every,
    };
    Ok((Priors { alpha, beta }, schedule))
}

/// Starts a model: random initial assignments from the seed, traces at
/// iteration 0, the run target set to `settings.iterations`.
pub fn start(corpus: Corpus, settings: &FitSettings) -> Result<Model, FitError> {
    let (priors, schedule) = resolve(&corpus, settings)?;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(settings.seed);
    let state = CountState::random(&corpus, settings.n_topics, &mut rng);
    Ok(start_from_state(corpus, settings, priors, schedule, state, rng))
}

/// A model at iteration 0 from a starting state (random, or warm from a
/// previous model), with its traces begun.
pub(crate) fn start_from_state(
    corpus: Corpus,
    settings: &FitSettings,
    priors: Priors,
    schedule: Schedule,
    state: CountState,
    rng: Xoshiro256PlusPlus,
) -> Model {
    let initial = sampler::log_likelihood(&state, &corpus, &priors).total();
    let beta_trace = match &priors.beta {
        BetaPrior::Symmetric(value) => vec![(0, *value)],
        BetaPrior::Asymmetric(_) => Vec::new(),
    };
    Model {
        corpus,
        alpha_trace: vec![(0, priors.alpha.clone())],
        beta_trace,
        priors,
        state,
        iterations_done: 0,
        target: settings.iterations,
        schedule,
        seed: settings.seed,
        rng,
        trace: vec![(0, initial)],
        samples: Vec::new(),
        topic_ids: (0..settings.n_topics as u32).collect(),
    }
}

/// Fits a model to `corpus` from scratch.
pub fn fit(
    corpus: Corpus,
    settings: &FitSettings,
    observer: &mut dyn FnMut(FitEvent),
) -> Result<(Model, FitTiming), FitError> {
    let mut model = start(corpus, settings)?;
    let timing = run_to_target(&mut model, observer, &mut |_| ControlFlow::Continue(()))?;
    Ok((model, timing))
}

/// Prepares a fitted model for `sweeps` more sweeps: moves the target on and
/// starts a fresh set of samples within the new sweeps.
pub fn extend(model: &mut Model, sweeps: u64) -> Result<(), FitError> {
    if sweeps == 0 {
        return Err(FitError::NoIterations);
    }
    check_samples(model.schedule.samples, model.schedule.lag, sweeps)?;
    model.target = model.iterations_done + sweeps;
    model.samples.clear();
    Ok(())
}

/// Is `iteration` one of the kept-sample iterations of a run ending at `target`?
fn is_sample_iteration(schedule: &Schedule, iteration: u64, target: u64) -> bool {
    iteration <= target
        && (target - iteration).is_multiple_of(schedule.lag)
        && (target - iteration) / schedule.lag < schedule.samples
}

/// How a run's sweeps and its whole-state steps are carried out: in this
/// process ([`LocalEngine`]), or by one rank of a distributed fit
/// (`fitting::distributed`), where a rank holds only part of the state
/// between sweeps.
pub trait SweepEngine {
    /// One sweep of the model's state (sweep number `model.iterations_done + 1`).
    fn sweep(&mut self, model: &mut Model);
    /// For each topic, the histogram of its token count over documents.
    fn doc_topic_histograms(&mut self, model: &Model) -> Vec<CountHistogram>;
    /// The histogram of every non-zero word-topic count.
    fn word_topic_histogram(&mut self, model: &Model) -> CountHistogram;
    /// The joint log-likelihood of the state.
    fn log_likelihood(&mut self, model: &Model) -> f64;
    /// Called after sweep `done` (and the learning and trace steps) with
    /// `whole` true when a posterior sample is taken or the run ends: makes
    /// `model.state` whole and current here when it, or a checkpoint due
    /// after this sweep, needs it.
    fn settle(&mut self, model: &mut Model, done: u64, whole: bool);
}

/// The sweeps of one process: the block grid on the thread pool, or the
/// reference sweep.
pub struct LocalEngine {
    sharded: Option<ShardedSampler>,
}

impl LocalEngine {
    /// The engine for `model`'s sampler and shards.
    pub fn new(model: &Model) -> LocalEngine {
        LocalEngine {
            sharded: ShardedSampler::new(
                &model.corpus,
                model.schedule.shards as usize,
                model.schedule.sampler,
            ),
        }
    }
}

impl SweepEngine for LocalEngine {
    fn sweep(&mut self, model: &mut Model) {
        match &mut self.sharded {
            Some(engine) => engine.sweep(
                &mut model.state,
                &model.corpus,
                &model.priors,
                model.seed,
                model.iterations_done + 1,
            ),
            None => sampler::sweep_reference(&mut model.state, &model.corpus, &model.priors, &mut model.rng),
        }
    }

    fn doc_topic_histograms(&mut self, model: &Model) -> Vec<CountHistogram> {
        doc_topic_histograms(&model.state, &model.corpus, 0..model.corpus.n_docs())
    }

    fn word_topic_histogram(&mut self, model: &Model) -> CountHistogram {
        word_topic_histogram(&model.state, 0..model.state.n_words)
    }

    fn log_likelihood(&mut self, model: &Model) -> f64 {
        sampler::log_likelihood(&model.state, &model.corpus, &model.priors).total()
    }

    fn settle(&mut self, _model: &mut Model, _done: u64, _whole: bool) {}
}

/// Runs sweeps until the model reaches its target. After each sweep, in this
/// order: learn the priors if due, record the trace if due, keep a sample if
/// due, then hand the model to `checkpoint` (which may save it, or stop the
/// run by breaking). The order is part of the format: a model resumed from
/// any checkpoint ends identical to one never interrupted.
pub fn run_to_target(
    model: &mut Model,
    observer: &mut dyn FnMut(FitEvent),
    checkpoint: &mut dyn FnMut(&Model) -> ControlFlow<()>,
) -> Result<FitTiming, FitError> {
    let mut engine = LocalEngine::new(model);
    run_with_engine(model, &mut engine, observer, checkpoint)
}

/// [`run_to_target`] with the sweeps and the whole-state steps carried out
/// by `engine`.
pub fn run_with_engine(
    model: &mut Model,
    engine: &mut dyn SweepEngine,
    observer: &mut dyn FnMut(FitEvent),
    checkpoint: &mut dyn FnMut(&Model) -> ControlFlow<()>,
) -> Result<FitTiming, FitError> {
    let mut timing = FitTiming::default();
    let learn = LearnSettings::default();
    let doc_lengths = CountHistogram::from_counts(
        (0..model.corpus.n_docs()).map(|d| (model.corpus.offsets[d + 1] - model.corpus.offsets[d]) as u32),
    );
    while model.iterations_done < model.target {
        let started = Instant::now();
        engine.sweep(model);
        timing.sampling_seconds += started.elapsed().as_secs_f64();
        timing.token_updates += model.corpus.n_tokens() as u64;
        model.iterations_done += 1;
        let done = model.iterations_done;
        let schedule = model.schedule.clone();

        if done > schedule.burn_in && (done - schedule.burn_in).is_multiple_of(schedule.learn_every) {
            if schedule.learn_alpha {
                let per_topic = engine.doc_topic_histograms(model);
                model.priors.alpha =
                    priors::learn_alpha(&model.priors.alpha, &per_topic, &doc_lengths, &learn)?;
                model.alpha_trace.push((done, model.priors.alpha.clone()));
            }
            if schedule.learn_beta
                && let BetaPrior::Symmetric(beta) = model.priors.beta
            {
                let word_topic = engine.word_topic_histogram(model);
                let totals = CountHistogram::from_counts(model.state.topic_totals.iter().map(|&n| n as u32));
                let learned =
                    priors::learn_symmetric_beta(beta, model.state.n_words, &word_topic, &totals, &learn)?;
                model.priors.beta = BetaPrior::Symmetric(learned);
                model.beta_trace.push((done, learned));
            }
        }

        let log_likelihood = if done.is_multiple_of(model.schedule.trace_every) || done == model.target {
            let value = engine.log_likelihood(model);
            model.trace.push((done, value));
            Some(value)
        } else {
            None
        };
        let keep_sample = is_sample_iteration(&model.schedule, done, model.target);
        engine.settle(model, done, keep_sample || done == model.target);
        if keep_sample {
            let sample = Sample::of(model, done);
            model.samples.push(sample);
        }
        observer(FitEvent::Sweep {
            done,
            total: model.target,
            log_likelihood,
        });
        if checkpoint(model).is_break() {
            break;
        }
    }
    Ok(timing)
}

/// For each topic, the histogram of its token count over documents (zeros left out).
/// Over the documents `docs` only.
pub fn doc_topic_histograms(state: &CountState, corpus: &Corpus, docs: Range<usize>) -> Vec<CountHistogram> {
    let mut per_topic: Vec<HistogramBuilder> = vec![HistogramBuilder::default(); state.n_topics];
    for doc_idx in docs {
        for (topic, count) in state.doc_topic_pairs(corpus, doc_idx) {
            per_topic[topic as usize].add(count);
        }
    }
    per_topic.into_iter().map(HistogramBuilder::finish).collect()
}

/// The histogram of every non-zero word-topic count.
/// Over the words `words` only.
pub fn word_topic_histogram(state: &CountState, words: Range<usize>) -> CountHistogram {
    let mut histogram = HistogramBuilder::default();
    for word_idx in words {
        state
            .word_topic
            .for_each_nonzero(word_idx, |_, count| histogram.add(count));
    }
    histogram.finish()
}

/// A convergence judgement from the log-likelihood trace.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Convergence {
    /// How the judgement is made.
    pub method: &'static str,
    /// Relative change of the mean log-likelihood between the first and the
    /// second half of the trace points after burn-in; `None` when fewer than
    /// four points were recorded after burn-in.
    pub relative_change: Option<f64>,
    /// The largest relative change still called converged.
    pub threshold: f64,
    /// Whether the run looks converged.
    pub converged: bool,
}

/// Relative change below which the trace counts as levelled off.
pub const CONVERGENCE_THRESHOLD: f64 = 1e-3;

/// Judges convergence by comparing the mean log-likelihood of the two halves
/// of the post-burn-in trace (common practice: a chain that has reached its
/// stationary distribution shows no drift between halves).
pub fn convergence(model: &Model) -> Convergence {
    let points: Vec<f64> = model
        .trace
        .iter()
        .filter(|(iteration, _)| *iteration > model.schedule.burn_in)
        .map(|&(_, value)| value)
        .collect();
    let method = "relative change of the mean log-likelihood between the halves of the post-burn-in trace";
    if points.len() < 4 {
        return Convergence {
            method,
            relative_change: None,
            threshold: CONVERGENCE_THRESHOLD,
            converged: false,
        };
    }
    let half = points.len() / 2;
    let mean = |values: &[f64]| values.iter().sum::<f64>() / values.len() as f64;
    let (first, second) = (mean(&points[..half]), mean(&points[half..]));
    let change = (second - first) / second.abs().max(f64::MIN_POSITIVE);
    Convergence {
        method,
        relative_change: Some(change),
        threshold: CONVERGENCE_THRESHOLD,
        converged: change.abs() < CONVERGENCE_THRESHOLD,
    }
}
