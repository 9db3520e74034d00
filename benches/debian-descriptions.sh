#!/usr/bin/env bash
# Prepares the real-text corpus of `themata bench --real-corpus`: the English
# descriptions of the Debian archive's packages, one document per package
# (id = the package name, text = the short description and the long one),
# as the Debian project publishes them in its package indexes
# (dists/<release>/main/i18n/Translation-en). Written by the packages'
# maintainers, not by anyone here; tens of words each, tens of thousands of
# documents.
#
# Usage: benches/debian-descriptions.sh [OUTPUT_FOLDER]   (default target/debian)
#
# Writes OUTPUT_FOLDER/descriptions.jsonl and, when a themata binary is at
# target/release/themata (or $THEMATA), the corpus file
# OUTPUT_FOLDER/descriptions.bin with themata's default tokenizer and
# vocabulary settings. Needs a Debian or Debian-based machine with apt and
# network access to its configured mirrors; it runs `apt-get update` with
# English descriptions enabled into a folder of its own, so the machine's own
# package lists are left alone. The descriptions are those the mirror serves
# on the day (a stable release changes them only at point releases); the
# script prints the index files' dates and the corpus's size and checksum.
set -euo pipefail

out=${1:-target/debian}
mkdir -p "$out"
out=$(cd "$out" && pwd)
state="$out/apt-state"
mkdir -p "$state/lists/partial" "$state/cache/archives/partial"

if ! command -v apt-get >/dev/null 2>&1; then
    echo "apt-get not found: this script needs a Debian or Debian-based machine" >&2
    exit 1
fi

echo "== apt-get update with English descriptions, into $state"
if ! apt-get update -qq \
    -o Acquire::Languages=en \
    -o Dir::State::Lists="$state/lists" \
    -o Dir::Cache="$state/cache" \
    -o Debug::NoLocking=1; then
    echo "apt-get update failed: no network, or no mirror configured in /etc/apt/sources.list*" >&2
    exit 1
fi

shopt -s nullglob
translations=("$state"/lists/*_main_i18n_Translation-en*)
if [ ${#translations[@]} -eq 0 ]; then
    echo "the mirrors served no Translation-en index for main; nothing to build from" >&2
    exit 1
fi
for release in "$state"/lists/*_InRelease "$state"/lists/*_Release; do
    echo "  $(basename "$release"): $(grep -m1 '^Date:' "$release" || echo 'no date')"
done

# One JSON object per package: the first description met for each name,
# index files in the order of their names.
echo "== extracting descriptions"
for index in "${translations[@]}"; do
    /usr/lib/apt/apt-helper cat-file "$index"
    echo
done | awk '
# Backslashes and quotes escaped for JSON by splitting and joining, which
# behaves the same in every awk (gsub replacement strings do not).
function join_escaped(value, separator, replacement,    parts, n, i, joined) {
    n = split(value, parts, separator)
    joined = parts[1]
    for (i = 2; i <= n; i++) joined = joined replacement parts[i]
    return joined
}
function escape(value) {
    return join_escaped(join_escaped(value, "\\", "\\\\"), "\"", "\\\"")
}
function flush() {
    if (name != "" && text != "" && !(name in seen)) {
        seen[name] = 1
        gsub(/[\001-\037]/, " ", text)
        printf "{\"id\":\"%s\",\"text\":\"%s\"}\n", escape(name), escape(text)
    }
    name = ""
    text = ""
}
/^Package: / { flush(); name = substr($0, 10); next }
/^Description-en: / { text = substr($0, 17) "."; next }
/^ \.$/ { next }
/^ / { if (text != "") text = text " " substr($0, 2); next }
/^$/ { flush(); next }
END { flush() }
' > "$out/descriptions.jsonl"

documents=$(wc -l < "$out/descriptions.jsonl")
echo "  $documents documents, $(wc -w < "$out/descriptions.jsonl") words (with JSON keys)"
echo "  sha256 $(sha256sum "$out/descriptions.jsonl" | cut -d' ' -f1)"

themata=${THEMATA:-target/release/themata}
if [ -x "$themata" ]; then
    echo "== $themata build"
    "$themata" build "$out/descriptions.jsonl" --out "$out/descriptions.bin"
    echo "corpus file: $out/descriptions.bin"
else
    echo "no themata binary at $themata (cargo build --release); build the corpus with:"
    echo "  themata build $out/descriptions.jsonl --out $out/descriptions.bin"
fi
