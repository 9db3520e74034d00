#!/usr/bin/env bash
# Scaling of a fit over MPI ranks on this machine (issue 16): token updates
# per second with 1 and 2 ranks of one worker thread each (medians of 3),
# and the bytes each rank sent per sweep with 2 and 4 ranks against the
# communication model of ARCHITECTURE.md ("Fitting on MPI").
#
#     bash benches/mpi.sh                 # about five minutes on two idle cores
#     TOKENS=1000000 bash benches/mpi.sh  # a quicker run
#
# Needs Open MPI (Debian: libopenmpi-dev openmpi-bin libclang-dev) and
# builds themata with `--features mpi`. Every run uses the same corpus,
# seed and `--shards 4`, so all of them fit the same model; the script
# checks that the model files are byte-identical. The machines are shared:
# the load (`uptime`) is printed before and after, read the figures with it.
set -euo pipefail

TOKENS=${TOKENS:-4000000}
WORDS=${WORDS:-20000}
TOPICS=${TOPICS:-100}
SWEEPS=${SWEEPS:-20}
SAMPLER=${SAMPLER:-exact}
root=$(cd "$(dirname "$0")/.." && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

cd "$root"
cargo build --release --quiet --features mpi --bin themata --example synthetic_corpus
bin="$work/themata"
cp target/release/themata "$bin"
target/release/examples/synthetic_corpus "$TOKENS" "$WORDS" "$TOPICS" "$work/corpus.bin" >/dev/null

fit_args=("$work/corpus.bin" --topics "$TOPICS" --iterations "$SWEEPS" --burn-in 0
    --trace-every 1000 --shards 4 --sampler "$SAMPLER" --threads 1 --quiet)
# A waiting rank yields its core instead of polling: on a shared machine
# polling takes CPU from the ranks that still sample.
mpi=(mpirun --allow-run-as-root --oversubscribe --bind-to none --mca mpi_yield_when_idle 1)

# Each rank under /usr/bin/time: the share of a core it got (user CPU over
# wall clock) shows how much of the machine the ranks had.
timed="$work/timed.sh"
printf '#!/bin/sh\nexec /usr/bin/time -o "$TIMES/rank$OMPI_COMM_WORLD_RANK" -f "%%e %%U" "$@"\n' >"$timed"
chmod +x "$timed"
export TIMES="$work/times"
mkdir -p "$TIMES"
shares() { # the cores' shares each rank got in the last run
    for file in "$TIMES"/rank*; do awk '{ printf "%.0f%% ", 100 * $2 / $1 }' "$file"; done
    rm -f "$TIMES"/rank*
}

field() { # summary.json FIELD PATH...
    python3 - "$@" <<'PY'
import json, sys
value = json.load(open(sys.argv[1]))
for key in sys.argv[2:]:
    value = value[int(key)] if key.isdigit() else value[key]
print(value)
PY
}

echo "load before: $(uptime)"
echo "corpus: $TOKENS tokens, V = $WORDS, K = $TOPICS, sampler $SAMPLER, 4 shards, $SWEEPS sweeps, 1 thread per rank"
declare -A rates
for ranks in 1 2; do
    runs=()
    for repeat in 1 2 3; do
        out="$work/r$ranks-$repeat"
        "${mpi[@]}" -np "$ranks" "$timed" "$bin" fit "${fit_args[@]}" --out "$out"
        echo "  ranks $ranks, run $repeat: share of a core each rank got: $(shares)"
        runs+=("$(field "$out/summary.json" tokens_per_second)")
        [ "$ranks" -gt 1 ] && echo "  run $repeat: seconds in epoch-end exchanges by rank (waits included): $(field "$out/summary.json" ranks exchange_seconds) of $(field "$out/summary.json" sampling_seconds)"
        cmp -s "$work/r1-1/model.bin" "$out/model.bin" || { echo "model of $ranks ranks differs"; exit 1; }
    done
    median=$(printf '%s\n' "${runs[@]}" | sort -g | sed -n 2p)
    rates[$ranks]=$median
    printf 'ranks %d: token updates per second %s (runs: %s)\n' "$ranks" "$median" "${runs[*]}"
done
python3 -c "print(f'2 ranks / 1 rank: {${rates[2]} / ${rates[1]}:.2f}x')"

for ranks in 2 4; do
    out="$work/bytes$ranks"
    "${mpi[@]}" -np "$ranks" "$bin" fit "${fit_args[@]}" --out "$out"
    cmp -s "$work/r1-1/model.bin" "$out/model.bin" || { echo "model of $ranks ranks differs"; exit 1; }
    python3 - "$out/summary.json" "$ranks" <<'PY'
import json, sys
summary = json.load(open(sys.argv[1]))
ranks = summary["ranks"]
k, p, r = summary["topics"], summary["shards"], int(sys.argv[2])
totals = 8 * k * p * (r - 1)
print(f"ranks {r}: ring bytes per sweep and rank {ranks['ring_bytes_per_sweep']} "
      f"(model: {ranks['predicted_ring_bytes_per_sweep']}); all bytes per sweep {ranks['bytes_sent_per_sweep']} "
      f"(model without gathers: ring + 8 K P (R-1) = {ranks['predicted_ring_bytes_per_sweep'] + totals})")
PY
done
echo "load after: $(uptime)"
