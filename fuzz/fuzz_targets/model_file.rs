//! Fuzz target `model_file`: see `themata::testbed::fuzz_checks::model_file`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| themata_fuzz::fuzz_checks::model_file(bytes));
