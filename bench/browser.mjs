// Browser benchmark: opens dist/digitdrift.html in headless Chromium, drops each given ledger
// (the page's Worker reads it in 1 MiB chunks from its byte stream), and prints the Worker's wall
// time for intake + full screen (digit tests and calibration), the page's JS heap, and the peak
// resident memory of the tab's renderer process (VmHWM; it holds the Worker, its wasm linear
// memory and the JS heaps), found among this process's own descendants only, and the size of the
// screening Worker's wasm linear memory after the screen (its peak: linear memory never shrinks).
// Usage: node bench/browser.mjs FILE...
//
// Intake-only mode: node bench/browser.mjs --intake-only [--runs N] FILE...
// For each file, times intake alone natively (examples/intake_speed: the file in memory, fed in
// 1 MiB chunks) and in Chromium (a Worker started from the page's own glue, worker and wasm
// blocks, reading the File in 1 MiB chunks into the core's intake: no fingerprint, digit tests
// or calibration), best of N runs each (default 3), and prints MB/s side by side with the
// Chromium/native ratio; in Chromium both as the page reads (its byte stream, the next chunk
// read ahead) and with File.slice reads in turn. Build first: bash scripts/build-web.sh &&
// cargo build --release -p digitdrift-core --example intake_speed
import { launch, openPage } from '../tests/e2e/browser.mjs';
import { statSync, readFileSync, readdirSync } from 'node:fs';
import { execFileSync } from 'node:child_process';

function descendants(root) {
  const kids = new Map();
  for (const d of readdirSync('/proc')) {
    if (!/^\d+$/.test(d)) continue;
    try {
      const st = readFileSync(`/proc/${d}/stat`, 'utf8');
      const ppid = Number(st.slice(st.lastIndexOf(')') + 2).split(' ')[1]);
      if (!kids.has(ppid)) kids.set(ppid, []);
      kids.get(ppid).push(Number(d));
    } catch { /* gone */ }
  }
  const out = [];
  const todo = [root];
  while (todo.length) for (const k of kids.get(todo.pop()) || []) { out.push(k); todo.push(k); }
  return out;
}

function rendererPeakMb() {
  let best = 0;
  for (const pid of descendants(process.pid)) {
    try {
      if (!readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('--type=renderer')) continue;
      const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
      if (m) best = Math.max(best, Number(m[1]) / 1024);
    } catch { /* gone */ }
  }
  return best;
}

async function intakeOnly(files, runs) {
  const nativeBin = process.env.INTAKE_SPEED_BIN || `${process.env.CARGO_TARGET_DIR || 'target'}/release/examples/intake_speed`;
  const browser = await launch();
  const { page, context } = await openPage(browser);
  await page.evaluate(() => {
    const input = document.createElement('input');
    input.type = 'file';
    input.id = 'bench-intake-file';
    input.hidden = true;
    document.body.append(input);
  });
  for (const file of files) {
    const native = JSON.parse(execFileSync(nativeBin, [file, String(runs)], { encoding: 'utf8' }).trim());
    await page.setInputFiles('#bench-intake-file', file);
    const web = await page.evaluate(async (runs) => {
      const text = (id) => document.getElementById(id).textContent;
      const bin = atob(text('dd-wasm').trim());
      const wasm = new Uint8Array(bin.length);
      for (let i = 0; i < bin.length; i++) wasm[i] = bin.charCodeAt(i);
      const worker = new Worker(URL.createObjectURL(new Blob([text('dd-glue') + '\n' + text('dd-worker')], { type: 'text/javascript' })));
      const next = () => new Promise((resolve) => { worker.onmessage = (ev) => { if (!ev.data.progress) resolve(ev.data); }; });
      let msg = next();
      worker.postMessage({ cmd: 'init', wasm: wasm.buffer }, [wasm.buffer]);
      await msg;
      const file = document.getElementById('bench-intake-file').files[0];
      const out = { ahead: [], inTurn: [] };
      for (let r = 0; r < runs; r++) {
        for (const readAhead of [true, false]) {
          msg = next();
          worker.postMessage({ cmd: 'benchIntake', id: r + 1, file, readAhead });
          const m = await msg;
          if (!m.ok) throw new Error(m.error);
          out[readAhead ? 'ahead' : 'inTurn'].push(m.value);
        }
      }
      worker.terminate();
      return out;
    }, runs);
    const mb = statSync(file).size / 1e6;
    const pick = (runs) => runs.reduce((a, b) => (b.ms < a.ms ? b : a));
    const best = pick(web.ahead);
    const inTurn = pick(web.inTurn);
    const rate = (ms) => mb / (ms / 1000);
    const chromium_mb_per_s = rate(best.ms);
    const secs = (runs) => runs.map((w) => (w.ms / 1000).toFixed(3)).join(' ');
    console.log(`intake only, ${file}: ${mb.toFixed(1)} MB, ${native.rows_read} rows read (${native.rows_analysed} analysed); best of ${runs}`);
    console.log(`  native                           ${native.native_mb_per_s.toFixed(1).padStart(7)} MB/s  (${native.native_seconds.toFixed(3)} s)`);
    console.log(`  chromium, as the page reads      ${chromium_mb_per_s.toFixed(1).padStart(7)} MB/s  (${(best.ms / 1000).toFixed(3)} s wall in the Worker, ${(best.feedMs / 1000).toFixed(3)} s of it in intake; runs ${secs(web.ahead)} s)`);
    console.log(`  chromium, File.slice in turn     ${rate(inTurn.ms).toFixed(1).padStart(7)} MB/s  (${(inTurn.ms / 1000).toFixed(3)} s wall in the Worker, ${(inTurn.feedMs / 1000).toFixed(3)} s of it in intake; runs ${secs(web.inTurn)} s)`);
    console.log(`  chromium (read ahead)/native throughput ratio ${(chromium_mb_per_s / native.native_mb_per_s).toFixed(2)}; read ahead/in turn ${(inTurn.ms / best.ms).toFixed(2)}`);
    // Linear memory only grows: after the runs it is the peak of one intake (0 from a page
    // whose Worker does not report it).
    const wasmMb = Math.max(...web.ahead.concat(web.inTurn).map((w) => w.wasmMemoryBytes || 0)) / 1048576;
    console.log(`  chromium Worker wasm memory after intake ${wasmMb.toFixed(1)} MiB`);
    for (const w of [best, inTurn]) {
      if (w.read !== native.rows_read || w.analysed !== native.rows_analysed) throw new Error(`row counts differ: chromium ${w.read}/${w.analysed}, native ${native.rows_read}/${native.rows_analysed}`);
    }
    console.log(JSON.stringify({ file, mb, rows_read: native.rows_read, rows_analysed: native.rows_analysed, native_mb_per_s: native.native_mb_per_s, chromium_mb_per_s, chromium_in_turn_mb_per_s: rate(inTurn.ms), chromium_intake_only_mb_per_s: rate(best.feedMs), ratio: chromium_mb_per_s / native.native_mb_per_s, chromium_wasm_memory_mb: wasmMb }));
  }
  await context.close();
  await browser.close();
}

const argv = process.argv.slice(2);
if (argv[0] === '--intake-only') {
  let runs = 3;
  let rest = argv.slice(1);
  if (rest[0] === '--runs') { runs = Number(rest[1]); rest = rest.slice(2); }
  await intakeOnly(rest, runs);
  process.exit(0);
}

const browser = await launch();
for (const file of argv) {
  const { page, context } = await openPage(browser);
  await page.setInputFiles('#file', file);
  await page.waitForSelector('#map-go', { timeout: 600_000 });
  const t0 = Date.now();
  await page.click('#map-go');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 3600_000 });
  const wall = (Date.now() - t0) / 1000;
  const heap = await page.evaluate(() => (performance.memory ? performance.memory.usedJSHeapSize : 0));
  const rows = await page.evaluate(() => window.digitdrift.report.rows);
  const wasmMem = await page.evaluate(() => window.digitdrift.wasmMemoryBytes || 0);
  const timing = await page.evaluate(() => window.digitdrift.workerTiming || null);
  const mb = statSync(file).size / 1e6;
  console.log(JSON.stringify({ file, mb, rows_read: rows.read, rows_analysed: rows.analysed, browser_seconds: wall, browser_mb_per_s: mb / wall, page_js_heap_mb: heap / 1e6, renderer_peak_rss_mb: rendererPeakMb(), worker_wasm_memory_mb: wasmMem / 1048576, worker_timing_ms: timing }));
  await context.close();
}
await browser.close();
