//! `themata run`: build, fit and report as a config file describes, into one
//! output folder that is replaced whole only when everything succeeded.

use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::model::folder::stage_model;
use themata::model::format::StagedFolder;
use themata::model::summary::FitSummary;
use themata::report::{self, ListingFormat, WordLimit};
use themata::settings::RunConfig;

use super::common::{build_corpus, fit_model, print_fit_line};
use super::{Failure, RunArgs};

/// Runs `themata run`.
pub fn run(args: RunArgs) -> Result<(), Failure> {
    let config = RunConfig::load(&args.config)?;
    let input = config.input.overlay(args.input);
    let tokenizer = config.tokenizer.overlay(args.tokenizer);
    let vocabulary = config.vocabulary.overlay(args.vocabulary);
    let fit = config.fit.overlay(args.fit);
    let output = config.output.overlay(args.output);
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
    let (model, timing, heldout) = fit_model(corpus, &plan, args.quiet)?;
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
    let documents = report::document_listings(&model, DEFAULT_LEVEL).map_err(Failure::system)?;
    let mut topics_tsv = Vec::new();
    report::write_topics(&mut topics_tsv, &topics, ListingFormat::Tsv).map_err(Failure::system)?;
    staged.write("topics.tsv", &topics_tsv)?;
    let mut documents_tsv = Vec::new();
    report::write_documents(&mut documents_tsv, &documents, ListingFormat::Tsv).map_err(Failure::system)?;
    staged.write("documents.tsv", &documents_tsv)?;
    let build_json = serde_json::to_vec_pretty(&build_summary).map_err(Failure::system)?;
    staged.write("build.json", &build_json)?;
    stage_model(&staged, &model, &summary)?;
    staged.commit()?;

    let mut table = Vec::new();
    report::write_topics(&mut table, &topics, ListingFormat::Table).map_err(Failure::system)?;
    print!("{}", String::from_utf8_lossy(&table));
    if let Some(agreement) = report::label_agreement(&documents) {
        println!(
            "label agreement: normalised mutual information {:.3} between each document's top topic and its label ({} labelled documents, {} labels)",
            agreement.nmi, agreement.documents, agreement.labels
        );
    }
    if !args.quiet {
        print_fit_line(&summary, &out_dir);
    }
    Ok(())
}
