//! Every user-facing setting, defined once. Each option group is one struct
//! whose fields carry the name, type and documentation used by the command
//! line (`--help`), the config file reader and the generated list of config
//! keys. All fields are optional so that a config file can be overlaid by
//! command-line values; defaults are applied in one place, when a group is
//! resolved into the plain settings the library stages take.
//!
//! Validation happens here, without I/O, before anything is read or fitted.

use std::collections::HashSet;
use std::path::{Path, PathBuf};

use clap::Args;
use serde::Deserialize;

use crate::fitting::fit::{FitSettings, PriorSpec};
use crate::fitting::schedule::SamplerChoice;
use crate::ingest::read::{InputFormat, ReadOptions};
use crate::ingest::tokenize::{self, TokenizerSettings};
use crate::ingest::vocab::PruneRules;

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

/// How input files are read.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct InputOptions {
    /// Input files or folders (config file only; on the command line they are positional).
    #[arg(skip)]
    pub paths: Option<Vec<PathBuf>>,
    /// Input format: auto decides by file extension (.txt/.md, .jsonl/.ndjson, .csv) [default: auto]
    #[arg(long, value_enum)]
    pub format: Option<InputFormat>,
    /// JSON Lines field or CSV column holding the text [default: text]
    #[arg(long, value_name = "NAME")]
    pub text_field: Option<String>,
    /// JSON Lines field or CSV column holding the document id; records without one get file:line [default: id]
    #[arg(long, value_name = "NAME")]
    pub id_field: Option<String>,
    /// JSON Lines field or CSV column holding a label, kept as metadata [default: label]
    #[arg(long, value_name = "NAME")]
    pub label_field: Option<String>,
    /// Fail (exit 2) if any document is skipped, instead of reporting it [default: false]
    #[arg(long, num_args = 0..=1, default_missing_value = "true", value_name = "BOOL")]
    pub strict: Option<bool>,
}
overlay!(InputOptions {
    paths,
    format,
    text_field,
    id_field,
    label_field,
    strict
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
            text_field: field("text_field", &self.text_field, "text")?,
            id_field: field("id_field", &self.id_field, "id")?,
            label_field: field("label_field", &self.label_field, "label")?,
        })
    }

    /// Whether skipped documents are a failure.
    pub fn is_strict(&self) -> bool {
        self.strict.unwrap_or(false)
    }
}

/// How text is cut into tokens.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct TokenizerOptions {
    /// Stopword lists: a language name or code, a file with one word per line, or none; repeat or separate with commas [default: english]
    #[arg(long, value_name = "LANG|FILE|none", value_delimiter = ',')]
    #[serde(default, deserialize_with = "one_or_many")]
    pub stopwords: Option<Vec<String>>,
    /// Shortest token kept, in characters [default: 3]
    #[arg(long, value_name = "N")]
    pub min_length: Option<usize>,
    /// Longest token kept, in characters [default: 40]
    #[arg(long, value_name = "N")]
    pub max_length: Option<usize>,
    /// Keep tokens made only of digits and punctuation [default: false]
    #[arg(long, num_args = 0..=1, default_missing_value = "true", value_name = "BOOL")]
    pub keep_numbers: Option<bool>,
    /// Keep letter case instead of lowercasing [default: false]
    #[arg(long, num_args = 0..=1, default_missing_value = "true", value_name = "BOOL")]
    pub keep_case: Option<bool>,
    /// Reduce words to their Snowball stem in this language (e.g. english) [default: no stemming]
    #[arg(long, value_name = "LANG")]
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
            .unwrap_or_else(|| vec!["english".to_string()]);
        let (stopwords, stopword_sources) =
            tokenize::resolve_stopwords(&specs).map_err(|err| invalid("stopwords", err.to_string()))?;
        let min_length = self.min_length.unwrap_or(3);
        let max_length = self.max_length.unwrap_or(40);
        if min_length == 0 {
            return Err(invalid("min_length", "must be at least 1"));
        }
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
    /// Keep words found in at least this many documents [default: 2]
    #[arg(long, value_name = "N")]
    pub min_docs: Option<u32>,
    /// Drop words found in more than this share of documents, 0 to 1 [default: 0.5]
    #[arg(long, value_name = "F")]
    pub max_doc_share: Option<f64>,
    /// Keep at most this many words, most frequent first [default: no limit]
    #[arg(long, value_name = "N")]
    pub max_words: Option<usize>,
    /// File of words always kept, one per line [default: none]
    #[arg(long, value_name = "FILE")]
    pub keep_words: Option<PathBuf>,
    /// File of words always dropped, one per line [default: none]
    #[arg(long, value_name = "FILE")]
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
        let max_doc_share = self.max_doc_share.unwrap_or(0.5);
        if !(max_doc_share > 0.0 && max_doc_share <= 1.0) {
            return Err(invalid(
                "max_doc_share",
                format!("must be above 0 and at most 1, got {max_doc_share}"),
            ));
        }
        if self.max_words == Some(0) {
            return Err(invalid("max_words", "must be at least 1"));
        }
        let list = |key, path: &Option<PathBuf>| match path {
            Some(path) => read_word_list(key, path),
            None => Ok(HashSet::new()),
        };
        Ok(PruneRules {
            min_docs: self.min_docs.unwrap_or(2).max(1),
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
    #[arg(long, short = 'k', value_name = "K")]
    pub topics: Option<usize>,
    /// Gibbs sweeps over the whole corpus, burn-in included [default: 1000]
    #[arg(long, value_name = "N")]
    pub iterations: Option<u64>,
    /// Sweeps treated as burn-in, before the chain is taken as settled [default: 100]
    #[arg(long, value_name = "N")]
    pub burn_in: Option<u64>,
    /// Document-topic prior: `learn` (asymmetric, learned from the data after burn-in), one value for every topic, or K comma-separated values [default: learn]
    #[arg(long, value_name = "learn|X|X,Y,...")]
    pub alpha: Option<PriorSpec>,
    /// Topic-word prior: `learn` (symmetric, learned from the data after burn-in), one value for every word, or one comma-separated value per vocabulary word [default: learn]
    #[arg(long, value_name = "learn|X|X,Y,...")]
    pub beta: Option<PriorSpec>,
    /// Learn the priors every N sweeps after burn-in [default: 10]
    #[arg(long, value_name = "N")]
    pub learn_every: Option<u64>,
    /// Posterior samples kept at the end of the run; estimates and intervals average them [default: 1]
    #[arg(long, value_name = "S")]
    pub samples: Option<u64>,
    /// Sweeps between kept samples [default: 10]
    #[arg(long, value_name = "L")]
    pub lag: Option<u64>,
    /// Seed of the random stream; the same seed and inputs give the same model [default: 1]
    #[arg(long, value_name = "S")]
    pub seed: Option<u64>,
    /// Worker threads [default: all cores]
    #[arg(long, value_name = "T")]
    pub threads: Option<usize>,
    /// Record the log-likelihood every N sweeps [default: 10]
    #[arg(long, value_name = "N")]
    pub trace_every: Option<u64>,
    /// Keep this fraction of documents out of training and report their held-out perplexity [default: 0]
    #[arg(long, value_name = "F")]
    pub holdout: Option<f64>,
    /// Sampler: `exact` (exact draws with cached coefficients, O(K) per token), `metropolis` (Metropolis-Hastings with O(1) document and word proposals), both parallel over a fixed grid of blocks; `reference` (the plain O(K) collapsed Gibbs sweep, one thread); or `auto` (exact up to 300 topics, metropolis above) [default: auto]
    #[arg(long, value_enum, value_name = "NAME")]
    pub sampler: Option<SamplerChoice>,
    /// Shards for parallel sweeps: documents and words are each cut into N parts, giving N x N blocks; fixed per model, so the thread count never changes the result [default: one per 524,288 tokens for exact, 262,144 for metropolis, at most 8]
    #[arg(long, value_name = "N")]
    pub shards: Option<usize>,
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
    shards
});

/// The worker threads asked for, or every core when none is given.
pub fn resolve_threads(threads: Option<usize>) -> Result<usize, SettingsError> {
    match threads {
        Some(0) => Err(invalid("threads", "must be at least 1")),
        Some(threads) => Ok(threads),
        None => Ok(std::thread::available_parallelism().map_or(1, |n| n.get())),
    }
}

/// Fit settings plus the thread count (which never changes the result) and
/// the held-out fraction.
#[derive(Clone, Debug, PartialEq)]
pub struct FitPlan {
    pub settings: FitSettings,
    pub threads: usize,
    pub holdout: f64,
}

impl FitOptions {
    /// Resolves fit settings with defaults applied.
    pub fn resolve(&self) -> Result<FitPlan, SettingsError> {
        let n_topics = self
            .topics
            .ok_or_else(|| invalid("topics", "is required (the number of topics, e.g. 20)"))?;
        if n_topics == 0 {
            return Err(invalid("topics", "must be at least 1"));
        }
        if n_topics > u32::MAX as usize {
            return Err(invalid("topics", "is too large"));
        }
        let iterations = self.iterations.unwrap_or(1000);
        if iterations == 0 {
            return Err(invalid("iterations", "must be at least 1"));
        }
        let burn_in = self.burn_in.unwrap_or(100.min(iterations / 2));
        if burn_in >= iterations {
            return Err(invalid(
                "burn_in",
                format!("must be smaller than iterations ({iterations}), got {burn_in}"),
            ));
        }
        let threads = resolve_threads(self.threads)?;
        let trace_every = self.trace_every.unwrap_or(10);
        if trace_every == 0 {
            return Err(invalid("trace_every", "must be at least 1"));
        }
        let learn_every = self.learn_every.unwrap_or(10);
        if learn_every == 0 {
            return Err(invalid("learn_every", "must be at least 1"));
        }
        let samples = self.samples.unwrap_or(1);
        let lag = self.lag.unwrap_or(10);
        if samples == 0 {
            return Err(invalid("samples", "must be at least 1"));
        }
        if lag == 0 {
            return Err(invalid("lag", "must be at least 1"));
        }
        let needed = (samples - 1) * lag + 1;
        if needed > iterations - burn_in {
            return Err(invalid(
                "samples",
                format!(
                    "{samples} samples {lag} sweeps apart need {needed} sweeps after burn-in, but iterations - burn_in is {}",
                    iterations - burn_in
                ),
            ));
        }
        if self.shards == Some(0) {
            return Err(invalid("shards", "must be at least 1"));
        }
        let holdout = self.holdout.unwrap_or(0.0);
        if !(0.0..1.0).contains(&holdout) {
            return Err(invalid(
                "holdout",
                format!("must be at least 0 and below 1, got {holdout}"),
            ));
        }
        Ok(FitPlan {
            holdout,
            settings: FitSettings {
                n_topics,
                iterations,
                burn_in,
                alpha: self.alpha.clone().unwrap_or(PriorSpec::Learn),
                beta: self.beta.clone().unwrap_or(PriorSpec::Learn),
                learn_every,
                samples,
                lag,
                seed: self.seed.unwrap_or(1),
                trace_every,
                sampler: self.sampler.unwrap_or_default(),
                shards: self.shards,
            },
            threads,
        })
    }
}

/// Where a run writes and what it shows.
#[derive(Args, Deserialize, Clone, Debug, Default, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct OutputOptions {
    /// Output folder; relative paths in a config file are taken from the config file's folder
    #[arg(long = "out", value_name = "DIR")]
    pub dir: Option<PathBuf>,
    /// Top words printed per topic [default: 10]
    #[arg(long, value_name = "N")]
    pub top_words: Option<usize>,
}
overlay!(OutputOptions { dir, top_words });

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
}

/// 1-based line of a byte offset in `text`.
fn line_of(text: &str, offset: usize) -> usize {
    text[..offset.min(text.len())]
        .bytes()
        .filter(|&b| b == b'\n')
        .count()
        + 1
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
        let mut config: RunConfig = toml::from_str(&text).map_err(|err| SettingsError::InFile {
            path: path.to_path_buf(),
            line: err.span().map_or(1, |span| line_of(&text, span.start)),
            message: err.message().trim().to_string(),
        })?;
        config.validate_in_file(path, &text)?;
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
        if self.output.top_words == Some(0) {
            return Err(at("output", invalid("top_words", "must be at least 1")));
        }
        Ok(())
    }
}

/// The config keys of every section with their documentation, as Markdown.
/// `docs/config.md` is this text; a test fails when it is stale.
pub fn config_reference() -> String {
    use clap::{Args as _, Command};
    let sections: [(&str, Command); 5] = [
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
        assert!(err.contains("run.toml:3: fit.topics must be at least 1"), "{err}");
        let (_folder, path) = write_config("[vocabulary]\nmax_doc_share = 1.5\n");
        let err = RunConfig::load(&path).unwrap_err().to_string();
        assert!(err.contains("run.toml:2: vocabulary.max_doc_share"), "{err}");
    }

    #[test]
    fn wrong_type_is_reported_with_its_line() {
        let (_folder, path) = write_config("[fit]\ntopics = \"ten\"\n");
        let err = RunConfig::load(&path).unwrap_err().to_string();
        assert!(err.contains("run.toml:2:"), "{err}");
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
