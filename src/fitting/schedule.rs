//! The plan of a fit that outlives its start: which sampler sweeps, on how
//! many shards, when priors are learned, samples kept and the trace
//! recorded. Stored in the model (through the model file's own shapes, see
//! `model::file`), so continuing and resuming follow the same plan.

use serde::Deserialize;

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

/// Up to this many topics `auto` picks the exact sampler, above it the
/// Metropolis-Hastings one. The exact kernel's cost per token grows with K,
/// the MH kernel's does not, but MH needs two to three times the sweeps to
/// reach the same log-likelihood. On the bench corpora exact draws win at
/// K = 100 (MH is no faster than the reference there in time to a given
/// log-likelihood) and MH wins at K = 1000; 300 lies between the two and
/// was not measured more finely.
pub const EXACT_UP_TO_TOPICS: usize = 300;

/// The sampler a user asks for (`--sampler`): a kind, or `auto`, which
/// picks one by the number of topics.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum SamplerChoice {
    /// `exact` up to 300 topics, `metropolis` above.
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

impl SamplerChoice {
    /// The sampler used for `n_topics` topics.
    pub fn resolve(self, n_topics: usize) -> SamplerKind {
        match self {
            SamplerChoice::Reference => SamplerKind::Reference,
            SamplerChoice::Exact => SamplerKind::Exact,
            SamplerChoice::Metropolis => SamplerKind::Metropolis,
            SamplerChoice::Sparse => SamplerKind::Sparse,
            SamplerChoice::Auto if n_topics <= EXACT_UP_TO_TOPICS => SamplerKind::Exact,
            SamplerChoice::Auto => SamplerKind::Metropolis,
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
