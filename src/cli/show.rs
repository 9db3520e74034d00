//! `themata show`: print a model's topics or document mixtures.

use std::io::Write;
use std::path::PathBuf;

use themata::report::{self, ListingFormat, WordLimit};

use super::Failure;
use super::fit::load_model;

/// Arguments of `themata show`.
#[derive(clap::Args, Debug)]
pub struct ShowArgs {
    /// Model folder written by `themata fit` or `themata run`
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// Output layout
    #[arg(long, value_enum, default_value_t = ListingFormat::Table)]
    pub format: ListingFormat,
    /// Words per topic: a number, or `all` for every word the topic has tokens of
    #[arg(long, value_name = "N|all", default_value = "10")]
    pub words: WordLimit,
    /// Show each document's topic shares instead of the topics
    #[arg(long)]
    pub documents: bool,
}

/// Runs `themata show`.
pub fn run(args: ShowArgs) -> Result<(), Failure> {
    let model = load_model(&args.dir)?;
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    let written = if args.documents {
        report::write_documents(&mut out, &report::document_listings(&model), args.format)
    } else {
        report::write_topics(&mut out, &report::topic_listings(&model, args.words), args.format)
    };
    written.and_then(|()| out.flush()).or_else(ignore_broken_pipe)
}

/// A closed pipe (`themata show | head`) is not an error.
fn ignore_broken_pipe(err: std::io::Error) -> Result<(), Failure> {
    if err.kind() == std::io::ErrorKind::BrokenPipe {
        Ok(())
    } else {
        Err(Failure::system(err))
    }
}
