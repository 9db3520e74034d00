//! Writes a corpus file drawn from the LDA generative process (the corpora
//! `themata bench` measures), for measurements of whole commands:
//!
//!     cargo run --release --example synthetic_corpus -- TOKENS WORDS TOPICS OUT.bin
//!
//! Documents are about 100 tokens long, word frequencies Zipf-like,
//! alpha = 10/K and beta = 0.01, with the bench's fixed seeds.

use std::path::PathBuf;
use std::process::ExitCode;

use themata::model::corpus_file::save_corpus;
use themata::testbed::bench::{Case, corpus_of};

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [tokens, words, topics, out] = args.as_slice() else {
        eprintln!("usage: synthetic_corpus TOKENS WORDS TOPICS OUT.bin");
        return ExitCode::from(2);
    };
    let (Ok(tokens), Ok(words), Ok(topics)) = (tokens.parse(), words.parse(), topics.parse()) else {
        eprintln!("synthetic_corpus: TOKENS, WORDS and TOPICS must be whole numbers");
        return ExitCode::from(2);
    };
    let corpus = corpus_of(&Case {
        tokens,
        words,
        topics,
        sweeps: 0,
    });
    match save_corpus(&corpus, &PathBuf::from(out)) {
        Ok(()) => {
            println!(
                "wrote {out}: {} documents, {} tokens",
                corpus.n_docs(),
                corpus.n_tokens()
            );
            ExitCode::SUCCESS
        }
        Err(err) => {
            eprintln!("synthetic_corpus: {err}");
            ExitCode::from(3)
        }
    }
}
