#!/usr/bin/env bash
# Runs every test: Rust unit/integration tests, the outside checks against scipy/numpy/duckdb,
# the wasm build, and the real-browser tests in headless Debian Chromium.
set -euo pipefail
cd "$(dirname "$0")/.."
export CARGO_TERM_COLOR=never
bash scripts/setup.sh
step() { printf '\n===== %s =====\n' "$*"; }

step "cargo test (core, CLI, demo generator; the binding layer's own tests natively)"
cargo test --workspace --exclude digitdrift-wasm
cargo test -p digitdrift-wasm --lib

step "release CLI for the outside checks"
cargo build --release -p digitdrift -p digitdrift-demo-gen --bins
cargo build --release -p digitdrift-core --examples
# Binaries live in CARGO_TARGET_DIR when it is set (an engineer's own target dir).
T="$(realpath -m "${CARGO_TARGET_DIR:-target}")"
export DIGITDRIFT_BIN="$T/release/digitdrift"
export DIGITDRIFT_RELEASE_DIR="$T/release"

step "demo ledger is exactly what its generator makes"
"$T/release/demo-gen" --check demo-files/heathervale-vet-ledger.csv

step "outside checks (pytest: scipy, numpy, duckdb)"
python3 -m pytest -q tests/reference

step "wasm build and the one-file page"
bash scripts/build-web.sh

step "real-browser tests (headless Debian Chromium via playwright-core)"
(cd tests/e2e && node --test --test-concurrency=1 --test-reporter=spec ./*.test.mjs)
echo
echo "all test stages passed"
