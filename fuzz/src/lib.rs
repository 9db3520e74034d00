//! Nothing of its own: the fuzz targets call `themata::testbed::fuzz_checks`,
//! the same checks the property tests of `tests/suite/hardening.rs` run.
pub use themata::testbed::fuzz_checks;
