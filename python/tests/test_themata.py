"""Tests of the Python package against the command line built from the same
repository: the same seed gives the same model bytes, arrays match what the
command line prints, folders round-trip both ways, bad input raises clear
Python exceptions.

The command line is found through THEMATA_BIN, else at
../target/release/themata beside this package (`cargo build --release`).
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import themata

HERE = Path(__file__).resolve().parent
REPO = HERE.parent.parent
DEMO = REPO / "corpora-demo" / "bulletin.jsonl"


def cli() -> str:
    binary = os.environ.get("THEMATA_BIN", str(REPO / "target" / "release" / "themata"))
    if not Path(binary).is_file():
        pytest.fail(f"the themata command line is needed at {binary} (cargo build --release, or set THEMATA_BIN)")
    return binary


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([cli(), *args], cwd=cwd, capture_output=True, text=True, check=False)


@pytest.fixture()
def demo_corpus(tmp_path: Path) -> Path:
    """The demo corpus built by the command line."""
    result = run(
        "build", str(DEMO), "--label-field", "theme", "--min-docs", "3", "--out", "corpus.bin", "-q", cwd=tmp_path
    )
    assert result.returncode == 0, result.stderr
    return tmp_path / "corpus.bin"


def test_the_same_seed_gives_the_command_lines_model_bytes(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the project's determinism contract (README "Outputs"): same
    # inputs + same seed -> byte-identical model.bin, whatever the threads.
    result = run(
        "fit", str(demo_corpus), "--topics", "6", "--iterations", "80", "--seed", "11",
        "--samples", "2", "--lag", "5", "--threads", "2", "--out", "cli-model", "-q", cwd=tmp_path,
    )
    assert result.returncode == 0, result.stderr
    corpus = themata.load_corpus(demo_corpus)
    model = themata.fit(corpus, topics=6, iterations=80, seed=11, samples=2, lag=5, threads=1)
    model.save(tmp_path / "py-model")
    assert (tmp_path / "py-model" / "model.bin").read_bytes() == (tmp_path / "cli-model" / "model.bin").read_bytes()


def test_arrays_match_the_printed_tables_and_rows_sum_to_one(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the model's definitions (README "Outputs": weight = phi_kw,
    # share = theta_dk); rows of a probability table sum to 1 (common
    # practice), within 1e-12 for sums of 2,000 float64 terms.
    corpus = themata.load_corpus(demo_corpus)
    model = themata.fit(corpus, topics=5, iterations=60, seed=3)
    phi, theta = model.topic_word, model.document_topic
    assert phi.dtype == np.float64 and phi.shape == (5, len(model.vocabulary))
    assert theta.shape == (corpus.n_documents, 5)
    assert np.all(np.abs(phi.sum(axis=1) - 1.0) < 1e-12)
    assert np.all(np.abs(theta.sum(axis=1) - 1.0) < 1e-12)
    model.save(tmp_path / "m")
    result = run("show", "m", "--format", "tsv", "--words", "all", "--precision", "12", cwd=tmp_path)
    if result.returncode != 0:  # older command lines print full precision by default
        result = run("show", "m", "--format", "tsv", "--words", "all", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    lines = result.stdout.strip().splitlines()
    header = lines[0].split("\t")
    topic_col, word_col, weight_col = header.index("topic"), header.index("word"), header.index("weight")
    words = {word: index for index, word in enumerate(model.display_words)}
    checked = 0
    for line in lines[1:]:
        fields = line.split("\t")
        printed = float(fields[weight_col])
        value = phi[int(fields[topic_col]), words[fields[word_col]]]
        # Printed with at least 12 significant digits.
        assert abs(value - printed) <= 1e-11 * max(abs(value), 1e-300) + 1e-300, line
        checked += 1
    assert checked >= 5


def test_folders_round_trip_between_python_and_the_command_line(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: common practice — one file format for both front ends.
    result = run("fit", str(demo_corpus), "--topics", "4", "--iterations", "40", "--out", "from-cli", "-q", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    loaded = themata.load_model(tmp_path / "from-cli")
    assert loaded.n_topics == 4
    assert loaded.summary["topics"] == 4
    loaded.save(tmp_path / "again")
    assert (tmp_path / "again" / "model.bin").read_bytes() == (tmp_path / "from-cli" / "model.bin").read_bytes()
    model = themata.fit(themata.load_corpus(demo_corpus), topics=4, iterations=40, seed=2)
    model.save(tmp_path / "from-python")
    shown = run("show", "from-python", "--format", "json", cwd=tmp_path)
    assert shown.returncode == 0, shown.stderr
    scored = run("score", "from-python", "--format", "json", cwd=tmp_path)
    assert scored.returncode == 0, scored.stderr
    assert "coherence" in json.loads(scored.stdout)


def test_texts_lists_pairs_and_frames_build_the_same_corpus() -> None:
    # Source: common practice — the same documents in different containers
    # are the same corpus.
    texts = [
        "harbour boats quay tide nets harbour",
        "school pupils teacher term school",
        "harbour quay tide boats fish",
        "pupils class term teacher school",
    ]
    options = dict(stopwords="none", min_docs=1, max_doc_share=1.0)
    from_list = themata.build_corpus(texts, **options)
    from_pairs = themata.build_corpus(list(zip(map(str, range(4)), texts)), **options)
    assert from_list.vocabulary == from_pairs.vocabulary
    assert from_list.document_ids == ["0", "1", "2", "3"]
    pd = pytest.importorskip("pandas")
    frame = pd.DataFrame({"key": ["a", "b", "c", "d"], "body": texts, "kind": ["h", "s", "h", "s"]})
    from_frame = themata.build_corpus(frame, text_column="body", id_column="key", label_column="kind", **options)
    assert from_frame.document_ids == ["a", "b", "c", "d"]
    assert from_frame.labels == ["h", "s", "h", "s"]
    from_series = themata.build_corpus(frame.set_index("key")["body"], **options)
    assert from_series.document_ids == ["a", "b", "c", "d"]
    assert from_series.vocabulary == from_list.vocabulary


def test_paths_read_as_the_command_line_reads(tmp_path: Path, demo_corpus: Path) -> None:
    # Source: the project's own contract — one reader for both front ends.
    corpus = themata.build_corpus(paths=[DEMO], label_field="theme", min_docs=3)
    cli_corpus = themata.load_corpus(demo_corpus)
    assert corpus.vocabulary == cli_corpus.vocabulary
    assert corpus.document_ids == cli_corpus.document_ids
    corpus.save(tmp_path / "again.bin")
    assert (tmp_path / "again.bin").read_bytes() == demo_corpus.read_bytes()


def test_bad_input_raises_clear_python_exceptions(tmp_path: Path) -> None:
    # Source: Python's conventions (ValueError for bad values, OSError for
    # the system); messages are the command line's.
    with pytest.raises(ValueError, match="empty"):
        themata.build_corpus([])
    with pytest.raises(ValueError, match="not a string"):
        themata.build_corpus(["fine text here", 42])
    corpus = themata.build_corpus(["harbour boats quay", "quay boats harbour"], stopwords="none", min_docs=1, max_doc_share=1.0)
    with pytest.raises(ValueError, match="topics"):
        themata.fit(corpus, topics=0)
    with pytest.raises(ValueError, match="topics"):
        themata.fit(corpus, topics=-3)
    with pytest.raises(ValueError, match="more than the"):
        themata.fit(corpus, topics=50)
    with pytest.raises(ValueError, match="absent.bin"):
        themata.load_corpus(tmp_path / "absent.bin")
    with pytest.raises(ValueError, match="no model here"):
        themata.load_model(tmp_path)
    with pytest.raises(ValueError, match="stopword"):
        themata.build_corpus(["some text"], stopwords="klingon")
    with pytest.raises(ValueError, match="unknown option"):
        themata.build_corpus(["some text"], stopword="none")
    (tmp_path / "model").mkdir()
    (tmp_path / "model" / "model.bin").write_bytes(b"not a model at all")
    with pytest.raises(ValueError, match="not a themata model file"):
        themata.load_model(tmp_path / "model")


def test_progress_is_reported_and_new_documents_are_placed() -> None:
    corpus = themata.build_corpus(
        ["harbour boats quay tide"] * 5 + ["school pupils teacher term"] * 5,
        stopwords="none",
        min_docs=1,
        max_doc_share=1.0,
    )
    seen = []
    model = themata.fit(corpus, topics=2, iterations=30, seed=1, progress=lambda d, t, ll: seen.append((d, t)))
    assert seen[0] == (1, 30) and seen[-1] == (30, 30)
    placed = model.assign(["harbour quay boats", "zebra giraffe"])
    assert placed[0]["tokens"] == 3 and placed[1]["tokens"] == 0 and placed[1]["unknown_tokens"] == 2
    # Source: METHODS.md section 6 — shares are a posterior mean, inside their interval.
    first = placed[0]
    assert abs(first["shares"].sum() - 1.0) < 1e-12
    assert np.all(first["low"] <= first["shares"]) and np.all(first["shares"] <= first["high"])
    scored = model.perplexity(["harbour quay boats tide", "teacher pupils term"])
    assert scored["heldout_perplexity"] > 1.0
    html = model._repr_html_()
    assert "<table>" in html and "no basis for decisions" in html


def test_a_notebook_script_fits_the_demo_within_a_minute(tmp_path: Path) -> None:
    # The notebook-style check: a plain script, run by the same
    # interpreter, fits the demo corpus and prints its topics. The minute
    # is a limit on the subprocess, not a timing measurement.
    script = tmp_path / "notebook.py"
    script.write_text(
        "import themata\n"
        f"corpus = themata.build_corpus(paths=[{str(DEMO)!r}], label_field='theme', min_docs=3)\n"
        "model = themata.fit(corpus, topics=10, iterations=300, seed=1)\n"
        "for topic, words in zip(model.topic_ids, model.top_words(6)):\n"
        "    print(topic, ', '.join(words))\n"
    )
    result = subprocess.run([sys.executable, str(script)], capture_output=True, text=True, timeout=60)
    assert result.returncode == 0, result.stderr
    assert len(result.stdout.strip().splitlines()) == 10
