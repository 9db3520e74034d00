//! The plan of a fit that outlives its start: which sampler sweeps, on how
//! many shards, when priors are learned, samples kept and the trace
//! recorded. Stored in the model (through the model file's own shapes, see
//! `model::file`), so continuing and resuming follow the same plan.

use serde::Deserialize;

use crate::ingest::corpus::Corpus;

/// The sampler a model sweeps with: resolved from the user's
/// [`SamplerChoice`] when a fit starts, kept for the model's life.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SamplerKind {
    /// The plain O(K) collapsed Gibbs sweep on one thread (the oracle).
    Reference,
    /// Exact draws with cached coefficients, O(K) per token, over the block grid in parallel.
    Exact,
    /// Metropolis-Hastings steps with O(1) document and word proposals,
    /// over the block grid in parallel.
    Metropolis,
    /// Exact draws split into a document part and a prior part kept in a
    /// sum tree, O(document length + log K) per token, over the block grid
    /// in parallel.
    Sparse,
}

impl SamplerKind {
    /// The name used in options and summaries.
    pub fn name(self) -> &'static str {
        match self {
            SamplerKind::Reference => "reference",
            SamplerKind::Exact => "exact",
            SamplerKind::Metropolis => "metropolis",
            SamplerKind::Sparse => "sparse",
        }
    }

    /// The kind a name from [`SamplerKind::name`] stands for.
    pub fn from_name(name: &str) -> Option<SamplerKind> {
        [
            SamplerKind::Reference,
            SamplerKind::Exact,
            SamplerKind::Metropolis,
            SamplerKind::Sparse,
        ]
        .into_iter()
        .find(|kind| kind.name() == name)
    }

    /// Whether it runs on the block grid (all but the reference sweep).
    pub fn is_block_parallel(self) -> bool {
        self != SamplerKind::Reference
    }
}

/// What `auto` expects a kernel to cost, in nanoseconds of one thread per
/// token and per sweep of the reference's progress, for a corpus of this
/// shape: a cost model fitted to measured CPU time per token (see
/// ARCHITECTURE.md, "How `auto` picks"). The exact kernel is O(K); the
/// sparse one follows the topics a document can hold, at most min(L, K)
/// for mean document length L; the Metropolis-Hastings one is flat per
/// token but needs more sweeps than exact draws to reach the same held-out
/// perplexity, counted by `METROPOLIS_SWEEP_FACTOR`.
pub fn expected_cost(kind: SamplerKind, shape: &CorpusShape) -> f64 {
    let topics = shape.topics as f64;
    let length = shape.mean_document_length();
    match kind {
        SamplerKind::Reference | SamplerKind::Exact => 50.0 + 0.7 * topics,
        SamplerKind::Sparse => 140.0 + 0.35 * length.min(topics) + SPARSE_COST_PER_TOPIC * topics,
        SamplerKind::Metropolis => 170.0 * METROPOLIS_SWEEP_FACTOR,
    }
}

/// What each topic adds to the sparse kernel's cost per token: its sum tree
/// over K topics outgrows the caches as K grows. Fitted to its measured
/// excess over `140 + 0.35 min(L, K)` at L = 100: about 20 ns at K = 1000,
/// 48 at K = 3000 (CPU time per token) and 122 at K = 10,000 (wall time
/// per sweep against the MH kernel's, `themata bench --large-quality`).
pub const SPARSE_COST_PER_TOPIC: f64 = 0.012;

/// How many more sweeps than exact draws the Metropolis-Hastings kernel
/// needs to reach a held-out perplexity: measured 1.1 to 2 (more at small
/// K), taken as 1.5.
pub const METROPOLIS_SWEEP_FACTOR: f64 = 1.5;

/// The sampler a user asks for (`--sampler`): a kind, or `auto`, which
/// picks one by the corpus's shape ([`expected_cost`]).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum SamplerChoice {
    /// The kernel expected to reach a good model first, by mean document length and K.
    #[default]
    Auto,
    /// Exact draws with cached coefficients, parallel over blocks.
    Exact,
    /// Metropolis-Hastings with O(1) document and word proposals, parallel over blocks.
    Metropolis,
    /// Exact draws at O(document length + log K) per token, parallel over blocks.
    Sparse,
    /// The plain O(K) collapsed Gibbs sweep, on one thread.
    Reference,
}

/// What `auto` looks at: the size of the corpus and of the model.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CorpusShape {
    pub tokens: usize,
    pub documents: usize,
    /// Vocabulary size V.
    pub words: usize,
    /// Topics K.
    pub topics: usize,
}

impl CorpusShape {
    /// The shape of fitting `corpus` with `topics` topics.
    pub fn of(corpus: &Corpus, topics: usize) -> CorpusShape {
        CorpusShape {
            tokens: corpus.n_tokens(),
            documents: corpus.n_docs(),
            words: corpus.vocabulary.len(),
            topics,
        }
    }

    /// Tokens per document.
    pub fn mean_document_length(&self) -> f64 {
        self.tokens as f64 / self.documents.max(1) as f64
    }
}

impl SamplerChoice {
    /// The sampler used for a corpus of this shape.
    pub fn resolve(self, shape: &CorpusShape) -> SamplerKind {
        match self {
            SamplerChoice::Reference => SamplerKind::Reference,
            SamplerChoice::Exact => SamplerKind::Exact,
            SamplerChoice::Metropolis => SamplerKind::Metropolis,
            SamplerChoice::Sparse => SamplerKind::Sparse,
            // Ties go to the earlier kind: exact draws before MH.
            SamplerChoice::Auto => [SamplerKind::Exact, SamplerKind::Sparse, SamplerKind::Metropolis]
                .into_iter()
                .min_by(|a, b| expected_cost(*a, shape).total_cmp(&expected_cost(*b, shape)))
                .unwrap_or(SamplerKind::Exact),
        }
    }
}

/// The part of the fit settings that governs sweeps after the start; stored
/// in the model so that continuing and resuming follow the same plan.
#[derive(Clone, Debug, PartialEq)]
pub struct Schedule {
    /// The sweep used.
    pub sampler: SamplerKind,
    /// Shards the documents are cut into for parallel sweeps (1 for the
    /// reference sampler); fixed for the life of the model, so results never
    /// depend on the thread count.
    pub shards: u32,
    /// Sweeps before samples are kept and priors learned.
    pub burn_in: u64,
    /// Learn alpha (asymmetric) from the data.
    pub learn_alpha: bool,
    /// Learn beta (symmetric) from the data.
    pub learn_beta: bool,
    /// Learn the priors every this many sweeps after burn-in.
    pub learn_every: u64,
    /// Posterior samples kept at the end of the run.
    pub samples: u64,
    /// Sweeps between kept samples.
    pub lag: u64,
    /// Record the log-likelihood every this many sweeps.
    pub trace_every: u64,
}

#[cfg(test)]
mod tests {
    use super::*;

    fn shape(mean_length: usize, topics: usize) -> CorpusShape {
        CorpusShape {
            tokens: mean_length * 1000,
            documents: 1000,
            words: 20_000,
            topics,
        }
    }

    #[test]
    fn auto_follows_the_measured_crossovers() {
        // Source: this project's measurements of CPU time per token and of
        // time to quality (ARCHITECTURE.md, "How `auto` picks"); the cases
        // sit well inside each region, not on a boundary.
        let auto = |length, topics| SamplerChoice::Auto.resolve(&shape(length, topics));
        assert_eq!(auto(100, 10), SamplerKind::Exact);
        assert_eq!(auto(38, 100), SamplerKind::Exact);
        assert_eq!(auto(100, 100), SamplerKind::Exact);
        assert_eq!(auto(38, 1000), SamplerKind::Sparse);
        assert_eq!(auto(100, 1000), SamplerKind::Sparse);
        assert_eq!(auto(20, 300), SamplerKind::Sparse);
        assert_eq!(auto(2000, 1000), SamplerKind::Metropolis);
        assert_eq!(auto(2000, 10_000), SamplerKind::Metropolis);
        assert_eq!(auto(38, 3000), SamplerKind::Sparse);
        // At K = 10,000 (L = 100, 9M tokens) MH reached sparse's 300-sweep
        // held-out perplexity in 0.34 of its time (188.5 s against 548.8 s).
        assert_eq!(auto(100, 10_000), SamplerKind::Metropolis);
        // A choice other than auto is kept whatever the shape.
        assert_eq!(
            SamplerChoice::Sparse.resolve(&shape(2000, 10)),
            SamplerKind::Sparse
        );
    }
}
