//! Fuzz target `run_config`: see `themata::testbed::fuzz_checks::run_config`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| themata_fuzz::fuzz_checks::run_config(bytes));
