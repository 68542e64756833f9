// The reviewer's workflow in Chromium on a hostile ledger: names with markup and script render as
// text and run nothing; CSV exports neutralise formulas (OWASP CSV-injection guidance: prefix
// = + - @ tab CR — from memory) and are byte-identical for the same file and seed; the working
// paper carries the file's SHA-256 (checked against node:crypto); zero network requests.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { createHash } from 'node:crypto';
import { writeFileSync, readFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { launch, openPage, networkRequests, drawnPixels, screenshot } from './browser.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

// A small invented ledger: log-uniform amounts (Benford-like) from a fixed linear congruential
// generator, so the file is the same on every run.
function hostileLedger() {
  const names = ['<img src=x onerror="window.__pwned=1">', '=HYPERLINK("http://example.invalid","x")', '<script>window.__pwned=2</script>', 'Plain Supplies Ltd', '@SUM(1+1)', '+44 Trading'];
  let x = 12345;
  const rnd = () => { x = (x * 1103515245 + 12345) % 2147483648; return x / 2147483648; };
  const lines = ['Supplier,Invoice date,Invoice no,Amount'];
  for (let i = 0; i < 1800; i++) {
    const n = names[i % names.length];
    const amt = Math.pow(10, 1 + 3 * rnd()).toFixed(2);
    const d = new Date(Date.UTC(2024, 0, 1) + Math.floor(rnd() * 365) * 86400000).toISOString().slice(0, 10);
    lines.push(`"${n.replace(/"/g, '""')}",${d},INV-${i},${amt}`);
  }
  return lines.join('\n') + '\n';
}

async function downloadText(page, selector) {
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  return readFileSync(await dl.path(), 'utf8');
}

test('hostile names stay text; exports neutralised and identical; paper fingerprint; no network', async () => {
  const dir = mkdtempSync(join(tmpdir(), 'dd-'));
  const file = join(dir, 'hostile-ledger.csv');
  const text = hostileLedger();
  writeFileSync(file, text);
  const sha = createHash('sha256').update(text).digest('hex');
  const { page, requests, errors } = await openPage(browser);
  await page.setInputFiles('#file', file);
  // A chosen file first gets the mapping step (columns, decimal convention, preview).
  await page.waitForSelector('#map-go');
  await page.click('#map-go');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 120_000 });
  const names = await page.$$eval('#supplier-table tbody tr td:nth-child(2)', (t) => t.map((x) => x.textContent));
  assert.ok(names.includes('<img src=x onerror="window.__pwned=1">'), names.join(' | '));
  assert.ok(names.includes('<script>window.__pwned=2</script>'));
  assert.equal(await page.evaluate(() => window.__pwned), undefined, 'ledger text was run as code');
  assert.equal(await page.$$eval('#supplier-table img, #supplier-table script', (x) => x.length), 0);
  // Drill into a bar and tick every invoice behind it to pull.
  await page.click('#open-file');
  await page.waitForSelector('#chart-first_digit[data-drawn="yes"]');
  await page.$eval('#chart-first_digit', (c) => c.scrollIntoView({ block: 'center' }));
  const g = await page.evaluate(() => window.digitdrift.geometry['chart-first_digit']);
  const box = await page.$eval('#chart-first_digit', (c) => { const r = c.getBoundingClientRect(); return { x: r.x, y: r.y, w: r.width, sx: c.width / r.width }; });
  const xPix = g.left + (1 - g.x_min) / (g.x_max - g.x_min) * (g.right - g.left);
  await page.mouse.click(box.x + xPix / box.sx, box.y + (g.bottom - 4) / box.sx);
  await page.waitForSelector('#file-drill-table tbody tr');
  await page.click('#file-drill button.btn.alt');
  const ticked = await page.evaluate(() => window.digitdrift.pull.size);
  assert.ok(ticked > 10, `ticked ${ticked}`);
  await page.fill('#reviewer-note', 'Checked three documents; nothing unusual.');
  // Working paper.
  await page.click('#nav a[data-view="paper"]');
  await page.waitForSelector('#paper-params');
  // the fingerprint is computed after the results are shown and put on the paper when in
  await page.waitForFunction(() => !/being computed/.test(document.querySelector('#paper-params').textContent));
  const params = await page.$eval('#paper-params', (t) => t.textContent);
  assert.ok(params.includes(sha), 'SHA-256 on the working paper matches node:crypto');
  // a part of the paper left out (no exclusions here) leaves no stray "null" text
  assert.equal(await page.$eval('#paper-body', (b) => [...b.childNodes].filter((n) => n.nodeType === Node.TEXT_NODE && n.textContent === 'null').length), 0);
  assert.match(await page.$eval('#paper-results', (t) => t.textContent), /Checked three documents/);
  const a = await downloadText(page, '#export-suppliers');
  const b = await downloadText(page, '#export-suppliers');
  assert.equal(a, b, 'same file and seed give byte-identical CSV');
  assert.ok(a.includes(sha));
  const rows = a.split('\r\n');
  assert.ok(rows.some((r) => r.includes(`"'=HYPERLINK(""http://example.invalid"",""x"")"`)), 'formula neutralised');
  assert.ok(rows.some((r) => r.includes(",'@SUM(1+1),")), '@ neutralised');
  assert.ok(rows.some((r) => r.includes(",'+44 Trading,")), '+ neutralised');
  assert.ok(!rows.some((r) => /(^|,)[=+@]/.test(r)), 'no cell starts with a formula character');
  const pull = await downloadText(page, '#export-pull');
  assert.equal(pull.trim().split('\r\n').length, 3 + ticked);
  await screenshot(page, 'view-paper');
  // Replay view draws.
  await page.click('#nav a[data-view="replay"]');
  await page.waitForSelector('#chart-evidence[data-drawn="yes"]', { timeout: 60_000 });
  assert.ok(await drawnPixels(page, '#chart-evidence') > 3000);
  assert.equal(await page.evaluate(() => window.__pwned), undefined);
  assert.deepEqual(networkRequests(requests), []);
  assert.deepEqual(errors, []);
});

test('forget everything clears stored settings', async () => {
  const { page } = await openPage(browser);
  await page.click('#settings summary');
  await page.selectOption('#set-confidence', '0.99');
  assert.ok(await page.evaluate(() => localStorage.length) > 0);
  await page.click('#forget');
  assert.equal(await page.evaluate(() => localStorage.length), 0);
  assert.equal(await page.$eval('#set-confidence', (s) => s.value), '0.95');
});
