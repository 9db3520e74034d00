//! Writes documents drawn from the LDA generative process as JSON Lines
//! (`{"id": "d1", "text": "w3 w17 ..."}`), for measuring whole commands on
//! raw text (`benches/assign.sh`):
//!
//!     cargo run --release --example synthetic_documents -- TOKENS WORDS TOPICS MEAN_LENGTH ALPHA_SUM > docs.jsonl
//!
//! Word frequencies are Zipf-like, alpha = ALPHA_SUM/K (10 in the bench's
//! corpora; 1 gives documents of few topics) and beta = 0.01, document
//! lengths uniform on [MEAN/2, 3 MEAN/2], the seed fixed. Words are named `w0`, `w1`, ... (build them with
//! `--min-length 1 --stopwords none`).

use std::io::{BufWriter, Write};
use std::process::ExitCode;

use themata::testbed::synthetic::{UrnCorpusSettings, urn_corpus};

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [tokens, words, topics, mean, alpha_sum] = args.as_slice() else {
        eprintln!("usage: synthetic_documents TOKENS WORDS TOPICS MEAN_LENGTH ALPHA_SUM > docs.jsonl");
        return ExitCode::from(2);
    };
    let (Ok(tokens), Ok(words), Ok(topics), Ok(mean), Ok(alpha_sum)) = (
        tokens.parse(),
        words.parse(),
        topics.parse::<usize>(),
        mean.parse(),
        alpha_sum.parse::<f64>(),
    ) else {
        eprintln!(
            "synthetic_documents: TOKENS, WORDS, TOPICS and MEAN_LENGTH must be whole numbers, ALPHA_SUM a number"
        );
        return ExitCode::from(2);
    };
    let (corpus, _) = urn_corpus(&UrnCorpusSettings {
        n_tokens: tokens,
        n_words: words,
        n_topics: topics,
        mean_doc_len: mean,
        alpha: alpha_sum / topics as f64,
        beta: 0.01,
        zipf_exponent: 1.0,
        seed: 0xD0C5,
    });
    let stdout = std::io::stdout();
    let mut out = BufWriter::new(stdout.lock());
    for doc_idx in 0..corpus.n_docs() {
        let text: Vec<&str> = corpus
            .doc_tokens(doc_idx)
            .iter()
            .map(|&word| corpus.vocabulary.word(word))
            .collect();
        let line = serde_json::json!({ "id": format!("d{}", doc_idx + 1), "text": text.join(" ") });
        if writeln!(out, "{line}").is_err() {
            return ExitCode::SUCCESS;
        }
    }
    match out.flush() {
        Ok(()) => ExitCode::SUCCESS,
        Err(_) => ExitCode::SUCCESS,
    }
}
