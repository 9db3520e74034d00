//! The integration test suite: one binary, split by subject.

mod util;

mod browser;
mod cli;
mod determinism;
mod formats;
mod geweke;
mod golden;
mod hardening;
mod learning;
#[cfg(feature = "mpi")]
mod mpi;
mod nightly;
mod report;
mod samplers;
mod scoring;
mod worked_examples;
