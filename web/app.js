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
  const fmtInt = (n) => Number(n).toLocaleString('en-GB');
  const fmtMoney = (x) => Number(x).toLocaleString('en-GB', { minimumFractionDigits: 2, maximumFractionDigits: 2 });
  const fmtP = (p) => (p === null || p === undefined) ? '—' : (p < 1e-4 ? p.toExponential(1) : p.toFixed(4));

  // ---------- state ----------
  const state = { report: null, intake: null, fileName: '', selected: null, sortKey: 'rank', sortDir: 1, geometry: {} };
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
  worker.postMessage({ cmd: 'init', wasm: wasmBytes.slice().buffer });
  let nextId = 1;
  const pending = new Map();
  worker.onmessage = (ev) => {
    const m = ev.data;
    if (m.ready) return;
    if (m.progress) { onProgress(m); return; }
    const p = pending.get(m.id);
    if (!p) return;
    pending.delete(m.id);
    if (m.ok) p.resolve(m.value); else p.reject(m.cancelled ? { cancelled: true } : new Error(m.error));
  };
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
  }
  window.addEventListener('hashchange', () => show(location.hash.slice(1)));
  document.addEventListener('keydown', (e) => {
    if (e.altKey || e.ctrlKey || e.metaKey) return;
    const t = e.target;
    if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT')) return;
    const n = parseInt(e.key, 10);
    if (n >= 1 && n <= views.length) location.hash = '#' + views[n - 1];
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
      const res = await call('open', demo ? { demo } : { file });
      state.fileName = res.name;
      if (!res.intake.ok) { message(res.intake.message, 'error'); return; }
      state.intake = res.intake;
      state.report = res.screen;
      state.selected = res.screen.suppliers.length ? res.screen.suppliers[0].id : null;
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
  $('file').addEventListener('change', (e) => { if (e.target.files[0]) open(e.target.files[0]); });
  $('demo').addEventListener('click', () => {
    const d = $('dd-demo');
    open(null, { b64: d.textContent.trim(), name: d.dataset.name });
  });
  $('cancel').addEventListener('click', () => worker.postMessage({ cmd: 'cancel' }));
  const drop = $('drop');
  drop.addEventListener('dragover', (e) => { e.preventDefault(); drop.classList.add('over'); });
  drop.addEventListener('dragleave', () => drop.classList.remove('over'));
  drop.addEventListener('drop', (e) => {
    e.preventDefault(); drop.classList.remove('over');
    const f = e.dataTransfer.files[0];
    if (f) open(f);
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
  const columns = [
    { key: 'rank', label: '#', num: true, get: (s, i) => i + 1 },
    { key: 'name', label: 'Supplier', get: (s) => s.name },
    { key: 'invoices', label: 'Invoices', num: true, get: (s) => s.invoices, fmt: fmtInt },
    { key: 'amount', label: 'Amount paid', num: true, get: (s) => s.amount_total, fmt: fmtMoney },
    { key: 'mad', label: 'MAD (10–99)', num: true, get: (s) => s.first_two.mad, fmt: (v) => v.toFixed(5) },
    { key: 'chi', label: 'Chi-square', num: true, get: (s) => s.first_two.chi_square, fmt: (v) => v.toFixed(1) },
    { key: 'p', label: 'p-value', num: true, get: (s) => s.first_two.p_value, fmt: fmtP },
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
        columns.map((c) => el('td', { class: c.num ? 'num' : null, text: (c.fmt || String)(c.get(s, i)) })));
      return tr;
    });
    const w = rep.whole_file;
    const foot = el('tr', { class: 'whole' }, columns.map((c) => el('td', { class: c.num ? 'num' : null, text: c.key === 'rank' ? '' : c.key === 'name' ? 'Whole file' : (c.fmt || String)(c.get(w, 0)) })));
    t.replaceChildren(el('caption', { text: 'Ranked by chi-square p-value (smallest first). Click a supplier to see its chart; click a bar to list its invoices.' }), el('thead', null, head), el('tbody', null, body), el('tfoot', null, foot));
    $('caution-main').textContent = CAUTION;
  }
  function select(id) {
    state.selected = id;
    for (const tr of document.querySelectorAll('#supplier-table tbody tr')) tr.classList.toggle('sel', Number(tr.dataset.id) === id);
    $('drill').replaceChildren();
    drawSelected();
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
    const rows = await call('invoices', { supplier: supplierId, first_two: bin });
    const box = $('drill');
    box.replaceChildren(...[
      el('h3', { text: `${s.name}: ${fmtInt(rows.length)} invoice${rows.length === 1 ? '' : 's'} whose amounts start with ${bin}` }),
      el('div', { class: 'table-wrap short' }, el('table', { class: 'grid compact', id: 'drill-table' },
        el('thead', null, el('tr', null, el('th', { class: 'num', text: 'Line' }), el('th', { text: 'Date' }), el('th', { class: 'num', text: 'Amount' }))),
        el('tbody', null, rows.slice(0, 500).map((r) => el('tr', null, el('td', { class: 'num', text: r.line }), el('td', { text: r.date }), el('td', { class: 'num', text: fmtMoney(r.amount) })))))),
      rows.length > 500 ? el('p', { class: 'small', text: `First 500 of ${fmtInt(rows.length)} shown.` }) : null].filter(Boolean));
  }
  window.addEventListener('resize', () => drawSelected());

  $('caution-foot').textContent = CAUTION;
  show(location.hash.slice(1) || 'ledger');
})();
