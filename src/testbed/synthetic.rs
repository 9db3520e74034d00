//! Synthetic corpora drawn from the LDA generative process, with the true
//! topics and shares kept so tests and benchmarks can compare against them.
//! Includes the published worked examples: the bars of Griffiths & Steyvers
//! (2004) and the two-topic toy of Steyvers & Griffiths (2007).

use rand::{RngExt, SeedableRng};
use rand_distr::weighted::WeightedAliasIndex;
use rand_distr::{Distribution, Gamma};
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::ingest::corpus::Corpus;
use crate::ingest::vocab::Vocabulary;

/// A generated corpus with the truth behind it.
#[derive(Clone, Debug)]
pub struct Synthetic {
    /// The documents.
    pub corpus: Corpus,
    /// True topic-word distributions, K rows of V.
    pub topics: Vec<Vec<f64>>,
    /// True document-topic shares, D rows of K.
    pub shares: Vec<Vec<f64>>,
    /// The topic that generated each token.
    pub assignments: Vec<u32>,
}

/// Draws from Dirichlet(`concentration`) by normalised Gamma variates.
pub fn dirichlet(concentration: &[f64], rng: &mut impl rand::Rng) -> Vec<f64> {
    let mut draws: Vec<f64> = concentration
        .iter()
        .map(|&a| Gamma::new(a, 1.0).expect("positive concentration").sample(rng))
        .collect();
    let total: f64 = draws.iter().sum();
    if total > 0.0 {
        for draw in &mut draws {
            *draw /= total;
        }
    } else {
        // Every draw underflowed (tiny concentrations): put all mass on one entry.
        let pick = rng.random_range(0..draws.len());
        for (idx, draw) in draws.iter_mut().enumerate() {
            *draw = if idx == pick { 1.0 } else { 0.0 };
        }
    }
    draws
}

/// Index drawn from the discrete distribution `weights` (summing to about 1).
pub fn categorical(weights: &[f64], rng: &mut impl rand::Rng) -> usize {
    let total: f64 = weights.iter().sum();
    let mut target = rng.random::<f64>() * total;
    for (idx, &weight) in weights.iter().enumerate() {
        if target < weight {
            return idx;
        }
        target -= weight;
    }
    weights.len() - 1
}

/// Generates documents from fixed topics: for each document, shares from
/// Dirichlet(`alpha`), then each token's topic from the shares and its word
/// from that topic.
pub fn from_topics(
    topics: Vec<Vec<f64>>,
    alpha: &[f64],
    doc_lengths: &[usize],
    word_names: Vec<String>,
    seed: u64,
) -> Synthetic {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut docs = Vec::with_capacity(doc_lengths.len());
    let mut shares = Vec::with_capacity(doc_lengths.len());
    let mut assignments = Vec::new();
    for &doc_len in doc_lengths {
        let theta = dirichlet(alpha, &mut rng);
        let mut doc = Vec::with_capacity(doc_len);
        for _ in 0..doc_len {
            let topic = categorical(&theta, &mut rng);
            doc.push(categorical(&topics[topic], &mut rng) as u32);
            assignments.push(topic as u32);
        }
        docs.push(doc);
        shares.push(theta);
    }
    let vocabulary = vocabulary_of(&docs, word_names);
    Synthetic {
        corpus: Corpus::from_documents(vocabulary, docs),
        topics,
        shares,
        assignments,
    }
}

/// The vocabulary of generated documents: token and document counts per word.
fn vocabulary_of(docs: &[Vec<u32>], word_names: Vec<String>) -> Vocabulary {
    let mut counter = WordCounter::new(word_names.len());
    for doc in docs {
        counter.add_document(doc);
    }
    counter.into_vocabulary(word_names)
}

/// Token and document counts per word, one document at a time, in O(tokens).
struct WordCounter {
    word_counts: Vec<u64>,
    doc_counts: Vec<u32>,
    /// The last document (1-based) each word was seen in.
    last_doc: Vec<usize>,
    docs_seen: usize,
}

impl WordCounter {
    fn new(n_words: usize) -> WordCounter {
        WordCounter {
            word_counts: vec![0; n_words],
            doc_counts: vec![0; n_words],
            last_doc: vec![0; n_words],
            docs_seen: 0,
        }
    }

    fn add_document(&mut self, doc: &[u32]) {
        self.docs_seen += 1;
        for &word in doc {
            let word = word as usize;
            self.word_counts[word] += 1;
            if self.last_doc[word] != self.docs_seen {
                self.last_doc[word] = self.docs_seen;
                self.doc_counts[word] += 1;
            }
        }
    }

    fn into_vocabulary(self, word_names: Vec<String>) -> Vocabulary {
        Vocabulary::from_parts(word_names, self.word_counts, self.doc_counts)
    }
}

/// The shape of a large synthetic corpus for benchmarks.
#[derive(Clone, Debug, PartialEq)]
pub struct UrnCorpusSettings {
    /// Tokens to generate (the last document is cut to fit).
    pub n_tokens: usize,
    /// Vocabulary size V.
    pub n_words: usize,
    /// Topics K.
    pub n_topics: usize,
    /// Mean document length; lengths are uniform on [mean/2, 3 mean/2].
    pub mean_doc_len: usize,
    /// Symmetric document-topic concentration per topic.
    pub alpha: f64,
    /// Topic-word concentration per word: each topic is
    /// Dirichlet(beta * V * zipf), zipf the base word frequencies.
    pub beta: f64,
    /// Exponent s of the base word frequencies, `p(rank r) ∝ 1 / r^s`.
    pub zipf_exponent: f64,
    /// Seed of the random stream.
    pub seed: u64,
}

/// A corpus drawn from the LDA generative process in its Pólya-urn form
/// (Blackwell & MacQueen 1973): integrating out theta_d ~ Dirichlet(alpha)
/// and phi_k ~ Dirichlet(b0 * zipf), token n of a document takes the topic of
/// a uniformly chosen earlier token of the document with probability
/// `n / (n + a0)`, else a topic drawn from alpha; and a token of topic k takes
/// the word of a uniformly chosen earlier token of topic k with probability
/// `m_k / (m_k + b0)`, else a word from the Zipf base. This is exactly the
/// Dirichlet-multinomial marginal of the generative process, costs O(1) per
/// token, and never holds a K x V matrix, so it scales to the sizes
/// `themata bench` needs. Word ids are Zipf ranks (0 is the most frequent).
/// Returns the corpus and the topic each token was drawn from.
pub fn urn_corpus(settings: &UrnCorpusSettings) -> (Corpus, Vec<crate::fitting::sampler::Topic>) {
    let UrnCorpusSettings {
        n_tokens,
        n_words,
        n_topics,
        mean_doc_len,
        alpha,
        beta,
        zipf_exponent,
        seed,
    } = settings.clone();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    assert!(
        n_topics <= crate::fitting::sampler::MAX_TOPICS,
        "at most {} topics",
        crate::fitting::sampler::MAX_TOPICS
    );
    let zipf: Vec<f64> = (1..=n_words)
        .map(|rank| (rank as f64).powf(-zipf_exponent))
        .collect();
    let base = WeightedAliasIndex::new(zipf).expect("positive Zipf weights");
    let alpha_sum = alpha * n_topics as f64;
    let beta_sum = beta * n_words as f64;
    let mut topic_words: Vec<Vec<u32>> = vec![Vec::new(); n_topics];
    let mut tokens = Vec::with_capacity(n_tokens);
    let mut offsets = vec![0u64];
    let mut doc_topics: Vec<usize> = Vec::new();
    let mut drawn_topics = Vec::with_capacity(n_tokens);
    let mut counter = WordCounter::new(n_words);
    let mean = mean_doc_len.max(2);
    while tokens.len() < n_tokens {
        let doc_len = rng
            .random_range(mean / 2..=mean + mean / 2)
            .min(n_tokens - tokens.len());
        doc_topics.clear();
        let doc_start = tokens.len();
        for position in 0..doc_len {
            let topic = if rng.random::<f64>() * (position as f64 + alpha_sum) < position as f64 {
                doc_topics[rng.random_range(0..position)]
            } else {
                rng.random_range(0..n_topics)
            };
            doc_topics.push(topic);
            let earlier = &mut topic_words[topic];
            let seen = earlier.len();
            let word = if rng.random::<f64>() * (seen as f64 + beta_sum) < seen as f64 {
                earlier[rng.random_range(0..seen)]
            } else {
                base.sample(&mut rng) as u32
            };
            earlier.push(word);
            tokens.push(word);
        }
        counter.add_document(&tokens[doc_start..]);
        offsets.push(tokens.len() as u64);
        drawn_topics.extend(
            doc_topics
                .iter()
                .map(|&topic| topic as crate::fitting::sampler::Topic),
        );
    }
    let documents = (0..offsets.len() - 1)
        .map(|idx| crate::ingest::corpus::DocumentInfo {
            date: None,
            id: format!("doc-{idx}"),
            label: None,
            source: String::new(),
        })
        .collect();
    let names = (0..n_words).map(|w| format!("w{w}")).collect();
    let corpus = Corpus {
        tokenizer: crate::ingest::tokenize::TokenizerSettings::default(),
        vocabulary: counter.into_vocabulary(names),
        documents,
        offsets,
        tokens,
    };
    (corpus, drawn_topics)
}

/// The bars example (Griffiths & Steyvers 2004): a 5x5 pixel vocabulary,
/// ten topics each putting 1/5 on one row or one column.
pub fn bars(n_docs: usize, doc_len: usize, alpha: f64, seed: u64) -> Synthetic {
    let side = 5;
    let mut topics = Vec::with_capacity(2 * side);
    for row in 0..side {
        let mut topic = vec![0.0; side * side];
        for col in 0..side {
            topic[row * side + col] = 1.0 / side as f64;
        }
        topics.push(topic);
    }
    for col in 0..side {
        let mut topic = vec![0.0; side * side];
        for row in 0..side {
            topic[row * side + col] = 1.0 / side as f64;
        }
        topics.push(topic);
    }
    let names = (0..side * side)
        .map(|p| format!("px{}{}", p / side, p % side))
        .collect();
    from_topics(
        topics,
        &vec![alpha; 2 * side],
        &vec![doc_len; n_docs],
        names,
        seed,
    )
}

/// The two-topic toy (Steyvers & Griffiths 2007): five words; topic 0 puts
/// 1/3 on words 0-2, topic 1 on words 2-4 (sharing word 2); 16 documents of
/// 16 tokens whose share of topic 0 runs evenly from 1 down to 0.
pub fn two_topics(seed: u64) -> Synthetic {
    let third = 1.0 / 3.0;
    let topics = vec![
        vec![third, third, third, 0.0, 0.0],
        vec![0.0, 0.0, third, third, third],
    ];
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut docs = Vec::new();
    let mut shares = Vec::new();
    let mut assignments = Vec::new();
    let n_docs = 16;
    for doc_idx in 0..n_docs {
        let first = 1.0 - doc_idx as f64 / (n_docs - 1) as f64;
        let theta = vec![first, 1.0 - first];
        let mut doc = Vec::new();
        for _ in 0..16 {
            let topic = categorical(&theta, &mut rng);
            doc.push(categorical(&topics[topic], &mut rng) as u32);
            assignments.push(topic as u32);
        }
        docs.push(doc);
        shares.push(theta);
    }
    let names: Vec<String> = ["river", "stream", "bank", "money", "loan"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    Synthetic {
        corpus: Corpus::from_documents(vocabulary_of(&docs, names), docs),
        topics,
        shares,
        assignments,
    }
}

/// Random topics over `n_words` words with Zipf-like overall word
/// frequencies: each topic is Dirichlet(`beta` * Zipf weights * V).
pub fn zipf_topics(n_topics: usize, n_words: usize, beta: f64, seed: u64) -> Vec<Vec<f64>> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed ^ 0x9e37_79b9_7f4a_7c15);
    let harmonic: f64 = (1..=n_words).map(|r| 1.0 / r as f64).sum();
    let base: Vec<f64> = (1..=n_words)
        .map(|rank| (beta * n_words as f64 * (1.0 / rank as f64) / harmonic).max(1e-3))
        .collect();
    (0..n_topics).map(|_| dirichlet(&base, &mut rng)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::function::gamma::ln_gamma;

    fn small_urn() -> (Corpus, Vec<crate::fitting::sampler::Topic>, UrnCorpusSettings) {
        let settings = UrnCorpusSettings {
            n_tokens: 200_000,
            n_words: 1000,
            n_topics: 50,
            mean_doc_len: 40,
            alpha: 0.02,
            beta: 0.01,
            zipf_exponent: 1.0,
            seed: 3,
        };
        let (corpus, topics) = urn_corpus(&settings);
        (corpus, topics, settings)
    }

    #[test]
    fn documents_use_as_many_topics_as_the_dirichlet_multinomial_predicts() {
        // Source: the beta-binomial pmf at zero (Johnson, Kemp & Kotz,
        // "Univariate Discrete Distributions", 3rd ed., section 6.7.2): a
        // topic's count in a document of n tokens under symmetric
        // Dirichlet(alpha) over K topics is beta-binomial(n, alpha, a0 - alpha),
        // so P(absent) = Gamma(a0) Gamma(n + a0 - alpha) / (Gamma(a0 - alpha) Gamma(n + a0))
        // and the expected number of topics used is K (1 - P(absent)).
        let (corpus, topics, settings) = small_urn();
        assert_eq!(corpus.n_tokens(), settings.n_tokens);
        assert_eq!(topics.len(), settings.n_tokens);
        let k = settings.n_topics as f64;
        let alpha = settings.alpha;
        let a0 = alpha * k;
        let differences: Vec<f64> = (0..corpus.n_docs())
            .map(|doc| {
                let range = corpus.offsets[doc] as usize..corpus.offsets[doc + 1] as usize;
                let n = range.len() as f64;
                let mut used: Vec<_> = topics[range].to_vec();
                used.sort_unstable();
                used.dedup();
                let absent =
                    (ln_gamma(a0) + ln_gamma(n + a0 - alpha) - ln_gamma(a0 - alpha) - ln_gamma(n + a0)).exp();
                used.len() as f64 - k * (1.0 - absent)
            })
            .collect();
        let count = differences.len() as f64;
        let mean = differences.iter().sum::<f64>() / count;
        let sd = (differences.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / (count - 1.0)).sqrt();
        let z = mean / (sd / count.sqrt());
        // Tolerance |z| < 4 over some 5,000 independent documents.
        assert!(z.abs() < 4.0, "mean difference {mean:.4} (z = {z:.2})");
    }

    #[test]
    fn word_frequencies_follow_the_zipf_base() {
        // Source: in the Pólya urn every token's marginal word distribution
        // is the base measure (Blackwell & MacQueen 1973), here Zipf with
        // s = 1: p(rank 1) = 1 / H_V. Each of the 50 topics holds word 0
        // with a share ~ Beta(b0 p, b0 (1 - p)), b0 = 10, whose standard
        // deviation 0.10 shrinks to about 0.015 over 50 topics; tolerance 0.06.
        let (corpus, _, settings) = small_urn();
        let harmonic: f64 = (1..=settings.n_words).map(|r| 1.0 / r as f64).sum();
        let share = corpus.tokens.iter().filter(|&&w| w == 0).count() as f64 / corpus.n_tokens() as f64;
        assert!(
            (share - 1.0 / harmonic).abs() < 0.06,
            "{share} vs {}",
            1.0 / harmonic
        );
        let vocabulary_counts: u64 = corpus.vocabulary.word_counts().iter().sum();
        assert_eq!(vocabulary_counts as usize, corpus.n_tokens());
    }
}
