//! Learning the Dirichlet priors of the model from its counts.
//!
//! This module owns the maximum-likelihood updates for the document-topic
//! prior alpha (one value per topic, Minka 2000, "Estimating a Dirichlet
//! distribution", fixed-point iteration) and for a symmetric topic-word prior
//! beta (the same bound applied to a single shared value). It works on plain
//! slices and count histograms only: the caller turns its sampler state into
//! [`CountHistogram`]s, and nothing here knows about corpora or samplers.
//!
//! Every update needs sums of digamma differences, `sum_items [psi(n + a) -
//! psi(a)]`. Following Wallach (2008 thesis) these are computed from a
//! histogram of the counts with the identity `psi(a + n) - psi(a) = sum_{f=1..n}
//! 1/(a + f - 1)`, so one evaluation costs one pass over the largest count
//! instead of one digamma call per item. [`alpha_step_direct`] keeps the plain
//! digamma form so the two can be checked against each other.

use statrs::function::gamma::digamma;

/// Why a prior could not be learned from the counts given.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum PriorError {
    /// No topics: alpha is empty.
    #[error("alpha has no values; give one value per topic")]
    NoTopics,
    /// alpha and the per-topic histograms disagree on the number of topics.
    #[error(
        "alpha has {alpha_len} values but {histogram_len} per-topic count histograms were given; \
         pass exactly one histogram per topic"
    )]
    TopicCountMismatch { alpha_len: usize, histogram_len: usize },
    /// One value of alpha is zero, negative, infinite or NaN.
    #[error("alpha for topic {topic} is {value}; every alpha must be positive and finite")]
    BadAlpha { topic: usize, value: f64 },
    /// beta is zero, negative, infinite or NaN.
    #[error("beta is {value}; it must be positive and finite")]
    BadBeta { value: f64 },
    /// A document row of a document-topic table has the wrong length.
    #[error(
        "document {document} has {found} topic counts but alpha has {expected} values; \
         give every document one count per topic"
    )]
    RaggedDocument {
        document: usize,
        found: usize,
        expected: usize,
    },
    /// The two histograms were not taken from the same assignment state.
    #[error(
        "the {first_name} hold {first_tokens} tokens but the {second_name} hold {second_tokens}; \
         build both histograms from the same topic assignments"
    )]
    TokenTotalsDisagree {
        first_name: &'static str,
        first_tokens: u64,
        second_name: &'static str,
        second_tokens: u64,
    },
    /// learn_symmetric_beta was given an empty vocabulary.
    #[error("the vocabulary is empty; learning beta needs at least one word")]
    EmptyVocabulary,
    /// A field of [`LearnSettings`] is out of range.
    #[error("learning setting {name} is {value}; {requirement}")]
    BadSettings {
        name: &'static str,
        value: f64,
        requirement: &'static str,
    },
}

/// How many items have each count: the distinct counts, each with its
/// number of items, so memory follows the number of distinct counts (a few
/// thousand even at 10^8 tokens) rather than the largest count.
///
/// Built from the counts of a set of items (for example the count of one
/// topic in every document, or the length of every document). An item with
/// count 0 adds nothing to any digamma-difference sum, so it is not kept.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct CountHistogram {
    /// `(count, items with that count)`, counts increasing, all above 0.
    distinct: Vec<(u32, u64)>,
}

/// Counts below this are tallied in a plain array while a histogram is
/// built; larger ones, which are rare, in an ordered map.
const SMALL_COUNTS: usize = 1 << 12;

/// Up to this largest count, [`CountHistogram::digamma_difference_sum`]
/// walks every count from 1 (Wallach's form, one division per step); above
/// it, where the walk would take longer than a digamma call per distinct
/// count, it calls digamma directly.
pub const WALK_UP_TO: u32 = 1 << 20;

/// Tallies counts into a [`CountHistogram`] without keeping the counts.
#[derive(Clone, Debug, Default)]
pub struct HistogramBuilder {
    /// `small[n]` = items with count n, for n below [`SMALL_COUNTS`].
    small: Vec<u64>,
    large: std::collections::BTreeMap<u32, u64>,
}

impl HistogramBuilder {
    /// Tallies one item with the given count (0 is ignored).
    pub fn add(&mut self, count: u32) {
        let index = count as usize;
        if count == 0 {
            return;
        }
        if index < SMALL_COUNTS {
            if index >= self.small.len() {
                self.small.resize(index + 1, 0);
            }
            self.small[index] += 1;
        } else {
            *self.large.entry(count).or_insert(0) += 1;
        }
    }

    /// The histogram of the counts tallied.
    pub fn finish(self) -> CountHistogram {
        let small = self
            .small
            .into_iter()
            .enumerate()
            .filter(|&(_, items)| items > 0)
            .map(|(count, items)| (count as u32, items));
        CountHistogram {
            distinct: small.chain(self.large).collect(),
        }
    }
}

impl CountHistogram {
    /// An empty histogram (no items).
    pub fn new() -> CountHistogram {
        CountHistogram::default()
    }

    /// Builds the histogram of the given counts in one pass.
    pub fn from_counts(counts: impl IntoIterator<Item = u32>) -> CountHistogram {
        let mut builder = HistogramBuilder::default();
        for count in counts {
            builder.add(count);
        }
        builder.finish()
    }

    /// Adds one item with the given count.
    pub fn add(&mut self, count: u32) {
        if count == 0 {
            return;
        }
        match self.distinct.binary_search_by_key(&count, |&(c, _)| c) {
            Ok(index) => self.distinct[index].1 += 1,
            Err(index) => self.distinct.insert(index, (count, 1)),
        }
    }

    /// The `(count, items)` pairs, counts increasing.
    pub fn pairs(&self) -> &[(u32, u64)] {
        &self.distinct
    }

    /// The histogram of the union of several item sets given as
    /// `(count, items)` pairs in any order (items of equal counts add up).
    pub fn from_pairs(pairs: impl IntoIterator<Item = (u32, u64)>) -> CountHistogram {
        let mut merged = std::collections::BTreeMap::new();
        for (count, items) in pairs {
            if count > 0 && items > 0 {
                *merged.entry(count).or_insert(0u64) += items;
            }
        }
        CountHistogram {
            distinct: merged.into_iter().collect(),
        }
    }

    /// The largest count added (0 when no item has a positive count).
    pub fn max(&self) -> u32 {
        self.distinct.last().map_or(0, |&(count, _)| count)
    }

    /// The number of items with count exactly `count` (for `count >= 1`;
    /// items with count 0 are not kept, so `count = 0` gives 0).
    pub fn items_with_count(&self, count: u32) -> u64 {
        self.distinct
            .binary_search_by_key(&count, |&(c, _)| c)
            .map_or(0, |index| self.distinct[index].1)
    }

    /// The sum of all counts added (the number of tokens they stand for).
    pub fn total(&self) -> u64 {
        self.distinct
            .iter()
            .map(|&(count, items)| u64::from(count) * items)
            .sum()
    }

    /// `sum over items of [psi(n + a) - psi(a)]` for `a > 0`, where `n` is
    /// each item's count.
    ///
    /// Up to a largest count of [`WALK_UP_TO`] it is computed without
    /// digamma as `sum_{f=1..max} (items with count >= f) / (a + f - 1)`
    /// (Wallach 2008), the terms produced one at a time; above it, as the
    /// digamma differences of each distinct count times its items. For
    /// `a <= 0` the result is meaningless; the learning functions check
    /// their inputs before calling this.
    pub fn digamma_difference_sum(&self, a: f64) -> f64 {
        if self.max() > WALK_UP_TO {
            let base = digamma(a);
            return self
                .distinct
                .iter()
                .map(|&(count, items)| items as f64 * (digamma(f64::from(count) + a) - base))
                .sum();
        }
        let mut at_least: u64 = self.distinct.iter().map(|&(_, items)| items).sum();
        let mut next = self.distinct.iter().peekable();
        (1..=self.max())
            .map(|f| {
                // Items whose count is below f no longer count.
                while let Some(&&(count, items)) = next.peek() {
                    if count >= f {
                        break;
                    }
                    at_least -= items;
                    next.next();
                }
                at_least as f64 / (a + f64::from(f - 1))
            })
            .sum()
    }
}

/// When to stop iterating a fixed point, and the smallest value a learned
/// prior may take.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LearnSettings {
    /// Upper limit on the number of fixed-point steps.
    pub max_steps: usize,
    /// Stop once no value changes by more than this fraction of itself in a
    /// step. Must be finite and >= 0 (0 runs all `max_steps`).
    pub tolerance: f64,
    /// Values are never allowed below this; must be positive and finite. A
    /// topic that no document uses would otherwise be driven to zero.
    pub floor: f64,
}

impl Default for LearnSettings {
    /// 200 steps, relative tolerance 1e-6, floor 1e-6.
    fn default() -> LearnSettings {
        LearnSettings {
            max_steps: 200,
            tolerance: 1e-6,
            floor: 1e-6,
        }
    }
}

impl LearnSettings {
    fn check(&self) -> Result<(), PriorError> {
        if !(self.tolerance.is_finite() && self.tolerance >= 0.0) {
            return Err(PriorError::BadSettings {
                name: "tolerance",
                value: self.tolerance,
                requirement: "it must be finite and not negative",
            });
        }
        if !(self.floor.is_finite() && self.floor > 0.0) {
            return Err(PriorError::BadSettings {
                name: "floor",
                value: self.floor,
                requirement: "it must be positive and finite",
            });
        }
        Ok(())
    }
}

fn check_alpha(alpha: &[f64]) -> Result<(), PriorError> {
    if alpha.is_empty() {
        return Err(PriorError::NoTopics);
    }
    match alpha
        .iter()
        .position(|value| !(value.is_finite() && *value > 0.0))
    {
        Some(topic) => Err(PriorError::BadAlpha {
            topic,
            value: alpha[topic],
        }),
        None => Ok(()),
    }
}

fn check_beta(beta: f64) -> Result<(), PriorError> {
    if beta.is_finite() && beta > 0.0 {
        Ok(())
    } else {
        Err(PriorError::BadBeta { value: beta })
    }
}

fn check_same_tokens(
    first_name: &'static str,
    first_tokens: u64,
    second_name: &'static str,
    second_tokens: u64,
) -> Result<(), PriorError> {
    if first_tokens == second_tokens {
        Ok(())
    } else {
        Err(PriorError::TokenTotalsDisagree {
            first_name,
            first_tokens,
            second_name,
            second_tokens,
        })
    }
}

fn check_alpha_inputs(
    alpha: &[f64],
    per_topic: &[CountHistogram],
    doc_lengths: &CountHistogram,
) -> Result<(), PriorError> {
    check_alpha(alpha)?;
    if alpha.len() != per_topic.len() {
        return Err(PriorError::TopicCountMismatch {
            alpha_len: alpha.len(),
            histogram_len: per_topic.len(),
        });
    }
    let topic_tokens = per_topic.iter().map(CountHistogram::total).sum();
    check_same_tokens(
        "per-topic histograms",
        topic_tokens,
        "document lengths",
        doc_lengths.total(),
    )
}

/// One step without input checks; the caller has validated.
fn unchecked_alpha_step(
    alpha: &[f64],
    per_topic: &[CountHistogram],
    doc_lengths: &CountHistogram,
) -> Vec<f64> {
    let alpha_sum: f64 = alpha.iter().sum();
    let denominator = doc_lengths.digamma_difference_sum(alpha_sum);
    if !(denominator.is_finite() && denominator > 0.0) {
        // No tokens at all: the counts carry no information about alpha.
        return alpha.to_vec();
    }
    alpha
        .iter()
        .zip(per_topic)
        .map(|(&alpha_k, histogram)| alpha_k * histogram.digamma_difference_sum(alpha_k) / denominator)
        .collect()
}

/// One step of Minka's fixed point for an asymmetric alpha, from histograms:
///
/// ```text
/// alpha_k <- alpha_k * S_k(alpha_k) / S(a0)
/// S_k(x) = sum_d [psi(n_dk + x) - psi(x)]    from per_topic[k]
/// S(x)   = sum_d [psi(n_d + x) - psi(x)]     from doc_lengths
/// ```
///
/// where `per_topic[k]` holds the count of topic k in every document,
/// `doc_lengths` the length of every document, and `a0 = sum_k alpha_k`.
///
/// No floor is applied: a topic no document uses steps to 0. With no tokens
/// at all, alpha is returned unchanged.
pub fn alpha_fixed_point_step(
    alpha: &[f64],
    per_topic: &[CountHistogram],
    doc_lengths: &CountHistogram,
) -> Result<Vec<f64>, PriorError> {
    check_alpha_inputs(alpha, per_topic, doc_lengths)?;
    Ok(unchecked_alpha_step(alpha, per_topic, doc_lengths))
}

/// The same step as [`alpha_fixed_point_step`], computed straight from a
/// document-topic count table (`doc_topic[d][k] = n_dk`) with one digamma call
/// per term. Slower; kept as the reference the histogram form is tested
/// against.
pub fn alpha_step_direct(alpha: &[f64], doc_topic: &[Vec<u32>]) -> Result<Vec<f64>, PriorError> {
    check_alpha(alpha)?;
    if let Some(document) = doc_topic.iter().position(|row| row.len() != alpha.len()) {
        return Err(PriorError::RaggedDocument {
            document,
            found: doc_topic[document].len(),
            expected: alpha.len(),
        });
    }
    let alpha_sum: f64 = alpha.iter().sum();
    let denominator: f64 = doc_topic
        .iter()
        .map(|row| {
            let doc_len: f64 = row.iter().map(|&count| f64::from(count)).sum();
            digamma(doc_len + alpha_sum) - digamma(alpha_sum)
        })
        .sum();
    if !(denominator.is_finite() && denominator > 0.0) {
        return Ok(alpha.to_vec());
    }
    let stepped = alpha
        .iter()
        .enumerate()
        .map(|(topic, &alpha_k)| {
            let numerator: f64 = doc_topic
                .iter()
                .map(|row| digamma(f64::from(row[topic]) + alpha_k) - digamma(alpha_k))
                .sum();
            alpha_k * numerator / denominator
        })
        .collect();
    Ok(stepped)
}

/// Replaces a non-finite stepped value by the previous one and raises it to
/// the floor; returns the guarded value and its relative change.
fn guard(previous: f64, stepped: f64, floor: f64) -> (f64, f64) {
    let value = if stepped.is_finite() {
        stepped.max(floor)
    } else {
        previous
    };
    (value, (value - previous).abs() / previous)
}

/// Learns an asymmetric alpha by iterating [`alpha_fixed_point_step`] from
/// `alpha` until no value changes by more than `settings.tolerance` of
/// itself, or `settings.max_steps` steps have run.
///
/// Every returned value is finite and at least `settings.floor` (starting
/// values below the floor are raised to it first). When a value has no finite
/// maximum-likelihood estimate (for example with a single document the
/// likelihood keeps growing with the total), the result is the finite value
/// reached after `max_steps`.
pub fn learn_alpha(
    alpha: &[f64],
    per_topic: &[CountHistogram],
    doc_lengths: &CountHistogram,
    settings: &LearnSettings,
) -> Result<Vec<f64>, PriorError> {
    settings.check()?;
    check_alpha_inputs(alpha, per_topic, doc_lengths)?;
    let mut current: Vec<f64> = alpha.iter().map(|value| value.max(settings.floor)).collect();
    for _ in 0..settings.max_steps {
        let stepped = unchecked_alpha_step(&current, per_topic, doc_lengths);
        let mut largest_change = 0.0f64;
        for (value, stepped_value) in current.iter_mut().zip(stepped) {
            let (guarded, change) = guard(*value, stepped_value, settings.floor);
            *value = guarded;
            largest_change = largest_change.max(change);
        }
        if largest_change < settings.tolerance {
            break;
        }
    }
    Ok(current)
}

/// Learns one symmetric topic-word prior beta shared by all `n_words` words.
///
/// `word_topic_counts` holds `n_kw` for every topic k and word w (zeros may be
/// left out), `topic_totals` holds `n_k` for every topic. Each step is
///
/// ```text
/// beta <- beta * sum_{k,w} [psi(n_kw + beta) - psi(beta)]
///              / (V * sum_k [psi(n_k + V beta) - psi(V beta)])
/// ```
///
/// with `V = n_words`, iterated with the stopping rule, floor and guards of
/// [`learn_alpha`]. With no tokens beta is returned unchanged (raised to the
/// floor if below it).
pub fn learn_symmetric_beta(
    beta: f64,
    n_words: usize,
    word_topic_counts: &CountHistogram,
    topic_totals: &CountHistogram,
    settings: &LearnSettings,
) -> Result<f64, PriorError> {
    settings.check()?;
    check_beta(beta)?;
    if n_words == 0 {
        return Err(PriorError::EmptyVocabulary);
    }
    check_same_tokens(
        "word-topic counts",
        word_topic_counts.total(),
        "topic totals",
        topic_totals.total(),
    )?;
    let n_words = n_words as f64;
    let mut current = beta.max(settings.floor);
    for _ in 0..settings.max_steps {
        let denominator = n_words * topic_totals.digamma_difference_sum(n_words * current);
        if !(denominator.is_finite() && denominator > 0.0) {
            break;
        }
        let stepped = current * word_topic_counts.digamma_difference_sum(current) / denominator;
        let (guarded, change) = guard(current, stepped, settings.floor);
        current = guarded;
        if change < settings.tolerance {
            break;
        }
    }
    Ok(current)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{RngExt, SeedableRng};
    use rand_distr::{Distribution, Gamma};
    use rand_xoshiro::Xoshiro256PlusPlus;
    use statrs::function::gamma::ln_gamma;

    /// The per-document topic counts of the Minka fixture.
    fn minka_fixture() -> Vec<Vec<u32>> {
        vec![vec![5, 0], vec![0, 5], vec![4, 1], vec![1, 4]]
    }

    /// Per-topic histograms and the document-length histogram of a table.
    fn histograms(doc_topic: &[Vec<u32>]) -> (Vec<CountHistogram>, CountHistogram) {
        let n_topics = doc_topic.first().map_or(0, Vec::len);
        let per_topic = (0..n_topics)
            .map(|topic| CountHistogram::from_counts(doc_topic.iter().map(|row| row[topic])))
            .collect();
        let doc_lengths = CountHistogram::from_counts(doc_topic.iter().map(|row| row.iter().sum::<u32>()));
        (per_topic, doc_lengths)
    }

    /// Dirichlet-multinomial log-likelihood of a document-topic table (without
    /// the multinomial coefficients, which do not depend on alpha).
    fn dirichlet_multinomial_log_likelihood(alpha: &[f64], doc_topic: &[Vec<u32>]) -> f64 {
        let alpha_sum: f64 = alpha.iter().sum();
        doc_topic
            .iter()
            .map(|row| {
                let doc_len: f64 = row.iter().map(|&count| f64::from(count)).sum();
                let per_topic: f64 = row
                    .iter()
                    .zip(alpha)
                    .map(|(&count, &alpha_k)| ln_gamma(f64::from(count) + alpha_k) - ln_gamma(alpha_k))
                    .sum();
                ln_gamma(alpha_sum) - ln_gamma(doc_len + alpha_sum) + per_topic
            })
            .sum()
    }

    /// theta ~ Dirichlet(alpha) by normalised Gamma(alpha_k, 1) draws.
    fn draw_dirichlet(alpha: &[f64], rng: &mut Xoshiro256PlusPlus) -> Vec<f64> {
        let draws: Vec<f64> = alpha
            .iter()
            .map(|&shape| Gamma::new(shape, 1.0).expect("positive shape").sample(rng))
            .collect();
        let total: f64 = draws.iter().sum();
        draws.iter().map(|draw| draw / total).collect()
    }

    /// Counts of `n_tokens` categorical draws from `probabilities`.
    fn draw_multinomial(n_tokens: usize, probabilities: &[f64], rng: &mut Xoshiro256PlusPlus) -> Vec<u32> {
        let mut cumulative = Vec::with_capacity(probabilities.len());
        let mut running = 0.0;
        for probability in probabilities {
            running += probability;
            cumulative.push(running);
        }
        let mut counts = vec![0u32; probabilities.len()];
        for _ in 0..n_tokens {
            let target = rng.random::<f64>() * running;
            let category = cumulative
                .partition_point(|&edge| edge <= target)
                .min(probabilities.len() - 1);
            counts[category] += 1;
        }
        counts
    }

    #[test]
    fn histogram_keeps_counts_and_totals() {
        // Source: common practice (a histogram of the counts 0, 3, 1, 3, 7).
        let mut histogram = CountHistogram::from_counts([0, 3, 1, 3]);
        histogram.add(7);
        assert_eq!(histogram.max(), 7);
        assert_eq!(histogram.items_with_count(3), 2);
        assert_eq!(histogram.items_with_count(1), 1);
        assert_eq!(histogram.items_with_count(2), 0);
        assert_eq!(histogram.items_with_count(7), 1);
        assert_eq!(histogram.total(), 14);
        // add() and from_counts() build the same histogram.
        let mut added = CountHistogram::new();
        for count in [0, 3, 1, 3, 7] {
            added.add(count);
        }
        assert_eq!(added, histogram);
        assert_eq!(CountHistogram::new().max(), 0);
        assert_eq!(CountHistogram::new().digamma_difference_sum(0.5), 0.0);
    }

    #[test]
    fn large_counts_use_digamma_and_agree_with_the_walk() {
        // Source: Wallach 2008 identity psi(a+n) - psi(a) = sum_{f=1..n}
        // 1/(a+f-1) (METHODS.md section 2, from memory there; it follows from
        // psi(x + 1) = psi(x) + 1/x). Above WALK_UP_TO the histogram calls
        // digamma; the walk summed here by hand must agree. Tolerance 1e-9
        // relative: two million terms in double precision lose about 1e-12.
        let counts = [3u32, WALK_UP_TO + 1, WALK_UP_TO + 1, 2 * WALK_UP_TO];
        let histogram = CountHistogram::from_counts(counts);
        assert_eq!(histogram.items_with_count(WALK_UP_TO + 1), 2);
        assert_eq!(histogram.max(), 2 * WALK_UP_TO);
        for a in [0.01, 0.5, 30.0] {
            let walked: f64 = counts
                .iter()
                .map(|&n| (1..=n).map(|f| 1.0 / (a + f64::from(f - 1))).sum::<f64>())
                .sum();
            let from_histogram = histogram.digamma_difference_sum(a);
            assert!(
                (from_histogram - walked).abs() <= 1e-9 * walked,
                "a = {a}: histogram {from_histogram}, walk {walked}"
            );
        }
    }

    #[test]
    fn digamma_identity_matches_reference_values() {
        // Source: METHODS.md section 8 (scipy 1.17.1): psi(5.1) - psi(0.1) = 11.951764469467065.
        let one_item_with_five = CountHistogram::from_counts([5]);
        let wallach = one_item_with_five.digamma_difference_sum(0.1);
        assert!((wallach - 11.951764469467065).abs() < 1e-12, "got {wallach}");
        // Source: METHODS.md section 8: digamma(2) - digamma(1) = 0.42278433509846713 + 0.5772156649015329.
        let one_item_with_one = CountHistogram::from_counts([1, 0, 0]);
        let expected = 0.42278433509846713 + 0.5772156649015329;
        assert!((one_item_with_one.digamma_difference_sum(1.0) - expected).abs() < 1e-12);
        // Source: METHODS.md section 8, psi(5.1) - psi(0.1); the statrs digamma
        // must agree, since alpha_step_direct relies on it.
        assert!((digamma(5.1) - digamma(0.1) - 11.951764469467065).abs() < 1e-12);
        // Source: Wallach 2008 identity psi(a+n) - psi(a) = sum_{f=1..n} 1/(a+f-1)
        // (METHODS.md marks it from memory; it follows from the recurrence
        // psi(x + 1) = psi(x) + 1/x, Abramowitz & Stegun 6.3.5, number from
        // memory), summed over several items, against statrs digamma.
        let counts = [0u32, 1, 2, 2, 9, 40, 40, 133];
        let histogram = CountHistogram::from_counts(counts);
        for a in [1e-6, 0.03, 0.5, 1.0, 7.25, 300.0] {
            let direct: f64 = counts
                .iter()
                .map(|&n| digamma(f64::from(n) + a) - digamma(a))
                .sum();
            let from_histogram = histogram.digamma_difference_sum(a);
            assert!(
                (from_histogram - direct).abs() <= 1e-11 * direct.abs().max(1.0),
                "a = {a}: histogram {from_histogram}, digamma {direct}"
            );
        }
    }

    #[test]
    fn minka_fixture_one_step() {
        // Source: METHODS.md section 8, Minka fixture: counts [[5,0],[0,5],[4,1],[1,4]]
        // from alpha = (1, 1), one step gives 0.92528736 each (histogram form equal).
        let doc_topic = minka_fixture();
        let (per_topic, doc_lengths) = histograms(&doc_topic);
        let stepped = alpha_fixed_point_step(&[1.0, 1.0], &per_topic, &doc_lengths).unwrap();
        let direct = alpha_step_direct(&[1.0, 1.0], &doc_topic).unwrap();
        for (from_histogram, from_digamma) in stepped.iter().zip(&direct) {
            assert!(
                (from_histogram - 0.92528736).abs() < 5e-9,
                "histogram step {from_histogram}"
            );
            assert!(
                (from_histogram - from_digamma).abs() < 1e-12,
                "{from_histogram} vs {from_digamma}"
            );
        }
        // Source: Minka 2000 fixed point; the histogram and digamma forms are
        // the same formula, so they agree on an asymmetric start too.
        let asymmetric = [0.3, 2.5];
        let stepped = alpha_fixed_point_step(&asymmetric, &per_topic, &doc_lengths).unwrap();
        let direct = alpha_step_direct(&asymmetric, &doc_topic).unwrap();
        for (from_histogram, from_digamma) in stepped.iter().zip(&direct) {
            assert!(
                (from_histogram - from_digamma).abs() < 1e-12,
                "{from_histogram} vs {from_digamma}"
            );
        }
    }

    #[test]
    fn minka_fixture_converges_to_maximum_likelihood() {
        // Source: METHODS.md section 8, Minka fixture converges to 0.4123159 (7 decimals).
        let doc_topic = minka_fixture();
        let (per_topic, doc_lengths) = histograms(&doc_topic);
        let tight = LearnSettings {
            max_steps: 100_000,
            tolerance: 1e-14,
            floor: 1e-6,
        };
        let learned = learn_alpha(&[1.0, 1.0], &per_topic, &doc_lengths, &tight).unwrap();
        for value in &learned {
            assert!((value - 0.4123159).abs() < 5e-8, "learned {value}");
        }
        // Source: Minka 2000 (the fixed point is the maximum of the
        // Dirichlet-multinomial likelihood): moving either value by 1% lowers it.
        let best = dirichlet_multinomial_log_likelihood(&learned, &doc_topic);
        for (topic, factor) in [(0, 1.01), (0, 0.99), (1, 1.01), (1, 0.99)] {
            let mut moved = learned.clone();
            moved[topic] *= factor;
            assert!(dirichlet_multinomial_log_likelihood(&moved, &doc_topic) < best);
        }
        // Source: METHODS.md section 8 value again; the default settings stop
        // within 1e-4 of it (relative tolerance 1e-6 per step).
        let default = learn_alpha(&[1.0, 1.0], &per_topic, &doc_lengths, &LearnSettings::default()).unwrap();
        for value in &default {
            assert!(
                (value - 0.4123159).abs() < 1e-4,
                "default settings learned {value}"
            );
        }
    }

    #[test]
    fn recovers_known_asymmetric_alpha() {
        // Source: Minka 2000 (maximum-likelihood estimate of a Dirichlet from
        // multinomial counts, generative model of METHODS.md section 1).
        // 2000 documents of 100 tokens from alpha = (0.1, 0.3, 0.6, 1.0).
        // Tolerance 15% relative. The Cramer-Rao bound with theta observed,
        // I = D (diag psi'(alpha_k) - psi'(a0)) with D = 2000, gives standard
        // errors of 2.2-2.5% relative; counts carry a little less information
        // than theta, and over 20 other seeds (measured while writing this
        // test) the relative errors had standard deviations of 2.2-3.4%, so 15%
        // is more than four standard errors for every topic.
        let true_alpha = [0.1, 0.3, 0.6, 1.0];
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(20_090_607);
        let doc_topic: Vec<Vec<u32>> = (0..2000)
            .map(|_| {
                let theta = draw_dirichlet(&true_alpha, &mut rng);
                draw_multinomial(100, &theta, &mut rng)
            })
            .collect();
        let (per_topic, doc_lengths) = histograms(&doc_topic);
        let settings = LearnSettings {
            max_steps: 5000,
            tolerance: 1e-9,
            floor: 1e-6,
        };
        let learned = learn_alpha(&[1.0; 4], &per_topic, &doc_lengths, &settings).unwrap();
        for (learned_k, true_k) in learned.iter().zip(true_alpha) {
            let relative_error = (learned_k - true_k).abs() / true_k;
            assert!(relative_error < 0.15, "learned {learned:?} for {true_alpha:?}");
        }
    }

    #[test]
    fn recovers_known_symmetric_beta() {
        // Source: Minka 2000 fixed point applied to one shared value (METHODS.md
        // section 2); counts simulated from phi_k ~ Dirichlet(beta), V = 500,
        // K = 10, 20000 tokens per topic, beta = 0.05.
        // Tolerance 10% relative: over 20 other seeds (measured while writing
        // this test) the relative error had a standard deviation of 2.5% and a
        // largest value of 5.1%, so 10% is four standard errors.
        let true_beta = 0.05;
        let (n_words, n_topics, tokens_per_topic) = (500, 10, 20_000);
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(20_080_401);
        let mut word_topic_counts = CountHistogram::new();
        let mut topic_totals = CountHistogram::new();
        for _ in 0..n_topics {
            let phi = draw_dirichlet(&vec![true_beta; n_words], &mut rng);
            let counts = draw_multinomial(tokens_per_topic, &phi, &mut rng);
            for &count in &counts {
                word_topic_counts.add(count);
            }
            topic_totals.add(counts.iter().sum());
        }
        let settings = LearnSettings {
            max_steps: 5000,
            tolerance: 1e-10,
            floor: 1e-6,
        };
        let learned =
            learn_symmetric_beta(1.0, n_words, &word_topic_counts, &topic_totals, &settings).unwrap();
        let relative_error = (learned - true_beta).abs() / true_beta;
        assert!(relative_error < 0.10, "learned beta {learned} for {true_beta}");
    }

    #[test]
    fn degenerate_counts_give_finite_positive_priors() {
        // Source: common practice (no information leaves the prior where it was;
        // the floor keeps unused topics positive).
        let settings = LearnSettings::default();
        // All counts zero: nothing to learn from.
        let all_zero = vec![vec![0u32, 0, 0]; 4];
        let (per_topic, doc_lengths) = histograms(&all_zero);
        let learned = learn_alpha(&[0.5, 0.1, 2.0], &per_topic, &doc_lengths, &settings).unwrap();
        assert_eq!(learned, vec![0.5, 0.1, 2.0]);
        let beta = learn_symmetric_beta(
            0.01,
            10,
            &CountHistogram::new(),
            &CountHistogram::new(),
            &settings,
        );
        assert_eq!(beta, Ok(0.01));
        // A single document: no finite maximum, but the values stay finite and
        // positive, and the unused topic sits on the floor.
        let single = vec![vec![7u32, 0, 3]];
        let (per_topic, doc_lengths) = histograms(&single);
        let learned = learn_alpha(&[1.0, 1.0, 1.0], &per_topic, &doc_lengths, &settings).unwrap();
        assert!(
            learned
                .iter()
                .all(|value| value.is_finite() && *value >= settings.floor),
            "{learned:?}"
        );
        assert_eq!(learned[1], settings.floor);
        // One topic used by no document among several documents.
        let unused_topic = vec![vec![3u32, 0], vec![5, 0], vec![1, 0]];
        let (per_topic, doc_lengths) = histograms(&unused_topic);
        let learned = learn_alpha(&[1.0, 1.0], &per_topic, &doc_lengths, &settings).unwrap();
        assert!(
            learned
                .iter()
                .all(|value| value.is_finite() && *value >= settings.floor),
            "{learned:?}"
        );
        // One word used once in one topic.
        let beta = learn_symmetric_beta(
            0.1,
            50,
            &CountHistogram::from_counts([1]),
            &CountHistogram::from_counts([1]),
            &settings,
        )
        .unwrap();
        assert!(beta.is_finite() && beta >= settings.floor, "{beta}");
    }

    #[test]
    fn bad_inputs_are_reported() {
        // Source: common practice (typed errors naming the offending item).
        let (per_topic, doc_lengths) = histograms(&minka_fixture());
        let settings = LearnSettings::default();
        assert_eq!(
            learn_alpha(&[1.0, -2.0], &per_topic, &doc_lengths, &settings),
            Err(PriorError::BadAlpha {
                topic: 1,
                value: -2.0
            })
        );
        assert!(matches!(
            learn_alpha(&[1.0, f64::NAN], &per_topic, &doc_lengths, &settings),
            Err(PriorError::BadAlpha { topic: 1, .. })
        ));
        assert_eq!(
            alpha_fixed_point_step(&[1.0, 1.0, 1.0], &per_topic, &doc_lengths),
            Err(PriorError::TopicCountMismatch {
                alpha_len: 3,
                histogram_len: 2
            })
        );
        assert_eq!(
            learn_alpha(&[], &[], &doc_lengths, &settings),
            Err(PriorError::NoTopics)
        );
        assert_eq!(
            alpha_step_direct(&[1.0, 1.0], &[vec![1, 2], vec![3]]),
            Err(PriorError::RaggedDocument {
                document: 1,
                found: 1,
                expected: 2
            })
        );
        let short_lengths = CountHistogram::from_counts([5, 5]);
        assert!(matches!(
            learn_alpha(&[1.0, 1.0], &per_topic, &short_lengths, &settings),
            Err(PriorError::TokenTotalsDisagree {
                first_tokens: 20,
                second_tokens: 10,
                ..
            })
        ));
        let no_floor = LearnSettings {
            floor: 0.0,
            ..settings
        };
        assert!(matches!(
            learn_alpha(&[1.0, 1.0], &per_topic, &doc_lengths, &no_floor),
            Err(PriorError::BadSettings { name: "floor", .. })
        ));
        let empty = CountHistogram::new();
        assert_eq!(
            learn_symmetric_beta(0.0, 5, &empty, &empty, &settings),
            Err(PriorError::BadBeta { value: 0.0 })
        );
        assert_eq!(
            learn_symmetric_beta(0.1, 0, &empty, &empty, &settings),
            Err(PriorError::EmptyVocabulary)
        );
        let message = PriorError::BadAlpha {
            topic: 3,
            value: -0.5,
        }
        .to_string();
        assert!(
            message.contains("topic 3") && message.contains("-0.5"),
            "{message}"
        );
    }
}
