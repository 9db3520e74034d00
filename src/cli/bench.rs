//! `themata bench`: the fast samplers against the reference, printed as
//! tables of medians and ratios with the targets they are held to: token
//! updates per second on synthetic corpora, and time to a held-out
//! perplexity on synthetic corpora and on a corpus of real text when one is
//! given.

use std::io::{self, IsTerminal, Write};
use std::path::PathBuf;

use themata::fitting::schedule::SamplerKind;
use themata::ingest::corpus::Corpus;
use themata::model::corpus_file::load_corpus;
use themata::testbed::bench::{
    self, Case, LargeRun, QualityRun, QualitySettings, QualityTrace, ThroughputRow,
};
use themata::testbed::warm_start::{WarmStartFigure, warm_start_case};

use super::Failure;

/// Arguments of `themata bench`.
#[derive(clap::Args, Debug)]
#[command(
    after_help = "Synthetic corpora are drawn from the LDA generative process (Zipf-like word frequencies, documents of about 100 tokens, alpha = 10/K, beta = 0.01) with fixed seeds; every sampler samples with those priors. Each sampler runs on the same corpus from the same start; sweeps alternate between samplers, and every throughput figure is a median over sweeps (ratios are medians of back-to-back pairs), because shared machines are noisy. Time to quality holds out 10% of the documents, runs the reference for 300 sweeps on one thread and each fast sampler on --threads until it reaches the reference's final held-out perplexity (document completion); every sampler runs --quality-chains chains from the same random starts, and perplexities and times are means over the chains, because chains spread more than the samplers differ. The full run takes two to three hours on two cores, more with --real-corpus."
)]
pub struct BenchArgs {
    /// Small corpora that finish in seconds: checks that everything runs, measures little
    #[arg(long)]
    pub quick: bool,
    /// Threads of the fast samplers
    #[arg(long, value_name = "T", default_value_t = 2)]
    pub threads: usize,
    /// Skip the token-updates-per-second tables
    #[arg(long)]
    pub no_throughput: bool,
    /// Skip the time-to-quality comparisons (the longest part)
    #[arg(long)]
    pub no_quality: bool,
    /// Numbers of topics of the time-to-quality comparisons
    #[arg(long, value_name = "K,K", value_delimiter = ',', default_values_t = [100, 1000])]
    pub quality_topics: Vec<usize>,
    /// Skip the synthetic corpora of the time-to-quality comparisons (with --real-corpus: real text only)
    #[arg(long)]
    pub no_synthetic: bool,
    /// Tokens of the synthetic corpora of the time-to-quality comparisons, and the most the real-text corpus is cut to (every n-th document)
    #[arg(long, value_name = "N", default_value_t = 1_000_000)]
    pub quality_tokens: usize,
    /// Independent chains of every sampler in the time-to-quality comparisons (each from its own random start); the target and the times are means over them
    #[arg(long, value_name = "N", default_value_t = 3)]
    pub quality_chains: usize,
    /// A corpus file of real text for the time-to-quality comparisons too (benches/debian-descriptions.sh prepares one)
    #[arg(long, value_name = "FILE")]
    pub real_corpus: Option<PathBuf>,
    /// Run only the fast sampler `auto` picks on one large corpus, on all --threads, and report time and peak memory
    #[arg(long, conflicts_with = "quick")]
    pub large: bool,
    /// Tokens of the --large corpus
    #[arg(long, value_name = "N", default_value_t = 100_000_000, requires = "large")]
    pub large_tokens: usize,
    /// Sweeps of the --large run
    #[arg(long, value_name = "N", default_value_t = 100, requires = "large")]
    pub large_sweeps: usize,
    /// Measure only the warm start of nightly retraining: tonight's corpus is last night's plus 10% new documents from the same topics; sweeps and seconds to the cold start's log-likelihood, cold against warm
    #[arg(long, conflicts_with = "large")]
    pub warm_start: bool,
    /// Run only time to quality at K = 10,000 on 10M synthetic tokens; the reference is too slow to run there, so the sparse kernel's 300th sweep stands in for its quality and 300 times the median of 2 timed reference sweeps for its time (about 20 minutes on two idle cores)
    #[arg(long, conflicts_with_all = ["quick", "large"])]
    pub large_quality: bool,
}

/// Runs `themata bench`.
pub fn run(args: BenchArgs) -> Result<(), Failure> {
    if args.threads == 0 {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--threads must be at least 1"
        )));
    }
    if args.quality_chains == 0 {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--quality-chains must be at least 1"
        )));
    }
    if args.quality_tokens < 10_000 {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--quality-tokens must be at least 10000"
        )));
    }
    if args
        .quality_topics
        .iter()
        .any(|&k| !(2..=themata::fitting::sampler::MAX_TOPICS).contains(&k))
    {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--quality-topics must be between 2 and {}",
            themata::fitting::sampler::MAX_TOPICS
        )));
    }
    let show_progress = std::io::stderr().is_terminal();
    let mut progress = |message: &str| {
        if show_progress {
            eprint!("\r\x1b[2K{message}");
            let _ = std::io::stderr().flush();
        }
    };
    if args.warm_start {
        let case = if args.quick {
            Case {
                tokens: 30_000,
                words: 2_000,
                topics: 10,
                sweeps: 40,
            }
        } else {
            Case {
                tokens: 2_200_000,
                words: 20_000,
                topics: 50,
                sweeps: 300,
            }
        };
        let figure = warm_start_case(&case, args.threads, &mut progress);
        clear_progress(show_progress);
        return print_warm_start(&mut std::io::stdout().lock(), &figure).or_else(super::ignore_broken_pipe);
    }
    if args.large {
        if args.large_tokens < 1000 || args.large_sweeps == 0 {
            return Err(Failure::bad_input(anyhow::anyhow!(
                "--large-tokens must be at least 1000 and --large-sweeps at least 1"
            )));
        }
        let case = Case {
            tokens: args.large_tokens,
            words: 50_000,
            topics: 1000,
            sweeps: args.large_sweeps,
        };
        let run = bench::large_run(&case, args.threads, &mut progress);
        clear_progress(show_progress);
        return print_large(&mut std::io::stdout().lock(), &run).or_else(super::ignore_broken_pipe);
    }
    let real = match &args.real_corpus {
        Some(path) if !args.no_quality => Some(bench::thin(&load_corpus(path)?, args.quality_tokens)),
        _ => None,
    };
    let mut out = std::io::stdout().lock();
    if args.large_quality {
        return measure_large_quality(&mut out, &args, &mut progress, show_progress)
            .or_else(super::ignore_broken_pipe);
    }
    let cases = if args.quick {
        vec![
            Case {
                tokens: 20_000,
                words: 2_000,
                topics: 20,
                sweeps: 3,
            },
            Case {
                tokens: 20_000,
                words: 2_000,
                topics: 400,
                sweeps: 3,
            },
        ]
    } else {
        vec![
            Case {
                tokens: 1_000_000,
                words: 20_000,
                topics: 100,
                sweeps: 7,
            },
            Case {
                tokens: 1_000_000,
                words: 20_000,
                topics: 1000,
                sweeps: 5,
            },
            Case {
                tokens: 1_000_000,
                words: 100_000,
                topics: 10_000,
                sweeps: 5,
            },
            Case {
                tokens: 10_000_000,
                words: 50_000,
                topics: 1000,
                sweeps: 5,
            },
        ]
    };
    measure_and_print(
        &mut out,
        &args,
        &cases,
        real.as_ref(),
        &mut progress,
        show_progress,
    )
    .or_else(super::ignore_broken_pipe)
}

/// Runs the cases, printing each table as soon as it is measured. A closed
/// output pipe ends the run early.
fn measure_and_print(
    out: &mut impl Write,
    args: &BenchArgs,
    cases: &[Case],
    real: Option<&Corpus>,
    progress: &mut dyn FnMut(&str),
    show_progress: bool,
) -> io::Result<()> {
    writeln!(
        out,
        "themata bench: fast samplers against the reference O(K) sweep (one thread); * marks the sampler `auto` picks"
    )?;
    writeln!(out)?;
    let mut rows = Vec::new();
    if !args.no_throughput {
        for case in cases {
            let measured = bench::throughput(case, args.threads, progress);
            clear_progress(show_progress);
            print_row_header_once(out, rows.is_empty(), args.threads)?;
            for row in &measured {
                print_row(out, row)?;
            }
            out.flush()?;
            rows.extend(measured);
        }
        writeln!(out)?;
        print_memory(out, &rows)?;
    }
    let mut quality = Vec::new();
    if !args.no_quality {
        let mut corpora: Vec<(String, Corpus, Vec<usize>)> = Vec::new();
        if args.quick {
            let case = Case {
                tokens: 20_000,
                words: 2_000,
                topics: 20,
                sweeps: 0,
            };
            corpora.push(("synthetic".into(), bench::corpus_of(&case), vec![20]));
        } else if !args.no_synthetic {
            for &topics in &args.quality_topics {
                let case = Case {
                    tokens: args.quality_tokens,
                    words: 20_000,
                    topics,
                    sweeps: 0,
                };
                progress(&format!("generating the synthetic corpus for K = {topics}"));
                corpora.push(("synthetic".into(), bench::corpus_of(&case), vec![topics]));
            }
        }
        for (label, corpus, topics) in &corpora {
            for &k in topics {
                let mut settings = QualitySettings::standard(k, args.threads);
                settings.chains = args.quality_chains;
                if args.quick {
                    settings.reference_sweeps = 20;
                    settings.reference_every = 5;
                    settings.heldout_tokens = 2_000;
                }
                let run = bench::time_to_quality(label, corpus, &settings, progress);
                clear_progress(show_progress);
                print_quality(out, &run)?;
                out.flush()?;
                quality.push(run);
            }
        }
        match real {
            Some(corpus) if !args.quick => {
                for &k in &args.quality_topics {
                    let mut settings = QualitySettings::standard(k, args.threads);
                    settings.chains = args.quality_chains;
                    let run = bench::time_to_quality("real text", corpus, &settings, progress);
                    clear_progress(show_progress);
                    print_quality(out, &run)?;
                    out.flush()?;
                    quality.push(run);
                }
            }
            Some(_) => writeln!(out, "(--quick: the real-text corpus is not measured)")?,
            None => writeln!(
                out,
                "real text: skipped, no --real-corpus given (benches/debian-descriptions.sh prepares one: Debian package descriptions)"
            )?,
        }
        writeln!(out)?;
    }
    if args.quick {
        writeln!(
            out,
            "(--quick: corpora too small for the targets; run without --quick to check them)"
        )?;
    } else {
        print_targets(out, &rows, &quality, args.threads)?;
    }
    out.flush()
}

/// Time to quality at K = 10,000 on 10M tokens, with the sparse kernel
/// standing in for the reference's quality.
fn measure_large_quality(
    out: &mut impl Write,
    args: &BenchArgs,
    progress: &mut dyn FnMut(&str),
    show_progress: bool,
) -> io::Result<()> {
    let case = Case {
        tokens: 10_000_000,
        words: 100_000,
        topics: 10_000,
        sweeps: 0,
    };
    progress("generating 10M tokens, V = 100,000, K = 10,000");
    let corpus = bench::corpus_of(&case);
    let mut settings = QualitySettings::standard(case.topics, args.threads);
    settings.reference_every = 25;
    settings.heldout_tokens = 5_000;
    settings.samplers = vec![SamplerKind::Metropolis];
    settings.stand_in = Some((SamplerKind::Sparse, 2));
    // One chain: three would take an hour.
    settings.chains = 1;
    let run = bench::time_to_quality("synthetic", &corpus, &settings, progress);
    clear_progress(show_progress);
    print_quality(out, &run)?;
    out.flush()
}

fn clear_progress(shown: bool) {
    if shown {
        eprint!("\r\x1b[2K");
    }
}

fn print_row_header_once(out: &mut impl Write, first: bool, threads: usize) -> io::Result<()> {
    if first {
        writeln!(
            out,
            "{:>10} {:>7} {:>6}  {:<11} {:>6}  {:>10} {:>10} {:>8}  {:>10} {:>7}  {:>5}  {:>9} {:>10}",
            "tokens",
            "words",
            "K",
            "fast",
            "shards",
            "ref tok/s",
            "fast tok/s",
            "fast/ref",
            format!("{threads}T tok/s"),
            format!("{threads}T/1T"),
            "same",
            "B/tok ref",
            "B/tok fast"
        )?;
    }
    Ok(())
}

/// A sampler's name, with `*` when `auto` picks it.
fn sampler_label(kind: SamplerKind, auto: bool) -> String {
    format!("{}{}", kind.name(), if auto { "*" } else { "" })
}

fn print_row(out: &mut impl Write, row: &ThroughputRow) -> io::Result<()> {
    writeln!(
        out,
        "{:>10} {:>7} {:>6}  {:<11} {:>6}  {:>10} {:>10} {:>7.1}x  {:>10} {:>6.3}x  {:>5}  {:>9.1} {:>10.1}",
        row.case.tokens,
        row.case.words,
        row.case.topics,
        sampler_label(row.fast_sampler, row.auto),
        row.shards,
        rate(row.reference_per_second),
        rate(row.fast_per_second),
        row.speedup,
        rate(row.parallel_per_second),
        row.thread_speedup,
        if row.parallel_identical { "yes" } else { "NO" },
        row.reference_bytes_per_token,
        row.fast_bytes_per_token,
    )?;
    Ok(())
}

fn rate(per_second: f64) -> String {
    if per_second >= 1e6 {
        format!("{:.2}M", per_second / 1e6)
    } else {
        format!("{:.0}k", per_second / 1e3)
    }
}

fn megabytes(bytes: Option<u64>) -> String {
    bytes.map_or_else(|| "n/a".to_string(), |b| format!("{:.0} MB", b as f64 / 1e6))
}

fn print_memory(out: &mut impl Write, rows: &[ThroughputRow]) -> io::Result<()> {
    writeln!(
        out,
        "peak resident memory with the corpus and one fast chain (whole process):"
    )?;
    for row in rows {
        writeln!(
            out,
            "  {} tokens, V = {}, K = {}, {}: {}",
            row.case.tokens,
            row.case.words,
            row.case.topics,
            row.fast_sampler.name(),
            megabytes(row.fast_peak_rss)
        )?;
    }
    writeln!(out)?;
    Ok(())
}

/// The shares of the reference's time at which perplexities are shown.
const TIME_SHARES: [(f64, &str); 7] = [
    (0.01, "1/100"),
    (0.02, "1/50"),
    (0.05, "1/20"),
    (0.1, "1/10"),
    (0.2, "1/5"),
    (0.5, "1/2"),
    (1.0, "1"),
];

/// A trace's perplexity at `seconds`: its last measurement by then; blank
/// before the first and once the trace has ended (a little after its last
/// measurement, which may fall just past a column's time).
fn perplexity_at(trace: &QualityTrace, seconds: f64) -> String {
    let end = trace.points.last().map_or(0.0, |point| point.seconds);
    match trace.points.iter().rev().find(|point| point.seconds <= seconds) {
        Some(point) if seconds <= end * 1.001 => format!("{:.1}", point.perplexity),
        _ => String::new(),
    }
}

/// ` (mean of N chains: a / b / c)` for several chains, nothing for one.
fn chains_said(trace: &QualityTrace) -> String {
    match trace.chain_perplexities.len() {
        0 | 1 => String::new(),
        n => format!(
            " (mean of {n} chains: {})",
            bench::chain_list(&trace.chain_perplexities)
        ),
    }
}

fn print_quality(out: &mut impl Write, run: &QualityRun) -> io::Result<()> {
    let settings = &run.settings;
    writeln!(
        out,
        "time to quality, {}: {} training tokens in {} documents (mean {:.1} tokens), V = {}, K = {}; {} held-out documents ({} tokens), document completion",
        run.label,
        run.shape.tokens,
        run.shape.documents,
        run.shape.mean_document_length(),
        run.shape.words,
        run.shape.topics,
        run.heldout_documents,
        run.heldout_tokens
    )?;
    match settings.stand_in {
        Some((kind, timed_sweeps)) => writeln!(
            out,
            "target: held-out perplexity {:.2}, that of {} (exact draws, the reference's conditional) after {} sweeps on {} threads{}; the reference's time for {} sweeps is estimated as {:.0} s from the median of {} timed sweeps",
            run.target,
            kind.name(),
            settings.reference_sweeps,
            run.reference.threads,
            chains_said(&run.reference),
            settings.reference_sweeps,
            run.reference_seconds,
            timed_sweeps
        )?,
        None => writeln!(
            out,
            "target: the reference's held-out perplexity after {} sweeps, {:.2}{}, reached in {:.1} s on one thread",
            settings.reference_sweeps,
            run.target,
            chains_said(&run.reference),
            run.reference_seconds
        )?,
    }
    write!(out, "{:<12} {:>3} {:>6} ", "sampler", "thr", "shards")?;
    for (_, label) in TIME_SHARES {
        write!(out, " {label:>8}")?;
    }
    writeln!(
        out,
        "   {:>24}  {:>6}  {:>6}  chains",
        "time to target", "share", "paired"
    )?;
    let traces = std::iter::once(&run.reference).chain(&run.fast);
    for trace in traces {
        let is_reference = std::ptr::eq(trace, &run.reference);
        write!(
            out,
            "{:<12} {:>3} {:>6} ",
            if is_reference && settings.stand_in.is_none() {
                "reference".to_string()
            } else {
                sampler_label(trace.sampler, trace.sampler == run.auto)
            },
            trace.threads,
            trace.shards
        )?;
        for (share, _) in TIME_SHARES {
            write!(out, " {:>8}", perplexity_at(trace, share * run.reference_seconds))?;
        }
        if is_reference && settings.stand_in.is_none() {
            writeln!(out)?;
            continue;
        }
        match trace.reached {
            Some(point) => write!(
                out,
                "   {:>24}  {:>6.3}  {:>6}",
                format!("{:.1} s ({} sweeps)", point.seconds, point.sweep),
                point.seconds / run.reference_seconds,
                run.paired_time_ratio(trace)
                    .map_or_else(String::new, |ratio| format!("{ratio:.3}"))
            )?,
            None => write!(
                out,
                "   {:>24}  {:>6}  {:>6}",
                format!(
                    "not in {:.0} s ({} sweeps)",
                    trace.points.last().map_or(0.0, |p| p.seconds),
                    trace.points.last().map_or(0, |p| p.sweep)
                ),
                "",
                ""
            )?,
        }
        writeln!(out, "  {}", bench::chain_list(&trace.chain_perplexities))?;
    }
    writeln!(
        out,
        "(columns: held-out perplexity after that share of the reference's time; share = time to target / the reference's time; paired = the same against the pace of reference sweeps timed while that sampler ran; chains = each chain's perplexity at the target or the last measurement; perplexities and times are means over the chains)"
    )?;
    if let Some(load) = load_average() {
        writeln!(out, "load average at the end (1, 5, 15 minutes): {load}")?;
    }
    writeln!(out)?;
    Ok(())
}

/// The machine's load average as `/proc/loadavg` gives it (Linux), for
/// reading times measured on a shared machine.
fn load_average() -> Option<String> {
    let text = std::fs::read_to_string("/proc/loadavg").ok()?;
    let fields: Vec<&str> = text.split_whitespace().take(3).collect();
    (fields.len() == 3).then(|| fields.join(" "))
}

fn print_large(out: &mut impl Write, run: &LargeRun) -> io::Result<()> {
    writeln!(
        out,
        "{} tokens, V = {}, K = {}: {} sampler, {} shards, {} threads",
        run.case.tokens,
        run.case.words,
        run.case.topics,
        run.fast_sampler.name(),
        run.shards,
        run.threads
    )?;
    writeln!(out, "  corpus generated in {:.1} s", run.generate_seconds)?;
    writeln!(
        out,
        "  {} sweeps in {:.1} s ({:.2}M token updates/s)",
        run.case.sweeps,
        run.sweep_seconds,
        (run.case.sweeps * run.case.tokens) as f64 / run.sweep_seconds / 1e6
    )?;
    writeln!(
        out,
        "  log-likelihood {:.6e} at the start, {:.6e} at the end",
        run.log_likelihood_first, run.log_likelihood_last
    )?;
    let per_token = |bytes: Option<u64>| {
        bytes.map_or_else(String::new, |b| {
            format!(" ({:.1} bytes per token)", b as f64 / run.case.tokens as f64)
        })
    };
    writeln!(
        out,
        "  peak resident memory: {}{} (whole process, corpus generation included)",
        megabytes(run.peak_rss),
        per_token(run.peak_rss)
    )?;
    writeln!(
        out,
        "  peak resident memory from the end of generation: {}{} (corpus, state, sampler)",
        megabytes(run.fit_peak_rss),
        per_token(run.fit_peak_rss)
    )?;
    Ok(())
}

/// The figures the samplers are held to, each beside its target.
fn print_targets(
    out: &mut impl Write,
    rows: &[ThroughputRow],
    quality: &[QualityRun],
    threads: usize,
) -> io::Result<()> {
    writeln!(out, "targets:")?;
    let mut line = |what: String, value: String, met: bool| {
        writeln!(
            out,
            "  {:<78} {:>8}  {}",
            what,
            value,
            if met { "met" } else { "NOT met" }
        )
    };
    for row in rows.iter().filter(|row| row.auto) {
        let target = match row.case.topics {
            k if k >= 10_000 => 50.0,
            k if k >= 1000 => 8.0,
            _ => 2.0,
        };
        line(
            format!(
                "fast/ref at K = {}, {} tokens, {} (at least {target}x)",
                row.case.topics,
                row.case.tokens,
                row.fast_sampler.name()
            ),
            format!("{:.2}x", row.speedup),
            row.speedup >= target,
        )?;
    }
    for row in rows.iter().filter(|row| row.auto) {
        line(
            format!(
                "{threads} threads / 1 thread, K = {}, {} tokens, {} (at least 1.7x)",
                row.case.topics,
                row.case.tokens,
                row.fast_sampler.name()
            ),
            // Three decimals, so that a ratio just under the target never
            // prints as the target.
            format!("{:.3}x", row.thread_speedup),
            row.thread_speedup >= 1.7,
        )?;
    }
    for run in quality {
        let target = match run.shape.topics {
            k if k >= 1000 => 1.0 / 20.0,
            k if k >= 100 => 1.0 / 8.0,
            _ => continue,
        };
        let auto = run.fast.iter().find(|trace| trace.sampler == run.auto);
        let what = format!(
            "time to the reference's {}-sweep perplexity, {}, K = {}, {} (at most 1/{:.0})",
            run.settings.reference_sweeps,
            run.label,
            run.shape.topics,
            run.auto.name(),
            1.0 / target
        );
        match auto.and_then(|trace| run.time_ratio(trace)) {
            Some(ratio) => line(what, format!("{ratio:.3}"), ratio <= target)?,
            None => line(what, "not reached".to_string(), false)?,
        }
    }
    for row in rows
        .iter()
        .filter(|row| row.auto && row.case.tokens >= 10_000_000)
    {
        if let Some(peak) = row.fast_peak_rss {
            line(
                format!(
                    "peak memory, {} tokens, K = {}, V = {} (at most 1 GB)",
                    row.case.tokens, row.case.topics, row.case.words
                ),
                format!("{:.0} MB", peak as f64 / 1e6),
                peak <= 1_000_000_000,
            )?;
        }
    }
    Ok(())
}

fn print_warm_start(out: &mut impl Write, figure: &WarmStartFigure) -> io::Result<()> {
    let case = &figure.case;
    writeln!(
        out,
        "warm start: last night {} documents, tonight {} (+10% new documents from the same topics); {} tokens tonight, V = {}, K = {}, {} sweeps",
        figure.night_one_documents,
        figure.night_two_documents,
        case.tokens,
        case.words,
        case.topics,
        case.sweeps
    )?;
    writeln!(
        out,
        "  warm start kept the topics of {} documents and drew {} against last night's topics in {:.2} s",
        figure.warm.kept_documents, figure.warm.folded_documents, figure.warm_start_seconds
    )?;
    writeln!(
        out,
        "  target: log-likelihood {:.6e} (mean of the cold run's last tenth of sweeps)",
        figure.target
    )?;
    let reach = |sweeps: Option<usize>, seconds: Option<f64>| match (sweeps, seconds) {
        (Some(sweeps), Some(seconds)) => format!("{sweeps} sweeps, {seconds:.1} s"),
        _ => "not reached".to_string(),
    };
    writeln!(
        out,
        "  cold start reached it after {}",
        reach(figure.cold_sweeps, figure.cold_seconds)
    )?;
    writeln!(
        out,
        "  warm start reached it after {} (its fold-in draws included)",
        reach(figure.warm_sweeps, figure.warm_seconds)
    )?;
    let ratio = |value: Option<f64>| value.map_or("-".to_string(), |value| format!("{value:.3}"));
    let sweeps = figure.sweep_ratio();
    writeln!(
        out,
        "  warm / cold: {} of the sweeps, {} of the time; target at most 1/3 of the sweeps: {}",
        ratio(sweeps),
        ratio(figure.time_ratio()),
        match sweeps {
            Some(ratio) if ratio <= 1.0 / 3.0 => "met",
            Some(_) => "not met",
            None => "not measured",
        }
    )
}
