// The walking skeleton end to end: dist/digitdrift.html opened from file:// in headless Debian
// Chromium, the embedded demo ledger screened in the Worker, a chart drawn, and no network use.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { launch, openPage, networkRequests, screenshot, drawnPixels } from './browser.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('demo ledger: table, drawn chart, drill-down, zero network requests', async () => {
  const { page, requests, errors } = await openPage(browser);
  // The strict policy is in the page itself.
  const csp = await page.$eval('meta[http-equiv="Content-Security-Policy"]', (m) => m.content);
  assert.match(csp, /default-src 'none'/);
  assert.match(csp, /connect-src 'none'/);
  await page.click('#demo');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 120_000 });
  const rows = await page.$$eval('#supplier-table tbody tr', (t) => t.length);
  assert.ok(rows >= 5, `supplier rows: ${rows}`);
  await page.waitForSelector('#chart-first-two[data-drawn="yes"]');
  const px = await drawnPixels(page, '#chart-first-two');
  assert.ok(px > 5000, `chart drew only ${px} non-white pixels`);
    await page.$eval('#chart-first-two', (c) => c.scrollIntoView({ block: 'center' }));
  const box = await page.$eval('#chart-first-two', (c) => { const r = c.getBoundingClientRect(); return { x: r.x, y: r.y, sx: c.width / r.width }; });
  const g = await page.evaluate(() => window.digitdrift.geometry['chart-first-two']);
  // Click the bar of the selected supplier's most frequent first-two digits (read off the
  // report), and expect exactly that many invoices behind it.
  const { bin, count } = await page.evaluate(() => {
    const st = window.digitdrift;
    const s = st.report.suppliers.find((x) => x.id === st.selected);
    const c = s.first_two.counts;
    const i = c.indexOf(Math.max(...c));
    return { bin: 10 + i, count: c[i] };
  });
  const xPix = g.left + (bin - g.x_min) / (g.x_max - g.x_min) * (g.right - g.left);
  await page.mouse.click(box.x + xPix / box.sx, box.y + (g.bottom - 5) / box.sx);
  await page.waitForSelector('#drill-table tbody tr');
  assert.equal(await page.$$eval('#drill-table tbody tr', (t) => t.length), count, `invoices behind bar ${bin}`);
  const accounting = await page.$eval('#accounting', (e) => e.textContent);
  assert.match(accounting, /data rows read = .* analysed \+ .* excluded/);
  await screenshot(page, 'suppliers');
  await page.goto(page.url().split('#')[0] + '#ledger');
  await screenshot(page, 'ledger');
  assert.deepEqual(networkRequests(requests), [], 'the page made network requests');
  assert.deepEqual(errors, []);
});

test('the no-network assertion itself fails when a page fetches', async () => {
  // Guard against a test that cannot fail: a page that tries a fetch shows up in the log.
  const { page, requests } = await openPage(browser, { url: 'data:text/html,<script>fetch("http://127.0.0.1:9/x").catch(()=>0)</script>' });
  await page.waitForTimeout(300);
  assert.ok(networkRequests(requests).some((u) => u.startsWith('http://127.0.0.1:9')), JSON.stringify(requests));
});
