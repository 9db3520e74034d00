//! Fitting: checks the fit settings against the corpus, initialises the
//! sampler state from the seed, runs the sweeps, records the log-likelihood
//! trace and returns the model. Reports progress through a callback and does
//! no I/O of its own.

use std::time::Instant;

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use crate::corpus::Corpus;
use crate::model::Model;
use crate::sampler::{self, BetaPrior, CountState, Priors};

/// A prior given by the user: one value for all, or one value per entry.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum PriorSpec {
    /// The same value everywhere.
    Symmetric(f64),
    /// One value per topic (alpha) or per word (beta).
    List(Vec<f64>),
}

impl std::str::FromStr for PriorSpec {
    type Err = String;

    /// Parses `X` or `X,Y,...`.
    fn from_str(text: &str) -> Result<PriorSpec, String> {
        let values: Result<Vec<f64>, _> = text.split(',').map(|part| part.trim().parse::<f64>()).collect();
        match values {
            Ok(values) if values.len() == 1 => Ok(PriorSpec::Symmetric(values[0])),
            Ok(values) => Ok(PriorSpec::List(values)),
            Err(_) => Err(format!(
                "`{text}` is not a number or a comma-separated list of numbers"
            )),
        }
    }
}

/// Resolved fit settings.
#[derive(Clone, Debug, PartialEq)]
pub struct FitSettings {
    pub n_topics: usize,
    pub iterations: u64,
    pub burn_in: u64,
    pub alpha: PriorSpec,
    pub beta: PriorSpec,
    pub seed: u64,
    pub trace_every: u64,
}

/// Settings that cannot work with the corpus given.
#[derive(Debug, thiserror::Error)]
pub enum FitError {
    #[error("the number of topics must be at least 1")]
    NoTopics,
    #[error("{topics} topics is more than the {tokens} tokens of the corpus; choose fewer topics")]
    TooManyTopics { topics: usize, tokens: usize },
    #[error("at least one iteration is needed")]
    NoIterations,
    #[error("burn-in ({burn_in}) must be smaller than the number of iterations ({iterations})")]
    BurnInTooLong { burn_in: u64, iterations: u64 },
    #[error("{name} has {found} values but needs 1 or {expected} (one per {per})")]
    PriorLength {
        name: &'static str,
        found: usize,
        expected: usize,
        per: &'static str,
    },
    #[error("{name} values must be positive and finite (got {value})")]
    PriorValue { name: &'static str, value: f64 },
    #[error("the corpus has no tokens")]
    EmptyCorpus,
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
    /// Wall-clock seconds spent in sweeps (log-likelihood evaluation excluded).
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

fn check_prior(
    name: &'static str,
    spec: &PriorSpec,
    expected: usize,
    per: &'static str,
) -> Result<Vec<f64>, FitError> {
    let values = match spec {
        PriorSpec::Symmetric(value) => vec![*value],
        PriorSpec::List(values) if values.len() == expected || values.len() == 1 => values.clone(),
        PriorSpec::List(values) => {
            return Err(FitError::PriorLength {
                name,
                found: values.len(),
                expected,
                per,
            });
        }
    };
    if let Some(&value) = values.iter().find(|value| !(value.is_finite() && **value > 0.0)) {
        return Err(FitError::PriorValue { name, value });
    }
    Ok(values)
}

/// Checks the settings against the corpus and resolves the priors.
pub fn resolve_priors(corpus: &Corpus, settings: &FitSettings) -> Result<Priors, FitError> {
    if settings.n_topics == 0 {
        return Err(FitError::NoTopics);
    }
    if corpus.n_tokens() == 0 {
        return Err(FitError::EmptyCorpus);
    }
    if settings.n_topics > corpus.n_tokens() {
        return Err(FitError::TooManyTopics {
            topics: settings.n_topics,
            tokens: corpus.n_tokens(),
        });
    }
    if settings.iterations == 0 {
        return Err(FitError::NoIterations);
    }
    if settings.burn_in >= settings.iterations {
        return Err(FitError::BurnInTooLong {
            burn_in: settings.burn_in,
            iterations: settings.iterations,
        });
    }
    let alpha = check_prior("alpha", &settings.alpha, settings.n_topics, "topic")?;
    let alpha = if alpha.len() == 1 {
        vec![alpha[0]; settings.n_topics]
    } else {
        alpha
    };
    let beta = check_prior("beta", &settings.beta, corpus.vocabulary.len(), "vocabulary word")?;
    let beta = if beta.len() == 1 {
        BetaPrior::Symmetric(beta[0])
    } else {
        BetaPrior::Asymmetric(beta)
    };
    Ok(Priors { alpha, beta })
}

/// Fits a model to `corpus` from scratch.
pub fn fit(
    corpus: Corpus,
    settings: &FitSettings,
    observer: &mut dyn FnMut(FitEvent),
) -> Result<(Model, FitTiming), FitError> {
    let priors = resolve_priors(&corpus, settings)?;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(settings.seed);
    let state = CountState::random(&corpus, settings.n_topics, &mut rng);
    let initial = sampler::log_likelihood(&state, &corpus, &priors).total();
    let mut model = Model {
        corpus,
        priors,
        state,
        iterations_done: 0,
        burn_in: settings.burn_in,
        seed: settings.seed,
        rng,
        trace: vec![(0, initial)],
    };
    let timing = run_sweeps(&mut model, settings.iterations, settings.trace_every, observer);
    Ok((model, timing))
}

/// Runs `sweeps` more sweeps on `model`, recording the log-likelihood every
/// `trace_every` sweeps and after the last one.
pub fn run_sweeps(
    model: &mut Model,
    sweeps: u64,
    trace_every: u64,
    observer: &mut dyn FnMut(FitEvent),
) -> FitTiming {
    let mut timing = FitTiming::default();
    let target = model.iterations_done + sweeps;
    let trace_every = trace_every.max(1);
    while model.iterations_done < target {
        let started = Instant::now();
        sampler::sweep_reference(&mut model.state, &model.corpus, &model.priors, &mut model.rng);
        timing.sampling_seconds += started.elapsed().as_secs_f64();
        timing.token_updates += model.corpus.n_tokens() as u64;
        model.iterations_done += 1;
        let done = model.iterations_done;
        let log_likelihood = if done.is_multiple_of(trace_every) || done == target {
            let value = sampler::log_likelihood(&model.state, &model.corpus, &model.priors).total();
            model.trace.push((done, value));
            Some(value)
        } else {
            None
        };
        observer(FitEvent::Sweep {
            done,
            total: target,
            log_likelihood,
        });
    }
    timing
}
