// Builds ONE self-contained offline page: dist/digitdrift.html, with the wasm module, the
// worker, the demo ledger (gzip) and all scripts inlined, under a Content-Security-Policy that
// forbids every network connection. Usage:
//   node web/build.mjs --wasm-dir build/wasm --demo demo-files/X.csv --out dist/digitdrift.html
import { readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { gzipSync } from 'node:zlib';
import { dirname, basename, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const args = Object.fromEntries(process.argv.slice(2).reduce((acc, a, i, all) => {
  if (a.startsWith('--')) acc.push([a.slice(2), all[i + 1]]);
  return acc;
}, []));
const wasmDir = args['wasm-dir'] || 'build/wasm';
const demo = args['demo'];
const out = args['out'] || 'dist/digitdrift.html';

const read = (p) => readFileSync(p, 'utf8');
const glue = read(join(wasmDir, 'digitdrift.js'));
const wasm = readFileSync(join(wasmDir, 'digitdrift_bg.wasm'));
const style = read(join(here, 'style.css'));
const app = read(join(here, 'app.js'));
const worker = read(join(here, 'worker.js'));
let template = read(join(here, 'index.html'));

for (const [name, text] of [['glue', glue], ['app', app], ['worker', worker], ['style', style]]) {
  if (/<\/script/i.test(text) || /<\/style/i.test(text)) throw new Error(`${name} contains a closing tag`);
}
const demoBytes = demo ? readFileSync(demo) : Buffer.alloc(0);
const demoGz = gzipSync(demoBytes, { level: 9 }).toString('base64');
const sha = (t) => `'sha256-${createHash('sha256').update(t, 'utf8').digest('base64')}'`;

const csp = [
  "default-src 'none'",
  `script-src ${sha(glue)} ${sha(app)} 'wasm-unsafe-eval'`,
  'worker-src blob:',
  "connect-src 'none'",
  "style-src 'unsafe-inline'", // styles cannot reach the network here: img-src and font-src allow no URL fetch
  'img-src data: blob:',
  "base-uri 'none'",
  "form-action 'none'",
].join('; ');

const fill = { CSP: csp, STYLE: style, GLUE: glue, APP: app, WORKER: worker,
  WASM_B64: wasm.toString('base64'), DEMO_GZ_B64: demoGz, DEMO_NAME: demo ? basename(demo) : '' };
// Replace placeholders in one pass so no inlined text is scanned for placeholders again.
const html = template.replace(/\{\{([A-Z0-9_]+)\}\}/g, (m, k) => {
  if (!(k in fill)) throw new Error(`unknown placeholder ${m}`);
  return fill[k];
});
mkdirSync(dirname(out), { recursive: true });
writeFileSync(out, html);
console.log(`wrote ${out}: ${(html.length / 1e6).toFixed(2)} MB (wasm ${(wasm.length / 1e6).toFixed(2)} MB, demo ${(demoBytes.length / 1e6).toFixed(2)} MB -> gzip ${(demoGz.length * 0.75 / 1e6).toFixed(2)} MB)`);
