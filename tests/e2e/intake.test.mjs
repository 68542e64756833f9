// Intake in the page: a Windows-1252, semicolon-separated, decimal-comma export with a report
// preamble and a totals line is dropped on the page; the mapping step must show how it will be
// read (encoding, separator, header line, exact amounts), and the row accounting after screening
// must match what was written. Windows-1252 bytes for ü/ß/é follow the WHATWG Encoding Standard.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { writeFileSync, mkdtempSync, readFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { launch, openPage, networkRequests, screenshot } from './browser.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

function ledger() {
  const suppliers = ['Müller Tierbedarf GmbH', 'Straße & Söhne KG', 'Café Vétérinaire SARL'];
  const lines = ['Kreditorenliste Praxis Nord', 'Zeitraum 01.01.2024 - 31.12.2024', '', 'Lieferant;Belegdatum;Belegnummer;Betrag'];
  let x = 7, total = 0;
  const rnd = () => { x = (x * 48271) % 2147483647; return x / 2147483647; };
  for (let i = 0; i < 600; i++) {
    const cents = Math.round(Math.pow(10, 1 + 3 * rnd()) * 100);
    total += cents;
    const euros = Math.floor(cents / 100).toString().replace(/\B(?=(\d{3})+(?!\d))/g, '.');
    const day = String(1 + (i % 28)).padStart(2, '0'), month = String(1 + (i % 12)).padStart(2, '0');
    lines.push(`${suppliers[i % 3]};${day}.${month}.2024;R-${1000 + i};${euros},${String(cents % 100).padStart(2, '0')}`);
  }
  lines.push('Gutschrift Müller;15.06.2024;G-1;-120,00'.replace('Gutschrift Müller', suppliers[0]));
  lines.push(';;;');
  lines.push(`Summe;;;${Math.floor(total / 100)},${String(total % 100).padStart(2, '0')}`);
  return Buffer.from(lines.join('\r\n') + '\r\n', 'latin1');
}

test('Windows-1252 decimal-comma export with preamble: mapping preview and accounting', async () => {
  const dir = mkdtempSync(join(tmpdir(), 'dd-'));
  const file = join(dir, 'kreditoren-2024.csv');
  writeFileSync(file, ledger());
  const { page, requests, errors } = await openPage(browser);
  await page.setInputFiles('#file', file);
  await page.waitForSelector('#preview-table tbody tr');
  const sniffed = await page.$eval('#sniffed', (e) => e.textContent);
  assert.match(sniffed, /windows-1252/i);
  assert.match(sniffed, /semicolons/);
  assert.match(sniffed, /header on line 4/);
  const first = await page.$$eval('#preview-table tbody tr:first-child td', (t) => t.map((x) => x.textContent));
  assert.equal(first[1], 'Müller Tierbedarf GmbH');
  assert.match(first[2], /^\d+\.\d\d$/, 'amount read exactly with a decimal point');
  assert.equal(first[3], '2024-01-01');
  assert.equal(await page.$eval('#map-supplier', (s) => s.selectedOptions[0].textContent), '1: Lieferant');
  assert.equal(await page.$eval('#map-amount', (s) => s.selectedOptions[0].textContent), '4: Betrag');
  await screenshot(page, 'view-mapping');
  await page.click('#map-go');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 60_000 });
  const rows = await page.evaluate(() => window.digitdrift.report.rows);
  // 600 invoices + 1 credit note + 1 blank row + 1 totals line = 603 data rows.
  assert.equal(rows.read, rows.analysed + rows.excluded);
  assert.equal(rows.read, 603);
  const by = Object.fromEntries(rows.exclusions.map((e) => [e.reason, e.count]));
  assert.equal(by.credit_note, 1);
  assert.equal(by.totals_line, 1);
  const below = by.below_minimum || 0;
  assert.equal(rows.analysed, 600 - below);
  const names = await page.evaluate(() => window.digitdrift.report.suppliers.map((s) => s.name).sort());
  assert.deepEqual(names, ['Café Vétérinaire SARL', 'Müller Tierbedarf GmbH', 'Straße & Söhne KG']);
  await page.click('#nav a[data-view="ledger"]');
  assert.match(await page.$eval('#accounting', (e) => e.textContent), /603 data rows read/);
  assert.deepEqual(networkRequests(requests), []);
  assert.deepEqual(errors, []);
});

test('a workbook dropped by mistake gets a clear message', async () => {
  const dir = mkdtempSync(join(tmpdir(), 'dd-'));
  const file = join(dir, 'ledger.xlsx');
  writeFileSync(file, Buffer.concat([Buffer.from('PK\u0003\u0004', 'latin1'), Buffer.alloc(200, 1)]));
  const { page } = await openPage(browser);
  await page.setInputFiles('#file', file);
  await page.waitForSelector('#intake-msg:not([hidden])');
  assert.match(await page.$eval('#intake-msg', (e) => e.textContent), /export it as CSV/i);
});

test('a digit-count table from an SQL engine is screened without the ledger', async () => {
  // Counts proportional to Benford's first-two probabilities log10(1 + 1/d) for one supplier,
  // all in one bin for another: the first must not stand out, the second must.
  const lines = ['supplier,first_two,invoices,amount'];
  for (let d = 10; d <= 99; d++) {
    const n = Math.round(3000 * Math.log10(1 + 1 / d));
    lines.push(`Benford Like Ltd,${d},${n},${(n * d * 10.5).toFixed(2)}`);
  }
  lines.push('One Price Co,45,400,180000.00');
  const dir = mkdtempSync(join(tmpdir(), 'dd-'));
  const file = join(dir, 'counts.csv');
  writeFileSync(file, lines.join('\n') + '\n');
  const { page, requests, errors } = await openPage(browser);
  await page.setInputFiles('#file', file);
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 60_000 });
  const v = await page.evaluate(() => Object.fromEntries(window.digitdrift.report.suppliers.map((s) => [s.name, s.verdict])));
  assert.equal(v['One Price Co'], 'deviates');
  assert.equal(v['Benford Like Ltd'], 'consistent');
  assert.deepEqual(networkRequests(requests), []);
  assert.deepEqual(errors, []);
});

test('Cancel while a file is read, then another ledger opens with the same numbers as before; SHA-256 of files of many chunks', async () => {
  // A 300,000-row invented ledger (about 14 MB): long enough to Cancel mid-way. While it is
  // read, the helper Worker is busy with null tables for it; the demo ledger opened right after
  // the Cancel must get its own helper answers (jobs carry ids), not that left-behind one.
  const dir = mkdtempSync(join(tmpdir(), 'dd-'));
  const file = join(dir, 'long-ledger.csv');
  const lines = ['Supplier,Invoice No,Invoice Date,Amount'];
  let x = 11;
  const rnd = () => { x = (x * 48271) % 2147483647; return x / 2147483647; };
  for (let i = 0; i < 300_000; i++) lines.push(`Harrowgate Feed ${i % 40},L${i},2024-0${1 + (i % 9)}-1${i % 10},${Math.pow(10, 1 + 3 * rnd()).toFixed(2)}`);
  writeFileSync(file, lines.join('\n') + '\n');
  const { page, requests, errors } = await openPage(browser);
  const demo = async () => {
    await page.click('#demo');
    await page.waitForSelector('body[data-loaded="yes"]', { timeout: 120_000 });
    await page.waitForFunction(() => window.digitdrift.sha256); // computed after the results are shown
    return page.evaluate(() => ({ rows: window.digitdrift.report.rows, sha256: window.digitdrift.sha256, mc: window.digitdrift.report.suppliers.map((s) => [s.name, s.first_two.mc_p_value, s.invoices_needed]) }));
  };
  // The fingerprint is hashed by the helper Worker, which reads the file again in 1 MiB slices
  // once the results are shown: it must be Node's SHA-256 of the same bytes (the demo ledger
  // is about 10 MB).
  const sha = (bytes) => createHash('sha256').update(bytes).digest('hex');
  const demoSha = sha(readFileSync(new URL('../../demo-files/heathervale-vet-ledger.csv', import.meta.url)));
  const reference = await demo();
  assert.equal(reference.sha256, demoSha);
  await page.evaluate(() => { delete document.body.dataset.loaded; });
  await page.click('#nav a[data-view="ledger"]');
  await page.setInputFiles('#file', file);
  await page.waitForSelector('#map-go');
  await page.click('#map-go');
  await page.waitForSelector('#progress:not([hidden])');
  await page.click('#cancel');
  await page.waitForFunction(() => /Cancelled/.test(document.body.textContent));
  const again = await demo();
  assert.deepEqual(again, reference);
  assert.equal(await page.evaluate(() => window.digitdrift.calibrationWorkers), 2);
  // the long ledger read to the end this time (a copy: choosing the same file again fires no change)
  const whole = join(dir, 'long-ledger-again.csv');
  writeFileSync(whole, readFileSync(file));
  await page.evaluate(() => { delete document.body.dataset.loaded; });
  await page.click('#nav a[data-view="ledger"]');
  await page.setInputFiles('#file', whole);
  await page.waitForSelector('#map-go');
  await page.click('#map-go');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 120_000 });
  await page.waitForFunction(() => window.digitdrift.sha256);
  assert.equal(await page.evaluate(() => window.digitdrift.sha256), sha(readFileSync(file)));
  assert.deepEqual(networkRequests(requests), []);
  assert.deepEqual(errors, []);
});
