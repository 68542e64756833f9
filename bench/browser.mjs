// Browser benchmark: opens dist/digitdrift.html in headless Chromium, drops each given ledger,
// and prints the Worker's wall time for intake + full screen (digit tests and calibration), and
// the JS heap. Usage: node bench/browser.mjs FILE...
import { launch, openPage } from '../tests/e2e/browser.mjs';
import { statSync } from 'node:fs';
const browser = await launch();
for (const file of process.argv.slice(2)) {
  const { page, context } = await openPage(browser);
  await page.setInputFiles('#file', file);
  await page.waitForSelector('#map-go', { timeout: 120000 });
  const t0 = Date.now();
  await page.click('#map-go');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 3600_000 });
  const wall = (Date.now() - t0) / 1000;
  const heap = await page.evaluate(() => (performance.memory ? performance.memory.usedJSHeapSize : 0));
  const rows = await page.evaluate(() => window.digitdrift.report.rows.read);
  const mb = statSync(file).size / 1e6;
  console.log(JSON.stringify({ file, mb, rows, browser_seconds: wall, browser_mb_per_s: mb / wall, page_js_heap_mb: heap / 1e6 }));
  await context.close();
}
await browser.close();
