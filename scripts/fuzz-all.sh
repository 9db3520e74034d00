#!/usr/bin/env bash
# Runs every fuzz target of fuzz/ in turn, each for SECONDS (default 600),
# one at a time, with libFuzzer's fork mode so that the run goes on past a
# crash, a hang or an out-of-memory and records them all (in
# fuzz/artifacts/TARGET/). Logs: target/fuzz-logs/TARGET.log.
#
#     scripts/fuzz-all.sh [SECONDS] [TARGET...]
#
# Needs cargo-fuzz (`cargo install cargo-fuzz`); on the stable toolchain the
# nightly-only flags libFuzzer needs are unlocked with RUSTC_BOOTSTRAP=1 (see
# DEVELOPERS.md, "Fuzzing"). Seeds: fuzz/seeds/TARGET; the growing corpus:
# fuzz/corpus/TARGET (not committed).
set -euo pipefail
cd "$(dirname "$0")/.."
seconds=${1:-600}
shift || true
targets=("$@")
if [ ${#targets[@]} -eq 0 ]; then
    targets=(model_file corpus_file json_lines csv_table text_file tokenizer run_config names_file)
fi
mkdir -p target/fuzz-logs
cd fuzz
# Build once (release, debug assertions on so that integer overflow is a
# crash, no sanitizer: the code under test has no unsafe), then run copies
# of the binaries, so that editing the sources while a campaign runs does
# not change what it fuzzes.
RUSTC_BOOTSTRAP=1 cargo fuzz build -s none -a
mkdir -p target/campaign
for target in "${targets[@]}"; do
    cp "target/x86_64-unknown-linux-gnu/release/$target" "target/campaign/$target"
done
for target in "${targets[@]}"; do
    mkdir -p "corpus/$target" "artifacts/$target"
    echo "== $target for ${seconds}s ($(date -u +%H:%M:%S))"
    "target/campaign/$target" -artifact_prefix="artifacts/$target/" "corpus/$target" "seeds/$target" \
        -max_total_time="$seconds" -rss_limit_mb=2048 -timeout=10 \
        -fork=1 -ignore_crashes=1 -ignore_ooms=1 -ignore_timeouts=1 \
        >"../target/fuzz-logs/$target.log" 2>&1 || echo "   (exit $?)"
    grep -E "^#[0-9]+: cov" "../target/fuzz-logs/$target.log" | tail -1 || true
    ls "artifacts/$target" 2>/dev/null | sed 's/^/   artifact: /' || true
done
