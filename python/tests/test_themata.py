"""Tests of the Python package against the command line built from the same
repository: the same seed gives the same model bytes, arrays match what the
command line prints, folders and reports round-trip both ways, corpora built
from lists and data frames equal the command line's, bad input raises clear
Python exceptions with the command line's messages.

The command line is found through THEMATA_BIN, else at target/release/themata
in the repository (`cargo build --release`). Run from the repository root:
`pytest python/tests`.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import types
from pathlib import Path

import numpy as np
import pytest

import themata

HERE = Path(__file__).resolve().parent
REPO = HERE.parent.parent
DEMO = REPO / "corpora-demo" / "bulletin.jsonl"
NOTEBOOK = REPO / "python" / "examples" / "notebook.py"

# Small options for the demo corpus, shared by the command line and Python.
BUILD_ARGS = ["--label-field", "theme", "--min-docs", "3"]
BUILD_KEYWORDS = dict(label_field="theme", min_docs=3)


def cli() -> str:
    binary = os.environ.get("THEMATA_BIN", str(REPO / "target" / "release" / "themata"))
    if not Path(binary).is_file():
        pytest.fail(f"the themata command line is needed at {binary} (cargo build --release, or set THEMATA_BIN)")
    return binary


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([cli(), *args], cwd=cwd, capture_output=True, text=True, check=False)


def run_ok(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    result = run(*args, cwd=cwd)
    assert result.returncode == 0, result.stderr
    return result


def tsv(text: str) -> list[dict[str, str]]:
    lines = text.strip("\n").split("\n")
    header = lines[0].split("\t")
    return [dict(zip(header, line.split("\t"))) for line in lines[1:]]


@pytest.fixture()
def demo_corpus(tmp_path: Path) -> Path:
    """The demo corpus built by the command line."""
    run_ok("build", str(DEMO), *BUILD_ARGS, "--out", "corpus.bin", "-q", cwd=tmp_path)
    return tmp_path / "corpus.bin"


# --- the same model as the command line ------------------------------------


def test_the_same_seed_gives_the_command_lines_model_bytes(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the project's determinism contract (README "Outputs",
    # ARCHITECTURE invariant): same inputs + same seed -> byte-identical
    # model.bin, whatever the thread count (2 for the command line, 1 here).
    run_ok(
        "fit", str(demo_corpus), "--topics", "6", "--iterations", "80", "--burn-in", "20", "--seed", "11",
        "--samples", "2", "--lag", "5", "--threads", "2", "--out", "cli-model", "-q", cwd=tmp_path,
    )
    corpus = themata.load_corpus(demo_corpus)
    model = themata.fit(corpus, topics=6, iterations=80, burn_in=20, seed=11, samples=2, lag=5, threads=1)
    model.save(tmp_path / "py-model")
    python_bytes = (tmp_path / "py-model" / "model.bin").read_bytes()
    assert python_bytes == (tmp_path / "cli-model" / "model.bin").read_bytes()
    # A different seed gives different bytes, so the comparison can fail.
    other = themata.fit(corpus, topics=6, iterations=80, burn_in=20, seed=12, samples=2, lag=5)
    other.save(tmp_path / "other")
    assert (tmp_path / "other" / "model.bin").read_bytes() != python_bytes


def test_fixed_priors_and_a_named_sampler_give_the_same_bytes_too(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the determinism contract as above, for the fit options that
    # take other paths through the engine (fixed priors, the sparse sampler).
    run_ok(
        "fit", str(demo_corpus), "--topics", "5", "--iterations", "40", "--alpha", "0.3", "--beta", "0.02",
        "--sampler", "sparse", "--seed", "4", "--out", "cli-model", "-q", cwd=tmp_path,
    )
    corpus = themata.load_corpus(demo_corpus)
    model = themata.fit(corpus, topics=5, iterations=40, alpha=0.3, beta=0.02, sampler="sparse", seed=4)
    model.save(tmp_path / "py-model")
    assert (tmp_path / "py-model" / "model.bin").read_bytes() == (tmp_path / "cli-model" / "model.bin").read_bytes()


def test_arrays_match_the_printed_tables_and_rows_sum_to_one(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the model's definitions (README "Outputs": weight = phi_kw,
    # share = theta_dk) as `themata show --format tsv` prints them with 17
    # significant digits, which read back to the same float64 (IEEE 754-2008,
    # section 5.12.2: 17 digits round-trip a binary64); printed values are
    # checked to 1e-15 relative, far below the 6-digit default.
    corpus = themata.load_corpus(demo_corpus)
    model = themata.fit(corpus, topics=5, iterations=60, seed=3, samples=2, lag=5)
    phi, theta = model.topic_word, model.document_topic
    assert phi.dtype == np.float64 and phi.shape == (5, len(model.vocabulary))
    assert theta.dtype == np.float64 and theta.shape == (corpus.n_documents, 5)
    # Source: rows of a probability table sum to 1 (common practice); within
    # 1e-12, which a sum of ~2,000 float64 terms meets with room to spare
    # (rounding error below V * 2^-53 ~ 2e-13).
    assert np.max(np.abs(phi.sum(axis=1) - 1.0)) < 1e-12
    assert np.max(np.abs(theta.sum(axis=1) - 1.0)) < 1e-12
    model.save(tmp_path / "m")

    words = {word: index for index, word in enumerate(model.display_words)}
    rows = tsv(run_ok("show", "m", "--format", "tsv", "--words", "all", "--precision", "17", cwd=tmp_path).stdout)
    assert len(rows) >= 5 * 10
    for row in rows:
        value = phi[int(row["topic"]), words[row["word"]]]
        assert abs(value - float(row["weight"])) <= 1e-15 * value, row

    ids = {doc: index for index, doc in enumerate(model.document_ids)}
    low, high = model.document_topic_intervals(0.9)
    rows = tsv(
        run_ok(
            "show", "m", "--documents", "--all-topics", "--format", "tsv", "--precision", "17", cwd=tmp_path
        ).stdout
    )
    assert len(rows) == corpus.n_documents * 5
    for row in rows:
        doc, topic = ids[row["document"]], int(row["topic"])
        assert abs(theta[doc, topic] - float(row["share"])) <= 1e-15 * theta[doc, topic], row
        assert abs(low[doc, topic] - float(row["low"])) <= 1e-15 * low[doc, topic], row
        assert abs(high[doc, topic] - float(row["high"])) <= 1e-15 * high[doc, topic], row


# --- round trips -------------------------------------------------------------


def test_a_python_model_is_shown_and_scored_by_the_command_line(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the contract — one folder format for both front ends;
    # the command line reads a folder written by Python and finds the same
    # topics (top words) and the same training coherence.
    model = themata.fit(themata.load_corpus(demo_corpus), topics=4, iterations=40, seed=2)
    model.save(tmp_path / "from-python")
    shown = json.loads(run_ok("show", "from-python", "--format", "json", cwd=tmp_path).stdout)
    topics = shown["topics"] if isinstance(shown, dict) else shown
    printed = [[entry["word"] for entry in topic["words"]] for topic in topics]
    assert printed == model.top_words(10)
    scored = json.loads(run_ok("score", "from-python", "--format", "json", cwd=tmp_path).stdout)["coherence"]
    ours = model.coherence()
    # The command line prints six significant digits: equal within 1e-5.
    for measure in ("umass", "npmi", "cv"):
        assert scored[measure] == pytest.approx(ours[measure], rel=1e-5)
    assert [topic["top_words"] for topic in scored["per_topic"]] == model.top_words(10)


def test_a_command_line_model_loads_in_python(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: as above, the other way round; saving the loaded model writes
    # the same bytes again (the format invariant of ARCHITECTURE.md).
    run_ok("fit", str(demo_corpus), "--topics", "4", "--iterations", "40", "--out", "from-cli", "-q", cwd=tmp_path)
    loaded = themata.load_model(tmp_path / "from-cli")
    summary = json.loads((tmp_path / "from-cli" / "summary.json").read_text())
    assert loaded.n_topics == 4 == summary["topics"]
    assert loaded.summary["log_likelihood"] == summary["log_likelihood"]
    loaded.save(tmp_path / "again")
    assert (tmp_path / "again" / "model.bin").read_bytes() == (tmp_path / "from-cli" / "model.bin").read_bytes()
    rows = tsv(run_ok("show", "from-cli", "--format", "tsv", "--words", "3", "--precision", "17", cwd=tmp_path).stdout)
    words = {word: index for index, word in enumerate(loaded.display_words)}
    for row in rows:
        value = loaded.topic_word[int(row["topic"]), words[row["word"]]]
        assert abs(value - float(row["weight"])) <= 1e-15 * value


def test_the_report_is_the_command_lines_page(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the report module's contract (src/report/html/mod.rs: the same
    # model and context give the same bytes) and the rule of one
    # implementation: Python's page for a folder equals `themata report`'s.
    run_ok("fit", str(demo_corpus), "--topics", "4", "--iterations", "40", "--out", "model", "-q", cwd=tmp_path)
    run_ok("report", "model", "--out", "cli.html", "--words", "8", cwd=tmp_path)
    model = themata.load_model(tmp_path / "model")
    model.report(tmp_path / "py.html", top_words=8)
    assert (tmp_path / "py.html").read_bytes() == (tmp_path / "cli.html").read_bytes()
    page = model.report_html(title="another title")
    assert page.startswith("<!DOCTYPE html>") and "another title" in page
    with pytest.raises(FileNotFoundError, match="no such folder"):
        model.report(tmp_path / "absent" / "r.html")
    with pytest.raises(ValueError, match="is a folder"):
        model.report(tmp_path)


# --- corpora from Python ----------------------------------------------------


def test_paths_read_as_the_command_line_reads(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the rule of one implementation — `build_corpus(paths=...)`
    # runs `themata build`'s code, so the corpus file is byte-identical.
    corpus = themata.build_corpus(paths=[DEMO], **BUILD_KEYWORDS)
    corpus.save(tmp_path / "again.bin")
    assert (tmp_path / "again.bin").read_bytes() == demo_corpus.read_bytes()
    assert corpus.build_summary["documents_kept"] == corpus.n_documents


def test_texts_lists_pairs_and_frames_build_the_command_lines_corpus(tmp_path: Path) -> None:
    # Source: the rule of one implementation (the in-memory build and the
    # file build share src/ingest/corpus.rs): the same records as a list,
    # (id, text) pairs, a Series or a DataFrame give the corpus `themata
    # build` makes of them as JSON Lines, word ids and tokens alike.
    records = [json.loads(line) for line in DEMO.read_text().splitlines()[:300]]
    (tmp_path / "part.jsonl").write_text("".join(json.dumps(r) + "\n" for r in records))
    options = ["--stopwords", "english", "--min-length", "3", "--min-docs", "3", "--max-doc-share", "0.5"]
    run_ok("build", "part.jsonl", "--label-field", "theme", *options, "--out", "cli.bin", "-q", cwd=tmp_path)
    cli_corpus = themata.load_corpus(tmp_path / "cli.bin")
    keywords = dict(stopwords="english", min_length=3, min_docs=3, max_doc_share=0.5)
    ids = [r["id"] for r in records]
    texts = [r["text"] for r in records]
    themes = [r["theme"] for r in records]

    def same(corpus: themata.Corpus) -> None:
        assert corpus.vocabulary == cli_corpus.vocabulary
        assert corpus.document_ids == cli_corpus.document_ids
        for index in (0, 1, corpus.n_documents - 1):
            assert corpus.document_tokens(index) == cli_corpus.document_tokens(index)
        assert corpus.n_tokens == cli_corpus.n_tokens

    same(themata.build_corpus(list(zip(ids, texts)), labels=themes, **keywords))
    same(themata.build_corpus(dict(zip(ids, texts)), **keywords))
    pd = pytest.importorskip("pandas")
    frame = pd.DataFrame(records)
    from_frame = themata.build_corpus(frame, text_column="text", id_column="id", label_column="theme", **keywords)
    same(from_frame)
    assert from_frame.labels == cli_corpus.labels
    same(themata.build_corpus(frame.set_index("id")["text"], **keywords))
    from_list = themata.build_corpus(texts, **keywords)
    assert from_list.vocabulary == cli_corpus.vocabulary
    assert from_list.document_ids[:3] == ["0", "1", "2"]


def test_skipped_documents_are_warned_about_as_the_command_line_does() -> None:
    # Source: the reader's rules (src/ingest/read/mod.rs: an empty text and
    # a repeated id are skipped with a diagnostic) and issue 11's warning
    # about a document holding a large share of the tokens.
    texts = [("a", "harbour boats quay"), ("b", "   "), ("a", "school pupils"), ("c", "harbour tide quay")]
    with pytest.warns(themata.BuildWarning, match=r"2 document\(s\) skipped \(duplicate_id 1, empty 1\)"):
        corpus = themata.build_corpus(texts, stopwords="none", min_docs=1, max_doc_share=1.0)
    assert corpus.document_ids == ["a", "c"]
    kinds = [d["kind"] for d in corpus.build_summary["diagnostics"]]
    assert kinds == ["empty", "duplicate_id"]
    with pytest.raises(ValueError, match="strict"):
        themata.build_corpus(texts, stopwords="none", min_docs=1, max_doc_share=1.0, strict=True)
    long = " ".join(["harbour quay tide"] * 30)
    with pytest.warns(themata.BuildWarning, match="holds .* of all tokens"):
        split = themata.build_corpus([long, "school pupils term", "garden seeds soil"], stopwords="none", min_docs=1, max_doc_share=1.0)
    assert split.n_documents == 3
    chunked = themata.build_corpus([long, "school pupils"], stopwords="none", min_docs=1, max_doc_share=1.0, split_every=40)
    assert chunked.document_ids[:3] == ["0#1", "0#2", "0#3"]


# --- bad input ---------------------------------------------------------------


def test_bad_input_raises_clear_python_exceptions(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: Python's conventions (ValueError for bad values, TypeError for
    # unexpected keywords and wrong types, FileNotFoundError/OSError for the
    # file system); no input here may crash the interpreter.
    with pytest.raises(ValueError, match="the list is empty"):
        themata.build_corpus([])
    with pytest.raises(ValueError, match="document `1` is a int, not a string"):
        themata.build_corpus(["fine text here", 42])
    with pytest.raises(TypeError, match="not a string"):
        themata.build_corpus([b"bytes are not text"])
    with pytest.raises(ValueError, match="missing value"):
        themata.build_corpus(["fine text", None])
    with pytest.raises(ValueError, match="no document has any words left"):
        themata.build_corpus(["the and of", "   "], min_docs=1)
    with pytest.raises(TypeError, match="unexpected keyword argument 'stopword'"):
        themata.build_corpus(["some text"], stopword="none")
    with pytest.raises(TypeError, match="applies with paths= only"):
        themata.build_corpus(["some text"], text_field="body")
    with pytest.raises(FileNotFoundError, match="absent.jsonl: no such file or folder"):
        themata.build_corpus(paths=[tmp_path / "absent.jsonl"])
    with pytest.raises(FileNotFoundError, match="absent.bin: no such file"):
        themata.load_corpus(tmp_path / "absent.bin")
    with pytest.raises(FileNotFoundError, match="no model here"):
        themata.load_model(tmp_path / "no-folder")
    with pytest.raises(ValueError, match="no model here"):
        themata.load_model(tmp_path)
    (tmp_path / "model").mkdir()
    (tmp_path / "model" / "model.bin").write_bytes(b"not a model at all")
    with pytest.raises(ValueError, match="not a themata model file"):
        themata.load_model(tmp_path / "model")

    corpus = themata.load_corpus(demo_corpus)
    for topics in (0, -3):
        with pytest.raises(ValueError, match="topics"):
            themata.fit(corpus, topics=topics)
    with pytest.raises(ValueError, match="topics: must be a whole number"):
        themata.fit(corpus, topics=2.5)
    with pytest.raises(ValueError, match="sampler"):
        themata.fit(corpus, topics=3, sampler="fastest")
    with pytest.raises(ValueError, match="seed: `-1` is not a whole number"):
        themata.fit(corpus, topics=3, seed=-1)
    with pytest.raises(ValueError, match="fit needs a themata.Corpus"):
        themata.fit(["a list"], topics=3)


def test_bad_values_carry_the_command_lines_messages(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the contract — "the same messages as the command line".
    # Each message is compared with what the command line prints for the
    # same value (fit options on the command line; build values in a config
    # file, which the Python keywords are read like).
    result = run("fit", str(demo_corpus), "--topics", "4", "--iterations", "10", "--burn-in", "10", "--out", "x", cwd=tmp_path)
    assert result.returncode == 2
    corpus = themata.load_corpus(demo_corpus)
    with pytest.raises(ValueError) as caught:
        themata.fit(corpus, topics=4, iterations=10, burn_in=10)
    assert str(caught.value) in result.stderr

    (tmp_path / "bad.toml").write_text(
        f'[input]\npaths = ["{DEMO}"]\n[vocabulary]\nmin_docs = 0\n[fit]\ntopics = 0\n'
    )
    result = run("run", "bad.toml", cwd=tmp_path)
    assert result.returncode == 2
    with pytest.raises(ValueError) as caught:
        themata.build_corpus(paths=[DEMO], min_docs=0)
    message = str(caught.value)
    assert message.startswith("min_docs: ")
    assert message.removeprefix("min_docs: ") in result.stderr
    with pytest.raises(ValueError) as caught:
        themata.build_corpus(["harbour quay"], stopwords="klingon")
    assert "klingon" in str(caught.value) and str(caught.value).startswith("stopwords: ")
    with pytest.raises(ValueError, match="max_doc_share: invalid type: string \"half\", expected a number"):
        themata.build_corpus(["harbour quay"], max_doc_share="half")


# --- progress, placement, notebooks ----------------------------------------


def test_progress_goes_to_a_callback_or_to_tqdm_when_installed(monkeypatch: pytest.MonkeyPatch) -> None:
    # Source: the issue ("a progress callback or a tqdm bar when tqdm is
    # installed"); tqdm is replaced by a recorder so the test does not
    # depend on it being installed.
    corpus = themata.build_corpus(
        ["harbour boats quay tide"] * 5 + ["school pupils teacher term"] * 5,
        stopwords="none", min_docs=1, max_doc_share=1.0,
    )
    seen = []
    themata.fit(corpus, topics=2, iterations=30, seed=1, progress=lambda d, t, ll: seen.append((d, t)))
    assert seen == [(done, 30) for done in range(1, 31)]

    bars = []

    class RecordingBar:
        def __init__(self, total: int, **_: object) -> None:
            self.total, self.n, self.closed = total, 0, False
            bars.append(self)

        def set_postfix(self, **_: object) -> None:
            pass

        def refresh(self) -> None:
            pass

        def close(self) -> None:
            self.closed = True

    fake = types.ModuleType("tqdm")
    fake_auto = types.ModuleType("tqdm.auto")
    fake_auto.tqdm = RecordingBar
    fake.auto = fake_auto
    monkeypatch.setitem(sys.modules, "tqdm", fake)
    monkeypatch.setitem(sys.modules, "tqdm.auto", fake_auto)
    themata.fit(corpus, topics=2, iterations=25, seed=1)
    assert len(bars) == 1 and bars[0].n == 25 and bars[0].total == 25 and bars[0].closed
    themata.fit(corpus, topics=2, iterations=25, seed=1, progress=False)
    assert len(bars) == 1


def test_ctrl_c_stops_a_fit_between_sweeps(tmp_path: Path) -> None:
    # Source: the issue ("Ctrl-C in a notebook stops a fit cleanly between
    # sweeps"): SIGINT during a long fit raises KeyboardInterrupt in the
    # fitting process, which carries on. The wait is a guard against a hang
    # (the fit asked for would take minutes), not a speed check.
    import signal

    script = tmp_path / "long_fit.py"
    script.write_text(
        "import sys, themata\n"
        f"corpus = themata.build_corpus(paths=[{str(DEMO)!r}], min_docs=3)\n"
        "def progress(done, total, log_likelihood):\n"
        "    if done == 1:\n"
        "        print('started', flush=True)\n"
        "try:\n"
        "    themata.fit(corpus, topics=10, iterations=200000, seed=1, progress=progress)\n"
        "except KeyboardInterrupt as stop:\n"
        "    print('stopped:', stop, flush=True)\n"
        "    print('still running', flush=True)\n"
        "    sys.exit(0)\n"
        "sys.exit(1)\n"
    )
    child = subprocess.Popen([sys.executable, str(script)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        assert child.stdout is not None
        assert child.stdout.readline().strip() == "started"
        child.send_signal(signal.SIGINT)
        out, err = child.communicate(timeout=120)
    finally:
        if child.poll() is None:
            child.kill()
    assert child.returncode == 0, err
    assert "stopped: the fit was stopped after" in out and "of 200000 sweeps" in out
    assert "still running" in out


def test_new_documents_are_placed_and_scored_as_the_command_line_does(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the rule of one implementation — `Model.assign` and
    # `Model.perplexity` give what `themata assign` and `themata score
    # --heldout` print for the same model, texts and seed (17 significant
    # digits read back to the same float64, IEEE 754-2008 section 5.12.2).
    model = themata.fit(themata.load_corpus(demo_corpus), topics=4, iterations=40, seed=5)
    model.save(tmp_path / "model")
    records = [json.loads(line) for line in DEMO.read_text().splitlines()[-5:]]
    texts = [record["text"] for record in records] + ["qwertyx zxcvbq plokijuh"]
    (tmp_path / "new.jsonl").write_text(
        "".join(json.dumps({"id": str(index), "text": text}) + "\n" for index, text in enumerate(texts))
    )
    placed = model.assign(texts)
    rows = tsv(
        run_ok(
            "assign", "model", "new.jsonl", "--all-topics", "--format", "tsv", "--precision", "17", cwd=tmp_path
        ).stdout
    )
    # A document with no known word is listed once, as unplaced.
    unplaced = [row for row in rows if row["topic"] == "unplaced"]
    assert [row["document"] for row in unplaced] == ["5"]
    rows = [row for row in rows if row["topic"] != "unplaced"]
    assert len(rows) == 5 * 4
    for row in rows:
        document, topic = placed[int(row["document"])], int(row["topic"])
        for column in ("shares", "low", "high"):
            printed = float(row[column.rstrip("s")] if column == "shares" else row[column])
            assert abs(document[column][topic] - printed) <= 1e-15 * abs(printed), (row, column)
    for document in placed[:5]:
        # Source: theta rows are distributions (common practice), within
        # 1e-12 for a sum of 4 float64 terms.
        assert abs(document["shares"].sum() - 1.0) < 1e-12
    assert not placed[5]["placed"] and placed[5]["tokens"] == 0 and placed[5]["unknown_tokens"] == 3
    assert all(document["placed"] for document in placed[:5])

    (tmp_path / "heldout.jsonl").write_text(
        "".join(json.dumps({"id": str(index), "text": text}) + "\n" for index, text in enumerate(texts[:5]))
    )
    scored = json.loads(run_ok("score", "model", "--heldout", "heldout.jsonl", "--format", "json", cwd=tmp_path).stdout)
    ours = model.perplexity(texts[:5])
    # The command line prints six significant digits: equal within 1e-5.
    assert ours["heldout_perplexity"] == pytest.approx(scored["heldout_perplexity"], rel=1e-5)
    assert ours["tokens_scored"] == scored["tokens_scored"]
    html = model._repr_html_()
    assert "<table>" in html and "no basis for decisions" in html


def test_the_notebook_example_fits_the_demo_and_prints_its_topics() -> None:
    # Source: the notebook-style check (python/examples/notebook.py
    # fits the demo corpus with configs/demo.toml's options and prints the
    # topics). Its time is measured, not asserted (README, Python section).
    result = subprocess.run(
        [sys.executable, str(NOTEBOOK)], capture_output=True, text=True, check=False, cwd=REPO
    )
    assert result.returncode == 0, result.stderr
    lines = [line for line in result.stdout.splitlines() if line.startswith("topic ")]
    assert len(lines) == 10
    assert all(len(line.split(":", 1)[1].split(",")) == 8 for line in lines)
