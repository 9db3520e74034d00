#!/usr/bin/env bash
# CI step for the Python package (python/): lints its Rust side, builds and
# installs it in a fresh virtual environment, runs its tests against the
# command line built from the same checkout.
#
# Runtime: about 6 minutes measured on two busy shared cores (pip installing
# numpy, pandas and maturin; clippy of the binding crate, about 2 minutes;
# the extension's release build, which reuses the engine already built in
# target/; pytest itself about 12 seconds). Called by one line of .ci/run.
set -euo pipefail
cd "$(dirname "$0")/.."

as_root() {
    if [ "$(id -u)" -eq 0 ]; then "$@"; else sudo "$@"; fi
}

VENV=target/ci-python-venv

echo "== python: a fresh virtual environment"
if ! python3 -m venv --help >/dev/null 2>&1 || ! python3 -c "import ensurepip" >/dev/null 2>&1; then
    as_root apt-get update -qq
    as_root env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq python3-venv >/dev/null
fi
rm -rf "$VENV"
python3 -m venv "$VENV"
"$VENV/bin/python" -m pip install --quiet --upgrade pip
"$VENV/bin/python" -m pip install --quiet maturin numpy pandas pytest

# pyo3's build script finds the interpreter through PYO3_PYTHON.
export PYO3_PYTHON="$PWD/$VENV/bin/python"

echo "== python: clippy of the binding crate (not a default member)"
cargo clippy -p themata-python --all-targets -- -D warnings

echo "== python: the command line the tests compare against"
cargo build --release --quiet
export THEMATA_BIN="$PWD/target/release/themata"

echo "== python: pip install ./python (maturin builds the extension)"
"$VENV/bin/python" -m pip install --quiet ./python

echo "== python: pytest python/tests"
# pytest exits with 5 when it collected no test; that fails this step too.
"$VENV/bin/python" -m pytest python/tests -q
