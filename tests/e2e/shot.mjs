// Developer helper: screenshots of each view with the demo ledger (node tests/e2e/shot.mjs).
import { launch, openPage, screenshot } from './browser.mjs';
const b = await launch();
const { page, errors } = await openPage(b);
await page.click('#demo');
await page.waitForSelector('body[data-loaded="yes"]', { timeout: 120000 });
await screenshot(page, 'view-suppliers');
await page.click('#open-file');
await page.waitForSelector('#chart-first_digit[data-drawn="yes"]', { timeout: 30000 });
await screenshot(page, 'view-supplier');
// Trial view: 100 replications over the demo ledger (the time printed is the page's own figure
// for the speed target: under 10 s in Chromium, preparation included).
await page.click('#nav a[data-view="trial"]');
await page.waitForSelector('#trial-run');
await page.fill('#trial-share', '20');
await page.fill('#trial-from', '2024-01-01');
await page.fill('#trial-reps', '100');
await page.click('#trial-run');
await page.waitForSelector('#trial-body[data-state="done"]', { timeout: 300000 });
console.log('trial: 100 replications in', ((await page.evaluate(() => window.digitdrift.trial.ms)) / 1000).toFixed(2), 's');
await screenshot(page, 'view-trial');
console.log('errors', errors);
await b.close();
