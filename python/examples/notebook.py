"""A notebook session as a script: fit the bundled demo corpus with the
options of configs/demo.toml and look at the topics.

Run from the repository root after `pip install ./python`:

    python python/examples/notebook.py
"""

import time
from pathlib import Path

import themata

started = time.perf_counter()
demo = Path(__file__).resolve().parents[2] / "corpora-demo" / "bulletin.jsonl"

# The [input], [tokenizer] and [vocabulary] sections of configs/demo.toml.
corpus = themata.build_corpus(
    paths=[demo],
    format="jsonl",
    text_field="text",
    id_field="id",
    label_field="theme",
    stopwords="english",
    min_length=3,
    min_docs=3,
    max_doc_share=0.5,
)
print(corpus)

# Its [fit] section.
model = themata.fit(
    corpus,
    topics=10,
    iterations=1000,
    burn_in=200,
    alpha="learn",
    beta="learn",
    samples=5,
    lag=10,
    seed=20261202,
    progress=False,
)
print(model)

for topic, share, words in zip(model.topic_ids, model.topic_shares, model.top_words(8)):
    print(f"topic {topic} ({share:.1%}): {', '.join(words)}")

# Arrays for numpy, frames for pandas (when installed).
theta = model.document_topic  # documents x topics
print("document-topic array:", theta.shape, "largest topic of the first document:", theta[0].argmax())
try:
    frame = model.documents_frame()  # one row per document and topic
    mean_shares = frame.groupby(["label", "topic"])["share"].mean().unstack()
    print("the topic each theme label leans on most:")
    print(mean_shares.idxmax(axis=1).to_string())
except ImportError:
    print("(install pandas for data frames)")

print(f"done in {time.perf_counter() - started:.1f} s")
