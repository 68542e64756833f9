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

// The blob's bytes in chunks of 1 MiB, in order, the next one already being read while the
// caller works on the current one (valid until the caller asks for the next): read from the
// blob's byte stream into two buffers used in turn (no new buffer per chunk, so no garbage that
// the tab holds until a collection), or by 1 MiB File.slice reads where a byte stream is not
// offered.
async function* slices(blob) {
  let reader = null;
  try { reader = blob.stream().getReader({ mode: 'byob' }); } catch (e) { reader = null; }
  if (!reader) { yield* sliceReads(blob); return; }
  try {
    let spare = new ArrayBuffer(CHUNK);
    let pending = fill(reader, new ArrayBuffer(CHUNK));
    let at = 0;
    for (;;) {
      const { view, done, lost } = await pending;
      if (lost) throw new Error('the file could not be read to its end');
      if (!view.byteLength) break;
      pending = done ? Promise.resolve({ view: new Uint8Array(0), done: true }) : fill(reader, spare);
      at += view.byteLength;
      yield { buf: view, end: at };
      spare = view.buffer;
    }
  } finally {
    reader.cancel().catch(() => {});
  }
}

// Fill `buffer` from a BYOB reader: {view of the bytes read, done: the stream ended}.
async function fill(reader, buffer) {
  let off = 0;
  while (off < buffer.byteLength) {
    const { done, value } = await reader.read(new Uint8Array(buffer, off, buffer.byteLength - off));
    if (!value) return { view: new Uint8Array(0), done: true, lost: off > 0 }; // only after a cancel: the bytes read went with the buffer
    buffer = value.buffer; // the buffer comes back with the bytes
    if (done) return { view: new Uint8Array(buffer, 0, off), done: true };
    off += value.byteLength;
  }
  return { view: new Uint8Array(buffer, 0, off), done: false };
}

// The blob's 1 MiB slices by File.slice reads, the next already being read (at most two
// slices in memory).
async function* sliceReads(blob) {
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
  // this open's own session: a later open replaces the global one, and then this one stops
  const s = new wasm_bindgen.Session(options || {});
  session = s;
  const drop = () => { s.free(); if (session === s) session = null; post({ id, ok: false, cancelled: true }); };
  if (!keepTables) s.keepTables(false);
  const total = blob.size;
  s.setSizeHint(total); // the invoice store is reserved once, not grown by copies
  let done = 0;
  const t0 = performance.now();
  // While this Worker reads the file, the helper simulates the null tables almost every screen
  // reads (the power-curve checkpoints): kept for this ledger's screens.
  const likely = helperWanted && keepTables && helper && helper.ready ? wasm_bindgen.likelyTables(settings || {}) : null;
  const ahead = likely && likely.ns.length ? helperTables(helper, { theirs: likely.ns, sims: likely.sims, seed: likely.seed }) : null;
  // The file's SHA-256 (its fingerprint) is not computed while it is read: the helper reads
  // the file again once the screen is shown (see fingerprintLater).
  const hashLater = helperWanted && helper && helper.ready;
  if (hashLater) s.hashElsewhere();
  let shown = 0;
  for await (const { buf, end } of slices(blob)) {
    if (cancelled || session !== s) { drop(); return; }
    s.feed(buf);
    done = end;
    // progress at most every 50 ms: the page redraws its bar on each, on the same two cores
    const now = performance.now();
    if (now - shown >= 50) { shown = now; post({ progress: true, id, done, total, rows: s.rowsSoFar() }); }
  }
  const intake = s.finish();
  const intakeMs = performance.now() - t0;
  if (ahead) {
    const t = await ahead;
    if (t) s.holdTables(new Float64Array(likely.ns), t, likely.sims, likely.seed);
  }
  if (cancelled || session !== s) { drop(); return; }
  if (!intake.ok) { post({ id, ok: true, value: { name, intake } }); return; }
  post({ progress: true, id, done, total, rows: intake.rows.read, stage: 'screening' });
  const res = await screenSplit(settings || {}, true);
  if (!res) { drop(); return; }
  res.timing.intakeMs = intakeMs;
  const ms = performance.now() - t0;
  post({ id, ok: true, value: { name, size: total, intake, screen: res.screen, workers: res.workers, powerWorkers: res.powerWorkers, timing: res.timing, ms, sha256: hashLater ? null : s.fingerprint(), wasmMemoryBytes: wasm_bindgen.wasmMemoryBytes() } });
  if (hashLater) fingerprintLater(id, blob);
}

// The file's SHA-256, computed by the helper Worker from the File itself while the page shows
// the results (off the screen's path; a second reader of the File while this Worker read it
// slowed both), then posted as `{fingerprint, id}`. If the helper fails, this Worker reads the
// file again and hashes it. Exports wait for it (`fingerprintDone`).
let fingerprintDone = Promise.resolve();
function fingerprintLater(id, blob) {
  const s = session;
  const h = helper;
  fingerprintDone = (h ? helperJob(h, { cmd: 'hashFile', blob }) : Promise.resolve(null)).then(async (hex) => {
    if (session !== s) return; // another ledger was opened meanwhile
    if (hex) s.setFingerprint(hex);
    else for await (const { buf } of slices(blob)) s.hashPart(buf);
    if (session === s) post({ fingerprint: s.fingerprint(), id });
  });
}

// ---------- a second Worker for the calibration ----------
// A helper Worker (this same script, started from this Worker's own blob: URL, sharing its
// compiled wasm module) simulates null tables while the file is read, shares a screen's null
// tables and power work with this Worker (see helperCalibrate), and hashes the file once the
// results are shown. Each table depends only on (seed, sims, size) and each power result on
// the options, the tables and the supplier, so the numbers are those of one Worker. Jobs carry
// an id, so an answer always reaches the job that asked, even when an earlier job was left
// behind (a Cancel while the file was read). If the helper cannot start or fails, this Worker
// does the missing work itself: the same numbers, later.
let isHelper = false;
let helperFailsIn = null; // tests only: 'tables' or 'powers' (see app.js)
// in the helper, per calibrate job: where to stop (tablesStop, powersStop), and the waiter for
// the other Worker's tables (workerTables)
const tableStops = new Map();
const powerStops = new Map();
const workerTablesIn = new Map();
let wasmModule = null;
let helper = null; // { worker, ready: boolean, started: Promise<boolean>, jobs: Map(id -> resolver) }
let jobIds = 0;
let onCancel = null;
let helperUrl = null;

function startHelper() {
  if (helper || isHelper || !wasmModule || !helperUrl) return helper;
  let w;
  try { w = new Worker(helperUrl); } catch (e) { return null; }
  const h = { worker: w, ready: false, jobs: new Map(), shares: new Map() };
  const fail = () => {
    if (helper === h) helper = null;
    w.terminate();
    for (const j of h.jobs.values()) j(null);
    h.jobs.clear();
    h.shares.clear();
    return false;
  };
  h.started = new Promise((resolve) => {
    w.onmessage = (ev) => {
      const m = ev.data;
      if ('ready' in m) { h.ready = m.ready; resolve(m.ready || fail()); return; }
      if (m.share) { const f = h.shares.get(m.job); if (f) f(m); return; }
      if (m.ms !== undefined) h.lastMs = m.ms;
      const j = h.jobs.get(m.job);
      h.jobs.delete(m.job);
      h.shares.delete(m.job);
      if (j) j(m.ok ? (m.result || m.tables || m.powers) : null);
      if (!m.ok) fail();
    };
    w.onerror = (ev) => { ev.preventDefault(); resolve(fail()); };
    w.onmessageerror = () => resolve(fail());
  });
  try { w.postMessage({ cmd: 'init', module: wasmModule, helper: true }); } catch (e) { fail(); return null; }
  helper = h;
  return h;
}

function stopHelper() {
  if (!helper) return;
  const h = helper;
  helper = null;
  h.worker.terminate();
  for (const j of h.jobs.values()) j(null);
  h.jobs.clear();
  h.shares.clear();
}

// A job for the helper: its answer (tables, power results, a fingerprint), or null (helper
// failed or gone). When the helper is ready the message is posted at once, before this Worker goes on
// with its own long synchronous work (an await first would hold the message back until then).
function helperJob(h, msg, transfer) {
  const send = () => new Promise((resolve) => {
    const job = ++jobIds;
    h.jobs.set(job, resolve);
    h.worker.postMessage(Object.assign({ job }, msg), transfer || []);
  });
  if (h.ready && helper === h) return send();
  return h.started.then((ok) => (ok && helper === h ? send() : null));
}
// `p`, or null as soon as Cancel comes.
function untilCancel(p) {
  return Promise.race([p, new Promise((r) => { onCancel = () => r(null); })]).finally(() => { onCancel = null; });
}
const helperTables = (h, plan) => helperJob(h, { cmd: 'tables', ns: plan.theirs, sims: plan.sims, seed: plan.seed });
// A screen's calibration shared with the helper by stealing (screenPlan(settings, true)):
// the helper takes the table items (`plan.items`) from the front, one per call, then the
// suppliers' power work (`plan.share`, costliest first) POWER_CHUNK at a time; it tells what it
// has claimed (`onShare({share: 'tclaimed' | 'pclaimed', at})`), posts each result
// (`{share: 'tables', item, ns, tables}`, `{share: 'powers', from, powers}`) and stops where it
// is told (`tablesStop`, `powersStop`). If it stopped short of the last table item, it waits for
// this Worker's tables (`workerTables`) before the power work. Returns {job, done} (done: the
// helper's last answer, null if it failed), or null.
const POWER_CHUNK = 4;
const INPUT_WIDTH = 92; // a supplier's flat calibration input: amount min, max, 90 counts
function helperCalibrate(h, plan, onShare) {
  if (!(h.ready && helper === h)) return null;
  const job = ++jobIds;
  const done = new Promise((resolve) => { h.jobs.set(job, resolve); });
  h.shares.set(job, onShare);
  h.worker.postMessage({ cmd: 'calibrate', job, items: plan.items, sims: plan.sims, seed: plan.seed, options: plan.share.options, inputs: plan.share.inputs, chunk: POWER_CHUNK }, [plan.share.inputs.buffer]);
  return { job, done };
}
const helperPowers = (h, share) => helperJob(h, { cmd: 'power', options: share.options, ns: share.ns, tables: share.tables, inputs: share.inputs },
  [share.ns.buffer, share.tables.buffer, share.inputs.buffer]);

// Screen with the null tables shared by this Worker and the helper, then the power work
// (power against wholly fabricated amounts, power curves) shared the same way (by stealing,
// see helperCalibrate; in fixed shares for the benchmark's calibration-alone runs or a helper
// not ready yet). Returns {screen, workers, timing} or, when `cancellable` and Cancel came,
// null. Without a helper (or when it fails) this Worker does what is left: the same numbers.
let helperWanted = true;
let keepTables = true;
let calibrationOnly = false; // benchmark: nothing but calibration while the helper does power work
async function screenSplit(settings, cancellable) {
  const t0 = performance.now();
  // A Cancel, or a later open that replaced this screen's session (its `cancelled = false` can
  // come before this screen looks again), ends this screen. After a Cancel the helper is
  // replaced (it stops at once); for a later open it is kept, told to drop this screen's job.
  const s = session;
  const gone = () => session !== s || (cancellable && cancelled);
  // The helper starts on the calibration (table items, then the suppliers' power work, from the
  // quick pass) while the batteries run here, and this Worker joins it from the other end; the
  // benchmark's calibration-alone runs split the tables and the power work in fixed shares.
  const together = helperWanted && !calibrationOnly && helper && helper.ready;
  const plan = s.screenPlan(settings, !!together);
  const h = plan.theirs.length && helperWanted ? startHelper() : null;
  let job = null;
  const stop = () => {
    s.screenAbort();
    if (job && session !== s && helper === h) {
      h.shares.delete(job.job);
      h.worker.postMessage({ cmd: 'tablesStop', job: job.job, at: 0 });
      h.worker.postMessage({ cmd: 'powersStop', job: job.job, at: 0 });
      h.worker.postMessage({ cmd: 'workerTables', job: job.job, ns: [], tables: new Float64Array(0), sims: plan.sims, seed: plan.seed });
    } else {
      stopHelper();
      if (helperWanted) startHelper();
    }
    return null;
  };
  let tClaimed = 0;
  let pClaimed = 0;
  const arrived = new Set(); // the helper's table items in the calibrator here
  const chunks = [];
  let tablesIn = null; // resolves when the helper's items [0, tablesWanted) are all here
  let tablesWanted = Infinity;
  const check = () => { if (tablesIn && [...Array(tablesWanted).keys()].every((k) => arrived.has(k))) { const r = tablesIn; tablesIn = null; r(true); } };
  job = h && plan.share ? helperCalibrate(h, plan, (m) => {
    if (helperFailsIn && m.share === helperFailsIn && helper === h) { stopHelper(); return; } // tests only
    if (m.share === 'tclaimed') tClaimed = Math.max(tClaimed, m.at);
    else if (m.share === 'pclaimed') pClaimed = Math.max(pClaimed, m.at);
    else if (m.share === 'tables') { s.insertTables(m.ns, m.tables); arrived.add(m.item); check(); }
    else chunks.push(m);
  }) : null;
  if (job) {
    // the helper: table items, then the power work, from the front; here: the batteries,
    // then table items and power work from the back, until the two meet (each phase)
    const items = plan.items;
    const count = plan.share.count;
    s.screenBatteries();
    const t1 = performance.now();
    s.screenWhole(); // the whole file's battery too, while the helper works
    const tw = performance.now();
    await yieldNow(); // the helper's news so far
    let tBack = items.length;
    while (tBack - 1 >= tClaimed) {
      tBack--;
      h.worker.postMessage({ cmd: 'tablesStop', job: job.job, at: tBack });
      s.prepareTables(items[tBack]);
      await yieldNow();
      if (gone()) return stop();
    }
    const mine = items.slice(tBack).flat();
    if (tBack < items.length && helper === h) {
      const flat = s.tablesFlat(mine);
      h.worker.postMessage({ cmd: 'workerTables', job: job.job, ns: mine, tables: flat, sims: plan.sims, seed: plan.seed }, [flat.buffer]);
    }
    // the helper's items [0, tBack) (it may have done some of the last ones here too)
    tablesWanted = tBack;
    const all = await untilCancel(Promise.race([new Promise((r) => { tablesIn = r; check(); }), job.done.then(() => false)]));
    if (gone()) return stop();
    let helped = false;
    const tt = performance.now();
    let back = count;
    if (!all) {
      // the helper failed: what is missing is simulated here, the same numbers later
      stopHelper();
      s.prepareTables(plan.theirs);
    } else {
      while (back - 1 >= pClaimed) {
        back--;
        h.worker.postMessage({ cmd: 'powersStop', job: job.job, at: back });
        s.powerQuick(back);
        await yieldNow(); // the helper's claims come in between
        if (gone()) return stop();
      }
      helped = !!(await untilCancel(job.done));
      if (gone()) return stop();
    }
    // every chunk the helper finished goes in (after a failure too); screenFinish does the rest
    for (const m of chunks) s.insertQuickPowersAt(m.from, m.powers);
    const t3 = performance.now();
    const screen = s.screenFinish(); // JSON text, parsed by the page: quicker than objects made in wasm and cloned
    const t4 = performance.now();
    return { screen, workers: all && arrived.size ? 2 : 1, powerWorkers: helped && chunks.length ? 2 : 1,
      timing: { batteries: t1 - t0, wholeMs: tw - t1, tables: tt - tw, power: t3 - tt, finish: t4 - t3, theirs: plan.theirs.length, tablesHere: items.length - tBack,
        mine: count - back, powerTheirs: helped ? back : 0, helperPowerMs: h.lastMs, planMs: 0 } };
  }
  const theirs = h ? helperTables(h, plan) : null; // the helper simulates while the batteries run here
  s.screenBatteries();
  const t1 = performance.now();
  const simulate = async (ns) => {
    for (const n of ns) {
      s.prepareTables([n]);
      await yieldNow(); // lets the helper's messages (and a Cancel) in between tables
      if (gone()) return false;
    }
    return true;
  };
  if (!(await simulate(plan.mine))) return stop();
  let tables = null;
  if (theirs && h.ready) {
    // waiting for the helper (already working on its share) beats simulating its share again
    tables = await untilCancel(theirs);
    if (gone()) return stop();
  } else if (h) {
    stopHelper(); // not started in time: its share is simulated here; a fresh one next time
  }
  if (tables) s.insertTables(plan.theirs, tables);
  else if (!(await simulate(plan.theirs))) return stop();
  const t2 = performance.now();
  // Power work: most suppliers to the helper (with the tables it lacks), the rest here, a few
  // per call so that a Cancel gets in. Every result depends only on the options, the tables and
  // the supplier: the same numbers as one Worker.
  const pp = s.powerPlan(new Float64Array(plan.theirs), !!(tables && helper === h && h.ready), calibrationOnly ? 2 : undefined);
  const tp = performance.now();
  const powers = pp.theirs ? helperPowers(h, pp.theirs) : null;
  if (powers && !calibrationOnly) s.screenWhole(); // the whole file's battery here while the helper works
  const tw = performance.now();
  for (;;) {
    const left = s.powerStep(8);
    if (!left) break;
    await yieldNow();
    if (gone()) return stop();
  }
  let theirPowers = null;
  if (powers) {
    theirPowers = await untilCancel(powers);
    if (gone()) return stop();
    if (theirPowers) s.insertPowers(theirPowers); // else screenFinish does that share here
  }
  const t3 = performance.now();
  const screen = s.screenFinish(); // JSON text, parsed by the page: quicker than objects made in wasm and cloned
  const t4 = performance.now();
  return { screen, workers: tables ? 2 : 1, powerWorkers: theirPowers ? 2 : 1,
    timing: { batteries: t1 - t0, tables: t2 - t1, power: t3 - t2, finish: t4 - t3, mine: plan.mine.length, theirs: plan.theirs.length, powerTheirs: pp.theirs ? pp.theirs.count : 0, helperPowerMs: h ? h.lastMs : null, planMs: tp - t2, wholeMs: tw - tp } };
}

// A zero-delay yield to the event loop, so a Cancel message gets in between replications.
// Several callers may wait at once (e.g. two jobs in the helper): one resolver each, in order.
const yieldChannel = new MessageChannel();
const yieldWaiting = [];
yieldChannel.port1.onmessage = () => { const r = yieldWaiting.shift(); if (r) r(); };
function yieldNow() { return new Promise((r) => { yieldWaiting.push(r); yieldChannel.port2.postMessage(0); }); }

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
  async rescreen({ id, settings }) { const r = await screenSplit(settings || {}, false); post({ id, ok: true, value: r.screen, workers: r.workers, powerWorkers: r.powerWorkers, timing: r.timing }); },
  // Benchmark and tests: screen without (false) or with (true, the default) the helper Worker.
  async useHelper({ id, on }) { helperWanted = !!on; if (!on) stopHelper(); else startHelper(); post({ id, ok: true, value: helperWanted }); },
  // Benchmark: keep null tables between screens (true, the default) or time every screen cold.
  async keepTables({ id, on }) { keepTables = !!on; if (session) session.keepTables(keepTables); post({ id, ok: true, value: keepTables }); },
  // Benchmark: power work split one in two, the whole file's battery left to screenFinish, so
  // that the tables and power phases time calibration alone.
  async calibrationOnly({ id, on }) { calibrationOnly = !!on; post({ id, ok: true, value: calibrationOnly }); },
  // The helper's jobs (see screenSplit): null tables for another Worker's screen, and its
  // share of the power work with the other Worker's tables.
  // In one call: the tables on the honest paths cost about as much together as the largest
  // alone.
  async tables({ job, ns, sims, seed }) {
    const t = wasm_bindgen.nullTables(new Float64Array(ns), sims, seed);
    self.postMessage({ job, ok: true, tables: t }, [t.buffer]);
  },
  // SHA-256 of a File (or Blob) read in 1 MiB slices: for another Worker's fingerprint.
  async hashFile({ job, blob }) {
    const hasher = new wasm_bindgen.Hasher();
    for await (const { buf } of slices(blob)) hasher.update(buf);
    const hex = hasher.hex();
    hasher.free();
    self.postMessage({ job, ok: true, result: hex });
  },
  // Another Worker's calibration, shared by stealing (see helperCalibrate): table items from
  // the front, one per call, then the power work `chunk` suppliers per call, with a yield
  // between calls so that the stops get in.
  async calibrate({ job, items, sims, seed, options, inputs, chunk }) {
    const t0 = performance.now();
    const count = inputs.length / INPUT_WIDTH;
    const theirs = new Promise((r) => { workerTablesIn.set(job, r); });
    tableStops.set(job, items.length);
    powerStops.set(job, count);
    let i = 0;
    while (i < tableStops.get(job)) {
      self.postMessage({ job, share: 'tclaimed', at: i + 1 });
      const t = wasm_bindgen.nullTables(new Float64Array(items[i]), sims, seed);
      self.postMessage({ job, share: 'tables', item: i, ns: items[i], tables: t }, [t.buffer]);
      i++;
      await yieldNow();
    }
    if (i < items.length) await theirs; // the other Worker's items, for the power work here
    workerTablesIn.delete(job);
    i = 0;
    while (i < powerStops.get(job)) {
      const end = Math.min(i + chunk, powerStops.get(job));
      self.postMessage({ job, share: 'pclaimed', at: end });
      const r = wasm_bindgen.powerChunk(options, inputs.subarray(i * INPUT_WIDTH, end * INPUT_WIDTH));
      self.postMessage({ job, share: 'powers', from: i, powers: r }, [r.buffer]);
      i = end;
      await yieldNow();
    }
    tableStops.delete(job);
    powerStops.delete(job);
    self.postMessage({ job, ok: true, result: { done: i }, ms: performance.now() - t0 });
  },
  async tablesStop({ job, at }) { if (tableStops.has(job)) tableStops.set(job, Math.min(tableStops.get(job), at)); },
  async powersStop({ job, at }) { if (powerStops.has(job)) powerStops.set(job, Math.min(powerStops.get(job), at)); },
  async workerTables({ job, ns, tables, sims, seed }) {
    wasm_bindgen.helperHoldTables(new Float64Array(ns), tables, sims, seed);
    const r = workerTablesIn.get(job);
    if (r) r();
  },
  async power({ job, options, ns, tables, inputs }) {
    const t0 = performance.now();
    const r = wasm_bindgen.powerShare(options, ns, tables, inputs);
    self.postMessage({ job, ok: true, powers: r, ms: performance.now() - t0 }, [r.buffer]);
  },
  // exports carry the file's fingerprint: they wait for it
  async exportSuppliers({ id, fileName }) { await fingerprintDone; post({ id, ok: true, value: session.suppliersCsv(fileName) }); },
  async exportPull({ id, items, fileName }) { await fingerprintDone; post({ id, ok: true, value: session.pullCsv(items, fileName) }); },
  async exportTrial({ id, format, fileName }) { await fingerprintDone; post({ id, ok: true, value: session.trialExport(format, fileName) }); },
  async watch({ id, settings }) { post({ id, ok: true, value: session.watch(settings || {}) }); },
  async trial({ id, settings }) { return runTrial(id, settings); },
  async detail({ id, supplier }) { post({ id, ok: true, value: session.supplierDetail(supplier) }); },
  async members({ id, supplier, test, bin }) { post({ id, ok: true, value: session.binMembers(supplier, test, bin) }); },
  // Benchmark only (bench/browser.mjs --intake-only): intake alone through the same 1 MiB
  // File.slice chunks as openLedger; no fingerprint, digit tests or calibration.
  async benchIntake({ id, file, readAhead }) {
    const t0 = performance.now();
    const it = new wasm_bindgen.BenchIntake();
    it.setSizeHint(file.size);
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
    post({ id, ok: true, value: { ms: performance.now() - t0, feedMs, read, analysed, wasmMemoryBytes: wasm_bindgen.wasmMemoryBytes() } });
  },
  async invoicesAt({ id, supplier, indices }) { post({ id, ok: true, value: session.invoicesAt(supplier, new Uint32Array(indices)) }); },
};

self.onmessage = async (ev) => {
  const m = ev.data;
  if (m.cmd === 'init') {
    isHelper = !!m.helper;
    if (isHelper) {
      ready = wasm_bindgen({ module_or_path: m.module }).then(() => post({ ready: true }), (e) => post({ ready: false, error: String(e) }));
      return;
    }
    // The page's own glue + worker text: a blob: URL made here (a page-made one cannot be
    // opened from a Worker of a file: page, whose origin is opaque).
    if (m.src) helperUrl = URL.createObjectURL(new Blob([m.src], { type: 'text/javascript' }));
    helperFailsIn = m.helperFails || null;
    ready = WebAssembly.compile(m.wasm).then(async (mod) => {
      await wasm_bindgen({ module_or_path: mod });
      wasmModule = mod;
      startHelper(); // started now, so that it is ready when the first screen needs it
      post({ ready: true, version: wasm_bindgen.version() });
    });
    return;
  }
  if (m.cmd === 'cancel') { cancelled = true; if (onCancel) onCancel(); return; }
  try {
    await ready;
    await handlers[m.cmd](m);
  } catch (e) {
    post({ id: m.id, ok: false, error: String(e && e.message ? e.message : e) });
  }
};
