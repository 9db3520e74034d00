//! `themata show`: print a model's topics or document mixtures.

use std::io::Write;
use std::path::PathBuf;

use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::report::{self, DocumentView, ListingFormat, WordLimit};
use themata::settings::{DEFAULT_TOP_WORDS, ListingOptions};

use themata::model::folder::load_model;

use super::Failure;
use super::common::parse_level;

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
    #[arg(long, value_name = "N|all", default_value_t = WordLimit::Top(DEFAULT_TOP_WORDS))]
    pub words: WordLimit,
    /// Show each document's topic shares instead of the topics
    #[arg(long)]
    pub documents: bool,
    /// Probability of the credible intervals shown beside shares and weights
    #[arg(long, value_name = "P", default_value_t = DEFAULT_LEVEL, value_parser = parse_level)]
    pub interval: f64,
    #[command(flatten, next_help_heading = "Document listing (with --documents)")]
    pub listing: ListingOptions,
}

/// Runs `themata show`.
pub fn run(args: ShowArgs) -> Result<(), Failure> {
    let plan = args.listing.resolve()?;
    let model = load_model(&args.dir)?;
    let names = super::context::names_beside(&args.dir);
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    let written = if args.documents {
        let rows = report::document_rows(&model, plan.selection, args.interval, plan.merge_chunks)
            .map_err(Failure::bad_input)?;
        let view = DocumentView::of(&plan, model.n_topics()).with_names(names.as_ref());
        report::write_documents(&mut out, &rows, args.format, &view)
    } else {
        let mut topics =
            report::topic_listings(&model, args.words, args.interval).map_err(Failure::bad_input)?;
        if let Some(names) = &names {
            report::name_topics(&mut topics, names);
        }
        report::write_topics(&mut out, &topics, args.format, plan.numbers)
    };
    written
        .and_then(|()| out.flush())
        .or_else(super::ignore_broken_pipe)
}
