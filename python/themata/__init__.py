"""themata for Python: topic models for document collections.

The same engine as the ``themata`` command line (LDA by collapsed Gibbs
sampling, learned priors, credible intervals), built from this repository;
nothing here is a second implementation. A model fitted here can be shown,
scored or reported by the command line, and the other way round.

    >>> import themata
    >>> corpus = themata.build_corpus(["harbour boats at the quay", ...])
    >>> model = themata.fit(corpus, topics=10, iterations=500, seed=1)
    >>> model.top_words(8)
    >>> model.document_topic        # numpy array, documents x topics
    >>> model.save("my-model")      # the command line's model folder

Topic models describe collections. They are no basis for decisions about
individual people: a document's topic shares summarise word co-occurrence,
not what its author meant, believes or did.

Errors carry the command line's messages: ``ValueError`` for bad input
(a bad option value, a damaged file, a corpus left empty),
``TypeError`` for an unknown keyword, ``FileNotFoundError`` for a missing
file or folder, ``OSError`` for other failures of the system.

The heavy work runs with the interpreter released, on as many threads as
``threads`` says (default: every core); Ctrl-C stops a fit after the
sweep under way.
"""

from __future__ import annotations

import html
import json
import operator
import os
import sys
import warnings
from collections.abc import Mapping
from typing import Any, Callable, Optional, Sequence, Union

import numpy as np

from . import _native

__all__ = [
    "BuildWarning",
    "Corpus",
    "DocumentTypeError",
    "Model",
    "build_corpus",
    "load_corpus",
    "fit",
    "load_model",
    "__version__",
]

__version__ = _native.__version__

Corpus = _native.Corpus

PathLike = Union[str, "os.PathLike[str]"]


def load_corpus(path: PathLike) -> Corpus:
    """Reads a corpus file written by ``themata build`` (or ``Corpus.save``)."""
    return _native.load_corpus(os.fspath(path))


class DocumentTypeError(TypeError, ValueError):
    """A document that is not a string (a number, bytes, a missing value...).

    Both a ``TypeError`` (Python's habit for a value of the wrong type) and a
    ``ValueError`` (the package's exception for bad input), so either
    ``except`` catches it.
    """


class BuildWarning(UserWarning):
    """Something a build says once: skipped documents, a field no record
    has, a document holding a large share of all tokens (the command line's
    warnings, word for word)."""


def _text(value: Any, document: str) -> str:
    if not isinstance(value, str):
        hint = " (a missing value? drop it first, e.g. with .dropna())" if _missing(value) else ""
        raise DocumentTypeError(
            f"document `{document}` is a {type(value).__name__}, not a string{hint}; pass texts"
        )
    return value


def _missing(value: Any) -> bool:
    return value is None or (isinstance(value, float) and value != value)


def _metadata(value: Any) -> Optional[str]:
    """A label or date cell as text (None when missing); dates in ISO 8601."""
    if _missing(value) or (type(value).__name__ == "NaTType"):
        return None
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value)


def _documents_from(
    documents: Any,
    text_column: Optional[str],
    id_column: Optional[str],
    label_column: Optional[str],
    date_column: Optional[str],
) -> tuple[list[str], list[str], Optional[list[Optional[str]]], Optional[list[Optional[str]]]]:
    """(ids, texts, labels, dates) from the document shapes `build_corpus` takes."""
    module = type(documents).__module__
    if module.startswith("pandas") and hasattr(documents, "columns"):
        if text_column is None:
            raise ValueError("a DataFrame needs text_column= (the column holding the texts)")
        for column in (text_column, id_column, label_column, date_column):
            if column is not None and column not in documents.columns:
                raise ValueError(
                    f"the DataFrame has no column `{column}` (columns: {', '.join(map(str, documents.columns))})"
                )
        ids = (
            [str(value) for value in documents[id_column].tolist()]
            if id_column is not None
            else [str(index) for index in documents.index]
        )
        texts = [_text(value, ids[position]) for position, value in enumerate(documents[text_column].tolist())]
        labels = None if label_column is None else [_metadata(v) for v in documents[label_column].tolist()]
        dates = None if date_column is None else [_metadata(v) for v in documents[date_column].tolist()]
        return ids, texts, labels, dates
    for name, column in (("text_column", text_column), ("id_column", id_column), ("label_column", label_column), ("date_column", date_column)):
        if column is not None:
            raise ValueError(f"{name}= applies to a pandas DataFrame only")
    if module.startswith("pandas") and hasattr(documents, "index"):
        ids = [str(index) for index in documents.index]
        texts = [_text(value, ids[position]) for position, value in enumerate(documents.tolist())]
        return ids, texts, None, None
    if isinstance(documents, (str, bytes)):
        raise ValueError("pass a list of texts or of (id, text) pairs, not one string; to read files, pass paths=[...]")
    if isinstance(documents, Mapping):
        ids = [str(key) for key in documents]
        texts = [_text(value, ids[position]) for position, value in enumerate(documents.values())]
        if not ids:
            raise ValueError("no documents given: the mapping is empty")
        return ids, texts, None, None
    try:
        items = list(documents)
    except TypeError:
        raise DocumentTypeError(
            f"documents must be a list of texts, of (id, text) pairs, or a pandas Series or DataFrame, not a {type(documents).__name__}"
        ) from None
    if not items:
        raise ValueError("no documents given: the list is empty")
    if all(isinstance(item, tuple) and len(item) == 2 for item in items):
        ids = [str(item[0]) for item in items]
        texts = [_text(item[1], ids[position]) for position, item in enumerate(items)]
        return ids, texts, None, None
    ids = [str(position) for position in range(len(items))]
    return ids, [_text(item, ids[position]) for position, item in enumerate(items)], None, None


def build_corpus(
    documents: Any = None,
    *,
    paths: Optional[Sequence[PathLike]] = None,
    text_column: Optional[str] = None,
    id_column: Optional[str] = None,
    label_column: Optional[str] = None,
    date_column: Optional[str] = None,
    labels: Optional[Sequence[Optional[str]]] = None,
    dates: Optional[Sequence[Any]] = None,
    **options: Any,
) -> Corpus:
    """Builds a corpus with the tokenizer and vocabulary rules of ``themata build``.

    ``documents`` is a list of texts (ids ``"0"``, ``"1"``, ...), a list of
    ``(id, text)`` pairs, a dict from id to text, a pandas Series of texts
    (ids from its index), or
    a pandas DataFrame with ``text_column`` (and optionally ``id_column``,
    ``label_column`` and ``date_column``; ids otherwise from its index).
    ``labels`` and ``dates`` give one label or date (ISO 8601) per text for
    the other shapes. Or pass ``paths``: the files and folders the command
    line reads (text files, JSON Lines, CSV), with its input options.

    Options are the command line's, with dashes as underscores, and the
    same defaults and checks: tokenizer (``stopwords``, ``min_length``,
    ``max_length``, ``keep_numbers``, ``keep_case``, ``stem``), vocabulary
    (``min_docs``, ``max_doc_share``, ``max_words``, ``keep_words``,
    ``drop_words``), input (``strict``, ``split_every``, and with ``paths``
    also ``format``, ``text_field``, ``id_field``, ``label_field``,
    ``date_field``). An unknown option raises ``TypeError``; a bad value
    ``ValueError`` with the command line's message; a missing path
    ``FileNotFoundError``.

    Empty documents, repeated ids and documents left with no word are
    skipped as by the command line; what was skipped is said once as a
    ``BuildWarning`` and kept in ``corpus.build_summary``.
    """
    if paths is not None:
        if documents is not None:
            raise ValueError("pass documents or paths=, not both")
        if isinstance(paths, (str, bytes, os.PathLike)):
            paths = [paths]
        corpus = _native.build_corpus_from_paths([os.fspath(p) for p in paths], _options(options))
    else:
        if documents is None:
            raise ValueError("no documents given: pass a list of texts, (id, text) pairs, or paths=[...]")
        ids, texts, frame_labels, frame_dates = _documents_from(
            documents, text_column, id_column, label_column, date_column
        )
        labels = frame_labels if labels is None else [_metadata(v) for v in labels]
        dates = frame_dates if dates is None else [_metadata(v) for v in dates]
        corpus = _native.build_corpus_from_texts(ids, texts, labels, dates, _options(options))
    _warn_about(corpus.build_summary)
    return corpus


def _warn_about(summary: Optional[dict[str, Any]]) -> None:
    """The build's warnings and skipped documents, once each, as BuildWarnings."""
    if not summary:
        return
    for text in summary.get("warnings", []):
        warnings.warn(text, BuildWarning, stacklevel=3)
    skipped = summary.get("diagnostics", [])
    if skipped:
        reasons = ", ".join(f"{reason} {count}" for reason, count in summary.get("skipped", {}).items())
        first = skipped[0]
        warnings.warn(
            f"{len(skipped)} document(s) skipped ({reasons}); the first: {first['message']} "
            "(all of them: corpus.build_summary['diagnostics'])",
            BuildWarning,
            stacklevel=3,
        )


def _options(options: dict[str, Any]) -> str:
    """Build options as the JSON object the native side reads like a config section."""
    normalised: dict[str, Any] = {}
    for key, value in options.items():
        if isinstance(value, os.PathLike):
            value = os.fspath(value)
        elif isinstance(value, (list, tuple)):
            value = [os.fspath(v) if isinstance(v, os.PathLike) else v for v in value]
        normalised[key] = value
    try:
        return json.dumps(normalised)
    except TypeError as error:
        raise ValueError(f"a build option has a value that is not text, a number, a boolean or a list: {error}") from None


ProgressCallback = Callable[[int, int, Optional[float]], Any]


def _tqdm_bar(total: int) -> Optional[tuple[ProgressCallback, Callable[[], None]]]:
    """A tqdm bar over the sweeps, or None when tqdm is not installed."""
    try:
        from tqdm.auto import tqdm  # optional dependency
    except ImportError:
        return None
    bars: list[Any] = []  # made at the first sweep, so a fit refused at once draws none

    def update(done: int, total: int, log_likelihood: Optional[float]) -> None:
        if not bars:
            bars.append(tqdm(total=total, unit="sweep", desc="sampling"))
        bar = bars[0]
        bar.total = total
        bar.n = done
        if log_likelihood is not None:
            bar.set_postfix(log_likelihood=f"{log_likelihood:.1f}", refresh=False)
        bar.refresh()

    def close() -> None:
        for bar in bars:
            bar.close()

    return update, close


def _progress(
    progress: Union[None, bool, ProgressCallback], total: int
) -> tuple[Optional[ProgressCallback], Callable[[], None]]:
    """The per-sweep callback and its closer for `fit`'s progress option:
    a callable is used as given; None (the default) shows a tqdm bar when
    tqdm is installed and nothing otherwise; True a tqdm bar, or without
    tqdm a line on stderr every 5%; False nothing."""
    if progress is False:
        return None, lambda: None
    if callable(progress):
        return progress, lambda: None
    bar = _tqdm_bar(total)
    if bar is not None:
        return bar
    if progress is None:
        return None, lambda: None
    step = max(1, total // 20)

    def report(done: int, total: int, log_likelihood: Optional[float]) -> None:
        if done % step == 0 or done == total:
            extra = f", log-likelihood {log_likelihood:.1f}" if log_likelihood is not None else ""
            print(f"sampling: {done}/{total} sweeps{extra}", file=sys.stderr)

    return report, lambda: None


def fit(
    corpus: Corpus,
    topics: int,
    iterations: Optional[int] = None,
    *,
    alpha: Union[None, str, float, Sequence[float]] = None,
    beta: Union[None, str, float, Sequence[float]] = None,
    seed: Optional[int] = None,
    threads: Optional[int] = None,
    burn_in: Optional[int] = None,
    learn_every: Optional[int] = None,
    samples: Optional[int] = None,
    lag: Optional[int] = None,
    trace_every: Optional[int] = None,
    sampler: Optional[str] = None,
    shards: Optional[int] = None,
    start_from: Optional["Model"] = None,
    progress: Union[None, bool, ProgressCallback] = None,
) -> "Model":
    """Fits LDA to ``corpus`` with the options of ``themata fit``.

    ``topics`` is K; ``iterations`` the Gibbs sweeps (default 1000);
    ``alpha`` and ``beta`` are ``"learn"`` (the default: learned from the
    data after burn-in), one number, or a list (one per topic for alpha,
    one per vocabulary word for beta); ``seed`` makes the fit reproducible
    (the same seed and corpus give the command line's model, bit for bit,
    for any ``threads``). ``samples``/``lag`` keep posterior samples at the
    end that estimates and intervals average over; ``sampler`` is
    ``"auto"``, ``"exact"``, ``"metropolis"``, ``"sparse"`` or ``"reference"``;
    ``start_from`` warm-starts from a previous model with the same K.

    ``progress`` is a callable ``(done, total, log_likelihood)`` called after
    every sweep (``log_likelihood`` is None on sweeps without a trace
    point); by default a tqdm bar is shown when tqdm is installed (``pip
    install tqdm``) and nothing otherwise; ``True`` asks for the bar, or
    without tqdm a line on stderr every 5%; ``False`` shows nothing.
    Ctrl-C stops the fit between sweeps and raises ``KeyboardInterrupt``.

    Bad values raise ``ValueError`` with the command line's message
    (``topics`` below 1, ``burn_in`` not below ``iterations``, ...).
    """
    if not isinstance(corpus, Corpus):
        raise ValueError(f"fit needs a themata.Corpus, not a {type(corpus).__name__}")
    if isinstance(topics, bool) or not hasattr(topics, "__index__"):
        raise ValueError(f"topics: must be a whole number, not {topics!r}")
    topics = operator.index(topics)
    total = iterations if isinstance(iterations, int) and iterations > 0 else 1000
    callback, close = _progress(progress, total)
    try:
        native = _native.fit_corpus(
            corpus,
            topics,
            iterations=iterations,
            burn_in=burn_in,
            alpha=alpha,
            beta=beta,
            learn_every=learn_every,
            samples=samples,
            lag=lag,
            seed=seed,
            threads=threads,
            trace_every=trace_every,
            sampler=sampler,
            shards=shards,
            start_from=start_from._native if start_from is not None else None,
            progress=callback,
        )
    finally:
        close()
    return Model(native)


def load_model(folder: PathLike) -> "Model":
    """Reads a model folder written by ``themata fit``/``run`` or ``Model.save``."""
    return Model(_native.load_model(os.fspath(folder)))


class Model:
    """A fitted topic model.

    Arrays are float64 numpy arrays: ``topic_word`` is K x V (row k is topic
    k's word distribution, summing to 1), ``document_topic`` is D x K (row d
    is document d's topic mixture over the training documents, summing to
    1). Words index the columns of ``topic_word`` in ``vocabulary`` order,
    documents the rows of ``document_topic`` in ``document_ids`` order.
    """

    def __init__(self, native: "_native.Model") -> None:
        self._native = native

    # --- shape and names -------------------------------------------------
    @property
    def n_topics(self) -> int:
        """Number of topics K."""
        return self._native.n_topics

    @property
    def vocabulary(self) -> list[str]:
        """The vocabulary words by id (stems as stored when stemming)."""
        return self._native.vocabulary

    @property
    def display_words(self) -> list[str]:
        """The words as shown to people (a stem's most frequent surface form)."""
        return self._native.display_words

    @property
    def document_ids(self) -> list[str]:
        """Ids of the training documents, in ``document_topic`` row order."""
        return self._native.document_ids

    @property
    def labels(self) -> list[Optional[str]]:
        """Labels of the training documents (None where missing)."""
        return self._native.labels

    @property
    def topic_ids(self) -> list[int]:
        """The id of each topic (0..K-1, or persistent ids from a run root)."""
        return self._native.topic_ids

    # --- estimates -------------------------------------------------------
    @property
    def topic_word(self) -> np.ndarray:
        """K x V array of phi (topic-word weights), float64."""
        return self._native.topic_word

    @property
    def document_topic(self) -> np.ndarray:
        """D x K array of theta (document-topic shares), float64."""
        return self._native.document_topic

    def topic_word_intervals(self, level: float = 0.9) -> tuple[np.ndarray, np.ndarray]:
        """Equal-tailed credible intervals of ``topic_word`` at ``level``: (low, high), K x V each."""
        return self._native.topic_word_intervals(level)

    def document_topic_intervals(self, level: float = 0.9) -> tuple[np.ndarray, np.ndarray]:
        """Equal-tailed credible intervals of ``document_topic`` at ``level``: (low, high), D x K each."""
        return self._native.document_topic_intervals(level)

    @property
    def topic_shares(self) -> list[float]:
        """Each topic's share of all tokens."""
        return self._native.topic_shares

    def top_words(self, n: int = 10) -> list[list[str]]:
        """The ``n`` heaviest words of each topic (shown forms), heaviest first."""
        return self._native.top_words(n)

    @property
    def summary(self) -> dict[str, Any]:
        """The figures of ``summary.json``: sizes, priors, traces, convergence..."""
        return json.loads(self._native.summary_json())

    # --- tidy frames (pandas) --------------------------------------------
    def topics_frame(self, n: int = 10) -> "Any":
        """One row per topic and top word: topic, id, rank, word, weight (pandas)."""
        import pandas as pd

        phi = self.topic_word
        rows = []
        order = np.argsort(-phi, axis=1, kind="stable")[:, :n]
        words = self.display_words
        for topic in range(self.n_topics):
            for rank, word in enumerate(order[topic], start=1):
                rows.append((topic, self.topic_ids[topic], rank, words[word], float(phi[topic, word])))
        return pd.DataFrame(rows, columns=["topic", "id", "rank", "word", "weight"])

    def documents_frame(self, level: float = 0.9) -> "Any":
        """One row per document and topic: document, label, topic, id, share, low, high (pandas)."""
        import pandas as pd

        theta = self.document_topic
        low, high = self.document_topic_intervals(level)
        n_docs, n_topics = theta.shape
        return pd.DataFrame(
            {
                "document": np.repeat(np.array(self.document_ids, dtype=object), n_topics),
                "label": np.repeat(np.array(self.labels, dtype=object), n_topics),
                "topic": np.tile(np.arange(n_topics), n_docs),
                "id": np.tile(np.array(self.topic_ids), n_docs),
                "share": theta.reshape(-1),
                "low": low.reshape(-1),
                "high": high.reshape(-1),
            }
        )

    # --- new documents and scores ----------------------------------------
    def assign(
        self,
        texts: Union[Sequence[str], Any],
        ids: Optional[Sequence[str]] = None,
        *,
        level: float = 0.9,
        samples: int = 10,
        seed: int = 1,
    ) -> list[dict[str, Any]]:
        """Places new texts in the model (the topics held fixed), as ``themata assign``.

        Returns one dict per text: ``document``, ``placed``, ``tokens``
        (known to the model), ``unknown_tokens``, and ``shares``, ``low``,
        ``high`` (numpy arrays of K). A text with no known word is not
        placed (``placed`` False, ``tokens == 0``): its shares are only the
        prior's.
        """
        if type(texts).__module__.startswith("pandas"):
            ids = [str(index) for index in texts.index] if ids is None else ids
            texts = texts.tolist()
        texts = [_text(text, str(position)) for position, text in enumerate(texts)]
        placed = self._native.assign(texts, None if ids is None else [str(i) for i in ids], level, samples, seed)
        return [
            {
                "document": document,
                "placed": tokens > 0,
                "tokens": tokens,
                "unknown_tokens": unknown,
                "shares": np.asarray(shares),
                "low": np.asarray(low),
                "high": np.asarray(high),
            }
            for document, tokens, unknown, shares, low, high in placed
        ]

    def perplexity(self, texts: Sequence[str], *, method: str = "completion", particles: int = 20, seed: int = 1) -> dict[str, Any]:
        """Held-out perplexity of new texts, as ``themata score --heldout``."""
        texts = [_text(text, str(position)) for position, text in enumerate(texts)]
        return json.loads(self._native.perplexity(texts, method, particles, seed))

    def coherence(self, top_words: int = 10, reference: Optional[Corpus] = None) -> dict[str, Any]:
        """Coherence (UMass, NPMI, C_V) and per-topic diagnostics, as ``themata score``."""
        return json.loads(self._native.coherence(top_words, reference))

    # --- files -----------------------------------------------------------
    def save(self, folder: PathLike) -> None:
        """Writes the command line's model folder (model.bin, summary.json)."""
        self._native.save(os.fspath(folder))

    def report(
        self,
        path: PathLike,
        *,
        folder: Optional[PathLike] = None,
        title: Optional[str] = None,
        top_words: int = 10,
        level: float = 0.9,
    ) -> None:
        """Writes the HTML report to the file ``path``: the page ``themata report`` writes.

        Topic names, the run record, the build record and held-out
        perplexity are read from ``folder`` (default: the folder the model
        was loaded from, if any), as the command line reads them beside a
        model. ``title`` defaults to that folder's name. The file is
        replaced whole, never left half-written; its folder must exist.
        """
        self._native.report(
            os.fspath(path), None if folder is None else os.fspath(folder), title, top_words, level
        )

    def report_html(
        self,
        *,
        folder: Optional[PathLike] = None,
        title: Optional[str] = None,
        top_words: int = 10,
        level: float = 0.9,
    ) -> str:
        """The HTML report as a string (see ``report``); in a notebook,
        ``IPython.display.HTML(model.report_html())`` shows it inline."""
        return self._native.report_html(None if folder is None else os.fspath(folder), title, top_words, level)

    def __repr__(self) -> str:
        return repr(self._native)

    def _repr_html_(self) -> str:
        summary = self.summary
        rows = "".join(
            "<tr><td>{}</td><td>{:.1%}</td><td>{}</td></tr>".format(
                self.topic_ids[topic],
                share,
                html.escape(", ".join(words)),
            )
            for topic, (share, words) in enumerate(zip(self.topic_shares, self.top_words(8)))
        )
        return (
            "<div><p><b>themata model</b>: {topics} topics, {documents} documents, {tokens} tokens, "
            "{words} words; {sweeps} sweeps, log-likelihood {ll:.1f}</p>"
            "<table><thead><tr><th>topic</th><th>share</th><th>top words</th></tr></thead>"
            "<tbody>{rows}</tbody></table>"
            "<p><small>Topic models describe collections; they are no basis for decisions about individual people.</small></p></div>"
        ).format(
            topics=summary["topics"],
            documents=summary["documents"],
            tokens=summary["tokens"],
            words=summary["vocabulary"],
            sweeps=summary["iterations"],
            ll=summary["log_likelihood"],
            rows=rows,
        )
