//! `themata score`: held-out perplexity, coherence and per-topic diagnostics
//! of a saved model.

use std::io::Read;
use std::path::{Path, PathBuf};
use themata::model::corpus_file::load_corpus;

use serde::Serialize;
use themata::evaluate::coherence::CoherenceSettings;
use themata::evaluate::heldout::FoldInSettings;
use themata::evaluate::score::{self, CoherenceReport, EncodedDocument, Method, ScoreSettings};
use themata::ingest::corpus::Corpus;
use themata::ingest::read::{self, Diagnostic};
use themata::ingest::tokenize::Tokenizer;
use themata::model::Model;
use themata::model::format::FileKind;
use themata::settings::{ANY_WHOLE, AT_LEAST_ONE, PrecisionOptions, WholeRange};

use super::{Failure, RecordOptions};
use themata::model::folder::load_model;

/// What the columns of the per-topic table mean (shown by `score --help`;
/// the README repeats it).
const TABLE_COLUMNS: &str = "\
Columns of the per-topic table (JSON: coherence.per_topic, names in full):
  umass       UMass coherence (Mimno et al. 2011): over pairs of top words, the sum of
              ln((documents with both + 1) / documents with the higher-ranked one);
              0 or below, closer to 0 is more coherent
  npmi        mean normalised pointwise mutual information of pairs of top words in
              sliding windows (--npmi-window): -1 never together, 0 independent,
              1 always together
  cv          C_V coherence (Roeder et al. 2015) in windows of --cv-window tokens:
              mean cosine of NPMI context vectors, -1 to 1, higher is more coherent
  share       token_share: the topic's share of all tokens
  prevalence  document_prevalence: the share of documents whose largest topic it is
  eff.words   effective_words: exp of the entropy of the topic's word distribution,
              the number of equally likely words as spread out (n if even over n)
  distinct    distinctiveness: Kullback-Leibler divergence of the topic's words from
              the corpus word frequencies, in nats (0: it only repeats them)
  exclusiv    exclusivity: mean over the top words of the word's weight in this topic
              over its weight summed across topics (1: no other topic uses them)";

/// Arguments of `themata score`.
#[derive(clap::Args, Debug)]
#[command(after_help = TABLE_COLUMNS)]
pub struct ScoreArgs {
    /// Model folder written by `themata fit` or `themata run`
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// Held-out documents: raw files or folders (cut by the model's tokenizer), or one corpus file
    #[arg(long, value_name = "INPUT", num_args = 1..)]
    pub heldout: Vec<PathBuf>,
    /// Held-out estimator
    #[arg(long, value_enum, default_value_t = Method::Completion)]
    pub method: Method,
    /// Particles of the left-to-right estimator
    #[arg(long, value_name = "R", default_value_t = ScoreSettings::default().particles, value_parser = AT_LEAST_ONE.parser::<usize>())]
    pub particles: usize,
    /// Corpus file whose documents give the coherence probabilities [default: the training corpus]
    #[arg(long, value_name = "CORPUS")]
    pub reference: Option<PathBuf>,
    /// Top words per topic that coherence is computed over
    #[arg(long, value_name = "M", default_value_t = 10, value_parser = WholeRange::at_least(2).parser::<usize>())]
    pub top_words: usize,
    /// Sliding window of NPMI, in tokens (a document shorter than the window is one window)
    #[arg(long, value_name = "N", default_value_t = CoherenceSettings::default().npmi_window, value_parser = WholeRange::at_least(2).parser::<usize>())]
    pub npmi_window: usize,
    /// Sliding window of C_V, in tokens
    #[arg(long, value_name = "N", default_value_t = CoherenceSettings::default().cv_window, value_parser = WholeRange::at_least(2).parser::<usize>())]
    pub cv_window: usize,
    /// Output layout
    #[arg(long, value_enum, default_value_t = ScoreFormat::Table)]
    pub format: ScoreFormat,
    #[command(flatten)]
    pub records: RecordOptions,
    /// Seed of the scoring random streams
    #[arg(long, value_name = "S", default_value_t = 1, value_parser = ANY_WHOLE.parser::<u64>())]
    pub seed: u64,
    #[command(flatten)]
    pub precision: PrecisionOptions,
}

/// Output layouts of `score`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum ScoreFormat {
    /// A summary line and an aligned table of the topics.
    Table,
    /// One JSON object.
    Json,
}

/// The JSON object `score --format json` prints.
#[derive(Serialize)]
struct ScoreOutput {
    heldout_perplexity: Option<f64>,
    method: Option<Method>,
    tokens_scored: usize,
    unknown_tokens: usize,
    heldout_documents: usize,
    documents_without_known_words: usize,
    coherence: CoherenceReport,
}

/// Runs `themata score`.
pub fn run(args: ScoreArgs) -> Result<(), Failure> {
    if args.particles == 0 {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--particles must be at least 1"
        )));
    }
    let model = load_model(&args.dir)?;
    let heldout = if args.heldout.is_empty() {
        None
    } else {
        let documents = heldout_documents(&model, &args)?;
        if documents.is_empty() {
            return Err(Failure::bad_input(anyhow::anyhow!(
                "the held-out input has no usable documents; nothing to score"
            )));
        }
        let settings = ScoreSettings {
            method: args.method,
            particles: args.particles,
            fold_in: FoldInSettings::default(),
            seed: args.seed,
        };
        let scored = score::score_heldout(&model, &documents, &settings).map_err(Failure::system)?;
        Some(scored)
    };
    let mut coherence = coherence(&model, &args)?;
    if let Some(names) = super::context::names_beside(&args.dir) {
        for row in &mut coherence.per_topic {
            row.name = names.get(row.topic).map(str::to_string);
        }
    }
    let output = ScoreOutput {
        heldout_perplexity: heldout.as_ref().and_then(|h| h.heldout_perplexity),
        method: heldout.as_ref().map(|h| h.method),
        tokens_scored: heldout.as_ref().map_or(0, |h| h.tokens_scored),
        unknown_tokens: heldout.as_ref().map_or(0, |h| h.unknown_tokens),
        heldout_documents: heldout.as_ref().map_or(0, |h| h.documents),
        documents_without_known_words: heldout.as_ref().map_or(0, |h| h.documents_without_known_words),
        coherence,
    };
    match args.format {
        ScoreFormat::Json => {
            let mut value = serde_json::to_value(&output).map_err(Failure::system)?;
            args.precision.resolve().round_json(&mut value);
            let text = serde_json::to_string_pretty(&value).map_err(Failure::system)?;
            say!("{text}")?;
        }
        ScoreFormat::Table => print_table(&output)?,
    }
    Ok(())
}

fn is_corpus_file(path: &Path) -> bool {
    let mut magic = [0u8; 8];
    std::fs::File::open(path)
        .and_then(|mut file| file.read_exact(&mut magic))
        .is_ok()
        && &magic == FileKind::Corpus.magic()
}

/// Held-out documents mapped to the model's vocabulary.
fn heldout_documents(model: &Model, args: &ScoreArgs) -> Result<Vec<EncodedDocument>, Failure> {
    if let [single] = args.heldout.as_slice()
        && is_corpus_file(single)
    {
        let corpus = load_corpus(single)?;
        return aligned(model, &corpus, single);
    }
    let tokenizer = Tokenizer::new(&model.corpus.tokenizer).map_err(Failure::bad_input)?;
    let options = args.records.resolve()?;
    let mut documents = Vec::new();
    let mut diagnostics: Vec<Diagnostic> = Vec::new();
    let mut warnings: Vec<String> = Vec::new();
    read::read_documents(
        &args.heldout,
        &options,
        &mut diagnostics,
        &mut warnings,
        &mut |raw| {
            documents.push(score::encode_text(
                &tokenizer,
                &model.corpus.vocabulary,
                &raw.id,
                &raw.text,
            ));
        },
    )
    .map_err(super::record_read_failure)?;
    for diagnostic in &diagnostics {
        eprintln!("themata: skipped: {diagnostic}");
    }
    for warning in &warnings {
        eprintln!("themata: warning: {warning}");
    }
    Ok(documents)
}

/// A corpus file's documents in the model's vocabulary; refused when it was
/// cut by other tokenizer settings or shares no word with the model.
fn aligned(model: &Model, corpus: &Corpus, path: &Path) -> Result<Vec<EncodedDocument>, Failure> {
    if corpus.tokenizer != model.corpus.tokenizer {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "{}: this corpus was built with other tokenizer settings than the model; score the raw documents instead, or rebuild the corpus with the model's settings",
            path.display()
        )));
    }
    score::align_corpus(corpus, &model.corpus.vocabulary).ok_or_else(|| {
        Failure::bad_input(anyhow::anyhow!(
            "{}: this corpus shares no word with the model's vocabulary; it was built from other documents or settings",
            path.display()
        ))
    })
}

fn coherence(model: &Model, args: &ScoreArgs) -> Result<CoherenceReport, Failure> {
    let settings = CoherenceSettings {
        npmi_window: args.npmi_window,
        cv_window: args.cv_window,
        ..CoherenceSettings::default()
    };
    if args.top_words < 2 {
        return Err(Failure::bad_input(anyhow::anyhow!(
            "--top-words must be at least 2"
        )));
    }
    let result = match &args.reference {
        Some(path) => {
            let corpus = load_corpus(path)?;
            let documents: Vec<Vec<u32>> = aligned(model, &corpus, path)?
                .into_iter()
                .map(|d| d.tokens)
                .collect();
            score::coherence_report(
                model,
                &documents,
                &path.display().to_string(),
                &settings,
                args.top_words,
            )
        }
        None => {
            let documents: Vec<&[u32]> = (0..model.corpus.n_docs())
                .map(|d| model.corpus.doc_tokens(d))
                .collect();
            score::coherence_report(model, &documents, "training corpus", &settings, args.top_words)
        }
    };
    result.map_err(Failure::bad_input)
}

fn print_table(output: &ScoreOutput) -> Result<(), Failure> {
    match output.heldout_perplexity {
        Some(perplexity) => say!(
            "held-out perplexity {perplexity:.3} ({}; {} tokens scored in {} documents, {} unknown tokens, {} documents with no known word)",
            match output.method {
                Some(Method::LeftToRight) => "left-to-right",
                _ => "document completion",
            },
            output.tokens_scored,
            output.heldout_documents,
            output.unknown_tokens,
            output.documents_without_known_words
        )?,
        None => say!("held-out perplexity: not computed (pass --heldout INPUT)")?,
    }
    let c = &output.coherence;
    say!(
        "coherence over the top {} words: UMass {:.3}, NPMI {:.3} (window {}), C_V {:.3} (window {})",
        c.top_words,
        c.umass,
        c.npmi,
        c.npmi_window,
        c.cv,
        c.cv_window
    )?;
    say!(
        "{:>5}  {:>7}  {:>6}  {:>6}  {:>6}  {:>10}  {:>9}  {:>8}  {:>8}  top words",
        "topic",
        "umass",
        "npmi",
        "cv",
        "share",
        "prevalence",
        "eff.words",
        "distinct",
        "exclusiv"
    )?;
    for row in &c.per_topic {
        let name = row
            .name
            .as_deref()
            .map(|name| format!("{name}: "))
            .unwrap_or_default();
        say!(
            "{:>5}  {:>7.3}  {:>6.3}  {:>6.3}  {:>5.1}%  {:>9.1}%  {:>9.1}  {:>8.3}  {:>8.3}  {name}{}",
            row.topic,
            row.umass,
            row.npmi,
            row.cv,
            100.0 * row.token_share,
            100.0 * row.document_prevalence,
            row.effective_words,
            row.distinctiveness,
            row.exclusivity,
            row.top_words
                .iter()
                .take(6)
                .cloned()
                .collect::<Vec<_>>()
                .join(" ")
        )?;
    }
    Ok(())
}
