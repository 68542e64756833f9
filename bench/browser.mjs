// Browser benchmark: opens dist/digitdrift.html in headless Chromium, drops each given ledger
// (the page reads it through the Worker's chunked File.slice intake), and prints the Worker's wall
// time for intake + full screen (digit tests and calibration), the page's JS heap, and the peak
// resident memory of the tab's renderer process (VmHWM; it holds the Worker, its wasm linear
// memory and the JS heaps), found among this process's own descendants only.
// Usage: node bench/browser.mjs FILE...
import { launch, openPage } from '../tests/e2e/browser.mjs';
import { statSync, readFileSync, readdirSync } from 'node:fs';

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

const browser = await launch();
for (const file of process.argv.slice(2)) {
  const { page, context } = await openPage(browser);
  await page.setInputFiles('#file', file);
  await page.waitForSelector('#map-go', { timeout: 600_000 });
  const t0 = Date.now();
  await page.click('#map-go');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 3600_000 });
  const wall = (Date.now() - t0) / 1000;
  const heap = await page.evaluate(() => (performance.memory ? performance.memory.usedJSHeapSize : 0));
  const rows = await page.evaluate(() => window.digitdrift.report.rows);
  const mb = statSync(file).size / 1e6;
  console.log(JSON.stringify({ file, mb, rows_read: rows.read, rows_analysed: rows.analysed, browser_seconds: wall, browser_mb_per_s: mb / wall, page_js_heap_mb: heap / 1e6, renderer_peak_rss_mb: rendererPeakMb() }));
  await context.close();
}
await browser.close();
