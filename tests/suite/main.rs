//! The integration test suite: one binary, split by subject.

mod util;

mod cli;
mod determinism;
mod formats;
mod worked_examples;
