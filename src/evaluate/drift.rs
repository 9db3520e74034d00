//! How the topics of one model relate to those of another: the
//! Jensen-Shannon distance of every pair of topic-word distributions over the
//! union of the two vocabularies, the minimum-cost matching of the new
//! topics to the old (Hungarian method, METHODS.md section 5), and per topic
//! the prevalence before and after and the top words gained and lost.
//!
//! Distances are exact but computed sparsely: a topic's word distribution
//! `phi_kw = (n_kw + beta) / (n_k + b0)` (averaged over samples) takes one
//! value, its floor, on every word of its vocabulary that none of its
//! samples counted, so a pair costs a pass over the two topics' counted
//! words plus three closed-form terms for the words outside them.

use rayon::prelude::*;
use serde::Serialize;

use super::compare::min_cost_matching;
use crate::fitting::sampler::BetaPrior;
use crate::ingest::vocab::Vocabulary;
use crate::model::Model;

/// Below this Jensen-Shannon distance a matched topic counts as the same
/// topic as its predecessor (see the README: refitting the same documents
/// with another seed gives matched topics well below it, unrelated topics
/// lie well above it).
pub const DEFAULT_MATCH_THRESHOLD: f64 = 0.5;

/// Top words compared for the words a topic gained and lost.
pub const DRIFT_TOP_WORDS: usize = 10;

/// The words of two vocabularies numbered together: first the words both
/// have, then those only the first has, then those only the second has.
struct UnionWords {
    /// Union id of each word of the first vocabulary.
    first: Vec<u32>,
    /// Union id of each word of the second vocabulary.
    second: Vec<u32>,
    /// Words in both, only in the first, only in the second.
    n_both: usize,
    n_first_only: usize,
    n_second_only: usize,
}

impl UnionWords {
    fn of(first: &Vocabulary, second: &Vocabulary) -> UnionWords {
        let in_second: Vec<Option<u32>> = first.words().iter().map(|word| second.id(word)).collect();
        let n_both = in_second.iter().filter(|id| id.is_some()).count();
        let mut first_ids = vec![0u32; first.len()];
        let mut second_ids = vec![u32::MAX; second.len()];
        let (mut next_both, mut next_first) = (0u32, n_both as u32);
        for (word, other) in in_second.iter().enumerate() {
            match other {
                Some(other) => {
                    first_ids[word] = next_both;
                    second_ids[*other as usize] = next_both;
                    next_both += 1;
                }
                None => {
                    first_ids[word] = next_first;
                    next_first += 1;
                }
            }
        }
        for (next_second, id) in (next_first..).zip(second_ids.iter_mut().filter(|id| **id == u32::MAX)) {
            *id = next_second;
        }
        UnionWords {
            first: first_ids,
            second: second_ids,
            n_both,
            n_first_only: first.len() - n_both,
            n_second_only: second.len() - n_both,
        }
    }

    /// Which part of the union a union id is in: 0 both, 1 first only, 2 second only.
    fn part(&self, id: u32) -> usize {
        let id = id as usize;
        if id < self.n_both {
            0
        } else if id < self.n_both + self.n_first_only {
            1
        } else {
            2
        }
    }
}

/// One topic's word distribution, sparsely: the counted words (union ids,
/// increasing) with their probabilities, and the floor every other word of
/// its vocabulary has.
struct SparseTopic {
    support: Vec<(u32, f64)>,
    floor: f64,
}

/// The topics of `model` as sparse distributions over union ids. With a
/// per-word beta there is no single floor, so every word is in the support.
fn sparse_topics(model: &Model, union_ids: &[u32]) -> Vec<SparseTopic> {
    let dense_beta = matches!(model.priors.beta, BetaPrior::Asymmetric(_));
    (0..model.n_topics())
        .into_par_iter()
        .map(|topic| {
            let row = model.topic_word_row(topic);
            let mut support: Vec<(u32, f64)> = (0..row.len())
                .filter(|&word| dense_beta || model.topic_has_word(topic, word))
                .map(|word| (union_ids[word], row[word]))
                .collect();
            support.sort_unstable_by_key(|&(id, _)| id);
            let floor = (0..row.len())
                .find(|&word| !dense_beta && !model.topic_has_word(topic, word))
                .map_or(0.0, |word| row[word]);
            SparseTopic { support, floor }
        })
        .collect()
}

/// `p ln(2p / (p + q)) / 2 + q ln(2q / (p + q)) / 2`, the contribution of one
/// word to the Jensen-Shannon divergence (natural log).
fn divergence_term(p: f64, q: f64) -> f64 {
    let mid = 0.5 * (p + q);
    let mut term = 0.0;
    if p > 0.0 {
        term += 0.5 * p * (p / mid).ln();
    }
    if q > 0.0 {
        term += 0.5 * q * (q / mid).ln();
    }
    term
}

/// The Jensen-Shannon distance between topic `a` of the first model and
/// topic `b` of the second, over the union of their vocabularies.
fn sparse_distance(a: &SparseTopic, b: &SparseTopic, union: &UnionWords) -> f64 {
    // Words of the first vocabulary have p = floor of a unless counted;
    // words of the second, q = floor of b; words missing from a model have 0.
    let p_of = |id: u32| if union.part(id) == 2 { 0.0 } else { a.floor };
    let q_of = |id: u32| if union.part(id) == 1 { 0.0 } else { b.floor };
    let mut divergence = 0.0;
    let mut counted = [0usize; 3];
    let (mut i, mut j) = (0, 0);
    while i < a.support.len() || j < b.support.len() {
        let next_a = a.support.get(i).map_or(u32::MAX, |&(id, _)| id);
        let next_b = b.support.get(j).map_or(u32::MAX, |&(id, _)| id);
        let id = next_a.min(next_b);
        let p = if next_a == id {
            i += 1;
            a.support[i - 1].1
        } else {
            p_of(id)
        };
        let q = if next_b == id {
            j += 1;
            b.support[j - 1].1
        } else {
            q_of(id)
        };
        divergence += divergence_term(p, q);
        counted[union.part(id)] += 1;
    }
    divergence += (union.n_both - counted[0]) as f64 * divergence_term(a.floor, b.floor);
    divergence += (union.n_first_only - counted[1]) as f64 * divergence_term(a.floor, 0.0);
    divergence += (union.n_second_only - counted[2]) as f64 * divergence_term(0.0, b.floor);
    divergence.max(0.0).sqrt()
}

/// The Jensen-Shannon distance of every topic of `new` (rows) to every topic
/// of `old` (columns), over the union of the two vocabularies.
pub fn topic_distances(old: &Model, new: &Model) -> Vec<Vec<f64>> {
    let union = UnionWords::of(&new.corpus.vocabulary, &old.corpus.vocabulary);
    let new_topics = sparse_topics(new, &union.first);
    let old_topics = sparse_topics(old, &union.second);
    new_topics
        .par_iter()
        .map(|a| old_topics.iter().map(|b| sparse_distance(a, b, &union)).collect())
        .collect()
}

/// One topic of a model for distances within that model: the words any
/// sample counted (increasing) with their probabilities, the floor every
/// other word has, and `sum_w p_w ln p_w` over the whole vocabulary.
struct SupportedTopic {
    words: Vec<u32>,
    values: Vec<f64>,
    floor: f64,
    negative_entropy: f64,
}

fn x_ln_x(x: f64) -> f64 {
    if x > 0.0 { x * x.ln() } else { 0.0 }
}

fn supported_topic(model: &Model, topic: usize) -> SupportedTopic {
    let row = model.topic_word_row(topic);
    let n_words = row.len();
    let words: Vec<u32> = if matches!(model.priors.beta, BetaPrior::Asymmetric(_)) {
        (0..n_words as u32).collect()
    } else {
        let mut words: Vec<u32> = if model.samples.is_empty() {
            (0..n_words as u32)
                .filter(|&word| model.topic_has_word(topic, word as usize))
                .collect()
        } else {
            model
                .samples
                .iter()
                .flat_map(|sample| sample.topic_word[topic].iter().map(|&(word, _)| word))
                .collect()
        };
        words.sort_unstable();
        words.dedup();
        words
    };
    let values: Vec<f64> = words.iter().map(|&word| row[word as usize]).collect();
    // Every word outside the support has the same value; find one.
    let mut floor = 0.0;
    let mut next = 0usize;
    for &word in &words {
        if word as usize != next {
            break;
        }
        next += 1;
    }
    if next < n_words {
        floor = row[next];
    }
    let negative_entropy =
        values.iter().map(|&p| x_ln_x(p)).sum::<f64>() + (n_words - words.len()) as f64 * x_ln_x(floor);
    SupportedTopic {
        words,
        values,
        floor,
        negative_entropy,
    }
}

/// The Jensen-Shannon distance between every two topics of one model
/// (symmetric, zero diagonal), each pair once. As in [`topic_distances`],
/// only the words either topic counted are visited; the divergence is taken
/// as `H(M) - (H(P) + H(Q)) / 2` with the topics' entropies computed once,
/// so a pair costs one logarithm per visited word (with K = 200 topics of a
/// large corpus that is the difference between seconds and a fraction). The
/// difference of entropies loses about 1e-15 of their size to rounding, a
/// distance error below 1e-7.
pub fn distances_within(model: &Model) -> Vec<Vec<f64>> {
    let n_words = model.corpus.vocabulary.len();
    let topics: Vec<SupportedTopic> = (0..model.n_topics())
        .into_par_iter()
        .map(|topic| supported_topic(model, topic))
        .collect();
    let n_topics = topics.len();
    let pair = |a: &SupportedTopic, b: &SupportedTopic| -> f64 {
        let mut mixed = 0.0;
        let (mut i, mut j, mut visited) = (0, 0, 0usize);
        while i < a.words.len() || j < b.words.len() {
            let next_a = a.words.get(i).copied().unwrap_or(u32::MAX);
            let next_b = b.words.get(j).copied().unwrap_or(u32::MAX);
            let sum = if next_a == next_b {
                i += 1;
                j += 1;
                a.values[i - 1] + b.values[j - 1]
            } else if next_a < next_b {
                i += 1;
                a.values[i - 1] + b.floor
            } else {
                j += 1;
                a.floor + b.values[j - 1]
            };
            mixed += x_ln_x(0.5 * sum);
            visited += 1;
        }
        mixed += (n_words - visited) as f64 * x_ln_x(0.5 * (a.floor + b.floor));
        (0.5 * (a.negative_entropy + b.negative_entropy) - mixed)
            .max(0.0)
            .sqrt()
    };
    let upper: Vec<Vec<f64>> = (0..n_topics)
        .into_par_iter()
        .map(|a| (a + 1..n_topics).map(|b| pair(&topics[a], &topics[b])).collect())
        .collect();
    let mut distances = vec![vec![0.0; n_topics]; n_topics];
    for (a, row) in upper.iter().enumerate() {
        for (offset, &distance) in row.iter().enumerate() {
            distances[a][a + 1 + offset] = distance;
            distances[a + 1 + offset][a] = distance;
        }
    }
    distances
}

/// For each row of `costs`, the column it is matched to (each column at most
/// once) by minimum total cost; rows left over when there are more rows
/// than columns get `None`.
pub fn match_rows(costs: &[Vec<f64>]) -> Vec<Option<usize>> {
    let n_rows = costs.len();
    let n_columns = costs.first().map_or(0, Vec::len);
    if n_rows == 0 || n_columns == 0 {
        return vec![None; n_rows];
    }
    if n_rows <= n_columns {
        return min_cost_matching(costs).into_iter().map(Some).collect();
    }
    let transposed: Vec<Vec<f64>> = (0..n_columns)
        .map(|column| costs.iter().map(|row| row[column]).collect())
        .collect();
    let mut matched = vec![None; n_rows];
    for (column, row) in min_cost_matching(&transposed).into_iter().enumerate() {
        matched[row] = Some(column);
    }
    matched
}

/// How one topic of the new model relates to the old model.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TopicDrift {
    /// Index of the topic in the new model.
    pub index: usize,
    /// The old topic it was matched to, when the match counts (distance
    /// below the threshold).
    pub predecessor_index: Option<usize>,
    /// Distance to the old topic of its best assignment (also when above
    /// the threshold); `None` when every old topic went to another new one.
    pub distance: Option<f64>,
    /// Token share of the predecessor in the old model (`None` without one).
    pub prevalence_before: Option<f64>,
    /// Token share in the new model.
    pub prevalence_after: f64,
    /// The new topic's top words (shown forms).
    pub top_words: Vec<String>,
    /// Top words the predecessor did not have among its top words.
    pub words_gained: Vec<String>,
    /// The predecessor's top words the new topic no longer has among its own.
    pub words_lost: Vec<String>,
}

/// The drift of every new topic against the old model, and the old topics
/// left without a successor.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Drift {
    /// The threshold a match had to be below.
    pub threshold: f64,
    /// One entry per topic of the new model, by index.
    pub topics: Vec<TopicDrift>,
    /// Indices of old topics no new topic was matched to (below the threshold).
    pub unmatched_old: Vec<usize>,
}

impl Drift {
    /// Share of the new topics matched to a predecessor.
    pub fn matched_share(&self) -> f64 {
        if self.topics.is_empty() {
            return 0.0;
        }
        let matched = self
            .topics
            .iter()
            .filter(|t| t.predecessor_index.is_some())
            .count();
        matched as f64 / self.topics.len() as f64
    }
}

/// The `n` heaviest words of a topic, in their shown forms.
pub fn top_words(model: &Model, topic: usize, n: usize) -> Vec<String> {
    let row = model.topic_word_row(topic);
    let mut order: Vec<usize> = (0..row.len()).collect();
    order.sort_by(|&a, &b| row[b].total_cmp(&row[a]).then(a.cmp(&b)));
    order
        .into_iter()
        .take(n)
        .map(|word| model.corpus.vocabulary.display(word as u32).to_string())
        .collect()
}

/// Matches the topics of `new` to those of `old` and describes each new
/// topic's drift; a match counts when its distance is below `threshold`.
pub fn drift(old: &Model, new: &Model, threshold: f64) -> Drift {
    let distances = topic_distances(old, new);
    let assigned = match_rows(&distances);
    let old_shares = old.topic_token_shares();
    let new_shares = new.topic_token_shares();
    let old_top: Vec<Vec<String>> = (0..old.n_topics())
        .map(|topic| top_words(old, topic, DRIFT_TOP_WORDS))
        .collect();
    let mut successor = vec![false; old.n_topics()];
    let topics = assigned
        .iter()
        .enumerate()
        .map(|(index, &column)| {
            let distance = column.map(|column| distances[index][column]);
            let predecessor_index = column.filter(|&column| distances[index][column] < threshold);
            if let Some(old_index) = predecessor_index {
                successor[old_index] = true;
            }
            let top_words = top_words(new, index, DRIFT_TOP_WORDS);
            let before: &[String] = predecessor_index.map_or(&[], |old_index| &old_top[old_index]);
            TopicDrift {
                index,
                predecessor_index,
                distance,
                prevalence_before: predecessor_index.map(|old_index| old_shares[old_index]),
                prevalence_after: new_shares[index],
                words_gained: if predecessor_index.is_some() {
                    top_words
                        .iter()
                        .filter(|w| !before.contains(w))
                        .cloned()
                        .collect()
                } else {
                    Vec::new()
                },
                words_lost: before
                    .iter()
                    .filter(|w| !top_words.contains(w))
                    .cloned()
                    .collect(),
                top_words,
            }
        })
        .collect();
    Drift {
        threshold,
        topics,
        unmatched_old: (0..old.n_topics())
            .filter(|&old_index| !successor[old_index])
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::evaluate::compare::jensen_shannon_distance;
    use crate::fitting::fit::{FitSettings, fit};
    use crate::ingest::corpus::Corpus;
    use crate::testbed::synthetic;

    fn fitted(corpus: Corpus, seed: u64) -> Model {
        fit(corpus, &FitSettings::fixed(2, 60, 0.5, 0.1, seed), &mut |_| {})
            .unwrap()
            .0
    }

    /// A model's topics as dense distributions over union ids.
    fn dense_topics(model: &Model, union_ids: &[u32], n_union: usize) -> Vec<Vec<f64>> {
        (0..model.n_topics())
            .map(|topic| {
                let mut dense = vec![0.0; n_union];
                for (word, value) in model.topic_word_row(topic).into_iter().enumerate() {
                    dense[union_ids[word] as usize] = value;
                }
                dense
            })
            .collect()
    }

    #[test]
    fn sparse_distances_equal_the_dense_formula_over_the_union_of_vocabularies() {
        // Source: METHODS.md section 5 and section 8 (jensenshannon, natural
        // log, a distance); the dense `jensen_shannon_distance` is checked
        // against scipy's value in `compare`. The sparse form regroups the
        // same sum, so the two agree to rounding (1e-12).
        let first = synthetic::two_topics(1).corpus;
        let mut second = synthetic::two_topics(2).corpus;
        // Give the second vocabulary a word of its own and drop none: the
        // union then has words only the second model knows.
        let mut words = second.vocabulary.words().to_vec();
        words.push("extra".into());
        let mut counts = second.vocabulary.word_counts().to_vec();
        counts.push(1);
        let mut docs = second.vocabulary.doc_counts().to_vec();
        docs.push(1);
        second.vocabulary = Vocabulary::from_parts(words, counts, docs);
        let last = second.tokens.len() - 1;
        second.tokens[last] = (second.vocabulary.len() - 1) as u32;
        let (old, new) = (fitted(first, 3), fitted(second, 4));
        let union = UnionWords::of(&new.corpus.vocabulary, &old.corpus.vocabulary);
        let n_union = union.n_both + union.n_first_only + union.n_second_only;
        assert!(union.n_first_only == 1 && union.n_both == old.corpus.vocabulary.len());
        let dense_new = dense_topics(&new, &union.first, n_union);
        let dense_old = dense_topics(&old, &union.second, n_union);
        let sparse = topic_distances(&old, &new);
        for (row, p) in dense_new.iter().enumerate() {
            for (column, q) in dense_old.iter().enumerate() {
                let expected = jensen_shannon_distance(p, q);
                assert!((sparse[row][column] - expected).abs() < 1e-12, "{row},{column}");
            }
        }
    }

    #[test]
    fn distances_within_a_model_equal_the_dense_formula() {
        // Source: METHODS.md section 5 (Jensen-Shannon distance, natural
        // log), checked against the dense formula as above; a distance is
        // symmetric and zero from a topic to itself (common practice).
        let model = fitted(synthetic::two_topics(1).corpus, 5);
        let rows = model.topic_word_matrix();
        let within = distances_within(&model);
        for (a, p) in rows.iter().enumerate() {
            for (b, q) in rows.iter().enumerate() {
                assert!(
                    (within[a][b] - jensen_shannon_distance(p, q)).abs() < 1e-7,
                    "{a},{b}"
                );
                assert_eq!(within[a][b], within[b][a]);
            }
            assert_eq!(within[a][a], 0.0);
        }
    }

    #[test]
    fn rectangular_matchings_leave_the_extra_rows_unmatched() {
        // Source: METHODS.md section 8 — linear_sum_assignment of
        // [[4,1,3],[2,0,5],[3,2,2]] gives columns [1,0,2], cost 5; with the
        // matrix transposed (more rows than columns after dropping one
        // column) each column still takes its cheapest distinct row.
        let square = vec![vec![4.0, 1.0, 3.0], vec![2.0, 0.0, 5.0], vec![3.0, 2.0, 2.0]];
        assert_eq!(match_rows(&square), vec![Some(1), Some(0), Some(2)]);
        let tall = vec![vec![4.0, 1.0], vec![2.0, 0.0], vec![3.0, 2.0]];
        // Column 0 costs 4, 2, 3 and column 1 costs 1, 0, 2: the cheapest
        // distinct pair is rows 1 and 0 (2 + 1 = 3).
        assert_eq!(match_rows(&tall), vec![Some(1), Some(0), None]);
        assert_eq!(match_rows(&[]), Vec::<Option<usize>>::new());
    }

    #[test]
    fn a_model_compared_with_itself_keeps_every_topic() {
        // Source: common practice — identical distributions are at distance 0.
        let model = fitted(synthetic::two_topics(1).corpus, 3);
        let drift = drift(&model, &model, DEFAULT_MATCH_THRESHOLD);
        assert_eq!(drift.matched_share(), 1.0);
        assert!(drift.unmatched_old.is_empty());
        for topic in &drift.topics {
            assert_eq!(topic.predecessor_index, Some(topic.index));
            assert!(topic.distance.unwrap() < 1e-7);
            assert!(topic.words_gained.is_empty() && topic.words_lost.is_empty());
            assert_eq!(topic.prevalence_before, Some(topic.prevalence_after));
        }
    }
}
