//! `themata bench`: the fast samplers against the reference on synthetic
//! corpora, printed as tables of medians and ratios with the targets they
//! are held to.

use std::io::{self, IsTerminal, Write};

use themata::testbed::bench::{self, Case, Convergence, LargeRun, ThroughputRow};
use themata::testbed::warm_start::{WarmStartFigure, warm_start_case};

use super::Failure;

/// Arguments of `themata bench`.
#[derive(clap::Args, Debug)]
#[command(
    after_help = "Corpora are drawn from the LDA generative process (Zipf-like word frequencies, documents of about 100 tokens, alpha = 10/K, beta = 0.01) with fixed seeds. Each sampler runs on the same corpus from the same start; sweeps alternate between samplers, and every figure is a median over sweeps (ratios are medians of back-to-back pairs), because shared machines are noisy. The full run takes about 20 minutes on two cores."
)]
pub struct BenchArgs {
    /// Small corpora that finish in seconds: checks that everything runs, measures little
    #[arg(long)]
    pub quick: bool,
    /// Threads of the parallel runs
    #[arg(long, value_name = "T", default_value_t = 2)]
    pub threads: usize,
    /// Skip the log-likelihood-against-time comparison (the longest part)
    #[arg(long)]
    pub no_convergence: bool,
    /// Run only the fast sampler on one large corpus, on all --threads, and report time and peak memory
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
}

/// Runs `themata bench`.
pub fn run(args: BenchArgs) -> Result<(), Failure> {
    if args.threads == 0 {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--threads must be at least 1"
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
    let (cases, convergence_case) = if args.quick {
        (
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
            ],
            Case {
                tokens: 20_000,
                words: 2_000,
                topics: 400,
                sweeps: 10,
            },
        )
    } else {
        (
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
            ],
            Case {
                tokens: 1_000_000,
                words: 20_000,
                topics: 1000,
                sweeps: 200,
            },
        )
    };
    let mut out = std::io::stdout().lock();
    measure_and_print(
        &mut out,
        &args,
        &cases,
        &convergence_case,
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
    convergence_case: &Case,
    progress: &mut dyn FnMut(&str),
    show_progress: bool,
) -> io::Result<()> {
    writeln!(
        out,
        "themata bench: fast samplers against the reference O(K) sweep, medians over sweeps"
    )?;
    writeln!(out)?;
    let mut rows = Vec::new();
    for case in cases {
        let row = bench::throughput(case, args.threads, progress);
        clear_progress(show_progress);
        print_row_header_once(out, rows.is_empty(), args.threads)?;
        print_row(out, &row)?;
        out.flush()?;
        rows.push(row);
    }
    writeln!(out)?;
    print_memory(out, &rows)?;
    let convergence = if args.no_convergence {
        None
    } else {
        let every = if args.quick { 2 } else { 10 };
        let result = bench::convergence(convergence_case, every, progress);
        clear_progress(show_progress);
        print_convergence(out, &result)?;
        Some(result)
    };
    if args.quick {
        writeln!(
            out,
            "(--quick: corpora too small for the targets; run without --quick to check them)"
        )?;
    } else {
        print_targets(out, &rows, convergence.as_ref(), args.threads)?;
    }
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
            "{:>10} {:>7} {:>6}  {:<10} {:>6}  {:>10} {:>10} {:>8}  {:>10} {:>7}  {:>5}  {:>9} {:>10}",
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

fn print_row(out: &mut impl Write, row: &ThroughputRow) -> io::Result<()> {
    writeln!(
        out,
        "{:>10} {:>7} {:>6}  {:<10} {:>6}  {:>10} {:>10} {:>7.1}x  {:>10} {:>6.3}x  {:>5}  {:>9.1} {:>10.1}",
        row.case.tokens,
        row.case.words,
        row.case.topics,
        row.fast_sampler.name(),
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
            "  {} tokens, V = {}, K = {}: {}",
            row.case.tokens,
            row.case.words,
            row.case.topics,
            megabytes(row.fast_peak_rss)
        )?;
    }
    writeln!(out)?;
    Ok(())
}

fn print_convergence(out: &mut impl Write, result: &Convergence) -> io::Result<()> {
    writeln!(
        out,
        "log-likelihood against sweep time, {} tokens, V = {}, K = {} (one thread each; fast = {}):",
        result.case.tokens,
        result.case.words,
        result.case.topics,
        result.fast_sampler.name()
    )?;
    writeln!(
        out,
        "{:>8} {:>10} {:>14}    {:>8} {:>10} {:>14}",
        "ref swp", "ref s", "ref loglik", "fast swp", "fast s", "fast loglik"
    )?;
    let rows = result.reference.len().max(result.fast.len());
    for idx in 0..rows {
        let cell = |point: Option<&bench::TracePoint>| match point {
            Some(p) => format!("{:>8} {:>10.2} {:>14.6e}", p.sweep, p.seconds, p.log_likelihood),
            None => format!("{:>8} {:>10} {:>14}", "", "", ""),
        };
        writeln!(
            out,
            "{}    {}",
            cell(result.reference.get(idx)),
            cell(result.fast.get(idx))
        )?;
    }
    let reference_end = result.reference.last().copied();
    match (result.reached, reference_end) {
        (Some(point), Some(end)) => writeln!(
            out,
            "fast reached the reference's final log-likelihood ({:.6e} after {} sweeps, {:.1} s) after {} sweeps, {:.1} s: {:.3} of the reference's time",
            end.log_likelihood,
            end.sweep,
            end.seconds,
            point.sweep,
            point.seconds,
            point.seconds / end.seconds
        )?,
        (None, Some(end)) => writeln!(
            out,
            "fast did not reach the reference's final log-likelihood ({:.6e}) within the reference's {:.1} s",
            end.log_likelihood, end.seconds
        )?,
        _ => {}
    }
    writeln!(out)?;
    Ok(())
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
    writeln!(out, "  peak resident memory: {}", megabytes(run.peak_rss))?;
    Ok(())
}

/// The figures the samplers are held to, each beside its target.
fn print_targets(
    out: &mut impl Write,
    rows: &[ThroughputRow],
    convergence: Option<&Convergence>,
    threads: usize,
) -> io::Result<()> {
    writeln!(out, "targets:")?;
    let mut line = |what: String, value: String, met: bool| {
        writeln!(
            out,
            "  {:<66} {:>8}  {}",
            what,
            value,
            if met { "met" } else { "NOT met" }
        )
    };
    for row in rows {
        let target = match row.case.topics {
            k if k >= 10_000 => 50.0,
            k if k >= 1000 => 8.0,
            _ => 2.0,
        };
        line(
            format!(
                "fast/ref at K = {}, {} tokens (at least {target}x)",
                row.case.topics, row.case.tokens
            ),
            format!("{:.2}x", row.speedup),
            row.speedup >= target,
        )?;
    }
    for row in rows {
        line(
            format!(
                "{threads} threads / 1 thread, K = {}, {} tokens (at least 1.7x)",
                row.case.topics, row.case.tokens
            ),
            // Three decimals, so that a ratio just under the target never
            // prints as the target.
            format!("{:.3}x", row.thread_speedup),
            row.thread_speedup >= 1.7,
        )?;
    }
    if let Some(result) = convergence {
        match result.time_ratio() {
            Some(ratio) => line(
                format!(
                    "time to the reference's log-likelihood at K = {} (at most 1/5)",
                    result.case.topics
                ),
                format!("{ratio:.3}"),
                ratio <= 0.2,
            )?,
            None => line(
                "time to the reference's log-likelihood (at most 1/5)".to_string(),
                "not reached".to_string(),
                false,
            )?,
        }
    }
    for row in rows.iter().filter(|row| row.case.tokens >= 10_000_000) {
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
    for row in rows.iter().filter(|row| row.case.topics == 1000) {
        line(
            format!(
                "stretch: token updates/s per core, K = 1000, {} tokens (5M)",
                row.case.tokens
            ),
            rate(row.fast_per_second),
            row.fast_per_second >= 5e6,
        )?;
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
