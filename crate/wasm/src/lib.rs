//! The one binding layer between the digitdrift core and the browser. Nothing else in the
//! project touches wasm-bindgen, js-sys or web-sys. The Worker uses [`Session`] for the heavy
//! work; the page uses the `draw_*` functions (plotters-canvas) on its own copy of the module.

mod bench;
mod chart;

use digitdrift_core::intake::{DateOrder, DecimalConvention, Intake, IntakeOptions, IntakeResult};
use digitdrift_core::battery::{Indexed, Members};
use digitdrift_core::calibrate::power::PowerResult;
use digitdrift_core::calibrate::{CalibrationOptions, Calibrator, Categorical, NullTable, SupplierInput};
use digitdrift_core::{report, Amount, Invoice};
use serde::Deserialize;
use std::sync::Arc;
use wasm_bindgen::prelude::*;

pub use chart::*;

fn to_js<T: serde::Serialize>(v: &T) -> Result<JsValue, JsValue> {
    v.serialize(&serde_wasm_bindgen::Serializer::json_compatible())
        .map_err(|e| JsValue::from_str(&e.to_string()))
}

fn err(e: impl std::fmt::Display) -> JsValue {
    JsValue::from_str(&e.to_string())
}

/// Options as the page sends them (every field optional).
#[derive(Deserialize, Default)]
#[serde(default)]
struct JsOptions {
    supplier: Option<String>,
    amount: Option<String>,
    date: Option<String>,
    invoice: Option<String>,
    decimal: Option<String>,
    date_order: Option<String>,
    min_amount: Option<String>,
}

fn intake_options(v: JsValue) -> Result<IntakeOptions, JsValue> {
    let o: JsOptions = if v.is_undefined() || v.is_null() {
        JsOptions::default()
    } else {
        serde_wasm_bindgen::from_value(v).map_err(err)?
    };
    let mut io = IntakeOptions::default();
    let nonempty = |s: Option<String>| s.filter(|t| !t.trim().is_empty());
    io.supplier = nonempty(o.supplier);
    io.amount = nonempty(o.amount);
    io.date = nonempty(o.date);
    io.invoice = nonempty(o.invoice);
    io.decimal = match nonempty(o.decimal).as_deref() {
        Some("comma") => Some(DecimalConvention::Comma),
        Some("point") => Some(DecimalConvention::Point),
        _ => None,
    };
    io.date_order = match nonempty(o.date_order).as_deref() {
        Some("dmy") => Some(DateOrder::Dmy),
        Some("mdy") => Some(DateOrder::Mdy),
        Some("ymd") => Some(DateOrder::Ymd),
        _ => None,
    };
    if let Some(m) = nonempty(o.min_amount) {
        let a = digitdrift_core::intake::parse_amount_simple(&m)
            .ok_or_else(|| err(format!("minimum amount: cannot read '{m}'")))?;
        io.min_amount = Amount(a.0.abs());
    }
    Ok(io)
}

/// One screening session in the Worker: stream the file in, then ask for results.
#[wasm_bindgen]
pub struct Session {
    intake: Option<Intake>,
    result: Option<IntakeResult>,
    min_amount: Amount,
    report: Option<report::ScreenReport>,
    fingerprint: digitdrift_core::export::Fingerprint,
    /// False once `hashElsewhere` was called: the helper Worker hashes the file's chunks and
    /// `setFingerprint` puts its SHA-256 here (`hashPart` hashes here again if it failed).
    hash_here: bool,
    fingerprint_of: Option<String>,
    /// The detection trial in progress: it reads the ledger, never changes it.
    trial: Option<digitdrift_core::trial::Trial>,
    /// The summary of the last finished trial: what the trial exports write.
    trial_last: Option<digitdrift_core::trial::TrialReport>,
    /// A screen between `screenPlan` and `screenFinish` (batteries done, calibration to come).
    pending: Option<PendingScreen>,
    /// Null tables kept from earlier screens and from `holdTables` (seed, sims, tables): each
    /// depends only on (seed, sims, n), so a later screen with the same seed and sims reads them
    /// as they are.
    tables: (u64, u32, Vec<NullTable>),
    /// Keep tables between screens (the benchmark turns it off to time cold screens).
    keep_tables: bool,
}

/// The batteries of a screen and its calibrator, while null tables are simulated ahead (part
/// here, part in a second Worker).
struct PendingScreen {
    opts: report::ScreenOptions,
    suppliers: Vec<report::SupplierResult>,
    counts: Vec<Vec<u64>>,
    cal: Option<Calibrator>,
    /// The power work: every supplier's input, and the indices left for this Worker
    /// (`powerStep`), the costliest first.
    inputs: Vec<SupplierInput>,
    mine: Vec<usize>,
    /// The whole file's and the credit notes' results, when made ahead (`screenWhole`).
    whole: Option<(report::SupplierResult, report::SupplierResult)>,
    /// The whole file's duplicate findings, merged from the suppliers' (`screenBatteries`).
    file_duplicates: Option<digitdrift_core::battery::Duplicates>,
    /// Every supplier's calibration input from the quick pass (`screenPlan`), in order.
    quick: Vec<SupplierInput>,
    /// The suppliers whose power work the other Worker does (`powerPlan`, `insertPowers`).
    theirs: Vec<usize>,
}

/// The power work is dealt in turn: one supplier in SHARE to this Worker (which makes the whole
/// file's battery meanwhile), the rest to the helper; measured balanced in bench/speed.mjs --page.
/// (The benchmark's calibration-only screens deal one in two: nothing else runs meanwhile.)
const SHARE: usize = 5;

fn sizes(ns: &[f64]) -> Vec<u64> {
    ns.iter().map(|&n| n as u64).collect()
}

/// The screen summary the page receives, as JSON text: the bulky per-bin arrays of the larger
/// tests are left to `supplierDetail` ([`summary_value`]). Text for the page's `JSON.parse`
/// rather than objects made here and cloned to the page: the Worker's last step of a 2M-row
/// screen 106-112 ms against 164 ms, the page's parse 26-30 ms (Chromium, 2026-12-05).
fn screen_summary(rep: &mut report::ScreenReport) -> Result<JsValue, JsValue> {
    let v = summary_value(rep).map_err(err)?;
    Ok(JsValue::from_str(&serde_json::to_string(&v).map_err(err)?))
}

/// The report as JSON without what [`slim`] drops. Those arrays are moved out of the report
/// while it is written and put back after (the report is unchanged): writing them only to drop
/// them again took most of the Worker's last step of a 2M-row screen.
fn summary_value(rep: &mut report::ScreenReport) -> serde_json::Result<serde_json::Value> {
    fn populations(rep: &mut report::ScreenReport) -> impl Iterator<Item = &mut report::SupplierResult> {
        [&mut rep.whole_file, &mut rep.credit_notes].into_iter().chain(rep.suppliers.iter_mut())
    }
    let mut held: Vec<Bulk> = populations(rep).map(|p| {
        let mut b = Bulk::default();
        b.swap(p);
        b
    }).collect();
    let v = serde_json::to_value(&*rep);
    for (p, b) in populations(rep).zip(held.iter_mut()) {
        b.swap(p);
    }
    let mut v = v?;
    for s in v["suppliers"].as_array_mut().into_iter().flatten() {
        slim(s);
    }
    slim(&mut v["whole_file"]);
    slim(&mut v["credit_notes"]);
    Ok(v)
}

/// The per-bin arrays of one population's larger tests and its duplicate groups: what [`slim`]
/// drops.
#[derive(Default)]
struct Bulk {
    /// first_three, last_two, second_order.
    digits: [DigitArrays; 3],
    /// summation: sums, counts, shares.
    summation: (Vec<f64>, Vec<u64>, Vec<f64>),
    duplicates: digitdrift_core::battery::Duplicates,
}

/// A digit test's counts, expected, observed, z and flag.
type DigitArrays = (Vec<u64>, Vec<f64>, Vec<f64>, Vec<f64>, Vec<u8>);

impl Bulk {
    /// Swap these with the population's (empty ones in, the arrays out; again: back).
    fn swap(&mut self, p: &mut report::SupplierResult) {
        use std::mem::swap;
        let t = &mut p.tests;
        let tests = [t.first_three.as_mut(), t.last_two.as_mut(), t.second_order.as_mut().map(|s| &mut s.digits)];
        for (d, a) in tests.into_iter().zip(self.digits.iter_mut()) {
            if let Some(d) = d {
                swap(&mut d.counts, &mut a.0);
                swap(&mut d.expected, &mut a.1);
                swap(&mut d.observed, &mut a.2);
                swap(&mut d.z, &mut a.3);
                swap(&mut d.flag, &mut a.4);
            }
        }
        if let Some(m) = t.summation.as_mut() {
            swap(&mut m.sums, &mut self.summation.0);
            swap(&mut m.counts, &mut self.summation.1);
            swap(&mut m.shares, &mut self.summation.2);
        }
        if let Some(a) = t.amount_checks.as_mut() {
            swap(&mut a.duplicates, &mut self.duplicates);
        }
    }
}

/// Null tables at `ns` for `sims` simulations and `seed` (the second Worker's share of a
/// screen's `screenPlan`): per size its four sorted columns (MAD, chi-square, KS, max |Z|) of
/// `sims` values, concatenated in the order of `ns`. Each table comes from its own stream
/// (seed, n), so they are the tables the first Worker would have simulated. The helper Worker
/// keeps them for its share of the power work (`powerShare`).
#[wasm_bindgen(js_name = nullTables)]
pub fn null_tables(ns: &[f64], sims: u32, seed: f64) -> Vec<f64> {
    let cat = Categorical::new(&digitdrift_core::benford::first_two());
    let tables = NullTable::simulate_many(&cat, &sizes(ns), sims, seed as u64, 1);
    let out = tables_to_flat(tables.iter());
    hold_in_helper(sims, seed as u64, tables);
    out
}

/// Add tables to the helper's (`HELPER_TABLES`), replacing them if they are for another seed
/// or number of simulations.
fn hold_in_helper(sims: u32, seed: u64, tables: Vec<NullTable>) {
    let tables: Vec<Arc<NullTable>> = tables.into_iter().map(Arc::new).collect();
    HELPER_TABLES.with(|h| {
        let mut h = h.borrow_mut();
        match h.as_mut() {
            Some((s, sd, ts)) if *s == sims && *sd == seed => {
                for t in tables {
                    if !ts.iter().any(|k| k.n == t.n) {
                        ts.push(t);
                    }
                }
            }
            _ => *h = Some((sims, seed, tables)),
        }
    });
}

/// The null tables almost every screen with these settings reads, whatever the ledger
/// (`Calibrator::likely_tables`): `{ns, sims, seed}`, for the helper Worker to simulate while
/// the file is read (empty when calibration is off).
#[wasm_bindgen(js_name = likelyTables)]
pub fn likely_tables(settings: JsValue) -> Result<JsValue, JsValue> {
    let opts = screen_options(settings)?;
    match opts.calibration {
        Some(c) => {
            let cal = Calibrator::new(c);
            to_js(&serde_json::json!({"ns": cal.likely_tables(), "sims": cal.options().sims, "seed": cal.options().seed}))
        }
        None => to_js(&serde_json::json!({"ns": [], "sims": 0, "seed": 0})),
    }
}

thread_local! {
    /// The helper Worker's null tables (sims, seed, tables) from `nullTables` and those it was
    /// given, for `powerChunk` (shared with its calibrator, not copied).
    static HELPER_TABLES: std::cell::RefCell<Option<(u32, u64, Vec<Arc<NullTable>>)>> = const { std::cell::RefCell::new(None) };
}

/// Tables in their flat form: per table its four sorted columns, one after the other.
fn tables_to_flat<'a>(tables: impl Iterator<Item = &'a NullTable>) -> Vec<f64> {
    let mut out = Vec::new();
    for t in tables {
        for c in t.columns() {
            out.extend_from_slice(c);
        }
    }
    out
}

/// The tables at `ns` from their flat form (four columns of `sims` values per size).
fn tables_from_flat(ns: &[f64], flat: &[f64], sims: usize) -> Result<Vec<NullTable>, JsValue> {
    if flat.len() != ns.len() * 4 * sims {
        return Err(err("null tables of the wrong length"));
    }
    Ok(sizes(ns)
        .iter()
        .enumerate()
        .map(|(i, &n)| {
            let col = |j: usize| flat[(4 * i + j) * sims..(4 * i + j + 1) * sims].to_vec();
            NullTable::from_columns(n, [col(0), col(1), col(2), col(3)])
        })
        .collect())
}

/// Supplier inputs from their flat form: per supplier amount_min, amount_max (in 1/10,000 of
/// a unit) and the 90 first-two counts.
fn inputs_from_flat(flat: &[f64]) -> Result<Vec<SupplierInput>, JsValue> {
    if flat.len() % INPUT_WIDTH != 0 {
        return Err(err("supplier inputs of the wrong length"));
    }
    Ok(flat
        .chunks_exact(INPUT_WIDTH)
        .map(|c| SupplierInput {
            amount_min: Amount(c[0] as i64),
            amount_max: Amount(c[1] as i64),
            first_two_counts: c[2..].iter().map(|&x| x as u64).collect(),
        })
        .collect())
}

/// Numbers per supplier in the flat form of [`inputs_from_flat`] (worker.js: INPUT_WIDTH).
const INPUT_WIDTH: usize = 92;

fn inputs_to_flat(inputs: &[&SupplierInput]) -> Vec<f64> {
    let mut out = Vec::with_capacity(inputs.len() * INPUT_WIDTH);
    for s in inputs {
        out.push(s.amount_min.0 as f64);
        out.push(s.amount_max.0 as f64);
        out.extend(s.first_two_counts.iter().map(|&x| x as f64));
    }
    out
}

/// SHA-256 of a file, chunk by chunk, in the helper Worker once the screening Worker has shown
/// the results (`Session.hashElsewhere`).
#[wasm_bindgen]
pub struct Hasher(digitdrift_core::export::Fingerprint);

#[wasm_bindgen]
impl Hasher {
    #[wasm_bindgen(constructor)]
    pub fn new() -> Hasher {
        Hasher(Default::default())
    }
    pub fn update(&mut self, chunk: &[u8]) {
        self.0.update(chunk);
    }
    /// SHA-256 of every chunk so far, in order (hex).
    pub fn hex(&self) -> String {
        self.0.hex()
    }
}

impl Default for Hasher {
    fn default() -> Self {
        Hasher::new()
    }
}

/// In the helper Worker: keep null tables simulated by the screening Worker (its share of a
/// screen's tables, `tablesFlat`) beside its own from `nullTables`, for `powerChunk`.
#[wasm_bindgen(js_name = helperHoldTables)]
pub fn helper_hold_tables(ns: &[f64], flat: &[f64], sims: u32, seed: f64) -> Result<(), JsValue> {
    hold_in_helper(sims, seed as u64, tables_from_flat(ns, flat, sims as usize)?);
    Ok(())
}

thread_local! {
    /// The helper Worker's calibrator for `powerChunk`, kept between calls (its options, the
    /// tables it was given and its power cache).
    static HELPER_CAL: std::cell::RefCell<Option<Calibrator>> = const { std::cell::RefCell::new(None) };
}

/// The helper Worker's power work for some suppliers (`inputs`, flat) with the calibration
/// `options`, from the null tables it holds (`nullTables`; any other is simulated here): the
/// results flat, as `PowerResult::push_flat`. One calibrator is kept between calls, so a screen's
/// suppliers can come a few at a time.
#[wasm_bindgen(js_name = powerChunk)]
pub fn power_chunk(options: JsValue, inputs: &[f64]) -> Result<Vec<f64>, JsValue> {
    let o: CalibrationOptions = serde_wasm_bindgen::from_value(options).map_err(err)?;
    let inputs = inputs_from_flat(inputs)?;
    HELPER_CAL.with(|hc| {
        let mut hc = hc.borrow_mut();
        if hc.as_ref().is_none_or(|c| c.options() != &o) {
            *hc = Some(Calibrator::new(o.clone()));
        }
        let cal = hc.as_mut().expect("calibrator");
        HELPER_TABLES.with(|h| {
            if let Some((s, sd, ts)) = h.borrow().as_ref() {
                if *s == o.sims && *sd == o.seed {
                    for t in ts {
                        if cal.cached_table(t.n).is_none() {
                            cal.insert_shared_table(Arc::clone(t));
                        }
                    }
                }
            }
        });
        let mut out = Vec::new();
        for r in cal.powers(&inputs, 1) {
            r.push_flat(&mut out);
        }
        Ok(out)
    })
}

/// The helper Worker's share of a screen's power work (`Session.powerPlan`): with the
/// calibration options, the other Worker's null tables (`ns`, `flat`, kept beside its own from
/// `nullTables`), the power results of the suppliers `inputs` (flat, as `powerChunk`). Every
/// result depends only on the options, the tables and the supplier, so they are what the first
/// Worker would have computed.
#[wasm_bindgen(js_name = powerShare)]
pub fn power_share(options: JsValue, ns: &[f64], flat: &[f64], inputs: &[f64]) -> Result<Vec<f64>, JsValue> {
    let o: CalibrationOptions = serde_wasm_bindgen::from_value(options.clone()).map_err(err)?;
    hold_in_helper(o.sims, o.seed, tables_from_flat(ns, flat, o.sims as usize)?);
    power_chunk(options, inputs)
}

#[wasm_bindgen]
impl Session {
    #[wasm_bindgen(constructor)]
    pub fn new(options: JsValue) -> Result<Session, JsValue> {
        let o = intake_options(options)?;
        Ok(Session { min_amount: o.min_amount, intake: Some(Intake::new(o)), result: None, report: None, fingerprint: Default::default(), hash_here: true, fingerprint_of: None, trial: None, trial_last: None, pending: None, tables: (0, 0, Vec::new()), keep_tables: true })
    }

    /// The file's size in bytes (`File.size`), before the first `feed`: the invoice store is
    /// reserved from it once the first MiB is in, instead of growing by copies.
    #[wasm_bindgen(js_name = setSizeHint)]
    pub fn set_size_hint(&mut self, bytes: f64) {
        if let Some(i) = self.intake.as_mut() {
            i.set_size_hint(bytes.max(0.0) as u64);
        }
    }

    /// Feed the next chunk of the file, in order.
    pub fn feed(&mut self, chunk: &[u8]) -> Result<(), JsValue> {
        if self.hash_here {
            self.fingerprint.update(chunk);
        }
        self.intake.as_mut().ok_or_else(|| err("intake already finished"))?.feed(chunk).map_err(err)
    }

    #[wasm_bindgen(js_name = rowsSoFar)]
    pub fn rows_so_far(&self) -> f64 {
        self.intake.as_ref().map_or(0.0, |i| i.rows_so_far() as f64)
    }

    /// Finish intake. On error returns `{error: {kind, ...}, message}`.
    pub fn finish(&mut self) -> Result<JsValue, JsValue> {
        let intake = self.intake.take().ok_or_else(|| err("intake already finished"))?;
        match intake.finish() {
            Ok(r) => {
                let out = serde_json::json!({"ok": true, "rows": r.ledger.accounting, "intake": r.info});
                self.result = Some(r);
                to_js(&out)
            }
            Err(e) => to_js(&serde_json::json!({"ok": false, "error": e, "message": e.to_string()})),
        }
    }

    /// The batch screen of the finished ledger. Returns a summary as JSON text: per-bin arrays
    /// of the first-two test are kept, the larger tests are left to `supplierDetail`.
    pub fn screen(&mut self, settings: JsValue) -> Result<JsValue, JsValue> {
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let opts = screen_options(settings)?;
        let mut rep = report::screen(&r.ledger, &r.info, self.min_amount, &opts);
        let v = screen_summary(&mut rep);
        self.report = Some(rep);
        v
    }

    /// The first step of a screen split over two Workers: returns the null tables the
    /// calibration will read (from one quick pass over the ledger, before any battery), split by
    /// simulation cost: `{mine, theirs, sims, seed, share}` (`mine` for `prepareTables` here,
    /// `theirs` for `nullTables` in the other Worker; both empty when calibration is off). Then
    /// `screenBatteries` (while the other Worker simulates), ..., `screenFinish`.
    ///
    /// `together`: the tables (`mine` empty, `theirs` all of them, also as `items` to share:
    /// the ones on the honest paths together, then each other one, cheapest first) and the
    /// power work of the suppliers from the quick pass's inputs, costliest first (`share`:
    /// `{options, inputs, count}` for `powerChunk`; null when calibration is off) are shared by
    /// stealing: the other Worker takes items from the front while this one makes every
    /// battery, then this one takes them from the back (`prepareTables`, `tablesFlat` for the
    /// other Worker; `powerQuick`) until the two meet; the other Worker's results go in with
    /// `insertTables` and `insertQuickPowersAt`.
    #[wasm_bindgen(js_name = screenPlan)]
    pub fn screen_plan(&mut self, settings: JsValue, together: Option<bool>) -> Result<JsValue, JsValue> {
        let together = together.unwrap_or(false);
        self.pending = None;
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let opts = screen_options(settings)?;
        let mut cal = opts.calibration.as_ref().map(|c| Calibrator::new(c.clone()));
        if let Some(c) = cal.as_mut() {
            let (seed, sims) = (c.options().seed, c.options().sims);
            if self.keep_tables && self.tables.0 == seed && self.tables.1 == sims {
                for t in &self.tables.2 {
                    c.insert_table(t.clone());
                }
            }
        }
        let quick = cal.as_ref().map(|_| report::quick_calibration_inputs(&r.ledger));
        let (parts, sims, seed) = match (&cal, &quick) {
            (Some(c), Some((inputs, invoices))) => {
                let need = report::screen_tables(c, inputs, invoices);
                let parts = if together {
                    vec![Vec::new(), need]
                } else {
                    // the helper starts on its share while the batteries run here: it takes 3/5
                    // of the simulation cost (measured balanced in bench/speed.mjs --page)
                    digitdrift_core::calibrate::split_sizes_by(&need, &[2, 3])
                };
                (parts, c.options().sims, c.options().seed)
            }
            _ => (vec![Vec::new(), Vec::new()], 0, 0),
        };
        // for sharing the tables by stealing: the ones on the honest paths in one item (about the
        // cost of the largest), then each other one, cheapest first
        let items = digitdrift_core::calibrate::table_items(&parts[1]);
        let out = to_js(&serde_json::json!({"mine": parts[0], "theirs": parts[1], "items": items, "sims": sims, "seed": seed, "share": null}))?;
        // the power work is shared costliest first (see `powerQuick`)
        let quick = quick.map(|q| q.0).unwrap_or_default();
        let quick: Vec<SupplierInput> = digitdrift_core::calibrate::costliest_first(&quick, (0..quick.len()).collect()).into_iter().map(|i| quick[i].clone()).collect();
        if let (true, Some(c)) = (together, cal.as_ref()) {
            let share = js_sys::Object::new();
            js_sys::Reflect::set(&share, &"options".into(), &to_js(c.options())?)?;
            js_sys::Reflect::set(&share, &"inputs".into(), &js_sys::Float64Array::from(&inputs_to_flat(&quick.iter().collect::<Vec<_>>())[..]))?;
            js_sys::Reflect::set(&share, &"count".into(), &JsValue::from(quick.len() as u32))?;
            js_sys::Reflect::set(&out, &"share".into(), &share)?;
        }
        self.pending = Some(PendingScreen { opts, suppliers: Vec::new(), counts: Vec::new(), cal, inputs: Vec::new(), mine: Vec::new(), whole: None, theirs: Vec::new(), file_duplicates: None, quick });
        Ok(out)
    }

    /// Every supplier's battery for the planned screen (`screenPlan` first).
    #[wasm_bindgen(js_name = screenBatteries)]
    pub fn screen_batteries(&mut self) -> Result<(), JsValue> {
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        let b = report::supplier_batteries(&r.ledger, &p.opts);
        p.inputs = report::calibration_inputs(&b.suppliers, &b.counts);
        p.suppliers = b.suppliers;
        p.counts = b.counts;
        p.file_duplicates = b.file_duplicates;
        Ok(())
    }

    /// Simulate the pending screen's null tables at `ns` here (one call per table lets the
    /// Worker take a Cancel in between).
    #[wasm_bindgen(js_name = prepareTables)]
    pub fn prepare_tables(&mut self, ns: &[f64]) -> Result<(), JsValue> {
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        if let Some(c) = p.cal.as_mut() {
            c.prepare(&sizes(ns), 1);
        }
        Ok(())
    }

    /// The pending screen's null tables at `ns` (simulated here with `prepareTables`), flat,
    /// for the other Worker (`helperHoldTables`).
    #[wasm_bindgen(js_name = tablesFlat)]
    pub fn tables_flat(&self, ns: &[f64]) -> Result<Vec<f64>, JsValue> {
        let p = self.pending.as_ref().ok_or_else(|| err("no screen planned"))?;
        let Some(c) = p.cal.as_ref() else { return Ok(Vec::new()) };
        let ts: Vec<&NullTable> = sizes(ns).iter().map(|&n| c.cached_table(n).ok_or_else(|| err("no table at that size"))).collect::<Result<_, _>>()?;
        Ok(tables_to_flat(ts.into_iter()))
    }

    /// Put null tables simulated by the other Worker (`nullTables(ns, sims, seed)`) in the
    /// pending screen's calibrator.
    #[wasm_bindgen(js_name = insertTables)]
    pub fn insert_tables(&mut self, ns: &[f64], flat: &[f64]) -> Result<(), JsValue> {
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        let Some(c) = p.cal.as_mut() else { return Ok(()) };
        let sims = c.options().sims as usize;
        for t in tables_from_flat(ns, flat, sims)? {
            c.insert_table(t);
        }
        Ok(())
    }

    /// After the null tables: split the pending screen's power work (suppliers by size, the
    /// costliest first, dealt in turn: one in SHARE here, where the whole file's battery is made
    /// meanwhile, the others to the other Worker). Returns `{theirs: {options, ns, tables, inputs}}`
    /// for `powerShare` in the other Worker (`ns`/`tables`: every null table held here but those
    /// at `their_ns`, which that Worker simulated; `inputs`: its suppliers, flat), or
    /// `{theirs: null}` when calibration is off or there is too little to share. This Worker's
    /// share is done by `powerStep`.
    #[wasm_bindgen(js_name = powerPlan)]
    pub fn power_plan(&mut self, their_ns: &[f64], share: bool, every: Option<u32>) -> Result<JsValue, JsValue> {
        let every = every.map_or(SHARE, |e| e.max(2) as usize);
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        let Some(c) = p.cal.as_mut() else {
            return to_js(&serde_json::json!({"theirs": null}));
        };
        let order = digitdrift_core::calibrate::costliest_first(&p.inputs, (0..p.inputs.len()).collect());
        if !share || order.len() < 4 {
            p.mine = order;
            p.theirs.clear();
            return to_js(&serde_json::json!({"theirs": null}));
        }
        // this Worker also makes the whole file's battery meanwhile: it takes one supplier in
        // `every`, the helper the others
        let (mine, theirs): (Vec<(usize, usize)>, Vec<(usize, usize)>) = order.into_iter().enumerate().partition(|(j, _)| j % every == 0);
        p.mine = mine.into_iter().map(|(_, i)| i).collect();
        p.theirs = theirs.into_iter().map(|(_, i)| i).collect();
        let their_inputs: Vec<&SupplierInput> = p.theirs.iter().map(|&i| &p.inputs[i]).collect();
        let skip = sizes(their_ns);
        let send: Vec<&NullTable> = c.tables().filter(|t| !skip.contains(&t.n)).collect();
        let have: Vec<f64> = send.iter().map(|t| t.n as f64).collect();
        let flat = tables_to_flat(send.into_iter());
        let out = js_sys::Object::new();
        let th = js_sys::Object::new();
        js_sys::Reflect::set(&th, &"options".into(), &to_js(c.options())?)?;
        js_sys::Reflect::set(&th, &"ns".into(), &js_sys::Float64Array::from(&have[..]))?;
        js_sys::Reflect::set(&th, &"tables".into(), &js_sys::Float64Array::from(&flat[..]))?;
        js_sys::Reflect::set(&th, &"inputs".into(), &js_sys::Float64Array::from(&inputs_to_flat(&their_inputs)[..]))?;
        js_sys::Reflect::set(&th, &"count".into(), &JsValue::from(their_inputs.len() as u32))?;
        js_sys::Reflect::set(&out, &"theirs".into(), &th)?;
        Ok(out.into())
    }

    /// The whole file's and the credit notes' batteries of the planned screen, made now (while
    /// the other Worker does power work) instead of in `screenFinish`.
    #[wasm_bindgen(js_name = screenWhole)]
    pub fn screen_whole(&mut self) -> Result<(), JsValue> {
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        p.whole = Some(report::whole_file_and_credits(&r.ledger, &p.opts, p.file_duplicates.take()));
        Ok(())
    }

    /// The next `count` suppliers of this Worker's power share; returns how many are left.
    #[wasm_bindgen(js_name = powerStep)]
    pub fn power_step(&mut self, count: u32) -> Result<u32, JsValue> {
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        let Some(c) = p.cal.as_mut() else { return Ok(0) };
        let k = (count as usize).min(p.mine.len());
        for i in p.mine.drain(..k) {
            c.power_of(&p.inputs[i]);
        }
        Ok(p.mine.len() as u32)
    }

    /// The power work of the quick pass's supplier `i` (`screenPlan(settings, true)`'s order)
    /// here, cached for `screenFinish`.
    #[wasm_bindgen(js_name = powerQuick)]
    pub fn power_quick(&mut self, i: u32) -> Result<(), JsValue> {
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        if let (Some(c), Some(input)) = (p.cal.as_mut(), p.quick.get(i as usize)) {
            c.power_of(input);
        }
        Ok(())
    }

    /// Put the other Worker's power results (`powerChunk`) for the quick pass's suppliers
    /// `from`, `from + 1`, ... in.
    #[wasm_bindgen(js_name = insertQuickPowersAt)]
    pub fn insert_quick_powers_at(&mut self, from: u32, flat: &[f64]) -> Result<(), JsValue> {
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        let Some(c) = p.cal.as_mut() else { return Ok(()) };
        let mut at = 0;
        for input in p.quick.iter().skip(from as usize) {
            if at == flat.len() {
                break;
            }
            let r = PowerResult::read_flat(flat, &mut at).ok_or_else(|| err("power results too short"))?;
            c.insert_power(input, r);
        }
        if at != flat.len() {
            return Err(err("power results of the wrong length"));
        }
        Ok(())
    }

    /// Put the other Worker's power results (`powerShare` of `powerPlan`'s `theirs`) in.
    #[wasm_bindgen(js_name = insertPowers)]
    pub fn insert_powers(&mut self, flat: &[f64]) -> Result<(), JsValue> {
        let p = self.pending.as_mut().ok_or_else(|| err("no screen planned"))?;
        let Some(c) = p.cal.as_mut() else { return Ok(()) };
        let mut at = 0;
        for &i in &p.theirs {
            let r = PowerResult::read_flat(flat, &mut at).ok_or_else(|| err("power results too short"))?;
            c.insert_power(&p.inputs[i], r);
        }
        if at != flat.len() {
            return Err(err("power results of the wrong length"));
        }
        Ok(())
    }

    /// The second half: calibration (any table still missing is simulated here), ranking and
    /// the summary, the same as `screen` with the same settings.
    #[wasm_bindgen(js_name = screenFinish)]
    pub fn screen_finish(&mut self) -> Result<JsValue, JsValue> {
        let p = self.pending.take().ok_or_else(|| err("no screen planned"))?;
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let mut cal = p.cal;
        let (whole, credits) = match p.whole {
            Some(w) => w,
            None => report::whole_file_and_credits(&r.ledger, &p.opts, p.file_duplicates),
        };
        let mut rep = report::finish_screen_parts(&r.ledger, &r.info, self.min_amount, &p.opts, p.suppliers, &p.counts, cal.as_mut(), whole, credits);
        if let (Some(c), true) = (cal.as_mut(), self.keep_tables) {
            self.tables = (c.options().seed, c.options().sims, c.take_tables());
        }
        let v = screen_summary(&mut rep);
        self.report = Some(rep);
        v
    }

    /// Keep null tables simulated elsewhere ahead of a screen (`likelyTables` in the helper
    /// Worker while this one reads the file) for the next screens with this seed and sims.
    #[wasm_bindgen(js_name = holdTables)]
    pub fn hold_tables(&mut self, ns: &[f64], flat: &[f64], sims: u32, seed: f64) -> Result<(), JsValue> {
        let seed = seed as u64;
        if self.tables.0 != seed || self.tables.1 != sims {
            self.tables = (seed, sims, Vec::new());
        }
        for t in tables_from_flat(ns, flat, sims as usize)? {
            if !self.tables.2.iter().any(|k| k.n == t.n) {
                self.tables.2.push(t);
            }
        }
        Ok(())
    }

    /// Keep null tables between screens (default) or not (every screen cold; benchmark only).
    #[wasm_bindgen(js_name = keepTables)]
    pub fn keep_tables(&mut self, on: bool) {
        self.keep_tables = on;
        if !on {
            self.tables = (0, 0, Vec::new());
        }
    }

    /// Drop a planned screen (after Cancel).
    #[wasm_bindgen(js_name = screenAbort)]
    pub fn screen_abort(&mut self) {
        self.pending = None;
    }

    /// Every test of one supplier (id), or of the whole file (-1) or the credit notes (-2).
    #[wasm_bindgen(js_name = supplierDetail)]
    pub fn supplier_detail(&self, id: i32) -> Result<JsValue, JsValue> {
        let rep = self.report.as_ref().ok_or_else(|| err("no screen yet"))?;
        let s = match id {
            -1 => Some(&rep.whole_file),
            -2 => Some(&rep.credit_notes),
            _ => rep.suppliers.iter().find(|s| s.id as i32 == id),
        };
        to_js(&s.ok_or_else(|| err("no such supplier"))?)
    }

    /// Screen a digit-count table (`supplier, first_two, invoices, amount`) made by an SQL
    /// engine instead of a ledger. Returns the same summary as `screen` (as objects: a count
    /// table's report is small), or `{error}`.
    #[wasm_bindgen(js_name = screenCounts)]
    pub fn screen_counts(&mut self, bytes: &[u8], settings: JsValue) -> Result<JsValue, JsValue> {
        self.fingerprint.update(bytes);
        self.intake = None;
        let t = match digitdrift_core::counts::read(bytes) {
            Ok(t) => t,
            Err(e) => return to_js(&serde_json::json!({"error": e})),
        };
        let mut rep = digitdrift_core::counts::screen(&t, &screen_options(settings)?);
        let mut v = summary_value(&mut rep).map_err(err)?;
        v["from_counts"] = serde_json::Value::Bool(true);
        self.report = Some(rep);
        to_js(&v)
    }

    /// SHA-256 of the file as read (hex).
    pub fn fingerprint(&self) -> String {
        self.fingerprint_of.clone().unwrap_or_else(|| self.fingerprint.hex())
    }

    /// Before the first `feed`: the file's chunks are hashed by the helper Worker
    /// (`Hasher`), not in `feed`; its SHA-256 comes in with `setFingerprint`.
    #[wasm_bindgen(js_name = hashElsewhere)]
    pub fn hash_elsewhere(&mut self) {
        self.hash_here = false;
    }

    /// The file's SHA-256 (hex) from the helper Worker.
    #[wasm_bindgen(js_name = setFingerprint)]
    pub fn set_fingerprint(&mut self, hex: String) {
        self.fingerprint_of = Some(hex);
    }

    /// Hash the next chunk here (the file read again, in order, when the helper failed).
    #[wasm_bindgen(js_name = hashPart)]
    pub fn hash_part(&mut self, chunk: &[u8]) {
        self.fingerprint.update(chunk);
    }

    /// CSV of the supplier results (formula-neutralised, byte-identical for the same inputs).
    #[wasm_bindgen(js_name = suppliersCsv)]
    pub fn suppliers_csv(&self, file_name: &str) -> Result<String, JsValue> {
        let rep = self.report.as_ref().ok_or_else(|| err("no screen yet"))?;
        Ok(digitdrift_core::export::suppliers_csv(rep, file_name, &self.fingerprint()))
    }

    /// CSV of the invoices to pull: `items` = [{supplier, line, date, amount, reason}].
    #[wasm_bindgen(js_name = pullCsv)]
    pub fn pull_csv(&self, items: JsValue, file_name: &str) -> Result<String, JsValue> {
        let items: Vec<digitdrift_core::export::PullItem> = serde_wasm_bindgen::from_value(items).map_err(err)?;
        Ok(digitdrift_core::export::pull_csv(&items, file_name, &self.fingerprint()))
    }

    /// Continuous monitoring replayed over the ledger: per supplier the alarm date, evidence
    /// and amounts paid before/after it; the state as of `as_of` (ISO date, optional); the
    /// amount at risk. `settings`: {confidence, as_of}.
    pub fn watch(&self, settings: JsValue) -> Result<JsValue, JsValue> {
        #[derive(Deserialize, Default)]
        #[serde(default)]
        struct W {
            confidence: Option<f64>,
            as_of: Option<String>,
        }
        let w: W = if settings.is_undefined() || settings.is_null() { W::default() } else { serde_wasm_bindgen::from_value(settings).map_err(err)? };
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let mut o = digitdrift_core::monitor::WatchOptions::default();
        if let Some(c) = w.confidence {
            if !(c > 0.0 && c < 1.0) {
                return Err(err("confidence must be between 0 and 1"));
            }
            o.confidence = c;
        }
        if let Some(d) = w.as_of.filter(|d| !d.trim().is_empty()) {
            let p: Vec<&str> = d.trim().split('-').collect();
            let parsed = (p.len() == 3)
                .then(|| Some((p[0].parse::<i32>().ok()?, p[1].parse::<u32>().ok()?, p[2].parse::<u32>().ok()?)))
                .flatten()
                .ok_or_else(|| err(format!("as-of date '{d}' is not YYYY-MM-DD")))?;
            o.as_of = Some(digitdrift_core::intake::days_from_civil(parsed.0, parsed.1, parsed.2));
        }
        to_js(&digitdrift_core::monitor::watch(&r.ledger, &o))
    }

    /// The invoices behind one bar of a digit chart: `test` is a battery test name
    /// (first_digit, second_digit, first_two, first_three, last_two, summation, second_order),
    /// `bin` the digit value. Supplier id, or -1 whole file, -2 credit notes.
    #[wasm_bindgen(js_name = binMembers)]
    pub fn bin_members(&self, supplier: i32, test: &str, bin: u32) -> Result<JsValue, JsValue> {
        self.with_population(supplier, |invs| {
            let idx = invs.bin_members(test, bin);
            to_js(&self.rows(invs, &idx))
        })
    }

    /// Prepare a detection trial on a copy of the ledger (the session's ledger and screen are
    /// never changed). `settings`: {pattern, share (0..1), from (ISO date), replications, seed,
    /// suppliers: "consistent" | "all", controls (0..1), limit, screen: the screen settings}.
    /// Returns {replications, pool, levels}.
    #[wasm_bindgen(js_name = trialStart)]
    pub fn trial_start(&mut self, settings: JsValue) -> Result<JsValue, JsValue> {
        self.trial = None;
        let (o, pool) = self.trial_options(settings)?;
        if pool.is_empty() {
            return Err(err("no supplier to place invented invoices in: choose every supplier instead"));
        }
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let t = digitdrift_core::trial::Trial::new(&r.ledger, o, &pool).map_err(err)?;
        let out = serde_json::json!({"replications": t.options().replications, "pool": pool.len(), "levels": t.levels()});
        self.trial = Some(t);
        to_js(&out)
    }

    /// Run ONE replication of the prepared trial (the Worker calls this in a loop, reporting
    /// progress and honouring Cancel between calls). Returns how many are done.
    #[wasm_bindgen(js_name = trialStep)]
    pub fn trial_step(&mut self) -> Result<u32, JsValue> {
        Ok(self.trial.as_mut().ok_or_else(|| err("no trial prepared"))?.run_replication())
    }

    /// The trial's summary over the replications done so far (reported apart from the screen).
    /// It is kept as the one the trial exports write.
    #[wasm_bindgen(js_name = trialReport)]
    pub fn trial_report(&mut self) -> Result<JsValue, JsValue> {
        let rep = self.trial.as_ref().ok_or_else(|| err("no trial prepared"))?.report();
        let js = to_js(&rep);
        self.trial_last = Some(rep);
        js
    }

    /// The last trial's results as CSV (`format` "csv") or JSON ("json"), marked as a trial on
    /// invented invoices; never part of the screen's exports.
    #[wasm_bindgen(js_name = trialExport)]
    pub fn trial_export(&self, format: &str, file_name: &str) -> Result<String, JsValue> {
        let rep = self.trial_last.as_ref().ok_or_else(|| err("no finished trial to export"))?;
        let sha = self.fingerprint();
        match format {
            "csv" => Ok(digitdrift_core::trial::trial_csv(rep, file_name, &sha)),
            "json" => Ok(digitdrift_core::trial::trial_json(rep, file_name, &sha)),
            _ => Err(err(format!("unknown export format '{format}'"))),
        }
    }

    /// Drop the trial (after Cancel).
    #[wasm_bindgen(js_name = trialStop)]
    pub fn trial_stop(&mut self) {
        self.trial = None;
    }

    /// Invoices by index within one population (as listed by the amount checks).
    #[wasm_bindgen(js_name = invoicesAt)]
    pub fn invoices_at(&self, supplier: i32, indices: Vec<u32>) -> Result<JsValue, JsValue> {
        self.with_population(supplier, |invs| {
            let idx: Vec<usize> = indices.iter().map(|&i| i as usize).filter(|&i| i < invs.len()).collect();
            to_js(&self.rows(invs, &idx))
        })
    }
}

impl Session {
    fn trial_options(&self, v: JsValue) -> Result<(digitdrift_core::trial::TrialOptions, Vec<u32>), JsValue> {
        use digitdrift_core::trial::{consistent_suppliers, Pattern, TrialOptions};
        #[derive(Deserialize, Default)]
        #[serde(default)]
        struct T {
            pattern: Option<String>,
            share: Option<f64>,
            from: Option<String>,
            replications: Option<u32>,
            seed: Option<f64>,
            suppliers: Option<String>,
            controls: Option<f64>,
            limit: Option<String>,
            screen: Option<serde_json::Value>,
        }
        let t: T = if v.is_undefined() || v.is_null() { T::default() } else { serde_wasm_bindgen::from_value(v).map_err(err)? };
        let r = self.result.as_ref().ok_or_else(|| err("the trial needs a ledger (a digit-count table has no invoices to replace)"))?;
        let sopts = match &t.screen {
            Some(sv) => screen_options(to_js(sv)?)?,
            None => report::ScreenOptions::default(),
        };
        let mut o = TrialOptions::default();
        if let Some(p) = t.pattern.filter(|p| !p.trim().is_empty()) {
            o.pattern = Pattern::parse(&p).ok_or_else(|| err(format!("unknown pattern '{p}'")))?;
        }
        if let Some(x) = t.share {
            if !(0.0..=1.0).contains(&x) {
                return Err(err("the share of invented invoices must be between 0 and 100 %"));
            }
            o.share = x;
        }
        if let Some(d) = t.from.filter(|d| !d.trim().is_empty()) {
            let p: Vec<&str> = d.trim().split('-').collect();
            let parsed = (p.len() == 3)
                .then(|| Some((p[0].parse::<i32>().ok()?, p[1].parse::<u32>().ok()?, p[2].parse::<u32>().ok()?)))
                .flatten()
                .ok_or_else(|| err(format!("start date '{d}' is not YYYY-MM-DD")))?;
            o.from = Some(digitdrift_core::intake::days_from_civil(parsed.0, parsed.1, parsed.2));
        }
        if let Some(n) = t.replications {
            o.replications = n.clamp(1, 10_000);
        }
        if let Some(sd) = t.seed {
            o.seed = sd.max(0.0) as u64;
        }
        if let Some(c) = t.controls {
            if !(0.0..1.0).contains(&c) {
                return Err(err("the share left untouched must be at least 0 and below 100 %"));
            }
            o.controls = c;
        }
        o.limit = match t.limit.filter(|l| !l.trim().is_empty()) {
            Some(l) => Some(Amount(digitdrift_core::intake::parse_amount_simple(&l).ok_or_else(|| err(format!("approval limit: cannot read '{l}'")))?.0.abs())),
            None => sopts.battery.approval_limits.first().copied(),
        };
        o.calibration = sopts.calibration.clone().unwrap_or_default();
        o.min_amount = self.min_amount;
        let pool = match t.suppliers.as_deref() {
            Some("all") => (0..r.ledger.suppliers.len() as u32).filter(|&s| r.ledger.invoices_of(s).next().is_some()).collect(),
            _ => consistent_suppliers(self.report.as_ref().ok_or_else(|| err("no screen yet"))?),
        };
        Ok((o, pool))
    }

    /// Run `f` on one population: the whole file (-1) and the credit notes (-2) as they are
    /// stored, a supplier through a list of its invoice indices (no copy, no references).
    fn with_population(&self, supplier: i32, f: impl Fn(&dyn PopulationView) -> Result<JsValue, JsValue>) -> Result<JsValue, JsValue> {
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        match supplier {
            -1 => f(&Pop(All(&r.ledger.invoices))),
            -2 => f(&Pop(All(&r.ledger.credit_notes))),
            id if id >= 0 => {
                let idx: Vec<u32> = (0..r.ledger.invoices.len() as u32).filter(|&i| r.ledger.invoices[i as usize].supplier == id as u32).collect();
                f(&Pop(Indexed { all: &r.ledger.invoices, idx: &idx }))
            }
            _ => Err(err("no such population")),
        }
    }
    fn rows(&self, invs: &dyn PopulationView, idx: &[usize]) -> Vec<serde_json::Value> {
        let sup = &self.result.as_ref().expect("ledger").ledger.suppliers;
        idx.iter()
            .map(|&i| {
                let inv = invs.invoice(i);
                serde_json::json!({
                    "idx": i,
                    "line": inv.line(),
                    "supplier": sup[inv.supplier as usize].name,
                    "date": digitdrift_core::intake::format_date(inv.date),
                    "amount": ({ inv.amount }).to_string(),
                })
            })
            .collect()
    }
}

/// One population for the drill-down, behind one object-safe face (the battery itself stays
/// generic over [`Members`]; only these on-demand calls go through it).
trait PopulationView {
    fn len(&self) -> usize;
    fn invoice(&self, p: usize) -> Invoice;
    fn bin_members(&self, test: &str, bin: u32) -> Vec<usize>;
}

struct Pop<M>(M);

impl<M: Members> PopulationView for Pop<M> {
    fn len(&self) -> usize {
        self.0.len()
    }
    fn invoice(&self, p: usize) -> Invoice {
        *self.0.at(p)
    }
    fn bin_members(&self, test: &str, bin: u32) -> Vec<usize> {
        digitdrift_core::battery::bin_members(test, bin, &self.0)
    }
}

/// A stored population (the whole file, the credit notes) as [`Members`].
struct All<'a>(&'a [Invoice]);

impl Members for All<'_> {
    fn len(&self) -> usize {
        self.0.len()
    }
    fn at(&self, p: usize) -> &Invoice {
        &self.0[p]
    }
}

#[derive(Deserialize, Default)]
#[serde(default)]
struct JsScreenSettings {
    tests: Option<String>,
    limits: Vec<String>,
    confidence: Option<f64>,
    seed: Option<f64>,
    sims: Option<u32>,
    power: Option<f64>,
    fabricated_share: Option<f64>,
    correction: Option<String>,
    deviation_model: Option<String>,
    calibrate: Option<bool>,
}

fn screen_options(v: JsValue) -> Result<report::ScreenOptions, JsValue> {
    let s: JsScreenSettings = if v.is_undefined() || v.is_null() {
        JsScreenSettings::default()
    } else {
        serde_wasm_bindgen::from_value(v).map_err(err)?
    };
    let mut o = report::ScreenOptions::default();
    if let Some(t) = s.tests.filter(|t| !t.trim().is_empty()) {
        o.battery.tests = t.parse().map_err(|e: digitdrift_core::battery::TestSetError| err(e))?;
    }
    for l in s.limits.iter().filter(|l| !l.trim().is_empty()) {
        let a = digitdrift_core::intake::parse_amount_simple(l).ok_or_else(|| err(format!("approval limit: cannot read '{l}'")))?;
        o.battery.approval_limits.push(Amount(a.0.abs()));
    }
    use digitdrift_core::calibrate::{Correction, DeviationModel};
    let mut c = digitdrift_core::calibrate::CalibrationOptions::default();
    if let Some(v) = s.confidence {
        if !(v > 0.0 && v < 1.0) {
            return Err(err("confidence must be between 0 and 1"));
        }
        c.confidence = v;
    }
    if let Some(v) = s.seed {
        c.seed = v.max(0.0) as u64;
    }
    if let Some(v) = s.sims {
        c.sims = v.max(100);
    }
    if let Some(v) = s.power {
        c.power = v.clamp(0.05, 0.999);
    }
    if let Some(v) = s.fabricated_share {
        c.fabricated_share = v.clamp(0.01, 1.0);
    }
    c.correction = match s.correction.as_deref() {
        Some("bonferroni") => Correction::Bonferroni,
        Some("none") => Correction::None,
        _ => Correction::Fdr,
    };
    c.deviation_model = match s.deviation_model.as_deref() {
        Some("observed") => DeviationModel::ObservedProfile,
        _ => DeviationModel::EvenSpread,
    };
    o.calibration = if s.calibrate == Some(false) { None } else { Some(c) };
    Ok(o)
}

/// Drop the bulky per-bin arrays of the larger tests from a supplier summary.
fn slim(s: &mut serde_json::Value) {
    if let Some(obj) = s.as_object_mut() {
        for k in ["first_three", "last_two", "second_order", "summation"] {
            if let Some(t) = obj.get_mut(k).and_then(|t| t.as_object_mut()) {
                for f in ["counts", "expected", "observed", "z", "flag", "bins", "shares", "sums"] {
                    t.remove(f);
                }
            }
        }
        if let Some(a) = obj.get_mut("amount_checks").and_then(|t| t.as_object_mut()) {
            a.remove("duplicates");
        }
    }
}

/// The mapping step: sniff the first 64 KiB of a file and show the first rows as they would be
/// read. Returns `{ok: true, preview}` or `{ok: false, error, message}`.
#[wasm_bindgen]
pub fn preview(head: &[u8], options: JsValue) -> Result<JsValue, JsValue> {
    if digitdrift_core::counts::is_count_table(head) {
        return to_js(&serde_json::json!({"ok": true, "counts": true}));
    }
    let o = intake_options(options)?;
    match digitdrift_core::intake::preview(head, &o) {
        Ok(p) => to_js(&serde_json::json!({"ok": true, "preview": p})),
        Err(e) => to_js(&serde_json::json!({"ok": false, "error": e, "message": e.to_string()})),
    }
}

/// Size of this module's wasm linear memory in bytes. Linear memory only grows, so after a
/// screen it is the Worker's peak (for the browser benchmark).
#[wasm_bindgen(js_name = wasmMemoryBytes)]
pub fn wasm_memory_bytes() -> f64 {
    #[cfg(target_arch = "wasm32")]
    {
        (core::arch::wasm32::memory_size(0) * 65536) as f64
    }
    #[cfg(not(target_arch = "wasm32"))]
    {
        0.0
    }
}

/// Version string shown in the page footer.
#[wasm_bindgen]
pub fn version() -> String {
    env!("CARGO_PKG_VERSION").to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The summary without writing the bulky arrays equals the whole report written and then
    /// slimmed (as before), and the report is unchanged by it: on the demo ledger, calibrated.
    #[test]
    fn summary_as_the_slimmed_report() {
        let bytes = std::fs::read(concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-files/heathervale-vet-ledger.csv")).expect("demo ledger");
        let mut it = Intake::new(IntakeOptions::default());
        it.feed(&bytes).expect("read");
        let r = it.finish().expect("read");
        let opts = report::ScreenOptions::default();
        let mut rep = report::screen(&r.ledger, &r.info, IntakeOptions::default().min_amount, &opts);
        let whole = serde_json::to_value(&rep).expect("json");
        let mut want = whole.clone();
        for s in want["suppliers"].as_array_mut().into_iter().flatten() {
            slim(s);
        }
        slim(&mut want["whole_file"]);
        slim(&mut want["credit_notes"]);
        assert!(want != whole, "slim drops something");
        assert!(rep.suppliers.iter().any(|s| s.tests.amount_checks.as_ref().is_some_and(|a| a.duplicates != Default::default())));
        let got = summary_value(&mut rep).expect("json");
        assert!(got == want, "the summary differs from the slimmed report");
        assert!(serde_json::to_value(&rep).expect("json") == whole, "the report changed");
    }
}
