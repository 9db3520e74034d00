//! Fuzz target `json_lines`: see `themata::testbed::fuzz_checks::json_lines`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| themata_fuzz::fuzz_checks::json_lines(bytes));
