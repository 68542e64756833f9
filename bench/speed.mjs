// Side-by-side speed of the same workloads natively and in headless Chromium (the one-file page's
// wasm module, on the page's thread): multinomial sampling + statistics at n = 1,000 over the 90
// first-two bins, and calibrating an invented 500-supplier list at 10,000 simulations per size
// (also with its null tables split over 2 threads natively and 2 Workers in Chromium).
// Usage: node bench/speed.mjs [path/to/examples/speed]   (build it with
//   cargo build --release -p digitdrift-core --example speed; dist/digitdrift.html must be built)
//
// Page mode: node bench/speed.mjs --page [FILE]   (also build examples/screen_speed:
//   cargo build --release -p digitdrift-core --example screen_speed)
// The page's own screen of a 500-supplier ledger (FILE, else build/bench/ledger500-page.csv,
// written here on first use: 500 suppliers, invoice counts log-uniform from 20 to 20,000 as in
// workload::ledger_500, amounts log-uniform from 10 to 100,000), in a Worker started from the
// page's own glue + worker + wasm blocks exactly as the page starts it: the file opened as the
// page opens it (while the file is read, the helper Worker simulates the power checkpoints'
// null tables), then screens with one Worker and with the helper Worker, alternated, every one
// from a cold calibrator (tables not kept between screens). Natively, examples/screen_speed
// times the same phases. The calibrated p-values must be identical everywhere.
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { launch, openPage } from '../tests/e2e/browser.mjs';

if (process.argv[2] === '--page') {
  await pageMode(process.argv[3]);
  process.exit(0);
}

function writeLedger500(path) {
  // xorshift64* (deterministic; only makes the benchmark's invented ledger)
  let x = 0x9e3779b97f4a7c15n;
  const next = () => { x ^= x >> 12n; x ^= (x << 25n) & 0xffffffffffffffffn; x ^= x >> 27n; return Number(((x * 0x2545f4914f6cdd1dn) & 0xffffffffffffffffn) >> 11n) / 2 ** 53; };
  const lines = ['Supplier,Invoice No,Invoice Date,Amount'];
  let no = 0;
  for (let s = 0; s < 500; s++) {
    const n = Math.round(Math.exp(Math.log(20) + next() * Math.log(1000)));
    for (let i = 0; i < n; i++) {
      const day = Math.floor(next() * 1800);
      const d = new Date(Date.UTC(2021, 0, 1) + day * 86400000).toISOString().slice(0, 10);
      lines.push(`Page Bench Supplier ${String(s).padStart(3, '0')},P${no++},${d},${(10 ** (1 + 4 * next())).toFixed(2)}`);
    }
  }
  mkdirSync(path.slice(0, path.lastIndexOf('/')), { recursive: true });
  writeFileSync(path, lines.join('\n') + '\n');
}

async function pageMode(file) {
  if (!file) { file = 'build/bench/ledger500-page.csv'; if (!existsSync(file)) writeLedger500(file); }
  const bin = `${process.env.CARGO_TARGET_DIR || 'target'}/release/examples/screen_speed`;
  const native = JSON.parse(execFileSync(bin, [file], { encoding: 'utf8', maxBuffer: 1 << 28 }).trim());
  const browser = await launch();
  const { page } = await openPage(browser);
  await page.evaluate(() => { const i = document.createElement('input'); i.type = 'file'; i.id = 'bench-file'; i.hidden = true; document.body.append(i); });
  await page.setInputFiles('#bench-file', file);
  const web = await page.evaluate(async () => {
    const text = (id) => document.getElementById(id).textContent;
    const bin = atob(text('dd-wasm').trim());
    const wasm = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) wasm[i] = bin.charCodeAt(i);
    const src = text('dd-glue') + '\n' + text('dd-worker'); // as web/app.js starts the page's Worker
    const worker = new Worker(URL.createObjectURL(new Blob([src], { type: 'text/javascript' })));
    let id = 0;
    const call = (cmd, args) => new Promise((resolve, reject) => {
      const me = ++id;
      worker.onmessage = (ev) => { const m = ev.data; if (m.ready || m.progress || m.id !== me) return; if (m.ok) resolve(m); else reject(new Error(m.error)); };
      worker.postMessage(Object.assign({ cmd, id: me }, args));
    });
    await new Promise((r) => { worker.onmessage = (ev) => { if (ev.data.ready) r(); }; worker.postMessage({ cmd: 'init', wasm: wasm.buffer, src }, [wasm.buffer]); });
    await new Promise((r) => setTimeout(r, 500)); // the helper Worker instantiates its module
    const file = document.getElementById('bench-file').files[0];
    const open = await call('open', { file, options: {}, settings: {} });
    const pick = (m, v) => ({ workers: m.workers ?? v.workers, powerWorkers: m.powerWorkers ?? v.powerWorkers, timing: m.timing ?? v.timing, mc: JSON.parse(v.screen).suppliers.map((s) => [s.calibration.mc_p_value, s.calibration.adjusted_p_value ?? -1, s.calibration.invoices_needed ?? -1]) });
    const runs = [Object.assign(pick({}, open.value), { ms: open.value.ms })];
    await call('keepTables', { on: false }); // every screen below from a cold calibrator
    for (const on of [false, true, false, true]) {
      await call('useHelper', { on });
      if (on) await new Promise((r) => setTimeout(r, 500));
      const m = await call('rescreen', { settings: {} });
      runs.push(Object.assign(pick(m, { screen: m.value }), { wanted: on ? 2 : 1 }));
    }
    // calibration alone over 2 Workers: power work one in two, nothing else meanwhile
    await call('calibrationOnly', { on: true });
    for (let k = 0; k < 2; k++) {
      const m = await call('rescreen', { settings: {} });
      runs.push(Object.assign(pick(m, { screen: m.value }), { wanted: 2, calibrationOnly: true }));
    }
    await call('calibrationOnly', { on: false });
    worker.terminate();
    return runs;
  });
  await browser.close();
  const same = web.every((r) => JSON.stringify(r.mc) === JSON.stringify(native.mc));
  const s = (ms) => (ms / 1000).toFixed(3).padStart(8);
  console.log(`${file}: ${native.suppliers} suppliers, ${native.tables} null tables of 10,000 simulations (seconds)`);
  console.log(`${'run'.padEnd(34)} ${'batteries'.padStart(9)} ${'tables'.padStart(8)} ${'power'.padStart(8)} ${'rest'.padStart(8)} ${'screen'.padStart(8)} ${'tables+power'.padStart(12)}`);
  const row = (label, b, t, p, f) => console.log(`${label.padEnd(34)} ${s(b * 1000)} ${s(t * 1000)} ${s(p * 1000)} ${s(f * 1000)} ${s((b + t + p + f) * 1000)} ${s((t + p) * 1000).padStart(12)}`);
  row('native, 1 thread', native.batteries_s, native.tables_1_s, native.power_1_s, native.finish_1_s);
  row('native, 2 threads', native.batteries_s, native.tables_2_s, native.power_2_s, native.finish_2_s);
  for (const [i, r] of web.entries()) {
    if (i > 0 && (r.workers !== r.wanted || r.powerWorkers !== r.wanted)) throw new Error(`run ${i} used ${r.workers}/${r.powerWorkers} Workers, asked for ${r.wanted}`);
    row(i === 0 ? `chromium open: ${r.timing.mine}+${r.timing.theirs} tables left` : r.calibrationOnly ? 'chromium cold, calibration alone, 2 W' : `chromium cold, ${r.workers} Worker${r.workers > 1 ? 's' : ''} (${r.timing.mine}+${r.timing.theirs})`, r.timing.batteries / 1000, r.timing.tables / 1000, r.timing.power / 1000, r.timing.finish / 1000);
  }
  console.log(`chromium open: ${(web[0].ms / 1000).toFixed(3)} s from the file to the results (reading the file, with the helper Worker simulating the power checkpoints' tables meanwhile, then the screen)`);
  console.log(`calibrated p-values, corrected p-values and invoices needed identical native / every Chromium run: ${same}`);
  const { mc: _mc, ...nativeTimes } = native;
  console.log(JSON.stringify({ native: nativeTimes, chromium: web.map((r) => ({ workers: r.workers, powerWorkers: r.powerWorkers, timing: r.timing })) }));
  if (!same) process.exit(1);
}

const nativeBin = process.argv[2] || `${process.env.CARGO_TARGET_DIR || 'target'}/release/examples/speed`;
const native = JSON.parse(execFileSync(nativeBin, { encoding: 'utf8' }).trim());
const browser = await launch();
const { page } = await openPage(browser);
await page.waitForFunction(() => typeof wasm_bindgen !== 'undefined' && typeof wasm_bindgen.benchMultinomialStats === 'function' && document.getElementById('version').textContent.length > 0, null, { timeout: 60000 });
const web = await page.evaluate((sims) => {
  const t = (f) => { const t0 = performance.now(); f(); return (performance.now() - t0) / 1000; };
  // The first call runs while V8 still has the module in its baseline tier (Liftoff) and is
  // tiering up in the background: timed on its own as the cold figure; the second is steady state.
  const cold = t(() => wasm_bindgen.benchMultinomialStats(1000, sims, 1));
  const m = t(() => wasm_bindgen.benchMultinomialStats(1000, sims, 1));
  const n = t(() => wasm_bindgen.benchCalibrateLedger500(false));
  const f = t(() => wasm_bindgen.benchCalibrateLedger500(true));
  return { multinomial_stats_n1000_cold_s: cold, multinomial_stats_n1000_s: m, sims_per_s: sims / m, ledger500_null_s: n, ledger500_full_s: f, alarms: wasm_bindgen.benchCalibrateLedger500(false) };
}, native.sims);
// The null-only workload over 2 Workers made from a Blob of the page's own glue + wasm (as the
// page makes its Worker): A plans the split, A and B simulate their shares, A calibrates from
// both. Timed from the plan request to A's answer, Workers already started (as the wasm above).
Object.assign(web, await page.evaluate(async () => {
  const src = document.getElementById('dd-glue').textContent + `
self.onmessage = async (ev) => {
  const m = ev.data;
  if (m.cmd === 'init') { await wasm_bindgen({ module_or_path: m.wasm }); self.postMessage({ ready: true }); return; }
  if (m.cmd === 'plan') {
    const ns = wasm_bindgen.benchLedger500TableSizes();
    self.postMessage({ plan: [wasm_bindgen.benchTableShare(ns, 0, 2), wasm_bindgen.benchTableShare(ns, 1, 2)] });
    return;
  }
  if (m.cmd === 'tables') { const t = wasm_bindgen.benchNullTables(m.ns); self.postMessage({ ns: m.ns, tables: t }, [t.buffer]); return; }
  if (m.cmd === 'calibrate') {
    const ns = new Float64Array(m.ns.length + m.ns2.length); ns.set(m.ns); ns.set(m.ns2, m.ns.length);
    const t = new Float64Array(m.t.length + m.t2.length); t.set(m.t); t.set(m.t2, m.t.length);
    self.postMessage({ alarms: wasm_bindgen.benchCalibrateLedger500From(ns, t) });
  }
};`;
  const url = URL.createObjectURL(new Blob([src], { type: 'text/javascript' }));
  const bin = atob(document.getElementById('dd-wasm').textContent.trim());
  const bytes = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);
  const ws = [new Worker(url), new Worker(url)];
  const next = (w) => new Promise((r) => { w.onmessage = (ev) => r(ev.data); });
  await Promise.all(ws.map((w) => { const p = next(w); w.postMessage({ cmd: 'init', wasm: bytes.slice().buffer }); return p; }));
  const t0 = performance.now();
  let p = next(ws[0]); ws[0].postMessage({ cmd: 'plan' });
  const [a, b] = (await p).plan;
  const pa = next(ws[0]), pb = next(ws[1]);
  ws[0].postMessage({ cmd: 'tables', ns: a }); ws[1].postMessage({ cmd: 'tables', ns: b });
  const [ra, rb] = await Promise.all([pa, pb]);
  p = next(ws[0]); ws[0].postMessage({ cmd: 'calibrate', ns: ra.ns, t: ra.tables, ns2: rb.ns, t2: rb.tables }, [ra.tables.buffer, rb.tables.buffer]);
  const { alarms } = await p;
  const s = (performance.now() - t0) / 1000;
  ws.forEach((w) => w.terminate());
  return { ledger500_null_2_s: s, alarms_2: alarms };
}));
if (web.alarms !== web.alarms_2) throw new Error(`2 Workers gave ${web.alarms_2} alarms, 1 gave ${web.alarms}`);
await browser.close();
const row = (k, label) => console.log(`${label.padEnd(44)} ${native[k].toFixed(3).padStart(10)} ${web[k].toFixed(3).padStart(10)} ${(web[k] / native[k]).toFixed(2).padStart(7)}`);
console.log(`${'workload (seconds)'.padEnd(44)} ${'native'.padStart(10)} ${'chromium'.padStart(10)} ${'ratio'.padStart(7)}`);
row('multinomial_stats_n1000_s', `${native.sims} samples n=1,000 + statistics`);
row('ledger500_null_s', '500 suppliers, null tables only, 10k sims');
row('ledger500_full_s', '500 suppliers, with power curves, 10k sims');
row('ledger500_null_2_s', '500 suppliers, null only, 2 threads/Workers');
console.log(`2 threads/Workers vs 1: native ${(native.ledger500_null_s / native.ledger500_null_2_s).toFixed(2)}x, chromium ${(web.ledger500_null_s / web.ledger500_null_2_s).toFixed(2)}x faster (same alarms: ${web.alarms})`);
console.log(`simulations per second at n = 1,000: native ${Math.round(native.sims_per_s)}, chromium ${Math.round(web.sims_per_s)} (chromium/native ${(web.sims_per_s / native.sims_per_s).toFixed(2)}); chromium's first, cold call took ${web.multinomial_stats_n1000_cold_s.toFixed(3)} s`);
console.log(JSON.stringify({ native, chromium: web }));
