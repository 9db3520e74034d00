//! `themata build`: raw documents in, corpus file out.

use std::path::PathBuf;
use themata::model::corpus_file::save_corpus;

use themata::ingest::corpus::{self, BuildSettings, BuildSummary, Corpus};
use themata::settings::{InputOptions, TokenizerOptions, VocabularyOptions};

use super::{BuildArgs, Failure};

/// Skipped documents listed one by one before the rest are only counted.
const DIAGNOSTICS_SHOWN: usize = 20;

/// Runs `themata build`.
pub fn run(args: BuildArgs) -> Result<(), Failure> {
    let (corpus, summary) = build_corpus(
        &args.inputs,
        &args.input,
        &args.tokenizer,
        &args.vocabulary,
        args.quiet,
    )?;
    save_corpus(&corpus, &args.out)?;
    if !args.quiet {
        println!("wrote {}", args.out.display());
    }
    let _ = summary;
    Ok(())
}

/// Resolves the option groups, builds the corpus, prints the summary (unless
/// quiet) and applies strict mode. Shared with `themata run`.
pub fn build_corpus(
    inputs: &[PathBuf],
    input: &InputOptions,
    tokenizer: &TokenizerOptions,
    vocabulary: &VocabularyOptions,
    quiet: bool,
) -> Result<(Corpus, BuildSummary), Failure> {
    let settings = BuildSettings {
        read: input.resolve()?,
        tokenizer: tokenizer.resolve()?,
        prune: vocabulary.resolve()?,
    };
    let (corpus, summary) = corpus::build(inputs, &settings)?;
    print_diagnostics(&summary);
    if !quiet {
        print_summary(&summary);
    }
    if input.is_strict() && !summary.diagnostics.is_empty() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{} document(s) skipped and --strict is set; fix the inputs listed above or drop --strict",
            summary.diagnostics.len()
        )));
    }
    Ok((corpus, summary))
}

fn print_diagnostics(summary: &BuildSummary) {
    for diagnostic in summary.diagnostics.iter().take(DIAGNOSTICS_SHOWN) {
        eprintln!("themata: skipped: {diagnostic}");
    }
    if summary.diagnostics.len() > DIAGNOSTICS_SHOWN {
        eprintln!(
            "themata: skipped: ... and {} more",
            summary.diagnostics.len() - DIAGNOSTICS_SHOWN
        );
    }
}

fn print_summary(summary: &BuildSummary) {
    let skipped: usize = summary.skipped.values().sum();
    let reasons: Vec<String> = summary
        .skipped
        .iter()
        .map(|(reason, count)| format!("{reason} {count}"))
        .collect();
    let reasons = if reasons.is_empty() {
        String::new()
    } else {
        format!(" ({})", reasons.join(", "))
    };
    println!(
        "documents: {} read, {} kept, {} skipped{}",
        summary.documents_read, summary.documents_kept, skipped, reasons
    );
    let pruning = &summary.pruning;
    println!(
        "tokens: {} kept of {}; vocabulary: {} words of {} seen (dropped: {} too rare, {} too common, {} over the cap, {} listed)",
        summary.tokens,
        summary.tokens_before_pruning,
        summary.vocabulary,
        pruning.words_seen,
        pruning.too_rare,
        pruning.too_common,
        pruning.over_cap,
        pruning.dropped_by_list
    );
}
