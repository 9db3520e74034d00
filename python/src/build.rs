//! Building a corpus from Python: keyword options mapped onto the command
//! line's option groups (`InputOptions`, `TokenizerOptions`,
//! `VocabularyOptions` of `themata::settings`), read like a config file's
//! values and resolved by the same code, then the library's build
//! (`corpus::build` for paths, `corpus::build_from_documents` for texts).
//! Nothing here tokenizes, prunes or checks a value itself.

use std::path::PathBuf;

use clap::Args;
use pyo3::exceptions::{PyTypeError, PyValueError};
use pyo3::prelude::*;
use serde::de::DeserializeOwned;
use serde_json::{Map, Value};

use themata::ingest::corpus::{self, BuildSettings, BuildSummary, Corpus};
use themata::ingest::read::{Origin, RawDocument};
use themata::settings::{self, InputOptions, TokenizerOptions, VocabularyOptions};

use crate::{PyCorpus, bad_input, corpus_error};

/// The origin recorded for documents handed over from Python: `<python>`
/// with the document's position (from 1) as its line.
pub const PYTHON_ORIGIN: &str = "<python>";

/// Input options that apply to documents handed over in memory; the others
/// (format, fields) say how to read files and apply with `paths=` only.
const IN_MEMORY_INPUT_OPTIONS: [&str; 2] = ["strict", "split_every"];

/// The option names of a group, as its clap definition has them (the field
/// names, which are also the config file's keys).
fn keys_of<T: Args>() -> Vec<String> {
    T::augment_args(clap::Command::new("keys"))
        .get_arguments()
        .map(|argument| argument.get_id().to_string())
        .filter(|id| id != "help")
        .collect()
}

/// One option group filled from the keywords that belong to it; a value of
/// the wrong type is a `ValueError` naming the keyword.
fn group<T: DeserializeOwned + Default>(values: Map<String, Value>) -> PyResult<T> {
    for (key, value) in &values {
        let mut single = Map::new();
        single.insert(key.clone(), value.clone());
        serde_json::from_value::<T>(Value::Object(single)).map_err(|err| {
            PyValueError::new_err(format!("{key}: {}", settings::plain_type_names(&err.to_string())))
        })?;
    }
    serde_json::from_value(Value::Object(values)).map_err(|err| PyValueError::new_err(err.to_string()))
}

/// The three option groups of `themata build`.
struct BuildOptions {
    input: InputOptions,
    tokenizer: TokenizerOptions,
    vocabulary: VocabularyOptions,
}

/// Sorts the keywords (a JSON object) into the option groups. A keyword no
/// group has is a `TypeError` naming it, as Python does for an unexpected
/// keyword argument; `None` leaves an option at its default.
fn build_options(options: &str, function: &str, from_paths: bool) -> PyResult<BuildOptions> {
    let keywords: Map<String, Value> =
        serde_json::from_str(options).map_err(|err| PyValueError::new_err(err.to_string()))?;
    let input_keys = keys_of::<InputOptions>();
    let tokenizer_keys = keys_of::<TokenizerOptions>();
    let vocabulary_keys = keys_of::<VocabularyOptions>();
    let (mut input, mut tokenizer, mut vocabulary) = (Map::new(), Map::new(), Map::new());
    for (key, value) in keywords {
        if value.is_null() {
            continue;
        }
        if tokenizer_keys.contains(&key) {
            tokenizer.insert(key, value);
        } else if vocabulary_keys.contains(&key) {
            vocabulary.insert(key, value);
        } else if input_keys.contains(&key) {
            if !from_paths && !IN_MEMORY_INPUT_OPTIONS.contains(&key.as_str()) {
                return Err(PyTypeError::new_err(format!(
                    "{function}() got the keyword argument '{key}', which says how to read files: it applies with paths= only"
                )));
            }
            input.insert(key, value);
        } else {
            let mut known: Vec<String> = tokenizer_keys.iter().chain(&vocabulary_keys).cloned().collect();
            if from_paths {
                known.extend(input_keys.iter().cloned());
            } else {
                known.extend(IN_MEMORY_INPUT_OPTIONS.iter().map(|key| key.to_string()));
            }
            return Err(PyTypeError::new_err(format!(
                "{function}() got an unexpected keyword argument '{key}' (build options: {})",
                known.join(", ")
            )));
        }
    }
    Ok(BuildOptions {
        input: group(input)?,
        tokenizer: group(tokenizer)?,
        vocabulary: group(vocabulary)?,
    })
}

impl BuildOptions {
    /// The build settings, resolved and checked as `themata build` does.
    fn settings(&self) -> PyResult<BuildSettings> {
        Ok(BuildSettings {
            read: self.input.resolve().map_err(bad_input)?,
            tokenizer: self.tokenizer.resolve().map_err(bad_input)?,
            prune: self.vocabulary.resolve().map_err(bad_input)?,
            split_every: self.input.split_every().map_err(bad_input)?,
        })
    }

    /// Strict mode: any skipped document fails the build.
    fn check_strict(&self, summary: &BuildSummary) -> PyResult<()> {
        if !self.input.is_strict() || summary.diagnostics.is_empty() {
            return Ok(());
        }
        let shown: Vec<String> = summary
            .diagnostics
            .iter()
            .take(5)
            .map(ToString::to_string)
            .collect();
        Err(PyValueError::new_err(format!(
            "{} document(s) skipped and strict is set ({}{}); fix the inputs or drop strict",
            summary.diagnostics.len(),
            shown.join("; "),
            if summary.diagnostics.len() > shown.len() {
                "; ..."
            } else {
                ""
            }
        )))
    }
}

fn wrap(built: (Corpus, BuildSummary), options: &BuildOptions) -> PyResult<PyCorpus> {
    let (inner, summary) = built;
    options.check_strict(&summary)?;
    Ok(PyCorpus {
        inner,
        summary: Some(summary),
    })
}

/// Builds a corpus from the files and folders `paths` as `themata build`
/// does; `options` is a JSON object of build options.
#[pyfunction]
pub fn build_corpus_from_paths(py: Python<'_>, paths: Vec<PathBuf>, options: &str) -> PyResult<PyCorpus> {
    let options = build_options(options, "build_corpus", true)?;
    let settings = options.settings()?;
    let built = py
        .detach(|| corpus::build(&paths, &settings))
        .map_err(corpus_error)?;
    wrap(built, &options)
}

/// Builds a corpus from texts in memory (ids, texts, optional labels and
/// dates, one per text) with the rules of `themata build`.
#[pyfunction]
#[pyo3(signature = (ids, texts, labels, dates, options))]
pub fn build_corpus_from_texts(
    py: Python<'_>,
    ids: Vec<String>,
    texts: Vec<String>,
    labels: Option<Vec<Option<String>>>,
    dates: Option<Vec<Option<String>>>,
    options: &str,
) -> PyResult<PyCorpus> {
    let options = build_options(options, "build_corpus", false)?;
    for (name, length) in [
        ("ids", Some(ids.len())),
        ("labels", labels.as_ref().map(Vec::len)),
        ("dates", dates.as_ref().map(Vec::len)),
    ] {
        if let Some(length) = length
            && length != texts.len()
        {
            return Err(PyValueError::new_err(format!(
                "{length} {name} for {} texts; give one per text",
                texts.len()
            )));
        }
    }
    let settings = options.settings()?;
    let mut labels = labels.map(Vec::into_iter);
    let mut dates = dates.map(Vec::into_iter);
    let documents: Vec<RawDocument> = ids
        .into_iter()
        .zip(texts)
        .enumerate()
        .map(|(position, (id, text))| RawDocument {
            id,
            text,
            label: labels.as_mut().and_then(Iterator::next).flatten(),
            date: dates.as_mut().and_then(Iterator::next).flatten(),
            origin: Origin {
                file: PYTHON_ORIGIN.to_string(),
                line: Some(position as u64 + 1),
            },
        })
        .collect();
    let built = py
        .detach(|| corpus::build_from_documents(documents, &settings))
        .map_err(corpus_error)?;
    wrap(built, &options)
}
