#!/usr/bin/env bash
# Installs everything digitdrift needs on a fresh Debian machine of this kind.
# Safe to run again: each step checks first and skips what is already there.
set -euo pipefail
cd "$(dirname "$0")/.."

log() { printf '[setup] %s\n' "$*"; }

# 1. The wasm target for the Rust toolchain.
if ! rustup target list --installed | grep -q '^wasm32-unknown-unknown$'; then
  log "adding rust target wasm32-unknown-unknown"
  rustup target add wasm32-unknown-unknown
fi

# 2. wasm-bindgen-cli at exactly the version of the wasm-bindgen crate in Cargo.lock.
WB_VERSION=$(awk '/^name = "wasm-bindgen"$/{getline; gsub(/version = |"/,""); print; exit}' Cargo.lock)
if [ -z "$WB_VERSION" ]; then echo "cannot read wasm-bindgen version from Cargo.lock" >&2; exit 1; fi
if ! command -v wasm-bindgen >/dev/null || [ "$(wasm-bindgen --version | awk '{print $2}')" != "$WB_VERSION" ]; then
  log "installing wasm-bindgen-cli $WB_VERSION (takes a few minutes)"
  # No --locked: a locked dependency version is missing on the registry mirror here.
  cargo install wasm-bindgen-cli --version "$WB_VERSION"
fi

# 3. Debian Chromium (for the real-browser tests and screenshots) and binaryen (wasm-opt).
if ! command -v chromium >/dev/null || ! command -v wasm-opt >/dev/null; then
  log "installing chromium, chromium-driver, binaryen from Debian"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq chromium chromium-driver binaryen >/dev/null
fi

# 4. npm test packages (playwright-core drives /usr/bin/chromium; it downloads no browser).
if [ ! -d tests/e2e/node_modules/playwright-core ]; then
  log "installing npm test packages"
  (cd tests/e2e && npm install --no-audit --no-fund --silent)
fi

# 5. Python reference libraries for the outside checks (scipy, numpy, duckdb).
if ! python3 -c 'import scipy, numpy, duckdb' 2>/dev/null; then
  log "installing python reference libraries"
  python3 -m pip install --quiet -r tests/reference/requirements.txt
fi
log "done"
