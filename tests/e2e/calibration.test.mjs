// Same seed, same numbers on every platform: the page (wasm in Chromium) and the native CLI must
// give identical calibrated p-values and verdicts for the embedded demo ledger. Also checks the
// size-aware overview chart and the supplier file view are drawn.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { resolve } from 'node:path';
import { existsSync } from 'node:fs';
import { launch, openPage, networkRequests, drawnPixels, root, screenshot, pageUrl } from './browser.mjs';

const demo = process.env.DEMO || resolve(root, 'demo-files', 'heathervale-vet-ledger.csv');
const cli = process.env.DIGITDRIFT_BIN || resolve(root, 'target', 'release', 'digitdrift');

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('screening again with other settings gives the CLI\'s numbers for those settings', { skip: !existsSync(cli) && 'release CLI not built' }, async () => {
  // reference: the native CLI with the same confidence and seed
  const native = JSON.parse(execFileSync(cli, ['screen', demo, '--format', 'json', '--confidence', '0.99', '--seed', '7'], { maxBuffer: 1 << 30 }).toString());
  const { page, requests, errors } = await openPage(browser);
  await page.click('#demo');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 180_000 });
  await page.click('#nav a[data-view="ledger"]');
  await page.waitForFunction(() => !document.getElementById('view-ledger').hidden);
  await page.click('#settings summary');
  await page.selectOption('#set-confidence', '0.99');
  await page.fill('#set-seed', '7');
  await page.click('#rescreen');
  await page.waitForFunction(() => document.getElementById('settings-note').textContent === 'Screened again.', null, { timeout: 180_000 });
  const web = await page.evaluate(() => window.digitdrift.report.suppliers.map((s) => [s.name, s.verdict, s.first_two.mc_p_value, s.first_two.mad_critical, s.calibration.adjusted_p_value]));
  assert.deepEqual(web, native.suppliers.map((s) => [s.name, s.verdict, s.first_two.mc_p_value, s.first_two.mad_critical, s.calibration.adjusted_p_value]));
  assert.equal(await page.evaluate(() => window.digitdrift.report.calibration.confidence), 0.99);
  const rows = await page.$$eval('#supplier-table tbody tr', (t) => t.length);
  assert.ok(rows >= native.suppliers.length, `${rows} table rows`);
  assert.deepEqual(networkRequests(requests), []);
  assert.deepEqual(errors, []);
});

test('page (wasm) and CLI (native) agree exactly on calibrated results', { skip: !existsSync(cli) && 'release CLI not built' }, async () => {
  const native = JSON.parse(execFileSync(cli, ['screen', demo, '--format', 'json'], { maxBuffer: 1 << 30 }).toString());
  const { page, requests, errors } = await openPage(browser);
  await page.click('#demo');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 180_000 });
  const pick = (s) => ({ name: s.name, invoices: s.invoices, verdict: s.verdict, mc: s.first_two.mc_p_value, crit: s.first_two.mad_critical, mad: s.first_two.mad, adj: s.calibration.adjusted_p_value, needed: s.invoices_needed,
    full: s.calibration.power_full_fabrication, fullSims: s.calibration.power_full_sims, curve: s.calibration.power_curve });
  const web = await page.evaluate(() => window.digitdrift.report.suppliers.map((s) => ({ name: s.name, invoices: s.invoices, verdict: s.verdict, mc: s.first_two.mc_p_value, crit: s.first_two.mad_critical, mad: s.first_two.mad, adj: s.calibration.adjusted_p_value, needed: s.invoices_needed,
    full: s.calibration.power_full_fabrication, fullSims: s.calibration.power_full_sims, curve: s.calibration.power_curve })));
  const nat = native.suppliers.map(pick);
  assert.equal(web.length, nat.length);
  assert.deepEqual(web, nat);
  // the null tables, then the power work per supplier, were split over the page's Worker and
  // its helper Worker
  assert.equal(await page.evaluate(() => window.digitdrift.calibrationWorkers), 2);
  assert.equal(await page.evaluate(() => window.digitdrift.calibrationPowerWorkers), 2);
  assert.deepEqual(await page.evaluate(() => window.digitdrift.report.rows), native.rows);
  // The overview chart and the verdict column.
  await page.waitForSelector('#chart-overview[data-drawn="yes"]');
  assert.ok(await drawnPixels(page, '#chart-overview') > 5000);
  const verdicts = await page.$$eval('#supplier-table tbody td[class*="v-"]', (t) => t.map((x) => x.textContent));
  assert.ok(verdicts.length === nat.length && verdicts.every((v) => ['stands out', 'in line', 'too few to tell'].includes(v)), verdicts.join(','));
  // Supplier file of the top-ranked supplier: every digit chart drawn, verdict in words.
  await page.click('#open-file');
  for (const id of ['first_digit', 'second_digit', 'first_two', 'first_three', 'last_two', 'second_order']) {
    await page.waitForSelector(`#chart-${id}[data-drawn="yes"]`, { timeout: 30_000 });
    assert.ok(await drawnPixels(page, `#chart-${id}`) > 3000, id);
  }
  assert.match(await page.$eval('#verdict-words', (e) => e.textContent), /invoices/);
  await screenshot(page, 'supplier-file');
  assert.deepEqual(networkRequests(requests), []);
  assert.deepEqual(errors, []);
});

test('the same numbers when the helper Worker stops during the tables or the power work', { skip: !existsSync(cli) && 'release CLI not built' }, async () => {
  // The page's screening Worker must finish what its helper left undone (a test switch stops
  // the helper at its first table or first power results) with the same numbers as the CLI.
  const native = JSON.parse(execFileSync(cli, ['screen', demo, '--format', 'json'], { maxBuffer: 1 << 30 }).toString());
  const nat = native.suppliers.map((s) => [s.name, s.verdict, s.first_two.mc_p_value, s.calibration.adjusted_p_value, s.invoices_needed, s.calibration.power_full_fabrication]);
  for (const phase of ['tables', 'powers']) {
    const { page, requests, errors } = await openPage(browser, { url: pageUrl + '?test-helper-fails=' + phase });
    await page.click('#demo');
    await page.waitForSelector('body[data-loaded="yes"]', { timeout: 180_000 });
    const web = await page.evaluate(() => window.digitdrift.report.suppliers.map((s) => [s.name, s.verdict, s.first_two.mc_p_value, s.calibration.adjusted_p_value, s.invoices_needed, s.calibration.power_full_fabrication]));
    assert.deepEqual(web, nat, phase);
    // stopped in the tables: everything was finished here; in the power work: the tables came from both
    assert.equal(await page.evaluate(() => window.digitdrift.calibrationPowerWorkers), 1, phase);
    assert.equal(await page.evaluate(() => window.digitdrift.calibrationWorkers), phase === 'tables' ? 1 : 2, phase);
    assert.deepEqual(networkRequests(requests), []);
    assert.deepEqual(errors, []);
    await page.context().close();
  }
});
