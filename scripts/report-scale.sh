#!/usr/bin/env bash
# The HTML report at benchmark size: 100,000 documents (10M tokens, 50,000
# words, about 100 tokens each) with labels and dates, K = 200.
#
#     scripts/report-scale.sh [WORK_FOLDER]    (default target/report-scale)
#
# Writes the synthetic corpus (examples/synthetic_corpus.rs), gives its
# documents labels and dates (examples/dated_corpus.rs), fits 40 sweeps with
# three samples (a few minutes; the report's cost does not depend on how well
# the model fits, only on its shape), then writes the report three times and
# prints the wall and CPU seconds of each run and the page's size. Corpus and
# model are kept in the work folder and reused by later runs.
set -euo pipefail
cd "$(dirname "$0")/.."
work=${1:-target/report-scale}
mkdir -p "$work"
cargo build --release --quiet --bin themata --example synthetic_corpus --example dated_corpus
if [ ! -f "$work/dated.bin" ]; then
    ./target/release/examples/synthetic_corpus 10000000 50000 200 "$work/plain.bin"
    ./target/release/examples/dated_corpus "$work/plain.bin" "$work/dated.bin"
fi
if [ ! -f "$work/model/model.bin" ]; then
    ./target/release/themata fit "$work/dated.bin" --topics 200 --iterations 40 --burn-in 20 \
        --samples 3 --lag 5 --trace-every 5 --learn-every 5 --out "$work/model" --quiet
fi
echo "machine: $(nproc) cores, load average $(cut -d' ' -f1-3 /proc/loadavg)"
for run in 1 2 3; do
    /usr/bin/time -f "report run $run: %e s wall, %U s user + %S s system CPU, %M KB peak memory" \
        ./target/release/themata report "$work/model" --out "$work/report.html"
done
echo "report size: $(stat -c %s "$work/report.html") bytes"
