//! Fitting, the second stage: a corpus becomes a model. [`fit`] checks the
//! settings against the corpus, runs the sweeps and keeps traces and
//! samples; [`priors`] learns alpha and beta; [`sampler`] holds the count
//! state and the sweeps themselves. Nothing here does file I/O.

pub mod distributed;
pub mod fit;
pub mod priors;
pub mod sampler;
pub mod schedule;
pub mod warm;
