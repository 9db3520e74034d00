//! The model file: its on-disk shapes for formats 1 to 3, written from
//! borrowed data and read into owned data, and the checks a decoded model
//! must pass before anything uses it.
//!
//! postcard writes struct fields in declaration order and enum variants by
//! position, so these shapes are the format. They belong to this module and
//! copy nothing from the in-memory types ([`Model`], [`Schedule`],
//! [`SamplerKind`], [`Priors`]): reordering an enum of the fitting code
//! cannot change a file. A change of shape is a new format version with a
//! reader of its own, and a committed fixture per version is loaded by a
//! test forever after.

#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing,
        clippy::panic
    )
)]

use std::path::Path;

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize, Serializer};

use super::corpus_file::{CorpusOut, CorpusV1, CorpusV2};
use super::format::{self, FileKind, FormatError};
use super::{Model, Sample, SparseRows, sparse_counts};
use crate::fitting::sampler::{BetaPrior, CountState, MAX_TOPICS, Priors, Topic};
use crate::fitting::schedule::{SamplerKind, Schedule};
use crate::ingest::corpus::Corpus;

/// Writes `model` as a model file, crash-safely.
pub(super) fn save(model: &Model, path: &Path) -> Result<(), FormatError> {
    format::write_atomic(path, &encode(model, path)?)
}

/// The encoded model file image of `model`. The corpus, assignments,
/// traces and samples are written from the model itself, not from copies;
/// only the sparse topic-word counts of the current state are built for
/// the write (at most 8 bytes per token), and the document-topic counts
/// are produced one document at a time.
pub(super) fn encode(model: &Model, path: &Path) -> Result<Vec<u8>, FormatError> {
    let topic_word = topic_word_counts(&model.state);
    let shape = ModelOut {
        corpus: CorpusOut::of(&model.corpus),
        n_topics: model.n_topics() as u32,
        priors: PriorsOut::of(&model.priors),
        assignments: &model.state.assignments,
        topic_word: &topic_word,
        doc_topic: DocTopicOut {
            state: &model.state,
            corpus: &model.corpus,
        },
        iterations_done: model.iterations_done,
        target: model.target,
        schedule: ScheduleV3::of(&model.schedule),
        seed: model.seed,
        rng: rng_state(&model.rng),
        trace: &model.trace,
        alpha_trace: &model.alpha_trace,
        beta_trace: &model.beta_trace,
        samples: &model.samples,
        topic_ids: &model.topic_ids,
    };
    format::encode(FileKind::Model, &shape, path)
}

/// Reads a model file of any readable version and checks its contents.
pub(super) fn load(path: &Path) -> Result<Model, FormatError> {
    decode(format::read_bytes(path)?, path)
}

/// Decodes a model file image of any readable version and checks its
/// contents (`path` names it in errors).
pub(super) fn decode(bytes: Vec<u8>, path: &Path) -> Result<Model, FormatError> {
    let shape = format::decode_versioned(FileKind::Model, &bytes, path, |version, payload| match version {
        1 => Ok(format::decode_payload::<ModelV1>(payload, path)?
            .upgrade(path)?
            .upgrade()),
        2 => Ok(format::decode_payload::<ModelV2>(payload, path)?.upgrade()),
        _ => format::decode_payload::<ModelV3>(payload, path),
    })?;
    drop(bytes);
    shape.into_model(path)
}

/// The sparse topic-word counts of a state: per topic, `(word, count)` with
/// count > 0, words increasing.
fn topic_word_counts(state: &CountState) -> SparseRows {
    let mut topic_word: SparseRows = vec![Vec::new(); state.n_topics];
    for word_idx in 0..state.n_words {
        for (topic, count) in state.word_topic.row_pairs(word_idx) {
            // A row of the state's own table holds topics below its K, the
            // length of `topic_word` (an invariant of `CountState`; the
            // state of a loaded model was rebuilt from checked assignments).
            #[allow(clippy::indexing_slicing)]
            topic_word[topic as usize].push((word_idx as u32, count));
        }
    }
    topic_word
}

/// The random stream's state as the four words of xoshiro256++.
type RngState = [u64; 4];

/// The four state words of `rng`, read through its serde form (a struct
/// holding `[u64; 4]`), the only view of its state the crate offers.
fn rng_state(rng: &Xoshiro256PlusPlus) -> RngState {
    let mut buffer = [0u8; 64];
    postcard::to_slice(rng, &mut buffer)
        .ok()
        .and_then(|bytes| postcard::from_bytes::<RngState>(bytes).ok())
        // Four u64 varints take at most 40 bytes, and the serde form is
        // checked against `from_seed` by a unit test, so this cannot fail.
        .unwrap_or([0; 4])
}

/// The stream whose state words are `state` (`from_seed` reads the words
/// little-endian from the seed bytes).
fn rng_from_state(state: RngState) -> Xoshiro256PlusPlus {
    let mut seed = [0u8; 32];
    for (chunk, word) in seed.chunks_exact_mut(8).zip(state) {
        chunk.copy_from_slice(&word.to_le_bytes());
    }
    Xoshiro256PlusPlus::from_seed(seed)
}

/// The model as written (format 3).
#[derive(Serialize)]
struct ModelOut<'a> {
    corpus: CorpusOut<'a>,
    n_topics: u32,
    priors: PriorsOut<'a>,
    assignments: &'a [Topic],
    topic_word: &'a SparseRows,
    doc_topic: DocTopicOut<'a>,
    iterations_done: u64,
    target: u64,
    schedule: ScheduleV3<'a>,
    seed: u64,
    rng: RngState,
    trace: &'a [(u64, f64)],
    alpha_trace: &'a [(u64, Vec<f64>)],
    beta_trace: &'a [(u64, f64)],
    #[serde(serialize_with = "samples_out")]
    samples: &'a [Sample],
    topic_ids: &'a [u32],
}

/// The document-topic counts of the current state, one document at a time.
struct DocTopicOut<'a> {
    state: &'a CountState,
    corpus: &'a Corpus,
}

impl Serialize for DocTopicOut<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_seq(
            (0..self.corpus.n_docs()).map(|doc_idx| self.state.doc_topic_pairs(self.corpus, doc_idx)),
        )
    }
}

fn samples_out<S: Serializer>(samples: &&[Sample], serializer: S) -> Result<S::Ok, S::Error> {
    serializer.collect_seq(samples.iter().map(|sample| SampleOut {
        iteration: sample.iteration,
        priors: PriorsOut::of(&sample.priors),
        topic_word: &sample.topic_word,
        doc_topic: &sample.doc_topic,
        topic_totals: &sample.topic_totals,
    }))
}

#[derive(Serialize)]
struct PriorsOut<'a> {
    alpha: &'a [f64],
    beta: BetaOut<'a>,
}

impl<'a> PriorsOut<'a> {
    fn of(priors: &'a Priors) -> PriorsOut<'a> {
        PriorsOut {
            alpha: &priors.alpha,
            beta: match &priors.beta {
                BetaPrior::Symmetric(value) => BetaOut::Symmetric(*value),
                BetaPrior::Asymmetric(values) => BetaOut::Asymmetric(values),
            },
        }
    }
}

/// Variant order is part of the format (see [`BetaV1`]).
#[derive(Serialize)]
enum BetaOut<'a> {
    Symmetric(f64),
    Asymmetric(&'a [f64]),
}

#[derive(Serialize)]
struct SampleOut<'a> {
    iteration: u64,
    priors: PriorsOut<'a>,
    topic_word: &'a SparseRows,
    doc_topic: &'a SparseRows,
    topic_totals: &'a [u64],
}

/// The model as read (format 3; the same shape as [`ModelOut`]).
#[derive(Deserialize)]
struct ModelV3 {
    corpus: CorpusV2,
    n_topics: u32,
    priors: PriorsV1,
    assignments: Vec<Topic>,
    topic_word: SparseRows,
    doc_topic: SparseRows,
    iterations_done: u64,
    target: u64,
    schedule: ScheduleV3<'static>,
    seed: u64,
    rng: RngState,
    trace: Vec<(u64, f64)>,
    alpha_trace: Vec<(u64, Vec<f64>)>,
    beta_trace: Vec<(u64, f64)>,
    samples: Vec<SampleV1>,
    topic_ids: Vec<u32>,
}

/// Format 2: the sampler as an enum, no topic ids, the corpus of format 1.
#[derive(Deserialize)]
struct ModelV2 {
    corpus: CorpusV1,
    n_topics: u32,
    priors: PriorsV1,
    assignments: Vec<Topic>,
    topic_word: SparseRows,
    doc_topic: SparseRows,
    iterations_done: u64,
    target: u64,
    schedule: ScheduleV2,
    seed: u64,
    rng: RngState,
    trace: Vec<(u64, f64)>,
    alpha_trace: Vec<(u64, Vec<f64>)>,
    beta_trace: Vec<(u64, f64)>,
    samples: Vec<SampleV1>,
}

/// The priors of formats 1 and 2.
#[derive(Deserialize)]
struct PriorsV1 {
    alpha: Vec<f64>,
    beta: BetaV1,
}

/// The topic-word prior of formats 1 and 2; variants in this order.
#[derive(Deserialize)]
enum BetaV1 {
    Symmetric(f64),
    Asymmetric(Vec<f64>),
}

impl PriorsV1 {
    fn into_priors(self) -> Priors {
        Priors {
            alpha: self.alpha,
            beta: match self.beta {
                BetaV1::Symmetric(value) => BetaPrior::Symmetric(value),
                BetaV1::Asymmetric(values) => BetaPrior::Asymmetric(values),
            },
        }
    }
}

/// A kept posterior sample, formats 1 and 2.
#[derive(Deserialize)]
struct SampleV1 {
    iteration: u64,
    priors: PriorsV1,
    topic_word: SparseRows,
    doc_topic: SparseRows,
    topic_totals: Vec<u64>,
}

/// The sampler of format 2; variants in this order.
#[derive(Clone, Copy, Deserialize)]
enum SamplerV2 {
    Reference,
    Exact,
    Metropolis,
}

/// The schedule of format 3: the sampler by its name (`SamplerKind::name`),
/// so that a sampler added later changes no shape and an older reader
/// refuses its files by name.
#[derive(Serialize, Deserialize)]
struct ScheduleV3<'a> {
    sampler: std::borrow::Cow<'a, str>,
    shards: u32,
    burn_in: u64,
    learn_alpha: bool,
    learn_beta: bool,
    learn_every: u64,
    samples: u64,
    lag: u64,
    trace_every: u64,
}

impl ScheduleV3<'_> {
    fn of(schedule: &Schedule) -> ScheduleV3<'static> {
        ScheduleV3 {
            sampler: std::borrow::Cow::Borrowed(schedule.sampler.name()),
            shards: schedule.shards,
            burn_in: schedule.burn_in,
            learn_alpha: schedule.learn_alpha,
            learn_beta: schedule.learn_beta,
            learn_every: schedule.learn_every,
            samples: schedule.samples,
            lag: schedule.lag,
            trace_every: schedule.trace_every,
        }
    }

    fn into_schedule(self) -> Result<Schedule, String> {
        let sampler = SamplerKind::from_name(&self.sampler)
            .ok_or_else(|| format!("the sampler `{}` is unknown to this version", self.sampler))?;
        Ok(Schedule {
            sampler,
            shards: self.shards,
            burn_in: self.burn_in,
            learn_alpha: self.learn_alpha,
            learn_beta: self.learn_beta,
            learn_every: self.learn_every,
            samples: self.samples,
            lag: self.lag,
            trace_every: self.trace_every,
        })
    }
}

/// The schedule of format 2.
#[derive(Clone, Copy, Deserialize)]
struct ScheduleV2 {
    sampler: SamplerV2,
    shards: u32,
    burn_in: u64,
    learn_alpha: bool,
    learn_beta: bool,
    learn_every: u64,
    samples: u64,
    lag: u64,
    trace_every: u64,
}

impl ScheduleV2 {
    fn upgrade(self) -> ScheduleV3<'static> {
        let sampler = match self.sampler {
            SamplerV2::Reference => SamplerKind::Reference,
            SamplerV2::Exact => SamplerKind::Exact,
            SamplerV2::Metropolis => SamplerKind::Metropolis,
        };
        ScheduleV3 {
            sampler: std::borrow::Cow::Borrowed(sampler.name()),
            shards: self.shards,
            burn_in: self.burn_in,
            learn_alpha: self.learn_alpha,
            learn_beta: self.learn_beta,
            learn_every: self.learn_every,
            samples: self.samples,
            lag: self.lag,
            trace_every: self.trace_every,
        }
    }
}

impl ModelV2 {
    /// The same model in the format-3 shape: topic ids `0..K`.
    fn upgrade(self) -> ModelV3 {
        ModelV3 {
            corpus: self.corpus.upgrade(),
            // Capped, so that a damaged topic count cannot make this list
            // huge: `into_model` refuses a count above the limit first.
            // (Found by the `model_file` fuzz target: 108 bytes claiming
            // half a billion topics took 3.6 s and 2.1 GB here.)
            topic_ids: (0..self.n_topics.min(MAX_TOPICS as u32)).collect(),
            n_topics: self.n_topics,
            priors: self.priors,
            assignments: self.assignments,
            topic_word: self.topic_word,
            doc_topic: self.doc_topic,
            iterations_done: self.iterations_done,
            target: self.target,
            schedule: self.schedule.upgrade(),
            seed: self.seed,
            rng: self.rng,
            trace: self.trace,
            alpha_trace: self.alpha_trace,
            beta_trace: self.beta_trace,
            samples: self.samples,
        }
    }
}

/// The schedule of format 1 (written by the reference sampler only).
#[derive(Deserialize)]
struct ScheduleV1 {
    burn_in: u64,
    learn_alpha: bool,
    learn_beta: bool,
    learn_every: u64,
    samples: u64,
    lag: u64,
    trace_every: u64,
}

/// Format 1: 32-bit topic ids and no sampler or shard count in the schedule.
#[derive(Deserialize)]
struct ModelV1 {
    corpus: CorpusV1,
    n_topics: u32,
    priors: PriorsV1,
    assignments: Vec<u32>,
    topic_word: SparseRows,
    doc_topic: SparseRows,
    iterations_done: u64,
    target: u64,
    schedule: ScheduleV1,
    seed: u64,
    rng: RngState,
    trace: Vec<(u64, f64)>,
    alpha_trace: Vec<(u64, Vec<f64>)>,
    beta_trace: Vec<(u64, f64)>,
    samples: Vec<SampleV1>,
}

impl ModelV1 {
    /// The same model in the format-2 shape; it continues with the sampler
    /// that wrote it, the reference sweep on one shard.
    fn upgrade(self, path: &Path) -> Result<ModelV2, FormatError> {
        if self.n_topics as usize > MAX_TOPICS {
            return Err(FormatError::Invalid {
                path: path.to_path_buf(),
                detail: format!(
                    "the model has {} topics, more than the {MAX_TOPICS} this version can load",
                    self.n_topics
                ),
            });
        }
        let assignments = self
            .assignments
            .into_iter()
            .map(|topic| Topic::try_from(topic).ok())
            .collect::<Option<Vec<Topic>>>()
            .ok_or_else(|| FormatError::Invalid {
                path: path.to_path_buf(),
                detail: format!("a token's topic is beyond the {MAX_TOPICS} this version can load"),
            })?;
        let old = self.schedule;
        Ok(ModelV2 {
            corpus: self.corpus,
            n_topics: self.n_topics,
            priors: self.priors,
            assignments,
            topic_word: self.topic_word,
            doc_topic: self.doc_topic,
            iterations_done: self.iterations_done,
            target: self.target,
            schedule: ScheduleV2 {
                sampler: SamplerV2::Reference,
                shards: 1,
                burn_in: old.burn_in,
                learn_alpha: old.learn_alpha,
                learn_beta: old.learn_beta,
                learn_every: old.learn_every,
                samples: old.samples,
                lag: old.lag,
                trace_every: old.trace_every,
            },
            seed: self.seed,
            rng: self.rng,
            trace: self.trace,
            alpha_trace: self.alpha_trace,
            beta_trace: self.beta_trace,
            samples: self.samples,
        })
    }
}

/// Checks that `priors` fit K topics and V words and hold usable values.
fn check_priors(priors: &Priors, n_topics: usize, n_words: usize, what: &str) -> Result<(), String> {
    if priors.alpha.len() != n_topics {
        return Err(format!(
            "{what} has {} alpha values for {n_topics} topics",
            priors.alpha.len()
        ));
    }
    let usable = |value: &f64| value.is_finite() && *value > 0.0;
    if !priors.alpha.iter().all(usable) {
        return Err(format!(
            "{what} has an alpha value that is not positive and finite"
        ));
    }
    match &priors.beta {
        BetaPrior::Symmetric(value) if !usable(value) => {
            Err(format!("{what} has a beta that is not positive and finite"))
        }
        BetaPrior::Asymmetric(values) if values.len() != n_words => Err(format!(
            "{what} has {} beta values for {n_words} words",
            values.len()
        )),
        BetaPrior::Asymmetric(values) if !values.iter().all(usable) => {
            Err(format!("{what} has a beta value that is not positive and finite"))
        }
        _ => Ok(()),
    }
}

/// Checks sparse rows: `n_rows` rows, columns increasing and below
/// `n_columns`, counts above 0; returns the row sums.
fn check_rows(rows: &SparseRows, n_rows: usize, n_columns: usize, what: &str) -> Result<Vec<u64>, String> {
    if rows.len() != n_rows {
        return Err(format!("{what} has {} rows, expected {n_rows}", rows.len()));
    }
    rows.iter()
        .enumerate()
        .map(|(row_idx, row)| {
            let ordered = row
                .iter()
                .zip(row.iter().skip(1))
                .all(|(before, after)| before.0 < after.0);
            let in_range = row
                .iter()
                .all(|&(column, count)| (column as usize) < n_columns && count > 0);
            if !(ordered && in_range) {
                return Err(format!(
                    "{what}, row {row_idx}: columns must increase and stay below {n_columns}, counts above 0"
                ));
            }
            Ok(row.iter().map(|&(_, count)| u64::from(count)).sum())
        })
        .collect()
}

/// Checks a kept sample against the model's shape: K topic rows whose sums
/// are the topic totals, one row per document summing to its length.
fn check_sample(
    sample: &Sample,
    corpus: &Corpus,
    n_topics: usize,
    iterations_done: u64,
) -> Result<(), String> {
    let what = format!("the sample of sweep {}", sample.iteration);
    if sample.iteration > iterations_done {
        return Err(format!("{what} is later than the {iterations_done} sweeps done"));
    }
    check_priors(&sample.priors, n_topics, corpus.vocabulary.len(), &what)?;
    let topic_sums = check_rows(&sample.topic_word, n_topics, corpus.vocabulary.len(), &what)?;
    if topic_sums != sample.topic_totals {
        return Err(format!(
            "{what} has topic totals that disagree with its topic-word counts"
        ));
    }
    let doc_sums = check_rows(&sample.doc_topic, corpus.n_docs(), n_topics, &what)?;
    let lengths = corpus
        .offsets
        .iter()
        .zip(corpus.offsets.iter().skip(1))
        .map(|(start, end)| end.saturating_sub(*start));
    let lengths_agree =
        doc_sums.len() == corpus.n_docs() && doc_sums.iter().zip(lengths).all(|(&sum, length)| sum == length);
    if !lengths_agree {
        return Err(format!(
            "{what} has document counts that disagree with the document lengths"
        ));
    }
    Ok(())
}

/// Checks the schedule's counts and sweep numbers.
fn check_schedule(schedule: &Schedule, iterations_done: u64, target: u64) -> Result<(), String> {
    let at_least_one = [
        ("shards", u64::from(schedule.shards)),
        ("learn_every", schedule.learn_every),
        ("samples", schedule.samples),
        ("lag", schedule.lag),
        ("trace_every", schedule.trace_every),
    ];
    if let Some((name, _)) = at_least_one.iter().find(|(_, value)| *value == 0) {
        return Err(format!("the schedule's {name} is 0"));
    }
    if (schedule.samples - 1).checked_mul(schedule.lag).is_none() {
        return Err("the schedule's samples and lag are out of range".to_string());
    }
    if iterations_done > target {
        return Err(format!(
            "{iterations_done} sweeps are done of a run that ends at {target}"
        ));
    }
    Ok(())
}

impl ModelV3 {
    /// The model in memory, once every invariant is checked: the corpus,
    /// K within the limit, priors that fit, one topic below K per token,
    /// stored counts equal to those the assignments imply, a sane schedule,
    /// a live random stream, traces and samples of the model's shape.
    fn into_model(self, path: &Path) -> Result<Model, FormatError> {
        let invalid = |detail: String| FormatError::Invalid {
            path: path.to_path_buf(),
            detail,
        };
        let corpus = self.corpus.into_corpus(path)?;
        let n_topics = self.n_topics as usize;
        if n_topics == 0 || n_topics > MAX_TOPICS {
            return Err(invalid(format!("{n_topics} topics is outside 1 to {MAX_TOPICS}")));
        }
        let priors = self.priors.into_priors();
        check_priors(&priors, n_topics, corpus.vocabulary.len(), "the model").map_err(invalid)?;
        if self.assignments.len() != corpus.n_tokens() {
            return Err(invalid(format!(
                "{} topic assignments for {} tokens",
                self.assignments.len(),
                corpus.n_tokens()
            )));
        }
        if let Some((position, topic)) = self
            .assignments
            .iter()
            .enumerate()
            .find(|&(_, &topic)| topic as usize >= n_topics)
        {
            return Err(invalid(format!(
                "token {position} is assigned topic {topic} of {n_topics}"
            )));
        }
        let schedule = self.schedule.into_schedule().map_err(invalid)?;
        check_schedule(&schedule, self.iterations_done, self.target).map_err(invalid)?;
        if self.topic_ids.len() != n_topics {
            return Err(invalid(format!(
                "{} topic ids for {n_topics} topics",
                self.topic_ids.len()
            )));
        }
        let mut distinct_ids = self.topic_ids.clone();
        distinct_ids.sort_unstable();
        if distinct_ids
            .iter()
            .zip(distinct_ids.iter().skip(1))
            .any(|(a, b)| a == b)
        {
            return Err(invalid("two topics share an id".to_string()));
        }
        if self.rng == [0; 4] {
            return Err(invalid("the random stream's state is all zero".to_string()));
        }
        let state = CountState::from_assignments(&corpus, n_topics, self.assignments);
        let (topic_word, doc_topic) = sparse_counts(&state, &corpus);
        if topic_word != self.topic_word || doc_topic != self.doc_topic {
            return Err(invalid(
                "stored counts disagree with the topic assignments".to_string(),
            ));
        }
        if let Some((iteration, alpha)) = self.alpha_trace.iter().find(|(_, alpha)| alpha.len() != n_topics) {
            return Err(invalid(format!(
                "the alpha trace at sweep {iteration} has {} values for {n_topics} topics",
                alpha.len()
            )));
        }
        let samples: Vec<Sample> = self
            .samples
            .into_iter()
            .map(|sample| Sample {
                iteration: sample.iteration,
                priors: sample.priors.into_priors(),
                topic_word: sample.topic_word,
                doc_topic: sample.doc_topic,
                topic_totals: sample.topic_totals,
            })
            .collect();
        for sample in &samples {
            check_sample(sample, &corpus, n_topics, self.iterations_done).map_err(invalid)?;
        }
        Ok(Model {
            corpus,
            priors,
            state,
            iterations_done: self.iterations_done,
            target: self.target,
            schedule,
            seed: self.seed,
            rng: rng_from_state(self.rng),
            trace: self.trace,
            alpha_trace: self.alpha_trace,
            beta_trace: self.beta_trace,
            samples,
            topic_ids: self.topic_ids,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::Rng;

    #[test]
    fn the_stream_state_round_trips_through_its_four_words() {
        // Source: rand_xoshiro documentation — `from_seed` takes the state
        // words little-endian from the 32 seed bytes; the serde form holds
        // the same words, so reading them back must give the same stream.
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(42);
        rng.next_u64();
        let words = rng_state(&rng);
        let mut copy = rng_from_state(words);
        assert_eq!(rng_state(&copy), words);
        let mut seed = [0u8; 32];
        seed[0] = 1;
        seed[8] = 2;
        assert_eq!(rng_state(&Xoshiro256PlusPlus::from_seed(seed)), [1, 2, 0, 0]);
        assert_eq!(copy.next_u64(), rng.next_u64());
    }

    use crate::fitting::fit::{FitSettings, PriorSpec, fit};
    use crate::testbed::synthetic;

    fn small_model() -> Model {
        let data = synthetic::two_topics(1);
        let settings = FitSettings {
            burn_in: 2,
            alpha: PriorSpec::List(vec![0.2, 0.4]),
            samples: 2,
            lag: 3,
            trace_every: 5,
            ..FitSettings::fixed(2, 10, 0.1, 0.1, 3)
        };
        fit(data.corpus, &settings, &mut |_| {}).unwrap().0
    }

    /// Encodes `model` with the shape changed by `damage`: the checksum is
    /// right, the contents are not.
    fn crafted<'a>(
        model: &'a Model,
        topic_word: &'a SparseRows,
        damage: impl FnOnce(&mut ModelOut<'a>),
    ) -> Result<Model, FormatError> {
        let path = Path::new("m.bin");
        let mut shape = ModelOut {
            corpus: CorpusOut::of(&model.corpus),
            n_topics: model.n_topics() as u32,
            priors: PriorsOut::of(&model.priors),
            assignments: &model.state.assignments,
            topic_word,
            doc_topic: DocTopicOut {
                state: &model.state,
                corpus: &model.corpus,
            },
            iterations_done: model.iterations_done,
            target: model.target,
            schedule: ScheduleV3::of(&model.schedule),
            seed: model.seed,
            rng: rng_state(&model.rng),
            trace: &model.trace,
            alpha_trace: &model.alpha_trace,
            beta_trace: &model.beta_trace,
            samples: &model.samples,
            topic_ids: &model.topic_ids,
        };
        damage(&mut shape);
        let bytes = format::encode(FileKind::Model, &shape, path).unwrap();
        format::decode_versioned(FileKind::Model, &bytes, path, |_, payload| {
            format::decode_payload::<ModelV3>(payload, path)
        })?
        .into_model(path)
    }

    #[test]
    fn an_undamaged_shape_loads() {
        // Source: common practice — the checks must accept what the writer writes.
        let model = small_model();
        let topic_word = topic_word_counts(&model.state);
        let back = crafted(&model, &topic_word, |_| {}).unwrap();
        assert_eq!(back.state, model.state);
        assert_eq!(back.samples, model.samples);
    }

    #[test]
    fn each_inconsistency_under_a_valid_checksum_is_refused_with_its_reason() {
        // Source: common practice — a checksum proves the bytes arrived, not
        // that the writer was right; each invariant of the model is checked
        // on load, and each failure says which.
        let model = small_model();
        let topic_word = topic_word_counts(&model.state);
        let n_tokens = model.corpus.n_tokens();
        let mut out_of_range = model.state.assignments.clone();
        out_of_range[3] = 2;
        let mut moved = model.state.assignments.clone();
        moved[0] = 1 - moved[0];
        let short = &model.state.assignments[..n_tokens - 1];
        let bad_tokens = {
            let mut tokens = model.corpus.tokens.clone();
            tokens[0] = 99;
            tokens
        };
        let wide_alpha = vec![0.1; 3];
        let negative_alpha = vec![0.1, -0.2];
        let asymmetric_beta = vec![0.1; 2];
        let short_trace = vec![(0u64, vec![0.1])];
        let mut bad_totals = model.samples.clone();
        bad_totals[0].topic_totals[0] += 1;
        let mut unsorted = model.samples.clone();
        unsorted[1].topic_word[0].reverse();
        let mut late = model.samples.clone();
        late[0].iteration = model.iterations_done + 1;
        type Damage<'a> = Box<dyn FnOnce(&mut ModelOut<'a>) + 'a>;
        let cases: Vec<(&str, Damage<'_>)> = vec![
            ("topics is outside 1 to", Box::new(|m| m.n_topics = 0)),
            (
                "token 3 is assigned topic 2 of 2",
                Box::new(|m| m.assignments = &out_of_range),
            ),
            ("assignments for", Box::new(|m| m.assignments = short)),
            ("stored counts disagree", Box::new(|m| m.assignments = &moved)),
            ("token 0 is word 99", Box::new(|m| m.corpus.tokens = &bad_tokens)),
            (
                "3 alpha values for 2 topics",
                Box::new(|m| m.priors.alpha = &wide_alpha),
            ),
            (
                "alpha value that is not positive",
                Box::new(|m| m.priors.alpha = &negative_alpha),
            ),
            (
                "beta that is not positive",
                Box::new(|m| m.priors.beta = BetaOut::Symmetric(f64::NAN)),
            ),
            (
                "2 beta values for",
                Box::new(|m| m.priors.beta = BetaOut::Asymmetric(&asymmetric_beta)),
            ),
            ("shards is 0", Box::new(|m| m.schedule.shards = 0)),
            ("lag is 0", Box::new(|m| m.schedule.lag = 0)),
            (
                "samples and lag are out of range",
                Box::new(|m| {
                    m.schedule.samples = u64::MAX;
                    m.schedule.lag = 3;
                }),
            ),
            ("sweeps are done of a run that ends", Box::new(|m| m.target = 1)),
            ("state is all zero", Box::new(|m| m.rng = [0; 4])),
            (
                "sampler `gibbs-deluxe` is unknown",
                Box::new(|m| m.schedule.sampler = "gibbs-deluxe".into()),
            ),
            ("1 topic ids for 2 topics", Box::new(|m| m.topic_ids = &[7])),
            ("two topics share an id", Box::new(|m| m.topic_ids = &[4, 4])),
            (
                "alpha trace at sweep 0",
                Box::new(|m| m.alpha_trace = &short_trace),
            ),
            (
                "topic totals that disagree",
                Box::new(|m| m.samples = &bad_totals),
            ),
            ("columns must increase", Box::new(|m| m.samples = &unsorted)),
            ("is later than the", Box::new(|m| m.samples = &late)),
        ];
        for (expected, damage) in cases {
            let err = crafted(&model, &topic_word, damage)
                .err()
                .unwrap_or_else(|| panic!("`{expected}` was accepted"));
            assert!(matches!(err, FormatError::Invalid { .. }), "{err}");
            assert!(err.is_bad_input(), "{err}");
            assert!(
                err.to_string().contains(expected),
                "{err} (expected `{expected}`)"
            );
        }
    }

    #[test]
    fn every_single_byte_change_and_every_truncation_of_a_model_file_is_refused() {
        // Source: CRC-32 detects every error burst of up to 32 bits (Peterson
        // & Brown 1961; common practice), the header fields are checked
        // before decoding, and a payload read under another version's shape
        // must fail to decode or fail the checks: every value of every byte
        // is tried, and none may load (or panic).
        let model = small_model();
        let path = Path::new("m.bin");
        let bytes = encode(&model, path).unwrap();
        for position in 0..bytes.len() {
            for value in 0..=255u8 {
                if value == bytes[position] {
                    continue;
                }
                let mut changed = bytes.clone();
                changed[position] = value;
                assert!(
                    decode(changed, path).is_err(),
                    "byte {position} set to {value} loaded"
                );
            }
        }
        for cut in 0..bytes.len() {
            assert!(
                decode(bytes[..cut].to_vec(), path).is_err(),
                "cut at {cut} loaded"
            );
        }
        assert!(decode(bytes, path).is_ok());
    }
}
