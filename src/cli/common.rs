//! What several subcommands share: building a corpus with its printed
//! summary, fitting with a progress bar and checkpoints, held-out scoring,
//! and the lines printed after a fit. Subcommand files import this module,
//! never each other.

use std::ops::ControlFlow;
use std::path::{Path, PathBuf};

use themata::evaluate::score;
use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::fitting::fit::{self, FitTiming};
use themata::fitting::warm::{self, WarmStart};
use themata::ingest::corpus::{self, BuildSettings, BuildSummary, Corpus, CorpusError};
use themata::model::Model;
use themata::model::folder;
use themata::model::format::FormatError;
use themata::model::format::StagedFolder;
use themata::model::summary::FitSummary;
use themata::publish::names::TopicNames;
use themata::report::numbers::Numbers;
use themata::report::{
    self, DocumentLayout, DocumentView, ListingFormat, ListingPlan, TopicListing, WordLimit,
};
use themata::settings::{FitPlan, InputOptions, StartFrom, TokenizerOptions, VocabularyOptions};

use super::Failure;
use super::progress::SweepProgress;

/// Skipped documents listed one by one before the rest are only counted.
const DIAGNOSTICS_SHOWN: usize = 20;

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
        split_every: input.split_every()?,
    };
    let (corpus, summary) = match corpus::build(inputs, &settings) {
        Ok(built) => built,
        Err(CorpusError::Empty { summary }) => {
            // The examples explain the failure, so they are printed even
            // when quiet; the error repeats the counts per reason.
            print_diagnostics(&summary);
            return Err(CorpusError::Empty { summary }.into());
        }
        Err(other) => return Err(other.into()),
    };
    if !quiet {
        print_diagnostics(&summary);
        for warning in &summary.warnings {
            eprintln!("themata: warning: {warning}");
        }
    }
    if !quiet {
        print_summary(&summary)?;
    }
    if input.is_strict() && !summary.diagnostics.is_empty() {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{} document(s) skipped and --strict is set; fix the inputs listed above or drop --strict",
            summary.diagnostics.len()
        )));
    }
    Ok((corpus, summary))
}

pub fn print_diagnostics(summary: &BuildSummary) {
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

fn print_summary(summary: &BuildSummary) -> Result<(), Failure> {
    let skipped: usize = summary.skipped.values().sum();
    let reasons = if summary.skipped.is_empty() {
        String::new()
    } else {
        format!(" ({})", summary.skipped_reasons())
    };
    let split = if summary.documents_split > 0 {
        format!(" ({} cut into chunks)", summary.documents_split)
    } else {
        String::new()
    };
    say!(
        "documents: {} read{split}, {} kept, {} skipped{}",
        summary.documents_read,
        summary.documents_kept,
        skipped,
        reasons
    )?;
    let pruning = &summary.pruning;
    say!(
        "tokens: {} kept of {}; vocabulary: {} words of {} seen (dropped: {} too rare, {} too common, {} over the cap, {} listed)",
        summary.tokens,
        summary.tokens_before_pruning,
        summary.vocabulary,
        pruning.words_seen,
        pruning.too_rare,
        pruning.too_common,
        pruning.over_cap,
        pruning.dropped_by_list
    )?;
    Ok(())
}

/// `n` and the noun, plural unless `n` is 1 (`1 thread`, `2 threads`).
pub fn count(n: usize, noun: &str) -> String {
    if n == 1 {
        format!("1 {noun}")
    } else {
        format!("{n} {noun}s")
    }
}

/// Parses a credible-interval probability strictly between 0 and 1.
pub fn parse_level(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(level) if level > 0.0 && level < 1.0 => Ok(level),
        _ => Err(format!(
            "`{text}` is not a probability strictly between 0 and 1 (e.g. 0.9)"
        )),
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
    if let Some(outcome) = super::ranks::sample(model, threads, &checkpoint, quiet) {
        return outcome;
    }
    let pool = themata::thread_pool(threads).map_err(Failure::system)?;
    let mut progress = SweepProgress::new(model.target, quiet);
    let mut checkpoint_error = None;
    let timing = pool.install(|| {
        fit::run_to_target(model, &mut |event| progress.update(event), &mut |model| {
            checkpoint_if_due(model, &checkpoint, &mut checkpoint_error)
        })
    });
    progress.finish();
    match checkpoint_error {
        Some(err) => Err(Failure::system(err)),
        None => Ok(timing?),
    }
}

/// After a sweep: writes the checkpoint when one is due (every `every`
/// sweeps, never after the last, which the model folder gets), atomically,
/// so a run killed meanwhile leaves the previous one. A failed write is kept
/// in `failed` and stops the run.
pub fn checkpoint_if_due(
    model: &Model,
    checkpoint: &Option<(u64, PathBuf)>,
    failed: &mut Option<FormatError>,
) -> ControlFlow<()> {
    let Some((every, path)) = checkpoint else {
        return ControlFlow::Continue(());
    };
    if model.iterations_done.is_multiple_of(*every)
        && model.iterations_done < model.target
        && let Err(err) = model.save(path)
    {
        *failed = Some(err);
        return ControlFlow::Break(());
    }
    ControlFlow::Continue(())
}

/// Splits off the `--holdout` documents (none when the fraction is 0).
/// With `stable`, each document's side depends on its id alone (runs under a
/// run root, whose gate compares nights); else exactly round(F x D)
/// documents chosen by the seed.
pub fn split_for_holdout(
    corpus: Corpus,
    plan: &FitPlan,
    stable: bool,
) -> Result<(Corpus, Option<Corpus>), Failure> {
    if plan.holdout <= 0.0 {
        return Ok((corpus, None));
    }
    let mask = if stable {
        score::stable_holdout_mask(&corpus, plan.holdout)
    } else {
        score::holdout_mask(&corpus, plan.holdout, plan.settings.seed)
    };
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
pub fn score_holdout(model: &Model, held: &Corpus, threads: usize) -> Result<score::HeldOutScore, Failure> {
    let pool = themata::thread_pool(threads).map_err(Failure::system)?;
    let settings = score::ScoreSettings {
        seed: model.seed,
        ..score::ScoreSettings::default()
    };
    pool.install(|| score::score_heldout(model, &score::corpus_documents(held), &settings))
        .map_err(Failure::system)
}

/// A fitted model with what `run` reports of its fit.
pub struct Fitted {
    pub model: Model,
    pub timing: FitTiming,
    /// The documents `holdout` kept out, and their score.
    pub heldout: Option<(Corpus, score::HeldOutScore)>,
    /// What a warm start kept and drew.
    pub warm: Option<WarmStart>,
}

/// Fits a model with a progress bar on a worker pool (used by `run`): from
/// `previous` when given (a warm start), else at random; scores the
/// `holdout` documents when asked. With `plan.checkpoint_every` it writes
/// checkpoints to `checkpoint`, and when one is already there from an
/// interrupted run of the same corpus and settings, it finishes that run
/// from it (to the bytes an uninterrupted run gives).
pub fn fit_model(
    corpus: Corpus,
    plan: &FitPlan,
    previous: Option<&Model>,
    stable_split: bool,
    checkpoint: &Path,
    quiet: bool,
) -> Result<Fitted, Failure> {
    let (train, held) = split_for_holdout(corpus, plan, stable_split)?;
    let (mut model, warm) = match previous {
        Some(previous) => {
            let (model, warm) = warm::start_warm(train, &plan.settings, previous)?;
            (model, Some(warm))
        }
        None => (fit::start(train, &plan.settings)?, None),
    };
    let checkpointing = plan
        .checkpoint_every
        .map(|every| (every, checkpoint.to_path_buf()));
    if checkpointing.is_some() && checkpoint.is_file() {
        match Model::load(checkpoint) {
            Ok(saved) if same_run(&saved, &model) => {
                if !quiet {
                    eprintln!(
                        "themata: resuming from {} (sweep {} of {})",
                        checkpoint.display(),
                        saved.iterations_done,
                        saved.target
                    );
                }
                model = saved;
            }
            Ok(_) => eprintln!(
                "themata: warning: {} was written by a run of other inputs or settings; starting afresh (it will be replaced)",
                checkpoint.display()
            ),
            Err(err) => eprintln!(
                "themata: warning: cannot resume from {}: {err}; starting afresh (it will be replaced)",
                checkpoint.display()
            ),
        }
    }
    let timing = sample(&mut model, plan.threads, checkpointing, quiet)?;
    let heldout = match held {
        Some(held) => {
            let score = score_holdout(&model, &held, plan.threads)?;
            Some((held, score))
        }
        None => None,
    };
    Ok(Fitted {
        model,
        timing,
        heldout,
        warm,
    })
}

/// The model a `start_from` folder names (`published` needs a run root and
/// is resolved by the caller).
pub fn warm_start_model(plan: &FitPlan) -> Result<Option<Model>, Failure> {
    match &plan.start_from {
        None => Ok(None),
        Some(StartFrom::Folder(dir)) => Ok(Some(folder::load_model(dir)?)),
        Some(StartFrom::Published) => Err(Failure::bad_input(anyhow::anyhow!(
            "start_from = \"published\" needs a run root: set `root` in the [publish] section, or name a model folder"
        ))),
    }
}

/// Whether `saved` is a checkpoint of the run that starts as `fresh`: the
/// same corpus, seed, topics, schedule, target and fixed priors, not yet
/// finished.
fn same_run(saved: &Model, fresh: &Model) -> bool {
    saved.corpus == fresh.corpus
        && saved.seed == fresh.seed
        && saved.n_topics() == fresh.n_topics()
        && saved.schedule == fresh.schedule
        && saved.target == fresh.target
        && saved.iterations_done < saved.target
        && (saved.schedule.learn_alpha || saved.priors.alpha == fresh.priors.alpha)
        && (saved.schedule.learn_beta || saved.priors.beta == fresh.priors.beta)
}

/// What was fitted, and a warning when the trace has not levelled off.
pub fn print_fit_line(summary: &FitSummary, out: &Path) -> Result<(), Failure> {
    say!(
        "fitted {} topics to {} tokens in {} sweeps: log-likelihood {:.1}, {:.0} token updates/s; wrote {}",
        summary.topics,
        summary.tokens,
        summary.iterations,
        summary.log_likelihood,
        summary.tokens_per_second,
        out.display()
    )?;
    if let Some(perplexity) = summary.heldout_perplexity {
        say!("held-out perplexity: {perplexity:.2} (document completion)")?;
    }
    print_convergence(summary)
}

/// Prints the learned priors' summary and warns when not converged (stderr).
pub fn print_convergence(summary: &FitSummary) -> Result<(), Failure> {
    if summary.learned_alpha {
        let alpha: Vec<String> = summary.alpha.iter().map(|a| format!("{a:.3}")).collect();
        say!(
            "learned alpha: [{}] (sum {:.3})",
            alpha.join(", "),
            summary.alpha.iter().sum::<f64>()
        )?;
    }
    if summary.learned_beta {
        let beta = match &summary.beta {
            serde_json::Value::Number(number) => number
                .as_f64()
                .map_or_else(|| number.to_string(), |beta| Numbers::default().text(beta)),
            other => other.to_string(),
        };
        say!("learned beta: {beta}")?;
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
    Ok(())
}

/// The long document listing a run writes.
const DOCUMENTS_FILE: &str = "documents.tsv";
/// The wide document listing a run writes (one row per document).
const WIDE_DOCUMENTS_FILE: &str = "documents-wide.tsv";

/// Writes a run's listings into its staged folder: `topics.tsv` and the
/// documents in both layouts, with the editors' names when given. Returns the topic listings for the printed
/// table.
pub fn stage_listings(
    staged: &StagedFolder,
    model: &Model,
    top_words: usize,
    listing: &ListingPlan,
    names: Option<&TopicNames>,
) -> Result<Vec<TopicListing>, Failure> {
    let mut topics =
        report::topic_listings(model, WordLimit::Top(top_words), DEFAULT_LEVEL).map_err(Failure::system)?;
    if let Some(names) = names {
        report::name_topics(&mut topics, names);
    }
    let mut topics_tsv = Vec::new();
    report::write_topics(&mut topics_tsv, &topics, ListingFormat::Tsv, listing.numbers)
        .map_err(Failure::system)?;
    staged.write("topics.tsv", &topics_tsv)?;
    let rows = report::document_rows(model, listing.selection, DEFAULT_LEVEL, listing.merge_chunks)
        .map_err(Failure::system)?;
    let view = DocumentView::of(listing, model.n_topics()).with_names(names);
    for (name, layout) in [
        (DOCUMENTS_FILE, DocumentLayout::Long),
        (WIDE_DOCUMENTS_FILE, DocumentLayout::Wide),
    ] {
        let mut tsv = Vec::new();
        report::write_documents(&mut tsv, &rows, ListingFormat::Tsv, &view.with_layout(layout))
            .map_err(Failure::system)?;
        staged.write(name, &tsv)?;
    }
    Ok(topics)
}

/// Prints a run's topic table and, when documents carry labels, how well
/// their top topics agree with them.
pub fn print_run_report(
    topics: &[TopicListing],
    summary: &FitSummary,
    listing: &ListingPlan,
) -> Result<(), Failure> {
    let mut table = Vec::new();
    report::write_topics(&mut table, topics, ListingFormat::Table, listing.numbers)
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
    Ok(())
}
