// The detection trial in Chromium on the demo ledger: controls, progress per replication, results
// (summary, chart drawn, table per confidence level), Cancel, and proof that a trial leaves the
// screen alone: the supplier results CSV and the invoices-to-pull CSV are byte-identical before and
// after it, and the supplier table is unchanged. The trial's own exports (CSV, JSON) download under
// their own names, marked as a trial on invented invoices with seed, pattern, share, replications
// and the caution. The medians in the table carry their 95 % order-statistic range. Zero network
// requests.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { launch, openPage, networkRequests, drawnPixels, screenshot } from './browser.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

async function downloadText(page, selector) {
  return (await download(page, selector)).text;
}
async function download(page, selector) {
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  return { name: dl.suggestedFilename(), text: readFileSync(await dl.path(), 'utf8') };
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
  // Medians with their Monte Carlo range, e.g. "68 (61–75)" (or "too few" below 6 caught).
  const cells = await page.$$eval('#trial-table tbody tr', (rows) => rows.map((r) => [...r.cells].slice(7, 10).map((c) => c.textContent)));
  assert.ok(cells.flat().some((t) => /^[\d,]+ \([\d,]+–[\d,]+\)$/.test(t)), JSON.stringify(cells));
  assert.ok(cells.flat().every((t) => t === '—' || /^[\d,.]+ \(([\d,.]+–[\d,.]+|too few)\)$/.test(t)), JSON.stringify(cells));
  assert.ok(main.median_delay_invoices_interval.low <= main.median_delay_invoices && main.median_delay_invoices <= main.median_delay_invoices_interval.high);
  await screenshot(page, 'view-trial');

  // The trial's own exports: separate files, marked, with the seed, pattern, share, replications and caution.
  const tcsv = await download(page, '#trial-export-csv');
  const tjson = await download(page, '#trial-export-json');
  assert.match(tcsv.name, /TRIAL-invented-invoices\.csv$/);
  assert.match(tjson.name, /TRIAL-invented-invoices\.json$/);
  const first = tcsv.text.split('\r\n')[0];
  assert.match(first, /^# digitdrift DETECTION TRIAL on invented invoices/);
  assert.match(first, /not the screen's results/);
  assert.match(first, /12 replications; seed 5/);
  assert.match(first, /share 0\.3 of invoices from 2024-01-01/);
  assert.match(first, /just below an approval limit/);
  assert.match(tcsv.text, /reason to look, not proof/);
  const lines = tcsv.text.trim().split('\r\n');
  const hdr = lines.findIndex((l) => l.startsWith('record,'));
  assert.ok(hdr > 0 && lines.slice(hdr + 1).length === 3 * rep.levels.length);
  assert.ok(lines.slice(hdr + 1).every((l) => l.startsWith('trial (invented invoices),')));
  const row95 = lines.slice(hdr + 1).find((l) => l.split(',')[1] === '0.9500' && l.split(',')[2] === 'screen_or_monitor').split(',');
  assert.equal(Number(row95[3]), Number(main.sensitivity.toFixed(6)));
  assert.equal(Number(row95[8]), main.median_delay_invoices_interval.low);
  const j = JSON.parse(tjson.text);
  assert.equal(Object.keys(j)[0], 'notice');
  assert.match(j.notice, /^digitdrift DETECTION TRIAL on invented invoices/);
  assert.equal(j.trial.parameters.seed, 5);
  assert.deepEqual(j.trial.levels, rep.levels);
  assert.match(j.caution, /not proof/);

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
  for (const t of [after1.suppliers, after1.pull]) assert.doesNotMatch(t, /TRIAL|invented/i, 'a screen export mentions the trial');
  await page.click('#nav a[data-view="suppliers"]');
  assert.equal(await page.$eval('#supplier-table', (t) => t.textContent), tableBefore);
  assert.deepEqual(networkRequests(requests), [], 'the page made network requests');
  assert.deepEqual(errors, []);
});
