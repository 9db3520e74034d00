//! Criterion micro-benchmarks of one sweep of each sampler, and of the
//! word-topic table's operations, on small synthetic corpora drawn from the
//! LDA generative process. The reference sweep is the baseline in every
//! group, so criterion's report compares the samplers within one run.
//! Run with `cargo bench`; `themata bench` measures the same samplers on
//! benchmark-sized corpora.

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use themata::fitting::sampler::{
    BetaPrior, CountState, Priors, ShardedSampler, Topic, WordTopicCounts, default_shards, sweep_reference,
};
use themata::fitting::schedule::SamplerKind;
use themata::testbed::bench::{Case, corpus_of};

fn sweeps(c: &mut Criterion) {
    let mut group = c.benchmark_group("sweep");
    group.sample_size(10);
    for &n_topics in &[100usize, 1000] {
        let case = Case {
            tokens: 100_000,
            words: 5000,
            topics: n_topics,
            sweeps: 1,
        };
        let corpus = corpus_of(&case);
        let priors = Priors {
            alpha: vec![10.0 / n_topics as f64; n_topics],
            beta: BetaPrior::Symmetric(0.01),
        };
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(3);
        let start = CountState::random(&corpus, n_topics, &mut rng);
        group.throughput(Throughput::Elements(corpus.n_tokens() as u64));

        let mut state = start.clone();
        group.bench_with_input(BenchmarkId::new("reference", n_topics), &n_topics, |b, _| {
            b.iter(|| sweep_reference(&mut state, &corpus, &priors, &mut rng));
        });
        for (name, kernel) in [
            ("exact", SamplerKind::Exact),
            ("metropolis", SamplerKind::Metropolis),
        ] {
            let mut state = start.clone();
            let mut engine = ShardedSampler::new(&corpus, default_shards(corpus.n_tokens(), kernel), kernel)
                .expect("a block-parallel sampler");
            let mut iteration = 0;
            group.bench_with_input(BenchmarkId::new(name, n_topics), &n_topics, |b, _| {
                b.iter(|| {
                    iteration += 1;
                    engine.sweep(&mut state, &corpus, &priors, 1, iteration);
                });
            });
        }
    }
    group.finish();
}

fn word_topic_table(c: &mut Criterion) {
    // Rows of words with 3 to 3000 tokens among 1000 topics: sparse for the
    // rare words, dense for the frequent ones.
    let word_tokens: Vec<u64> = (0..2000).map(|w| 3 + (3000 / (w + 1)) as u64).collect();
    let n_topics = 1000;
    let mut table = WordTopicCounts::new(&word_tokens, n_topics);
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
    let mut cells: Vec<(usize, Topic)> = Vec::new();
    for (word, &tokens) in word_tokens.iter().enumerate() {
        for _ in 0..tokens {
            let topic = rng.random_range(0..n_topics as u32) as Topic;
            table.increment(word, topic);
            cells.push((word, topic));
        }
    }
    let mut group = c.benchmark_group("word_topic_table");
    group.throughput(Throughput::Elements(cells.len() as u64));
    group.bench_function("get", |b| {
        b.iter(|| {
            cells
                .iter()
                .map(|&(w, t)| u64::from(table.get(w, t)))
                .sum::<u64>()
        });
    });
    group.bench_function("move", |b| {
        b.iter(|| {
            for &(w, t) in &cells {
                table.decrement(w, t);
                table.increment(w, t);
            }
        });
    });
    group.finish();
}

criterion_group!(benches, sweeps, word_topic_table);
criterion_main!(benches);
