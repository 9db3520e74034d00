//! Support for benchmarks and tests: corpora drawn from the LDA generative
//! process with the truth kept ([`synthetic`]), the process's resident
//! memory ([`memory`]), and the measurements behind `themata bench`
//! ([`bench`], [`warm_start`]).

pub mod bench;
pub mod memory;
pub mod synthetic;
pub mod warm_start;
