// Shared helpers: launch Debian Chromium headless, open the one-file page from file://, and
// record every request the page or its workers make.
import { chromium } from 'playwright-core';
import { pathToFileURL, fileURLToPath } from 'node:url';
import { resolve, dirname } from 'node:path';
import { mkdirSync } from 'node:fs';

const here = dirname(fileURLToPath(import.meta.url));
export const root = resolve(here, '..', '..');
export const pageUrl = pathToFileURL(resolve(root, 'dist', 'digitdrift.html')).href;
export const shotDir = resolve(here, 'screenshots');

export async function launch() {
  return chromium.launch({
    executablePath: process.env.CHROMIUM || '/usr/bin/chromium',
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update',
      '--disable-sync', '--no-first-run', '--disable-quic'],
  });
}

/** Opens the page; returns {page, requests, errors}. Requests other than file: and blob: are network use. */
export async function openPage(browser, opts = {}) {
  const context = await browser.newContext({ viewport: opts.viewport || { width: 1400, height: 950 }, acceptDownloads: true });
  const requests = [];
  const errors = [];
  context.on('request', (r) => requests.push(r.url()));
  const page = await context.newPage();
  page.on('pageerror', (e) => errors.push(String(e)));
  page.on('console', (m) => { if (m.type() === 'error') errors.push(m.text()); });
  page.on('worker', (w) => w.on('console', (m) => { if (m.type() === 'error') errors.push('worker: ' + m.text()); }));
  await page.goto(opts.url || pageUrl);
  return { page, context, requests, errors };
}

export function networkRequests(requests) {
  return requests.filter((u) => !(u.startsWith('file:') || u.startsWith('blob:')));
}

export async function screenshot(page, name) {
  mkdirSync(shotDir, { recursive: true });
  await page.screenshot({ path: resolve(shotDir, name + '.png'), fullPage: true });
}

/** Counts non-white pixels of a canvas (proves something was drawn). */
export async function drawnPixels(page, selector) {
  return page.$eval(selector, (c) => {
    const ctx = c.getContext('2d');
    const d = ctx.getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] < 245 || d[i + 1] < 245 || d[i + 2] < 245) n++;
    return n;
  });
}
