// Side-by-side speed of the same workloads natively and in headless Chromium (the one-file page's
// wasm module, on the page's thread): multinomial sampling + statistics at n = 1,000 over the 90
// first-two bins, and calibrating an invented 500-supplier list at 10,000 simulations per size.
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
  const m = t(() => wasm_bindgen.benchMultinomialStats(1000, sims, 1));
  const n = t(() => wasm_bindgen.benchCalibrateLedger500(false));
  const f = t(() => wasm_bindgen.benchCalibrateLedger500(true));
  return { multinomial_stats_n1000_s: m, sims_per_s: sims / m, ledger500_null_s: n, ledger500_full_s: f };
}, native.sims);
await browser.close();
const row = (k, label) => console.log(`${label.padEnd(44)} ${native[k].toFixed(3).padStart(10)} ${web[k].toFixed(3).padStart(10)} ${(web[k] / native[k]).toFixed(2).padStart(7)}`);
console.log(`${'workload (seconds)'.padEnd(44)} ${'native'.padStart(10)} ${'chromium'.padStart(10)} ${'ratio'.padStart(7)}`);
row('multinomial_stats_n1000_s', `${native.sims} samples n=1,000 + statistics`);
row('ledger500_null_s', '500 suppliers, null tables only, 10k sims');
row('ledger500_full_s', '500 suppliers, with power curves, 10k sims');
console.log(`simulations per second at n = 1,000: native ${Math.round(native.sims_per_s)}, chromium ${Math.round(web.sims_per_s)} (chromium/native ${(web.sims_per_s / native.sims_per_s).toFixed(2)})`);
console.log(JSON.stringify({ native, chromium: web }));
