//! `themata report`: the HTML report of a model folder, written to one file.

use std::path::PathBuf;

use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::model::folder::load_model;
use themata::model::format::write_atomic;
use themata::report::html::{self, ReportContext};
use themata::settings::DEFAULT_TOP_WORDS;

use super::Failure;
use super::common::parse_level;
use super::context::{check_out_path, model_title, read_side_files};

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
    let side = read_side_files(&args.dir);
    let context = ReportContext::of_folder(model_title(&args.dir), &side, args.words, args.interval);
    let page = html::render(&model, &context).map_err(Failure::system)?;
    write_atomic(&args.out, page.as_bytes())?;
    Ok(())
}
