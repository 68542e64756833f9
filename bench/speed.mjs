// Side-by-side speed of the same workloads natively and in headless Chromium (the one-file page's
// wasm module, on the page's thread): multinomial sampling + statistics at n = 1,000 over the 90
// first-two bins, and calibrating an invented 500-supplier list at 10,000 simulations per size
// (also with its null tables split over 2 threads natively and 2 Workers in Chromium).
// Usage: node bench/speed.mjs [path/to/examples/speed]   (build it with
//   cargo build --release -p digitdrift-core --example speed; dist/digitdrift.html must be built)
import { execFileSync } from 'node:child_process';
import { launch, openPage } from '../tests/e2e/browser.mjs';

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
