//! `themata sweep`: fit several numbers of topics and recommend one.

use std::io::IsTerminal;
use std::path::PathBuf;
use themata::model::corpus_file::load_corpus;

use themata::evaluate::k_search::{self, KSearchSettings};
use themata::fitting::fit::PriorSpec;
use themata::model::folder::SUMMARY_FILE;
use themata::model::format::StagedFolder;
use themata::settings::{AT_LEAST_ONE, FitOptions, PrecisionOptions, ShareRange, TOPICS};

use super::Failure;
use super::common::count;

/// Arguments of `themata sweep`.
#[derive(clap::Args, Debug)]
#[command(
    after_help = "Recommendation rule: the smallest K whose mean held-out perplexity (document completion, same held-out documents for every run) is within 2% of the lowest mean held-out perplexity among the candidates. Stability is the mean Jensen-Shannon distance of Hungarian-matched topics between runs with different seeds (lower is more stable)."
)]
pub struct SweepArgs {
    /// Corpus file written by `themata build`
    #[arg(value_name = "CORPUS")]
    pub corpus: PathBuf,
    /// Candidate numbers of topics, comma-separated
    #[arg(long, value_name = "K,K,...", value_delimiter = ',', required = true, value_parser = TOPICS.parser::<usize>())]
    pub topics: Vec<usize>,
    /// Seeds fitted per candidate (1, 2, ... S); two or more measure stability
    #[arg(long, value_name = "S", default_value_t = 2, value_parser = AT_LEAST_ONE.parser::<u64>())]
    pub seeds: u64,
    /// Fraction of documents held out for perplexity
    #[arg(long, value_name = "F", default_value_t = 0.2, value_parser = ShareRange::OPEN.parser())]
    pub holdout: f64,
    /// Gibbs sweeps per fit
    #[arg(long, value_name = "N", default_value_t = 500, value_parser = AT_LEAST_ONE.parser::<u64>())]
    pub iterations: u64,
    /// Document-topic prior of each fit (as for `fit`)
    #[arg(long, value_name = "learn|X", default_value = "learn")]
    pub alpha: PriorSpec,
    /// Topic-word prior of each fit (as for `fit`)
    #[arg(long, value_name = "learn|X", default_value = "learn")]
    pub beta: PriorSpec,
    /// Worker threads (runs are spread over them) [default: all cores]
    #[arg(long, value_name = "T", value_parser = AT_LEAST_ONE.parser::<usize>())]
    pub threads: Option<usize>,
    /// Folder for sweep.tsv and summary.json (the table as JSON)
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    #[command(flatten)]
    pub precision: PrecisionOptions,
}

/// Runs `themata sweep`.
pub fn run(args: SweepArgs) -> Result<(), Failure> {
    if args.seeds == 0 {
        return Err(Failure::bad_input(anyhow::anyhow!("--seeds must be at least 1")));
    }
    if !(args.holdout > 0.0 && args.holdout < 1.0) {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--holdout must be above 0 and below 1 (perplexity needs held-out documents)"
        )));
    }
    let mut topics = args.topics.clone();
    topics.sort_unstable();
    topics.dedup();
    // Validate through the one definition of the fit options.
    let plan = FitOptions {
        topics: Some(topics[0]),
        iterations: Some(args.iterations),
        alpha: Some(args.alpha.clone()),
        beta: Some(args.beta.clone()),
        threads: args.threads,
        ..FitOptions::default()
    }
    .resolve()?;
    let corpus = load_corpus(&args.corpus)?;
    let settings = KSearchSettings {
        topics,
        seeds: (1..=args.seeds).collect(),
        holdout: args.holdout,
        fit: plan.settings,
    };
    let staged = StagedFolder::begin(&args.out)?;
    let pool = themata::thread_pool(plan.threads).map_err(Failure::system)?;
    eprintln!(
        "themata: sweeping {} x {} on {}",
        count(settings.topics.len(), "candidate"),
        count(settings.seeds.len(), "seed"),
        count(plan.threads, "thread")
    );
    // One line per finished fit, on a terminal only (logs get the table).
    let on_terminal = std::io::stderr().is_terminal();
    let report_fit = |done: k_search::FitDone| {
        if on_terminal {
            eprintln!(
                "themata: fit {} of {} done: K = {}, seed {}, held-out perplexity {:.1}",
                done.done, done.total, done.topics, done.seed, done.heldout_perplexity
            );
        }
    };
    let report = pool
        .install(|| k_search::run_k_search(&corpus, &settings, &report_fit))
        .map_err(|err| match err {
            k_search::KSearchError::Scoring { .. } => Failure::system(err),
            _ => Failure::bad_input(err),
        })?;
    let numbers = args.precision.resolve();
    let tsv = k_search::to_tsv(&report, &|value| numbers.text(value));
    staged.write("sweep.tsv", tsv.as_bytes())?;
    let mut json = serde_json::to_value(&report).map_err(Failure::system)?;
    numbers.round_json(&mut json);
    let json = serde_json::to_vec_pretty(&json).map_err(Failure::system)?;
    staged.write(SUMMARY_FILE, &json)?;
    staged.commit()?;
    say!(
        "{:>6}  {:>12}  {:>8}  {:>7}  {:>7}  {:>9}",
        "topics",
        "perplexity",
        "sd",
        "npmi",
        "umass",
        "stability"
    )?;
    for row in &report.rows {
        say!(
            "{:>6}  {:>12.3}  {:>8.3}  {:>7.3}  {:>7.2}  {:>9}{}",
            row.topics,
            row.heldout_perplexity,
            row.perplexity_sd,
            row.npmi,
            row.umass,
            row.stability.map_or("-".to_string(), |s| format!("{s:.3}")),
            if row.topics == report.recommended_topics {
                "  <- recommended"
            } else {
                ""
            }
        )?;
    }
    say!(
        "recommended: {} topics ({}); wrote {}",
        report.recommended_topics,
        report.rule,
        args.out.display()
    )?;
    match report.recommended_at_edge {
        Some(k_search::RangeEdge::Largest) => eprintln!(
            "themata: warning: the recommended K is the largest candidate; the best K may be larger: sweep larger values too"
        ),
        Some(k_search::RangeEdge::Smallest) => eprintln!(
            "themata: warning: the recommended K is the smallest candidate; fewer topics may do as well: sweep smaller values too"
        ),
        None => {}
    }
    Ok(())
}
