//! themata: topic models for document collections.
//!
//! The pipeline runs text → tokens → vocabulary → corpus → sampler → model →
//! report. Each stage is a module owning its types; the `themata` binary only
//! parses options, wires the stages together and prints.
//!
//! ```
//! use themata::corpus::Corpus;
//! use themata::fit::{fit, FitSettings, PriorSpec};
//! use themata::vocab::Vocabulary;
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

pub mod bench;
pub mod coherence;
pub mod compare;
pub mod corpus;
pub mod fit;
pub mod format;
pub mod heldout;
pub mod memory;
pub mod model;
pub mod priors;
pub mod read;
pub mod report;
pub mod sampler;
pub mod score;
pub mod settings;
pub mod sweep;
pub mod synthetic;
pub mod tokenize;
pub mod uncertainty;
pub mod vocab;
