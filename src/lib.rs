//! themata: topic models for document collections.
//!
//! The pipeline runs text → tokens → vocabulary → corpus → sampler → model →
//! report. Each stage is a module owning its types; the `themata` binary only
//! parses options, wires the stages together and prints.
//!
//! ```
//! use themata::ingest::corpus::Corpus;
//! use themata::fitting::fit::{fit, FitSettings, PriorSpec};
//! use themata::ingest::vocab::Vocabulary;
//!
//! let vocabulary = Vocabulary::from_parts(
//!     vec!["tide".into(), "quay".into(), "seed".into(), "soil".into()],
//!     vec![4, 4, 4, 4],
//!     vec![2, 2, 2, 2],
//! );
//! let corpus = Corpus::from_documents(
//!     vocabulary,
//!     vec![vec![0, 1, 0, 1], vec![2, 3, 2, 3], vec![0, 1, 0, 1], vec![2, 3, 2, 3]],
//! );
//! let settings = FitSettings {
//!     alpha: PriorSpec::Learn,
//!     ..FitSettings::fixed(2, 50, 0.1, 0.01, 1)
//! };
//! let (model, _timing) = fit(corpus, &settings, &mut |_| {}).unwrap();
//! assert_eq!(model.n_topics(), 2);
//! ```

pub mod evaluate;
pub mod fitting;
pub mod ingest;
pub mod model;
pub mod publish;
pub mod report;
pub mod settings;
pub mod testbed;

/// The worker pool of `threads` threads that a command runs its parallel
/// work on (the one place pools are built, so every command sizes them
/// alike). Results never depend on the thread count.
pub fn thread_pool(threads: usize) -> Result<rayon::ThreadPool, rayon::ThreadPoolBuildError> {
    rayon::ThreadPoolBuilder::new().num_threads(threads).build()
}
