//! Warm starts: tonight's fit initialised from a previous model instead of
//! at random. A document whose id and tokens are unchanged keeps the topics
//! its tokens had; every other document's tokens are drawn once, in order,
//! from `p(k) ∝ phi_kw (n_dk + alpha_k)` against the previous topics (a
//! single fold-in pass, the topics held fixed), where a word the previous
//! vocabulary lacks weighs `n_dk + alpha_k` alone. Learned priors start from
//! the previous model's values. New words start with no counts of their
//! own; the counts are rebuilt from the assignments.

use std::collections::HashMap;

use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

use super::fit::{self, FitError, FitSettings, PriorSpec};
use super::sampler::{BetaPrior, CountState, Topic};
use crate::evaluate::score::TopicWeights;
use crate::ingest::corpus::Corpus;
use crate::model::Model;

/// What a warm start kept and what it drew afresh.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct WarmStart {
    /// Documents whose assignments were carried over unchanged.
    pub kept_documents: usize,
    /// Documents drawn by a fold-in pass against the previous topics.
    pub folded_documents: usize,
    /// Tokens of words the previous model did not know.
    pub new_word_tokens: usize,
}

/// Starts a model of `corpus` from `previous` (see the module notes); the
/// rest of the run is as `fit::start` would have it.
pub fn start_warm(
    corpus: Corpus,
    settings: &FitSettings,
    previous: &Model,
) -> Result<(Model, WarmStart), FitError> {
    if settings.n_topics != previous.n_topics() {
        return Err(FitError::WarmTopics {
            previous: previous.n_topics(),
            asked: settings.n_topics,
        });
    }
    let (mut priors, schedule) = fit::resolve(&corpus, settings)?;
    if settings.alpha == PriorSpec::Learn {
        priors.alpha = previous.priors.alpha.clone();
    }
    if settings.beta == PriorSpec::Learn
        && let BetaPrior::Symmetric(value) = previous.priors.beta
    {
        priors.beta = BetaPrior::Symmetric(value);
    }
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(settings.seed);
    let previous_docs: HashMap<&str, usize> = previous
        .corpus
        .documents
        .iter()
        .enumerate()
        .map(|(idx, doc)| (doc.id.as_str(), idx))
        .collect();
    let to_previous: Vec<Option<u32>> = corpus
        .vocabulary
        .words()
        .iter()
        .map(|word| previous.corpus.vocabulary.id(word))
        .collect();
    let weights = TopicWeights::of(previous);
    let n_topics = settings.n_topics;
    let mut stats = WarmStart::default();
    let mut assignments: Vec<Topic> = Vec::with_capacity(corpus.n_tokens());
    let mut counts = vec![0u32; n_topics];
    let mut cumulative = vec![0.0; n_topics];
    for doc_idx in 0..corpus.n_docs() {
        let tokens = corpus.doc_tokens(doc_idx);
        let unchanged = previous_docs
            .get(corpus.documents[doc_idx].id.as_str())
            .map(|&old| (old, previous.corpus.doc_tokens(old)))
            .filter(|(_, old_tokens)| {
                old_tokens.len() == tokens.len()
                    && tokens
                        .iter()
                        .zip(*old_tokens)
                        .all(|(&word, &old_word)| to_previous[word as usize] == Some(old_word))
            });
        if let Some((old, _)) = unchanged {
            let start = previous.corpus.offsets[old] as usize;
            assignments.extend_from_slice(&previous.state.assignments[start..start + tokens.len()]);
            stats.kept_documents += 1;
            continue;
        }
        stats.folded_documents += 1;
        counts.fill(0);
        // Words the previous model knows, as previous ids (0 stands in for
        // the others and is never read for them).
        let known: Vec<u32> = tokens
            .iter()
            .map(|&word| to_previous[word as usize].unwrap_or(0))
            .collect();
        weights.with_document(&known, |local, phi| {
            for (position, &word) in tokens.iter().enumerate() {
                let known_word = to_previous[word as usize].is_some();
                stats.new_word_tokens += usize::from(!known_word);
                let mut running = 0.0;
                for (topic, slot) in cumulative.iter_mut().enumerate() {
                    let prior = f64::from(counts[topic]) + priors.alpha[topic];
                    running += if known_word {
                        phi[local[position] as usize * n_topics + topic] * prior
                    } else {
                        prior
                    };
                    *slot = running;
                }
                let target = rng.random::<f64>() * running;
                let topic = cumulative
                    .partition_point(|&edge| edge <= target)
                    .min(n_topics - 1);
                counts[topic] += 1;
                assignments.push(topic as Topic);
            }
        });
    }
    let state = CountState::from_assignments(&corpus, n_topics, assignments);
    Ok((
        fit::start_from_state(corpus, settings, priors, schedule, state, rng),
        stats,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fitting::fit::fit;
    use crate::testbed::synthetic;

    #[test]
    fn unchanged_documents_keep_their_topics_and_new_ones_are_drawn() {
        // Source: common practice — a warm start must reproduce the previous
        // state where nothing changed; the rest is checked for shape only
        // (the draw itself is the fold-in conditional of METHODS.md 3).
        let data = synthetic::two_topics(1);
        let settings = FitSettings::fixed(2, 40, 0.5, 0.1, 9);
        let (previous, _) = fit(data.corpus.clone(), &settings, &mut |_| {}).unwrap();
        // Tonight: the same documents plus one whose text changed.
        let mut corpus = data.corpus.clone();
        let last = corpus.n_docs() - 1;
        let end = corpus.offsets[last + 1] as usize;
        corpus.tokens.swap(end - 1, end - 2);
        if corpus.tokens[end - 1] == corpus.tokens[end - 2] {
            corpus.tokens[end - 1] = (corpus.tokens[end - 1] + 1) % corpus.vocabulary.len() as u32;
        }
        let (model, stats) = start_warm(corpus.clone(), &settings, &previous).unwrap();
        assert_eq!(stats.kept_documents, corpus.n_docs() - 1);
        assert_eq!(stats.folded_documents, 1);
        let kept_end = corpus.offsets[last] as usize;
        assert_eq!(
            model.state.assignments[..kept_end],
            previous.state.assignments[..kept_end]
        );
        assert_eq!(model.state.assignments.len(), corpus.n_tokens());
        // Same inputs and seed, same start.
        let (again, _) = start_warm(corpus, &settings, &previous).unwrap();
        assert_eq!(again.state, model.state);
    }

    #[test]
    fn a_different_number_of_topics_is_refused() {
        let data = synthetic::two_topics(1);
        let (previous, _) = fit(
            data.corpus.clone(),
            &FitSettings::fixed(2, 10, 0.5, 0.1, 9),
            &mut |_| {},
        )
        .unwrap();
        let err = start_warm(data.corpus, &FitSettings::fixed(3, 10, 0.5, 0.1, 9), &previous).unwrap_err();
        assert!(err.to_string().contains("2 topics"), "{err}");
    }
}
