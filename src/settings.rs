//! Every user-facing setting, defined once. Each option group is one struct
//! whose fields carry the name, type and documentation used by the command
//! line (`--help`), the config file reader and the generated list of config
//! keys. All fields are optional so that a config file can be overlaid by
//! command-line values; defaults are applied in one place, when a group is
//! resolved into the plain settings the library stages take.
//!
//! Validation happens here, without I/O, before anything is read or fitted.

#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing,
        clippy::panic
    )
)]

use std::collections::HashSet;
use std::path::{Path, PathBuf};

use clap::Args;
use serde::Deserialize;

use crate::evaluate::drift::DEFAULT_MATCH_THRESHOLD;
use crate::fitting::fit::{
    DEFAULT_BURN_IN, DEFAULT_ITERATIONS, DEFAULT_LAG, DEFAULT_LEARN_EVERY, DEFAULT_SAMPLES, DEFAULT_SEED,
    DEFAULT_TRACE_EVERY, FitSettings, PriorSpec,
};
use crate::fitting::sampler::{self, MAX_AUTO_SHARDS, MAX_TOPICS};
use crate::fitting::schedule::{SamplerChoice, SamplerKind};
use crate::ingest::read::{
    DEFAULT_DATE_FIELD, DEFAULT_ID_FIELD, DEFAULT_LABEL_FIELD, DEFAULT_MAX_DOCUMENT_BYTES,
    DEFAULT_TEXT_FIELD, FieldRole, InputFormat, NamedField, ReadOptions,
};
use crate::ingest::tokenize::{
    self, DEFAULT_MAX_LENGTH, DEFAULT_MIN_LENGTH, DEFAULT_STOPWORDS, TokenizerSettings,
};
use crate::ingest::vocab::{DEFAULT_MAX_DOC_SHARE, DEFAULT_MIN_DOCS, PruneRules};
use crate::report::numbers::{DEFAULT_PRECISION, MAX_PRECISION, Numbers};
use crate::report::{DEFAULT_MIN_SHARE, DEFAULT_WIDE_SLOTS, DocumentLayout, ListingPlan, TopicSelection};

/// A value the user gave that cannot be used.
#[derive(Debug, thiserror::Error)]
pub enum SettingsError {
    #[error("{key}: {message}")]
    Invalid { key: &'static str, message: String },
    #[error("{path}:{line}: {message}")]
    InFile {
        path: PathBuf,
        line: usize,
        message: String,
    },
    #[error("{path}: {message}")]
    File { path: PathBuf, message: String },
}

fn invalid(key: &'static str, message: impl Into<String>) -> SettingsError {
    SettingsError::Invalid {
        key,
        message: message.into(),
    }
}

/// Accepts either a single string or a list of strings in a config file.
fn one_or_many<'de, D: serde::Deserializer<'de>>(deserializer: D) -> Result<Option<Vec<String>>, D::Error> {
    #[derive(Deserialize)]
    #[serde(untagged)]
    enum OneOrMany {
        One(String),
        Many(Vec<String>),
    }
    Ok(
        Option::<OneOrMany>::deserialize(deserializer)?.map(|value| match value {
            OneOrMany::One(one) => vec![one],
            OneOrMany::Many(many) => many,
        }),
    )
}

/// Overlays `over` onto `base` field by field: a value set in `over` wins.
macro_rules! overlay {
    ($kind:ident { $($field:ident),* $(,)? }) => {
        impl $kind {
            /// Returns these settings with every value set in `over` replacing ours.
            pub fn overlay(self, over: $kind) -> $kind {
                $kind { $($field: over.$field.or(self.$field)),* }
            }
        }
    };
}

/// A range of whole numbers a setting accepts. One definition serves the
/// command line (as a clap value parser, so `--help` and its errors agree)
/// and config files (checked when the group is resolved).
#[derive(Clone, Copy, Debug)]
pub struct WholeRange {
    min: u64,
    max: u64,
}

impl WholeRange {
    /// At least `min`.
    pub const fn at_least(min: u64) -> WholeRange {
        WholeRange { min, max: u64::MAX }
    }

    /// From `min` to `max`, both included.
    pub const fn between(min: u64, max: u64) -> WholeRange {
        WholeRange { min, max }
    }

    fn describe(self) -> String {
        if self.max == u64::MAX && self.min == 0 {
            "a whole number (0 or more)".to_string()
        } else if self.max == u64::MAX {
            format!("a whole number of at least {}", self.min)
        } else {
            format!("a whole number from {} to {}", self.min, self.max)
        }
    }

    /// Checks a value from a config file.
    pub fn check(self, key: &'static str, value: u64) -> Result<(), SettingsError> {
        if (self.min..=self.max).contains(&value) {
            Ok(())
        } else {
            Err(invalid(key, format!("must be {}, got {value}", self.describe())))
        }
    }

    /// The command-line parser of this range for values of type `T`.
    pub fn parser<T>(self) -> impl Fn(&str) -> Result<T, String> + Clone + Send + Sync + 'static
    where
        T: TryFrom<u64>,
    {
        move |text: &str| {
            text.trim()
                .parse::<u64>()
                .ok()
                .filter(|value| (self.min..=self.max).contains(value))
                .and_then(|value| T::try_from(value).ok())
                .ok_or_else(|| format!("`{text}` is not {}", self.describe()))
        }
    }
}

/// A share: a number from 0 to 1, with each end included or not.
#[derive(Clone, Copy, Debug)]
pub struct ShareRange {
    low_included: bool,
    high_included: bool,
}

impl ShareRange {
    /// Above 0 and at most 1.
    pub const ABOVE_ZERO: ShareRange = ShareRange {
        low_included: false,
        high_included: true,
    };
    /// At least 0 and below 1.
    pub const BELOW_ONE: ShareRange = ShareRange {
        low_included: true,
        high_included: false,
    };
    /// From 0 to 1, both included.
    pub const CLOSED: ShareRange = ShareRange {
        low_included: true,
        high_included: true,
    };
    /// Strictly between 0 and 1 (a probability of an interval).
    pub const OPEN: ShareRange = ShareRange {
        low_included: false,
        high_included: false,
    };

    fn contains(self, value: f64) -> bool {
        let above = if self.low_included {
            value >= 0.0
        } else {
            value > 0.0
        };
        let below = if self.high_included {
            value <= 1.0
        } else {
            value < 1.0
        };
        above && below
    }

    fn describe(self) -> &'static str {
        match (self.low_included, self.high_included) {
            (false, true) => "a number above 0 and at most 1",
            (true, false) => "a number from 0 up to (not including) 1",
            (false, false) => "a number strictly between 0 and 1",
            (true, true) => "a number from 0 to 1",
        }
    }

    /// Checks a value from a config file.
    pub fn check(self, key: &'static str, value: f64) -> Result<(), SettingsError> {
        if self.contains(value) {
            Ok(())
        } else {
            Err(invalid(key, format!("must be {}, got {value}", self.describe())))
        }
    }

    /// The command-line parser of this range.
    pub fn parser(self) -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
        move |text: &str| {
            text.trim()
                .parse::<f64>()
                .ok()
                .filter(|value| self.contains(*value))
                .ok_or_else(|| format!("`{text}` is not {}", self.describe()))
        }
    }
}

/// Help text with its default appended, so the default is written once.
fn help(text: &str, default: impl std::fmt::Display) -> String {
    format!("{text} [default: {default}]")
}

/// Token lengths, in characters.
pub const TOKEN_LENGTH: WholeRange = WholeRange::at_least(1);
/// Any whole number (seeds).
pub const ANY_WHOLE: WholeRange = WholeRange::at_least(0);
/// Counts that must be at least 1 (sweeps, samples, lags, words, documents, threads, shards).
pub const AT_LEAST_ONE: WholeRange = WholeRange::at_least(1);
/// Numbers of topics.
pub const TOPICS: WholeRange = WholeRange::between(1, MAX_TOPICS as u64);
/// The held-out fraction of `--holdout`, 0 when none is kept out.
pub const DEFAULT_HOLDOUT: f64 = 0.0;
/// Top words printed per topic, by default.
pub const DEFAULT_TOP_WORDS: usize = 10;

/// How input files are read.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct InputOptions {
    /// Input files or folders (config file only; on the command line they are positional).
    #[arg(skip)]
    pub paths: Option<Vec<PathBuf>>,
    #[arg(
        long,
        value_enum,
        help = help("Input format: auto decides by file extension (.txt/.md, .jsonl/.ndjson, .csv)", "auto")
    )]
    pub format: Option<InputFormat>,
    #[arg(long, value_name = "NAME", help = help("JSON Lines field or CSV column holding the text", DEFAULT_TEXT_FIELD))]
    pub text_field: Option<String>,
    #[arg(
        long,
        value_name = "NAME",
        help = help("JSON Lines field or CSV column holding the document id; records without one get file:line", DEFAULT_ID_FIELD)
    )]
    pub id_field: Option<String>,
    #[arg(
        long,
        value_name = "NAME",
        help = help("JSON Lines field or CSV column holding a label, kept as metadata", DEFAULT_LABEL_FIELD)
    )]
    pub label_field: Option<String>,
    #[arg(
        long,
        value_name = "NAME",
        help = help("JSON Lines field or CSV column holding a date (ISO 8601, e.g. 2024-03-01), kept as metadata for the report", DEFAULT_DATE_FIELD)
    )]
    pub date_field: Option<String>,
    #[arg(
        long,
        num_args = 0..=1,
        default_missing_value = "true",
        value_name = "BOOL",
        help = help("Fail (exit 2) if any document is skipped, instead of reporting it", false)
    )]
    pub strict: Option<bool>,
    #[arg(
        long,
        value_name = "N",
        value_parser = AT_LEAST_ONE.parser::<usize>(),
        help = help("Cut documents longer than N tokens into chunks of N tokens (the last one shorter), each a document of its own, named ID#1, ID#2, ...; listings can sum them back (--merge-chunks)", "documents are kept whole")
    )]
    pub split_every: Option<usize>,
    #[arg(
        long,
        value_name = "BYTES",
        value_parser = AT_LEAST_ONE.parser::<usize>(),
        help = help("Skip, with a diagnostic, a document longer than this many bytes (a text file, a JSON line, a CSV record), so one runaway record cannot exhaust memory", DEFAULT_MAX_DOCUMENT_BYTES)
    )]
    pub max_document_bytes: Option<usize>,
}
overlay!(InputOptions {
    paths,
    format,
    text_field,
    id_field,
    label_field,
    date_field,
    strict,
    split_every,
    max_document_bytes
});

impl InputOptions {
    /// Resolves reading options with defaults applied.
    pub fn resolve(&self) -> Result<ReadOptions, SettingsError> {
        let field =
            |key: &'static str, value: &Option<String>, default: &str| -> Result<String, SettingsError> {
                let value = value.clone().unwrap_or_else(|| default.to_string());
                if value.trim().is_empty() {
                    return Err(invalid(key, "must not be empty"));
                }
                Ok(value)
            };
        Ok(ReadOptions {
            format: self.format.unwrap_or_default(),
            text_field: field("text_field", &self.text_field, DEFAULT_TEXT_FIELD)?,
            id_field: field("id_field", &self.id_field, DEFAULT_ID_FIELD)?,
            label_field: field("label_field", &self.label_field, DEFAULT_LABEL_FIELD)?,
            date_field: field("date_field", &self.date_field, DEFAULT_DATE_FIELD)?,
            max_document_bytes: match self.max_document_bytes {
                Some(bytes) => {
                    AT_LEAST_ONE.check("max_document_bytes", bytes as u64)?;
                    bytes
                }
                None => DEFAULT_MAX_DOCUMENT_BYTES,
            },
            unique_ids: true,
            named_fields: [
                (FieldRole::Id, &self.id_field),
                (FieldRole::Label, &self.label_field),
                (FieldRole::Date, &self.date_field),
            ]
            .into_iter()
            .filter_map(|(role, name)| {
                name.as_ref().map(|name| NamedField {
                    role,
                    name: name.clone(),
                })
            })
            .collect(),
        })
    }

    /// Whether skipped documents are a failure.
    pub fn is_strict(&self) -> bool {
        self.strict.unwrap_or(false)
    }

    /// The chunk length of `split_every`, checked.
    pub fn split_every(&self) -> Result<Option<usize>, SettingsError> {
        if let Some(every) = self.split_every {
            AT_LEAST_ONE.check("split_every", every as u64)?;
        }
        Ok(self.split_every)
    }
}

/// How text is cut into tokens.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct TokenizerOptions {
    #[arg(
        long,
        value_name = "LANG|FILE|none",
        value_delimiter = ',',
        help = help("Stopword lists: a language name or code, a file with one word per line, or none; repeat or separate with commas", DEFAULT_STOPWORDS)
    )]
    #[serde(default, deserialize_with = "one_or_many")]
    pub stopwords: Option<Vec<String>>,
    #[arg(long, value_name = "N", value_parser = TOKEN_LENGTH.parser::<usize>(), help = help("Shortest token kept, in characters", DEFAULT_MIN_LENGTH))]
    pub min_length: Option<usize>,
    #[arg(long, value_name = "N", value_parser = TOKEN_LENGTH.parser::<usize>(), help = help("Longest token kept, in characters", DEFAULT_MAX_LENGTH))]
    pub max_length: Option<usize>,
    #[arg(
        long,
        num_args = 0..=1,
        default_missing_value = "true",
        value_name = "BOOL",
        help = help("Keep tokens made only of digits and punctuation", false)
    )]
    pub keep_numbers: Option<bool>,
    #[arg(
        long,
        num_args = 0..=1,
        default_missing_value = "true",
        value_name = "BOOL",
        help = help("Keep letter case instead of lowercasing", false)
    )]
    pub keep_case: Option<bool>,
    #[arg(long, value_name = "LANG", help = help("Reduce words to their Snowball stem in this language (e.g. english)", "no stemming"))]
    pub stem: Option<String>,
}
overlay!(TokenizerOptions {
    stopwords,
    min_length,
    max_length,
    keep_numbers,
    keep_case,
    stem
});

impl TokenizerOptions {
    /// Resolves tokenizer settings, loading stopword lists.
    pub fn resolve(&self) -> Result<TokenizerSettings, SettingsError> {
        let specs = self
            .stopwords
            .clone()
            .unwrap_or_else(|| vec![DEFAULT_STOPWORDS.to_string()]);
        let (stopwords, stopword_sources) =
            tokenize::resolve_stopwords(&specs).map_err(|err| invalid("stopwords", err.to_string()))?;
        let min_length = self.min_length.unwrap_or(DEFAULT_MIN_LENGTH);
        let max_length = self.max_length.unwrap_or(DEFAULT_MAX_LENGTH);
        TOKEN_LENGTH.check("min_length", min_length as u64)?;
        TOKEN_LENGTH.check("max_length", max_length as u64)?;
        if max_length < min_length {
            return Err(invalid(
                "max_length",
                format!("must be at least min_length ({min_length}), got {max_length}"),
            ));
        }
        Ok(TokenizerSettings {
            lowercase: !self.keep_case.unwrap_or(false),
            drop_numbers: !self.keep_numbers.unwrap_or(false),
            min_length,
            max_length,
            stopwords,
            stopword_sources,
            stemmer: self.stem.clone().map(|lang| lang.to_lowercase()),
        })
    }
}

/// Which words stay in the vocabulary.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct VocabularyOptions {
    #[arg(long, value_name = "N", value_parser = AT_LEAST_ONE.parser::<u32>(), help = help("Keep words found in at least this many documents", DEFAULT_MIN_DOCS))]
    pub min_docs: Option<u32>,
    #[arg(
        long,
        value_name = "F",
        value_parser = ShareRange::ABOVE_ZERO.parser(),
        help = help("Drop words found in more than this share of documents, above 0 and at most 1", DEFAULT_MAX_DOC_SHARE)
    )]
    pub max_doc_share: Option<f64>,
    #[arg(long, value_name = "N", value_parser = AT_LEAST_ONE.parser::<usize>(), help = help("Keep at most this many words, most frequent first", "no limit"))]
    pub max_words: Option<usize>,
    #[arg(long, value_name = "FILE", help = help("File of words always kept, one per line", "none"))]
    pub keep_words: Option<PathBuf>,
    #[arg(long, value_name = "FILE", help = help("File of words always dropped, one per line", "none"))]
    pub drop_words: Option<PathBuf>,
}
overlay!(VocabularyOptions {
    min_docs,
    max_doc_share,
    max_words,
    keep_words,
    drop_words
});

fn read_word_list(key: &'static str, path: &Path) -> Result<HashSet<String>, SettingsError> {
    let text = std::fs::read_to_string(path).map_err(|err| SettingsError::File {
        path: path.to_path_buf(),
        message: format!("cannot read the {key} list: {err}"),
    })?;
    Ok(text
        .lines()
        .map(str::trim)
        .filter(|line| !line.is_empty() && !line.starts_with('#'))
        .map(str::to_string)
        .collect())
}

impl VocabularyOptions {
    /// Resolves pruning rules, reading keep/drop lists.
    pub fn resolve(&self) -> Result<PruneRules, SettingsError> {
        let min_docs = self.min_docs.unwrap_or(DEFAULT_MIN_DOCS);
        AT_LEAST_ONE.check("min_docs", u64::from(min_docs))?;
        let max_doc_share = self.max_doc_share.unwrap_or(DEFAULT_MAX_DOC_SHARE);
        ShareRange::ABOVE_ZERO.check("max_doc_share", max_doc_share)?;
        if let Some(max_words) = self.max_words {
            AT_LEAST_ONE.check("max_words", max_words as u64)?;
        }
        let list = |key, path: &Option<PathBuf>| match path {
            Some(path) => read_word_list(key, path),
            None => Ok(HashSet::new()),
        };
        Ok(PruneRules {
            min_docs,
            max_doc_share,
            max_words: self.max_words,
            keep: list("keep_words", &self.keep_words)?,
            drop: list("drop_words", &self.drop_words)?,
        })
    }
}

/// How the model is fitted.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct FitOptions {
    /// Number of topics K (required)
    #[arg(long, short = 'k', value_name = "K", value_parser = TOPICS.parser::<usize>())]
    pub topics: Option<usize>,
    #[arg(long, value_name = "N", value_parser = AT_LEAST_ONE.parser::<u64>(), help = help("Gibbs sweeps over the whole corpus, burn-in included", DEFAULT_ITERATIONS))]
    pub iterations: Option<u64>,
    #[arg(
        long,
        value_name = "N",
        help = help("Sweeps treated as burn-in, before the chain is taken as settled", format!("{DEFAULT_BURN_IN}, at most half the iterations"))
    )]
    pub burn_in: Option<u64>,
    #[arg(
        long,
        value_name = "learn|X|X,Y,...",
        help = help("Document-topic prior: `learn` (asymmetric, learned from the data after burn-in), one value for every topic, or K comma-separated values", "learn")
    )]
    pub alpha: Option<PriorSpec>,
    #[arg(
        long,
        value_name = "learn|X|X,Y,...",
        help = help("Topic-word prior: `learn` (symmetric, learned from the data after burn-in), one value for every word, or one comma-separated value per vocabulary word", "learn")
    )]
    pub beta: Option<PriorSpec>,
    #[arg(long, value_name = "N", value_parser = AT_LEAST_ONE.parser::<u64>(), help = help("Learn the priors every N sweeps after burn-in", DEFAULT_LEARN_EVERY))]
    pub learn_every: Option<u64>,
    #[arg(
        long,
        value_name = "S",
        value_parser = AT_LEAST_ONE.parser::<u64>(),
        help = help("Posterior samples kept at the end of the run; estimates and intervals average them", DEFAULT_SAMPLES)
    )]
    pub samples: Option<u64>,
    #[arg(long, value_name = "L", value_parser = AT_LEAST_ONE.parser::<u64>(), help = help("Sweeps between kept samples", DEFAULT_LAG))]
    pub lag: Option<u64>,
    #[arg(
        long,
        value_name = "S",
        value_parser = ANY_WHOLE.parser::<u64>(),
        help = help("Seed of the random stream; the same seed and inputs give the same model", DEFAULT_SEED)
    )]
    pub seed: Option<u64>,
    #[arg(long, value_name = "T", value_parser = AT_LEAST_ONE.parser::<usize>(), help = help("Worker threads", "all cores"))]
    pub threads: Option<usize>,
    #[arg(long, value_name = "N", value_parser = AT_LEAST_ONE.parser::<u64>(), help = help("Record the log-likelihood every N sweeps", DEFAULT_TRACE_EVERY))]
    pub trace_every: Option<u64>,
    #[arg(
        long,
        value_name = "F",
        value_parser = ShareRange::BELOW_ONE.parser(),
        help = help("Keep this fraction of documents out of training and report their held-out perplexity", DEFAULT_HOLDOUT)
    )]
    pub holdout: Option<f64>,
    #[arg(
        long,
        value_enum,
        value_name = "NAME",
        help = help("Sampler: `exact` (exact draws with cached coefficients, O(K) per token), `metropolis` (Metropolis-Hastings with O(1) document and word proposals), `sparse` (exact draws at O(document length + log K) per token, for short documents and many topics), all three parallel over a fixed grid of blocks; `reference` (the plain O(K) collapsed Gibbs sweep, one thread); or `auto` (the kernel expected to reach a good model first, by mean document length L and K: exact for small K, sparse for larger K, metropolis when both L and K exceed about 330)", "auto")
    )]
    pub sampler: Option<SamplerChoice>,
    #[arg(
        long,
        value_name = "N",
        value_parser = AT_LEAST_ONE.parser::<usize>(),
        help = help("Shards for parallel sweeps: documents and words are each cut into N parts, giving N x N blocks; fixed per model, so the thread count never changes the result", default_shards_help())
    )]
    pub shards: Option<usize>,
    #[arg(
        long,
        value_name = "published|DIR",
        help = help("Start from a previous model instead of at random: `published` (the run root's published model, with `run`) or a model folder; unchanged documents keep their topics, the rest are drawn against the previous topics; needs the same number of topics", "a random start")
    )]
    pub start_from: Option<String>,
    #[arg(
        long,
        value_name = "N",
        value_parser = AT_LEAST_ONE.parser::<u64>(),
        help = help("Write a checkpoint (OUT.checkpoint beside the output folder) every N sweeps; a run interrupted part way then finishes from it when started again with the same inputs and settings (`fit --resume OUT`, or `run` again), to the same bytes", "no checkpoints")
    )]
    pub checkpoint_every: Option<u64>,
}
overlay!(FitOptions {
    topics,
    iterations,
    burn_in,
    alpha,
    beta,
    learn_every,
    samples,
    lag,
    seed,
    threads,
    trace_every,
    holdout,
    sampler,
    shards,
    start_from,
    checkpoint_every
});

/// The worker threads asked for, or every core when none is given.
pub fn resolve_threads(threads: Option<usize>) -> Result<usize, SettingsError> {
    match threads {
        Some(0) => Err(invalid("threads", "must be at least 1")),
        Some(threads) => Ok(threads),
        None => Ok(std::thread::available_parallelism().map_or(1, |n| n.get())),
    }
}

/// Where a warm start begins.
#[derive(Clone, Debug, PartialEq)]
pub enum StartFrom {
    /// The published model of the run root (`run` with a `[publish]` root).
    Published,
    /// The model of this model folder.
    Folder(PathBuf),
}

/// The `start_from` value that names the published model.
pub const START_FROM_PUBLISHED: &str = "published";

/// Fit settings plus the thread count (which never changes the result) and
/// the held-out fraction.
#[derive(Clone, Debug, PartialEq)]
pub struct FitPlan {
    pub settings: FitSettings,
    pub threads: usize,
    pub holdout: f64,
    /// A warm start, when asked for.
    pub start_from: Option<StartFrom>,
    /// Write a checkpoint every this many sweeps (never stored in the model).
    pub checkpoint_every: Option<u64>,
}

impl FitOptions {
    /// Resolves fit settings with defaults applied and checks every rule
    /// that does not need the corpus (`fit::resolve` checks the rest).
    pub fn resolve(&self) -> Result<FitPlan, SettingsError> {
        let n_topics = self
            .topics
            .ok_or_else(|| invalid("topics", "is required (the number of topics, e.g. 20)"))?;
        let iterations = self.iterations.unwrap_or(DEFAULT_ITERATIONS);
        let settings = FitSettings {
            n_topics,
            iterations,
            burn_in: self.burn_in.unwrap_or(DEFAULT_BURN_IN.min(iterations / 2)),
            alpha: self.alpha.clone().unwrap_or(PriorSpec::Learn),
            beta: self.beta.clone().unwrap_or(PriorSpec::Learn),
            learn_every: self.learn_every.unwrap_or(DEFAULT_LEARN_EVERY),
            samples: self.samples.unwrap_or(DEFAULT_SAMPLES),
            lag: self.lag.unwrap_or(DEFAULT_LAG),
            seed: self.seed.unwrap_or(DEFAULT_SEED),
            trace_every: self.trace_every.unwrap_or(DEFAULT_TRACE_EVERY),
            sampler: self.sampler.unwrap_or_default(),
            shards: self.shards,
        };
        check_fit_settings(&settings)?;
        let holdout = self.holdout.unwrap_or(DEFAULT_HOLDOUT);
        ShareRange::BELOW_ONE.check("holdout", holdout)?;
        let start_from = match self.start_from.as_deref().map(str::trim) {
            None => None,
            Some("") => return Err(invalid("start_from", "must be `published` or a model folder")),
            Some(START_FROM_PUBLISHED) => Some(StartFrom::Published),
            Some(folder) => Some(StartFrom::Folder(PathBuf::from(folder))),
        };
        if let Some(every) = self.checkpoint_every {
            AT_LEAST_ONE.check("checkpoint_every", every)?;
        }
        Ok(FitPlan {
            holdout,
            settings,
            threads: resolve_threads(self.threads)?,
            start_from,
            checkpoint_every: self.checkpoint_every,
        })
    }
}

/// Checks fit settings against every rule that does not need the corpus:
/// the one definition of those rules, used for options from the command
/// line and config files and for settings built in code (the K search
/// checks each candidate with it). `fit::resolve` adds the checks that
/// need the corpus.
pub fn check_fit_settings(settings: &FitSettings) -> Result<(), SettingsError> {
    TOPICS.check("topics", settings.n_topics as u64)?;
    AT_LEAST_ONE.check("iterations", settings.iterations)?;
    if settings.burn_in >= settings.iterations {
        return Err(invalid(
            "burn_in",
            format!(
                "must be smaller than iterations ({}), got {}",
                settings.iterations, settings.burn_in
            ),
        ));
    }
    AT_LEAST_ONE.check("learn_every", settings.learn_every)?;
    AT_LEAST_ONE.check("trace_every", settings.trace_every)?;
    AT_LEAST_ONE.check("samples", settings.samples)?;
    AT_LEAST_ONE.check("lag", settings.lag)?;
    if let Some(shards) = settings.shards {
        AT_LEAST_ONE.check("shards", shards as u64)?;
    }
    let after_burn_in = settings.iterations - settings.burn_in;
    let needed = (settings.samples - 1)
        .checked_mul(settings.lag)
        .and_then(|sweeps| sweeps.checked_add(1));
    if needed.is_none_or(|needed| needed > after_burn_in) {
        return Err(invalid(
            "samples",
            format!(
                "{} samples {} sweeps apart need {} sweeps after burn-in, but iterations - burn_in is {after_burn_in}; lower samples or lag, or raise iterations",
                settings.samples,
                settings.lag,
                needed.map_or_else(|| "more".to_string(), |n| n.to_string())
            ),
        ));
    }
    check_prior("alpha", &settings.alpha, Some(settings.n_topics), "topic")?;
    check_prior("beta", &settings.beta, None, "vocabulary word")?;
    Ok(())
}

/// Checks a prior's values (positive, finite) and, for alpha, the number of
/// values (1 or one per topic); beta's length needs the vocabulary and is
/// checked by `fit::resolve`.
fn check_prior(
    key: &'static str,
    spec: &PriorSpec,
    expected: Option<usize>,
    per: &str,
) -> Result<(), SettingsError> {
    let values: &[f64] = match spec {
        PriorSpec::Learn => return Ok(()),
        PriorSpec::Symmetric(value) => std::slice::from_ref(value),
        PriorSpec::List(values) => values,
    };
    if let Some(value) = values.iter().find(|value| !(value.is_finite() && **value > 0.0)) {
        return Err(invalid(
            key,
            format!("values must be positive and finite, got {value}"),
        ));
    }
    if let Some(expected) = expected
        && values.len() != 1
        && values.len() != expected
    {
        return Err(invalid(
            key,
            format!(
                "has {} values but needs 1 or {expected} (one per {per})",
                values.len()
            ),
        ));
    }
    Ok(())
}

/// The `[default: ...]` of `--shards`, from the kernels' own figures.
fn default_shards_help() -> String {
    let per_shard = |kind| sampler::tokens_per_shard(kind).map_or_else(String::new, thousands);
    format!(
        "one per {} tokens for exact, {} for metropolis and sparse, at least 2 from {} tokens, at most {MAX_AUTO_SHARDS}",
        per_shard(SamplerKind::Exact),
        per_shard(SamplerKind::Metropolis),
        thousands(sampler::TWO_SHARDS_FROM)
    )
}

/// A whole number with commas between groups of three digits.
fn thousands(value: usize) -> String {
    let digits = value.to_string();
    let mut out = String::new();
    for (idx, digit) in digits.chars().enumerate() {
        if idx > 0 && (digits.len() - idx).is_multiple_of(3) {
            out.push(',');
        }
        out.push(digit);
    }
    out
}

/// Where a run writes and what it shows.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct OutputOptions {
    /// Output folder; relative paths in a config file are taken from the config file's folder
    #[arg(long = "out", value_name = "DIR")]
    pub dir: Option<PathBuf>,
    #[arg(long, value_name = "N", value_parser = AT_LEAST_ONE.parser::<usize>(), help = help("Top words printed per topic", DEFAULT_TOP_WORDS))]
    pub top_words: Option<usize>,
}
overlay!(OutputOptions { dir, top_words });

/// How many published runs a run root keeps, by default.
pub const DEFAULT_KEEP: usize = 7;

/// Where `run` publishes: a run root holding dated run folders, a pointer to
/// the published one, the topic-id counter and the names file.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct PublishOptions {
    #[arg(
        long,
        value_name = "DIR",
        help = help("Run root: each run writes a new dated folder under it, published runs are reached through ROOT/current, topics keep their ids from run to run", "none: write the output folder of [output]")
    )]
    pub root: Option<PathBuf>,
    #[arg(long, value_name = "N", value_parser = AT_LEAST_ONE.parser::<usize>(), help = help("Published runs kept under the root; older ones are removed after the pointer moves", DEFAULT_KEEP))]
    pub keep: Option<usize>,
    #[arg(
        long,
        value_name = "D",
        value_parser = ShareRange::ABOVE_ZERO.parser(),
        help = help("A new topic takes the id of the published topic it is matched to when their Jensen-Shannon distance is below D (0 to 1; the distance is at most 0.83)", DEFAULT_MATCH_THRESHOLD)
    )]
    pub match_threshold: Option<f64>,
}
overlay!(PublishOptions {
    root,
    keep,
    match_threshold
});

/// Resolved publishing settings.
#[derive(Clone, Debug, PartialEq)]
pub struct PublishPlan {
    pub root: PathBuf,
    pub keep: usize,
    pub match_threshold: f64,
}

impl PublishOptions {
    /// The publishing plan, or `None` when no root is set.
    pub fn resolve(&self) -> Result<Option<PublishPlan>, SettingsError> {
        let Some(root) = &self.root else {
            return Ok(None);
        };
        let keep = self.keep.unwrap_or(DEFAULT_KEEP);
        AT_LEAST_ONE.check("keep", keep as u64)?;
        let match_threshold = self.match_threshold.unwrap_or(DEFAULT_MATCH_THRESHOLD);
        ShareRange::ABOVE_ZERO.check("match_threshold", match_threshold)?;
        Ok(Some(PublishPlan {
            root: root.clone(),
            keep,
            match_threshold,
        }))
    }
}

/// Conditions a run must meet before it is published; each is off unless set.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct GateOptions {
    #[arg(
        long,
        value_name = "F",
        value_parser = ShareRange::CLOSED.parser(),
        help = help("Least share of the new topics that must match a published topic (0 to 1)", "no condition")
    )]
    pub min_matched_share: Option<f64>,
    #[arg(
        long,
        value_name = "F",
        value_parser = non_negative_parser,
        help = help("Largest relative rise of held-out perplexity against the published model, both scored on tonight's held-out documents (0.05 = 5%; needs holdout)", "no condition")
    )]
    pub max_perplexity_rise: Option<f64>,
    #[arg(
        long,
        value_name = "X",
        value_parser = npmi_parser,
        help = help("Least mean NPMI of the topics' top words on the training documents (-1 to 1)", "no condition")
    )]
    pub min_mean_npmi: Option<f64>,
}
overlay!(GateOptions {
    min_matched_share,
    max_perplexity_rise,
    min_mean_npmi
});

/// Parses a number of at least 0.
fn non_negative_parser(text: &str) -> Result<f64, String> {
    text.trim()
        .parse::<f64>()
        .ok()
        .filter(|value| value.is_finite() && *value >= 0.0)
        .ok_or_else(|| format!("`{text}` is not a number of at least 0"))
}

/// Parses an NPMI bound, from -1 to 1.
fn npmi_parser(text: &str) -> Result<f64, String> {
    text.trim()
        .parse::<f64>()
        .ok()
        .filter(|value| (-1.0..=1.0).contains(value))
        .ok_or_else(|| format!("`{text}` is not a number from -1 to 1"))
}

impl GateOptions {
    /// Checks the conditions' values.
    pub fn check(&self) -> Result<(), SettingsError> {
        if let Some(share) = self.min_matched_share {
            ShareRange::CLOSED.check("min_matched_share", share)?;
        }
        if let Some(rise) = self.max_perplexity_rise {
            non_negative_parser(&rise.to_string())
                .map_err(|message| invalid("max_perplexity_rise", message))?;
        }
        if let Some(npmi) = self.min_mean_npmi {
            npmi_parser(&npmi.to_string()).map_err(|message| invalid("min_mean_npmi", message))?;
        }
        Ok(())
    }
}

/// Significant digits of printed numbers.
pub const PRECISION: WholeRange = WholeRange::between(1, MAX_PRECISION as u64);
/// The help text of `--precision`, shared by every command that prints numbers.
pub const PRECISION_HELP: &str = "Significant digits of the numbers in TSV and JSON output (tables round for reading); 17 reads back to the exact value";

/// How document listings are cut down and printed (`show --documents`,
/// `assign`, and the files `run` writes).
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ListingOptions {
    #[arg(long, value_name = "DIGITS", value_parser = PRECISION.parser::<usize>(), help = help(PRECISION_HELP, DEFAULT_PRECISION))]
    pub precision: Option<usize>,
    #[arg(
        long,
        value_name = "F",
        value_parser = ShareRange::BELOW_ONE.parser(),
        conflicts_with = "all_topics",
        help = help("List a document's topics whose share is at least F (its largest topic always); with --top and no --min-share, the N largest whatever their share", DEFAULT_MIN_SHARE)
    )]
    pub min_share: Option<f64>,
    #[arg(
        long,
        value_name = "N",
        value_parser = AT_LEAST_ONE.parser::<usize>(),
        conflicts_with = "all_topics",
        help = help("List at most a document's N largest topics; in the wide layout, the number of topic columns", format!("no limit in the long layout, {DEFAULT_WIDE_SLOTS} in the wide one"))
    )]
    pub top: Option<usize>,
    #[arg(
        long,
        num_args = 0..=1,
        default_missing_value = "true",
        value_name = "BOOL",
        help = help("List every topic of every document, in topic order", false)
    )]
    pub all_topics: Option<bool>,
    #[arg(
        long,
        value_enum,
        value_name = "LAYOUT",
        help = help("Document rows: `long` (one row per document and topic) or `wide` (one row per document: its largest topics side by side); `run` writes both files", "long")
    )]
    pub layout: Option<DocumentLayout>,
    #[arg(
        long,
        num_args = 0..=1,
        default_missing_value = "true",
        value_name = "BOOL",
        help = help("List each document cut by --split-every once, its chunks' topic counts summed back (shares and intervals of the whole document)", false)
    )]
    pub merge_chunks: Option<bool>,
}
impl ListingOptions {
    /// Returns these settings with every value set in `over` replacing
    /// ours; a topic selection in `over` (`all_topics`, or `min_share` and
    /// `top`) replaces ours whole, so the command line can switch between
    /// them.
    pub fn overlay(self, over: ListingOptions) -> ListingOptions {
        let selects = over.all_topics.is_some() || over.min_share.is_some() || over.top.is_some();
        let (min_share, top, all_topics) = if selects {
            (over.min_share, over.top, over.all_topics)
        } else {
            (self.min_share, self.top, self.all_topics)
        };
        ListingOptions {
            precision: over.precision.or(self.precision),
            min_share,
            top,
            all_topics,
            layout: over.layout.or(self.layout),
            merge_chunks: over.merge_chunks.or(self.merge_chunks),
        }
    }

    /// The listing plan with defaults applied; checks values from config files.
    pub fn resolve(&self) -> Result<ListingPlan, SettingsError> {
        let precision = self.precision.unwrap_or(DEFAULT_PRECISION);
        PRECISION.check("precision", precision as u64)?;
        if let Some(min_share) = self.min_share {
            ShareRange::BELOW_ONE.check("min_share", min_share)?;
        }
        if let Some(top) = self.top {
            AT_LEAST_ONE.check("top", top as u64)?;
        }
        let all_topics = self.all_topics.unwrap_or(false);
        if all_topics && (self.min_share.is_some() || self.top.is_some()) {
            return Err(invalid(
                "all_topics",
                "lists every topic; it cannot be combined with min_share or top",
            ));
        }
        let selection = if all_topics {
            TopicSelection::All
        } else {
            TopicSelection::Largest {
                min_share: self.min_share.unwrap_or(if self.top.is_some() {
                    0.0
                } else {
                    DEFAULT_MIN_SHARE
                }),
                top: self.top,
            }
        };
        Ok(ListingPlan {
            numbers: Numbers::with_precision(precision),
            selection,
            layout: self.layout.unwrap_or_default(),
            merge_chunks: self.merge_chunks.unwrap_or(false),
        })
    }
}

/// `--precision` alone, for the commands that print numbers but no
/// document listing (`score`, `sweep`); the same range, help and default as
/// [`ListingOptions::precision`].
#[derive(Args, Clone, Debug, Default, PartialEq)]
pub struct PrecisionOptions {
    #[arg(long, value_name = "DIGITS", value_parser = PRECISION.parser::<usize>(), help = help(PRECISION_HELP, DEFAULT_PRECISION))]
    pub precision: Option<usize>,
}

impl PrecisionOptions {
    /// How numbers are printed.
    pub fn resolve(&self) -> Numbers {
        Numbers::with_precision(self.precision.unwrap_or(DEFAULT_PRECISION))
    }
}

/// A whole run as a config file describes it.
#[derive(Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RunConfig {
    #[serde(default)]
    pub input: InputOptions,
    #[serde(default)]
    pub tokenizer: TokenizerOptions,
    #[serde(default)]
    pub vocabulary: VocabularyOptions,
    #[serde(default)]
    pub fit: FitOptions,
    #[serde(default)]
    pub output: OutputOptions,
    #[serde(default)]
    pub publish: PublishOptions,
    #[serde(default)]
    pub gate: GateOptions,
    #[serde(default)]
    pub listing: ListingOptions,
}

/// A config-file error message with the Rust type names the TOML reader
/// puts in it (`expected usize`) said in words (also used for the Python
/// package's keyword options).
pub fn plain_type_names(message: &str) -> String {
    const NAMES: [(&str, &str); 10] = [
        ("usize", "a whole number (0 or more)"),
        ("u64", "a whole number (0 or more)"),
        ("u32", "a whole number (0 or more)"),
        ("u16", "a whole number (0 or more)"),
        ("u8", "a whole number (0 or more)"),
        ("i64", "a whole number"),
        ("i32", "a whole number"),
        ("f64", "a number"),
        ("f32", "a number"),
        ("bool", "true or false"),
    ];
    let mut out = message.to_string();
    for (name, words) in NAMES {
        for lead in ["expected ", "expected a ", "expected an "] {
            let pattern = format!("{lead}{name}");
            if let Some(at) = out.find(&pattern) {
                let end = at + pattern.len();
                let boundary = out[end..]
                    .chars()
                    .next()
                    .is_none_or(|c| !c.is_ascii_alphanumeric());
                if boundary {
                    out.replace_range(at..end, &format!("expected {words}"));
                }
            }
        }
    }
    out
}

/// 1-based line of a byte offset in `text`.
fn line_of(text: &str, offset: usize) -> usize {
    text[..offset.min(text.len())]
        .bytes()
        .filter(|&b| b == b'\n')
        .count()
        + 1
}

/// `section.key` set on 1-based line `line`, if that line sets a key.
fn key_at_line(text: &str, line: usize) -> Option<String> {
    let mut section = String::new();
    for (idx, content) in text.lines().enumerate() {
        let trimmed = content.trim();
        if let Some(name) = trimmed.strip_prefix('[').and_then(|rest| rest.strip_suffix(']')) {
            section = name.trim().to_string();
        } else if idx + 1 == line {
            let (key, _) = trimmed.split_once('=')?;
            let key = key.trim().trim_matches('"');
            return Some(if section.is_empty() {
                key.to_string()
            } else {
                format!("{section}.{key}")
            });
        }
    }
    None
}

/// 1-based line where `key` is set inside `[section]`, if it can be found.
fn line_of_key(text: &str, section: &str, key: &str) -> Option<usize> {
    let mut current = String::new();
    for (idx, line) in text.lines().enumerate() {
        let trimmed = line.trim();
        if let Some(name) = trimmed.strip_prefix('[').and_then(|rest| rest.strip_suffix(']')) {
            current = name.trim().to_string();
            continue;
        }
        if current == section
            && let Some((name, _)) = trimmed.split_once('=')
            && name.trim().trim_matches('"') == key
        {
            return Some(idx + 1);
        }
    }
    None
}

/// Joins `relative` onto `base`, folding `.` and `name/..` pairs without
/// touching the file system, so messages show `out` rather than `conf/../out`.
fn lexical_join(base: &Path, relative: &Path) -> PathBuf {
    use std::path::Component;
    let joined = base.join(relative);
    let mut parts: Vec<Component> = Vec::new();
    for component in joined.components() {
        match component {
            Component::CurDir => {}
            Component::ParentDir if matches!(parts.last(), Some(Component::Normal(_))) => {
                parts.pop();
            }
            other => parts.push(other),
        }
    }
    if parts.is_empty() {
        PathBuf::from(".")
    } else {
        parts.iter().collect()
    }
}

impl RunConfig {
    /// Reads a config file, reporting unknown keys and bad values as
    /// `file:line: what is wrong`. Relative paths are made relative to the
    /// config file's folder.
    pub fn load(path: &Path) -> Result<RunConfig, SettingsError> {
        let text = std::fs::read_to_string(path).map_err(|err| SettingsError::File {
            path: path.to_path_buf(),
            message: format!("cannot read the config file: {err}"),
        })?;
        RunConfig::parse(&text, path)
    }

    /// [`RunConfig::load`] on the text of a config file (`path` names it in
    /// errors and relative paths are taken from its folder).
    pub fn parse(text: &str, path: &Path) -> Result<RunConfig, SettingsError> {
        let mut config: RunConfig = toml::from_str(text).map_err(|err| {
            let line = err.span().map_or(1, |span| line_of(text, span.start));
            let message = plain_type_names(err.message().trim());
            // Name the key of that line, unless the message already does.
            let message = match key_at_line(text, line) {
                Some(key) if !message.contains(&key) => format!("{key}: {message}"),
                _ => message,
            };
            SettingsError::InFile {
                path: path.to_path_buf(),
                line,
                message,
            }
        })?;
        config.validate_in_file(path, text)?;
        let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
        let rebase = |p: &PathBuf| {
            if p.is_absolute() {
                p.clone()
            } else {
                lexical_join(&base, p)
            }
        };
        if let Some(paths) = &mut config.input.paths {
            for input in paths.iter_mut() {
                if input.as_os_str() != "-" {
                    *input = rebase(input);
                }
            }
        }
        config.output.dir = config.output.dir.as_ref().map(rebase);
        config.publish.root = config.publish.root.as_ref().map(rebase);
        if let Some(start) = &mut config.fit.start_from
            && start.trim() != START_FROM_PUBLISHED
            && !Path::new(start.trim()).is_absolute()
        {
            *start = lexical_join(&base, Path::new(start.trim()))
                .to_string_lossy()
                .into_owned();
        }
        config.vocabulary.keep_words = config.vocabulary.keep_words.as_ref().map(rebase);
        config.vocabulary.drop_words = config.vocabulary.drop_words.as_ref().map(rebase);
        if let Some(specs) = &mut config.tokenizer.stopwords {
            for spec in specs.iter_mut() {
                if tokenize::looks_like_path(spec) && !Path::new(spec).is_absolute() {
                    *spec = lexical_join(&base, Path::new(&*spec))
                        .to_string_lossy()
                        .into_owned();
                }
            }
        }
        Ok(config)
    }

    /// Checks values that need no I/O, pointing at the line that set them.
    fn validate_in_file(&self, path: &Path, text: &str) -> Result<(), SettingsError> {
        let at = |section: &str, err: SettingsError| match err {
            SettingsError::Invalid { key, message } => SettingsError::InFile {
                path: path.to_path_buf(),
                line: line_of_key(text, section, key).unwrap_or(1),
                message: format!("{section}.{key} {message}"),
            },
            other => other,
        };
        self.input.resolve().map_err(|err| at("input", err))?;
        self.input.split_every().map_err(|err| at("input", err))?;
        let no_lists = TokenizerOptions {
            stopwords: Some(vec!["none".into()]),
            ..self.tokenizer.clone()
        };
        no_lists.resolve().map_err(|err| at("tokenizer", err))?;
        let no_files = VocabularyOptions {
            keep_words: None,
            drop_words: None,
            ..self.vocabulary.clone()
        };
        no_files.resolve().map_err(|err| at("vocabulary", err))?;
        if self.fit.topics.is_some() {
            self.fit.resolve().map_err(|err| at("fit", err))?;
        }
        if let Some(top_words) = self.output.top_words {
            AT_LEAST_ONE
                .check("top_words", top_words as u64)
                .map_err(|err| at("output", err))?;
        }
        self.publish.resolve().map_err(|err| at("publish", err))?;
        self.gate.check().map_err(|err| at("gate", err))?;
        self.listing.resolve().map_err(|err| at("listing", err))?;
        Ok(())
    }
}

/// The config keys of every section with their documentation, as Markdown.
/// `docs/config.md` is this text; a test fails when it is stale.
pub fn config_reference() -> String {
    use clap::{Args as _, Command};
    let sections: [(&str, Command); 8] = [
        ("input", InputOptions::augment_args(Command::new("input"))),
        (
            "tokenizer",
            TokenizerOptions::augment_args(Command::new("tokenizer")),
        ),
        (
            "vocabulary",
            VocabularyOptions::augment_args(Command::new("vocabulary")),
        ),
        ("fit", FitOptions::augment_args(Command::new("fit"))),
        ("output", OutputOptions::augment_args(Command::new("output"))),
        ("publish", PublishOptions::augment_args(Command::new("publish"))),
        ("gate", GateOptions::augment_args(Command::new("gate"))),
        ("listing", ListingOptions::augment_args(Command::new("listing"))),
    ];
    let mut out = String::from(
        "# Config file keys\n\nGenerated from the option definitions in `src/settings.rs`; \
         do not edit by hand (run `THEMATA_BLESS=1 cargo test --release config_reference` to refresh).\n\
         Every key can also be given on the command line as `--key-name` \
         (underscores become dashes); the command line wins over the file.\n",
    );
    for (section, command) in sections {
        out.push_str(&format!(
            "\n## [{section}]\n\n| key | command line | meaning |\n|---|---|---|\n"
        ));
        if section == "input" {
            out.push_str("| `paths` | positional | Input files or folders (`-` reads JSON Lines from stdin); relative to the config file |\n");
        }
        for arg in command.get_arguments() {
            let Some(long) = arg.get_long() else { continue };
            let key = arg.get_id().as_str();
            let help = arg.get_help().map(|h| h.to_string()).unwrap_or_default();
            out.push_str(&format!(
                "| `{key}` | `--{long}` | {} |\n",
                help.replace('|', "\\|")
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write_config(text: &str) -> (tempfile::TempDir, PathBuf) {
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("run.toml");
        std::fs::write(&path, text).unwrap();
        (folder, path)
    }

    #[test]
    fn unknown_key_is_reported_with_its_line() {
        // Source: common practice — config errors point at file:line.
        let (_folder, path) = write_config("[fit]\ntopics = 5\n\n[tokenizer]\nmin_lenght = 2\n");
        let err = RunConfig::load(&path).unwrap_err().to_string();
        assert!(err.contains("run.toml:5:"), "{err}");
        assert!(err.contains("min_lenght"), "{err}");
    }

    #[test]
    fn bad_value_is_reported_with_its_line() {
        let (_folder, path) = write_config("[fit]\n\ntopics = 0\n");
        let err = RunConfig::load(&path).unwrap_err().to_string();
        assert!(
            err.contains("run.toml:3: fit.topics must be a whole number from 1 to 65536, got 0"),
            "{err}"
        );
        let (_folder, path) = write_config("[vocabulary]\nmax_doc_share = 1.5\n");
        let err = RunConfig::load(&path).unwrap_err().to_string();
        assert!(err.contains("run.toml:2: vocabulary.max_doc_share"), "{err}");
    }

    #[test]
    fn wrong_type_is_reported_with_its_line() {
        let (_folder, path) = write_config("[fit]\ntopics = \"ten\"\n");
        let err = RunConfig::load(&path).unwrap_err().to_string();
        assert!(err.contains("run.toml:2:"), "{err}");
        // Source: issue 11, item 7 — no Rust type names in messages.
        assert!(err.contains("expected a whole number (0 or more)"), "{err}");
        for (config, line) in [("[fit]\nseed = -1\n", 2), ("[fit]\niterations = 2.5\n", 2)] {
            let (_folder, path) = write_config(config);
            let err = RunConfig::load(&path).unwrap_err().to_string();
            assert!(err.contains(&format!("run.toml:{line}:")), "{err}");
            for name in ["usize", "u64", "u32", "f64"] {
                assert!(!err.contains(name), "{err}");
            }
        }
    }

    #[test]
    fn command_line_overrides_file() {
        let file = FitOptions {
            topics: Some(5),
            seed: Some(9),
            ..FitOptions::default()
        };
        let cli = FitOptions {
            topics: Some(7),
            ..FitOptions::default()
        };
        let merged = file.overlay(cli);
        assert_eq!(merged.topics, Some(7));
        assert_eq!(merged.seed, Some(9));
    }

    #[test]
    fn relative_paths_follow_the_config_file() {
        let (folder, path) = write_config("[input]\npaths = [\"docs\"]\n[output]\ndir = \"out\"\n");
        let config = RunConfig::load(&path).unwrap();
        assert_eq!(config.input.paths.unwrap()[0], folder.path().join("docs"));
        assert_eq!(config.output.dir.unwrap(), folder.path().join("out"));
    }

    #[test]
    fn prior_specs_parse() {
        assert_eq!("0.5".parse::<PriorSpec>().unwrap(), PriorSpec::Symmetric(0.5));
        assert_eq!(
            "0.1,0.2".parse::<PriorSpec>().unwrap(),
            PriorSpec::List(vec![0.1, 0.2])
        );
        assert_eq!("learn".parse::<PriorSpec>().unwrap(), PriorSpec::Learn);
        assert!("abc".parse::<PriorSpec>().is_err());
    }

    #[test]
    fn config_reference_is_fresh() {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/config.md");
        let generated = config_reference();
        if std::env::var_os("THEMATA_BLESS").is_some() {
            std::fs::create_dir_all(path.parent().unwrap()).unwrap();
            std::fs::write(&path, &generated).unwrap();
        }
        let committed = std::fs::read_to_string(&path).unwrap_or_default();
        assert!(
            committed == generated,
            "docs/config.md is stale; run THEMATA_BLESS=1 cargo test --release config_reference"
        );
    }
}
