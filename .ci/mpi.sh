#!/usr/bin/env bash
# CI step for fitting on MPI (issue 16): installs Open MPI from Debian,
# lints the `mpi` feature, builds with it and runs the MPI tests
# (tests/suite/mpi.rs) under `mpirun --allow-run-as-root --oversubscribe`
# with 2 and 4 ranks: byte identity with one process, learned priors,
# a killed rank stopping the job, the exact resume, `run` on ranks.
# Runtime: about 4 minutes on the 2-core CI machine (most of it compiling
# the crate with the feature; the tests themselves take about a minute).
set -euo pipefail
cd "$(dirname "$0")/.."

as_root() {
    if [ "$(id -u)" -eq 0 ]; then "$@"; else sudo "$@"; fi
}

echo "== Open MPI (Debian's packages) for the mpi feature"
if ! command -v mpirun >/dev/null 2>&1 || ! command -v mpicc >/dev/null 2>&1 \
    || ! ls /usr/lib/llvm-*/lib/libclang*.so* >/dev/null 2>&1; then
    as_root apt-get update -qq
    as_root env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq libopenmpi-dev openmpi-bin libclang-dev >/dev/null
fi
mpirun --version | head -n 1

echo "== cargo clippy --features mpi --all-targets -- -D warnings"
cargo clippy --release --features mpi --all-targets -- -D warnings

echo "== cargo test --release --features mpi --test suite mpi (2 and 4 ranks)"
cargo test --release --features mpi --test suite mpi -- --test-threads 1
