//! Command-line glue: the argument definitions, the error type that carries
//! an exit code, and the dispatch to one file per subcommand.

/// `println!` to standard output that ends the command quietly when the
/// reader has gone away (`themata score DIR | head -1`) instead of
/// panicking: a write error becomes a [`Failure::output`].
macro_rules! say {
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        writeln!(std::io::stdout().lock(), $($arg)*).map_err($crate::cli::Failure::output)
    }};
}

/// [`say!`] without the line break.
macro_rules! say_raw {
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        write!(std::io::stdout().lock(), $($arg)*).map_err($crate::cli::Failure::output)
    }};
}

mod assign;
mod bench;
mod build;
mod common;
mod compare;
mod context;
mod export;
mod fit;
mod progress;
mod ranks;
mod report;
mod run;
mod run_root;
mod score;
mod show;
mod sweep;

use std::path::PathBuf;

use clap::{Parser, Subcommand};
use themata::fitting::fit::FitError;
use themata::ingest::corpus::CorpusError;
use themata::model::format::FormatError;
use themata::settings::{
    FitOptions, GateOptions, InputOptions, ListingOptions, OutputOptions, PublishOptions, SettingsError,
    TokenizerOptions, VocabularyOptions,
};

/// Exit code of a run the quality gate refused (its folder is kept, the
/// published run stays).
pub const EXIT_GATE_FAILED: u8 = 1;
/// Exit code for bad input or usage.
pub const EXIT_BAD_INPUT: u8 = 2;
/// Exit code for I/O or internal failures.
pub const EXIT_FAILURE: u8 = 3;
/// The reader of our output went away: stop, print nothing, succeed.
const EXIT_QUIET_STOP: u8 = 0;

/// A failed command: what went wrong and the exit code it maps to.
#[derive(Debug)]
pub struct Failure {
    pub code: u8,
    pub error: anyhow::Error,
}

impl Failure {
    /// A failure caused by the user's input or options.
    pub fn bad_input(error: impl Into<anyhow::Error>) -> Failure {
        Failure {
            code: EXIT_BAD_INPUT,
            error: error.into(),
        }
    }

    /// A failure of the system (I/O) or of themata itself.
    pub fn system(error: impl Into<anyhow::Error>) -> Failure {
        Failure {
            code: EXIT_FAILURE,
            error: error.into(),
        }
    }

    /// A run the quality gate refused; `reason` says why.
    pub fn gate_failed(reason: String) -> Failure {
        Failure {
            code: EXIT_GATE_FAILED,
            error: anyhow::anyhow!(reason),
        }
    }

    /// A failure to write the standard output: a closed pipe (`themata ... |
    /// head`) ends the command quietly with success, anything else is a
    /// system failure that says what was being written.
    pub fn output(error: std::io::Error) -> Failure {
        if error.kind() == std::io::ErrorKind::BrokenPipe {
            Failure {
                code: EXIT_QUIET_STOP,
                error: error.into(),
            }
        } else {
            Failure::system(anyhow::Error::new(error).context("writing the standard output"))
        }
    }

    /// Whether the command was only stopped by a closed pipe.
    pub fn is_quiet_stop(&self) -> bool {
        self.code == EXIT_QUIET_STOP
    }
}

impl From<SettingsError> for Failure {
    fn from(err: SettingsError) -> Failure {
        Failure::bad_input(err)
    }
}

impl From<FitError> for Failure {
    fn from(err: FitError) -> Failure {
        Failure::bad_input(err)
    }
}

impl From<CorpusError> for Failure {
    fn from(err: CorpusError) -> Failure {
        match &err {
            CorpusError::Read(themata::ingest::read::ReadError::Io { .. }) => Failure::system(err),
            _ => Failure::bad_input(err),
        }
    }
}

impl From<themata::model::folder::FolderError> for Failure {
    fn from(err: themata::model::folder::FolderError) -> Failure {
        if err.is_bad_input() {
            Failure::bad_input(err)
        } else {
            Failure::system(err)
        }
    }
}

impl From<themata::publish::PublishError> for Failure {
    fn from(err: themata::publish::PublishError) -> Failure {
        if err.is_bad_input() {
            Failure::bad_input(err)
        } else {
            Failure::system(err)
        }
    }
}

impl From<FormatError> for Failure {
    fn from(err: FormatError) -> Failure {
        if err.is_bad_input() {
            Failure::bad_input(err)
        } else {
            Failure::system(err)
        }
    }
}

/// Topic models for document collections: build a corpus from raw text, fit
/// LDA by collapsed Gibbs sampling, and show the topics and document mixtures.
#[derive(Parser, Debug)]
#[command(name = "themata", version, about, long_about = None)]
#[command(
    after_help = "Exit codes: 0 success (with `run` under a run root: published), 1 the quality gate refused the run, 2 bad input, usage, config or a run root held by another run, 3 I/O or internal failure."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Subcommand, Debug)]
pub enum Command {
    /// Read raw documents and write a tokenized corpus file
    Build(BuildArgs),
    /// Fit a topic model to a corpus file and write a model folder
    Fit(FitArgs),
    /// Print a model's topics or its documents' topic shares
    Show(show::ShowArgs),
    /// Build, fit and report in one go, as a config file describes
    Run(Box<RunArgs>),
    /// Place new documents in a saved model: topic shares with intervals
    Assign(assign::AssignArgs),
    /// Score a saved model: held-out perplexity, coherence, topic diagnostics
    Score(score::ScoreArgs),
    /// Fit several numbers of topics and recommend one
    Sweep(sweep::SweepArgs),
    /// Match the topics of two model folders and show how they drifted
    Compare(compare::CompareArgs),
    /// Write a model's report: one HTML page that opens offline in any browser
    Report(report::ReportArgs),
    /// Write a model as a tidy table (CSV or JSON Lines) for data tools
    Export(export::ExportArgs),
    /// Measure the fast samplers against the reference on synthetic corpora
    Bench(bench::BenchArgs),
}

/// How new documents are read by `assign` and `score` (there `--format`
/// names the output layout, so the input format is `--input-format`).
#[derive(clap::Args, Debug, Clone)]
pub struct RecordOptions {
    /// Input format: auto decides by file extension (.txt/.md, .jsonl/.ndjson, .csv)
    #[arg(long, value_enum, default_value_t = themata::ingest::read::InputFormat::Auto)]
    pub input_format: themata::ingest::read::InputFormat,
    #[arg(long, value_name = "NAME", help = format!("JSON Lines field or CSV column holding the text [default: {}]", themata::ingest::read::DEFAULT_TEXT_FIELD))]
    pub text_field: Option<String>,
    #[arg(long, value_name = "NAME", help = format!("JSON Lines field or CSV column holding the document id [default: {}]", themata::ingest::read::DEFAULT_ID_FIELD))]
    pub id_field: Option<String>,
}

impl RecordOptions {
    /// The same checks as the build options, through the one definition there.
    pub fn resolve(&self) -> Result<themata::ingest::read::ReadOptions, SettingsError> {
        InputOptions {
            format: Some(self.input_format),
            text_field: self.text_field.clone(),
            id_field: self.id_field.clone(),
            ..InputOptions::default()
        }
        .resolve()
    }
}

/// Arguments of `themata build`.
#[derive(clap::Args, Debug)]
pub struct BuildArgs {
    /// Input files or folders; `-` reads JSON Lines from stdin
    #[arg(required = true, value_name = "INPUT")]
    pub inputs: Vec<PathBuf>,
    /// Corpus file to write
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    #[command(flatten, next_help_heading = "Input")]
    pub input: InputOptions,
    #[command(flatten, next_help_heading = "Tokenizer")]
    pub tokenizer: TokenizerOptions,
    #[command(flatten, next_help_heading = "Vocabulary")]
    pub vocabulary: VocabularyOptions,
    /// Print nothing but errors
    #[arg(long, short)]
    pub quiet: bool,
}

/// Arguments of `themata fit`.
#[derive(clap::Args, Debug)]
pub struct FitArgs {
    /// Corpus file written by `themata build`
    #[arg(value_name = "CORPUS", required_unless_present_any = ["continue_from", "resume"])]
    pub corpus: Option<PathBuf>,
    /// Model folder to write (replaced whole if it holds an earlier model); with --continue, defaults to that folder
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Continue sampling a saved model for --iterations more sweeps
    #[arg(long = "continue", value_name = "DIR", conflicts_with_all = ["corpus", "resume"])]
    pub continue_from: Option<PathBuf>,
    /// Finish a run that was interrupted, from the checkpoint beside DIR
    #[arg(long, value_name = "DIR", conflicts_with_all = ["corpus", "out"])]
    pub resume: Option<PathBuf>,
    #[command(flatten, next_help_heading = "Fitting")]
    pub fit: FitOptions,
    /// No progress bar and no summary line
    #[arg(long, short)]
    pub quiet: bool,
}

/// Arguments of `themata run`.
#[derive(clap::Args, Debug)]
pub struct RunArgs {
    /// Config file (TOML) naming inputs, settings and the output folder
    #[arg(value_name = "CONFIG")]
    pub config: PathBuf,
    #[command(flatten, next_help_heading = "Input (overrides the config file)")]
    pub input: InputOptions,
    #[command(flatten, next_help_heading = "Tokenizer (overrides the config file)")]
    pub tokenizer: TokenizerOptions,
    #[command(flatten, next_help_heading = "Vocabulary (overrides the config file)")]
    pub vocabulary: VocabularyOptions,
    #[command(flatten, next_help_heading = "Fitting (overrides the config file)")]
    pub fit: FitOptions,
    #[command(flatten, next_help_heading = "Output (overrides the config file)")]
    pub output: OutputOptions,
    #[command(flatten, next_help_heading = "Publishing (overrides the config file)")]
    pub publish: PublishOptions,
    #[command(flatten, next_help_heading = "Gate (overrides the config file)")]
    pub gate: GateOptions,
    #[command(flatten, next_help_heading = "Listing (overrides the config file)")]
    pub listing: ListingOptions,
    /// No progress bar; print only the report
    #[arg(long, short)]
    pub quiet: bool,
}

/// A failure to read the new documents of `assign` or `score`, where the
/// input format option is `--input-format` (`--format` names the output).
pub fn record_read_failure(err: themata::ingest::read::ReadError) -> Failure {
    use themata::ingest::read::ReadError;
    match err {
        ReadError::UnknownFormat { path } => Failure::bad_input(anyhow::anyhow!(
            "{}: cannot tell the format from the file extension; pass --input-format text|jsonl|csv",
            path.display()
        )),
        ReadError::Io { .. } => Failure::system(err),
        other => Failure::bad_input(other),
    }
}

/// A closed pipe (`themata show | head`) is not an error.
pub fn ignore_broken_pipe(err: std::io::Error) -> Result<(), Failure> {
    let failure = Failure::output(err);
    if failure.is_quiet_stop() {
        Ok(())
    } else {
        Err(failure)
    }
}

/// The whole chain of an error once: each cause is added unless the message
/// already says it.
pub fn describe(error: &anyhow::Error) -> String {
    let mut message = error.to_string();
    for cause in error.chain().skip(1) {
        let cause = cause.to_string();
        if !message.contains(&cause) {
            message.push_str(": ");
            message.push_str(&cause);
        }
    }
    message
}

/// Parses the process arguments (exits with code 2 on usage errors).
pub fn parse() -> Cli {
    Cli::parse()
}

/// Runs one subcommand.
pub fn run(cli: Cli) -> Result<(), Failure> {
    match cli.command {
        Command::Build(args) => build::run(args),
        Command::Fit(args) => fit::run(args),
        Command::Show(args) => show::run(args),
        Command::Run(args) => run::run(*args),
        Command::Assign(args) => assign::run(args),
        Command::Score(args) => score::run(args),
        Command::Sweep(args) => sweep::run(args),
        Command::Compare(args) => compare::run(args),
        Command::Report(args) => report::run(args),
        Command::Export(args) => export::run(args),
        Command::Bench(args) => bench::run(args),
    }
}

#[cfg(test)]
mod tests {
    use clap::CommandFactory;

    #[test]
    fn argument_definitions_are_consistent() {
        // Source: clap documentation — `Command::debug_assert` checks the definitions.
        super::Cli::command().debug_assert();
    }
}
