//! `themata fit`: corpus file in, model folder out.

use std::path::Path;

use themata::corpus::Corpus;
use themata::fit::{self, FitTiming};
use themata::format::{OUTPUT_MARKER, StagedFolder};
use themata::model::Model;
use themata::report::FitSummary;
use themata::settings::FitPlan;

use super::progress::SweepProgress;
use super::{Failure, FitArgs};

/// The model file inside a model folder.
pub const MODEL_FILE: &str = "model.bin";

/// Runs `themata fit`.
pub fn run(args: FitArgs) -> Result<(), Failure> {
    let plan = args.fit.resolve()?;
    let corpus = Corpus::load(&args.corpus)?;
    let (model, timing) = fit_model(corpus, &plan, args.quiet)?;
    let summary = FitSummary::new(
        &model,
        plan.threads,
        timing.sampling_seconds,
        timing.tokens_per_second(),
    );
    let staged = StagedFolder::begin(&args.out)?;
    stage_model(&staged, &model, &summary)?;
    staged.commit()?;
    if !args.quiet {
        print_fit_line(&summary, &args.out);
    }
    Ok(())
}

/// Fits with a progress bar on a worker pool of `plan.threads` threads.
pub fn fit_model(corpus: Corpus, plan: &FitPlan, quiet: bool) -> Result<(Model, FitTiming), Failure> {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(plan.threads)
        .build()
        .map_err(Failure::system)?;
    let mut progress = SweepProgress::new(plan.settings.iterations, quiet);
    let result = pool.install(|| fit::fit(corpus, &plan.settings, &mut |event| progress.update(event)));
    progress.finish();
    Ok(result?)
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

/// One line saying what was fitted.
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
}
