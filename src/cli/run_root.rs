//! `themata run` under a run root (a config with `root` in `[publish]`):
//! one run at a time (the root's lock), a new dated run folder staged
//! beside its final place, topics matched to the published model so they
//! keep their ids, the quality gate, and only then the pointer moved and
//! old runs pruned. A run killed at any moment leaves the pointer on the
//! previous complete run; the next run removes what it left behind.

use std::path::{Path, PathBuf};
use std::time::Instant;

use themata::evaluate::coherence::CoherenceSettings;
use themata::evaluate::drift::{self, Drift};
use themata::evaluate::score::{self, ScoreSettings};
use themata::model::Model;
use themata::model::corpus_file::encode_corpus;
use themata::model::folder::{self, stage_model};
use themata::model::format::StagedFolder;
use themata::model::summary::FitSummary;
use themata::publish::clock::UtcTime;
use themata::publish::counters::Counters;
use themata::publish::gate::{self, GateFigures};
use themata::publish::identity::{self, Identities};
use themata::publish::lock::{Holder, RootLock};
use themata::publish::names::{self, TopicNames};
use themata::publish::record::{RUN_RECORD_VERSION, RunCounts, RunRecord, RunScores, StageTime, TopicRecord};
use themata::publish::root::{REJECTED_SUFFIX, RunRoot};
use themata::report::ListingPlan;
use themata::settings::{
    FitPlan, GateOptions, InputOptions, PublishPlan, StartFrom, TokenizerOptions, VocabularyOptions,
};

use super::Failure;
use super::common::{Fitted, build_corpus, fit_model, print_fit_line, print_run_report, stage_listings};
use super::context::stage_report;

/// The run log: one line per stage, on stderr (unless quiet) and in
/// `log.txt` in the run folder.
struct RunLog {
    lines: Vec<String>,
    quiet: bool,
    started: Instant,
    stages: Vec<StageTime>,
    stage_started: Instant,
}

impl RunLog {
    fn new(quiet: bool) -> RunLog {
        RunLog {
            lines: Vec::new(),
            quiet,
            started: Instant::now(),
            stages: Vec::new(),
            stage_started: Instant::now(),
        }
    }

    fn line(&mut self, stage: &str, text: impl AsRef<str>) {
        let line = format!(
            "{} [{:>7.1}s] {stage}: {}",
            UtcTime::now().rfc3339(),
            self.started.elapsed().as_secs_f64(),
            text.as_ref()
        );
        if !self.quiet {
            eprintln!("themata: {stage}: {}", text.as_ref());
        }
        self.lines.push(line);
    }

    /// A warning: always on stderr, and in the log.
    fn warn(&mut self, text: impl AsRef<str>) {
        eprintln!("themata: warning: {}", text.as_ref());
        self.lines.push(format!(
            "{} [{:>7.1}s] warning: {}",
            UtcTime::now().rfc3339(),
            self.started.elapsed().as_secs_f64(),
            text.as_ref()
        ));
    }

    /// Closes the current stage, recording its time.
    fn stage_done(&mut self, stage: &str) {
        self.stages.push(StageTime {
            stage: stage.to_string(),
            seconds: self.stage_started.elapsed().as_secs_f64(),
        });
        self.stage_started = Instant::now();
    }

    fn text(&self) -> String {
        let mut text = self.lines.join("\n");
        text.push('\n');
        text
    }
}

/// Everything a run under a root needs from the config and command line.
pub struct RootRun<'a> {
    pub config: &'a Path,
    pub inputs: &'a [PathBuf],
    pub input: &'a InputOptions,
    pub tokenizer: &'a TokenizerOptions,
    pub vocabulary: &'a VocabularyOptions,
    pub plan: &'a FitPlan,
    pub publish: &'a PublishPlan,
    pub gate: &'a GateOptions,
    pub top_words: usize,
    pub listing: &'a ListingPlan,
    pub quiet: bool,
}

/// Appends `text` to the log of a committed run folder (lines written
/// after the folder moved into place).
fn append_log(dir: &Path, text: &str) -> Result<(), Failure> {
    use std::io::Write;
    let path = dir.join("log.txt");
    let mut file = std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .map_err(|err| Failure::system(anyhow::anyhow!("{}: {err}", path.display())))?;
    file.write_all(text.as_bytes())
        .and_then(|()| file.sync_all())
        .map_err(|err| Failure::system(anyhow::anyhow!("{}: {err}", path.display())))
}

/// Runs under the root; exit 0 when published, 1 when the gate refused.
pub fn run(job: RootRun<'_>) -> Result<(), Failure> {
    if job.gate.max_perplexity_rise.is_some() && job.plan.holdout <= 0.0 {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{}: gate.max_perplexity_rise compares held-out perplexity, so it needs held-out documents; set `holdout` in the [fit] section",
            job.config.display()
        )));
    }
    let started = UtcTime::now();
    let root = RunRoot::open(&job.publish.root)?;
    let lock = RootLock::acquire(&root.lock(), &Holder::this_process(job.config))?;
    let mut log = RunLog::new(job.quiet);
    if let Some(holder) = &lock.taken_over {
        log.warn(format!(
            "took over the lock of {}: it was left by {holder}, which ended without finishing",
            root.path().display()
        ));
    }
    for leftover in root.remove_leftovers()? {
        log.warn(format!(
            "removed {}, left by a run that did not finish",
            leftover.display()
        ));
    }
    let mut counters = Counters::load(&root.counters())?;
    let number = counters.next_run;
    counters.next_run += 1;
    counters.save(&root.counters())?;
    let name = RunRoot::run_name(started, number);
    let previous_name = root.published()?;
    log.line(
        "start",
        format!(
            "run {name} under {} (published: {})",
            root.path().display(),
            previous_name.as_deref().unwrap_or("nothing yet")
        ),
    );
    for run in root.runs()? {
        if previous_name.as_ref().is_some_and(|published| &run > published) {
            log.warn(format!(
                "run {run} is newer than the published run but was never published (it ended before the pointer moved); it is left as it is"
            ));
        }
    }
    let previous = match &previous_name {
        Some(published) => Some(folder::load_model(&root.run_dir(published))?),
        None => None,
    };
    let names = match TopicNames::load(&root.names()) {
        Ok(names) => Some(names),
        Err(err) if err.is_bad_input() => {
            log.warn(format!("{err}; this run goes on without names and suggests none"));
            None
        }
        Err(err) => return Err(err.into()),
    };
    let staged = StagedFolder::begin(&root.run_dir(&name))?;
    log.stage_done("prepare");

    let (corpus, build_summary) =
        build_corpus(job.inputs, job.input, job.tokenizer, job.vocabulary, job.quiet)?;
    let skipped: usize = build_summary.skipped.values().sum();
    log.line(
        "build",
        format!(
            "{} documents read, {} kept, {} skipped; {} tokens, {} words",
            build_summary.documents_read,
            build_summary.documents_kept,
            skipped,
            build_summary.tokens,
            build_summary.vocabulary
        ),
    );
    staged.write("corpus.bin", &encode_corpus(&corpus, &staged.path("corpus.bin"))?)?;
    let build_json = serde_json::to_vec_pretty(&build_summary).map_err(Failure::system)?;
    staged.write("build.json", &build_json)?;
    log.stage_done("build");

    let extra_start;
    let warm_from: Option<&Model> = match &job.plan.start_from {
        None => None,
        Some(StartFrom::Published) => {
            if previous.is_none() {
                log.line("fit", "nothing is published yet, so the fit starts cold");
            }
            previous.as_ref()
        }
        Some(StartFrom::Folder(dir)) => {
            extra_start = folder::load_model(dir)?;
            Some(&extra_start)
        }
    };
    let Fitted {
        mut model,
        timing,
        heldout,
        warm,
    } = fit_model(corpus, job.plan, warm_from, true, &root.checkpoint(), job.quiet)?;
    if let Some(warm) = &warm {
        log.line(
            "fit",
            format!(
                "warm start: {} documents kept their topics, {} were drawn against the previous topics",
                warm.kept_documents, warm.folded_documents
            ),
        );
    }
    log.line(
        "fit",
        format!(
            "{} topics, {} sweeps, log-likelihood {:.1}, {:.1} s of sampling",
            model.n_topics(),
            model.iterations_done,
            model.trace.last().map_or(f64::NAN, |&(_, value)| value),
            timing.sampling_seconds
        ),
    );
    log.stage_done("fit");

    let published_perplexity = match (&previous, &heldout) {
        (Some(previous), Some((held, _))) => match score::align_corpus(held, &previous.corpus.vocabulary) {
            Some(documents) => {
                let settings = ScoreSettings {
                    seed: model.seed,
                    ..ScoreSettings::default()
                };
                let pool = themata::thread_pool(job.plan.threads).map_err(Failure::system)?;
                pool.install(|| score::score_heldout(previous, &documents, &settings))
                    .map_err(Failure::system)?
                    .heldout_perplexity
            }
            None => None,
        },
        _ => None,
    };
    let training: Vec<&[u32]> = (0..model.corpus.n_docs())
        .map(|doc| model.corpus.doc_tokens(doc))
        .collect();
    let coherence = score::coherence_report(
        &model,
        &training,
        "training documents",
        &CoherenceSettings::default(),
        DEFAULT_COHERENCE_WORDS,
    );
    let (mean_npmi, mean_umass) = match &coherence {
        Ok(report) => (Some(report.npmi), Some(report.umass)),
        Err(err) => {
            log.warn(format!("coherence could not be computed: {err}"));
            (None, None)
        }
    };
    let perplexity = heldout.as_ref().and_then(|(_, score)| score.heldout_perplexity);
    log.line(
        "score",
        format!(
            "held-out perplexity {} (published model on the same documents: {}), mean NPMI {}",
            perplexity.map_or("not measured".into(), |p| format!("{p:.2}")),
            published_perplexity.map_or("n/a".into(), |p| format!("{p:.2}")),
            mean_npmi.map_or("n/a".into(), |n| format!("{n:.3}"))
        ),
    );
    log.stage_done("score");

    let drift: Option<Drift> = previous
        .as_ref()
        .map(|previous| drift::drift(previous, &model, job.publish.match_threshold));
    let identities: Identities = match (&previous, &drift) {
        (Some(previous), Some(drift)) => {
            identity::assign_ids(drift, &previous.topic_ids, counters.next_topic_id)
        }
        _ => identity::first_ids(model.n_topics(), counters.next_topic_id),
    };
    // Reserve the fresh ids before any file holds them.
    counters.next_topic_id = identities.next_id;
    counters.save(&root.counters())?;
    model.topic_ids = identities.ids.clone();
    let matched = identities.predecessors.iter().filter(|p| p.is_some()).count();
    log.line(
        "match",
        match &drift {
            Some(_) => format!(
                "{matched} of {} topics kept their ids, {} new, {} retired",
                model.n_topics(),
                model.n_topics() - matched,
                identities.retired.len()
            ),
            None => format!(
                "first run under this root: topics get ids {}..{}",
                identities.ids[0],
                identities.next_id - 1
            ),
        },
    );
    log.stage_done("match");

    let mut summary = FitSummary::new(
        &model,
        job.plan.threads,
        timing.sampling_seconds,
        timing.tokens_per_second(),
    )
    .with_peak_rss(themata::testbed::memory::peak_rss_bytes());
    if let Some((_, score)) = &heldout {
        summary = summary.with_heldout(score.clone());
    }
    let topics = stage_listings(&staged, &model, job.top_words, job.listing, names.as_ref())?;
    stage_model(&staged, &model, &summary)?;
    let figures = GateFigures {
        matched_share: drift.as_ref().map(Drift::matched_share),
        perplexity,
        published_perplexity,
        mean_npmi,
    };
    let verdict = gate::evaluate(job.gate, &figures);
    log.line("gate", &verdict.reason);
    log.stage_done("write");

    let name_of = |id: u32| names.as_ref().and_then(|names| names.get(id)).map(str::to_string);
    let topic_records: Vec<TopicRecord> = (0..model.n_topics())
        .map(|index| {
            let id = identities.ids[index];
            let entry = drift.as_ref().map(|drift| &drift.topics[index]);
            TopicRecord {
                id,
                index,
                name: name_of(id),
                predecessor: identities.predecessors[index],
                distance: entry.and_then(|entry| entry.distance),
                prevalence_before: entry.and_then(|entry| entry.prevalence_before),
                prevalence_after: model.topic_token_shares()[index],
                top_words: entry.map_or_else(
                    || drift::top_words(&model, index, drift::DRIFT_TOP_WORDS),
                    |entry| entry.top_words.clone(),
                ),
                words_gained: entry.map_or_else(Vec::new, |entry| entry.words_gained.clone()),
                words_lost: entry.map_or_else(Vec::new, |entry| entry.words_lost.clone()),
            }
        })
        .collect();
    let record = RunRecord {
        format_version: RUN_RECORD_VERSION,
        themata_version: env!("CARGO_PKG_VERSION").to_string(),
        run: name.clone(),
        config: job.config.display().to_string(),
        started: started.rfc3339(),
        finished: UtcTime::now().rfc3339(),
        previous: previous_name.clone(),
        published: verdict.passed,
        stages: log.stages.clone(),
        counts: RunCounts {
            documents_read: build_summary.documents_read,
            documents_kept: build_summary.documents_kept,
            documents_skipped: skipped,
            skipped_by_reason: build_summary.skipped.clone(),
            documents_held_out: heldout.as_ref().map_or(0, |(held, _)| held.n_docs()),
            tokens: model.corpus.n_tokens(),
            vocabulary: model.corpus.vocabulary.len(),
            topics: model.n_topics(),
        },
        scores: RunScores {
            heldout_perplexity: perplexity,
            published_heldout_perplexity: published_perplexity,
            mean_npmi,
            mean_umass,
            log_likelihood: summary.log_likelihood,
            convergence: summary.convergence.relative_change,
        },
        warm_start: warm,
        match_threshold: job.publish.match_threshold,
        gate: verdict.clone(),
        topics: topic_records,
        retired: identities.retired.clone(),
    };
    let report = themata::report::html::ReportContext {
        title: name.clone(),
        names: names.as_ref(),
        record: Some(&record),
        build: Some(&build_summary),
        heldout_perplexity: perplexity,
        top_words: job.top_words,
        level: themata::evaluate::uncertainty::DEFAULT_LEVEL,
        warnings: Vec::new(),
    };
    stage_report(&staged, &model, &report)?;
    let mut record_json = serde_json::to_vec_pretty(&record).map_err(Failure::system)?;
    record_json.push(b'\n');
    staged.write("run.json", &record_json)?;
    staged.write("log.txt", log.text().as_bytes())?;

    if !verdict.passed {
        let kept = staged.commit_as(&format!("{name}{REJECTED_SUFFIX}"))?;
        folder::remove_file_if_any(&root.checkpoint())?;
        eprintln!("themata: {}", verdict.reason);
        return Err(Failure::gate_failed(format!(
            "the quality gate refused run {name}; it is kept in {} and {} stays published",
            kept.display(),
            previous_name.as_deref().unwrap_or("nothing")
        )));
    }
    let run_dir = staged.commit()?;
    folder::remove_file_if_any(&root.checkpoint())?;
    root.point_to(&name)?;
    let mut after = RunLog {
        lines: Vec::new(),
        ..log
    };
    after.line(
        "publish",
        format!("{} now points to {name}", root.pointer().display()),
    );
    for removed in root.prune(job.publish.keep)? {
        after.line(
            "prune",
            format!("removed run {removed} (keeping the newest {})", job.publish.keep),
        );
    }
    if names.is_some() {
        let suggestions: Vec<(u32, String)> = record
            .topics
            .iter()
            .filter(|topic| topic.predecessor.is_none())
            .map(|topic| {
                (
                    topic.id,
                    topic
                        .top_words
                        .iter()
                        .take(3)
                        .cloned()
                        .collect::<Vec<_>>()
                        .join(", "),
                )
            })
            .collect();
        match names::append_suggestions(&root.names(), &suggestions, &format!("run {name}")) {
            Ok(0) => {}
            Ok(added) => after.line(
                "names",
                format!(
                    "suggested names for {added} new topics in {}",
                    root.names().display()
                ),
            ),
            Err(err) => after.warn(format!("could not add name suggestions: {err}")),
        }
    }
    append_log(&run_dir, &after.text())?;
    print_run_report(&topics, &summary, job.listing)?;
    if !job.quiet {
        print_fit_line(&summary, &run_dir)?;
    }
    drop(lock);
    Ok(())
}

/// Top words per topic the coherence of a run is computed over.
const DEFAULT_COHERENCE_WORDS: usize = 10;
