#!/usr/bin/env bash
# Builds dist/digitdrift.html: the wasm module (release), its no-modules glue, and the one-file page.
set -euo pipefail
cd "$(dirname "$0")/.."
DEMO=${DEMO:-demo-files/heathervale-vet-ledger.csv}
cargo build -p digitdrift-wasm --target wasm32-unknown-unknown --release
mkdir -p build/wasm
wasm-bindgen --target no-modules --no-typescript --out-dir build/wasm --out-name digitdrift \
  "${CARGO_TARGET_DIR:-target}/wasm32-unknown-unknown/release/digitdrift_wasm.wasm"
[ -f "$DEMO" ] || { echo "demo ledger $DEMO missing" >&2; exit 1; }
node web/build.mjs --wasm-dir build/wasm --demo "$DEMO" --out dist/digitdrift.html
