//! Fuzz target `tokenizer`: see `themata::testbed::fuzz_checks::tokenizer`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| themata_fuzz::fuzz_checks::tokenizer(bytes));
