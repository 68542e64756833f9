#!/usr/bin/env bash
# Benchmarks side by side in one run (figures are never asserted in tests):
#  - criterion benches of the core (intake MB/s, battery, calibration sims/s, replay);
#  - the full screen of generated ledgers natively (CLI, max RSS) and in headless Chromium
#    (the one-file page), with the wasm/native ratio;
#  - DuckDB running only the first-two-digit group-by on the same file, for reference.
# Usage: bash scripts/bench.sh [ROWS...]   (default: 100000 2000000)
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
ROWS=("${@:-100000 2000000}")
[ $# -gt 0 ] && ROWS=("$@") || ROWS=(100000 2000000)
cargo build --release -p digitdrift
bash scripts/build-web.sh >/dev/null
mkdir -p build/bench
if [ "${SKIP_CRITERION:-0}" != 1 ]; then cargo bench -p digitdrift-core 2>&1 | grep -E "^[a-z].*time:|thrpt:" || true; fi
printf '\n%-10s %8s %10s %10s %10s %10s %10s\n' rows MB native_s browser_s ratio duckdb_s rss_MB
for n in "${ROWS[@]}"; do
  f=build/bench/ledger-$n.csv
  [ -f "$f" ] || python3 bench/gen_ledger.py "$n" "$f"
  mb=$(python3 -c "import os;print(round(os.path.getsize('$f')/1e6,1))")
  /usr/bin/time -f '%e %M' -o build/bench/time.txt ./target/release/digitdrift screen "$f" --format json >/dev/null
  read -r nat rss < build/bench/time.txt
  br=$(node bench/browser.mjs "$f" | python3 -c "import json,sys;print(round(json.loads(sys.stdin.readline())['browser_seconds'],2))")
  duck=$(python3 - "$f" <<'PY'
import sys, time, duckdb
f = sys.argv[1]
sql = open('tests/reference/sql/first_two_counts.sql').read().replace('{LEDGER}', f).replace('"Supplier"', '"Supplier"')
t = time.perf_counter(); duckdb.connect().execute(sql).fetchall(); print(round(time.perf_counter() - t, 2))
PY
)
  ratio=$(python3 -c "print(round($br/$nat,2))")
  printf '%-10s %8s %10s %10s %10s %10s %10s\n' "$n" "$mb" "$nat" "$br" "$ratio" "$duck" "$((rss/1024))"
done
