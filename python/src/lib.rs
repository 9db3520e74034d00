//! The native part of the `themata` Python package: thin bindings over the
//! themata library, with no second implementation of anything. Options go
//! through the same `settings` definitions as the command line, so values
//! are checked and errors worded the same; the heavy work runs with the
//! interpreter released, on the same rayon pools, and a fit checks for
//! Ctrl-C between sweeps.

mod build;

use std::ops::ControlFlow;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

/// How often a fit's calling thread checks for Ctrl-C.
const SIGNAL_POLL: Duration = Duration::from_millis(20);
use std::path::PathBuf;

use numpy::ndarray::Array2;
use numpy::{IntoPyArray, PyArray2};
use pyo3::exceptions::{PyFileNotFoundError, PyKeyboardInterrupt, PyOSError, PyValueError};
use pyo3::prelude::*;

use themata::evaluate::coherence::CoherenceSettings;
use themata::evaluate::heldout::FoldInSettings;
use themata::evaluate::score::{self, EncodedDocument, Method, ScoreSettings};
use themata::evaluate::uncertainty::DEFAULT_LEVEL;
use themata::fitting::fit::{self, FitEvent, PriorSpec};
use themata::fitting::schedule::SamplerChoice;
use themata::fitting::warm;
use themata::ingest::corpus::{BuildSummary, Corpus, CorpusError};
use themata::ingest::read::ReadError;
use themata::ingest::tokenize::Tokenizer;
use themata::model::Model;
use themata::model::corpus_file;
use themata::model::folder;
use themata::model::format::{FormatError, write_atomic};
use themata::model::summary::FitSummary;
use themata::publish::side_files::{FolderContext, model_title};
use themata::report::html::{self, ReportContext};
use themata::settings::{self, FitOptions, StartFrom};

/// The message chain of an error, once, as the command line prints it.
fn describe(error: &dyn std::error::Error) -> String {
    let mut message = error.to_string();
    let mut source = error.source();
    while let Some(cause) = source {
        let cause_text = cause.to_string();
        if !message.contains(&cause_text) {
            message.push_str(": ");
            message.push_str(&cause_text);
        }
        source = cause.source();
    }
    message
}

/// A `ValueError` for bad input, with the command line's message.
pub(crate) fn bad_input(error: impl std::error::Error) -> PyErr {
    PyValueError::new_err(describe(&error))
}

/// An `OSError` for a failing system, with the command line's message.
fn system(error: impl std::error::Error) -> PyErr {
    PyOSError::new_err(describe(&error))
}

/// `FileNotFoundError` for a missing file (Python's own habit), `ValueError`
/// for errors about the content of files, `OSError` for other I/O.
fn file_error(error: FormatError) -> PyErr {
    match &error {
        FormatError::Missing { .. } => PyFileNotFoundError::new_err(describe(&error)),
        _ if error.is_bad_input() => bad_input(error),
        _ => system(error),
    }
}

fn folder_error(error: folder::FolderError) -> PyErr {
    match error {
        folder::FolderError::NoModel { ref dir } if !dir.exists() => {
            PyFileNotFoundError::new_err(describe(&error))
        }
        folder::FolderError::File(error) => file_error(error),
        other => bad_input(other),
    }
}

/// The exception of a failed build, as the command line classifies it: a
/// missing input is `FileNotFoundError`, a stream that breaks part way
/// `OSError`, everything else (options, formats, a corpus left empty)
/// `ValueError`.
pub(crate) fn corpus_error(error: CorpusError) -> PyErr {
    match &error {
        CorpusError::Read(ReadError::Missing { .. }) => PyFileNotFoundError::new_err(describe(&error)),
        CorpusError::Read(ReadError::Io { .. }) => system(error),
        _ => bad_input(error),
    }
}

/// A tokenized corpus: documents as word ids over a fixed vocabulary.
#[pyclass(module = "themata._native", name = "Corpus", frozen)]
pub struct PyCorpus {
    pub(crate) inner: Corpus,
    /// What the build read, kept and skipped (None for a corpus loaded
    /// from a file, which does not keep it).
    pub(crate) summary: Option<BuildSummary>,
}

#[pymethods]
impl PyCorpus {
    /// Number of documents.
    #[getter]
    fn n_documents(&self) -> usize {
        self.inner.n_docs()
    }

    /// Number of tokens.
    #[getter]
    fn n_tokens(&self) -> usize {
        self.inner.n_tokens()
    }

    /// The words, by id (stems as stored; see `display_words`).
    #[getter]
    fn vocabulary(&self) -> Vec<String> {
        self.inner.vocabulary.words().to_vec()
    }

    /// The words as shown to people (a stem's surface form), by id.
    #[getter]
    fn display_words(&self) -> Vec<String> {
        (0..self.inner.vocabulary.len() as u32)
            .map(|id| self.inner.vocabulary.display(id).to_string())
            .collect()
    }

    /// Document ids, in corpus order.
    #[getter]
    fn document_ids(&self) -> Vec<String> {
        self.inner.documents.iter().map(|doc| doc.id.clone()).collect()
    }

    /// Document labels (None where a document has none).
    #[getter]
    fn labels(&self) -> Vec<Option<String>> {
        self.inner.documents.iter().map(|doc| doc.label.clone()).collect()
    }

    /// What the build read, kept and skipped, as a dict (the shape of a
    /// run folder's build.json); None for a corpus loaded from a file.
    #[getter]
    fn build_summary<'py>(&self, py: Python<'py>) -> PyResult<Option<Bound<'py, PyAny>>> {
        let Some(summary) = &self.summary else {
            return Ok(None);
        };
        let text = serde_json::to_string(summary).map_err(|err| PyValueError::new_err(err.to_string()))?;
        Ok(Some(py.import("json")?.call_method1("loads", (text,))?))
    }

    /// The word ids of document `index`.
    fn document_tokens(&self, index: usize) -> PyResult<Vec<u32>> {
        if index >= self.inner.n_docs() {
            return Err(PyValueError::new_err(format!(
                "document {index} is out of range: the corpus has {} documents",
                self.inner.n_docs()
            )));
        }
        Ok(self.inner.doc_tokens(index).to_vec())
    }

    /// Writes the corpus file `path` (the format `themata build` writes).
    fn save(&self, py: Python<'_>, path: PathBuf) -> PyResult<()> {
        py.detach(|| corpus_file::save_corpus(&self.inner, &path))
            .map_err(file_error)
    }

    fn __len__(&self) -> usize {
        self.inner.n_docs()
    }

    fn __repr__(&self) -> String {
        format!(
            "<themata.Corpus: {} documents, {} tokens, {} words>",
            self.inner.n_docs(),
            self.inner.n_tokens(),
            self.inner.vocabulary.len()
        )
    }
}

/// Reads a corpus file written by `themata build` (or `Corpus.save`).
#[pyfunction]
fn load_corpus(py: Python<'_>, path: PathBuf) -> PyResult<PyCorpus> {
    let inner = py
        .detach(|| corpus_file::load_corpus(&path))
        .map_err(file_error)?;
    Ok(PyCorpus { inner, summary: None })
}

/// A fitted topic model.
#[pyclass(module = "themata._native", name = "Model", frozen)]
pub struct PyModel {
    pub(crate) inner: Model,
    /// Threads and seconds of the fit that made it (for summary.json).
    threads: usize,
    sampling_seconds: f64,
    tokens_per_second: f64,
    /// The folder it was loaded from, whose side files (names, run record,
    /// build record, held-out perplexity) its report shows.
    folder: Option<PathBuf>,
}

impl PyModel {
    fn wrap(inner: Model) -> PyModel {
        PyModel {
            inner,
            threads: 1,
            sampling_seconds: 0.0,
            tokens_per_second: 0.0,
            folder: None,
        }
    }

    /// The report page and where its side files came from.
    fn render_report(
        &self,
        folder: Option<PathBuf>,
        title: Option<String>,
        top_words: usize,
        level: f64,
    ) -> PyResult<String> {
        check_level(level)?;
        if !(1..=200).contains(&top_words) {
            return Err(PyValueError::new_err(format!(
                "top_words: must be a whole number from 1 to 200, got {top_words}"
            )));
        }
        let folder = folder.or_else(|| self.folder.clone());
        let side = folder.as_deref().map(FolderContext::read).unwrap_or_default();
        let title = title
            .or_else(|| folder.as_deref().map(model_title))
            .unwrap_or_else(|| "model".to_string());
        let context = ReportContext::of_folder(title, &side, top_words, level);
        html::render(&self.inner, &context).map_err(system)
    }

    fn summary_of(&self) -> FitSummary {
        FitSummary::new(
            &self.inner,
            self.threads,
            self.sampling_seconds,
            self.tokens_per_second,
        )
    }
}

/// Two arrays of the same shape: an interval's low and high ends.
type IntervalArrays<'py> = (Bound<'py, PyArray2<f64>>, Bound<'py, PyArray2<f64>>);

/// A placed document: id, known tokens, unknown tokens, shares, low, high.
type PlacementRow = (String, usize, usize, Vec<f64>, Vec<f64>, Vec<f64>);

/// A K x V matrix from its rows.
fn matrix(rows: Vec<Vec<f64>>, columns: usize) -> PyResult<Array2<f64>> {
    let n_rows = rows.len();
    Array2::from_shape_vec((n_rows, columns), rows.into_iter().flatten().collect())
        .map_err(|err| PyValueError::new_err(err.to_string()))
}

fn check_level(level: f64) -> PyResult<()> {
    if level > 0.0 && level < 1.0 {
        Ok(())
    } else {
        Err(PyValueError::new_err(format!(
            "`{level}` is not a probability strictly between 0 and 1 (e.g. 0.9)"
        )))
    }
}

#[pymethods]
impl PyModel {
    /// Number of topics K.
    #[getter]
    fn n_topics(&self) -> usize {
        self.inner.n_topics()
    }

    /// The topic-word weights phi: a K x V float64 array whose row k is
    /// topic k's distribution over the vocabulary (each row sums to 1),
    /// averaged over the kept posterior samples.
    #[getter]
    fn topic_word<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyArray2<f64>>> {
        let model = &self.inner;
        let rows = py.detach(|| (0..model.n_topics()).map(|k| model.topic_word_row(k)).collect());
        Ok(matrix(rows, model.state.n_words)?.into_pyarray(py))
    }

    /// The document-topic shares theta: a D x K float64 array whose row d
    /// is document d's topic mixture (each row sums to 1).
    #[getter]
    fn document_topic<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyArray2<f64>>> {
        let model = &self.inner;
        let rows = py.detach(|| {
            (0..model.corpus.n_docs())
                .map(|d| model.doc_topic_shares(d))
                .collect()
        });
        Ok(matrix(rows, model.n_topics())?.into_pyarray(py))
    }

    /// Credible intervals of the topic-word weights at `level`: two K x V
    /// arrays, (low, high).
    #[pyo3(signature = (level = DEFAULT_LEVEL))]
    fn topic_word_intervals<'py>(&self, py: Python<'py>, level: f64) -> PyResult<IntervalArrays<'py>> {
        check_level(level)?;
        let model = &self.inner;
        let n_words = model.state.n_words;
        let (low, high) = py
            .detach(
                || -> Result<(Vec<f64>, Vec<f64>), themata::evaluate::uncertainty::UncertaintyError> {
                    let mut low = Vec::with_capacity(model.n_topics() * n_words);
                    let mut high = Vec::with_capacity(model.n_topics() * n_words);
                    for topic in 0..model.n_topics() {
                        for word in 0..n_words {
                            let interval = model.topic_word_interval(topic, word, level)?;
                            low.push(interval.low);
                            high.push(interval.high);
                        }
                    }
                    Ok((low, high))
                },
            )
            .map_err(system)?;
        let shape = (model.n_topics(), n_words);
        let to_array = |values: Vec<f64>| {
            Array2::from_shape_vec(shape, values).map_err(|err| PyValueError::new_err(err.to_string()))
        };
        Ok((to_array(low)?.into_pyarray(py), to_array(high)?.into_pyarray(py)))
    }

    /// Credible intervals of the document-topic shares at `level`: two
    /// D x K arrays, (low, high).
    #[pyo3(signature = (level = DEFAULT_LEVEL))]
    fn document_topic_intervals<'py>(&self, py: Python<'py>, level: f64) -> PyResult<IntervalArrays<'py>> {
        check_level(level)?;
        let model = &self.inner;
        let rows = py
            .detach(|| {
                (0..model.corpus.n_docs())
                    .map(|doc| model.doc_topic_intervals(doc, level))
                    .collect::<Result<Vec<_>, _>>()
            })
            .map_err(system)?;
        let low = rows
            .iter()
            .map(|row| row.iter().map(|i| i.low).collect())
            .collect();
        let high = rows
            .iter()
            .map(|row| row.iter().map(|i| i.high).collect())
            .collect();
        Ok((
            matrix(low, model.n_topics())?.into_pyarray(py),
            matrix(high, model.n_topics())?.into_pyarray(py),
        ))
    }

    /// The vocabulary words by id (stems as stored).
    #[getter]
    fn vocabulary(&self) -> Vec<String> {
        self.inner.corpus.vocabulary.words().to_vec()
    }

    /// The words as shown to people (a stem's surface form), by id.
    #[getter]
    fn display_words(&self) -> Vec<String> {
        (0..self.inner.corpus.vocabulary.len() as u32)
            .map(|id| self.inner.corpus.vocabulary.display(id).to_string())
            .collect()
    }

    /// Ids of the training documents, in the order of `document_topic`'s rows.
    #[getter]
    fn document_ids(&self) -> Vec<String> {
        self.inner
            .corpus
            .documents
            .iter()
            .map(|doc| doc.id.clone())
            .collect()
    }

    /// Labels of the training documents (None where a document has none).
    #[getter]
    fn labels(&self) -> Vec<Option<String>> {
        self.inner
            .corpus
            .documents
            .iter()
            .map(|doc| doc.label.clone())
            .collect()
    }

    /// The id of each topic (0..K-1, or persistent ids under a run root).
    #[getter]
    fn topic_ids(&self) -> Vec<u32> {
        self.inner.topic_ids.clone()
    }

    /// Each topic's share of all tokens.
    #[getter]
    fn topic_shares(&self) -> Vec<f64> {
        self.inner.topic_token_shares()
    }

    /// The `n` heaviest words of each topic (shown forms), heaviest first.
    #[pyo3(signature = (n = 10))]
    fn top_words(&self, py: Python<'_>, n: usize) -> Vec<Vec<String>> {
        let model = &self.inner;
        py.detach(|| {
            (0..model.n_topics())
                .map(|topic| themata::evaluate::drift::top_words(model, topic, n))
                .collect()
        })
    }

    /// summary.json of this model as a JSON string (see `Model.summary`).
    fn summary_json(&self) -> PyResult<String> {
        serde_json::to_string(&self.summary_of()).map_err(|err| PyValueError::new_err(err.to_string()))
    }

    /// Writes the model folder `folder` exactly as `themata fit` does
    /// (model.bin and summary.json), replacing an earlier model folder there.
    fn save(&self, py: Python<'_>, folder: PathBuf) -> PyResult<()> {
        let summary = self.summary_of();
        py.detach(|| folder::write_model_folder(&folder, &self.inner, &summary))
            .map_err(file_error)
    }

    /// Places new documents in the model with the topics fixed (fold-in):
    /// for each text, its topic shares with credible intervals at `level`
    /// (K values each), and its known and unknown token counts.
    #[pyo3(signature = (texts, ids = None, level = DEFAULT_LEVEL, samples = 10, seed = 1))]
    fn assign(
        &self,
        py: Python<'_>,
        texts: Vec<String>,
        ids: Option<Vec<String>>,
        level: f64,
        samples: usize,
        seed: u64,
    ) -> PyResult<Vec<PlacementRow>> {
        check_level(level)?;
        if samples == 0 {
            return Err(PyValueError::new_err("samples must be at least 1"));
        }
        let ids = match ids {
            Some(ids) if ids.len() != texts.len() => {
                return Err(PyValueError::new_err(format!(
                    "{} ids for {} texts; give one id per text",
                    ids.len(),
                    texts.len()
                )));
            }
            Some(ids) => ids,
            None => (0..texts.len()).map(|idx| idx.to_string()).collect(),
        };
        let model = &self.inner;
        let tokenizer = Tokenizer::new(&model.corpus.tokenizer).map_err(bad_input)?;
        let fold_in = FoldInSettings {
            samples,
            ..FoldInSettings::default()
        };
        let placements = py
            .detach(|| {
                use rayon::prelude::*;
                let weights = score::TopicWeights::of(model);
                texts
                    .par_iter()
                    .zip(&ids)
                    .enumerate()
                    .map(|(idx, (text, id))| {
                        let doc = score::encode_text(&tokenizer, &model.corpus.vocabulary, id, text);
                        let placement = score::place(
                            model,
                            &weights,
                            &doc,
                            &fold_in,
                            &mut score::document_rng(seed, idx),
                        )?;
                        let intervals = (0..model.n_topics())
                            .map(|topic| placement.interval(&model.priors.alpha, topic, level))
                            .collect::<Result<Vec<_>, _>>()?;
                        Ok((
                            placement.document,
                            placement.tokens,
                            placement.unknown_tokens,
                            placement.shares,
                            intervals.iter().map(|i| i.low).collect(),
                            intervals.iter().map(|i| i.high).collect(),
                        ))
                    })
                    .collect::<Result<Vec<PlacementRow>, score::ScoreError>>()
            })
            .map_err(system)?;
        Ok(placements)
    }

    /// Held-out perplexity of new texts (document completion, or
    /// "left-to-right" with `particles`), as a dict like `themata score`'s.
    #[pyo3(signature = (texts, method = "completion", particles = 20, seed = 1))]
    fn perplexity(
        &self,
        py: Python<'_>,
        texts: Vec<String>,
        method: &str,
        particles: usize,
        seed: u64,
    ) -> PyResult<String> {
        let method = match method {
            "completion" => Method::Completion,
            "left-to-right" => Method::LeftToRight,
            other => {
                return Err(PyValueError::new_err(format!(
                    "`{other}` is not a method: use \"completion\" or \"left-to-right\""
                )));
            }
        };
        if particles == 0 {
            return Err(PyValueError::new_err("particles must be at least 1"));
        }
        let model = &self.inner;
        let tokenizer = Tokenizer::new(&model.corpus.tokenizer).map_err(bad_input)?;
        let documents: Vec<EncodedDocument> = texts
            .iter()
            .enumerate()
            .map(|(idx, text)| {
                score::encode_text(&tokenizer, &model.corpus.vocabulary, &idx.to_string(), text)
            })
            .collect();
        let settings = ScoreSettings {
            method,
            particles,
            fold_in: FoldInSettings::default(),
            seed,
        };
        let scored = py
            .detach(|| score::score_heldout(model, &documents, &settings))
            .map_err(system)?;
        serde_json::to_string(&scored).map_err(|err| PyValueError::new_err(err.to_string()))
    }

    /// Coherence and per-topic diagnostics over the training documents (or
    /// `reference`, a Corpus), as a JSON string like `themata score`'s.
    #[pyo3(signature = (top_words = 10, reference = None))]
    fn coherence(&self, py: Python<'_>, top_words: usize, reference: Option<&PyCorpus>) -> PyResult<String> {
        if top_words < 2 {
            return Err(PyValueError::new_err(
                "top_words must be at least 2: coherence compares pairs of words",
            ));
        }
        let model = &self.inner;
        let report = py.detach(|| {
            let settings = CoherenceSettings::default();
            match reference {
                Some(reference) => {
                    let aligned = score::align_corpus(&reference.inner, &model.corpus.vocabulary)
                        .ok_or_else(|| {
                            PyValueError::new_err(
                                "the reference corpus shares no word with the model's vocabulary",
                            )
                        })?;
                    let documents: Vec<Vec<u32>> = aligned.into_iter().map(|doc| doc.tokens).collect();
                    score::coherence_report(model, &documents, "reference corpus", &settings, top_words)
                        .map_err(bad_input)
                }
                None => {
                    let documents: Vec<&[u32]> = (0..model.corpus.n_docs())
                        .map(|d| model.corpus.doc_tokens(d))
                        .collect();
                    score::coherence_report(model, &documents, "training corpus", &settings, top_words)
                        .map_err(bad_input)
                }
            }
        })?;
        serde_json::to_string(&report).map_err(|err| PyValueError::new_err(err.to_string()))
    }

    /// The HTML report of the model (the page `themata report` writes), as
    /// a string. Side files (topic names, run record, build record,
    /// held-out perplexity) come from `folder`, else from the folder the
    /// model was loaded from.
    #[pyo3(signature = (folder = None, title = None, top_words = themata::settings::DEFAULT_TOP_WORDS, level = DEFAULT_LEVEL))]
    fn report_html(
        &self,
        py: Python<'_>,
        folder: Option<PathBuf>,
        title: Option<String>,
        top_words: usize,
        level: f64,
    ) -> PyResult<String> {
        py.detach(|| self.render_report(folder, title, top_words, level))
    }

    /// Writes the HTML report to the file `path` (replaced whole, never
    /// half-written; its folder must exist).
    #[pyo3(signature = (path, folder = None, title = None, top_words = themata::settings::DEFAULT_TOP_WORDS, level = DEFAULT_LEVEL))]
    fn report(
        &self,
        py: Python<'_>,
        path: PathBuf,
        folder: Option<PathBuf>,
        title: Option<String>,
        top_words: usize,
        level: f64,
    ) -> PyResult<()> {
        if path.is_dir() {
            return Err(PyValueError::new_err(format!(
                "{}: is a folder; pass the file to write",
                path.display()
            )));
        }
        let parent = match path.parent() {
            Some(parent) if !parent.as_os_str().is_empty() => parent,
            _ => std::path::Path::new("."),
        };
        if !parent.is_dir() {
            return Err(PyFileNotFoundError::new_err(format!(
                "{}: no such folder; create it first or choose another path",
                parent.display()
            )));
        }
        py.detach(|| {
            let page = self.render_report(folder, title, top_words, level)?;
            write_atomic(&path, page.as_bytes()).map_err(file_error)
        })
    }

    fn __repr__(&self) -> String {
        format!(
            "<themata.Model: {} topics, {} documents, {} words, {} sweeps>",
            self.inner.n_topics(),
            self.inner.corpus.n_docs(),
            self.inner.corpus.vocabulary.len(),
            self.inner.iterations_done
        )
    }
}

/// Reads a model folder written by `themata fit`, `themata run` or `Model.save`.
#[pyfunction]
fn load_model(py: Python<'_>, folder: PathBuf) -> PyResult<PyModel> {
    let inner = py.detach(|| folder::load_model(&folder)).map_err(folder_error)?;
    Ok(PyModel {
        folder: Some(folder),
        ..PyModel::wrap(inner)
    })
}

/// A prior option from Python: "learn", a number, or a list of numbers.
fn prior_spec(name: &str, value: Option<&Bound<'_, PyAny>>) -> PyResult<Option<PriorSpec>> {
    let Some(value) = value else {
        return Ok(None);
    };
    if let Ok(text) = value.extract::<String>() {
        return text
            .parse::<PriorSpec>()
            .map(Some)
            .map_err(|message| PyValueError::new_err(format!("{name}: {message}")));
    }
    if let Ok(number) = value.extract::<f64>() {
        return Ok(Some(PriorSpec::Symmetric(number)));
    }
    if let Ok(values) = value.extract::<Vec<f64>>() {
        return Ok(Some(PriorSpec::List(values)));
    }
    Err(PyValueError::new_err(format!(
        "{name} must be \"learn\", a number or a list of numbers"
    )))
}

/// Fits LDA to `corpus` with the options of `themata fit` (see the Python
/// wrapper for their meaning); `progress(done, total, log_likelihood)` is
/// called after every sweep. Ctrl-C stops the fit between sweeps.
#[pyfunction]
#[pyo3(signature = (
    corpus, topics, iterations = None, burn_in = None, alpha = None, beta = None,
    learn_every = None, samples = None, lag = None, seed = None, threads = None,
    trace_every = None, sampler = None, shards = None, start_from = None, progress = None
))]
#[allow(clippy::too_many_arguments)]
fn fit_corpus(
    py: Python<'_>,
    corpus: &PyCorpus,
    topics: i64,
    iterations: Option<i64>,
    burn_in: Option<i64>,
    alpha: Option<&Bound<'_, PyAny>>,
    beta: Option<&Bound<'_, PyAny>>,
    learn_every: Option<i64>,
    samples: Option<i64>,
    lag: Option<i64>,
    seed: Option<&Bound<'_, PyAny>>,
    threads: Option<i64>,
    trace_every: Option<i64>,
    sampler: Option<String>,
    shards: Option<i64>,
    start_from: Option<&PyModel>,
    progress: Option<Bound<'_, PyAny>>,
) -> PyResult<PyModel> {
    // Negative counts are refused with the command line's words for them
    // (its value parser's); the rest is checked when the options resolve.
    let count = |name: &str, value: Option<i64>| -> PyResult<Option<u64>> {
        value
            .map(|value| {
                u64::try_from(value).map_err(|_| {
                    let range = if name == "topics" {
                        settings::TOPICS
                    } else {
                        settings::ANY_WHOLE
                    };
                    let message = range.parser::<u64>()(&value.to_string())
                        .err()
                        .unwrap_or_else(|| format!("`{value}` is not a whole number"));
                    PyValueError::new_err(format!("{name}: {message}"))
                })
            })
            .transpose()
    };
    let seed = seed
        .map(|value| {
            value.extract::<u64>().map_err(|_| {
                let shown = value.str().map(|text| text.to_string()).unwrap_or_default();
                let message = settings::ANY_WHOLE.parser::<u64>()(&shown)
                    .err()
                    .unwrap_or_else(|| format!("`{shown}` is not a whole number"));
                PyValueError::new_err(format!("seed: {message}"))
            })
        })
        .transpose()?;
    let sampler = sampler
        .map(|name| {
            serde_json::from_value::<SamplerChoice>(serde_json::Value::String(name.clone())).map_err(|_| {
                PyValueError::new_err(format!(
                    "sampler: `{name}` is not a sampler (see `themata fit --help`)"
                ))
            })
        })
        .transpose()?;
    let options = FitOptions {
        topics: count("topics", Some(topics))?.map(|v| v as usize),
        iterations: count("iterations", iterations)?,
        burn_in: count("burn_in", burn_in)?,
        alpha: prior_spec("alpha", alpha)?,
        beta: prior_spec("beta", beta)?,
        learn_every: count("learn_every", learn_every)?,
        samples: count("samples", samples)?,
        lag: count("lag", lag)?,
        seed,
        threads: count("threads", threads)?.map(|v| v as usize),
        trace_every: count("trace_every", trace_every)?,
        sampler,
        shards: count("shards", shards)?.map(|v| v as usize),
        ..FitOptions::default()
    };
    let plan = options.resolve().map_err(bad_input)?;
    debug_assert!(!matches!(plan.start_from, Some(StartFrom::Published)));
    let corpus = corpus.inner.clone();
    let mut model = match start_from {
        Some(previous) => {
            warm::start_warm(corpus, &plan.settings, &previous.inner)
                .map_err(bad_input)?
                .0
        }
        None => fit::start(corpus, &plan.settings).map_err(bad_input)?,
    };
    let pool = themata::thread_pool(plan.threads).map_err(system)?;
    let progress = progress.map(Bound::unbind);
    // Python runs signal handlers on its main thread only, and rayon runs
    // the fit on a worker: so the fit runs on a thread of its own while
    // this (the calling) thread, with the interpreter released, checks for
    // signals every few milliseconds and raises the stop flag that the fit
    // reads after each sweep.
    let stop = AtomicBool::new(false);
    let (timing, callback_error, signal_error) = py.detach(|| {
        std::thread::scope(|scope| {
            let fitting = scope.spawn(|| {
                let mut callback_error: Option<PyErr> = None;
                let timing = pool.install(|| {
                    let last = std::cell::Cell::new((0u64, 0u64, None::<f64>));
                    fit::run_to_target(
                        &mut model,
                        &mut |event| {
                            let FitEvent::Sweep {
                                done,
                                total,
                                log_likelihood,
                            } = event;
                            last.set((done, total, log_likelihood));
                        },
                        &mut |_| {
                            if stop.load(Ordering::SeqCst) {
                                return ControlFlow::Break(());
                            }
                            let Some(callback) = &progress else {
                                return ControlFlow::Continue(());
                            };
                            Python::attach(|py| {
                                let (done, total, log_likelihood) = last.get();
                                match callback.call1(py, (done, total, log_likelihood)) {
                                    Ok(_) => ControlFlow::Continue(()),
                                    Err(err) => {
                                        callback_error = Some(err);
                                        ControlFlow::Break(())
                                    }
                                }
                            })
                        },
                    )
                });
                (timing, callback_error)
            });
            let mut signal_error: Option<PyErr> = None;
            while !fitting.is_finished() {
                std::thread::sleep(SIGNAL_POLL);
                if signal_error.is_none()
                    && let Err(err) = Python::attach(|py| py.check_signals())
                {
                    signal_error = Some(err);
                    stop.store(true, Ordering::SeqCst);
                }
            }
            match fitting.join() {
                Ok((timing, callback_error)) => (timing, callback_error, signal_error),
                Err(panic) => std::panic::resume_unwind(panic),
            }
        })
    });
    if let Some(err) = signal_error {
        if err.is_instance_of::<PyKeyboardInterrupt>(py) {
            return Err(PyKeyboardInterrupt::new_err(format!(
                "the fit was stopped after {} of {} sweeps",
                model.iterations_done, model.target
            )));
        }
        return Err(err);
    }
    if let Some(err) = callback_error {
        return Err(err);
    }
    let timing = timing.map_err(bad_input)?;
    Ok(PyModel {
        inner: model,
        threads: plan.threads,
        sampling_seconds: timing.sampling_seconds,
        tokens_per_second: timing.tokens_per_second(),
        folder: None,
    })
}

/// The worker threads `threads` stands for (None: every core).
#[pyfunction]
#[pyo3(signature = (threads = None))]
fn resolve_threads(threads: Option<usize>) -> PyResult<usize> {
    settings::resolve_threads(threads).map_err(bad_input)
}

/// The native module: the classes and functions the Python package wraps.
#[pymodule]
fn _native(module: &Bound<'_, PyModule>) -> PyResult<()> {
    module.add_class::<PyCorpus>()?;
    module.add_class::<PyModel>()?;
    module.add_function(wrap_pyfunction!(load_corpus, module)?)?;
    module.add_function(wrap_pyfunction!(load_model, module)?)?;
    module.add_function(wrap_pyfunction!(fit_corpus, module)?)?;
    module.add_function(wrap_pyfunction!(build::build_corpus_from_texts, module)?)?;
    module.add_function(wrap_pyfunction!(build::build_corpus_from_paths, module)?)?;
    module.add_function(wrap_pyfunction!(resolve_threads, module)?)?;
    module.add("__version__", env!("CARGO_PKG_VERSION"))?;
    Ok(())
}
