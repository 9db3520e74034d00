//! `themata run`: build, fit and report as a config file describes, into one
//! output folder that is replaced whole only when everything succeeded.

use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::model::folder::{checkpoint_path, remove_checkpoint, stage_model};
use themata::model::format::StagedFolder;
use themata::model::summary::FitSummary;
use themata::report::{self, DocumentLayout, DocumentView, ListingFormat, WordLimit};
use themata::settings::RunConfig;

use super::common::{build_corpus, fit_model, print_fit_line};
use super::{Failure, RunArgs};

/// The long document listing a run writes.
const DOCUMENTS_FILE: &str = "documents.tsv";
/// The wide document listing a run writes (one row per document).
const WIDE_DOCUMENTS_FILE: &str = "documents-wide.tsv";

/// Runs `themata run`.
pub fn run(args: RunArgs) -> Result<(), Failure> {
    let config = RunConfig::load(&args.config)?;
    let input = config.input.overlay(args.input);
    let tokenizer = config.tokenizer.overlay(args.tokenizer);
    let vocabulary = config.vocabulary.overlay(args.vocabulary);
    let fit = config.fit.overlay(args.fit);
    let output = config.output.overlay(args.output);
    let listing = config.listing.overlay(args.listing).resolve()?;
    let plan = fit.resolve()?;
    let inputs = input.paths.clone().unwrap_or_default();
    if inputs.is_empty() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{}: no inputs; set `paths` in the [input] section",
            args.config.display()
        )));
    }
    let out_dir = output.dir.clone().ok_or_else(|| {
        Failure::bad_input(anyhow::anyhow!(
            "{}: no output folder; set `dir` in the [output] section or pass --out",
            args.config.display()
        ))
    })?;
    let top_words = output.top_words.unwrap_or(themata::settings::DEFAULT_TOP_WORDS);
    let staged = StagedFolder::begin(&out_dir)?;

    let (corpus, build_summary) = build_corpus(&inputs, &input, &tokenizer, &vocabulary, args.quiet)?;
    let corpus_bytes = themata::model::corpus_file::encode_corpus(&corpus, &staged.path("corpus.bin"))?;
    staged.write("corpus.bin", &corpus_bytes)?;
    let (model, timing, heldout) = fit_model(corpus, &plan, &checkpoint_path(&out_dir), args.quiet)?;
    let mut summary = FitSummary::new(
        &model,
        plan.threads,
        timing.sampling_seconds,
        timing.tokens_per_second(),
    )
    .with_peak_rss(themata::testbed::memory::peak_rss_bytes());
    if let Some(score) = heldout {
        summary = summary.with_heldout(score);
    }

    let topics =
        report::topic_listings(&model, WordLimit::Top(top_words), DEFAULT_LEVEL).map_err(Failure::system)?;
    let mut topics_tsv = Vec::new();
    report::write_topics(&mut topics_tsv, &topics, ListingFormat::Tsv, listing.numbers)
        .map_err(Failure::system)?;
    staged.write("topics.tsv", &topics_tsv)?;
    let rows = report::document_rows(&model, listing.selection, DEFAULT_LEVEL, listing.merge_chunks)
        .map_err(Failure::system)?;
    let view = DocumentView::of(&listing, model.n_topics());
    for (name, layout) in [
        (DOCUMENTS_FILE, DocumentLayout::Long),
        (WIDE_DOCUMENTS_FILE, DocumentLayout::Wide),
    ] {
        let mut tsv = Vec::new();
        report::write_documents(&mut tsv, &rows, ListingFormat::Tsv, &view.with_layout(layout))
            .map_err(Failure::system)?;
        staged.write(name, &tsv)?;
    }
    let build_json = serde_json::to_vec_pretty(&build_summary).map_err(Failure::system)?;
    staged.write("build.json", &build_json)?;
    stage_model(&staged, &model, &summary)?;
    staged.commit()?;
    remove_checkpoint(&out_dir)?;

    let mut table = Vec::new();
    report::write_topics(&mut table, &topics, ListingFormat::Table, listing.numbers)
        .map_err(Failure::system)?;
    say_raw!("{}", String::from_utf8_lossy(&table))?;
    if let Some(agreement) = &summary.label_agreement {
        say!(
            "label agreement: normalised mutual information {:.3} between each document's top topic and its label ({} labelled documents, {} labels)",
            agreement.nmi,
            agreement.documents,
            agreement.labels
        )?;
    }
    if !args.quiet {
        print_fit_line(&summary, &out_dir)?;
    }
    Ok(())
}
