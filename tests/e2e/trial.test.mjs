// The detection trial in Chromium on the demo ledger: controls, progress per replication, results
// (summary, chart drawn, table per confidence level), Cancel, and proof that a trial leaves the
// screen alone: the supplier results CSV and the invoices-to-pull CSV are byte-identical before and
// after it, and the supplier table is unchanged. Zero network requests.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { launch, openPage, networkRequests, drawnPixels, screenshot } from './browser.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

async function downloadText(page, selector) {
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  return readFileSync(await dl.path(), 'utf8');
}

async function exports(page) {
  await page.click('#nav a[data-view="paper"]');
  await page.waitForSelector('#export-suppliers');
  return { suppliers: await downloadText(page, '#export-suppliers'), pull: await downloadText(page, '#export-pull') };
}

test('trial on the demo ledger: progress, results, cancel; exports unchanged; no network', async () => {
  const { page, requests, errors } = await openPage(browser);
  await page.click('#demo');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 120_000 });
  // Tick the invoices behind the selected supplier's fullest first-two bar to pull.
  await page.waitForSelector('#chart-first-two[data-drawn="yes"]');
  await page.$eval('#chart-first-two', (c) => c.scrollIntoView({ block: 'center' }));
  const box = await page.$eval('#chart-first-two', (c) => { const r = c.getBoundingClientRect(); return { x: r.x, y: r.y, sx: c.width / r.width }; });
  const g = await page.evaluate(() => window.digitdrift.geometry['chart-first-two']);
  const bin = await page.evaluate(() => { const st = window.digitdrift; const c = st.report.suppliers.find((x) => x.id === st.selected).first_two.counts; return 10 + c.indexOf(Math.max(...c)); });
  await page.mouse.click(box.x + (g.left + (bin - g.x_min) / (g.x_max - g.x_min) * (g.right - g.left)) / box.sx, box.y + (g.bottom - 5) / box.sx);
  await page.waitForSelector('#drill-table tbody tr');
  await page.click('#drill button.btn.alt');
  const ticked = await page.evaluate(() => window.digitdrift.pull.size);
  assert.ok(ticked > 0);
  const tableBefore = await page.$eval('#supplier-table', (t) => t.textContent);
  const before1 = await exports(page);

  await page.click('#nav a[data-view="trial"]');
  await page.waitForSelector('#trial-run');
  assert.match(await page.$eval('#trial-body .caution', (e) => e.textContent), /not whether anything in the real ledger is fabricated/);
  await page.selectOption('#trial-pattern', 'below-limit');
  await page.fill('#trial-share', '30');
  await page.fill('#trial-from', '2024-01-01');
  await page.fill('#trial-reps', '12');
  await page.fill('#trial-seed', '5');
  // Record every progress figure the page shows.
  await page.evaluate(() => {
    window.__seen = [];
    new MutationObserver(() => window.__seen.push(document.getElementById('trial-progress-text').textContent))
      .observe(document.getElementById('trial-body'), { subtree: true, childList: true, characterData: true, attributes: true });
  });
  await page.click('#trial-run');
  await page.waitForSelector('#trial-body[data-state="done"]', { timeout: 120_000 });
  const seen = await page.evaluate(() => window.__seen.filter(Boolean));
  assert.ok(seen.some((t) => /Replication \d+ of 12/.test(t)), JSON.stringify(seen.slice(0, 5)));
  assert.ok(seen.some((t) => /Replication 12 of 12/.test(t)), 'the last replication was shown');
  const rep = await page.evaluate(() => window.digitdrift.trial.report);
  assert.equal(rep.parameters.replications, 12);
  assert.equal(rep.parameters.pattern, 'below_limit');
  assert.equal(rep.parameters.from, '2024-01-01');
  const main = rep.levels.find((l) => Math.abs(l.confidence - 0.95) < 1e-9);
  assert.ok(main.sensitivity > 0.5, `below-limit at 30 %: sensitivity ${main.sensitivity}`);
  assert.equal(await page.$$eval('#trial-table tbody tr', (t) => t.length), rep.levels.length);
  assert.match(await page.$eval('#trial-summary', (e) => e.textContent), /of the suppliers with invented invoices were caught/);
  assert.ok(await drawnPixels(page, '#chart-trial') > 3000, 'trial chart drawn');
  await screenshot(page, 'view-trial');

  // Cancel a long trial: it stops between replications and keeps nothing.
  await page.fill('#trial-reps', '5000');
  await page.click('#trial-run');
  await page.waitForSelector('#trial-cancel:not([hidden])');
  await page.waitForFunction(() => Number(document.getElementById('trial-body').dataset.done) >= 1, null, { timeout: 60_000 });
  await page.click('#trial-cancel');
  await page.waitForSelector('#trial-body[data-state="cancelled"]', { timeout: 60_000 });
  assert.match(await page.$eval('#trial-msg', (e) => e.textContent), /cancelled/i);
  const doneAtCancel = Number(await page.$eval('#trial-body', (b) => b.dataset.done));
  assert.ok(doneAtCancel < 5000, `cancel came after ${doneAtCancel} replications`);

  // The screen is untouched: same table, byte-identical exports.
  const after1 = await exports(page);
  assert.equal(after1.suppliers, before1.suppliers, 'supplier results CSV changed by a trial');
  assert.equal(after1.pull, before1.pull, 'invoices-to-pull CSV changed by a trial');
  await page.click('#nav a[data-view="suppliers"]');
  assert.equal(await page.$eval('#supplier-table', (t) => t.textContent), tableBefore);
  assert.deepEqual(networkRequests(requests), [], 'the page made network requests');
  assert.deepEqual(errors, []);
});
