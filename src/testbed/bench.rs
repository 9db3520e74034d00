//! Benchmarks of the samplers against the reference, for `themata bench`:
//! token updates per second on synthetic corpora drawn from the LDA
//! generative process (`synthetic::urn_corpus`), and time to quality
//! (held-out perplexity against wall time) on those and on any corpus given.
//!
//! The machines this runs on are shared and noisy, so nothing here trusts a
//! single time. The samplers being compared run in the same process on the
//! same corpus from the same starting state, one sweep each in turn, and
//! each figure is the median over sweeps of a per-sweep rate or of a ratio
//! of two sweeps taken back to back.
//!
//! Times cover sweeps only; log-likelihoods and perplexities are computed
//! between sweeps and not timed.

use std::time::Instant;

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::evaluate::heldout::FoldInSettings;
use crate::evaluate::score::{self, EncodedDocument, Method, ScoreSettings};
use crate::fitting::sampler::{self, BetaPrior, CountState, Priors, ShardedSampler};
use crate::fitting::schedule::{CorpusShape, SamplerChoice, SamplerKind, Schedule};
use crate::ingest::corpus::Corpus;
use crate::model::{Model, Sample};
use crate::testbed::memory;
use crate::testbed::synthetic::{self, UrnCorpusSettings};

/// The samplers measured against the reference.
pub const FAST_SAMPLERS: [SamplerKind; 3] =
    [SamplerKind::Exact, SamplerKind::Metropolis, SamplerKind::Sparse];

/// One corpus shape to measure.
#[derive(Clone, Debug, PartialEq)]
pub struct Case {
    pub tokens: usize,
    pub words: usize,
    pub topics: usize,
    /// Timed sweeps per sampler (after one untimed sweep each).
    pub sweeps: usize,
}

/// What was measured of one fast sampler on one case.
#[derive(Clone, Debug)]
pub struct ThroughputRow {
    pub case: Case,
    /// The fast sampler measured.
    pub fast_sampler: SamplerKind,
    /// Whether `auto` picks it for this corpus.
    pub auto: bool,
    /// Shards of the fast sampler.
    pub shards: usize,
    /// Median token updates per second of the reference (one thread).
    pub reference_per_second: f64,
    /// Median token updates per second of the fast sampler on one thread.
    pub fast_per_second: f64,
    /// Median over sweeps of fast / reference, each pair run back to back.
    pub speedup: f64,
    /// Threads of the parallel runs.
    pub threads: usize,
    /// Median token updates per second of the fast sampler on `threads` threads.
    pub parallel_per_second: f64,
    /// Median over sweeps of parallel / one-thread, back to back.
    pub thread_speedup: f64,
    /// Whether the one-thread and parallel chains ended in the same state (they must).
    pub parallel_identical: bool,
    /// Bytes per token held by the reference's state.
    pub reference_bytes_per_token: f64,
    /// Bytes per token held by the fast sampler's state and working memory.
    pub fast_bytes_per_token: f64,
    /// Peak resident set of the process while only the corpus and this
    /// sampler's chain existed (Linux; `None` elsewhere or when the reset failed).
    pub fast_peak_rss: Option<u64>,
    /// Log-likelihood after the sweeps: reference, fast.
    pub log_likelihood: (f64, f64),
}

/// The outcome of one long fast-only run.
#[derive(Clone, Debug)]
pub struct LargeRun {
    pub case: Case,
    pub fast_sampler: SamplerKind,
    pub shards: usize,
    pub threads: usize,
    /// Seconds to generate the corpus.
    pub generate_seconds: f64,
    /// Seconds of sweeping.
    pub sweep_seconds: f64,
    pub log_likelihood_first: f64,
    pub log_likelihood_last: f64,
    /// Peak resident set of the whole process, corpus generation included.
    pub peak_rss: Option<u64>,
    /// Peak resident set from the end of corpus generation on: the fit alone.
    pub fit_peak_rss: Option<u64>,
}

/// Document length of the generated corpora.
pub const MEAN_DOC_LEN: usize = 100;
/// Total document-topic concentration `a0` of generation and sampling
/// (alpha = a0 / K per topic).
pub const ALPHA_SUM: f64 = 10.0;
/// Topic-word concentration per word of generation and sampling.
pub const BETA: f64 = 0.01;

/// The corpus of a case (seeded, so every run measures the same corpus).
pub fn corpus_of(case: &Case) -> Corpus {
    let (corpus, _) = synthetic::urn_corpus(&UrnCorpusSettings {
        n_tokens: case.tokens,
        n_words: case.words,
        n_topics: case.topics,
        mean_doc_len: MEAN_DOC_LEN,
        alpha: ALPHA_SUM / case.topics as f64,
        beta: BETA,
        zipf_exponent: 1.0,
        seed: 0xBE7C + case.topics as u64,
    });
    corpus
}

/// The priors every measurement samples with: alpha = a0 / K, beta fixed.
pub fn priors_for(topics: usize) -> Priors {
    Priors {
        alpha: vec![ALPHA_SUM / topics as f64; topics],
        beta: BetaPrior::Symmetric(BETA),
    }
}

/// The median of `values` (0 when empty).
pub fn median(values: &[f64]) -> f64 {
    let mut sorted: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if sorted.is_empty() {
        return 0.0;
    }
    sorted.sort_by(f64::total_cmp);
    let mid = sorted.len() / 2;
    if sorted.len() % 2 == 1 {
        sorted[mid]
    } else {
        (sorted[mid - 1] + sorted[mid]) / 2.0
    }
}

/// `corpus` cut to at most about `max_tokens` tokens by keeping every n-th
/// document (n the smallest that fits), so that the cut keeps the mix of
/// the whole; the vocabulary is kept whole. The corpus itself when it fits.
pub fn thin(corpus: &Corpus, max_tokens: usize) -> Corpus {
    let every = corpus.n_tokens().div_ceil(max_tokens.max(1)).max(1);
    if every == 1 {
        return corpus.clone();
    }
    let keep: Vec<bool> = (0..corpus.n_docs()).map(|idx| idx % every == 0).collect();
    score::split_corpus(corpus, &keep).1
}

/// A driver for `kind` with the default shard count for `corpus`.
fn engine(corpus: &Corpus, kind: SamplerKind) -> ShardedSampler {
    let shards = sampler::default_shards(corpus.n_tokens(), kind);
    ShardedSampler::new(corpus, shards, kind).expect("a block-parallel sampler")
}

fn pool(threads: usize) -> rayon::ThreadPool {
    crate::thread_pool(threads).expect("a thread pool")
}

/// Seconds taken by `work`.
fn timed(work: impl FnOnce()) -> f64 {
    let started = Instant::now();
    work();
    started.elapsed().as_secs_f64()
}

/// Measures one case: the reference, then each fast sampler on one thread
/// and on `threads` threads, one sweep each in turn; one row per fast sampler.
pub fn throughput(case: &Case, threads: usize, progress: &mut dyn FnMut(&str)) -> Vec<ThroughputRow> {
    progress(&format!(
        "generating {} tokens, V = {}, K = {}",
        case.tokens, case.words, case.topics
    ));
    let corpus = corpus_of(case);
    let priors = priors_for(case.topics);
    let auto = SamplerChoice::Auto.resolve(&CorpusShape::of(&corpus, case.topics));
    let start = CountState::random(&corpus, case.topics, &mut Xoshiro256PlusPlus::seed_from_u64(1));
    let one = pool(1);
    let many = pool(threads);
    let tokens = corpus.n_tokens() as f64;

    // Memory first, one sampler at a time, while only the corpus and that
    // sampler's chain exist.
    let mut memory_of = Vec::new();
    for kind in FAST_SAMPLERS {
        progress(&format!("{}: memory", kind.name()));
        let peak_reset = memory::reset_peak();
        let mut engine = engine(&corpus, kind);
        let mut state = start.clone();
        one.install(|| engine.sweep(&mut state, &corpus, &priors, 7, 1));
        let peak = if peak_reset {
            memory::peak_rss_bytes()
        } else {
            None
        };
        memory_of.push((peak, (state.heap_bytes() + engine.heap_bytes()) as f64 / tokens));
    }

    struct Chain {
        kind: SamplerKind,
        engine: ShardedSampler,
        one: CountState,
        many: CountState,
        rates: Vec<f64>,
        parallel_rates: Vec<f64>,
        speedups: Vec<f64>,
        thread_speedups: Vec<f64>,
    }
    let mut chains: Vec<Chain> = FAST_SAMPLERS
        .iter()
        .map(|&kind| {
            let mut engine = engine(&corpus, kind);
            let mut one_state = start.clone();
            let mut many_state = start.clone();
            one.install(|| engine.sweep(&mut one_state, &corpus, &priors, 7, 1));
            many.install(|| engine.sweep(&mut many_state, &corpus, &priors, 7, 1));
            Chain {
                kind,
                engine,
                one: one_state,
                many: many_state,
                rates: Vec::new(),
                parallel_rates: Vec::new(),
                speedups: Vec::new(),
                thread_speedups: Vec::new(),
            }
        })
        .collect();
    let mut reference = start;
    let mut reference_rng = Xoshiro256PlusPlus::seed_from_u64(2);
    progress("reference: untimed first sweep");
    sampler::sweep_reference(&mut reference, &corpus, &priors, &mut reference_rng);
    let reference_bytes = reference.heap_bytes() + case.topics * 16;

    let mut reference_rates = Vec::new();
    for sweep in 0..case.sweeps {
        progress(&format!("sweep {} of {}", sweep + 1, case.sweeps));
        let iteration = sweep as u64 + 2;
        let reference_seconds =
            timed(|| sampler::sweep_reference(&mut reference, &corpus, &priors, &mut reference_rng));
        reference_rates.push(tokens / reference_seconds);
        for chain in &mut chains {
            let Chain {
                engine,
                one: one_state,
                many: many_state,
                ..
            } = chain;
            let fast_seconds =
                timed(|| one.install(|| engine.sweep(one_state, &corpus, &priors, 7, iteration)));
            let parallel_seconds =
                timed(|| many.install(|| engine.sweep(many_state, &corpus, &priors, 7, iteration)));
            chain.rates.push(tokens / fast_seconds);
            chain.parallel_rates.push(tokens / parallel_seconds);
            chain.speedups.push(reference_seconds / fast_seconds);
            chain.thread_speedups.push(fast_seconds / parallel_seconds);
        }
    }
    let reference_log_likelihood = sampler::log_likelihood(&reference, &corpus, &priors).total();
    chains
        .into_iter()
        .zip(memory_of)
        .map(|(chain, (fast_peak_rss, fast_bytes_per_token))| ThroughputRow {
            case: case.clone(),
            fast_sampler: chain.kind,
            auto: chain.kind == auto,
            shards: chain.engine.shards().len(),
            reference_per_second: median(&reference_rates),
            fast_per_second: median(&chain.rates),
            speedup: median(&chain.speedups),
            threads,
            parallel_per_second: median(&chain.parallel_rates),
            thread_speedup: median(&chain.thread_speedups),
            parallel_identical: chain.one == chain.many,
            reference_bytes_per_token: reference_bytes as f64 / tokens,
            fast_bytes_per_token,
            fast_peak_rss,
            log_likelihood: (
                reference_log_likelihood,
                sampler::log_likelihood(&chain.one, &corpus, &priors).total(),
            ),
        })
        .collect()
}

/// How a time-to-quality comparison is run.
#[derive(Clone, Debug, PartialEq)]
pub struct QualitySettings {
    pub topics: usize,
    /// Sweeps of the reference; its held-out perplexity after them is the target.
    pub reference_sweeps: usize,
    /// Perplexity is measured every this many reference sweeps.
    pub reference_every: usize,
    /// Share of documents held out (chosen by `score::holdout_mask`).
    pub heldout_share: f64,
    /// Held-out documents are taken, in corpus order, up to this many tokens.
    pub heldout_tokens: usize,
    /// The fold-in chain of document completion.
    pub fold_in: FoldInSettings,
    /// A fast sampler stops once it has swept for this share of the
    /// reference's time (with a stand-in: three times the stand-in's time).
    pub time_cap: f64,
    /// Threads of the fast samplers (the reference runs on one).
    pub threads: usize,
    /// Independent chains of every sampler, each from its own random start
    /// with its own random stream. Held-out perplexity at the same sweep
    /// spreads by a few percent from chain to chain (see the README), more
    /// than the kernels differ, so the target and every curve are means over
    /// chains: the target is the reference's expected perplexity after its
    /// sweeps, not one draw of it.
    pub chains: usize,
    /// The fast samplers compared.
    pub samplers: Vec<SamplerKind>,
    /// When set, the reference is too slow to run: this exact-draw kernel's
    /// chain stands in for the reference's quality after
    /// `reference_sweeps` sweeps, and the reference's time is
    /// `reference_sweeps` times the median of this many timed reference sweeps.
    pub stand_in: Option<(SamplerKind, usize)>,
}

impl QualitySettings {
    /// The settings of `themata bench` for K topics on `threads` threads.
    pub fn standard(topics: usize, threads: usize) -> QualitySettings {
        QualitySettings {
            topics,
            reference_sweeps: 300,
            reference_every: 10,
            heldout_share: 0.1,
            heldout_tokens: 30_000,
            fold_in: FoldInSettings {
                burn_in: 20,
                samples: 5,
                lag: 2,
            },
            time_cap: 0.3,
            threads,
            chains: 3,
            samplers: FAST_SAMPLERS.to_vec(),
            stand_in: None,
        }
    }
}

/// Held-out perplexity after some sweeping, as means over the chains.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct QualityPoint {
    pub sweep: usize,
    /// Seconds of sweeping so far (each chain's own time, averaged).
    pub seconds: f64,
    pub perplexity: f64,
}

/// One sampler's way to quality.
#[derive(Clone, Debug)]
pub struct QualityTrace {
    pub sampler: SamplerKind,
    pub threads: usize,
    /// Shards (1 for the reference).
    pub shards: usize,
    pub points: Vec<QualityPoint>,
    /// The first point at or below the target perplexity.
    pub reached: Option<QualityPoint>,
    /// Each chain's perplexity at `reached` (or at the last point).
    pub chain_perplexities: Vec<f64>,
    /// Seconds of reference sweeps timed while this sampler ran, one
    /// between every few of its measurements, on the same machine at the
    /// same time (empty for the reference).
    pub paired_reference_sweeps: Vec<f64>,
}

/// The outcome of one time-to-quality comparison.
#[derive(Clone, Debug)]
pub struct QualityRun {
    pub label: String,
    pub settings: QualitySettings,
    /// The training part's shape.
    pub shape: CorpusShape,
    pub heldout_documents: usize,
    pub heldout_tokens: usize,
    /// What `auto` picks for the training part.
    pub auto: SamplerKind,
    /// The reference (or its stand-in: see `QualitySettings::stand_in`).
    pub reference: QualityTrace,
    /// The reference's seconds for all its sweeps: measured, or estimated
    /// from timed sweeps when a stand-in ran.
    pub reference_seconds: f64,
    /// The reference's perplexity after its sweeps (the mean over chains): the target.
    pub target: f64,
    pub fast: Vec<QualityTrace>,
}

impl QualityRun {
    /// A fast sampler's time to the target over the reference's time for its sweeps.
    pub fn time_ratio(&self, trace: &QualityTrace) -> Option<f64> {
        Some(trace.reached?.seconds / self.reference_seconds)
    }

    /// The same over the reference's time estimated from the reference
    /// sweeps timed alongside that sampler (sweeps times their median).
    pub fn paired_time_ratio(&self, trace: &QualityTrace) -> Option<f64> {
        let pace = median(&trace.paired_reference_sweeps);
        (pace > 0.0).then_some(())?;
        Some(trace.reached?.seconds / (pace * self.settings.reference_sweeps as f64))
    }
}

/// Scores states of a chain on the fixed held-out documents.
struct Scorer {
    model: Model,
    documents: Vec<EncodedDocument>,
    settings: ScoreSettings,
}

impl Scorer {
    fn new(
        train: &Corpus,
        start: &CountState,
        priors: &Priors,
        documents: Vec<EncodedDocument>,
        fold_in: FoldInSettings,
    ) -> Scorer {
        let n_topics = start.n_topics;
        let model = Model {
            corpus: train.clone(),
            priors: priors.clone(),
            state: start.clone(),
            iterations_done: 0,
            target: 0,
            schedule: Schedule {
                sampler: SamplerKind::Reference,
                shards: 1,
                burn_in: 0,
                learn_alpha: false,
                learn_beta: false,
                learn_every: 1,
                samples: 1,
                lag: 1,
                trace_every: 1,
            },
            seed: 0,
            rng: Xoshiro256PlusPlus::seed_from_u64(0),
            trace: Vec::new(),
            alpha_trace: Vec::new(),
            beta_trace: Vec::new(),
            samples: Vec::new(),
            topic_ids: (0..n_topics as u32).collect(),
        };
        Scorer {
            model,
            documents,
            settings: ScoreSettings {
                method: Method::Completion,
                particles: 1,
                fold_in,
                seed: 11,
            },
        }
    }

    /// Held-out perplexity (document completion) of the topics of `state`.
    fn perplexity(&mut self, state: &mut CountState) -> f64 {
        std::mem::swap(&mut self.model.state, state);
        self.model.samples = vec![Sample::of(&self.model, 0)];
        let scored = score::score_heldout(&self.model, &self.documents, &self.settings);
        self.model.samples.clear();
        std::mem::swap(&mut self.model.state, state);
        scored
            .ok()
            .and_then(|scored| scored.heldout_perplexity)
            .unwrap_or(f64::INFINITY)
    }
}

/// Sweeps after which a fast sampler's perplexity is measured: every 5 up
/// to 100, then every 10.
fn fast_measures_after(sweep: usize) -> bool {
    if sweep <= 100 {
        sweep.is_multiple_of(5)
    } else {
        sweep.is_multiple_of(10)
    }
}

/// The mean of some values (0 for none).
fn mean(values: &[f64]) -> f64 {
    if values.is_empty() {
        0.0
    } else {
        values.iter().sum::<f64>() / values.len() as f64
    }
}

/// What every chain of a time-to-quality comparison sweeps with.
struct ChainContext<'a> {
    train: &'a Corpus,
    priors: &'a Priors,
    pool: &'a rayon::ThreadPool,
}

/// One chain of a time-to-quality comparison: its state, the engine that
/// sweeps it (none for the reference sweep), its random stream and its
/// seconds of sweeping so far.
struct QualityChain {
    state: CountState,
    engine: Option<ShardedSampler>,
    rng: Xoshiro256PlusPlus,
    seed: u64,
    seconds: f64,
}

impl QualityChain {
    /// Chain `index` of `kind`, from `start`: its own sweep seed, and for
    /// the reference its own random stream (2, 4, 6, ...; the starts use 1, 3, 5, ...).
    fn new(train: &Corpus, kind: SamplerKind, start: &CountState, index: usize) -> QualityChain {
        QualityChain {
            state: start.clone(),
            engine: (kind != SamplerKind::Reference).then(|| engine(train, kind)),
            rng: Xoshiro256PlusPlus::seed_from_u64(2 + 2 * index as u64),
            seed: 7 + index as u64,
            seconds: 0.0,
        }
    }

    /// Shards of its engine (1 for the reference sweep).
    fn shards(&self) -> usize {
        self.engine.as_ref().map_or(1, |engine| engine.shards().len())
    }

    /// Sweeps once (sweep number `sweep`), timing the sweep.
    fn sweep(&mut self, context: &ChainContext<'_>, sweep: usize) {
        let ChainContext { train, priors, pool } = *context;
        let QualityChain {
            state,
            engine,
            rng,
            seed,
            seconds,
        } = self;
        *seconds += match engine {
            Some(engine) => {
                timed(|| pool.install(|| engine.sweep(state, train, priors, *seed, sweep as u64)))
            }
            None => timed(|| sampler::sweep_reference(state, train, priors, rng)),
        };
    }
}

/// Sweeps `chains` in step, one sweep of each at a time, measuring their
/// held-out perplexity after the sweeps `measure` names, until `stop` says
/// so after a measurement (given the point, means over the chains) or
/// `last_sweep` is done. Returns the points and each chain's perplexity at
/// the last one.
fn run_chains(
    chains: &mut [QualityChain],
    context: &ChainContext<'_>,
    scorer: &mut Scorer,
    measure: &dyn Fn(usize, f64) -> bool,
    stop: &mut dyn FnMut(&QualityPoint) -> bool,
    last_sweep: Option<usize>,
) -> (Vec<QualityPoint>, Vec<f64>) {
    let mut points = Vec::new();
    let mut each = Vec::new();
    let mut sweep = 0;
    while last_sweep.is_none_or(|last| sweep < last) {
        sweep += 1;
        for chain in chains.iter_mut() {
            chain.sweep(context, sweep);
        }
        let seconds = mean(&chains.iter().map(|chain| chain.seconds).collect::<Vec<_>>());
        if !(measure(sweep, seconds) || last_sweep == Some(sweep)) {
            continue;
        }
        each = chains
            .iter_mut()
            .map(|chain| context.pool.install(|| scorer.perplexity(&mut chain.state)))
            .collect();
        let point = QualityPoint {
            sweep,
            seconds,
            perplexity: mean(&each),
        };
        points.push(point);
        if stop(&point) {
            break;
        }
    }
    (points, each)
}

/// The chains' perplexities as `a / b / c`, one decimal each.
pub fn chain_list(perplexities: &[f64]) -> String {
    perplexities
        .iter()
        .map(|value| format!("{value:.1}"))
        .collect::<Vec<_>>()
        .join(" / ")
}

/// Time to quality on `corpus`: a share of its documents is held out; the
/// reference sweeps the rest on one thread in `settings.chains` chains,
/// each from its own random start, their held-out perplexity measured every
/// few sweeps; the mean of their perplexities after the last sweep is the
/// target; then each fast sampler sweeps as many chains from the same
/// starts on `threads` threads until their mean perplexity is at or below
/// the target or they have swept for `time_cap` of the reference's time
/// (times are each chain's own, averaged over the chains). While a fast
/// sampler runs, a reference sweep is timed between every few of its
/// measurements, so that its time can also be compared with the
/// reference's pace on the machine as it was then.
pub fn time_to_quality(
    label: &str,
    corpus: &Corpus,
    settings: &QualitySettings,
    progress: &mut dyn FnMut(&str),
) -> QualityRun {
    let n_topics = settings.topics;
    let mask = score::holdout_mask(corpus, settings.heldout_share, 7);
    let (train, held) = score::split_corpus(corpus, &mask);
    let mut documents = Vec::new();
    let mut heldout_tokens = 0;
    for document in score::corpus_documents(&held) {
        if heldout_tokens + document.tokens.len() > settings.heldout_tokens && !documents.is_empty() {
            break;
        }
        heldout_tokens += document.tokens.len();
        documents.push(document);
    }
    let heldout_documents = documents.len();
    let priors = priors_for(n_topics);
    let shape = CorpusShape::of(&train, n_topics);
    let auto = SamplerChoice::Auto.resolve(&shape);
    let starts: Vec<CountState> = (0..settings.chains.max(1))
        .map(|index| {
            CountState::random(
                &train,
                n_topics,
                &mut Xoshiro256PlusPlus::seed_from_u64(1 + 2 * index as u64),
            )
        })
        .collect();
    let mut scorer = Scorer::new(&train, &starts[0], &priors, documents, settings.fold_in);
    let many = pool(settings.threads);
    let n_chains = starts.len();
    let context = ChainContext {
        train: &train,
        priors: &priors,
        pool: &many,
    };

    // The reference, or the stand-in for its quality.
    let (reference_kind, reference_threads) = match settings.stand_in {
        Some((kind, _)) => (kind, settings.threads),
        None => (SamplerKind::Reference, 1),
    };
    let mut chains: Vec<QualityChain> = (0..n_chains)
        .map(|index| QualityChain::new(&train, reference_kind, &starts[index], index))
        .collect();
    let (points, reference_chains) = run_chains(
        &mut chains,
        &context,
        &mut scorer,
        &|sweep, _| sweep.is_multiple_of(settings.reference_every),
        &mut |point| {
            progress(&format!(
                "{label} K = {n_topics}: {} sweep {}: perplexity {:.2} after {:.1} s (mean of {n_chains} chains)",
                reference_kind.name(),
                point.sweep,
                point.perplexity,
                point.seconds
            ));
            false
        },
        Some(settings.reference_sweeps),
    );
    let target = points.last().map_or(f64::INFINITY, |point| point.perplexity);
    let seconds = points.last().map_or(0.0, |point| point.seconds);
    let mut timing_state = chains[0].state.clone();
    let mut timing_rng = Xoshiro256PlusPlus::seed_from_u64(2);
    let reference_seconds = match settings.stand_in {
        Some((_, timed_sweeps)) => {
            let sweeps: Vec<f64> = (0..timed_sweeps.max(1))
                .map(|idx| {
                    progress(&format!(
                        "{label} K = {n_topics}: timing reference sweep {}",
                        idx + 1
                    ));
                    timed(|| sampler::sweep_reference(&mut timing_state, &train, &priors, &mut timing_rng))
                })
                .collect();
            median(&sweeps) * settings.reference_sweeps as f64
        }
        None => seconds,
    };
    let reference = QualityTrace {
        sampler: reference_kind,
        threads: reference_threads,
        shards: chains[0].shards(),
        reached: points.last().copied(),
        chain_perplexities: reference_chains,
        points,
        paired_reference_sweeps: Vec::new(),
    };
    drop(chains);

    // With a stand-in, the reference's time is an estimate far beyond what
    // is run; the fast samplers then stop at three times the stand-in's time.
    let cap_seconds = match settings.stand_in {
        Some(_) => 3.0 * seconds,
        None => settings.time_cap * reference_seconds,
    };
    let mut fast = Vec::new();
    for &kind in &settings.samplers {
        if settings.stand_in.is_some_and(|(stand_in, _)| stand_in == kind) {
            continue;
        }
        let mut chains: Vec<QualityChain> = (0..n_chains)
            .map(|index| QualityChain::new(&train, kind, &starts[index], index))
            .collect();
        let mut paired = Vec::new();
        let mut reached = None;
        let mut measured = 0;
        let (points, chain_perplexities) = run_chains(
            &mut chains,
            &context,
            &mut scorer,
            &|sweep, seconds| fast_measures_after(sweep) || seconds >= cap_seconds,
            &mut |point| {
                progress(&format!(
                    "{label} K = {n_topics}: {} sweep {}: perplexity {:.2} after {:.1} s (mean of {n_chains} chains; target {target:.2})",
                    kind.name(),
                    point.sweep,
                    point.perplexity,
                    point.seconds
                ));
                measured += 1;
                if point.perplexity <= target {
                    reached = Some(*point);
                }
                if settings.stand_in.is_none() && (measured % 4 == 1 || reached.is_some()) {
                    paired.push(timed(|| {
                        sampler::sweep_reference(&mut timing_state, &train, &priors, &mut timing_rng)
                    }));
                }
                reached.is_some() || point.seconds >= cap_seconds
            },
            None,
        );
        fast.push(QualityTrace {
            sampler: kind,
            threads: settings.threads,
            shards: chains[0].shards(),
            points,
            reached,
            chain_perplexities,
            paired_reference_sweeps: paired,
        });
    }
    QualityRun {
        label: label.to_string(),
        settings: settings.clone(),
        shape,
        heldout_documents,
        heldout_tokens,
        auto,
        reference,
        reference_seconds,
        target,
        fast,
    }
}

/// A long run of the fast sampler `auto` picks, alone on `threads` threads.
pub fn large_run(case: &Case, threads: usize, progress: &mut dyn FnMut(&str)) -> LargeRun {
    let started = Instant::now();
    progress(&format!(
        "generating {} tokens, V = {}, K = {}",
        case.tokens, case.words, case.topics
    ));
    let corpus = corpus_of(case);
    let generate_seconds = started.elapsed().as_secs_f64();
    let peak_reset = memory::reset_peak();
    let priors = priors_for(case.topics);
    let fast_sampler = SamplerChoice::Auto.resolve(&CorpusShape::of(&corpus, case.topics));
    let mut state = CountState::random(&corpus, case.topics, &mut Xoshiro256PlusPlus::seed_from_u64(1));
    let many = pool(threads);
    let mut engine = engine(&corpus, fast_sampler);
    let log_likelihood_first = sampler::log_likelihood(&state, &corpus, &priors).total();
    let mut sweep_seconds = 0.0;
    for sweep in 1..=case.sweeps {
        sweep_seconds +=
            timed(|| many.install(|| engine.sweep(&mut state, &corpus, &priors, 7, sweep as u64)));
        progress(&format!(
            "sweep {sweep} of {}: {:.1} s so far ({:.2}M token updates/s)",
            case.sweeps,
            sweep_seconds,
            (sweep * corpus.n_tokens()) as f64 / sweep_seconds / 1e6
        ));
    }
    let fit_peak_rss = if peak_reset {
        memory::peak_rss_bytes()
    } else {
        None
    };
    LargeRun {
        case: case.clone(),
        fast_sampler,
        shards: engine.shards().len(),
        threads,
        generate_seconds,
        sweep_seconds,
        log_likelihood_first,
        log_likelihood_last: sampler::log_likelihood(&state, &corpus, &priors).total(),
        peak_rss: memory::peak_rss_bytes().map(|peak| peak.max(fit_peak_rss.unwrap_or(0))),
        fit_peak_rss,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn median_of_odd_and_even_counts() {
        // Source: common practice — the middle value, or the mean of the two middle values.
        assert_eq!(median(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median(&[4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(median(&[]), 0.0);
    }

    #[test]
    fn the_target_is_the_mean_over_the_reference_chains() {
        // Source: common practice — the mean of independent chains estimates
        // the expected perplexity; a fast sampler stops at its first mean at
        // or below that target.
        let case = Case {
            tokens: 6000,
            words: 400,
            topics: 8,
            sweeps: 0,
        };
        let mut settings = QualitySettings::standard(8, 2);
        settings.reference_sweeps = 6;
        settings.reference_every = 3;
        settings.heldout_tokens = 600;
        settings.chains = 3;
        let run = time_to_quality("tiny", &corpus_of(&case), &settings, &mut |_| {});
        let chains = &run.reference.chain_perplexities;
        assert_eq!(chains.len(), 3);
        assert!(chains.iter().all(|value| value.is_finite()));
        let mean = chains.iter().sum::<f64>() / 3.0;
        assert!(
            (run.target - mean).abs() <= 1e-12 * mean,
            "{} vs {mean}",
            run.target
        );
        // The chains start apart, so they do not all give one value.
        assert!(chains.iter().any(|&value| value != chains[0]), "{chains:?}");
        assert_eq!(run.fast.len(), FAST_SAMPLERS.len());
        for trace in &run.fast {
            assert_eq!(trace.chain_perplexities.len(), 3);
            let last = trace.points.last().expect("a measurement");
            let mean = trace.chain_perplexities.iter().sum::<f64>() / 3.0;
            assert!((last.perplexity - mean).abs() <= 1e-12 * mean);
            if let Some(reached) = trace.reached {
                assert!(reached.perplexity <= run.target);
                assert_eq!(reached, *last);
            }
        }
    }

    #[test]
    fn a_tiny_case_runs_and_the_parallel_chain_matches() {
        // Source: common practice — the thread count must not change the state.
        let case = Case {
            tokens: 4000,
            words: 300,
            topics: 12,
            sweeps: 2,
        };
        let rows = throughput(&case, 2, &mut |_| {});
        assert_eq!(rows.len(), FAST_SAMPLERS.len());
        for row in rows {
            assert!(row.parallel_identical, "{:?}", row.fast_sampler);
            assert!(row.reference_per_second > 0.0 && row.fast_per_second > 0.0);
            assert!(row.log_likelihood.0.is_finite() && row.log_likelihood.1.is_finite());
        }
    }
}
