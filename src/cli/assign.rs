//! `themata assign`: place new documents in a saved model, streaming.

use std::io::Write;
use std::path::PathBuf;

use themata::evaluate::heldout::FoldInSettings;
use themata::evaluate::score;
use themata::ingest::read::{self, Diagnostic, RawDocument};
use themata::ingest::tokenize::Tokenizer;
use themata::report::{self, DocumentRow, DocumentView, ListingPlan};
use themata::settings::{ANY_WHOLE, AT_LEAST_ONE, ListingOptions, resolve_threads};

use super::common::{count, parse_level};
use super::{Failure, RecordOptions};
use themata::model::folder::load_model;

/// Documents folded in together (in parallel) before their lines are written;
/// with two batches in flight at most, bounds memory whatever the length
/// of the stream.
const BATCH: usize = 256;

/// One placed document: its row and its printed line(s), or why it failed.
type Placed = Result<(DocumentRow, Vec<u8>), score::ScoreError>;

/// The placements of a batch, once its thread has finished.
fn join_placing(placing: std::thread::ScopedJoinHandle<'_, Vec<Placed>>) -> Vec<Placed> {
    placing
        .join()
        .unwrap_or_else(|panic| std::panic::resume_unwind(panic))
}

/// Output layouts of `assign`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum AssignFormat {
    /// Tab-separated rows in the `--layout` asked for, as `show --documents --format tsv`.
    Tsv,
    /// One JSON object per document with its listed topics, intervals and token counts.
    Jsonl,
}

/// Arguments of `themata assign`.
#[derive(clap::Args, Debug)]
pub struct AssignArgs {
    /// Model folder written by `themata fit` or `themata run`
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// New documents: files or folders; `-` reads JSON Lines from stdin
    #[arg(required = true, value_name = "INPUT")]
    pub inputs: Vec<PathBuf>,
    /// Output layout
    #[arg(long, value_enum, default_value_t = AssignFormat::Tsv)]
    pub format: AssignFormat,
    #[command(flatten)]
    pub records: RecordOptions,
    /// Probability of the credible intervals
    #[arg(long, value_name = "P", default_value_t = themata::evaluate::uncertainty::DEFAULT_LEVEL, value_parser = parse_level)]
    pub interval: f64,
    /// Fold-in samples kept per document (after 50 burn-in sweeps, 5 sweeps apart)
    #[arg(long, value_name = "S", default_value_t = 10, value_parser = AT_LEAST_ONE.parser::<usize>())]
    pub samples: usize,
    /// Seed of the fold-in random streams
    #[arg(long, value_name = "S", default_value_t = 1, value_parser = ANY_WHOLE.parser::<u64>())]
    pub seed: u64,
    /// Worker threads [default: all cores]
    #[arg(long, value_name = "T", value_parser = AT_LEAST_ONE.parser::<usize>())]
    pub threads: Option<usize>,
    #[command(flatten, next_help_heading = "Listing")]
    pub listing: ListingOptions,
    /// No summary on stderr
    #[arg(long, short)]
    pub quiet: bool,
}

/// Runs `themata assign`.
pub fn run(args: AssignArgs) -> Result<(), Failure> {
    let plan: ListingPlan = args.listing.resolve()?;
    if plan.merge_chunks {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--merge-chunks sums back the chunks --split-every cut at build time; assign places each new document whole, so there is nothing to merge"
        )));
    }
    let threads = resolve_threads(args.threads)?;
    let model = load_model(&args.dir)?;
    let tokenizer = Tokenizer::new(&model.corpus.tokenizer).map_err(Failure::bad_input)?;
    let weights = score::TopicWeights::of(&model);
    let fold_in = FoldInSettings {
        samples: args.samples,
        ..FoldInSettings::default()
    };
    let options = read::ReadOptions {
        unique_ids: false,
        ..args.records.resolve()?
    };
    let pool = themata::thread_pool(threads).map_err(Failure::system)?;
    let names = super::context::names_beside(&args.dir);
    let view = DocumentView::of(&plan, model.n_topics()).with_names(names.as_ref());
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    // The header is written with the first rows (or at the end), so that a
    // bad input stops the command before anything is printed.
    let mut header_due = args.format == AssignFormat::Tsv;
    let mut totals = Totals::default();
    let mut failure: Option<Failure> = None;
    let mut diagnostics: Vec<Diagnostic> = Vec::new();
    let mut warnings: Vec<String> = Vec::new();
    // Each document is encoded, placed and printed into its own buffer in
    // parallel; `first` is the number of documents before the batch, which
    // seeds each document's random stream.
    let place_batch = |first: usize, batch: Vec<RawDocument>| -> Vec<Placed> {
        pool.install(|| {
            use rayon::prelude::*;
            batch
                .par_iter()
                .enumerate()
                .map(|(offset, raw)| {
                    let doc = score::encode_text(&tokenizer, &model.corpus.vocabulary, &raw.id, &raw.text);
                    let mut rng = score::document_rng(args.seed, first + offset);
                    let placement = score::place(&model, &weights, &doc, &fold_in, &mut rng)?;
                    let row = report::placement_row(
                        &placement,
                        &model.priors.alpha,
                        &model.topic_ids,
                        plan.selection,
                        args.interval,
                    )?;
                    let mut text = Vec::with_capacity(256);
                    match args.format {
                        AssignFormat::Tsv => view.write_tsv_row(&mut text, &row),
                        AssignFormat::Jsonl => view.write_json_line(&mut text, &row),
                    }
                    .expect("writing to memory cannot fail");
                    Ok((row, text))
                })
                .collect()
        })
    };
    // The buffers are written in input order.
    let mut write_batch = |placed: Vec<Placed>, totals: &mut Totals| -> Result<(), Failure> {
        if header_due {
            view.write_tsv_header(&mut out).map_err(Failure::output)?;
            header_due = false;
        }
        for result in placed {
            let (row, text) = result.map_err(Failure::system)?;
            totals.add(&row);
            out.write_all(&text).map_err(Failure::output)?;
            if !row.placed {
                eprintln!(
                    "themata: flagged: document `{}` has no word the model knows ({} tokens, all unknown); it was not placed",
                    row.document,
                    row.unknown_tokens.unwrap_or(0)
                );
            }
        }
        Ok(())
    };
    // While the pool places one batch, this thread reads the next: a full
    // batch is handed to a placing thread, then the batch before it (two
    // are in flight at most) is waited for and written.
    let read_result = std::thread::scope(|scope| -> Result<(), Failure> {
        let place_batch = &place_batch;
        let mut in_flight: Option<std::thread::ScopedJoinHandle<'_, Vec<Placed>>> = None;
        let mut queued = 0;
        let mut batch: Vec<RawDocument> = Vec::with_capacity(BATCH);
        let mut hand_over = |batch: Vec<RawDocument>, totals: &mut Totals| -> Result<(), Failure> {
            let first = queued;
            queued += batch.len();
            let placing = scope.spawn(move || place_batch(first, batch));
            match in_flight.replace(placing) {
                Some(before) => write_batch(join_placing(before), totals),
                None => Ok(()),
            }
        };
        let read = read::read_documents(
            &args.inputs,
            &options,
            &mut diagnostics,
            &mut warnings,
            &mut |raw| {
                if failure.is_some() {
                    return;
                }
                batch.push(raw);
                if batch.len() == BATCH
                    && let Err(err) = hand_over(
                        std::mem::replace(&mut batch, Vec::with_capacity(BATCH)),
                        &mut totals,
                    )
                {
                    failure = Some(err);
                }
            },
        );
        let last = if failure.is_none() && read.is_ok() {
            hand_over(batch, &mut totals)
        } else {
            Ok(())
        };
        // Whatever stopped the reading, the batch still being placed is
        // waited for; its lines are written only if all went well.
        let pending = in_flight.take().map(join_placing);
        read.map_err(super::record_read_failure)?;
        if let Some(err) = failure.take() {
            return Err(err);
        }
        last?;
        match pending {
            Some(placed) => write_batch(placed, &mut totals),
            None => Ok(()),
        }
    });
    read_result?;
    out.flush().map_err(Failure::output)?;
    for diagnostic in &diagnostics {
        eprintln!("themata: skipped: {diagnostic}");
    }
    for warning in &warnings {
        eprintln!("themata: warning: {warning}");
    }
    if !args.quiet {
        eprintln!(
            "assigned {}: {} known, {} unknown; {} with no known word; {} skipped",
            count(totals.documents, "document"),
            count(totals.tokens, "token"),
            count(totals.unknown, "token"),
            totals.without_known_words,
            diagnostics.len()
        );
    }
    Ok(())
}

#[derive(Default)]
struct Totals {
    documents: usize,
    tokens: usize,
    unknown: usize,
    without_known_words: usize,
}

impl Totals {
    fn add(&mut self, row: &DocumentRow) {
        self.documents += 1;
        self.tokens += row.tokens;
        self.unknown += row.unknown_tokens.unwrap_or(0);
        self.without_known_words += usize::from(!row.placed);
    }
}
