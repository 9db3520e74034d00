//! Benchmarks of the samplers against the reference on synthetic corpora
//! drawn from the LDA generative process (`synthetic::urn_corpus`), for
//! `themata bench`.
//!
//! The machines this runs on are shared and noisy, so nothing here trusts a
//! single time. The samplers being compared run in the same process on the
//! same corpus from the same starting state, one sweep each in turn, and
//! each figure is the median over sweeps of a per-sweep rate or of a ratio
//! of two sweeps taken back to back.
//!
//! Times cover sweeps only; log-likelihoods are computed between sweeps and
//! not timed.

use std::time::Instant;

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::fitting::sampler::{self, BetaPrior, CountState, Priors, ShardedSampler};
use crate::fitting::schedule::{SamplerChoice, SamplerKind};
use crate::ingest::corpus::Corpus;
use crate::testbed::memory;
use crate::testbed::synthetic::{self, UrnCorpusSettings};

/// One corpus shape to measure.
#[derive(Clone, Debug, PartialEq)]
pub struct Case {
    pub tokens: usize,
    pub words: usize,
    pub topics: usize,
    /// Timed sweeps per sampler (after one untimed sweep each).
    pub sweeps: usize,
}

/// What was measured on one case.
#[derive(Clone, Debug)]
pub struct ThroughputRow {
    pub case: Case,
    /// The fast sampler `auto` picks for this K.
    pub fast_sampler: SamplerKind,
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
    /// Peak resident set of the process while only the corpus and one fast
    /// chain existed (Linux; `None` elsewhere or when the reset failed).
    pub fast_peak_rss: Option<u64>,
    /// Log-likelihood after the sweeps: reference, fast.
    pub log_likelihood: (f64, f64),
}

/// One point of a log-likelihood trace.
#[derive(Clone, Copy, Debug)]
pub struct TracePoint {
    pub sweep: usize,
    /// Seconds of sweeping so far.
    pub seconds: f64,
    pub log_likelihood: f64,
}

/// Log-likelihood against time for the reference and the fast sampler.
#[derive(Clone, Debug)]
pub struct Convergence {
    pub case: Case,
    pub fast_sampler: SamplerKind,
    pub reference: Vec<TracePoint>,
    pub fast: Vec<TracePoint>,
    /// The first fast point at or above the reference's final log-likelihood.
    pub reached: Option<TracePoint>,
}

impl Convergence {
    /// Fast time to the reference's final log-likelihood over the
    /// reference's time to get there.
    pub fn time_ratio(&self) -> Option<f64> {
        let total = self.reference.last()?.seconds;
        Some(self.reached?.seconds / total)
    }
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
    pub peak_rss: Option<u64>,
}

/// Fast sweeps run after each reference sweep in the convergence comparison.
const FAST_PER_REFERENCE: usize = 2;

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

fn priors_of(case: &Case) -> Priors {
    Priors {
        alpha: vec![ALPHA_SUM / case.topics as f64; case.topics],
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

/// What every measurement starts from: the case's corpus and priors, the
/// fast sampler `auto` picks for its K, and one random starting state.
struct Setup {
    corpus: Corpus,
    priors: Priors,
    fast_sampler: SamplerKind,
    start: CountState,
}

impl Setup {
    fn new(case: &Case, progress: &mut dyn FnMut(&str)) -> Setup {
        progress(&format!(
            "generating {} tokens, V = {}, K = {}",
            case.tokens, case.words, case.topics
        ));
        let corpus = corpus_of(case);
        let fast_sampler = SamplerChoice::Auto.resolve(case.topics);
        let mut init_rng = Xoshiro256PlusPlus::seed_from_u64(1);
        let start = CountState::random(&corpus, case.topics, &mut init_rng);
        Setup {
            priors: priors_of(case),
            corpus,
            fast_sampler,
            start,
        }
    }

    /// A driver with the default shard count for this corpus and kernel.
    fn engine(&self) -> ShardedSampler {
        let shards = sampler::default_shards(self.corpus.n_tokens(), self.fast_sampler);
        ShardedSampler::new(&self.corpus, shards, self.fast_sampler)
            .expect("auto picks a block-parallel sampler")
    }
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

/// Measures one case: reference, fast on one thread and fast on `threads`
/// threads, one sweep each in turn.
pub fn throughput(case: &Case, threads: usize, progress: &mut dyn FnMut(&str)) -> ThroughputRow {
    let setup = Setup::new(case, progress);
    let one = pool(1);
    let many = pool(threads);

    // Memory first, while only the corpus and one fast chain exist.
    let peak_reset = memory::reset_peak();
    let mut engine = setup.engine();
    let Setup {
        corpus,
        priors,
        fast_sampler,
        start,
        ..
    } = setup;
    let mut fast = start.clone();
    one.install(|| engine.sweep(&mut fast, &corpus, &priors, 7, 1));
    let fast_peak_rss = if peak_reset {
        memory::peak_rss_bytes()
    } else {
        None
    };
    let fast_bytes = fast.heap_bytes() + engine.heap_bytes();

    let mut parallel = start.clone();
    many.install(|| engine.sweep(&mut parallel, &corpus, &priors, 7, 1));
    let mut reference = start;
    let mut reference_rng = Xoshiro256PlusPlus::seed_from_u64(2);
    progress("reference: untimed first sweep");
    sampler::sweep_reference(&mut reference, &corpus, &priors, &mut reference_rng);
    let reference_bytes = reference.heap_bytes() + case.topics * 16;

    let tokens = corpus.n_tokens() as f64;
    let (mut reference_rates, mut fast_rates, mut parallel_rates) = (Vec::new(), Vec::new(), Vec::new());
    let (mut speedups, mut thread_speedups) = (Vec::new(), Vec::new());
    for sweep in 0..case.sweeps {
        progress(&format!("sweep {} of {}", sweep + 1, case.sweeps));
        let iteration = sweep as u64 + 2;
        let reference_seconds =
            timed(|| sampler::sweep_reference(&mut reference, &corpus, &priors, &mut reference_rng));
        let fast_seconds = timed(|| one.install(|| engine.sweep(&mut fast, &corpus, &priors, 7, iteration)));
        let parallel_seconds =
            timed(|| many.install(|| engine.sweep(&mut parallel, &corpus, &priors, 7, iteration)));
        reference_rates.push(tokens / reference_seconds);
        fast_rates.push(tokens / fast_seconds);
        parallel_rates.push(tokens / parallel_seconds);
        speedups.push(reference_seconds / fast_seconds);
        thread_speedups.push(fast_seconds / parallel_seconds);
    }
    ThroughputRow {
        case: case.clone(),
        fast_sampler,
        shards: engine.shards().len(),
        reference_per_second: median(&reference_rates),
        fast_per_second: median(&fast_rates),
        speedup: median(&speedups),
        threads,
        parallel_per_second: median(&parallel_rates),
        thread_speedup: median(&thread_speedups),
        parallel_identical: fast == parallel,
        reference_bytes_per_token: reference_bytes as f64 / tokens,
        fast_bytes_per_token: fast_bytes as f64 / tokens,
        fast_peak_rss,
        log_likelihood: (
            sampler::log_likelihood(&reference, &corpus, &priors).total(),
            sampler::log_likelihood(&fast, &corpus, &priors).total(),
        ),
    }
}

/// Log-likelihood against sweep time: the reference for `case.sweeps`
/// sweeps and the fast sampler (one thread) from the same start, interleaved,
/// the fast one until it reaches the reference's final log-likelihood or has
/// swept as long as the reference did. Points every `every` sweeps.
pub fn convergence(case: &Case, every: usize, progress: &mut dyn FnMut(&str)) -> Convergence {
    let setup = Setup::new(case, progress);
    let Setup {
        corpus,
        priors,
        fast_sampler,
        start,
        ..
    } = &setup;
    let every = every.max(1);
    let log_likelihood = |state: &CountState| sampler::log_likelihood(state, corpus, priors).total();
    let mut point = |label: &str, sweep: usize, seconds: f64, state: &CountState| {
        let point = TracePoint {
            sweep,
            seconds,
            log_likelihood: log_likelihood(state),
        };
        progress(&format!(
            "{label} sweep {sweep}: {:.4e} after {seconds:.1} s",
            point.log_likelihood
        ));
        point
    };

    // The two chains run interleaved, FAST_PER_REFERENCE fast sweeps after
    // each reference sweep, so that both see the same machine: run one after
    // the other, minutes apart, their times were seen to drift by a third.
    // Which fast point first reaches the reference's final value is decided
    // once the reference has finished; if none has by then, the fast chain
    // goes on alone.
    let one = pool(1);
    let mut engine = setup.engine();
    let mut reference_state = start.clone();
    let mut fast_state = start.clone();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(2);
    let initial = TracePoint {
        sweep: 0,
        seconds: 0.0,
        log_likelihood: log_likelihood(start),
    };
    let (mut reference, mut fast) = (vec![initial], vec![initial]);
    let mut reference_seconds = 0.0;
    let fast_every = every.div_ceil(2).max(1);
    // Sweep number and seconds of the fast chain.
    let mut fast_clock = (0usize, 0.0f64);
    let mut fast_step = |fast: &mut Vec<TracePoint>,
                         point: &mut dyn FnMut(&str, usize, f64, &CountState) -> TracePoint|
     -> f64 {
        let (sweep, seconds) = &mut fast_clock;
        *sweep += 1;
        *seconds += timed(|| one.install(|| engine.sweep(&mut fast_state, corpus, priors, 7, *sweep as u64)));
        if *sweep % fast_every == 0 {
            fast.push(point("fast", *sweep, *seconds, &fast_state));
        }
        *seconds
    };
    for sweep in 1..=case.sweeps {
        reference_seconds +=
            timed(|| sampler::sweep_reference(&mut reference_state, corpus, priors, &mut rng));
        if sweep % every == 0 || sweep == case.sweeps {
            reference.push(point("reference", sweep, reference_seconds, &reference_state));
        }
        for _ in 0..FAST_PER_REFERENCE {
            fast_step(&mut fast, &mut point);
        }
    }
    let target = reference
        .last()
        .map_or(f64::INFINITY, |point| point.log_likelihood);
    let mut reached = fast
        .iter()
        .copied()
        .find(|point| point.sweep > 0 && point.log_likelihood >= target);
    let mut fast_seconds = fast.last().map_or(0.0, |point| point.seconds);
    while reached.is_none() && fast_seconds < reference_seconds {
        fast_seconds = fast_step(&mut fast, &mut point);
        let last = *fast.last().expect("the initial point");
        if last.sweep > 0 && last.log_likelihood >= target {
            reached = Some(last);
        }
    }
    // Points past the one that reached the target say nothing more.
    if let Some(hit) = reached {
        fast.retain(|point| point.sweep <= hit.sweep);
    }
    Convergence {
        case: case.clone(),
        fast_sampler: *fast_sampler,
        reference,
        fast,
        reached,
    }
}

/// A long run of the fast sampler alone on `threads` threads.
pub fn large_run(case: &Case, threads: usize, progress: &mut dyn FnMut(&str)) -> LargeRun {
    let started = Instant::now();
    let setup = Setup::new(case, progress);
    let generate_seconds = started.elapsed().as_secs_f64();
    let many = pool(threads);
    let mut engine = setup.engine();
    let Setup {
        corpus,
        priors,
        fast_sampler,
        start,
        ..
    } = setup;
    let mut state = start;
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
    LargeRun {
        case: case.clone(),
        fast_sampler,
        shards: engine.shards().len(),
        threads,
        generate_seconds,
        sweep_seconds,
        log_likelihood_first,
        log_likelihood_last: sampler::log_likelihood(&state, &corpus, &priors).total(),
        peak_rss: memory::peak_rss_bytes(),
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
    fn a_tiny_case_runs_and_the_parallel_chain_matches() {
        // Source: common practice — the thread count must not change the state.
        let case = Case {
            tokens: 4000,
            words: 300,
            topics: 12,
            sweeps: 2,
        };
        let row = throughput(&case, 2, &mut |_| {});
        assert!(row.parallel_identical);
        assert!(row.reference_per_second > 0.0 && row.fast_per_second > 0.0);
        assert!(row.log_likelihood.0.is_finite() && row.log_likelihood.1.is_finite());
    }
}
