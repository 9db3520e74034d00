//! `themata report`: the HTML report of a model folder, written to one file.

use std::path::PathBuf;

use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::model::folder::load_model;
use themata::model::format::write_atomic;
use themata::report::html::{self, ReportContext};
use themata::settings::DEFAULT_TOP_WORDS;

use super::Failure;
use super::common::parse_level;
use super::context::{FolderContext, check_out_path, model_title};

/// Arguments of `themata report`.
#[derive(clap::Args, Debug)]
pub struct ReportArgs {
    /// Model folder written by `themata fit` or `themata run` (a run root's ROOT/current too)
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// HTML file to write (replaced whole; its folder must exist)
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Words listed per topic
    #[arg(long, value_name = "N", default_value_t = DEFAULT_TOP_WORDS, value_parser = clap::builder::RangedU64ValueParser::<usize>::new().range(1..=200))]
    pub words: usize,
    /// Probability of the credible intervals shown beside weights and shares
    #[arg(long, value_name = "P", default_value_t = DEFAULT_LEVEL, value_parser = parse_level)]
    pub interval: f64,
}

/// Runs `themata report`.
pub fn run(args: ReportArgs) -> Result<(), Failure> {
    check_out_path(&args.out)?;
    let model = load_model(&args.dir)?;
    let side = FolderContext::read(&args.dir);
    let context = ReportContext {
        title: model_title(&args.dir),
        names: side.names.as_ref(),
        record: side.record.as_ref(),
        build: side.build.as_ref(),
        heldout_perplexity: side.heldout_perplexity,
        top_words: args.words,
        level: args.interval,
        warnings: side.warnings.clone(),
    };
    let page = html::render(&model, &context).map_err(Failure::system)?;
    write_atomic(&args.out, page.as_bytes())?;
    Ok(())
}
