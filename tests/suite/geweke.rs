//! Sampler correctness by the joint-distribution test of Geweke (2004, JASA
//! 99, "Getting it right"): statistics of (z, w) drawn by forward simulation
//! from the model must match those of a chain that alternates the sampler
//! under test (z given w) with regenerating the words (w given z). A sampler
//! that leaves the wrong distribution invariant shows up as a gap in the
//! means. See also Grosse & Duvenaud 2014, "Testing MCMC code".

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use themata::fitting::sampler::{BetaPrior, CountState, Priors, ShardedSampler, Topic, sweep_reference};
use themata::fitting::schedule::SamplerKind;
use themata::ingest::corpus::Corpus;
use themata::ingest::vocab::Vocabulary;
use themata::testbed::synthetic::{categorical, dirichlet};

const N_TOPICS: usize = 3;
const N_WORDS: usize = 4;
const DOC_LENS: [usize; 2] = [5, 4];
const BETA: f64 = 0.2;
const ALPHA: [f64; N_TOPICS] = [0.2, 0.5, 1.0];
const DRAWS: usize = 100_000;

fn priors() -> Priors {
    Priors {
        alpha: ALPHA.to_vec(),
        beta: BetaPrior::Symmetric(BETA),
    }
}

/// One forward draw of (w, z) from the generative model.
fn forward(rng: &mut Xoshiro256PlusPlus) -> (Vec<Vec<u32>>, Vec<Topic>) {
    let phi: Vec<Vec<f64>> = (0..N_TOPICS).map(|_| dirichlet(&[BETA; N_WORDS], rng)).collect();
    let mut docs = Vec::new();
    let mut z = Vec::new();
    for &len in &DOC_LENS {
        let theta = dirichlet(&ALPHA, rng);
        let mut doc = Vec::new();
        for _ in 0..len {
            let topic = categorical(&theta, rng);
            doc.push(categorical(&phi[topic], rng) as u32);
            z.push(topic as Topic);
        }
        docs.push(doc);
    }
    (docs, z)
}

fn corpus_of(docs: Vec<Vec<u32>>) -> Corpus {
    let vocabulary = Vocabulary::from_parts(
        (0..N_WORDS).map(|w| format!("w{w}")).collect(),
        vec![1; N_WORDS],
        vec![1; N_WORDS],
    );
    Corpus::from_documents(vocabulary, docs)
}

/// Statistics compared.
const N_STATS: usize = 7;

/// The statistics compared: doc 0's tokens in topic 0 and its square, word
/// 0's tokens in topic 0 and its square, whether tokens 0 and 1 share a
/// topic, whether all of doc 1 is in one topic, word 0's count.
fn statistics(corpus: &Corpus, state: &CountState) -> [f64; N_STATS] {
    let n00 = f64::from(state.doc_topic_count(corpus, 0, 0));
    let m00 = f64::from(state.word_topic_count(0, 0));
    let doc1 = &state.assignments[DOC_LENS[0]..];
    [
        n00,
        n00 * n00,
        m00,
        m00 * m00,
        f64::from(u8::from(state.assignments[0] == state.assignments[1])),
        f64::from(u8::from(doc1.iter().all(|&z| z == doc1[0]))),
        corpus.tokens.iter().filter(|&&w| w == 0).count() as f64,
    ]
}

/// Regenerates every word given the topics: w_i ~ p(w_i | z, w_-i) under the
/// collapsed model, proportional to n_{z_i, w}^{-i} + beta.
fn resample_words(corpus: &mut Corpus, state: &mut CountState, rng: &mut Xoshiro256PlusPlus) {
    // The word-topic table's layout depends on each word's token count,
    // which changes here; work on plain counts, then rebuild the state.
    let mut counts = [[0u32; N_TOPICS]; N_WORDS];
    for (&word, &topic) in corpus.tokens.iter().zip(&state.assignments) {
        counts[word as usize][topic as usize] += 1;
    }
    for token_idx in 0..corpus.tokens.len() {
        let topic = state.assignments[token_idx] as usize;
        let old = corpus.tokens[token_idx] as usize;
        counts[old][topic] -= 1;
        let weights: Vec<f64> = (0..N_WORDS).map(|w| f64::from(counts[w][topic]) + BETA).collect();
        let new = categorical(&weights, rng);
        counts[new][topic] += 1;
        corpus.tokens[token_idx] = new as u32;
    }
    *state = CountState::from_assignments(corpus, N_TOPICS, std::mem::take(&mut state.assignments));
}

type Sweep = fn(&mut CountState, &Corpus, &Priors, &mut Xoshiro256PlusPlus);

/// Largest |z| over the statistics between forward and successive-conditional means.
fn largest_z(sweep: Sweep, seed: u64) -> f64 {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut forward_stats = vec![Vec::new(); N_STATS];
    for _ in 0..DRAWS {
        let (docs, z) = forward(&mut rng);
        let corpus = corpus_of(docs);
        let state = CountState::from_assignments(&corpus, N_TOPICS, z);
        for (slot, value) in forward_stats.iter_mut().zip(statistics(&corpus, &state)) {
            slot.push(value);
        }
    }
    let (docs, z) = forward(&mut rng);
    let mut corpus = corpus_of(docs);
    let mut state = CountState::from_assignments(&corpus, N_TOPICS, z);
    let priors = priors();
    let mut chain_stats = vec![Vec::new(); N_STATS];
    for _ in 0..DRAWS {
        sweep(&mut state, &corpus, &priors, &mut rng);
        resample_words(&mut corpus, &mut state, &mut rng);
        for (slot, value) in chain_stats.iter_mut().zip(statistics(&corpus, &state)) {
            slot.push(value);
        }
    }
    let mean = |values: &[f64]| values.iter().sum::<f64>() / values.len() as f64;
    let variance_of_mean_iid = |values: &[f64]| {
        let m = mean(values);
        values.iter().map(|v| (v - m).powi(2)).sum::<f64>()
            / (values.len() as f64 - 1.0)
            / values.len() as f64
    };
    // The chain is autocorrelated: estimate the variance of its mean by batch
    // means (100 batches of 1000 draws, far longer than the chain's mixing time
    // on 7 tokens).
    let variance_of_mean_chain = |values: &[f64]| {
        let batch_means: Vec<f64> = values.chunks(1000).map(mean).collect();
        variance_of_mean_iid(&batch_means)
    };
    let mut worst: f64 = 0.0;
    for (f, c) in forward_stats.iter().zip(&chain_stats) {
        let z = (mean(f) - mean(c)) / (variance_of_mean_iid(f) + variance_of_mean_chain(c)).sqrt();
        worst = worst.max(z.abs());
    }
    worst
}

/// A deliberately broken sweep with a plausible typo: the topic-word
/// denominator uses one word's beta instead of the sum over the vocabulary,
/// `(n_kw + beta) / (n_k + beta)` in place of `/ (n_k + V beta)`.
fn broken_sweep(state: &mut CountState, corpus: &Corpus, priors: &Priors, rng: &mut Xoshiro256PlusPlus) {
    let k = state.n_topics;
    for doc_idx in 0..corpus.n_docs() {
        let start = corpus.offsets[doc_idx] as usize;
        for (pos, &word) in corpus.doc_tokens(doc_idx).iter().enumerate() {
            let token_idx = start + pos;
            let w = word as usize;
            let old = state.assignments[token_idx];
            state.word_topic.decrement(w, old);
            state.topic_totals[old as usize] -= 1;
            // A placeholder topic, so the document count below leaves the token out.
            state.assignments[token_idx] = Topic::MAX;
            let weights: Vec<f64> = (0..k)
                .map(|t| {
                    (f64::from(state.word_topic_count(w, t)) + priors.beta_of(w))
                        / (state.topic_totals[t] as f64 + priors.beta_of(w))
                        * (f64::from(state.doc_topic_count(corpus, doc_idx, t)) + priors.alpha[t])
                })
                .collect();
            let new = categorical(&weights, rng) as Topic;
            state.assignments[token_idx] = new;
            state.word_topic.increment(w, new);
            state.topic_totals[new as usize] += 1;
        }
    }
}

fn reference(state: &mut CountState, corpus: &Corpus, priors: &Priors, rng: &mut Xoshiro256PlusPlus) {
    sweep_reference(state, corpus, priors, rng);
}

/// A block sampler on a grid of one block (exact sequential sweeps), its
/// sweep number and seed drawn from the test's stream.
fn block_sweep(
    kernel: SamplerKind,
    state: &mut CountState,
    corpus: &Corpus,
    priors: &Priors,
    rng: &mut Xoshiro256PlusPlus,
) {
    use rand::Rng;
    let mut engine = ShardedSampler::new(corpus, 1, kernel).expect("a block-parallel sampler");
    engine.sweep(state, corpus, priors, rng.next_u64(), rng.next_u64());
}

fn metropolis(state: &mut CountState, corpus: &Corpus, priors: &Priors, rng: &mut Xoshiro256PlusPlus) {
    block_sweep(SamplerKind::Metropolis, state, corpus, priors, rng);
}

fn exact(state: &mut CountState, corpus: &Corpus, priors: &Priors, rng: &mut Xoshiro256PlusPlus) {
    block_sweep(SamplerKind::Exact, state, corpus, priors, rng);
}

fn sparse(state: &mut CountState, corpus: &Corpus, priors: &Priors, rng: &mut Xoshiro256PlusPlus) {
    block_sweep(SamplerKind::Sparse, state, corpus, priors, rng);
}

#[test]
fn reference_sampler_gets_it_right() {
    // Source: Geweke 2004 (JASA 99). Tolerance |z| < 4 on each of seven
    // statistics: under a correct sampler each z is roughly standard normal,
    // so |z| > 4 has probability about 6e-5 per statistic.
    let worst = largest_z(reference, 41);
    eprintln!("reference sampler: largest |z| = {worst:.2}");
    assert!(worst < 4.0, "largest |z| = {worst:.2}");
}

#[test]
fn metropolis_sampler_gets_it_right() {
    // Source: Geweke 2004 (JASA 99); tolerance as for the reference sampler.
    let worst = largest_z(metropolis, 43);
    eprintln!("metropolis sampler: largest |z| = {worst:.2}");
    assert!(worst < 4.0, "largest |z| = {worst:.2}");
}

#[test]
fn exact_sampler_gets_it_right() {
    // Source: Geweke 2004 (JASA 99); tolerance as for the reference sampler.
    let worst = largest_z(exact, 47);
    eprintln!("exact sampler: largest |z| = {worst:.2}");
    assert!(worst < 4.0, "largest |z| = {worst:.2}");
}

#[test]
fn sparse_sampler_gets_it_right() {
    // Source: Geweke 2004 (JASA 99); tolerance as for the reference sampler.
    // Broken on purpose when this test was written, the sparse kernel gave
    // |z| = 14.1 with the token left in its own document part and 8.0 with
    // a stale sum-tree leaf for the topic the token left.
    let worst = largest_z(sparse, 53);
    eprintln!("sparse sampler: largest |z| = {worst:.2}");
    assert!(worst < 4.0, "largest |z| = {worst:.2}");
}

#[test]
fn broken_sampler_is_caught() {
    // The same test must be able to fail: the denominator typo favours
    // topics with few tokens and shifts the joint distribution.
    let worst = largest_z(broken_sweep, 41);
    eprintln!("broken sampler: largest |z| = {worst:.2}");
    assert!(
        worst > 4.0,
        "the broken sampler passed with largest |z| = {worst:.2}"
    );
}
