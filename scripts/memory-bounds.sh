#!/usr/bin/env bash
# Peak resident memory of `themata build` on three inputs that a reader
# that does not stream would choke on; run by hand (minutes, and the third
# case writes a 2 GB file), never in CI. Figures go to the README
# ("Bounded memory").
#
#     scripts/memory-bounds.sh [WORK_DIR]     (default: target/memory-bounds)
#
# 1. a 200 MB single JSON line between two short ones, piped on stdin
#    (over the default document limit of 32 MiB: skipped);
# 2. a million tiny documents (four words each), piped on stdin;
# 3. a 2 GB JSON Lines file of ordinary documents (100 words each over a
#    2,000-word vocabulary), read from disk.
# Peak memory is /usr/bin/time -v's "Maximum resident set size".
set -euo pipefail
cd "$(dirname "$0")/.."
work=${1:-target/memory-bounds}
mkdir -p "$work"
cargo build --release --quiet
bin=$PWD/target/release/themata
keep=(--min-docs 1 --max-doc-share 1 --stopwords none)

peak() { # label, then the command's time output file
    local kb
    kb=$(grep "Maximum resident set size" "$2" | awk '{print $NF}')
    printf '%-40s peak RSS %6d MB  (%s s wall)\n' "$1" $((kb / 1024)) \
        "$(grep 'Elapsed (wall clock)' "$2" | awk '{print $NF}')"
}

python3 -c '
import sys
out = sys.stdout.buffer
out.write(b"{\"id\":\"before\",\"text\":\"tide quay harbour\"}\n{\"id\":\"huge\",\"text\":\"")
chunk = b"harbour " * (128 * 1024)
for _ in range((200 << 20) // len(chunk)):
    out.write(chunk)
out.write(b"\"}\n{\"id\":\"after\",\"text\":\"soil seed furrow\"}\n")
' | /usr/bin/time -v "$bin" build - --out "$work/c1.bin" "${keep[@]}" 2>"$work/t1.txt" >"$work/o1.txt"
peak "200 MB single line (stdin)" "$work/t1.txt"
grep -m1 "longer than" "$work/t1.txt" || true

python3 -c '
import sys
out = sys.stdout.buffer
words = [("w%04dq" % i).encode() for i in range(5000)]
for d in range(1_000_000):
    out.write(b"{\"id\":\"d%d\",\"text\":\"%s %s %s %s\"}\n" % (d, words[d % 5000], words[(d * 7) % 5000], words[(d * 13) % 5000], words[(d * 31) % 5000]))
' | /usr/bin/time -v "$bin" build - --out "$work/c2.bin" "${keep[@]}" 2>"$work/t2.txt" >"$work/o2.txt"
peak "a million tiny documents (stdin)" "$work/t2.txt"

if [ ! -s "$work/big.jsonl" ]; then
    python3 -c '
import random, sys
random.seed(7)
out = sys.stdout.buffer
words = [("w%04dq" % i) for i in range(2000)]
lines = []
for d in range(20000):
    lines.append(("{\"id\":\"%%d\",\"text\":\"%s\"}\n" % " ".join(random.choices(words, k=100))))
written, d = 0, 0
while written < 2 * 1024**3:
    line = (lines[d % len(lines)] % d).encode()
    out.write(line)
    written += len(line)
    d += 1
' >"$work/big.jsonl"
fi
ls -l "$work/big.jsonl" | awk '{printf "2 GB file: %d bytes\n", $5}'
/usr/bin/time -v "$bin" build "$work/big.jsonl" --out "$work/c3.bin" "${keep[@]}" 2>"$work/t3.txt" >"$work/o3.txt"
peak "2 GB JSON Lines file" "$work/t3.txt"
cat "$work/o3.txt"
