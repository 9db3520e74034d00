//! `themata run`: build, fit and report as a config file describes, into one
//! output folder that is replaced whole only when everything succeeded.

use themata::model::folder::{checkpoint_path, remove_checkpoint, stage_model};
use themata::model::format::StagedFolder;
use themata::model::summary::FitSummary;
use themata::settings::{GateOptions, RunConfig};

use super::common::{
    Fitted, build_corpus, fit_model, print_fit_line, print_run_report, stage_listings, warm_start_model,
};
use super::context::stage_report;
use super::run_root::{self, RootRun};
use super::{Failure, RunArgs, ranks};

/// Runs `themata run`; under an MPI launcher (with the `mpi` feature), as
/// one rank of the job: every rank builds the corpus and fits, rank 0 alone
/// writes the output folder and prints. Run roots are refused there.
pub fn run(args: RunArgs) -> Result<(), Failure> {
    ranks::as_rank(|place| run_config(args, place))
}

fn run_config(mut args: RunArgs, place: Option<ranks::Place>) -> Result<(), Failure> {
    let root = place.is_none_or(|place| place.is_root());
    args.quiet |= !root;
    let config = RunConfig::load(&args.config)?;
    let input = config.input.overlay(args.input);
    let tokenizer = config.tokenizer.overlay(args.tokenizer);
    let vocabulary = config.vocabulary.overlay(args.vocabulary);
    let mut fit = config.fit.overlay(args.fit);
    // A rank's default share of the cores; a config file's `threads` stands.
    if place.is_some() && fit.threads.is_none() {
        fit.threads = ranks::default_threads();
    }
    let output = config.output.overlay(args.output);
    let listing = config.listing.overlay(args.listing).resolve()?;
    let plan = fit.resolve()?;
    if place.is_some() {
        ranks::use_threads(plan.threads);
    }
    let inputs = input.paths.clone().unwrap_or_default();
    if inputs.is_empty() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{}: no inputs; set `paths` in the [input] section",
            args.config.display()
        )));
    }
    let top_words = output.top_words.unwrap_or(themata::settings::DEFAULT_TOP_WORDS);
    let gate = config.gate.overlay(args.gate);
    gate.check()?;
    if let Some(publish) = config.publish.overlay(args.publish).resolve()? {
        if let Some(place) = place {
            return Err(Failure::bad_input(anyhow::anyhow!(
                "{}: a run root ([publish] root) is not supported on {} MPI ranks; fit with `mpirun ... themata run` into an [output] dir, or run the root on one process",
                args.config.display(),
                place.ranks
            )));
        }
        return run_root::run(RootRun {
            config: &args.config,
            inputs: &inputs,
            input: &input,
            tokenizer: &tokenizer,
            vocabulary: &vocabulary,
            plan: &plan,
            publish: &publish,
            gate: &gate,
            top_words,
            listing: &listing,
            quiet: args.quiet,
        });
    }
    if gate != GateOptions::default() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{}: a [gate] decides what a run root publishes; set `root` in the [publish] section or drop the gate",
            args.config.display()
        )));
    }
    let out_dir = output.dir.clone().ok_or_else(|| {
        Failure::bad_input(anyhow::anyhow!(
            "{}: no output folder; set `dir` in the [output] section (or `root` in [publish]) or pass --out",
            args.config.display()
        ))
    })?;
    let staged = StagedFolder::begin(&out_dir)?;

    let (corpus, build_summary) = build_corpus(&inputs, &input, &tokenizer, &vocabulary, args.quiet)?;
    let corpus_bytes = themata::model::corpus_file::encode_corpus(&corpus, &staged.path("corpus.bin"))?;
    staged.write("corpus.bin", &corpus_bytes)?;
    let previous = warm_start_model(&plan)?;
    let Fitted {
        model,
        timing,
        heldout,
        ..
    } = fit_model(
        corpus,
        &plan,
        previous.as_ref(),
        false,
        &checkpoint_path(&out_dir),
        args.quiet,
    )?;
    if !root {
        return Ok(());
    }
    let mut summary = FitSummary::new(
        &model,
        plan.threads,
        timing.sampling_seconds,
        timing.tokens_per_second(),
    )
    .with_peak_rss(themata::testbed::memory::peak_rss_bytes())
    .with_ranks(ranks::summary());
    if let Some((_, score)) = heldout {
        summary = summary.with_heldout(score);
    }
    let topics = stage_listings(&staged, &model, top_words, &listing, None)?;
    let report = themata::report::html::ReportContext {
        title: out_dir.file_name().map_or_else(
            || out_dir.display().to_string(),
            |name| name.to_string_lossy().into_owned(),
        ),
        names: None,
        record: None,
        build: Some(&build_summary),
        heldout_perplexity: summary.heldout_perplexity,
        top_words,
        level: themata::evaluate::uncertainty::DEFAULT_LEVEL,
        warnings: Vec::new(),
    };
    stage_report(&staged, &model, &report)?;
    let build_json = serde_json::to_vec_pretty(&build_summary).map_err(Failure::system)?;
    staged.write("build.json", &build_json)?;
    stage_model(&staged, &model, &summary)?;
    staged.commit()?;
    remove_checkpoint(&out_dir)?;
    print_run_report(&topics, &summary, &listing)?;
    if !args.quiet {
        print_fit_line(&summary, &out_dir)?;
    }
    Ok(())
}
