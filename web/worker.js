// digitdrift Worker: all parsing and statistics run here, off the page's thread.
// `wasm_bindgen` (the no-modules glue) is prepended to this text by the page.
'use strict';
const CHUNK = 1 << 20; // 1 MiB slices: memory stays bounded whatever the file size.
let session = null;
let cancelled = false;
let ready = null;

function post(msg) { self.postMessage(msg); }

async function demoBlob(b64) {
  const bin = atob(b64);
  const bytes = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);
  const stream = new Blob([bytes]).stream().pipeThrough(new DecompressionStream('gzip'));
  const parts = [];
  const reader = stream.getReader();
  for (;;) { const { done, value } = await reader.read(); if (done) break; parts.push(value); }
  return new Blob(parts, { type: 'text/csv' });
}

// The blob's 1 MiB slices in order; the next slice is already being read while the caller
// works on the current one (at most two slices in memory).
async function* slices(blob) {
  const read = (at) => blob.slice(at, Math.min(blob.size, at + CHUNK)).arrayBuffer();
  let pending = blob.size > 0 ? read(0) : null;
  for (let at = 0; at < blob.size;) {
    const buf = new Uint8Array(await pending);
    at += buf.length;
    pending = at < blob.size ? read(at) : null;
    yield { buf, end: at };
  }
}

// The same slices read one after the other (no read-ahead): kept for the benchmark's
// side-by-side figure only.
async function* slicesInTurn(blob) {
  for (let at = 0; at < blob.size;) {
    const buf = new Uint8Array(await blob.slice(at, Math.min(blob.size, at + CHUNK)).arrayBuffer());
    at += buf.length;
    yield { buf, end: at };
  }
}

async function openLedger(id, blob, name, options, settings) {
  cancelled = false;
  session = new wasm_bindgen.Session(options || {});
  const total = blob.size;
  let done = 0;
  const t0 = performance.now();
  for await (const { buf, end } of slices(blob)) {
    if (cancelled) { session.free(); session = null; post({ id, ok: false, cancelled: true }); return; }
    session.feed(buf);
    done = end;
    post({ progress: true, id, done, total, rows: session.rowsSoFar() });
  }
  const intake = session.finish();
  if (!intake.ok) { post({ id, ok: true, value: { name, intake } }); return; }
  post({ progress: true, id, done, total, rows: intake.rows.read, stage: 'screening' });
  const screen = session.screen(settings || {});
  const ms = performance.now() - t0;
  post({ id, ok: true, value: { name, size: total, intake, screen, ms, sha256: session.fingerprint() } });
}

// A zero-delay yield to the event loop, so a Cancel message gets in between replications.
const yieldChannel = new MessageChannel();
function yieldNow() { return new Promise((r) => { yieldChannel.port1.onmessage = () => r(); yieldChannel.port2.postMessage(0); }); }

// Detection trial: one replication per call into the core, progress after each, Cancel between.
async function runTrial(id, settings) {
  cancelled = false;
  const t0 = performance.now();
  const info = session.trialStart(settings || {});
  const total = info.replications;
  let last = 0;
  post({ progress: true, trial: true, id, done: 0, total });
  for (let r = 0; r < total; r++) {
    if (cancelled) { session.trialStop(); post({ id, ok: false, cancelled: true }); return; }
    session.trialStep();
    const now = performance.now();
    if (now - last > 40 || r + 1 === total) { last = now; post({ progress: true, trial: true, id, done: r + 1, total, ms: now - t0 }); }
    await yieldNow();
  }
  const report = session.trialReport();
  post({ id, ok: true, value: { report, ms: performance.now() - t0, pool: info.pool } });
}

const handlers = {
  async preview({ id, file, options }) {
    const head = new Uint8Array(await file.slice(0, 65536).arrayBuffer());
    post({ id, ok: true, value: wasm_bindgen.preview(head, options || {}) });
  },
  async open({ id, file, demo, options, settings }) {
    if (demo) {
      const blob = await demoBlob(demo.b64);
      return openLedger(id, blob, demo.name, options, settings);
    }
    const head = new Uint8Array(await file.slice(0, 4096).arrayBuffer());
    if (wasm_bindgen.preview(head, {}).counts) {
      // A digit-count table from an SQL engine: small by nature, read whole.
      session = new wasm_bindgen.Session({});
      const bytes = new Uint8Array(await file.arrayBuffer());
      const screen = session.screenCounts(bytes, settings || {});
      if (screen.error) { post({ id, ok: true, value: { name: file.name, intake: { ok: false, message: screen.error, error: { kind: 'counts' } } } }); return; }
      post({ id, ok: true, value: { name: file.name, size: file.size, intake: { ok: true, rows: screen.rows }, screen, ms: 0, sha256: session.fingerprint() } });
      return;
    }
    return openLedger(id, file, file.name, options, settings);
  },
  async rescreen({ id, settings }) { post({ id, ok: true, value: session.screen(settings || {}) }); },
  async exportSuppliers({ id, fileName }) { post({ id, ok: true, value: session.suppliersCsv(fileName) }); },
  async exportPull({ id, items, fileName }) { post({ id, ok: true, value: session.pullCsv(items, fileName) }); },
  async exportTrial({ id, format, fileName }) { post({ id, ok: true, value: session.trialExport(format, fileName) }); },
  async watch({ id, settings }) { post({ id, ok: true, value: session.watch(settings || {}) }); },
  async trial({ id, settings }) { return runTrial(id, settings); },
  async detail({ id, supplier }) { post({ id, ok: true, value: session.supplierDetail(supplier) }); },
  async members({ id, supplier, test, bin }) { post({ id, ok: true, value: session.binMembers(supplier, test, bin) }); },
  // Benchmark only (bench/browser.mjs --intake-only): intake alone through the same 1 MiB
  // File.slice chunks as openLedger; no fingerprint, digit tests or calibration.
  async benchIntake({ id, file, readAhead }) {
    const t0 = performance.now();
    const it = new wasm_bindgen.BenchIntake();
    let feedMs = 0;
    for await (const { buf } of (readAhead ? slices : slicesInTurn)(file)) {
      const f0 = performance.now();
      it.feed(buf);
      feedMs += performance.now() - f0;
    }
    const f0 = performance.now();
    const [read, analysed] = it.finish();
    feedMs += performance.now() - f0;
    it.free();
    post({ id, ok: true, value: { ms: performance.now() - t0, feedMs, read, analysed } });
  },
  async invoicesAt({ id, supplier, indices }) { post({ id, ok: true, value: session.invoicesAt(supplier, new Uint32Array(indices)) }); },
};

self.onmessage = async (ev) => {
  const m = ev.data;
  if (m.cmd === 'init') {
    ready = wasm_bindgen({ module_or_path: m.wasm }).then(() => post({ ready: true, version: wasm_bindgen.version() }));
    return;
  }
  if (m.cmd === 'cancel') { cancelled = true; return; }
  try {
    await ready;
    await handlers[m.cmd](m);
  } catch (e) {
    post({ id: m.id, ok: false, error: String(e && e.message ? e.message : e) });
  }
};
