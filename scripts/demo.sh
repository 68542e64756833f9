#!/usr/bin/env bash
# Sets up what is missing, builds the one-file page with the embedded demo ledger, and serves it
# on http://127.0.0.1:8787/ for convenience (the file dist/digitdrift.html also works on its own:
# copy it anywhere and double-click it). Ctrl-C stops the server. NO_SERVE=1 only builds.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
bash scripts/build-web.sh
echo
echo "Built $(pwd)/dist/digitdrift.html — open it from the file system, or:"
if [ "${NO_SERVE:-0}" != 1 ]; then
  echo "Serving on http://127.0.0.1:8787/digitdrift.html (loopback only)"
  exec python3 -m http.server 8787 --bind 127.0.0.1 --directory dist
fi
