// Every view of the workspace in Chromium: reachable from the navigation and by keys 1–6, the
// browser's back button returns to the previous view, and the accessibility basics hold —
// every control has a name, every chart has a text name and a table alternative, focus moves in
// document order with a visible indicator, and text contrast meets WCAG 2.1 AA (SC 1.4.3: 4.5:1
// for body text, 3:1 for large text; relative luminance and contrast ratio as defined in the
// WCAG 2.1 glossary). A screenshot of each view is written to screenshots/ for a person to look at.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { launch, openPage, networkRequests, screenshot } from './browser.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

const VIEWS = ['ledger', 'suppliers', 'supplier', 'replay', 'trial', 'paper'];

async function visibleView(page) {
  return page.evaluate(() => [...document.querySelectorAll('[id^="view-"]')].filter((v) => !v.hidden).map((v) => v.id.slice(5)));
}

// WCAG 2.1 relative luminance and contrast ratio, computed in the page for every visible element
// that has its own text. The background is the first non-transparent ancestor background
// (the page uses flat colours, no background images under text).
function contrastAudit() {
  const parse = (c) => { const m = c.match(/rgba?\(([^)]+)\)/); if (!m) return null; const p = m[1].split(/[ ,/]+/).filter(Boolean).map(Number); return { r: p[0], g: p[1], b: p[2], a: p.length > 3 ? p[3] : 1 }; };
  const lin = (v) => { v /= 255; return v <= 0.03928 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4); };
  const lum = (c) => 0.2126 * lin(c.r) + 0.7152 * lin(c.g) + 0.0722 * lin(c.b);
  const blend = (fg, bg) => ({ r: fg.r * fg.a + bg.r * (1 - fg.a), g: fg.g * fg.a + bg.g * (1 - fg.a), b: fg.b * fg.a + bg.b * (1 - fg.a), a: 1 });
  const bgOf = (e) => {
    const stack = [];
    for (let n = e; n; n = n.parentElement) { const c = parse(getComputedStyle(n).backgroundColor); if (c && c.a > 0) { stack.push(c); if (c.a >= 1) break; } }
    let bg = { r: 255, g: 255, b: 255, a: 1 };
    for (let i = stack.length - 1; i >= 0; i--) bg = blend(stack[i], bg);
    return bg;
  };
  const bad = [];
  let checked = 0;
  for (const e of document.querySelectorAll('body *')) {
    if (!e.checkVisibility || !e.checkVisibility()) continue;
    if (['SCRIPT', 'STYLE', 'CANVAS', 'OPTION'].includes(e.tagName)) continue;
    const own = [...e.childNodes].some((n) => n.nodeType === 3 && n.textContent.trim());
    if (!own) continue;
    const s = getComputedStyle(e);
    const fg0 = parse(s.color); if (!fg0) continue;
    const bg = bgOf(e);
    const fg = blend(fg0, bg);
    const L1 = lum(fg), L2 = lum(bg);
    const ratio = (Math.max(L1, L2) + 0.05) / (Math.min(L1, L2) + 0.05);
    const px = parseFloat(s.fontSize), bold = Number(s.fontWeight) >= 700;
    const large = px >= 24 || (bold && px >= 18.66);
    const need = large ? 3 : 4.5;
    checked++;
    if (ratio + 1e-9 < need) bad.push(`${e.tagName}#${e.id}.${e.className}: "${e.textContent.trim().slice(0, 40)}" ${ratio.toFixed(2)} < ${need}`);
  }
  return { checked, bad };
}

// Every control in the visible view has an accessible name: a <label>, aria-label, or text.
function unnamedControls() {
  const out = [];
  for (const e of document.querySelectorAll('input, select, textarea, button')) {
    if (!e.checkVisibility || !e.checkVisibility()) continue;
    const named = (e.labels && e.labels.length && [...e.labels].some((l) => l.textContent.trim())) ||
      (e.getAttribute('aria-label') || '').trim() || (e.getAttribute('aria-labelledby') || '').trim() ||
      (e.tagName === 'BUTTON' && e.textContent.trim()) || (e.getAttribute('title') || '').trim();
    if (!named) out.push(e.outerHTML.slice(0, 80));
  }
  return out;
}

// Every visible chart has role=img, a text name, and a table with numbers in the same view.
function chartsWithoutAlternative() {
  const out = [];
  for (const c of document.querySelectorAll('canvas')) {
    if (!c.checkVisibility || !c.checkVisibility()) continue;
    const view = c.closest('[id^="view-"]');
    const named = c.getAttribute('role') === 'img' && (c.getAttribute('aria-label') || '').trim().length > 5;
    const table = view && view.querySelector('table');
    if (!named || !table) out.push(c.id + (named ? ' (no table in view)' : ' (no text name)'));
  }
  return out;
}

test('each view: navigation, keys, back button, names, table alternatives, contrast; no network', async () => {
  const { page, requests, errors } = await openPage(browser);
  // Before a ledger is open, the landing view must already pass the audit.
  let a = await page.evaluate(contrastAudit);
  assert.ok(a.checked > 10, `contrast audit looked at only ${a.checked} elements`);
  assert.deepEqual(a.bad, [], 'contrast below WCAG AA on the landing view');
  await page.click('#demo');
  await page.waitForSelector('body[data-loaded="yes"]', { timeout: 120_000 });
  assert.deepEqual(await visibleView(page), ['suppliers']);

  // Through the navigation links, in order; each view must become the only one shown.
  for (const v of VIEWS) {
    await page.click(`#nav a[data-view="${v}"]`);
    await page.waitForFunction((v) => !document.getElementById('view-' + v).hidden, v);
    assert.deepEqual(await visibleView(page), [v]);
    assert.equal(await page.$eval(`#nav a[data-view="${v}"]`, (x) => x.getAttribute('aria-current')), 'page');
    await page.waitForTimeout(300); // charts are drawn after the view is shown
    assert.deepEqual(await page.evaluate(unnamedControls), [], `unnamed controls in ${v}`);
    assert.deepEqual(await page.evaluate(chartsWithoutAlternative), [], `charts without a table alternative in ${v}`);
    a = await page.evaluate(contrastAudit);
    assert.deepEqual(a.bad, [], `contrast below WCAG AA in ${v}`);
    await screenshot(page, 'view-' + v);
  }
  // The back button walks the same path backwards.
  for (let i = VIEWS.length - 2; i >= 0; i--) {
    await page.goBack();
    await page.waitForFunction((v) => !document.getElementById('view-' + v).hidden, VIEWS[i]);
    assert.deepEqual(await visibleView(page), [VIEWS[i]], 'back button');
  }
  await page.goForward();
  await page.waitForFunction(() => !document.getElementById('view-suppliers').hidden);

  // Keys 1–6 switch views (not while typing in a field).
  await page.click('body', { position: { x: 2, y: 2 } });
  for (let i = 0; i < VIEWS.length; i++) {
    await page.keyboard.press(String(i + 1));
    await page.waitForFunction((v) => !document.getElementById('view-' + v).hidden, VIEWS[i]);
  }
  await page.keyboard.press('1');
  await page.waitForFunction(() => !document.getElementById('view-ledger').hidden);
  await page.click('#settings summary');
  await page.focus('#set-seed');
  await page.keyboard.press('2');
  await page.waitForTimeout(200);
  assert.deepEqual(await visibleView(page), ['ledger'], 'a digit typed into a field switched the view');

  // Focus order follows the document, and the focused element shows an outline or a ring.
  await page.goto(page.url().split('#')[0] + '#suppliers');
  await page.waitForFunction(() => !document.getElementById('view-suppliers').hidden);
  await page.evaluate(() => { document.activeElement && document.activeElement.blur(); window.scrollTo(0, 0); });
  const seen = [];
  for (let i = 0; i < 12; i++) {
    await page.keyboard.press('Tab');
    seen.push(await page.evaluate(() => {
      const e = document.activeElement;
      const all = [...document.querySelectorAll('*')];
      const s = getComputedStyle(e);
      const ring = (s.outlineStyle !== 'none' && parseFloat(s.outlineWidth) > 0) || (s.boxShadow && s.boxShadow !== 'none');
      return { pos: all.indexOf(e), tag: e.tagName, ring };
    }));
  }
  for (let i = 1; i < seen.length; i++) assert.ok(seen[i].pos > seen[i - 1].pos, `focus went backwards: ${JSON.stringify(seen)}`);
  assert.ok(seen.every((s) => s.ring), `focused element without a visible indicator: ${JSON.stringify(seen)}`);

  assert.deepEqual(networkRequests(requests), [], 'the page made network requests');
  assert.deepEqual(errors, []);
});

test('the contrast audit itself fails on low-contrast text', async () => {
  // Guard against an audit that cannot fail: light grey on white is about 1.6:1.
  const { page } = await openPage(browser, { url: 'data:text/html,<p style="color:%23ccc;background:%23fff">faint text</p><p>plain</p>' });
  const a = await page.evaluate(contrastAudit);
  assert.equal(a.checked, 2);
  assert.equal(a.bad.length, 1, JSON.stringify(a));
});
