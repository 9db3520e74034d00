//! Benchmarks of the reference collapsed Gibbs sweep on synthetic corpora
//! drawn from the LDA generative process. Run with `cargo bench`.

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use themata::sampler::{BetaPrior, CountState, Priors, sweep_reference};
use themata::synthetic;

fn reference_sweep(c: &mut Criterion) {
    let mut group = c.benchmark_group("reference_sweep");
    group.sample_size(10);
    for &n_topics in &[10usize, 100] {
        let n_words = 5000;
        let topics = synthetic::zipf_topics(n_topics, n_words, 0.05, 1);
        let names = (0..n_words).map(|w| format!("w{w}")).collect();
        let data = synthetic::from_topics(topics, &vec![0.1; n_topics], &vec![100; 500], names, 2);
        let priors = Priors {
            alpha: vec![0.1; n_topics],
            beta: BetaPrior::Symmetric(0.01),
        };
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(3);
        let mut state = CountState::random(&data.corpus, n_topics, &mut rng);
        group.throughput(Throughput::Elements(data.corpus.n_tokens() as u64));
        group.bench_with_input(BenchmarkId::from_parameter(n_topics), &n_topics, |b, _| {
            b.iter(|| sweep_reference(&mut state, &data.corpus, &priors, &mut rng));
        });
    }
    group.finish();
}

criterion_group!(benches, reference_sweep);
criterion_main!(benches);
