//! `themata export`: a model as a tidy table (CSV or JSON Lines) for data
//! tools, to a file or to standard output.

use std::io::Write;
use std::path::PathBuf;

use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::model::folder::load_model;
use themata::model::format::AtomicFile;
use themata::report::WordLimit;
use themata::report::export::{self, ExportError, ExportFormat, ExportSettings, ExportTable};
use themata::settings::DEFAULT_TOP_WORDS;

use super::Failure;
use super::common::parse_level;
use super::context::{check_out_path, read_side_files};

/// Arguments of `themata export`.
#[derive(clap::Args, Debug)]
pub struct ExportArgs {
    /// Model folder written by `themata fit` or `themata run` (a run root's ROOT/current too)
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// Which table: one row per topic and word, per document and topic, or per topic
    #[arg(long, value_enum)]
    pub table: ExportTable,
    /// File format
    #[arg(long, value_enum, default_value_t = ExportFormat::Csv)]
    pub format: ExportFormat,
    /// File to write (replaced whole when complete); standard output without it
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Words per topic in the topic-words and topics tables: a number, or `all` for every word the topic has tokens of
    #[arg(long, value_name = "N|all", default_value_t = WordLimit::Top(DEFAULT_TOP_WORDS))]
    pub words: WordLimit,
    /// Probability of the credible intervals
    #[arg(long, value_name = "P", default_value_t = DEFAULT_LEVEL, value_parser = parse_level)]
    pub interval: f64,
}

fn failure(error: ExportError) -> Failure {
    match error {
        ExportError::Io(io) => Failure::output(io),
        other => Failure::system(other),
    }
}

/// Runs `themata export`.
pub fn run(args: ExportArgs) -> Result<(), Failure> {
    if let Some(out) = &args.out {
        check_out_path(out)?;
    }
    let model = load_model(&args.dir)?;
    let side = read_side_files(&args.dir);
    let settings = ExportSettings {
        names: side.names.as_ref(),
        words: args.words,
        level: args.interval,
    };
    match &args.out {
        Some(out) => {
            let mut file = AtomicFile::create(out)?;
            export::write_table(&mut file, &model, args.table, args.format, &settings).map_err(|err| {
                match err {
                    ExportError::Io(io) => Failure::system(anyhow::anyhow!("{}: {io}", out.display())),
                    other => Failure::system(other),
                }
            })?;
            file.commit()?;
        }
        None => {
            let stdout = std::io::stdout();
            let mut out = std::io::BufWriter::new(stdout.lock());
            export::write_table(&mut out, &model, args.table, args.format, &settings).map_err(failure)?;
            out.flush().map_err(Failure::output)?;
        }
    }
    Ok(())
}
