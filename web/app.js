// digitdrift page: views, worker protocol, tables and charts. All heavy work is in the Worker;
// charts are drawn by the wasm module (plotters-canvas) on this thread. Cell text from a ledger
// is only ever set with textContent, never parsed as HTML.
'use strict';
(function () {
  const CAUTION = 'A deviation from Benford\u2019s law is a reason to look, not proof of wrongdoing. ' +
    'Many honest suppliers deviate for plain reasons (fixed price lists, subscriptions, regulated fees). ' +
    'Do not confront a supplier or an employee on this alone; follow professional auditing standards, ' +
    'your firm\u2019s policies, local law and counsel.';

  const $ = (id) => document.getElementById(id);
  function el(tag, attrs, ...kids) {
    const e = document.createElement(tag);
    if (attrs) for (const [k, v] of Object.entries(attrs)) {
      if (v === undefined || v === null || v === false) continue;
      if (k === 'class') e.className = v;
      else if (k === 'text') e.textContent = v;
      else if (k.startsWith('on')) e.addEventListener(k.slice(2), v);
      else e.setAttribute(k, v === true ? '' : String(v));
    }
    for (const kid of kids.flat()) if (kid !== null && kid !== undefined) e.append(kid instanceof Node ? kid : document.createTextNode(String(kid)));
    return e;
  }
  // one formatter each (toLocaleString with the same arguments builds a new one per call)
  const intFormat = new Intl.NumberFormat('en-GB');
  const moneyFormat = new Intl.NumberFormat('en-GB', { minimumFractionDigits: 2, maximumFractionDigits: 2 });
  const fmtInt = (n) => intFormat.format(Number(n));
  const fmtMoney = (x) => moneyFormat.format(Number(x));
  const fmtP = (p) => (p === null || p === undefined) ? '—' : (p < 1e-4 ? p.toExponential(1) : p.toFixed(4));

  // ---------- state ----------
  const state = { pull: new Map(), notes: {}, report: null, intake: null, fileName: '', selected: null, sortKey: 'rank', sortDir: 1, geometry: {} };
  window.digitdrift = state; // for tests and the curious: read-only use

  // ---------- boot: wasm on this thread for charts, and the Worker ----------
  function b64bytes(id) {
    const bin = atob($(id).textContent.trim());
    const out = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
    return out;
  }
  const wasmBytes = b64bytes('dd-wasm');
  const chartsReady = wasm_bindgen({ module_or_path: wasmBytes }).then(() => { $('version').textContent = wasm_bindgen.version(); });
  const workerSrc = $('dd-glue').textContent + '\n' + $('dd-worker').textContent;
  const worker = new Worker(URL.createObjectURL(new Blob([workerSrc], { type: 'text/javascript' })));
  // src: for its helper Worker. `?test-helper-fails=tables|powers` (tests only): the helper is
  // stopped in that phase of a screen's calibration, to check that the numbers stay the same.
  const helperFails = new URLSearchParams(location.search).get('test-helper-fails');
  worker.postMessage({ cmd: 'init', wasm: wasmBytes.slice().buffer, src: workerSrc, helperFails });
  let nextId = 1;
  const pending = new Map();
  worker.onmessage = (ev) => {
    const m = ev.data;
    if (m.ready) return;
    if (m.progress) { if (m.trial) onTrialProgress(m); else onProgress(m); return; }
    if (m.fingerprint) { onFingerprint(m); return; }
    const p = pending.get(m.id);
    if (!p) return;
    pending.delete(m.id);
    if (m.ok) p.resolve(m.value); else p.reject(m.cancelled ? { cancelled: true } : new Error(m.error));
  };
  // A screen's summary: JSON text from a ledger's screen (one string crosses from the Worker
  // quicker than the objects would be cloned), objects from a count table's.
  function report(screen) {
    return typeof screen === 'string' ? JSON.parse(screen) : screen;
  }
  function call(cmd, args, transfer) {
    const id = nextId++;
    return new Promise((resolve, reject) => {
      pending.set(id, { resolve, reject });
      worker.postMessage(Object.assign({ cmd, id }, args), transfer || []);
    });
  }

  // ---------- views and routing ----------
  const views = ['ledger', 'suppliers', 'supplier', 'replay', 'trial', 'paper'];
  function show(view) {
    if (!views.includes(view)) view = 'ledger';
    for (const v of views) {
      $('view-' + v).hidden = v !== view;
      const a = document.querySelector(`#nav a[data-view="${v}"]`);
      if (v === view) a.setAttribute('aria-current', 'page'); else a.removeAttribute('aria-current');
    }
    document.title = 'digitdrift — ' + $('view-' + view).dataset.title;
    if (view === 'suppliers') drawSelected();
    if (view === 'supplier') renderSupplierFile();
    if (view === 'replay') renderReplay();
    if (view === 'trial') renderTrial();
    if (view === 'paper') renderPaper();
  }
  window.addEventListener('hashchange', () => show(location.hash.slice(1)));
  document.addEventListener('keydown', (e) => {
    if (e.altKey || e.ctrlKey || e.metaKey) return;
    const t = e.target;
    if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT')) return;
    const n = parseInt(e.key, 10);
    if (n >= 1 && n <= views.length) location.hash = '#' + views[n - 1];
  });

  // ---------- settings (localStorage; never the ledger) ----------
  const SETTINGS_KEY = 'digitdrift.settings.v1';
  const settingFields = { confidence: 'set-confidence', correction: 'set-correction', seed: 'set-seed', sims: 'set-sims', power: 'set-power', fabricated_share: 'set-share', min_amount: 'set-min', limits: 'set-limits' };
  function loadSettings() {
    let saved = {};
    try { saved = JSON.parse(localStorage.getItem(SETTINGS_KEY) || '{}'); } catch (e) { saved = {}; }
    for (const [k, id] of Object.entries(settingFields)) if (saved[k] !== undefined) $(id).value = saved[k];
  }
  function readSettings() {
    const v = (id) => $(id).value.trim();
    const out = {};
    for (const [k, id] of Object.entries(settingFields)) out[k] = v(id);
    try { localStorage.setItem(SETTINGS_KEY, JSON.stringify(out)); } catch (e) { /* storage may be off for file:// */ }
    return out;
  }
  function screenSettings() {
    const s = readSettings();
    return { confidence: Number(s.confidence), correction: s.correction, seed: Number(s.seed) || 0, sims: Number(s.sims) || 10000,
      power: Number(s.power) || 0.8, fabricated_share: Number(s.fabricated_share) || 0.3,
      limits: s.limits.split(/[;\s]+/).filter(Boolean) };
  }
  function intakeOptions() {
    const s = readSettings();
    return Object.assign({ min_amount: s.min_amount || '10' }, state.mapping || {});
  }
  loadSettings();
  for (const id of Object.values(settingFields)) $(id).addEventListener('change', () => readSettings());
  $('forget').addEventListener('click', () => {
    try { localStorage.clear(); } catch (e) { /* nothing stored */ }
    for (const id of Object.values(settingFields)) { const f = $(id); f.value = f.defaultValue !== undefined && f.tagName === 'INPUT' ? f.defaultValue : f.querySelector('option[selected]').value; }
    state.mapping = null;
    $('settings-note').textContent = 'Settings forgotten. Nothing of this page is left in the browser\u2019s storage.';
  });
  $('rescreen').addEventListener('click', async () => {
    if (!state.report) { $('settings-note').textContent = 'Open a ledger first.'; return; }
    $('settings-note').textContent = 'Screening…';
    state.report = report(await call('rescreen', { settings: screenSettings() }));
    $('supplier-body').dataset.id = '';
    renderSupplierTable();
    $('settings-note').textContent = 'Screened again.';
    location.hash = '#suppliers';
  });

  // ---------- opening a ledger ----------
  function onProgress(m) {
    const pct = m.total ? Math.round(100 * m.done / m.total) : 0;
    $('progress-fill').style.width = pct + '%';
    $('progress-text').textContent = m.stage === 'screening'
      ? `Screening ${fmtInt(m.rows)} rows…`
      : `Read ${(m.done / 1e6).toFixed(1)} of ${(m.total / 1e6).toFixed(1)} MB · ${fmtInt(m.rows)} rows so far`;
  }
  function message(text, kind) {
    const box = $('intake-msg');
    box.hidden = !text;
    box.className = 'msg ' + (kind || '');
    box.textContent = text || '';
  }
  async function open(file, demo) {
    message('');
    $('progress').hidden = false;
    $('accounting').hidden = true;
    onProgress({ done: 0, total: 1, rows: 0 });
    try {
      await chartsReady;
      const res = await call('open', Object.assign(demo ? { demo } : { file }, { options: intakeOptions(), settings: screenSettings() }));
      state.fileName = res.name;
      state.sha256 = res.sha256;
      state.size = res.size;
      state.wasmMemoryBytes = res.wasmMemoryBytes; // the Worker's wasm linear memory after the screen (its peak: it never shrinks); read by bench/browser.mjs
      state.workerTiming = Object.assign({ ms: res.ms }, res.timing); // the Worker's phases (ms), read by bench/browser.mjs
      state.pull = new Map(); state.notes = {}; updatePullCount();
      $('replay-body').dataset.ready = ''; $('supplier-body').dataset.id = '';
      if (!res.intake.ok) {
        message(res.intake.message, 'error');
        if (file && /ambiguous/.test(res.intake.error.kind)) mapping(file, intakeOptions());
        return;
      }
      state.intake = res.intake;
      state.report = report(res.screen);
      state.calibrationWorkers = res.workers; // Workers that simulated the null tables (2, or 1 without a helper)
      state.calibrationPowerWorkers = res.powerWorkers; // ... and did the power work per supplier
      state.selected = state.report.suppliers.length ? state.report.suppliers[0].id : null;
      renderAccounting();
      renderSupplierTable();
      location.hash = '#suppliers';
      show('suppliers');
      document.body.dataset.loaded = 'yes';
    } catch (e) {
      if (e && e.cancelled) message('Cancelled. Nothing was kept.', 'note');
      else message('Could not read this file: ' + (e && e.message ? e.message : e), 'error');
    } finally {
      $('progress').hidden = true;
    }
  }
  // ---------- the mapping step: which column is which, previewed as parsed ----------
  async function mapping(file, options) {
    message('');
    await chartsReady;
    state.pendingFile = file;
    const res = await call('preview', { file, options: options || intakeOptions() });
    const box = $('mapping');
    if (!res.ok) { box.hidden = true; message(res.message, 'error'); return; }
    if (res.counts) { box.hidden = true; open(file); return; }
    const p = res.preview;
    const colSelect = (key, label, optional) => {
      const sel = el('select', { id: 'map-' + key, 'aria-label': label },
        optional ? el('option', { value: '' }, '(none)') : null,
        p.columns.map((c, i) => el('option', { value: String(i + 1), selected: p.mapping[key] === i }, `${i + 1}: ${c}`)));
      if (optional && (p.mapping[key] === null || p.mapping[key] === undefined)) sel.value = '';
      return el('label', null, label, sel);
    };
    const decSel = el('select', { id: 'map-decimal' }, el('option', { value: '' }, p.decimal ? `as detected (${p.decimal === 'comma' ? 'decimal comma' : 'decimal point'})` : 'not decided yet'),
      el('option', { value: 'point' }, 'decimal point: 1,234.56'), el('option', { value: 'comma' }, 'decimal comma: 1.234,56'));
    const ordSel = el('select', { id: 'map-date-order' }, el('option', { value: '' }, p.date_order ? `as detected (${p.date_order})` : 'not decided yet'),
      el('option', { value: 'dmy' }, 'day/month/year'), el('option', { value: 'mdy' }, 'month/day/year'), el('option', { value: 'ymd' }, 'year-month-day'));
    const opts = options || {};
    if (opts.decimal) decSel.value = opts.decimal;
    if (opts.date_order) ordSel.value = opts.date_order;
    const questions = [];
    if (p.decimal_ambiguous) questions.push(el('p', { class: 'msg error', id: 'ask-decimal', text: `Column \u201c${p.decimal_ambiguous.column}\u201d could be read with a decimal comma or a decimal point (for example ${p.decimal_ambiguous.examples.join(', ')}). Please choose which before screening.` }));
    if (p.date_order_ambiguous) questions.push(el('p', { class: 'msg error', id: 'ask-date-order', text: `Dates in \u201c${p.date_order_ambiguous.column}\u201d could be day-first or month-first (for example ${p.date_order_ambiguous.examples.join(', ')}). Please choose the order.` }));
    const current = () => ({
      supplier: $('map-supplier').value, amount: $('map-amount').value, date: $('map-date').value, invoice: $('map-invoice').value,
      decimal: decSel.value, date_order: ordSel.value, min_amount: readSettings().min_amount || '10' });
    const refresh = () => mapping(file, current());
    const go = el('button', { class: 'btn', type: 'button', id: 'map-go' }, 'Screen this ledger');
    go.addEventListener('click', () => {
      const c = current();
      if (p.decimal_ambiguous && !c.decimal) { decSel.focus(); return; }
      if (p.date_order_ambiguous && !c.date_order) { ordSel.focus(); return; }
      state.mapping = { supplier: c.supplier, amount: c.amount, date: c.date, invoice: c.invoice, decimal: c.decimal, date_order: c.date_order };
      box.hidden = true;
      open(file);
    });
    const grid = el('div', { class: 'settings-grid' }, colSelect('supplier', 'Supplier column'), colSelect('amount', 'Amount column'), colSelect('date', 'Date column', true), colSelect('invoice', 'Invoice number column', true),
      el('label', null, 'Decimal convention', decSel), el('label', null, 'Date order', ordSel));
    for (const s of grid.querySelectorAll('select')) s.addEventListener('change', refresh);
    const table = el('table', { class: 'grid compact', id: 'preview-table' },
      el('caption', { text: 'The first rows as they will be read' }),
      el('thead', null, el('tr', null, ['Line', 'Supplier', 'Amount read', 'Date read', 'Outcome'].map((h) => el('th', { text: h })))),
      el('tbody', null, p.rows.map((r) => el('tr', { class: r.excluded ? 'excluded' : null }, el('td', { class: 'num', text: r.line }), el('td', { text: r.supplier || '' }),
        el('td', { class: 'num', text: r.amount || (r.amount_readings.length ? r.amount_readings.join(' or ') : '') }),
        el('td', { text: r.date || (r.date_readings.length ? r.date_readings.join(' or ') : '') }), el('td', { text: r.exclusion || 'analysed' })))));
    box.replaceChildren(el('h2', { text: 'Check how the file will be read' }),
      el('p', { id: 'sniffed', text: `${file.name}: ${p.encoding}, cells separated by ${({ ',': 'commas', ';': 'semicolons', '\t': 'tabs', '|': 'vertical bars' })[p.delimiter] || JSON.stringify(p.delimiter)}, header on line ${p.header_line}.` }),
      ...p.warnings.map((w) => el('p', { class: 'small', text: w })), ...questions, grid, el('p', null, go), el('div', { class: 'table-wrap short' }, table));
    box.hidden = false;
  }
  $('file').addEventListener('change', (e) => { if (e.target.files[0]) { state.mapping = null; mapping(e.target.files[0]); } });
  $('demo').addEventListener('click', () => {
    const d = $('dd-demo');
    state.mapping = null;
    $('mapping').hidden = true;
    open(null, { b64: d.textContent.trim(), name: d.dataset.name });
  });
  $('cancel').addEventListener('click', () => worker.postMessage({ cmd: 'cancel' }));
  const drop = $('drop');
  drop.addEventListener('dragover', (e) => { e.preventDefault(); drop.classList.add('over'); });
  drop.addEventListener('dragleave', () => drop.classList.remove('over'));
  drop.addEventListener('drop', (e) => {
    e.preventDefault(); drop.classList.remove('over');
    const f = e.dataTransfer.files[0];
    if (f) { state.mapping = null; mapping(f); }
  });
  drop.addEventListener('keydown', (e) => { if (e.key === 'Enter' || e.key === ' ') { e.preventDefault(); $('file').click(); } });

  function renderAccounting() {
    const r = state.report.rows;
    const box = $('accounting');
    box.replaceChildren(
      el('h2', { text: 'Every row accounted for' }),
      el('p', null, el('strong', { text: state.fileName }), ` — ${fmtInt(r.read)} data rows read = ${fmtInt(r.analysed)} analysed + ${fmtInt(r.excluded)} excluded.`),
      el('table', { class: 'grid compact', id: 'exclusions' },
        el('thead', null, el('tr', null, el('th', { text: 'Excluded because' }), el('th', { class: 'num', text: 'Rows' }), el('th', { text: 'First line numbers' }))),
        el('tbody', null, r.exclusions.map((e) => el('tr', null,
          el('td', { text: e.description }), el('td', { class: 'num', text: fmtInt(e.count) }), el('td', { text: e.rows.join(', ') + (e.count > e.rows.length ? ', …' : '') })))))
    );
    box.hidden = false;
  }

  // ---------- supplier table ----------
  const VERDICT = { deviates: 'stands out', consistent: 'in line', too_few: 'too few to tell' };
  const columns = [
    { key: 'rank', label: '#', num: true, get: (s, i) => i + 1 },
    { key: 'name', label: 'Supplier', get: (s) => s.name },
    { key: 'verdict', label: 'Verdict', get: (s) => s.verdict || '', fmt: (v) => VERDICT[v] || '—', cls: (s) => 'v-' + (s.verdict || 'none') },
    { key: 'invoices', label: 'Invoices', num: true, get: (s) => s.invoices, fmt: fmtInt },
    { key: 'amount', label: 'Amount paid', num: true, get: (s) => s.amount_total, fmt: fmtMoney },
    { key: 'mad', label: 'MAD 10–99', num: true, get: (s) => s.first_two.mad, fmt: (v) => v.toFixed(5) },
    { key: 'crit', label: 'Limit at this size', num: true, get: (s) => s.first_two.mad_critical ?? Infinity, fmt: (v) => isFinite(v) ? v.toFixed(5) : '—' },
    { key: 'mcp', label: 'Simulated p', num: true, get: (s) => s.first_two.mc_p_value ?? 1, fmt: fmtP },
    { key: 'adj', label: 'After list correction', num: true, get: (s) => (s.calibration && s.calibration.adjusted_p_value) ?? 1, fmt: fmtP },
    { key: 'p', label: 'χ² p', num: true, get: (s) => s.first_two.p_value, fmt: fmtP },
  ];
  function renderSupplierTable() {
    const rep = state.report;
    const ranked = rep.suppliers.map((s, i) => ({ s, i }));
    const col = columns.find((c) => c.key === state.sortKey) || columns[0];
    ranked.sort((a, b) => {
      const x = col.get(a.s, a.i), y = col.get(b.s, b.i);
      return (x < y ? -1 : x > y ? 1 : 0) * state.sortDir;
    });
    const t = $('supplier-table');
    const head = el('tr', null, columns.map((c) => el('th', { class: c.num ? 'num' : null, scope: 'col', 'aria-sort': c.key === state.sortKey ? (state.sortDir > 0 ? 'ascending' : 'descending') : null },
      el('button', { class: 'sort', type: 'button', onclick: () => { state.sortDir = state.sortKey === c.key ? -state.sortDir : 1; state.sortKey = c.key; renderSupplierTable(); } }, c.label))));
    const body = ranked.map(({ s, i }) => {
      const tr = el('tr', { tabindex: 0, class: s.id === state.selected ? 'sel' : null, 'data-id': s.id,
        onclick: () => select(s.id), onkeydown: (e) => { if (e.key === 'Enter') select(s.id); } },
        columns.map((c) => el('td', { class: [c.num ? 'num' : '', c.cls ? c.cls(s) : ''].join(' ').trim() || null, text: (c.fmt || String)(c.get(s, i)) })));
      return tr;
    });
    const w = rep.whole_file;
    const foot = el('tr', { class: 'whole' }, columns.map((c) => el('td', { class: c.num ? 'num' : null, text: c.key === 'rank' ? '' : c.key === 'name' ? 'Whole file' : ['verdict', 'crit', 'mcp', 'adj'].includes(c.key) ? '' : (c.fmt || String)(c.get(w, 0)) })));
    t.replaceChildren(el('caption', { text: 'Ranked by the simulated p-value: how unusual the supplier\u2019s first-two digits MAD is among honest suppliers with the same number of invoices. Click a supplier for its chart; click a bar for its invoices.' }), el('thead', null, head), el('tbody', null, body), el('tfoot', null, foot));
    $('caution-main').textContent = CAUTION;
    renderSummary();
  }
  function renderSummary() {
    const c = state.report.calibration;
    const box = $('overview');
    if (!c) { box.replaceChildren(); return; }
    const n = state.report.suppliers.length;
    const canvas = el('canvas', { class: 'chart wide', id: 'chart-overview', role: 'img', 'aria-label': 'Every supplier: invoices against first-two digits MAD, with the limits for honest suppliers of each size' });
    box.replaceChildren(
      el('p', { class: 'summary', id: 'alarm-summary' }, el('strong', { text: `${c.alarms} of ${n} suppliers stand out` }),
        ` at ${(100 * c.confidence).toFixed(1)} % confidence after the ${c.correction === 'fdr' ? 'false-discovery-rate (Benjamini–Hochberg)' : c.correction} correction across the list; ${c.too_few} ha${c.too_few === 1 ? 's' : 've'} too few invoices for a verdict. Seed ${c.seed}, ${fmtInt(c.sims)} simulated honest suppliers per invoice count.`),
      canvas, pngButton(canvas, 'suppliers-overview'),
      el('p', { class: 'legend-note', text: 'Each dot is a supplier (red: stands out). The curves are the MAD that honest suppliers of each size exceed only 5 % (or 0.1 %) of the time in simulation: a fixed cut-off would be a flat line, which flags most large honest suppliers and misses small manipulated ones. Click a dot to select that supplier.' }));
    drawOverview();
    canvas.addEventListener('click', (e) => {
      const g = state.geometry['chart-overview'];
      if (!g) return;
      const r = canvas.getBoundingClientRect();
      const x = (e.clientX - r.left) * (canvas.width / r.width), y = (e.clientY - r.top) * (canvas.height / r.height);
      let best = null, bd = Infinity;
      for (const s of state.report.suppliers) {
        const px = g.left + (Math.log10(Math.max(1, s.invoices)) - g.x_min) / (g.x_max - g.x_min) * (g.right - g.left);
        const py = g.bottom - (s.first_two.mad - g.y_min) / (g.y_max - g.y_min) * (g.bottom - g.top);
        const d = (px - x) ** 2 + (py - y) ** 2;
        if (d < bd) { bd = d; best = s; }
      }
      if (best && bd < (20 * (window.devicePixelRatio || 1)) ** 2) select(best.id);
    });
  }
  function drawOverview() {
    const canvas = $('chart-overview');
    if (!canvas || !state.report.calibration) return;
    const c = state.report.calibration;
    const dpr = sizeCanvas(canvas);
    const ymax = Math.max(...state.report.suppliers.map((s) => s.first_two.mad)) * 1.1;
    state.geometry['chart-overview'] = wasm_bindgen.drawScatter(canvas, {
      title: 'Suppliers by size: first-two digits MAD against invoices', log_x: true, scale: dpr, x_label: 'invoices (log scale)', y_label: 'MAD, first-two digits',
      y_min: 0, y_max: ymax,
      points: state.report.suppliers.map((s) => ({ x: s.invoices, y: s.first_two.mad, alarm: s.verdict === 'deviates', selected: s.id === state.selected })),
      curves: c.limit_curves.map((l, i) => ({ label: `limit at ${(100 * l.confidence).toFixed(1)} %`, points: l.points.filter((p) => isFinite(p[1])), dashed: i > 0 })),
      h_lines: [[0.0022, 'fixed cut-off 0.0022 (ignores size)']],
    });
    canvas.dataset.drawn = 'yes';
  }
  function select(id) {
    state.selected = id;
    $('supplier-body').dataset.id = '';
    for (const tr of document.querySelectorAll('#supplier-table tbody tr')) tr.classList.toggle('sel', Number(tr.dataset.id) === id);
    $('drill').replaceChildren();
    drawSelected();
    drawOverview();
  }
  function supplierById(id) { return state.report && state.report.suppliers.find((s) => s.id === id); }

  // ---------- charts ----------
  function sizeCanvas(c) {
    const dpr = Math.max(1, window.devicePixelRatio || 1);
    const w = c.clientWidth || 720, h = c.clientHeight || 360;
    c.width = Math.round(w * dpr); c.height = Math.round(h * dpr);
    return dpr;
  }
  function band(p, n) {
    if (!n) return [0, 1];
    const half = 1.959963984540054 * Math.sqrt(p * (1 - p) / n) + 1 / (2 * n);
    return [Math.max(0, p - half), Math.min(1, p + half)];
  }
  function firstTwoSpec(s, dpr, selectedBin) {
    const ft = s.first_two;
    const n = ft.counts.reduce((a, b) => a + b, 0);
    const expected = ft.expected || Array.from({ length: 90 }, (_, i) => Math.log10(1 + 1 / (i + 10)));
    const observed = ft.observed || ft.counts.map((c) => n ? c / n : 0);
    const bands = expected.map((p) => band(p, n));
    const flags = ft.flag || expected.map((p, i) => {
      const z = zStat(ft.counts[i], n, p);
      return z > 2.576 ? 2 : z > 1.96 ? 1 : 0;
    });
    return { title: `${s.name} — first-two digits (n = ${fmtInt(n)})`, first_bin: 10, observed, expected,
      band_lo: bands.map((b) => b[0]), band_hi: bands.map((b) => b[1]), flags, scale: dpr,
      x_label: 'first-two digits', y_label: 'share of invoices', selected: selectedBin };
  }
  function zStat(c, n, p) {
    if (!n) return 0;
    const d = Math.abs(c / n - p), cc = 1 / (2 * n);
    return (cc < d ? d - cc : d) / Math.sqrt(p * (1 - p) / n);
  }
  function drawSelected(selectedBin) {
    const s = supplierById(state.selected);
    const c = $('chart-first-two');
    if (!s || $('view-suppliers').hidden) return;
    const dpr = sizeCanvas(c);
    state.geometry['chart-first-two'] = wasm_bindgen.drawDigitChart(c, firstTwoSpec(s, dpr, selectedBin));
    c.dataset.drawn = 'yes';
  }
  $('chart-first-two').addEventListener('click', (e) => {
    const c = e.currentTarget, g = state.geometry['chart-first-two'];
    if (!g) return;
    const r = c.getBoundingClientRect();
    const x = (e.clientX - r.left) * (c.width / r.width);
    if (x < g.left || x > g.right) return;
    const v = g.x_min + (x - g.left) / (g.right - g.left) * (g.x_max - g.x_min);
    const bin = Math.round(v);
    if (bin < 10 || bin > 99) return;
    drawSelected(bin - 10);
    drill(state.selected, bin);
  });
  async function drill(supplierId, bin) {
    const s = supplierById(supplierId);
    const rows = await call('members', { supplier: supplierId, test: 'first_two', bin });
    showInvoices($('drill'), `${s.name}: ${fmtInt(rows.length)} invoice${rows.length === 1 ? '' : 's'} whose amounts start with ${bin}`, rows, 'drill-table');
  }
  // A sortable, filterable list of invoices (the ones behind a bar, a point or a table row).
  function showInvoices(box, title, rows, tableId) {
    let sortKey = 'line', dir = 1, filter = '';
    const wrap = el('div', { class: 'table-wrap short' });
    const input = el('input', { type: 'search', class: 'filter', placeholder: 'Filter…', 'aria-label': 'Filter these invoices' });
    const cols = [['pull', 'To pull', false], ['line', 'Line', true], ['date', 'Date', false], ['amount', 'Amount', true]];
    const key = (r) => r.supplier + '\u0000' + r.line;
    function render() {
      const f = filter.toLowerCase();
      const shown = rows.filter((r) => !f || r.date.includes(f) || String(r.amount).includes(f) || String(r.line).includes(f))
        .sort((a, b) => { const x = sortKey === 'amount' ? Number(a.amount) : a[sortKey], y = sortKey === 'amount' ? Number(b.amount) : b[sortKey]; return (x < y ? -1 : x > y ? 1 : 0) * dir; });
      wrap.replaceChildren(el('table', { class: 'grid compact', id: tableId },
        el('thead', null, el('tr', null, cols.map(([k, label, num]) => el('th', { class: num ? 'num' : null },
          el('button', { class: 'sort', type: 'button', onclick: () => { dir = sortKey === k ? -dir : 1; sortKey = k; render(); } }, label))))),
        el('tbody', null, shown.slice(0, 1000).map((r) => {
          const cb = el('input', { type: 'checkbox', 'aria-label': `Pull the invoice on line ${r.line}`, checked: state.pull.has(key(r)) });
          cb.addEventListener('change', () => {
            if (cb.checked) state.pull.set(key(r), { supplier: r.supplier, line: r.line, date: r.date, amount: r.amount, reason: title });
            else state.pull.delete(key(r));
            updatePullCount();
          });
          return el('tr', null, el('td', null, cb), el('td', { class: 'num', text: r.line }), el('td', { text: r.date }), el('td', { class: 'num', text: fmtMoney(r.amount) }));
        }))));
    }
    input.addEventListener('input', () => { filter = input.value.trim(); render(); });
    render();
    const all = el('button', { type: 'button', class: 'btn alt small', onclick: () => {
      for (const r of rows) state.pull.set(key(r), { supplier: r.supplier, line: r.line, date: r.date, amount: r.amount, reason: title });
      updatePullCount(); render();
    } }, 'Tick all to pull');
    box.replaceChildren(...[el('h3', { text: title }), el('div', { class: 'row' }, input, all), wrap,
      rows.length > 1000 ? el('p', { class: 'small', text: `The first 1,000 of ${fmtInt(rows.length)} are listed.` }) : null].filter(Boolean));
  }
  state.showInvoices = showInvoices;
  window.addEventListener('resize', () => drawSelected());

  function updatePullCount() {
    const n = state.pull.size;
    const a = document.querySelector('#nav a[data-view="paper"]');
    a.textContent = '6 Working paper' + (n ? ` (${n} to pull)` : '');
  }

  // A button that saves a chart as a PNG file (canvas.toBlob; nothing leaves the machine).
  function pngButton(canvas, name) {
    return el('button', { type: 'button', class: 'btn alt small png', onclick: () => canvas.toBlob((b) => {
      const url = URL.createObjectURL(b);
      const a = el('a', { href: url, download: name.replace(/[^\w.-]+/g, '-') + '.png' });
      document.body.append(a); a.click(); a.remove();
      setTimeout(() => URL.revokeObjectURL(url), 10000);
    }, 'image/png') }, 'Save chart as PNG');
  }

  // ---------- working paper: exports and a printable report ----------
  function download(name, text, type) {
    const url = URL.createObjectURL(new Blob([text], { type: type || 'text/csv;charset=utf-8' }));
    const a = el('a', { href: url, download: name });
    document.body.append(a); a.click(); a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 10000);
  }
  const baseName = () => (state.fileName || 'ledger').replace(/\.[^.]*$/, '');
  async function exportSuppliers() {
    const csv = await call('exportSuppliers', { fileName: state.fileName });
    state.lastExport = csv;
    download(baseName() + '-supplier-results.csv', csv);
  }
  async function exportPull() {
    const csv = await call('exportPull', { items: [...state.pull.values()], fileName: state.fileName });
    state.lastPullExport = csv;
    download(baseName() + '-invoices-to-pull.csv', csv);
  }
  // The file's SHA-256 arrives shortly after the results (the helper Worker reads the file
  // again meanwhile): the working paper shows it as soon as it is in.
  const SHA_PENDING = 'being computed…';
  function onFingerprint(m) {
    state.sha256 = m.fingerprint;
    for (const row of document.querySelectorAll('#paper-params tr')) {
      if (row.firstChild.textContent === 'SHA-256 of the file') row.lastChild.textContent = m.fingerprint;
    }
  }
  function renderPaper() {
    const body = $('paper-body');
    const rep = state.report;
    if (!rep) { body.replaceChildren(el('p', { text: 'Open a ledger first.' })); return; }
    const c = rep.calibration, r = rep.rows;
    const now = new Date();
    const params = [
      ['File', state.fileName], ['SHA-256 of the file', state.sha256 || SHA_PENDING], ['Size', fmtInt(state.size || 0) + ' bytes'],
      ['Rows', `${fmtInt(r.read)} read = ${fmtInt(r.analysed)} analysed + ${fmtInt(r.excluded)} excluded`],
      ['Columns used', ['supplier', 'amount', 'date', 'invoice'].map((k) => { const i = rep.intake.mapping[k]; return i === null || i === undefined ? null : `${k}: ${rep.intake.columns[i]}`; }).filter(Boolean).join('; ')],
      ['Tests', rep.parameters.tests], ['Minimum amount tested', fmtMoney(rep.parameters.min_amount)],
      ['Approval limits', rep.parameters.approval_limits.length ? rep.parameters.approval_limits.map(fmtMoney).join('; ') : 'none'],
      ['Confidence', c ? (100 * c.confidence).toFixed(1) + ' %' : '—'], ['Seed', c ? String(c.seed) : '—'], ['Simulations per size', c ? fmtInt(c.sims) : '—'],
      ['Correction across suppliers', c ? c.correction : '—'], ['Prepared', now.toISOString().replace('T', ' ').slice(0, 19) + ' UTC'],
    ];
    const flagged = rep.suppliers.filter((s) => s.verdict === 'deviates');
    const overview = $('chart-overview');
    body.replaceChildren(...[
      el('div', { class: 'noprint' }, el('p', null,
        el('button', { class: 'btn', type: 'button', id: 'export-suppliers', onclick: exportSuppliers }, 'Supplier results (CSV)'), ' ',
        el('button', { class: 'btn', type: 'button', id: 'export-pull', onclick: exportPull }, `Invoices to pull (CSV, ${state.pull.size})`), ' ',
        el('button', { class: 'btn alt', type: 'button', onclick: () => window.print() }, 'Print or save as PDF'))),
      el('p', { class: 'caution', text: CAUTION }),
      el('h2', { text: 'Engagement facts' }),
      el('table', { class: 'grid compact', id: 'paper-params' }, el('tbody', null, params.map(([k, v]) => el('tr', null, el('th', { text: k }), el('td', { text: v }))))),
      el('h2', { text: 'Row accounting' }),
      el('p', { text: `${fmtInt(r.read)} data rows read: ${fmtInt(r.analysed)} analysed, ${fmtInt(r.excluded)} excluded` + (r.excluded ? ':' : '.') }),
      r.exclusions.length ? el('table', { class: 'grid compact' }, el('tbody', null, r.exclusions.map((e) => el('tr', null, el('td', { text: e.description }), el('td', { class: 'num', text: fmtInt(e.count) }), el('td', { class: 'small', text: 'first lines ' + e.rows.join(', ') }))))) : null,
      el('h2', { text: 'Results' }),
      el('p', { text: c ? `${c.alarms} of ${rep.suppliers.length} suppliers stand out for their size; ${c.too_few} have too few invoices for a verdict.` : '' }),
      overview && overview.width ? el('img', { class: 'paper-chart', alt: 'Overview chart: suppliers by size', src: overview.toDataURL('image/png') }) : null,
      el('table', { class: 'grid compact', id: 'paper-results' },
        el('thead', null, el('tr', null, ['#', 'Supplier', 'Verdict', 'Invoices', 'Amount paid', 'MAD 10–99', 'Limit', 'Simulated p', 'Reviewer\u2019s note'].map((h) => el('th', { text: h })))),
        el('tbody', null, rep.suppliers.map((s, i) => el('tr', null, el('td', { text: String(i + 1) }), el('td', { text: s.name }), el('td', { class: 'v-' + s.verdict, text: VERDICT[s.verdict] || '—' }),
          el('td', { class: 'num', text: fmtInt(s.invoices) }), el('td', { class: 'num', text: fmtMoney(s.amount_total) }), el('td', { class: 'num', text: s.first_two.mad.toFixed(5) }),
          el('td', { class: 'num', text: s.first_two.mad_critical !== undefined ? s.first_two.mad_critical.toFixed(5) : '—' }), el('td', { class: 'num', text: fmtP(s.first_two.mc_p_value) }),
          el('td', { class: 'note', text: state.notes[s.name] || '' }))))),
      el('h2', { text: `Invoices to pull (${state.pull.size})` }),
      el('table', { class: 'grid compact', id: 'paper-pull' }, el('thead', null, el('tr', null, ['Supplier', 'Line', 'Date', 'Amount', 'Why'].map((h) => el('th', { text: h })))),
        el('tbody', null, [...state.pull.values()].sort((a, b) => a.supplier < b.supplier ? -1 : a.supplier > b.supplier ? 1 : a.line - b.line).map((p) =>
          el('tr', null, el('td', { text: p.supplier }), el('td', { class: 'num', text: p.line }), el('td', { text: p.date }), el('td', { class: 'num', text: fmtMoney(p.amount) }), el('td', { text: p.reason }))))),
      el('p', { class: 'small', text: flagged.length ? 'Suppliers that stand out: ' + flagged.map((s) => s.name).join(', ') + '. Each is a reason to look at the documents, not a conclusion.' : 'No supplier stands out at this confidence.' }),
      el('p', { class: 'small', text: 'Prepared with digitdrift ' + $('version').textContent + ', in the browser, offline. Same file and seed give the same numbers.' })].filter(Boolean)); // no "null" text for a part left out
  }

  // ---------- replay: continuous monitoring over the ledger's dates ----------
  async function renderReplay(force) {
    const body = $('replay-body');
    if (!state.report) { body.replaceChildren(el('p', { text: 'Open a ledger first.' })); return; }
    if (state.report.from_counts) { body.replaceChildren(el('p', { text: 'A digit-count table has no dates per invoice: replay needs the ledger itself.' })); return; }
    if (body.dataset.ready === 'yes' && !force) return;
    const dates = state.report.suppliers.map((s) => [s.first_date, s.last_date]).flat().filter(Boolean).sort();
    const first = dates[0], last = dates[dates.length - 1];
    const asOf = $('replay-date') ? $('replay-date').value : last;
    const conf = Number($('set-confidence').value) || 0.95;
    const w = await call('watch', { settings: { confidence: conf, as_of: asOf || last } });
    state.watch = w;
    const dateInput = el('input', { type: 'date', id: 'replay-date', min: first, max: last, value: asOf || last, 'aria-label': 'Replay as of this date' });
    dateInput.addEventListener('change', () => renderReplay(true));
    const r = w.replay;
    const risk = w.amount_at_risk;
    const table = el('table', { class: 'grid', id: 'watch-table' },
      el('caption', { text: 'Every supplier, its invoices read in date order. An alarm is raised the first time its evidence crosses the line for the chosen confidence.' }),
      el('thead', null, el('tr', null, ['Supplier', 'Invoices', 'Alarm date', 'Which evidence', 'Invoices before alarm', 'Paid before alarm', 'Paid after alarm', 'Evidence now (since start)', 'Alarm line'].map((h) => el('th', { text: h })))),
      el('tbody', null, w.suppliers.map((s) => el('tr', { tabindex: 0, class: s.in_alarm ? 'alarm' : null, 'data-id': s.id, onclick: () => drawEvidence(s.id), onkeydown: (e) => { if (e.key === 'Enter') drawEvidence(s.id); } },
        el('td', { text: s.name }), el('td', { class: 'num', text: fmtInt(s.invoices) }), el('td', { text: s.alarm_date || '—' }),
        el('td', { text: s.alarm_evidence ? s.alarm_evidence.replace('_', ' ') : '—' }),
        el('td', { class: 'num', text: s.invoices_before_alarm !== null && s.invoices_before_alarm !== undefined ? fmtInt(s.invoices_before_alarm) : '—' }),
        el('td', { class: 'num', text: s.paid_before_alarm !== null && s.paid_before_alarm !== undefined ? fmtMoney(s.paid_before_alarm) : '—' }),
        el('td', { class: 'num', text: s.paid_after_alarm !== null && s.paid_after_alarm !== undefined ? fmtMoney(s.paid_after_alarm) : '—' }),
        el('td', { class: 'num', text: fmtEvidence(s.evidence.since_start_log) }),
        el('td', { class: 'num', text: fmtEvidence(s.evidence.since_start_threshold_log) })))));
    const canvas = el('canvas', { class: 'chart wide', id: 'chart-evidence', role: 'img', 'aria-label': 'Evidence over time for the selected supplier' });
    body.replaceChildren(
      el('p', { class: 'caution', text: w.caution }),
      el('p', null, el('label', null, 'Replay as of ', dateInput), ` · confidence ${(100 * w.confidence).toFixed(1)} % · change detector: on honest data at most one false alarm per ${fmtInt(w.arl_years)} years of a supplier's own invoicing, on average.`),
      r ? el('div', { class: 'summary', id: 'replay-summary' }, el('strong', { text: `As of ${r.as_of}: ${r.suppliers_in_alarm.length} supplier${r.suppliers_in_alarm.length === 1 ? '' : 's'} in alarm` }),
        `, ${fmtMoney(r.paid_to_suppliers_in_alarm)} paid to them so far` + (r.suppliers_in_alarm.length ? ` (${r.suppliers_in_alarm.map((x) => x.name + ' since ' + x.alarm_date).join('; ')})` : '') + '.') : '', // not null: replaceChildren would print it
      el('div', { class: 'risk', id: 'amount-at-risk' }, el('h2', { text: 'Amount at risk (' + risk.label + ')' }),
        el('p', { text: `${fmtInt(risk.suppliers_in_alarm)} suppliers in alarm were paid ${fmtMoney(risk.paid_to_suppliers_in_alarm)}; of that, plausibly fabricated: about ${fmtMoney(risk.plausibly_fabricated)} (interval ${fmtMoney(risk.plausibly_fabricated_low)} to ${fmtMoney(risk.plausibly_fabricated_high)}).` }),
        el('p', { class: 'small', text: 'Method: ' + risk.method + '.' })),
      canvas, el('div', { class: 'table-wrap' }, table),
      el('details', null, el('summary', { text: 'How the evidence is computed' }), el('ul', null, w.method.map((m) => el('li', { text: m })), w.notes.map((m) => el('li', { text: m })))));
    body.dataset.ready = 'yes';
    const firstAlarm = w.suppliers.find((s) => s.in_alarm) || w.suppliers[0];
    if (firstAlarm) drawEvidence(firstAlarm.id);
  }
  // Evidence as a number: plain when modest, as a power of ten when huge.
  function fmtEvidence(lnE) {
    const l10 = lnE / Math.LN10;
    if (!isFinite(l10)) return l10 > 0 ? '∞' : '0';
    if (Math.abs(l10) < 4) return Math.exp(lnE).toPrecision(3);
    return '10^' + l10.toFixed(1);
  }
  function drawEvidence(id) {
    const s = state.watch.suppliers.find((x) => x.id === id);
    const c = $('chart-evidence');
    if (!s || !c) return;
    for (const tr of document.querySelectorAll('#watch-table tbody tr')) tr.classList.toggle('sel', Number(tr.dataset.id) === id);
    const dpr = sizeCanvas(c);
    const LN10 = Math.log(10);
    const pts = s.trajectory.filter((p) => p.date);
    const dayOf = (iso) => Date.UTC(+iso.slice(0, 4), +iso.slice(5, 7) - 1, +iso.slice(8, 10)) / 86400000;
    const xs = pts.length ? pts : s.trajectory;
    const xOf = (p) => pts.length ? dayOf(p.date) : p.invoice;
    const v = [];
    if (s.alarm_date && pts.length) v.push([dayOf(s.alarm_date), 'alarm ' + s.alarm_date]);
    wasm_bindgen.drawScatter(c, { title: `${s.name}: evidence against Benford's law over time (log10)`, scale: dpr, as_line: true, x_dates: pts.length > 0,
      x_label: pts.length ? 'invoice date' : 'invoice number', y_label: 'log10 evidence',
      points: xs.map((p) => ({ x: xOf(p), y: p.since_start_log / LN10 })),
      curves: [{ label: 'since a change (log10)', points: xs.map((p) => [xOf(p), p.since_change_log / LN10]), dashed: true }],
      h_lines: [[s.evidence.since_start_threshold_log / LN10, 'alarm line (since start)'], [s.evidence.since_change_threshold_log / LN10, 'alarm line (since a change)']],
      v_lines: v });
    c.dataset.drawn = 'yes';
  }

  // ---------- detection trial: invented invoices on a copy of the ledger, run in the Worker ----------
  // Results stay in this view (state.trial); they never enter the screen, the exports or the
  // working paper. Cell text is set with textContent only.
  const TRIAL_CAUTION = 'A detection trial places invented invoices in a copy of the ledger: it says how often the screen would catch these patterns on this ledger, ' +
    'not whether anything in the real ledger is fabricated. Real fabrication may look different. Nothing here changes the screen, the exports or the working paper.';
  const TRIAL_PATTERNS = [
    ['even', 'Spread evenly'],
    ['below-limit', 'Just below an approval limit'],
    ['repeat', 'A few amounts repeated'],
    ['by-hand', 'Made up by hand'],
  ];
  let trialRunning = false;
  function onTrialProgress(m) {
    const bar = $('trial-progress-fill'), txt = $('trial-progress-text');
    if (!bar || !txt) return;
    bar.style.width = (m.total ? Math.round(100 * m.done / m.total) : 0) + '%';
    txt.textContent = `Replication ${fmtInt(m.done)} of ${fmtInt(m.total)}` + (m.ms ? ` · ${(m.ms / 1000).toFixed(1)} s` : '');
    $('trial-body').dataset.done = String(m.done);
  }
  function renderTrial() {
    const body = $('trial-body');
    if (!state.report) { body.replaceChildren(el('p', { text: 'Open a ledger first.' })); return; }
    if (state.report.from_counts) { body.replaceChildren(el('p', { text: 'A digit-count table has no invoices to replace: the trial needs the ledger itself.' })); return; }
    if (body.dataset.ready === state.fileName) return;
    body.dataset.ready = state.fileName;
    const field = (label, input) => el('label', null, label, input);
    const pattern = el('select', { id: 'trial-pattern' }, TRIAL_PATTERNS.map(([v, t]) => el('option', { value: v }, t)));
    const share = el('input', { id: 'trial-share', type: 'number', min: 0, max: 100, step: 1, value: 20 });
    const dates = state.report.suppliers.map((s) => s.first_date).filter(Boolean).sort();
    const from = el('input', { id: 'trial-from', type: 'date', value: dates[0] || '' });
    const reps = el('input', { id: 'trial-reps', type: 'number', min: 1, max: 10000, step: 1, value: 100 });
    const seed = el('input', { id: 'trial-seed', type: 'number', min: 0, step: 1, value: 1 });
    const who = el('select', { id: 'trial-suppliers' }, el('option', { value: 'consistent' }, 'Suppliers the screen finds in line'), el('option', { value: 'all' }, 'Every supplier'));
    const controls = el('input', { id: 'trial-controls', type: 'number', min: 0, max: 90, step: 5, value: 50 });
    const limit = el('input', { id: 'trial-limit', type: 'text', inputmode: 'decimal', placeholder: 'e.g. 5000 (else a round figure per supplier)' });
    const run = el('button', { class: 'btn', type: 'button', id: 'trial-run' }, 'Run the trial');
    const cancel = el('button', { class: 'btn alt', type: 'button', id: 'trial-cancel', hidden: true }, 'Cancel');
    const progress = el('div', { class: 'progress', id: 'trial-progress', hidden: true },
      el('div', { class: 'bar', role: 'progressbar', 'aria-label': 'Trial progress' }, el('div', { id: 'trial-progress-fill', class: 'fill' })),
      el('span', { id: 'trial-progress-text', class: 'small', 'aria-live': 'polite' }), cancel);
    const out = el('div', { id: 'trial-results' });
    body.replaceChildren(
      el('p', { class: 'caution', text: TRIAL_CAUTION }),
      el('p', { class: 'lede', text: 'Choose how invented invoices are made and how many. Each replication gives part of the chosen suppliers invented invoices (they take the place of real ones from the start date on) and leaves the rest untouched for comparison, then runs the screen and the replay on that copy.' }),
      el('div', { class: 'settings-grid', id: 'trial-controls-grid' },
        field('How amounts are invented (evenly: over the supplier\u2019s usual amounts)', pattern), field('Share of each supplier\u2019s invoices invented (%)', share),
        field('Invented from this date on', from), field('Replications', reps), field('Seed for the trial', seed),
        field('Suppliers that may get invented invoices', who), field('Of those, left untouched for comparison (%)', controls),
        field('Approval limit (for \u201cjust below a limit\u201d)', limit)),
      el('p', { class: 'row' }, run), progress, out);
    cancel.addEventListener('click', () => worker.postMessage({ cmd: 'cancel' }));
    run.addEventListener('click', async () => {
      if (trialRunning) return;
      const settings = { pattern: pattern.value, share: Math.min(100, Math.max(0, Number(share.value) || 0)) / 100, from: from.value,
        replications: Math.max(1, Math.round(Number(reps.value) || 100)), seed: Math.max(0, Math.round(Number(seed.value) || 0)),
        suppliers: who.value, controls: Math.min(90, Math.max(0, Number(controls.value) || 0)) / 100, limit: limit.value.trim(), screen: screenSettings() };
      trialRunning = true; run.disabled = true; cancel.hidden = false; progress.hidden = false;
      body.dataset.state = 'running';
      out.replaceChildren();
      onTrialProgress({ done: 0, total: settings.replications });
      try {
        const res = await call('trial', { settings });
        state.trial = res;
        body.dataset.state = 'done';
        renderTrialResults(out, res, settings);
      } catch (e) {
        body.dataset.state = e && e.cancelled ? 'cancelled' : 'error';
        out.replaceChildren(el('p', { class: 'msg note', id: 'trial-msg', text: e && e.cancelled ? 'Trial cancelled. Nothing was kept.' : 'The trial could not run: ' + (e && e.message ? e.message : e) }));
      } finally {
        trialRunning = false; run.disabled = false; cancel.hidden = true; progress.hidden = true;
      }
    });
  }
  function renderTrialResults(out, res, settings) {
    const r = res.report, p = r.parameters;
    const pc = (x) => (x === null || x === undefined) ? '—' : (100 * x).toFixed(1) + ' %';
    const pcse = (x, se) => (x === null || x === undefined) ? '—' : (100 * x).toFixed(1) + ' ± ' + (100 * (se || 0)).toFixed(1) + ' %';
    const n0 = (x) => (x === null || x === undefined) ? '—' : fmtInt(Math.round(x));
    // A median and, in brackets, its 95 % range from order statistics: "68 (61–75)".
    // Money ranges in whole units, to keep the table narrow.
    const medCell = (x, iv, f, fr) => x === null || x === undefined ? el('td', { class: 'num', text: '—' })
      : el('td', { class: 'num' }, f(x), el('span', { class: 'ci', text: iv ? ` (${(fr || f)(iv.low)}–${(fr || f)(iv.high)})` : ' (too few)' }));
    const main = r.levels.find((l) => Math.abs(l.confidence - p.screen_confidence) < 1e-9) || r.levels[0];
    const conf = (c) => (100 * c).toFixed(c >= 0.995 ? 1 : 0) + ' %';
    const canvas = el('canvas', { class: 'chart wide', id: 'chart-trial', role: 'img', 'aria-label': 'Share of suppliers with invented invoices caught, against the share of untouched suppliers flagged, at each confidence level; the table below gives the same numbers' });
    const line = (get) => r.levels.map((l) => [get(l).fa, get(l).s]).filter((q) => q[0] !== null && q[1] !== null);
    const table = el('table', { class: 'grid compact', id: 'trial-table' },
      el('caption', { text: 'Per confidence level. Caught: suppliers with invented invoices flagged by the screen or the replay. False alarms: untouched suppliers flagged. ± one Monte Carlo standard error over the replications. Invoices and days to alarm, and the invented amount paid by then: medians over suppliers caught after their first invented invoice; in brackets a 95 % range for each median (order statistics, Conover, Practical Nonparametric Statistics, §3.2), “too few” below 6 caught suppliers. Alarm before any invented: the supplier\u2019s real invoices had already raised the replay\u2019s alarm.' }),
      el('thead', null, el('tr', null, ['Confidence', 'Caught', 'False alarms', 'Caught, screen', 'False alarms, screen', 'Caught, replay', 'False alarms, replay', 'Invoices to alarm', 'Days to alarm', 'Invented paid by then', 'Alarm before any invented'].map((h) => el('th', { text: h })))),
      el('tbody', null, r.levels.map((l) => el('tr', { class: l === main ? 'sel' : null },
        el('td', { class: 'num', text: conf(l.confidence) }), el('td', { class: 'num', text: pcse(l.sensitivity, l.sensitivity_se) }), el('td', { class: 'num', text: pcse(l.false_alarm_rate, l.false_alarm_rate_se) }),
        el('td', { class: 'num', text: pc(l.batch.sensitivity) }), el('td', { class: 'num', text: pc(l.batch.false_alarm_rate) }),
        el('td', { class: 'num', text: pc(l.monitoring.sensitivity) }), el('td', { class: 'num', text: pc(l.monitoring.false_alarm_rate) }),
        medCell(l.median_delay_invoices, l.median_delay_invoices_interval, n0), medCell(l.median_delay_days, l.median_delay_days_interval, n0),
        medCell(l.paid_before_detection, l.paid_before_detection_interval, fmtMoney, n0), el('td', { class: 'num', text: pc(l.alarmed_before_injection) })))));
    const summary = main.sensitivity === null
      ? `No supplier received invented invoices (share ${(100 * p.share).toFixed(0)} %), so there is nothing to catch; ${pc(main.false_alarm_rate)} of the untouched suppliers were flagged at ${conf(main.confidence)}.`
      : `At ${conf(main.confidence)} (the screen\u2019s setting), ${pc(main.sensitivity)} of the suppliers with invented invoices were caught, and ${pc(main.false_alarm_rate)} of the untouched ones were flagged.` +
        (main.median_delay_invoices !== null ? ` When the replay caught one after its invented invoices began, it took a median ${n0(main.median_delay_invoices)} invoices` +
        (main.median_delay_invoices_interval ? ` (95 % range ${n0(main.median_delay_invoices_interval.low)}–${n0(main.median_delay_invoices_interval.high)})` : '') + ` and ${n0(main.median_delay_days)} days, with ${fmtMoney(main.paid_before_detection)} of invented amounts paid by then.` : '');
    // Trial exports: their own files, marked as a trial on invented invoices (never the screen's).
    const exportTrial = async (format) => {
      const text = await call('exportTrial', { format, fileName: state.fileName });
      download(baseName() + '-TRIAL-invented-invoices.' + format, text, format === 'json' ? 'application/json;charset=utf-8' : undefined);
    };
    out.replaceChildren(...[
      el('h2', { text: 'Trial results (kept apart from the screen)' }),
      el('p', { class: 'row noprint', id: 'trial-exports' },
        el('button', { class: 'btn alt', type: 'button', id: 'trial-export-csv', onclick: () => exportTrial('csv') }, 'Trial results (CSV)'), ' ',
        el('button', { class: 'btn alt', type: 'button', id: 'trial-export-json', onclick: () => exportTrial('json') }, 'Trial results (JSON)'),
        el('span', { class: 'small', text: ' Files of their own, marked as a trial on invented invoices; the screen\u2019s exports never include them.' })),
      el('p', { class: 'summary', id: 'trial-summary' }, el('strong', { text: summary })),
      el('p', { class: 'small', id: 'trial-facts', text: `${fmtInt(p.replications)} replication${p.replications === 1 ? '' : 's'} in ${(res.ms / 1000).toFixed(1)} s · seed ${p.seed} · ${TRIAL_PATTERNS.find((x) => x[0] === settings.pattern)[1].toLowerCase()} · ${(100 * p.share).toFixed(0)} % of invoices` + (p.from ? ` from ${p.from}` : '') +
        ` · ${fmtInt(r.pool.length)} suppliers chosen, about ${r.mean_injected_suppliers.toFixed(1)} with invented invoices and ${r.mean_control_suppliers.toFixed(1)} left untouched per replication · about ${fmtInt(Math.round(r.mean_invented_invoices))} invented invoices per replication.` }),
      canvas, pngButton(canvas, 'trial-caught-vs-false-alarms'),
      el('div', { class: 'table-wrap' }, table),
      r.by_hand_sources ? el('p', { class: 'small', text: r.by_hand_sources }) : null,
      el('details', null, el('summary', { text: 'How the trial works' }), el('ul', null, r.method.map((m) => el('li', { text: m })))),
      el('p', { class: 'caution', text: r.caution })].filter(Boolean));
    const dpr = sizeCanvas(canvas);
    wasm_bindgen.drawScatter(canvas, { title: 'Caught against false alarms, one point per confidence level', scale: dpr, x_label: 'untouched suppliers flagged (share)', y_label: 'suppliers with invented invoices caught (share)',
      y_min: 0, y_max: 1.02,
      points: r.levels.filter((l) => l.sensitivity !== null && l.false_alarm_rate !== null).map((l) => ({ x: l.false_alarm_rate, y: l.sensitivity, selected: l === main })),
      curves: [
        { label: 'screen or replay', points: line((l) => ({ fa: l.false_alarm_rate, s: l.sensitivity })) },
        { label: 'screen alone', points: line((l) => ({ fa: l.batch.false_alarm_rate, s: l.batch.sensitivity })) },
        { label: 'replay alone', points: line((l) => ({ fa: l.monitoring.false_alarm_rate, s: l.monitoring.sensitivity })) },
        { label: 'no better than chance', points: [[0, 0], [1, 1]], dashed: true },
      ] });
    canvas.dataset.drawn = 'yes';
  }

  // ---------- one supplier's file: every test, amount checks, the invoices behind them ----------
  const TESTS = [
    ['first_digit', 'First digit (1–9)', 'first digit'],
    ['second_digit', 'Second digit (0–9)', 'second digit'],
    ['first_two', 'First-two digits (10–99)', 'first-two digits'],
    ['first_three', 'First-three digits (100–999)', 'first-three digits'],
    ['last_two', 'Last-two digits (00–99, cents)', 'last-two digits'],
    ['second_order', 'Second-order test (differences of sorted amounts)', 'first-two digits of differences'],
  ];
  async function renderSupplierFile() {
    const body = $('supplier-body');
    if (!state.report || state.selected === null) return;
    const id = state.selected;
    if (body.dataset.id === String(id)) return;
    const d = await call('detail', { supplier: id });
    body.dataset.id = String(id);
    $('supplier-title').textContent = 'Supplier file: ' + d.name;
    const facts = el('p', { class: 'facts' }, `${fmtInt(d.invoices)} invoices · ${fmtMoney(d.amount_total)} paid · amounts ${fmtMoney(d.amount_min)} to ${fmtMoney(d.amount_max)}` + (d.first_date ? ` · ${d.first_date} to ${d.last_date}` : ''));
    const drillBox = el('div', { id: 'file-drill', class: 'drill' });
    const charts = el('div', { class: 'chart-grid' });
    const powerCanvas = el('canvas', { class: 'chart', id: 'chart-power', role: 'img', 'aria-label': 'Power curve: chance of detecting the deviation model against invoice count' });
    const note = el('textarea', { id: 'reviewer-note', rows: 3, 'aria-label': 'Reviewer\u2019s note for this supplier (kept in this tab only, printed on the working paper)', placeholder: 'Reviewer\u2019s note: what was checked, what the documents showed…' });
    note.value = state.notes[d.name] || '';
    note.addEventListener('input', () => { state.notes[d.name] = note.value; });
    body.replaceChildren(el('p', { class: 'caution', text: CAUTION }), facts, el('label', { class: 'note-label' }, 'Reviewer\u2019s note', note), verdictBlock(d, powerCanvas), testSummary(d), charts, drillBox, amountChecks(d, drillBox));
    if (d.calibration && d.calibration.power_curve.length) {
      const cal = d.calibration, dpr = sizeCanvas(powerCanvas);
      const last = cal.power_curve[cal.power_curve.length - 1];
      // The simulation stops once detection reaches 95 % (or the target power, if higher): a
      // dashed level line carries the last simulated point on to the supplier's own size.
      const beyond = d.invoices > last.invoices && last.power >= 0.95 ? [{ label: 'not simulated further (already caught ≥ 95 %)', points: Array.from({ length: 17 }, (_, i) => [last.invoices * Math.pow(d.invoices / last.invoices, i / 16), last.power]), dashed: true }] : [];
      wasm_bindgen.drawScatter(powerCanvas, { title: 'How many invoices a verdict needs', log_x: true, scale: dpr, as_line: true, x_label: 'invoices (log scale)', y_label: 'chance of detection',
        y_min: 0, y_max: 1.02, points: cal.power_curve.map((p) => ({ x: p.invoices, y: p.power })), curves: beyond, legend_lower: true,
        h_lines: [[state.report.calibration.power, 'target power']], v_lines: [[d.invoices, 'now']] });
      powerCanvas.dataset.drawn = 'yes';
    }
    for (const [key, title, xl] of TESTS) {
      const t = d[key];
      if (!t) continue;
      const c = el('canvas', { class: 'chart', id: 'chart-' + key, role: 'img', 'aria-label': title + ' chart; the table below gives the same numbers' });
      const fig = el('figure', null, c, pngButton(c, `${d.name}-${key}`), el('figcaption', { class: 'small' }, `${title}: MAD ${t.mad.toFixed(5)}` + (t.conformity ? ` (${t.conformity.label})` : '') + ` · χ² ${t.chi_square.toFixed(1)}, ${t.df} df, p ${fmtP(t.p_value)} · KS ${t.ks.toFixed(4)} (5 % limit ${t.ks_critical_5pct.toFixed(4)})`),
        digitTable(t));
      charts.append(fig);
      const draw = (sel) => {
        const dpr = sizeCanvas(c);
        const bands = t.expected.map((p) => band(p, t.n));
        state.geometry[c.id] = wasm_bindgen.drawDigitChart(c, { title: `${title} — n = ${fmtInt(t.n)}`, first_bin: t.first_bin, observed: t.observed, expected: t.expected,
          band_lo: bands.map((b) => b[0]), band_hi: bands.map((b) => b[1]), flags: t.flag, scale: dpr, x_label: xl, y_label: 'share', selected: sel });
        c.dataset.drawn = 'yes';
      };
      draw();
      c.addEventListener('click', async (e) => {
        const g = state.geometry[c.id];
        const r = c.getBoundingClientRect();
        const x = (e.clientX - r.left) * (c.width / r.width);
        if (x < g.left || x > g.right) return;
        const bin = Math.round(g.x_min + (x - g.left) / (g.right - g.left) * (g.x_max - g.x_min));
        draw(bin - t.first_bin);
        const rows = await call('members', { supplier: id, test: key, bin });
        showInvoices(drillBox, `${d.name}: ${fmtInt(rows.length)} invoices behind ${title.toLowerCase()} = ${bin}`, rows, 'file-drill-table');
        drillBox.scrollIntoView({ block: 'nearest' });
      });
    }
    if (d.summation) {
      const sm = d.summation;
      const c = el('canvas', { class: 'chart', id: 'chart-summation', role: 'img', 'aria-label': 'Summation test chart' });
      charts.append(el('figure', null, c, el('figcaption', { class: 'small', text: `Summation test: share of the amount total per first-two digits against the equal share 1/90 · MAD ${sm.mad.toFixed(5)} · ${sm.flagged.length} bins at least ${sm.flag_ratio}× the equal share` })));
      const dpr = sizeCanvas(c);
      wasm_bindgen.drawDigitChart(c, { title: 'Summation test', first_bin: 10, observed: sm.shares, expected: sm.shares.map(() => sm.expected_share),
        flags: sm.shares.map((x) => x >= sm.flag_ratio * sm.expected_share ? 2 : 0), scale: dpr, x_label: 'first-two digits', y_label: 'share of amount' });
      c.dataset.drawn = 'yes';
    }
  }
  function verdictBlock(d, powerCanvas) {
    const c = d.calibration;
    if (!c) return null;
    const conf = (100 * c.confidence).toFixed(1) + ' %';
    const model = c.deviation_model === 'even_spread' ? `${Math.round(100 * c.fabricated_share)} % of its invoices invented with amounts spread evenly over its own range` : 'its observed digit profile';
    let words;
    if (d.verdict === 'deviates') words = `Stands out: among simulated honest suppliers with ${fmtInt(d.invoices)} invoices, a first-two digits MAD of ${c.mad.toFixed(5)} or more happens with probability ${fmtP(c.mc_p_value)} (${fmtP(c.adjusted_p_value ?? c.mc_p_value)} after correcting for the number of suppliers screened). The limit at this size is ${c.mad_critical.toFixed(5)} at ${conf}. This is a reason to look at its invoices, not a finding.`;
    else if (d.verdict === 'too_few') words = `Too few invoices to tell: with ${fmtInt(d.invoices)} invoices, even a supplier whose amounts were all invented and spread evenly would be caught only ${Math.round(100 * c.power_full_fabrication)} % of the time.` + (c.more_invoices_needed !== null && c.more_invoices_needed !== undefined ? ` To detect ${model} with ${Math.round(100 * state.report.calibration.power)} % power at ${conf}, it needs about ${fmtInt(c.invoices_needed)} invoices — ${fmtInt(c.more_invoices_needed)} more.` : '');
    else words = `In line with honest suppliers of its size: MAD ${c.mad.toFixed(5)} against a limit of ${c.mad_critical.toFixed(5)} at ${conf} (simulated p ${fmtP(c.mc_p_value)}).` + (c.invoices_needed ? ` At this size the screen would catch ${model} ${c.more_invoices_needed === 0 ? 'with at least' : 'only with about ' + fmtInt(c.invoices_needed) + ' invoices for'} ${Math.round(100 * state.report.calibration.power)} % power.` : ` The screen could not reach ${Math.round(100 * state.report.calibration.power)} % power against ${model} within the simulated range.`);
    return el('div', { class: 'verdict v-' + d.verdict }, el('h2', { text: 'Verdict for its size: ' + (VERDICT[d.verdict] || '—') }), el('p', { id: 'verdict-words', text: words }),
      el('p', { class: 'small', text: `Seed ${c.seed} · ${fmtInt(c.sims)} simulations per size. Same file and seed give the same numbers.` }), powerCanvas);
  }
  function testSummary(d) {
    const rows = TESTS.filter(([k]) => d[k]).map(([k, title]) => {
      const t = d[k];
      return el('tr', null, el('td', { text: title }), el('td', { class: 'num', text: fmtInt(t.n) }), el('td', { class: 'num', text: t.mad.toFixed(5) }),
        el('td', { text: t.conformity ? t.conformity.label : '—' }), el('td', { class: 'num', text: t.mc_p_value !== undefined ? fmtP(t.mc_p_value) : '—' }),
        el('td', { class: 'num', text: t.chi_square.toFixed(1) + ' / ' + t.df }), el('td', { class: 'num', text: fmtP(t.p_value) }),
        el('td', { class: 'num', text: t.ks.toFixed(4) + (t.ks > t.ks_critical_5pct ? ' ▲' : '') }), el('td', { class: 'num', text: String(t.flag.filter((f) => f === 2).length) }));
    });
    const dist = d.distortion ? el('p', { class: 'small', text: `Distortion factor ${d.distortion.distortion_factor_pct.toFixed(1)} % (Z ${d.distortion.z.toFixed(2)}, p ${fmtP(d.distortion.p_value)}): positive means amounts pushed up within their decade, negative pushed down.` }) : null;
    const note = d.first_two && d.first_two.conformity ? el('p', { class: 'small', text: d.first_two.conformity.note }) : null;
    return el('div', null, el('table', { class: 'grid compact', id: 'test-summary' },
      el('caption', { text: 'Every digit test for this supplier. Fixed MAD bands are printed as published; they ignore sample size.' }),
      el('thead', null, el('tr', null, ['Test', 'n', 'MAD', 'Published band', 'Simulated p', 'χ² / df', 'p (χ²)', 'KS', 'Bins |Z|>2.576'].map((h) => el('th', { text: h })))),
      el('tbody', null, rows)), dist, note);
  }
  function digitTable(t) {
    const det = el('details', null, el('summary', { text: 'Numbers behind this chart' }));
    det.append(el('div', { class: 'table-wrap short' }, el('table', { class: 'grid compact' },
      el('thead', null, el('tr', null, ['Digits', 'Count', 'Observed', 'Expected', 'Z'].map((h) => el('th', { text: h })))),
      el('tbody', null, t.counts.map((c, i) => el('tr', { class: t.flag[i] ? 'flag' + t.flag[i] : null }, el('td', { text: String(t.first_bin + i).padStart(t.test === 'last_two' ? 2 : 1, '0') }),
        el('td', { class: 'num', text: fmtInt(c) }), el('td', { class: 'num', text: (100 * t.observed[i]).toFixed(2) + ' %' }),
        el('td', { class: 'num', text: (100 * t.expected[i]).toFixed(2) + ' %' }), el('td', { class: 'num', text: t.z[i].toFixed(2) })))))));
    return det;
  }
  function amountChecks(d, drillBox) {
    const a = d.amount_checks;
    if (!a) return null;
    const list = (title, items) => el('div', { class: 'check' }, el('h3', { text: title }), items);
    const click = (label, idx) => async () => {
      const rows = await call('invoicesAt', { supplier: d.id, indices: idx });
      showInvoices(drillBox, `${d.name}: ${label}`, rows, 'file-drill-table');
      drillBox.scrollIntoView({ block: 'nearest' });
    };
    const freq = el('table', { class: 'grid compact', id: 'frequent-amounts' },
      el('thead', null, el('tr', null, ['Amount', 'Invoices', 'Share'].map((h) => el('th', { text: h })))),
      el('tbody', null, a.most_frequent.map((f) => el('tr', { tabindex: 0, onclick: click(`${fmtInt(f.count)} invoices of exactly ${fmtMoney(f.amount)}`, f.invoices) },
        el('td', { class: 'num', text: fmtMoney(f.amount) }), el('td', { class: 'num', text: fmtInt(f.count) }), el('td', { class: 'num', text: (100 * f.share).toFixed(2) + ' %' })))));
    const round = el('table', { class: 'grid compact', id: 'round-amounts' },
      el('thead', null, el('tr', null, ['Kind', 'Invoices', 'Rate', 'Reference', 'p'].map((h) => el('th', { text: h })))),
      el('tbody', null, a.round.levels.map((r) => el('tr', { tabindex: 0, onclick: click(`${r.level} amounts`, r.invoices) },
        el('td', { text: r.level }), el('td', { class: 'num', text: fmtInt(r.count) }), el('td', { class: 'num', text: (100 * r.conditional_rate).toFixed(2) + ' %' }),
        el('td', { class: 'num', text: (100 * r.reference_rate).toFixed(2) + ' %' }), el('td', { class: 'num', text: fmtP(r.p_value) })))));
    const limits = a.limits.length ? el('table', { class: 'grid compact', id: 'limit-clusters' },
      el('thead', null, el('tr', null, ['Limit', 'Just below', 'Expected', 'Ratio', 'p'].map((h) => el('th', { text: h })))),
      el('tbody', null, a.limits.map((l) => el('tr', { tabindex: 0, onclick: click(`amounts just below ${fmtMoney(l.limit)}`, l.invoices) },
        el('td', { class: 'num', text: fmtMoney(l.limit) }), el('td', { class: 'num', text: fmtInt(l.count) }), el('td', { class: 'num', text: l.expected.toFixed(1) }),
        el('td', { class: 'num', text: l.ratio.toFixed(2) }), el('td', { class: 'num', text: fmtP(l.p_value) }))))) : el('p', { class: 'small', text: 'No approval limits entered (Ledger view, settings).' });
    return el('div', { class: 'checks' },
      list('Most frequent exact amounts', freq),
      list('Round amounts', round),
      list('Possible duplicates', el('p', { text: `${fmtInt(a.duplicates ? a.duplicates.same_amount_date_groups : 0)} groups with the same amount and date; ${fmtInt(a.duplicates ? a.duplicates.same_number_groups : 0)} invoice numbers used twice or more.` })),
      list('Just below approval limits', limits),
      el('p', { class: 'small', text: a.note }));
  }

  $('caution-foot').textContent = CAUTION;
  show(location.hash.slice(1) || 'ledger');
})();
