//! Support for benchmarks and tests: corpora drawn from the LDA generative
//! process with the truth kept ([`synthetic`]), the process's resident
//! memory ([`memory`]), and the measurements behind `themata bench`
//! ([`bench`], [`warm_start`]), and the checks the fuzz targets and their
//! property tests run on arbitrary bytes ([`fuzz_checks`]).

pub mod bench;
pub mod fuzz_checks;
pub mod memory;
pub mod synthetic;
pub mod warm_start;
