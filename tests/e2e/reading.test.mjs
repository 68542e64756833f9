// A file of two segments or more is read by the page's Worker and its helper Worker together
// (core intake::split): parts read on their own are joined in file order. The ledger must be
// the one the native CLI reads in one pass: same row accounting (with the example rows), the
// same suppliers, invoices and calibrated numbers, and the file's SHA-256 is Node's. Test
// switches make the segments small (?test-segment), leave every part after the first to the
// helper (?test-reading=helper) and stop the helper after its first part
// (?test-helper-fails=parts), so that every way through is taken on small files.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { writeFileSync, mkdtempSync, readFileSync, existsSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { launch, openPage, networkRequests, root, pageUrl } from './browser.mjs';

const demo = resolve(root, 'demo-files', 'heathervale-vet-ledger.csv');
const cli = process.env.DIGITDRIFT_BIN || resolve(root, 'target', 'release', 'digitdrift');
const SEG = 262144;

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

const pick = (r) => ({
  rows: r.rows,
  suppliers: r.suppliers.map((s) => [s.name, s.invoices, s.amount_total, s.first_date, s.last_date, s.first_two.mc_p_value, s.verdict, s.invoices_needed]),
  whole: [r.whole_file.invoices, r.whole_file.amount_total],
  credits: [r.credit_notes.invoices, r.credit_notes.amount_total],
});

async function screenInPage(query, file) {
  const { page, requests, errors } = await openPage(browser, { url: pageUrl + query });
  if (file) {
    await page.click('#nav a[data-view="ledger"]');
    await page.setInputFiles('#file', file);
    await page.waitForSelector('#map-go');
    await page.click('#map-go');
  } else {
    await page.click('#demo');
  }
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 180_000 });
  await page.waitForFunction(() => window.digitdrift.sha256); // computed after the results are shown
  const got = await page.evaluate(() => ({ report: window.digitdrift.report, reading: window.digitdrift.reading, sha256: window.digitdrift.sha256 }));
  assert.deepEqual(networkRequests(requests), []);
  assert.deepEqual(errors, []);
  await page.context().close();
  return got;
}

const sha = (path) => createHash('sha256').update(readFileSync(path)).digest('hex');
const native = (path) => JSON.parse(execFileSync(cli, ['screen', path, '--format', 'json'], { maxBuffer: 1 << 30 }).toString());

test('the demo ledger read in segments by both Workers, by the helper alone, and with the helper stopping midway: the CLI\'s ledger and numbers', { skip: !existsSync(cli) && 'release CLI not built' }, async () => {
  const want = pick(native(demo));
  const segments = Math.ceil(readFileSync(demo).length / SEG);
  for (const [query, check] of [
    [`?test-segment=${SEG}`, (r) => assert.ok(r.direct + r.ownParts + r.helperParts >= 2)],
    [`?test-segment=${SEG}&test-reading=helper`, (r) => assert.equal(r.helperParts, segments - 1)],
    [`?test-segment=${SEG}&test-reading=helper&test-helper-fails=parts`, (r) => { assert.ok(r.helperParts >= 1, JSON.stringify(r)); assert.ok(r.direct + r.ownParts >= 1, JSON.stringify(r)); }],
  ]) {
    const got = await screenInPage(query);
    assert.equal(got.reading.segments, segments, query);
    assert.equal(got.reading.inTurnFrom, null, query);
    check(got.reading);
    assert.deepEqual(pick(got.report), want, query);
    assert.equal(got.sha256, sha(demo), query);
  }
});

test('a cut inside a quoted cell: the rest of the file is read in turn, with the CLI\'s ledger', { skip: !existsSync(cli) && 'release CLI not built' }, async () => {
  // An invented ledger with totals rows, credit notes and blank lines, and one supplier name
  // holding a line break exactly where the fourth segment's search for a line start begins.
  const dir = mkdtempSync(join(tmpdir(), 'dd-'));
  const file = join(dir, 'quoted-break.csv');
  let text = 'Supplier,Invoice No,Date,Amount\n';
  let x = 5;
  const rnd = () => { x = (x * 48271) % 2147483647; return x / 2147483647; };
  let i = 0;
  const row = () => {
    i++;
    const name = `Ashgrove Supply ${i % 23}`;
    if (i % 997 === 0) return 'Total,,,1000.00\n';
    if (i % 501 === 0) return '\n';
    const amount = Math.pow(10, 1 + 3 * rnd()).toFixed(2);
    return `${name},A${i},2024-0${1 + (i % 9)}-1${i % 10},${i % 89 === 0 ? '-' : ''}${amount}\n`;
  };
  while (text.length < 3 * SEG - 200) text += row();
  // the quoted name's line break at exactly 3 * SEG
  text += `"Ashgrove${' '.repeat(3 * SEG - text.length - 9)}\n(branch)",Q1,2024-02-02,345.60\n`;
  assert.equal(text.indexOf('\n(branch)'), 3 * SEG);
  while (text.length < 5 * SEG) text += row();
  writeFileSync(file, text);
  const want = pick(native(file));
  const got = await screenInPage(`?test-segment=${SEG}&test-reading=helper`, file);
  assert.equal(got.reading.inTurnFrom, 3, JSON.stringify(got.reading));
  assert.equal(got.reading.helperParts, 2, JSON.stringify(got.reading)); // parts 1 and 2 (its end open) joined; part 3 could not be
  assert.deepEqual(pick(got.report), want);
  assert.equal(got.sha256, sha(file));
});
