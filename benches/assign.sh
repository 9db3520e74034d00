#!/usr/bin/env bash
# How fast `themata assign` places documents, and whether its memory stays
# flat as the input grows. Issue 15, item 4: at least 10,000 documents per
# second at K = 100 on two threads, with intervals.
#
#     bash benches/assign.sh            # about two minutes on two idle cores
#     DOCS=20000 bash benches/assign.sh # a quicker run
#
# What it does, in a scratch folder:
# 1. draws 4M tokens of synthetic documents (30 tokens on average, V = 20,000,
#    K = 100; examples/synthetic_documents.rs) in two flavours: "focused"
#    (alpha sum 1: a document draws on a few topics, as short real texts
#    do) and "diffuse" (alpha sum 10, the bench corpora's prior: shares
#    spread thin, so many topics pass --min-share);
# 2. builds and fits a K = 100 model on the first third of each;
# 3. places DOCS of the remaining documents (100,000 by default) with the
#    default listing (topics with a share of at least 0.01, intervals for
#    those), on two threads, and a fifth as many with --all-topics (an
#    interval for every topic, as assign did before), the baseline;
# 4. prints documents per second (wall clock) and peak resident memory,
#    and places a fifth of DOCS again to show that memory does not grow
#    with the number of documents.
#
# The machines are shared: read the figures with `uptime` beside them, and
# compare rows of one run rather than runs.
set -euo pipefail

DOCS=${DOCS:-100000}
THREADS=${THREADS:-2}
root=$(cd "$(dirname "$0")/.." && pwd)
cargo build --release --quiet --manifest-path "$root/Cargo.toml" --bin themata --example synthetic_documents
themata="$root/target/release/themata"
generate="$root/target/release/examples/synthetic_documents"
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT

# Runs `themata assign` on $2 documents of $1, prints "docs/s peak-MB rows/doc".
measure() {
    local flavour=$1 count=$2
    shift 2
    awk -v n="$count" 'NR <= n' "$scratch/$flavour-new.jsonl" >"$scratch/input.jsonl"
    local start end
    start=$(date +%s.%N)
    /usr/bin/time -f "%M" -o "$scratch/rss" \
        "$themata" assign "$scratch/$flavour-model" "$scratch/input.jsonl" \
        --threads "$THREADS" --quiet "$@" >"$scratch/out.tsv"
    end=$(date +%s.%N)
    local rows
    rows=$(($(wc -l <"$scratch/out.tsv") - 1))
    awk -v n="$count" -v s="$start" -v e="$end" -v kb="$(cat "$scratch/rss")" -v rows="$rows" \
        'BEGIN { printf "%10.0f  %7.1f  %8.1f", n / (e - s), kb / 1024, rows / n }'
}

echo "load: $(uptime)"
printf '%-8s %-28s %8s  %10s  %7s  %8s\n' "corpus" "listing" "docs" "docs/s" "peak MB" "rows/doc"
for flavour in focused diffuse; do
    alpha_sum=1
    [ "$flavour" = diffuse ] && alpha_sum=10
    "$generate" 4000000 20000 100 30 "$alpha_sum" >"$scratch/all.jsonl"
    total=$(wc -l <"$scratch/all.jsonl")
    train=$((total / 3))
    awk -v train="$train" -v docs="$DOCS" -v out="$scratch/$flavour" '
        NR <= train { print > (out "-train.jsonl"); next }
        NR <= train + docs { print > (out "-new.jsonl") }' "$scratch/all.jsonl"
    "$themata" build "$scratch/$flavour-train.jsonl" --out "$scratch/$flavour.bin" --quiet \
        --min-length 1 --stopwords none --min-docs 1 --max-doc-share 1
    "$themata" fit "$scratch/$flavour.bin" --topics 100 --iterations 300 --out "$scratch/$flavour-model" --quiet
    small=$((DOCS / 5))
    printf '%-8s %-28s %8d  %s\n' "$flavour" "default (--min-share 0.01)" "$DOCS" "$(measure "$flavour" "$DOCS")"
    printf '%-8s %-28s %8d  %s\n' "$flavour" "default (--min-share 0.01)" "$small" "$(measure "$flavour" "$small")"
    printf '%-8s %-28s %8d  %s\n' "$flavour" "--all-topics (baseline)" "$small" \
        "$(measure "$flavour" "$small" --all-topics)"
done
