//! `themata fit`: corpus file in, model folder out; also continuing a saved
//! model and resuming a run from its checkpoint.

use std::path::PathBuf;

use themata::fitting::{fit, warm};
use themata::model::Model;
use themata::model::corpus_file::load_corpus;
use themata::model::folder::{self, checkpoint_path};
use themata::model::format::StagedFolder;
use themata::model::summary::FitSummary;
use themata::settings::{self, FitOptions};

use super::common::{print_fit_line, sample, score_holdout, split_for_holdout, warm_start_model};
use super::{Failure, FitArgs, ranks};

/// How `fit` was asked to start.
enum Start {
    Fresh(PathBuf),
    Continue(PathBuf),
    Resume(PathBuf),
}

/// Runs `themata fit`; under an MPI launcher (with the `mpi` feature), as
/// one rank of the job: every rank fits, rank 0 alone writes and prints.
pub fn run(args: FitArgs) -> Result<(), Failure> {
    ranks::as_rank(|place| fit(args, place))
}

fn fit(mut args: FitArgs, place: Option<ranks::Place>) -> Result<(), Failure> {
    let root = place.is_none_or(|place| place.is_root());
    args.quiet |= !root;
    if place.is_some() {
        if args.fit.threads.is_none() {
            args.fit.threads = ranks::default_threads();
        }
        ranks::use_threads(settings::resolve_threads(args.fit.threads)?);
    }
    let start = match (&args.corpus, &args.continue_from, &args.resume) {
        (Some(corpus), None, None) => Start::Fresh(corpus.clone()),
        (None, Some(dir), None) => Start::Continue(dir.clone()),
        (None, None, Some(dir)) => Start::Resume(dir.clone()),
        _ => {
            return Err(Failure::bad_input(anyhow::anyhow!(
                "give exactly one of CORPUS, --continue DIR or --resume DIR"
            )));
        }
    };
    let mut heldout = None;
    let (mut model, out, threads) = match &start {
        Start::Fresh(corpus_path) => {
            let out = args.out.clone().ok_or_else(|| {
                Failure::bad_input(anyhow::anyhow!("--out DIR is required when fitting a corpus"))
            })?;
            let plan = args.fit.resolve()?;
            let previous = warm_start_model(&plan)?;
            let corpus = load_corpus(corpus_path)?;
            let (train, held) = split_for_holdout(corpus, &plan, false)?;
            heldout = held;
            let model = match &previous {
                Some(previous) => warm::start_warm(train, &plan.settings, previous)?.0,
                None => fit::start(train, &plan.settings)?,
            };
            (model, out, plan.threads)
        }
        Start::Continue(dir) => {
            refuse_changed_settings(&args.fit)?;
            let sweeps = args.fit.iterations.ok_or_else(|| {
                Failure::bad_input(anyhow::anyhow!(
                    "--continue needs --iterations N (the sweeps to add)"
                ))
            })?;
            let mut model = folder::load_model(dir)?;
            fit::extend(&mut model, sweeps)?;
            (
                model,
                args.out.clone().unwrap_or_else(|| dir.clone()),
                settings::resolve_threads(args.fit.threads)?,
            )
        }
        Start::Resume(dir) => {
            refuse_changed_settings(&args.fit)?;
            if args.fit.iterations.is_some() {
                return Err(Failure::bad_input(anyhow::anyhow!(
                    "--resume finishes the interrupted run as planned; --iterations cannot change it"
                )));
            }
            let checkpoint = checkpoint_path(dir);
            if !checkpoint.is_file() {
                return Err(Failure::bad_input(anyhow::anyhow!(
                    "{}: no checkpoint to resume from; checkpoints are written by `fit --checkpoint-every N`",
                    checkpoint.display()
                )));
            }
            (
                Model::load(&checkpoint)?,
                dir.clone(),
                settings::resolve_threads(args.fit.threads)?,
            )
        }
    };
    // Refuse an unusable output folder before sampling, not after.
    if root {
        drop(StagedFolder::begin(&out)?);
    }
    let checkpoint = args
        .fit
        .checkpoint_every
        .map(|every| (every, checkpoint_path(&out)));
    let timing = sample(&mut model, threads, checkpoint, args.quiet)?;
    if !root {
        return Ok(());
    }
    let mut summary = FitSummary::new(
        &model,
        threads,
        timing.sampling_seconds,
        timing.tokens_per_second(),
    )
    .with_peak_rss(themata::testbed::memory::peak_rss_bytes())
    .with_ranks(ranks::summary());
    if let Some(held) = &heldout {
        summary = summary.with_heldout(score_holdout(&model, held, threads)?);
    }
    folder::write_model_folder(&out, &model, &summary)?;
    if !args.quiet {
        print_fit_line(&summary, &out)?;
    }
    Ok(())
}

/// Continuing and resuming keep the model's own settings.
fn refuse_changed_settings(options: &FitOptions) -> Result<(), Failure> {
    let fixed = FitOptions {
        iterations: None,
        threads: None,
        checkpoint_every: None,
        ..options.clone()
    };
    if options.holdout.is_some() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--holdout applies when a fit starts; a continued or resumed fit keeps its documents"
        )));
    }
    if fixed != FitOptions::default() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "a continued or resumed fit keeps the model's topics, priors, seed and schedule; only --iterations (with --continue), --threads and --checkpoint-every may be given"
        )));
    }
    Ok(())
}
