//! Scoring a saved model: placing new documents in it (fold-in with the
//! topics fixed), held-out perplexity by document completion or the
//! left-to-right estimator, and the train/held-out split of `fit --holdout`.
//!
//! Work is spread over documents with rayon; each document draws from its own
//! random stream derived from (seed, document index), so results do not
//! depend on the number of threads.

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;
use serde::Serialize;

use crate::evaluate::coherence::{self, CoherenceError, CoherenceSettings};
use crate::evaluate::diagnostics::{self, DiagnosticsError, TopicRows};
use crate::evaluate::heldout::{self, FoldInSettings, HeldOutError};
use crate::evaluate::uncertainty::{self, Interval, UncertaintyError};
use crate::fitting::sampler::splitmix64;
use crate::ingest::corpus::Corpus;
use crate::ingest::tokenize::Tokenizer;
use crate::ingest::vocab::Vocabulary;
use crate::model::{Model, TopicWordColumns};

/// Why scoring or placing documents failed.
#[derive(Debug, thiserror::Error)]
pub enum ScoreError {
    /// A held-out or new document could not be scored or placed.
    #[error("document `{document}`: {source}")]
    Document {
        document: String,
        #[source]
        source: HeldOutError,
    },
    /// A credible interval could not be computed.
    #[error("document `{document}`: {source}")]
    Interval {
        document: String,
        #[source]
        source: UncertaintyError,
    },
    #[error(transparent)]
    Coherence(#[from] CoherenceError),
    #[error(transparent)]
    Diagnostics(#[from] DiagnosticsError),
    /// Coherence needs at least one topic.
    #[error("the model has no topics to score")]
    NoTopics,
}

/// How held-out documents are scored.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, clap::ValueEnum, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Method {
    /// Fold in the even positions, score the odd ones (Wallach et al. 2009).
    #[default]
    Completion,
    /// Left-to-right estimate of each whole document's probability with R particles.
    LeftToRight,
}

/// Settings of held-out scoring and fold-in.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ScoreSettings {
    pub method: Method,
    pub particles: usize,
    pub fold_in: FoldInSettings,
    pub seed: u64,
}

impl Default for ScoreSettings {
    fn default() -> Self {
        ScoreSettings {
            method: Method::Completion,
            particles: 20,
            fold_in: FoldInSettings::default(),
            seed: 1,
        }
    }
}

/// A new document cut by the model's tokenizer and mapped to its vocabulary.
#[derive(Clone, Debug, PartialEq)]
pub struct EncodedDocument {
    pub id: String,
    pub tokens: Vec<u32>,
    /// Tokens whose word the model does not know (dropped).
    pub unknown_tokens: usize,
}

/// Cuts `text` exactly as the training documents were cut and keeps the
/// tokens the vocabulary knows.
pub fn encode_text(tokenizer: &Tokenizer, vocabulary: &Vocabulary, id: &str, text: &str) -> EncodedDocument {
    let mut tokens = Vec::new();
    let mut unknown_tokens = 0;
    tokenizer.for_each_token(text, &mut |token| match vocabulary.id(token) {
        Some(word) => tokens.push(word),
        None => unknown_tokens += 1,
    });
    EncodedDocument {
        id: id.to_string(),
        tokens,
        unknown_tokens,
    }
}

/// The word-major table of phi is built for at most this many bytes' worth
/// of words; a document with a word beyond them gets the columns it needs
/// computed for it.
const DENSE_TABLE_LIMIT_BYTES: usize = 64 << 20;

/// Where the held-out estimators read the topic-word shares from: a
/// word-major table `[w * K + k] = phi_kw` of the most frequent words (word
/// ids count down from the most frequent, so these are the first ids; all
/// of them when the table is small), and, for a document with rarer words,
/// a table of just its words, the rare ones computed for it. Both hold the
/// same values, bit for bit, so results do not depend on which is used.
pub struct TopicWeights<'a> {
    /// Columns of words `0..n_hot`.
    hot: Vec<f64>,
    n_hot: usize,
    columns: TopicWordColumns<'a>,
}

impl<'a> TopicWeights<'a> {
    /// The shares of `model`'s topics.
    pub fn of(model: &'a Model) -> TopicWeights<'a> {
        TopicWeights::with_table_limit(model, DENSE_TABLE_LIMIT_BYTES)
    }

    /// [`TopicWeights::of`] with the largest word-major table given.
    fn with_table_limit(model: &'a Model, limit_bytes: usize) -> TopicWeights<'a> {
        let n_topics = model.n_topics();
        let n_hot = (limit_bytes / (n_topics * std::mem::size_of::<f64>())).min(model.state.n_words);
        let mut hot = vec![0.0; n_hot * n_topics];
        if n_hot > 0 {
            for topic_idx in 0..n_topics {
                let row = model.topic_word_row(topic_idx);
                for (word_idx, &value) in row[..n_hot].iter().enumerate() {
                    hot[word_idx * n_topics + topic_idx] = value;
                }
            }
        }
        let columns = model.topic_word_columns(n_hot);
        TopicWeights { hot, n_hot, columns }
    }

    /// Calls `f(tokens, table)` with a word-major table that covers the
    /// document's words and the document's tokens as indices into it.
    pub fn with_document<T>(&self, tokens: &[u32], f: impl FnOnce(&[u32], &[f64]) -> T) -> T {
        let n_topics = self.columns.n_topics();
        if self.n_hot > 0 && tokens.iter().all(|&word| (word as usize) < self.n_hot) {
            return f(tokens, &self.hot);
        }
        let mut words: Vec<u32> = tokens.to_vec();
        words.sort_unstable();
        words.dedup();
        let local: Vec<u32> = tokens
            .iter()
            .map(|word| words.partition_point(|w| w < word) as u32)
            .collect();
        let mut table = Vec::with_capacity(words.len().max(1) * n_topics);
        let mut column = Vec::with_capacity(n_topics);
        for &word in &words {
            let word = word as usize;
            if word < self.n_hot {
                table.extend_from_slice(&self.hot[word * n_topics..(word + 1) * n_topics]);
            } else {
                self.columns.fill(word, &mut column);
                table.extend_from_slice(&column);
            }
        }
        if words.is_empty() {
            // The estimators check the table's shape before the document's length.
            table.resize(n_topics, 0.0);
        }
        f(&local, &table)
    }
}

/// The random stream of document `doc_idx` under `seed` (SplitMix64 mixing of the index).
pub fn document_rng(seed: u64, doc_idx: usize) -> Xoshiro256PlusPlus {
    Xoshiro256PlusPlus::seed_from_u64(seed ^ splitmix64(doc_idx as u64))
}

/// The result of scoring held-out documents.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct HeldOutScore {
    pub method: Method,
    /// exp(-log_likelihood / tokens_scored); `None` when nothing was scored.
    pub heldout_perplexity: Option<f64>,
    /// Total log-likelihood of the scored tokens.
    pub log_likelihood: f64,
    pub tokens_scored: usize,
    pub unknown_tokens: usize,
    pub documents: usize,
    /// Documents with no known word (nothing to score).
    pub documents_without_known_words: usize,
}

/// Scores documents against the model's topics and alpha.
pub fn score_heldout(
    model: &Model,
    documents: &[EncodedDocument],
    settings: &ScoreSettings,
) -> Result<HeldOutScore, ScoreError> {
    let weights = TopicWeights::of(model);
    let alpha = &model.priors.alpha;
    let per_doc: Vec<(f64, usize)> = documents
        .par_iter()
        .enumerate()
        .map(|(doc_idx, doc)| {
            let mut rng = document_rng(settings.seed, doc_idx);
            let scored = weights.with_document(&doc.tokens, |tokens, phi| match settings.method {
                Method::Completion => {
                    heldout::completion_log_likelihood(tokens, phi, alpha, &settings.fold_in, &mut rng)
                        .map(|c| (c.log_likelihood, c.tokens_scored))
                }
                Method::LeftToRight => heldout::left_to_right_log_likelihood(
                    tokens,
                    phi,
                    alpha,
                    settings.particles,
                    true,
                    &mut rng,
                )
                .map(|ll| (ll, tokens.len())),
            });
            scored.map_err(|source| ScoreError::Document {
                document: doc.id.clone(),
                source,
            })
        })
        .collect::<Result<_, _>>()?;
    let log_likelihood: f64 = per_doc.iter().map(|(ll, _)| ll).sum();
    let tokens_scored: usize = per_doc.iter().map(|(_, n)| n).sum();
    Ok(HeldOutScore {
        method: settings.method,
        heldout_perplexity: heldout::perplexity(log_likelihood, tokens_scored),
        log_likelihood,
        tokens_scored,
        unknown_tokens: documents.iter().map(|d| d.unknown_tokens).sum(),
        documents: documents.len(),
        documents_without_known_words: documents.iter().filter(|d| d.tokens.is_empty()).count(),
    })
}

/// The held-out documents of a corpus as encoded documents.
pub fn corpus_documents(corpus: &Corpus) -> Vec<EncodedDocument> {
    (0..corpus.n_docs())
        .map(|doc_idx| EncodedDocument {
            id: corpus.documents[doc_idx].id.clone(),
            tokens: corpus.doc_tokens(doc_idx).to_vec(),
            unknown_tokens: 0,
        })
        .collect()
}

/// Re-maps a corpus built with another vocabulary onto the model's, counting
/// the tokens of words the model does not know. Fails when the two share no
/// word at all (almost certainly the wrong corpus).
pub fn align_corpus(corpus: &Corpus, vocabulary: &Vocabulary) -> Option<Vec<EncodedDocument>> {
    let map: Vec<Option<u32>> = corpus
        .vocabulary
        .words()
        .iter()
        .map(|w| vocabulary.id(w))
        .collect();
    if map.iter().all(Option::is_none) {
        return None;
    }
    Some(
        (0..corpus.n_docs())
            .map(|doc_idx| {
                let mut tokens = Vec::new();
                let mut unknown_tokens = 0;
                for &word in corpus.doc_tokens(doc_idx) {
                    match map[word as usize] {
                        Some(id) => tokens.push(id),
                        None => unknown_tokens += 1,
                    }
                }
                EncodedDocument {
                    id: corpus.documents[doc_idx].id.clone(),
                    tokens,
                    unknown_tokens,
                }
            })
            .collect(),
    )
}

/// A document placed in the model: its mean shares and the fold-in counts
/// its credible intervals come from (computed per topic on demand, since
/// they cost far more than the shares).
#[derive(Clone, Debug, PartialEq)]
pub struct Placement {
    pub document: String,
    /// Tokens of words the model knows.
    pub tokens: usize,
    /// Tokens of words the model does not know (dropped).
    pub unknown_tokens: usize,
    /// True when no word of the document is known: the shares are then only
    /// the prior, and the document is not placed.
    pub no_known_words: bool,
    /// Mean of `(n_dk + alpha_k) / (n_d + a0)` over the kept fold-in samples.
    pub shares: Vec<f64>,
    /// `n_dk` of each kept fold-in sample.
    pub counts: Vec<Vec<u32>>,
}

impl Placement {
    /// The credible interval at `level` of topic `topic_idx`'s share: a
    /// mixture over the kept fold-in samples of the Beta marginals of
    /// Dirichlet(alpha + n_d).
    pub fn interval(&self, alpha: &[f64], topic_idx: usize, level: f64) -> Result<Interval, ScoreError> {
        let a0: f64 = alpha.iter().sum();
        let n = self.tokens as f64;
        let components: Vec<(f64, f64)> = self
            .counts
            .iter()
            .map(|counts| (f64::from(counts[topic_idx]) + alpha[topic_idx], n + a0))
            .collect();
        uncertainty::mixture_share_interval(&components, level).map_err(|source| ScoreError::Interval {
            document: self.document.clone(),
            source,
        })
    }
}

/// Folds a new document into the model with the topics fixed: its shares
/// and the fold-in samples behind them.
pub fn place(
    model: &Model,
    weights: &TopicWeights<'_>,
    doc: &EncodedDocument,
    fold_in: &FoldInSettings,
    rng: &mut Xoshiro256PlusPlus,
) -> Result<Placement, ScoreError> {
    let alpha = &model.priors.alpha;
    let folded = weights
        .with_document(&doc.tokens, |tokens, phi| {
            heldout::fold_in(tokens, phi, alpha, fold_in, rng)
        })
        .map_err(|source| ScoreError::Document {
            document: doc.id.clone(),
            source,
        })?;
    Ok(Placement {
        document: doc.id.clone(),
        tokens: doc.tokens.len(),
        unknown_tokens: doc.unknown_tokens,
        no_known_words: doc.tokens.is_empty(),
        shares: folded.mean_shares,
        counts: folded.counts,
    })
}

/// Which documents `fit --holdout fraction` keeps out: exactly
/// round(fraction * D) of them, chosen by a hash of (seed, document id), so
/// the choice depends on neither the input order nor the thread count.
pub fn holdout_mask(corpus: &Corpus, fraction: f64, seed: u64) -> Vec<bool> {
    let n_docs = corpus.n_docs();
    let held = ((fraction * n_docs as f64).round() as usize).min(n_docs.saturating_sub(1));
    let mut keyed: Vec<(u64, usize)> = corpus
        .documents
        .iter()
        .enumerate()
        .map(|(idx, info)| (fnv1a(seed, info.id.as_bytes()), idx))
        .collect();
    keyed.sort_unstable();
    let mut mask = vec![false; n_docs];
    for &(_, idx) in keyed.iter().take(held) {
        mask[idx] = true;
    }
    mask
}

/// Which documents a run under a run root keeps out: each document by
/// itself, by whether a hash of its id falls below `fraction` of the hash
/// range. Unlike [`holdout_mask`] a document's side never depends on the
/// other documents, so from one night to the next the held-out documents
/// stay held out (and out of the published model's training) while new
/// documents join either side at the same rate. At least one document is
/// kept for training.
pub fn stable_holdout_mask(corpus: &Corpus, fraction: f64) -> Vec<bool> {
    let cut = (fraction.clamp(0.0, 1.0) * u64::MAX as f64) as u64;
    let mut mask: Vec<bool> = corpus
        .documents
        .iter()
        // FNV-1a's high bits are poorly mixed for short, similar ids; the
        // SplitMix64 finaliser spreads them over the whole range.
        .map(|info| splitmix64(fnv1a(STABLE_SPLIT_SEED, info.id.as_bytes())) < cut)
        .collect();
    if mask.iter().all(|&held| held)
        && let Some(first) = mask.first_mut()
    {
        *first = false;
    }
    mask
}

/// The fixed seed of [`stable_holdout_mask`]'s hash (not the fit's seed, so
/// that changing the seed does not move documents between the sides).
const STABLE_SPLIT_SEED: u64 = 0x0005_EED0_FA11;

/// FNV-1a over the seed's bytes and then `bytes` (common practice: a small,
/// stable, well-spread hash).
fn fnv1a(seed: u64, bytes: &[u8]) -> u64 {
    let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
    for &byte in seed.to_le_bytes().iter().chain(bytes) {
        hash ^= u64::from(byte);
        hash = hash.wrapping_mul(0x0000_0100_0000_01b3);
    }
    hash
}

/// Splits a corpus by a mask into (kept, held out); both keep the full vocabulary.
pub fn split_corpus(corpus: &Corpus, held_out: &[bool]) -> (Corpus, Corpus) {
    let part = |want: bool| {
        let mut out = Corpus {
            tokenizer: corpus.tokenizer.clone(),
            vocabulary: corpus.vocabulary.clone(),
            documents: Vec::new(),
            offsets: vec![0],
            tokens: Vec::new(),
        };
        for (doc_idx, &held) in held_out.iter().enumerate() {
            if held == want {
                out.tokens.extend_from_slice(corpus.doc_tokens(doc_idx));
                out.offsets.push(out.tokens.len() as u64);
                out.documents.push(corpus.documents[doc_idx].clone());
            }
        }
        out
    };
    (part(false), part(true))
}

/// Coherence and diagnostics of one topic, as reported by `themata score`.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TopicQuality {
    /// The topic's id (its index outside a run root).
    pub topic: u32,
    /// The editors' name of the topic, when the model belongs to a run root
    /// whose names file names it (filled in by the caller).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    pub top_words: Vec<String>,
    pub umass: f64,
    pub npmi: f64,
    pub cv: f64,
    pub token_share: f64,
    pub document_prevalence: f64,
    pub effective_words: f64,
    pub distinctiveness: f64,
    pub exclusivity: f64,
}

/// Coherence means and the per-topic rows.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CoherenceReport {
    pub umass: f64,
    pub npmi: f64,
    pub cv: f64,
    /// How the probabilities were counted.
    pub reference: String,
    pub npmi_window: usize,
    pub cv_window: usize,
    pub top_words: usize,
    pub per_topic: Vec<TopicQuality>,
}

/// The `top_n` heaviest word ids of each topic.
pub fn top_word_ids(model: &Model, top_n: usize) -> Vec<Vec<u32>> {
    (0..model.n_topics())
        .map(|topic_idx| {
            let row = model.topic_word_row(topic_idx);
            let mut order: Vec<u32> = (0..row.len() as u32).collect();
            order.sort_by(|&a, &b| row[b as usize].total_cmp(&row[a as usize]).then(a.cmp(&b)));
            order.truncate(top_n.min(row.len()));
            order
        })
        .collect()
}

/// Scores coherence of the model's topics against `reference` documents
/// (word ids in the model's vocabulary) and computes per-topic diagnostics.
/// Topic rows and document shares are produced one at a time, never as
/// whole K x V or D x K matrices.
pub fn coherence_report<D: AsRef<[u32]> + Sync>(
    model: &Model,
    reference: &[D],
    reference_name: &str,
    settings: &CoherenceSettings,
    top_n: usize,
) -> Result<CoherenceReport, ScoreError> {
    let top = top_word_ids(model, top_n);
    let scores = coherence::score_topics(&top, reference, settings)?;
    let means = coherence::mean_coherence(&scores).ok_or(ScoreError::NoTopics)?;
    // The training tokens' word distribution, smoothed by beta as phi is, so
    // that a word with no training token keeps the divergence finite.
    let mut corpus_freq: Vec<f64> = (0..model.state.n_words)
        .map(|w| model.priors.beta_of(w))
        .collect();
    for &word in &model.corpus.tokens {
        corpus_freq[word as usize] += 1.0;
    }
    let topic_rows = TopicRows {
        n_topics: model.n_topics(),
        row: &|topic| model.topic_word_row(topic),
    };
    let diagnostics = diagnostics::diagnose_topics(
        &topic_rows,
        &model.state.topic_totals,
        (0..model.corpus.n_docs()).map(|d| model.doc_topic_shares(d)),
        &corpus_freq,
        top_n,
    )?;
    let per_topic = scores
        .iter()
        .zip(&diagnostics)
        .map(|(score, diag)| TopicQuality {
            topic: model.topic_ids[score.topic],
            name: None,
            top_words: top[score.topic]
                .iter()
                .map(|&w| model.corpus.vocabulary.display(w).to_string())
                .collect(),
            umass: score.umass,
            npmi: score.npmi,
            cv: score.cv,
            token_share: diag.token_share,
            document_prevalence: diag.document_prevalence,
            effective_words: diag.effective_words,
            distinctiveness: diag.distinctiveness,
            exclusivity: diag.exclusivity,
        })
        .collect();
    Ok(CoherenceReport {
        umass: means.umass,
        npmi: means.npmi,
        cv: means.cv,
        reference: format!(
            "{reference_name}: UMass from whole-document co-occurrence; NPMI and C_V from boolean sliding windows (a document shorter than the window is one window)"
        ),
        npmi_window: settings.npmi_window,
        cv_window: settings.cv_window,
        top_words: top_n,
        per_topic,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fitting::fit::{FitSettings, fit};
    use crate::testbed::synthetic;

    #[test]
    fn columns_per_document_give_the_dense_table_results_bit_for_bit() {
        // Source: common practice — the same terms added in the same order
        // give the same floating-point result, so the memory-saving path must
        // reproduce the dense table exactly.
        let data = synthetic::two_topics(3);
        let settings = FitSettings {
            samples: 3,
            lag: 2,
            ..FitSettings::fixed(2, 40, 0.5, 0.1, 7)
        };
        let (model, _) = fit(data.corpus.clone(), &settings, &mut |_| {}).unwrap();
        let documents = corpus_documents(&data.corpus);
        let dense = TopicWeights::with_table_limit(&model, usize::MAX);
        let columns = TopicWeights::with_table_limit(&model, 0);
        // Room for the three most frequent words only: documents mix both paths.
        let mixed = TopicWeights::with_table_limit(&model, 3 * 2 * 8);
        assert_eq!(dense.n_hot, model.state.n_words);
        assert_eq!((columns.n_hot, mixed.n_hot), (0, 3));
        let score_with = |weights: &TopicWeights<'_>| -> Vec<(u64, Vec<u64>)> {
            documents
                .iter()
                .enumerate()
                .map(|(idx, doc)| {
                    let placed = place(
                        &model,
                        weights,
                        doc,
                        &FoldInSettings::default(),
                        &mut document_rng(5, idx),
                    )
                    .unwrap();
                    let low: Vec<f64> = (0..model.n_topics())
                        .map(|topic| placed.interval(&model.priors.alpha, topic, 0.9).unwrap().low)
                        .collect();
                    let completion = weights
                        .with_document(&doc.tokens, |tokens, phi| {
                            heldout::completion_log_likelihood(
                                tokens,
                                phi,
                                &model.priors.alpha,
                                &FoldInSettings::default(),
                                &mut document_rng(6, idx),
                            )
                        })
                        .unwrap();
                    (
                        completion.log_likelihood.to_bits(),
                        placed.shares.iter().chain(&low).map(|v| v.to_bits()).collect(),
                    )
                })
                .collect()
        };
        assert_eq!(score_with(&dense), score_with(&columns));
        assert_eq!(score_with(&dense), score_with(&mixed));
        // Columns looked up topic by topic (no word indexed) agree too.
        let looked_up = model.topic_word_columns(model.state.n_words);
        let mut column = Vec::new();
        for word in 0..model.state.n_words {
            looked_up.fill(word, &mut column);
            for (topic, value) in column.iter().enumerate() {
                assert_eq!(value.to_bits(), model.topic_word_row(topic)[word].to_bits());
            }
        }
    }

    #[test]
    fn a_stable_split_keeps_each_document_on_its_side_whatever_the_others() {
        // Source: common practice (hash-based splits are stable under
        // additions); the share held out is binomial, so with 2,000
        // documents and F = 0.1 it lies within 0.1 +- 0.03 (more than four
        // standard deviations of sqrt(0.1 * 0.9 / 2000) = 0.0067).
        let vocabulary = crate::ingest::vocab::Vocabulary::from_parts(vec!["w".into()], vec![1], vec![1]);
        let corpus_of = |n: usize| {
            let mut corpus = Corpus::from_documents(vocabulary.clone(), vec![vec![0]; n]);
            for (idx, doc) in corpus.documents.iter_mut().enumerate() {
                doc.id = format!("d{idx:04}");
            }
            corpus
        };
        let small = stable_holdout_mask(&corpus_of(1800), 0.1);
        let large = stable_holdout_mask(&corpus_of(2000), 0.1);
        assert_eq!(small[..], large[..1800]);
        let share = large.iter().filter(|&&held| held).count() as f64 / 2000.0;
        assert!((share - 0.1).abs() < 0.03, "{share}");
    }
}
