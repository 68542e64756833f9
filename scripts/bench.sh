#!/usr/bin/env bash
# Benchmarks side by side in one run (figures are never asserted in tests):
#  - criterion benches of the core (intake MB/s, battery, calibration sims/s, replay);
#  - the full screen of generated ledgers natively (CLI, max RSS) and in headless Chromium
#    (the one-file page, chunked File.slice intake in its Worker), with the browser/native ratio;
#  - DuckDB (both threads) running only the first-two-digit group-by on the same file, for reference.
# Usage: bash scripts/bench.sh [ROWS...]    (default: 100000 2000000)
#        bash scripts/bench.sh --gigabyte   (a ~1 GB ledger, 22,000,000 rows, screened in a tab;
#                                           needs ~2.5 GB of disk in build/bench; not in CI)
# Honours CARGO_TARGET_DIR. SKIP_CRITERION=1 skips the criterion benches.
set -euo pipefail
cd "$(dirname "$0")/.."
T="${CARGO_TARGET_DIR:-target}"
if [ "${1:-}" = "--gigabyte" ]; then ROWS=(100000 22000000); SKIP_CRITERION=1
elif [ $# -gt 0 ]; then ROWS=("$@")
else ROWS=(100000 2000000); fi
bash scripts/setup.sh
cargo build --release -p digitdrift
bash scripts/build-web.sh >/dev/null
mkdir -p build/bench
# criterion: keep bench names and their time/thrpt lines, drop progress and change-vs-last-run lines
if [ "${SKIP_CRITERION:-0}" != 1 ]; then
  cargo bench -p digitdrift-core 2>&1 | grep -vE '^(Benchmarking|Compiling|Finished|Running|Warning|Found|Gnuplot|WARNING)|^ *(change:|Performance|No change|Change within)|%|^ +[0-9]+ \(|^ *(low|high) (mild|severe)|^$' || true
fi
echo
echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | xargs), load average $(cut -d' ' -f1-3 /proc/loadavg)"
printf '%-9s %7s %9s %9s %8s %8s %9s %9s %10s %8s %9s %10s\n' rows MB native_s browser_s br/nat duckdb_s nat/duck nat_rssMB tab_peakMB jsheapMB wasm_MiB analysed
prev=""
for n in "${ROWS[@]}"; do
  f=build/bench/ledger-$n.csv
  # generate to a temporary name: an interrupted run must not leave a partial ledger to reuse
  [ -f "$f" ] || { python3 bench/gen_ledger.py "$n" "$f.part" && mv "$f.part" "$f"; }
  mb=$(python3 -c "import os;print(round(os.path.getsize('$f')/1e6,1))")
  # timed with the JSON report written to /dev/null (DuckDB's figure is its query, with no output
  # written either); then once more to a file, untimed, for the analysed row count
  /usr/bin/time -f '%e %M' -o build/bench/time.txt "$T/release/digitdrift" screen "$f" --format json > /dev/null
  read -r nat rss < build/bench/time.txt
  "$T/release/digitdrift" screen "$f" --format json > build/bench/screen.json
  analysed=$(python3 -c "import json;print(json.load(open('build/bench/screen.json'))['rows']['analysed'])")
  bj=$(node bench/browser.mjs "$f")
  read -r br peak heap wasm < <(python3 -c "import json,sys;j=json.loads(sys.argv[1]);print(round(j['browser_seconds'],2), round(j['renderer_peak_rss_mb']), round(j['page_js_heap_mb'],1), round(j['worker_wasm_memory_mb'],1))" "$bj")
  duck=$(python3 - "$f" <<'PY'
import sys, time, duckdb
f = sys.argv[1]
sql = open('tests/reference/sql/first_two_counts.sql').read().replace('{LEDGER}', f)
t = time.perf_counter(); duckdb.connect().execute(sql).fetchall(); print(round(time.perf_counter() - t, 2))
PY
)
  printf '%-9s %7s %9s %9s %8s %8s %9s %9s %10s %8s %9s %10s\n' "$n" "$mb" "$nat" "$br" \
    "$(python3 -c "print(round($br/$nat,2))")" "$duck" "$(python3 -c "print(round($nat/$duck,2))")" \
    "$((rss/1024))" "$peak" "$heap" "$wasm" "$analysed"
  if [ -n "$prev" ]; then
    read -r pa prss ppeak pwasm <<< "$prev"
    python3 -c "
da=$analysed-$pa
print(f'  marginal memory per analysed row from {$pa:,} to {$analysed:,} rows: native {($rss-$prss)*1024/da:.1f} bytes, tab {($peak-$ppeak)*1048576/da:.1f} bytes, Worker wasm memory {($wasm-$pwasm)*1048576/da:.1f} bytes (max RSS, renderer peak, linear memory after the screen; includes names and per-supplier state)')"
  fi
  prev="$analysed $rss $peak $wasm"
done
