//! Fuzz target `corpus_file`: see `themata::testbed::fuzz_checks::corpus_file`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| themata_fuzz::fuzz_checks::corpus_file(bytes));
