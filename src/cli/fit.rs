//! `themata fit`: corpus file in, model folder out; also continuing a saved
//! model and resuming a run from its checkpoint.

use std::ops::ControlFlow;
use std::path::{Path, PathBuf};
use themata::model::corpus_file::load_corpus;

use themata::evaluate::score;
use themata::fitting::fit::{self, FitTiming};
use themata::ingest::corpus::Corpus;
use themata::model::Model;
use themata::model::format::{OUTPUT_MARKER, StagedFolder};
use themata::report::FitSummary;
use themata::settings::{FitOptions, FitPlan};

use super::progress::SweepProgress;
use super::{Failure, FitArgs};

/// The model file inside a model folder.
pub const MODEL_FILE: &str = "model.bin";

/// Where the checkpoint of a run writing `out` lives: a file beside it.
pub fn checkpoint_path(out: &Path) -> PathBuf {
    let name = out
        .file_name()
        .map(|name| name.to_string_lossy().into_owned())
        .unwrap_or_else(|| "model".into());
    out.with_file_name(format!("{name}.checkpoint"))
}

/// How `fit` was asked to start.
enum Start {
    Fresh(PathBuf),
    Continue(PathBuf),
    Resume(PathBuf),
}

/// Runs `themata fit`.
pub fn run(args: FitArgs) -> Result<(), Failure> {
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
            let corpus = load_corpus(corpus_path)?;
            let (train, held) = split_for_holdout(corpus, &plan)?;
            heldout = held;
            (fit::start(train, &plan.settings)?, out, plan.threads)
        }
        Start::Continue(dir) => {
            refuse_changed_settings(&args.fit)?;
            let sweeps = args.fit.iterations.ok_or_else(|| {
                Failure::bad_input(anyhow::anyhow!(
                    "--continue needs --iterations N (the sweeps to add)"
                ))
            })?;
            let mut model = load_model(dir)?;
            fit::extend(&mut model, sweeps)?;
            (
                model,
                args.out.clone().unwrap_or_else(|| dir.clone()),
                threads_of(&args.fit)?,
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
            (Model::load(&checkpoint)?, dir.clone(), threads_of(&args.fit)?)
        }
    };
    // Refuse an unusable output folder before sampling, not after.
    drop(StagedFolder::begin(&out)?);
    let checkpoint = args.checkpoint_every.map(|every| (every, checkpoint_path(&out)));
    let timing = sample(&mut model, threads, checkpoint, args.quiet)?;
    let mut summary = FitSummary::new(
        &model,
        threads,
        timing.sampling_seconds,
        timing.tokens_per_second(),
    )
    .with_peak_rss(themata::testbed::memory::peak_rss_bytes());
    if let Some(held) = &heldout {
        summary = summary.with_heldout(score_holdout(&model, held, threads)?);
    }
    let staged = StagedFolder::begin(&out)?;
    stage_model(&staged, &model, &summary)?;
    staged.commit()?;
    let checkpoint = checkpoint_path(&out);
    if checkpoint.exists() {
        std::fs::remove_file(&checkpoint)
            .map_err(|err| Failure::system(anyhow::anyhow!("{}: {err}", checkpoint.display())))?;
    }
    if !args.quiet {
        print_fit_line(&summary, &out);
    }
    Ok(())
}

/// Continuing and resuming keep the model's own settings.
fn refuse_changed_settings(options: &FitOptions) -> Result<(), Failure> {
    let fixed = FitOptions {
        iterations: None,
        threads: None,
        ..options.clone()
    };
    if options.holdout.is_some() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--holdout applies when a fit starts; a continued or resumed fit keeps its documents"
        )));
    }
    if fixed != FitOptions::default() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "a continued or resumed fit keeps the model's topics, priors, seed and schedule; only --iterations (with --continue) and --threads may be given"
        )));
    }
    Ok(())
}

fn threads_of(options: &FitOptions) -> Result<usize, Failure> {
    match options.threads {
        Some(0) => Err(Failure::bad_input(anyhow::anyhow!("threads must be at least 1"))),
        Some(threads) => Ok(threads),
        None => Ok(std::thread::available_parallelism().map_or(1, |n| n.get())),
    }
}

/// Runs the model to its target on a pool of `threads` threads with a
/// progress bar; with `checkpoint = Some((every, path))`, saves the model to
/// `path` every `every` sweeps.
pub fn sample(
    model: &mut Model,
    threads: usize,
    checkpoint: Option<(u64, PathBuf)>,
    quiet: bool,
) -> Result<FitTiming, Failure> {
    if matches!(checkpoint, Some((0, _))) {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--checkpoint-every must be at least 1"
        )));
    }
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(Failure::system)?;
    let mut progress = SweepProgress::new(model.target, quiet);
    let mut checkpoint_error = None;
    let timing = pool.install(|| {
        fit::run_to_target(model, &mut |event| progress.update(event), &mut |model| {
            let Some((every, path)) = &checkpoint else {
                return ControlFlow::Continue(());
            };
            if model.iterations_done.is_multiple_of(*every)
                && model.iterations_done < model.target
                && let Err(err) = model.save(path)
            {
                checkpoint_error = Some(err);
                return ControlFlow::Break(());
            }
            ControlFlow::Continue(())
        })
    });
    progress.finish();
    match checkpoint_error {
        Some(err) => Err(Failure::system(err)),
        None => Ok(timing?),
    }
}

/// Splits off the `--holdout` documents (none when the fraction is 0).
fn split_for_holdout(corpus: Corpus, plan: &FitPlan) -> Result<(Corpus, Option<Corpus>), Failure> {
    if plan.holdout <= 0.0 {
        return Ok((corpus, None));
    }
    let mask = score::holdout_mask(&corpus, plan.holdout, plan.settings.seed);
    if !mask.iter().any(|&held| held) {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--holdout {} keeps no document out of {}; raise it or drop it",
            plan.holdout,
            corpus.n_docs()
        )));
    }
    let (train, held) = score::split_corpus(&corpus, &mask);
    Ok((train, Some(held)))
}

/// Held-out perplexity of the kept-out documents by document completion.
fn score_holdout(model: &Model, held: &Corpus, threads: usize) -> Result<score::HeldOutScore, Failure> {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(Failure::system)?;
    let settings = score::ScoreSettings {
        seed: model.seed,
        ..score::ScoreSettings::default()
    };
    pool.install(|| score::score_heldout(model, &score::corpus_documents(held), &settings))
        .map_err(Failure::system)
}

/// Fits a fresh model with a progress bar on a worker pool (used by `run`),
/// scoring the `--holdout` documents when asked.
pub fn fit_model(
    corpus: Corpus,
    plan: &FitPlan,
    quiet: bool,
) -> Result<(Model, FitTiming, Option<score::HeldOutScore>), Failure> {
    let (train, held) = split_for_holdout(corpus, plan)?;
    let mut model = fit::start(train, &plan.settings)?;
    let timing = sample(&mut model, plan.threads, None, quiet)?;
    let heldout = match &held {
        Some(held) => Some(score_holdout(&model, held, plan.threads)?),
        None => None,
    };
    Ok((model, timing, heldout))
}

/// Writes the model file and summary.json into a staged folder.
pub fn stage_model(staged: &StagedFolder, model: &Model, summary: &FitSummary) -> Result<(), Failure> {
    let bytes = model.encode(&staged.path(MODEL_FILE))?;
    staged.write(MODEL_FILE, &bytes)?;
    let mut json = serde_json::to_vec_pretty(summary).map_err(Failure::system)?;
    json.push(b'\n');
    staged.write(OUTPUT_MARKER, &json)?;
    Ok(())
}

/// Loads the model of a model folder.
pub fn load_model(dir: &Path) -> Result<Model, Failure> {
    let path = dir.join(MODEL_FILE);
    if !path.is_file() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{}: no model here (expected {}); pass a folder written by `themata fit` or `themata run`",
            dir.display(),
            MODEL_FILE
        )));
    }
    Ok(Model::load(&path)?)
}

/// What was fitted, and a warning when the trace has not levelled off.
pub fn print_fit_line(summary: &FitSummary, out: &Path) {
    println!(
        "fitted {} topics to {} tokens in {} sweeps: log-likelihood {:.1}, {:.0} token updates/s; wrote {}",
        summary.topics,
        summary.tokens,
        summary.iterations,
        summary.log_likelihood,
        summary.tokens_per_second,
        out.display()
    );
    if let Some(perplexity) = summary.heldout_perplexity {
        println!("held-out perplexity: {perplexity:.2} (document completion)");
    }
    print_convergence(summary);
}

/// Prints the learned priors' summary and warns when not converged (stderr).
pub fn print_convergence(summary: &FitSummary) {
    if summary.learned_alpha {
        let alpha: Vec<String> = summary.alpha.iter().map(|a| format!("{a:.3}")).collect();
        println!(
            "learned alpha: [{}] (sum {:.3})",
            alpha.join(", "),
            summary.alpha.iter().sum::<f64>()
        );
    }
    if summary.learned_beta {
        println!("learned beta: {}", summary.beta);
    }
    let convergence = &summary.convergence;
    if !convergence.converged {
        match convergence.relative_change {
            Some(change) => eprintln!(
                "themata: warning: the log-likelihood was still moving at the end (relative change {change:.2e} between halves of the post-burn-in trace, threshold {:.0e}); consider more iterations",
                convergence.threshold
            ),
            None => eprintln!(
                "themata: warning: too few log-likelihood points after burn-in to judge convergence; record more (--trace-every) or run longer"
            ),
        }
    }
}
