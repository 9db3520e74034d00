//! Per-topic diagnostics: the summary numbers people ask for about each
//! topic (its share of the tokens, how many documents it leads, how many
//! words it effectively uses, how far it is from the corpus word
//! distribution and how exclusive its top words are). Like coherence it
//! works on plain data only: rows of probabilities or counts, so it knows
//! nothing of the vocabulary, the sampler or the saved model.

use serde::{Deserialize, Serialize};
use thiserror::Error;

/// What is wrong with the inputs of [`topic_diagnostics`]. Each message says
/// what was wrong and what to do.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DiagnosticsError {
    /// Two inputs disagree on a dimension.
    #[error(
        "{what} has {found} entries where {expected} were expected; pass matrices from the same model \
         (K topics, V vocabulary words)"
    )]
    ShapeMismatch {
        /// Which input, and which row of it, is the wrong size.
        what: String,
        /// The size it should have.
        expected: usize,
        /// The size it has.
        found: usize,
    },
    /// A probability or count is negative or not a finite number.
    #[error(
        "{what}, row {row}, column {column} holds {value}; probabilities and counts must be finite and \
         at least 0"
    )]
    InvalidValue {
        /// Which input holds the value.
        what: &'static str,
        /// Row of the value.
        row: usize,
        /// Column of the value.
        column: usize,
        /// The value itself.
        value: f64,
    },
    /// A distribution that must have some mass sums to zero.
    #[error(
        "{what}, row {row} sums to 0, so it is not a distribution; every topic must hold some probability"
    )]
    EmptyDistribution {
        /// Which input holds the row.
        what: &'static str,
        /// The row that sums to zero.
        row: usize,
    },
    /// The topic token counts sum to zero.
    #[error("the topic token counts sum to 0; pass the counts of a model that has been fitted to tokens")]
    NoTokens,
    /// No document has any topic share.
    #[error(
        "none of the {documents} document row(s) holds a topic share above 0; pass the document-topic \
         shares or counts of the fitted documents"
    )]
    NoDocumentShares {
        /// How many document rows were given.
        documents: usize,
    },
    /// A word the topic uses never occurs in the corpus distribution.
    #[error(
        "word {word} has probability above 0 in topic {topic} but frequency 0 in the corpus word \
         distribution, so the divergence is infinite; pass corpus frequencies over the same vocabulary"
    )]
    CorpusFrequencyZero {
        /// The topic that uses the word.
        topic: usize,
        /// The word id.
        word: usize,
    },
    /// Exclusivity needs at least one top word per topic.
    #[error("top_n is 0; exclusivity is a mean over each topic's top words, so ask for at least 1")]
    ZeroTopWords,
}

/// Summary numbers of one topic, from [`topic_diagnostics`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TopicDiagnostics {
    /// Index of the topic.
    pub topic: usize,
    /// n_k / N: the topic's share of all assigned tokens.
    pub token_share: f64,
    /// Share of documents in which this topic has the largest share (a tie
    /// between t topics credits each with 1/t of the document).
    pub document_prevalence: f64,
    /// exp(entropy of phi_k), natural log: how many equally likely words
    /// would be as spread out; n for a topic uniform over n words.
    pub effective_words: f64,
    /// Kullback-Leibler divergence KL(phi_k || corpus word distribution), in
    /// nats: 0 for a topic that just repeats the corpus frequencies.
    pub distinctiveness: f64,
    /// Mean over the topic's top words w of phi_kw / sum_j phi_jw: 1 when no
    /// other topic uses them.
    pub exclusivity: f64,
}

/// Checks that `row` has `columns` finite, non-negative entries.
fn check_row(
    row: &[f64],
    what: &'static str,
    row_index: usize,
    columns: usize,
) -> Result<(), DiagnosticsError> {
    if row.len() != columns {
        return Err(DiagnosticsError::ShapeMismatch {
            what: format!("{what}, row {row_index}"),
            expected: columns,
            found: row.len(),
        });
    }
    match row
        .iter()
        .enumerate()
        .find(|(_, value)| !value.is_finite() || **value < 0.0)
    {
        Some((column, &value)) => Err(DiagnosticsError::InvalidValue {
            what,
            row: row_index,
            column,
            value,
        }),
        None => Ok(()),
    }
}

/// Checks `row` and divides it by its sum, which must be above 0.
fn distribution(
    row: &[f64],
    what: &'static str,
    row_index: usize,
    columns: usize,
) -> Result<Vec<f64>, DiagnosticsError> {
    check_row(row, what, row_index, columns)?;
    let total: f64 = row.iter().sum();
    if total <= 0.0 {
        return Err(DiagnosticsError::EmptyDistribution { what, row: row_index });
    }
    Ok(row.iter().map(|value| value / total).collect())
}

/// Per-topic diagnostics from plain matrices of a fitted model with K topics
/// over V words:
///
/// - `topic_word`: K rows of V entries, phi (or the counts n_kw; each row is
///   divided by its sum);
/// - `topic_token_counts`: n_k, tokens assigned to each topic;
/// - `document_topic`: one row of K entries per document, theta or the counts
///   n_dk (rows summing to 0, such as empty documents given as counts, are
///   left out of the prevalence);
/// - `corpus_word_frequencies`: V entries, the corpus word distribution or
///   the word counts (divided by their sum);
/// - `top_n`: how many top words (highest phi_kw, ties by lower word id, only
///   words with phi_kw > 0) the exclusivity averages over.
///
/// Sources of each number: token share and document prevalence are common
/// practice; effective number of words is the exponential of Shannon entropy
/// (Hill's diversity number of order 1, Hill 1973, from memory);
/// distinctiveness follows AlSumait, Barbará, Gentle & Domeniconi 2009
/// (topic significance as distance from the corpus-wide word distribution,
/// from memory) with the Kullback-Leibler divergence; exclusivity is a word's
/// rate in a topic over its summed rate across topics as in Bischof & Airoldi
/// 2012 and Roberts, Stewart & Airoldi 2016 (from memory).
pub fn topic_diagnostics(
    topic_word: &[Vec<f64>],
    topic_token_counts: &[u64],
    document_topic: &[Vec<f64>],
    corpus_word_frequencies: &[f64],
    top_n: usize,
) -> Result<Vec<TopicDiagnostics>, DiagnosticsError> {
    diagnose_topics(
        &TopicRows {
            n_topics: topic_word.len(),
            row: &|topic| topic_word[topic].clone(),
        },
        topic_token_counts,
        document_topic.iter().map(|row| row.as_slice()),
        corpus_word_frequencies,
        top_n,
    )
}

/// The K topic rows of a model, produced one at a time on demand, so that a
/// large model never holds a dense K x V matrix.
pub struct TopicRows<'a> {
    /// K, the number of rows.
    pub n_topics: usize,
    /// Row `k`: V entries, phi_k or the counts n_kw (divided by its sum).
    pub row: &'a dyn Fn(usize) -> Vec<f64>,
}

/// [`topic_diagnostics`] with the topic rows produced on demand (each is
/// asked for twice) and the document rows streamed once, so memory stays
/// at a few rows whatever K, V and D are. The results are the same, bit
/// for bit, as from the whole matrices.
pub fn diagnose_topics<R: AsRef<[f64]>>(
    topic_rows: &TopicRows<'_>,
    topic_token_counts: &[u64],
    document_topic: impl IntoIterator<Item = R>,
    corpus_word_frequencies: &[f64],
    top_n: usize,
) -> Result<Vec<TopicDiagnostics>, DiagnosticsError> {
    let topics = topic_rows.n_topics;
    let words = corpus_word_frequencies.len();
    if topic_token_counts.len() != topics {
        return Err(DiagnosticsError::ShapeMismatch {
            what: "topic token counts".to_string(),
            expected: topics,
            found: topic_token_counts.len(),
        });
    }
    if topics == 0 {
        return Ok(Vec::new());
    }
    if top_n == 0 {
        return Err(DiagnosticsError::ZeroTopWords);
    }
    let phi_row = |topic: usize| distribution(&(topic_rows.row)(topic), "topic-word matrix", topic, words);
    let mut word_totals = vec![0.0; words];
    for topic in 0..topics {
        for (total, value) in word_totals.iter_mut().zip(&phi_row(topic)?) {
            *total += value;
        }
    }
    let corpus = distribution(corpus_word_frequencies, "corpus word frequencies", 0, words)?;
    let total_tokens: u64 = topic_token_counts.iter().sum();
    if total_tokens == 0 {
        return Err(DiagnosticsError::NoTokens);
    }

    let mut leading_credit = vec![0.0; topics];
    let mut counted_documents = 0usize;
    let mut documents = 0usize;
    for (row_index, counts) in document_topic.into_iter().enumerate() {
        let counts = counts.as_ref();
        documents += 1;
        check_row(counts, "document-topic matrix", row_index, topics)?;
        let largest = counts.iter().copied().fold(0.0, f64::max);
        if largest <= 0.0 {
            continue;
        }
        counted_documents += 1;
        let tied = counts.iter().filter(|&&value| value == largest).count();
        for (credit, &value) in leading_credit.iter_mut().zip(counts) {
            if value == largest {
                *credit += 1.0 / tied as f64;
            }
        }
    }
    if counted_documents == 0 {
        return Err(DiagnosticsError::NoDocumentShares { documents });
    }

    let mut diagnostics = Vec::with_capacity(topics);
    for topic in 0..topics {
        let row = phi_row(topic)?;
        let mut entropy = 0.0;
        let mut divergence = 0.0;
        for (word, (&probability, &corpus_probability)) in row.iter().zip(&corpus).enumerate() {
            if probability > 0.0 {
                if corpus_probability == 0.0 {
                    return Err(DiagnosticsError::CorpusFrequencyZero { topic, word });
                }
                entropy -= probability * probability.ln();
                divergence += probability * (probability / corpus_probability).ln();
            }
        }
        let mut ranked: Vec<usize> = (0..words).filter(|&word| row[word] > 0.0).collect();
        ranked.sort_by(|&left, &right| row[right].total_cmp(&row[left]).then(left.cmp(&right)));
        ranked.truncate(top_n);
        let exclusivity = ranked
            .iter()
            .map(|&word| row[word] / word_totals[word])
            .sum::<f64>()
            / ranked.len() as f64;
        diagnostics.push(TopicDiagnostics {
            topic,
            token_share: topic_token_counts[topic] as f64 / total_tokens as f64,
            document_prevalence: leading_credit[topic] / counted_documents as f64,
            effective_words: entropy.exp(),
            distinctiveness: divergence.max(0.0),
            exclusivity,
        });
    }
    Ok(diagnostics)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn assert_close(actual: f64, expected: f64, tolerance: f64) {
        assert!(
            (actual - expected).abs() <= tolerance,
            "expected {expected}, got {actual} (tolerance {tolerance})"
        );
    }

    #[test]
    fn effective_words_of_a_uniform_topic_is_its_support_size() {
        // Source: Shannon entropy of a uniform distribution over n outcomes is ln n (Shannon 1948),
        // so exp(entropy) = n.
        for support in [1usize, 2, 5, 8] {
            let row: Vec<f64> = (0..8)
                .map(|word| if word < support { 1.0 / support as f64 } else { 0.0 })
                .collect();
            let corpus = vec![1.0; 8];
            let result = topic_diagnostics(&[row], &[10], &[vec![1.0]], &corpus, 3).unwrap();
            assert_close(result[0].effective_words, support as f64, 1e-12);
        }
    }

    #[test]
    fn corpus_distribution_has_no_divergence_from_itself() {
        // Source: Gibbs' inequality: KL(p || q) >= 0 with equality only when p = q (Kullback &
        // Leibler 1951).
        let corpus = vec![5.0, 3.0, 1.0, 1.0];
        let as_probabilities: Vec<f64> = corpus.iter().map(|count| count / 10.0).collect();
        let other = vec![0.1, 0.2, 0.3, 0.4];
        let result =
            topic_diagnostics(&[as_probabilities, other], &[4, 6], &[vec![1.0, 0.0]], &corpus, 2).unwrap();
        assert_close(result[0].distinctiveness, 0.0, 1e-12);
        // Worked by hand: sum of p ln(p/q) with q = (0.5, 0.3, 0.1, 0.1).
        let expected = 0.1 * (0.1f64 / 0.5).ln()
            + 0.2 * (0.2f64 / 0.3).ln()
            + 0.3 * (0.3f64 / 0.1).ln()
            + 0.4 * (0.4f64 / 0.1).ln();
        assert_close(result[1].distinctiveness, expected, 1e-12);
        assert!(result[1].distinctiveness > 0.0);
    }

    #[test]
    fn exclusivity_is_one_for_words_only_one_topic_uses() {
        // Source: Bischof & Airoldi 2012 (from memory): exclusivity of w in k is phi_kw / sum_j phi_jw,
        // which is 1 when phi_jw = 0 for every other topic j.
        let phi = vec![vec![0.6, 0.4, 0.0, 0.0], vec![0.0, 0.0, 0.7, 0.3]];
        let corpus = vec![1.0, 1.0, 1.0, 1.0];
        let result = topic_diagnostics(&phi, &[5, 5], &[vec![1.0, 0.0]], &corpus, 2).unwrap();
        assert_close(result[0].exclusivity, 1.0, 1e-12);
        assert_close(result[1].exclusivity, 1.0, 1e-12);
    }

    #[test]
    fn diagnostics_of_a_hand_worked_model() {
        // Source: the definitions documented on TopicDiagnostics (common practice for token share
        // and prevalence; exp-entropy, KL and exclusivity as cited there), worked by hand:
        // phi_0 = (1/2, 1/2, 0), phi_1 = (0, 1/2, 1/2); corpus (1,2,1)/4; n = (30, 10).
        //   token share 30/40 = 0.75 and 0.25;
        //   leading topic of documents (0.9,0.1), (0.2,0.8), (0.5,0.5), (0.6,0.4): 0, 1, tie, 0, so
        //   prevalence (2 + 1/2)/4 = 0.625 and (1 + 1/2)/4 = 0.375;
        //   effective words exp(ln 2) = 2 for both;
        //   distinctiveness 1/2 ln((1/2)/(1/4)) + 1/2 ln((1/2)/(1/2)) = (ln 2)/2 for both;
        //   exclusivity with top_n = 2: topic 0's top words are 0 and 1 (tie broken by lower id):
        //   (1/2)/(1/2) = 1 and (1/2)/1 = 1/2, mean 0.75; topic 1: words 1 and 2, also 0.75.
        let phi = vec![vec![1.0, 1.0, 0.0], vec![0.0, 3.0, 3.0]];
        let documents = vec![
            vec![0.9, 0.1],
            vec![2.0, 8.0],
            vec![0.5, 0.5],
            vec![0.6, 0.4],
            vec![0.0, 0.0],
        ];
        let corpus = vec![1.0, 2.0, 1.0];
        let result = topic_diagnostics(&phi, &[30, 10], &documents, &corpus, 2).unwrap();
        let expected = [(0.75, 0.625), (0.25, 0.375)];
        for (topic, (share, prevalence)) in expected.into_iter().enumerate() {
            assert_eq!(result[topic].topic, topic);
            assert_close(result[topic].token_share, share, 1e-12);
            assert_close(result[topic].document_prevalence, prevalence, 1e-12);
            assert_close(result[topic].effective_words, 2.0, 1e-12);
            assert_close(result[topic].distinctiveness, 2.0f64.ln() / 2.0, 1e-12);
            assert_close(result[topic].exclusivity, 0.75, 1e-12);
        }
        // With top_n = 1 only topic 0's word 0 (fully exclusive) and topic 1's word 1 count.
        let single = topic_diagnostics(&phi, &[30, 10], &documents, &corpus, 1).unwrap();
        assert_close(single[0].exclusivity, 1.0, 1e-12);
        assert_close(single[1].exclusivity, 0.5, 1e-12);
        assert_eq!(topic_diagnostics(&[], &[], &[], &corpus, 2).unwrap(), Vec::new());
    }

    #[test]
    fn bad_diagnostics_inputs_are_refused() {
        // Source: common practice: the formulas need matching K x V shapes and proper distributions.
        let phi = vec![vec![0.5, 0.5], vec![0.2, 0.8]];
        let documents = vec![vec![1.0, 0.0]];
        let corpus = vec![1.0, 1.0];
        assert!(matches!(
            topic_diagnostics(&phi, &[1], &documents, &corpus, 1).unwrap_err(),
            DiagnosticsError::ShapeMismatch {
                expected: 2,
                found: 1,
                ..
            }
        ));
        assert!(matches!(
            topic_diagnostics(&phi, &[1, 1], &documents, &[1.0, 1.0, 1.0], 1).unwrap_err(),
            DiagnosticsError::ShapeMismatch {
                expected: 3,
                found: 2,
                ..
            }
        ));
        assert!(matches!(
            topic_diagnostics(&phi, &[1, 1], &[vec![1.0]], &corpus, 1).unwrap_err(),
            DiagnosticsError::ShapeMismatch {
                expected: 2,
                found: 1,
                ..
            }
        ));
        assert_eq!(
            topic_diagnostics(
                &[vec![0.5, -0.5], vec![0.2, 0.8]],
                &[1, 1],
                &documents,
                &corpus,
                1
            )
            .unwrap_err(),
            DiagnosticsError::InvalidValue {
                what: "topic-word matrix",
                row: 0,
                column: 1,
                value: -0.5
            }
        );
        assert_eq!(
            topic_diagnostics(&[vec![0.0, 0.0], vec![0.2, 0.8]], &[1, 1], &documents, &corpus, 1)
                .unwrap_err(),
            DiagnosticsError::EmptyDistribution {
                what: "topic-word matrix",
                row: 0
            }
        );
        assert_eq!(
            topic_diagnostics(&phi, &[0, 0], &documents, &corpus, 1).unwrap_err(),
            DiagnosticsError::NoTokens
        );
        assert_eq!(
            topic_diagnostics(&phi, &[1, 1], &[vec![0.0, 0.0]], &corpus, 1).unwrap_err(),
            DiagnosticsError::NoDocumentShares { documents: 1 }
        );
        assert_eq!(
            topic_diagnostics(&phi, &[1, 1], &documents, &[1.0, 0.0], 1).unwrap_err(),
            DiagnosticsError::CorpusFrequencyZero { topic: 0, word: 1 }
        );
        assert_eq!(
            topic_diagnostics(&phi, &[1, 1], &documents, &corpus, 0).unwrap_err(),
            DiagnosticsError::ZeroTopWords
        );
    }
}
