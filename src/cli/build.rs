//! `themata build`: raw documents in, corpus file out.

use themata::model::corpus_file::save_corpus;

use super::common::build_corpus;
use super::{BuildArgs, Failure};

/// Runs `themata build`.
pub fn run(args: BuildArgs) -> Result<(), Failure> {
    let (corpus, _summary) = build_corpus(
        &args.inputs,
        &args.input,
        &args.tokenizer,
        &args.vocabulary,
        args.quiet,
    )?;
    save_corpus(&corpus, &args.out)?;
    if !args.quiet {
        say!("wrote {}", args.out.display())?;
    }
    Ok(())
}
