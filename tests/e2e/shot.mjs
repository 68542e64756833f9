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
console.log('errors', errors);
await b.close();
