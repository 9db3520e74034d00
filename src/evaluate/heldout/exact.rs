//! The exact-enumeration oracle for tiny documents: `ln p(w)` and the
//! posterior mean shares computed by visiting every one of the `K^N` topic
//! assignments. The estimators of the parent module are checked against it;
//! it refuses documents with more than [`EXACT_ENUMERATION_LIMIT`]
//! assignments.

use statrs::function::gamma::ln_gamma;

use super::{HeldOutError, Topics};

/// Largest number of topic assignments (`K^N`) the exact enumeration will
/// visit before refusing.
pub const EXACT_ENUMERATION_LIMIT: u64 = 2_000_000;

/// Streaming `ln sum exp(x)` over the values added.
struct LogSumExp {
    max: f64,
    scaled_sum: f64,
}

impl LogSumExp {
    fn new() -> Self {
        LogSumExp {
            max: f64::NEG_INFINITY,
            scaled_sum: 0.0,
        }
    }

    /// Adds `value` and returns the factor by which earlier terms were
    /// rescaled, together with the weight `exp(value - max)` of this one.
    fn add(&mut self, value: f64) -> (f64, f64) {
        if value == f64::NEG_INFINITY {
            return (1.0, 0.0);
        }
        if value > self.max {
            let rescale = (self.max - value).exp();
            self.scaled_sum = self.scaled_sum * rescale + 1.0;
            self.max = value;
            (rescale, 1.0)
        } else {
            let weight = (value - self.max).exp();
            self.scaled_sum += weight;
            (1.0, weight)
        }
    }

    fn value(&self) -> f64 {
        if self.scaled_sum == 0.0 {
            f64::NEG_INFINITY
        } else {
            self.max + self.scaled_sum.ln()
        }
    }
}

/// The Dirichlet-multinomial `ln p(z | alpha) = lgamma(a0) - lgamma(a0 + N)
/// + sum_k [lgamma(alpha_k + n_k) - lgamma(alpha_k)]` of a document's topic
/// counts (METHODS.md section 1), tabulated for documents of up to
/// `max_len` tokens so the enumeration calls no log-gamma in its loop.
pub(super) struct DirichletMultinomialPrior {
    max_len: usize,
    /// `lgamma(a0) - lgamma(a0 + N)` for `N = 0..=max_len`.
    log_normaliser: Vec<f64>,
    /// `lgamma(alpha_k + n) - lgamma(alpha_k)` at `k * (max_len + 1) + n`.
    log_rising: Vec<f64>,
}

impl DirichletMultinomialPrior {
    fn new(alpha: &[f64], max_len: usize) -> Self {
        let alpha_sum: f64 = alpha.iter().sum();
        let log_normaliser = (0..=max_len)
            .map(|len| ln_gamma(alpha_sum) - ln_gamma(alpha_sum + len as f64))
            .collect();
        let mut log_rising = Vec::with_capacity(alpha.len() * (max_len + 1));
        for &alpha in alpha {
            let base = ln_gamma(alpha);
            log_rising.extend((0..=max_len).map(|count| ln_gamma(alpha + count as f64) - base));
        }
        DirichletMultinomialPrior {
            max_len,
            log_normaliser,
            log_rising,
        }
    }

    /// `ln p(z | alpha)` for topic counts summing to at most `max_len`.
    pub(super) fn log_prior(&self, counts: &[u32]) -> f64 {
        let doc_len: usize = counts.iter().map(|&count| count as usize).sum();
        let mut log_prior = self.log_normaliser[doc_len];
        for (topic, &count) in counts.iter().enumerate() {
            log_prior += self.log_rising[topic * (self.max_len + 1) + count as usize];
        }
        log_prior
    }
}

/// Visits every assignment `z` of the document's tokens to topics, passing
/// `ln [p(z | alpha) prod_i phi_{z_i, w_i}]` and the topic counts of `z`.
fn enumerate_assignments(
    doc: &[u32],
    topics: &Topics<'_>,
    mut visit: impl FnMut(f64, &[u32]),
) -> Result<(), HeldOutError> {
    let n_topics = topics.n_topics;
    let too_many = HeldOutError::TooManyAssignments {
        n_topics,
        doc_len: doc.len(),
        limit: EXACT_ENUMERATION_LIMIT,
    };
    let mut n_assignments: u64 = 1;
    for _ in doc {
        n_assignments = n_assignments.saturating_mul(n_topics as u64);
        if n_assignments > EXACT_ENUMERATION_LIMIT {
            return Err(too_many);
        }
    }
    let doc_len = doc.len();
    let prior = DirichletMultinomialPrior::new(topics.alpha, doc_len);
    let log_phi: Vec<f64> = doc
        .iter()
        .flat_map(|&word| topics.word_row(word).iter().map(|phi| phi.ln()))
        .collect();

    let mut assignment = vec![0usize; doc_len];
    let mut counts = vec![0u32; n_topics];
    counts[0] = doc_len as u32;
    loop {
        let mut log_joint = prior.log_prior(&counts);
        for (position, &topic) in assignment.iter().enumerate() {
            log_joint += log_phi[position * n_topics + topic];
        }
        visit(log_joint, &counts);
        // Advance the odometer; stop after the last assignment.
        let mut position = 0;
        loop {
            if position == doc_len {
                return Ok(());
            }
            let topic = assignment[position];
            counts[topic] -= 1;
            if topic + 1 < n_topics {
                assignment[position] = topic + 1;
                counts[topic + 1] += 1;
                break;
            }
            assignment[position] = 0;
            counts[0] += 1;
            position += 1;
        }
    }
}

/// Exact `ln p(w) = ln sum_z p(z | alpha) prod_i phi_{z_i, w_i}` by visiting
/// all `K^N` assignments, with `p(z | alpha)` the Dirichlet-multinomial
/// `Γ(a0)/Γ(a0+N) prod_k Γ(alpha_k+n_k)/Γ(alpha_k)`. For tests and validation
/// of the estimators on tiny documents; refuses with
/// [`HeldOutError::TooManyAssignments`] when `K^N` exceeds
/// [`EXACT_ENUMERATION_LIMIT`].
pub fn exact_log_likelihood(doc: &[u32], phi_by_word: &[f64], alpha: &[f64]) -> Result<f64, HeldOutError> {
    let topics = Topics::new(phi_by_word, alpha)?;
    topics.check_document(doc)?;
    let mut total = LogSumExp::new();
    enumerate_assignments(doc, &topics, |log_joint, _| {
        total.add(log_joint);
    })?;
    Ok(total.value())
}

/// Exact posterior mean of a document's topic shares given its tokens,
/// `E[theta | w] = sum_z p(z | w) (n_k(z) + alpha_k) / (N + a0)`, by the same
/// enumeration as [`exact_log_likelihood`] (and the same limit). An empty
/// document gets the prior mean `alpha_k / a0`.
pub fn exact_posterior_mean_shares(
    observed: &[u32],
    phi_by_word: &[f64],
    alpha: &[f64],
) -> Result<Vec<f64>, HeldOutError> {
    let topics = Topics::new(phi_by_word, alpha)?;
    topics.check_document(observed)?;
    let denominator = observed.len() as f64 + topics.alpha_sum;
    let mut total = LogSumExp::new();
    let mut weighted_shares = vec![0.0; topics.n_topics];
    enumerate_assignments(observed, &topics, |log_joint, counts| {
        let (rescale, weight) = total.add(log_joint);
        for ((share, &count), &alpha) in weighted_shares.iter_mut().zip(counts).zip(topics.alpha) {
            *share = *share * rescale + weight * (f64::from(count) + alpha) / denominator;
        }
    })?;
    for share in &mut weighted_shares {
        *share /= total.scaled_sum;
    }
    Ok(weighted_shares)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dirichlet_multinomial_prior_matches_the_reference_fixture() {
        // Source: METHODS.md section 8 (scipy gammaln): alpha = (0.3, 0.7),
        // documents with topic counts (2, 1) and (1, 2): log p(z) =
        // -5.911821919455785.
        let prior = DirichletMultinomialPrior::new(&[0.3, 0.7], 3);
        let log_prior = prior.log_prior(&[2, 1]) + prior.log_prior(&[1, 2]);
        assert!((log_prior - -5.911821919455785).abs() < 1e-10, "{log_prior}");
        // Source: METHODS.md section 8: lgamma(0.5), lgamma(10).
        assert!((ln_gamma(0.5) - 0.5723649429247).abs() < 1e-12);
        assert!((ln_gamma(10.0) - 12.801827480081469).abs() < 1e-12);
    }
}
