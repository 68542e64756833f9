// Browser benchmark for the detection trial (issue 7): opens dist/digitdrift.html in headless
// Chromium, loads the embedded demo ledger, and runs the trial view with its defaults except the
// replications and seed given (default 100 replications, seed 1), timing Run → results shown.
// In the same run it times the release CLI on the same trial (`digitdrift trial DEMO --pattern even
// --share 0.2 --replications R --seed S`, the page's defaults), which also reads and screens the
// ledger first, and checks that both give the same sensitivity at 95 %.
// Usage: cargo build --release -p digitdrift && bash scripts/build-web.sh &&
//        node bench/trial.mjs [REPLICATIONS] [SEED]
import { launch, openPage } from '../tests/e2e/browser.mjs';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { dirname, join } from 'node:path';

const reps = Number(process.argv[2] || 100);
const seed = Number(process.argv[3] || 1);
const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const bin = process.env.DIGITDRIFT_BIN || join(root, process.env.CARGO_TARGET_DIR || 'target', 'release', 'digitdrift');
const n0 = process.hrtime.bigint();
const cli = spawnSync(bin, ['trial', join(root, 'demo-files/heathervale-vet-ledger.csv'), '--pattern', 'even', '--share', '0.2',
  '--replications', String(reps), '--seed', String(seed), '--format', 'json'], { encoding: 'utf8', maxBuffer: 1 << 28 });
const nativeSeconds = Number(process.hrtime.bigint() - n0) / 1e9;
if (cli.status !== 0) throw new Error(`native trial failed: ${cli.stderr}`);
const nativeMain = JSON.parse(cli.stdout).levels.find((l) => Math.abs(l.confidence - 0.95) < 1e-9);
const browser = await launch();
const { page, context } = await openPage(browser);
await page.click('#demo');
await page.waitForSelector('body[data-loaded="yes"]', { timeout: 600_000 });
await page.click('#nav a[data-view="trial"]');
await page.waitForSelector('#trial-run');
await page.fill('#trial-reps', String(reps));
await page.fill('#trial-seed', String(seed));
const t0 = Date.now();
await page.click('#trial-run');
await page.waitForSelector('#trial-body[data-state="done"]', { timeout: 3600_000 });
const wall = (Date.now() - t0) / 1000;
const rep = await page.evaluate(() => window.digitdrift.trial.report);
const main = rep.levels.find((l) => Math.abs(l.confidence - 0.95) < 1e-9);
console.log(JSON.stringify({ replications: rep.parameters.replications, pattern: rep.parameters.pattern, share: rep.parameters.share, seed: rep.parameters.seed, browser_seconds: wall, native_cli_seconds_incl_screen: nativeSeconds, browser_over_native: wall / nativeSeconds, sensitivity_95: main?.sensitivity, native_sensitivity_95: nativeMain?.sensitivity, same: main?.sensitivity === nativeMain?.sensitivity }));
await context.close();
await browser.close();
