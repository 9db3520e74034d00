//! Gives every document of a corpus file a label and a date, for measuring
//! the HTML report at scale with its time and label sections:
//!
//!     cargo run --release --example dated_corpus -- IN.bin OUT.bin
//!
//! Document d gets the label `group-(d mod 20)` and a date that steps one day
//! every 28 documents from 2015-01-01 (about ten years for 100,000
//! documents); every 1,000th document gets no date and every 1,000th from
//! the 500th an unreadable one, so the report's counts are exercised too.

use std::path::PathBuf;
use std::process::ExitCode;

use themata::model::corpus_file::{load_corpus, save_corpus};

/// The calendar date `days` after 2015-01-01 (enough for the example).
fn date_after(days: usize) -> String {
    let lengths = |year: usize| {
        let leap = year.is_multiple_of(4) && (!year.is_multiple_of(100) || year.is_multiple_of(400));
        [
            31,
            if leap { 29 } else { 28 },
            31,
            30,
            31,
            30,
            31,
            31,
            30,
            31,
            30,
            31,
        ]
    };
    let (mut year, mut left) = (2015, days);
    loop {
        for (month, &length) in lengths(year).iter().enumerate() {
            if left < length {
                return format!("{year:04}-{:02}-{:02}", month + 1, left + 1);
            }
            left -= length;
        }
        year += 1;
    }
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [input, output] = args.as_slice() else {
        eprintln!("usage: dated_corpus IN.bin OUT.bin");
        return ExitCode::from(2);
    };
    let mut corpus = match load_corpus(&PathBuf::from(input)) {
        Ok(corpus) => corpus,
        Err(err) => {
            eprintln!("dated_corpus: {err}");
            return ExitCode::from(2);
        }
    };
    for (index, document) in corpus.documents.iter_mut().enumerate() {
        document.label = Some(format!("group-{:02}", index % 20));
        document.date = match index % 1000 {
            0 => None,
            500 => Some("someday".into()),
            _ => Some(date_after(index / 28)),
        };
    }
    match save_corpus(&corpus, &PathBuf::from(output)) {
        Ok(()) => {
            println!(
                "wrote {output}: {} documents with labels and dates",
                corpus.n_docs()
            );
            ExitCode::SUCCESS
        }
        Err(err) => {
            eprintln!("dated_corpus: {err}");
            ExitCode::from(3)
        }
    }
}
