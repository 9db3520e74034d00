//! Fuzz target `csv_table`: see `themata::testbed::fuzz_checks::csv_table`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| themata_fuzz::fuzz_checks::csv_table(bytes));
