//! The screen result: what every front end (CLI text/JSON, the page) shows. Assembles the digit
//! battery per supplier, for the whole file and for the credit notes, then (when asked) the
//! sample-size calibration and the false-alarm control across suppliers.

use crate::battery::{self, Battery, BatteryOptions, Duplicates, DuplicatesMerge, Indexed, Members};
use crate::calibrate::{costliest_first, table_items, CalibrationOptions, Calibrator, Categorical, Correction, NullTable, SupplierCalibration, SupplierInput, Verdict};
use crate::intake::IntakeInfo;
use crate::ledger::{Accounting, Invoice, Ledger};
use crate::Amount;
use serde::Serialize;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{Condvar, Mutex, OnceLock};

#[derive(Clone, Debug)]
pub struct ScreenOptions {
    pub battery: BatteryOptions,
    /// Sample-size calibration of the first-two digits test (None: skip it, raw tests only).
    pub calibration: Option<CalibrationOptions>,
}

impl Default for ScreenOptions {
    fn default() -> Self {
        ScreenOptions { battery: BatteryOptions::default(), calibration: Some(CalibrationOptions::default()) }
    }
}

/// One population's results: a supplier, the whole file, or the credit notes.
#[derive(Clone, Debug, Serialize)]
pub struct SupplierResult {
    /// Supplier id (index into the ledger's suppliers); u32::MAX for whole-file populations.
    pub id: u32,
    pub name: String,
    pub invoices: u64,
    pub amount_total: Amount,
    pub amount_min: Amount,
    pub amount_max: Amount,
    pub first_date: Option<String>,
    pub last_date: Option<String>,
    /// One object per test: first_digit, second_digit, first_two, first_three, last_two,
    /// summation, second_order, distortion, amount_checks.
    #[serde(flatten)]
    pub tests: Battery,
    /// deviates / consistent / too_few, after the correction across the supplier list.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub verdict: Option<Verdict>,
    /// Invoices needed to detect the deviation model at the chosen confidence and power.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub invoices_needed: Option<Option<u64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub calibration: Option<SupplierCalibration>,
}

#[derive(Clone, Debug, Serialize)]
pub struct ScreenReport {
    pub rows: Accounting,
    pub intake: IntakeInfo,
    pub parameters: Parameters,
    pub whole_file: SupplierResult,
    /// Credit notes (negative amounts), screened as their own population.
    pub credit_notes: SupplierResult,
    /// Ranked: most deviating first.
    pub suppliers: Vec<SupplierResult>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub calibration: Option<CalibrationSummary>,
    pub caution: &'static str,
}

/// What the calibration did across the list, and the overview chart's limit curves.
#[derive(Clone, Debug, Serialize)]
pub struct CalibrationSummary {
    pub confidence: f64,
    pub seed: u64,
    pub sims: u32,
    pub power: f64,
    pub fabricated_share: f64,
    pub correction: Correction,
    /// Level the corrected p-values are held to (1 - confidence).
    pub q: f64,
    pub alarms: usize,
    pub deviates: Vec<String>,
    pub too_few: usize,
    /// Critical first-two MAD against invoice count, at `confidence` and at 99.9 % (or 99 %).
    pub limit_curves: Vec<LimitCurve>,
    pub note: &'static str,
}

#[derive(Clone, Debug, Serialize)]
pub struct LimitCurve {
    pub confidence: f64,
    pub points: Vec<(u64, f64)>,
}

pub const CALIBRATION_NOTE: &str = "Verdicts compare each supplier's first-two digits MAD with the MADs of simulated honest suppliers of exactly its invoice count (exact multinomial samples from Benford's law); the p-values are then corrected across the supplier list. 'too_few' means that even wholly fabricated, evenly spread amounts could not be told apart at this size with the chosen power.";

#[derive(Clone, Debug, Serialize)]
pub struct Parameters {
    pub tests: String,
    pub min_amount: Amount,
    pub approval_limits: Vec<Amount>,
}

pub const CAUTION: &str = "A deviation from Benford's law is a reason to look, not proof of wrongdoing. Many honest suppliers deviate for plain reasons (fixed price lists, subscriptions, regulated fees). Do not confront a supplier or an employee on this alone; follow professional auditing standards, the firm's policies, local law and counsel.";

/// One population's result: its totals and the battery. `invs`: a slice of invoices, references
/// or [`Indexed`] members (see [`Members`]).
pub fn population<M: Members + ?Sized>(id: u32, name: &str, invs: &M, opts: &ScreenOptions) -> SupplierResult {
    population_with(id, name, invs, opts, None)
}

/// As [`population`], with the population's duplicate findings known already (see
/// [`battery::run_with_totals`]).
pub fn population_with<M: Members + ?Sized>(id: u32, name: &str, invs: &M, opts: &ScreenOptions, known: Option<Duplicates>) -> SupplierResult {
    population_in_windows(id, name, invs, opts, known, battery::WINDOW_PARTS)
}

/// As [`population_with`], its amounts sorted in windows of about 1/parts of the members
/// ([`battery::run_in_windows`]; the same result).
fn population_in_windows<M: Members + ?Sized>(id: u32, name: &str, invs: &M, opts: &ScreenOptions, known: Option<Duplicates>, parts: usize) -> SupplierResult {
    let (tests, t) = battery::run_in_windows(invs, &opts.battery, known, parts);
    SupplierResult {
        id,
        name: name.to_string(),
        invoices: invs.len() as u64,
        amount_total: t.total,
        amount_min: t.min,
        amount_max: t.max,
        first_date: t.first_date.map(crate::intake::format_date),
        last_date: t.last_date.map(crate::intake::format_date),
        tests,
        verdict: None,
        invoices_needed: None,
        calibration: None,
    }
}

fn first_two_counts<M: Members + ?Sized>(s: &SupplierResult, invs: &M) -> Vec<u64> {
    match &s.tests.first_two {
        Some(t) => t.counts.clone(),
        None => {
            let mut c = vec![0u64; 90];
            for i in 0..invs.len() {
                if let Some(d) = invs.at(i).amount.leading_digits(2) {
                    c[(d - 10) as usize] += 1;
                }
            }
            c
        }
    }
}

/// Calibrate the suppliers (in place) and summarise.
pub fn calibrate_list(suppliers: &mut [SupplierResult], counts: &[Vec<u64>], copts: &CalibrationOptions) -> CalibrationSummary {
    calibrate_list_with(&mut Calibrator::new(copts.clone()), suppliers, counts)
}

/// The null-table sizes [`calibrate_list_with`] will read that `cal` does not hold yet (the
/// suppliers' sizes, the power checkpoints and the limit curves), ascending: another Worker can
/// simulate some of them and [`Calibrator::insert_table`] put them in first.
pub fn calibration_tables(cal: &Calibrator, suppliers: &[SupplierResult], counts: &[Vec<u64>]) -> Vec<u64> {
    let ns: Vec<u64> = counts.iter().map(|c| c.iter().sum()).collect();
    let invoices: Vec<u64> = suppliers.iter().map(|s| s.invoices).collect();
    tables_for(cal, &ns, &invoices)
}

/// The null tables `cal` lacks for suppliers with `ns` first-two digit counts and `invoices`
/// invoices: their own and the power checkpoints' (`Calibrator::ledger_missing`) and the limit
/// curves', ascending and distinct.
fn tables_for(cal: &Calibrator, ns: &[u64], invoices: &[u64]) -> Vec<u64> {
    let mut need = cal.ledger_missing(ns);
    need.extend(cal.missing_tables(&limit_curve_sizes_of(invoices)));
    need.sort_unstable();
    need.dedup();
    need
}

/// The invoice counts at which the overview's limit curves are drawn.
fn limit_curve_sizes(suppliers: &[SupplierResult]) -> Vec<u64> {
    limit_curve_sizes_of(&suppliers.iter().map(|s| s.invoices).collect::<Vec<_>>())
}

/// [`limit_curve_sizes`] from the suppliers' invoice counts.
fn limit_curve_sizes_of(invoices: &[u64]) -> Vec<u64> {
    let nmax = invoices.iter().copied().max().unwrap_or(100).max(100);
    let nmin = invoices.iter().copied().filter(|&n| n > 0).min().unwrap_or(10).clamp(10, 100);
    let mut ns: Vec<u64> = Vec::new();
    let (l0, l1) = ((nmin as f64).ln(), ((nmax as f64) * 1.5).ln());
    for k in 0..=24 {
        let n = (l0 + (l1 - l0) * k as f64 / 24.0).exp().round() as u64;
        if ns.last() != Some(&n) {
            ns.push(n);
        }
    }
    ns
}

/// Each supplier's input to the calibration (first-two counts and amount range), in order.
pub fn calibration_inputs(suppliers: &[SupplierResult], counts: &[Vec<u64>]) -> Vec<SupplierInput> {
    suppliers
        .iter()
        .zip(counts)
        .map(|(s, c)| SupplierInput { first_two_counts: c.clone(), amount_min: s.amount_min, amount_max: s.amount_max })
        .collect()
}

/// As [`calibrate_list`], with the calibrator `cal` (its options; any null tables already in
/// it, e.g. simulated by another Worker, are used as they are: each is seeded by its own n, so
/// the numbers are the same as from a fresh one).
pub fn calibrate_list_with(cal: &mut Calibrator, suppliers: &mut [SupplierResult], counts: &[Vec<u64>]) -> CalibrationSummary {
    let copts = &cal.options().clone();
    let inputs = calibration_inputs(suppliers, counts);
    let lc = cal.ledger(&inputs);
    for (s, c) in suppliers.iter_mut().zip(lc.suppliers) {
        if let Some(ft) = s.tests.first_two.as_mut() {
            ft.mc_p_value = Some(c.mc_p_value);
            ft.mad_critical = Some(c.mad_critical);
        }
        s.verdict = Some(c.verdict);
        s.invoices_needed = Some(c.invoices_needed);
        s.calibration = Some(c);
    }
    let ns = limit_curve_sizes(suppliers);
    let hi = if copts.confidence < 0.999 { 0.999 } else { 0.9999 };
    let limit_curves = [copts.confidence, hi]
        .iter()
        .map(|&c| LimitCurve { confidence: c, points: ns.iter().copied().zip(cal.limit_curve(c, &ns)).collect() })
        .collect();
    CalibrationSummary {
        confidence: copts.confidence,
        seed: copts.seed,
        sims: copts.sims,
        power: copts.power,
        fabricated_share: copts.fabricated_share,
        correction: lc.correction,
        q: lc.q,
        alarms: lc.alarms,
        deviates: suppliers.iter().filter(|s| s.verdict == Some(Verdict::Deviates)).map(|s| s.name.clone()).collect(),
        too_few: suppliers.iter().filter(|s| s.verdict == Some(Verdict::TooFew)).count(),
        limit_curves,
        note: CALIBRATION_NOTE,
    }
}

/// Most deviating first: by calibrated p-value (else chi-square p), then MAD, then name.
pub fn rank(suppliers: &mut [SupplierResult]) {
    suppliers.sort_by(|a, b| {
        rank_key(a)
            .partial_cmp(&rank_key(b))
            .unwrap_or(std::cmp::Ordering::Equal)
            .then(mad_of(b).partial_cmp(&mad_of(a)).unwrap_or(std::cmp::Ordering::Equal))
            .then(a.name.cmp(&b.name))
    });
}

fn mad_of(s: &SupplierResult) -> f64 {
    s.tests.first_two.as_ref().map_or(0.0, |t| t.mad)
}

fn rank_key(s: &SupplierResult) -> f64 {
    s.tests
        .first_two
        .as_ref()
        .map(|t| t.mc_p_value.unwrap_or(t.p_value))
        .or_else(|| s.tests.first_digit.as_ref().map(|t| t.p_value))
        .unwrap_or(1.0)
}

pub fn screen(ledger: &Ledger, info: &IntakeInfo, min_amount: Amount, opts: &ScreenOptions) -> ScreenReport {
    let cal = opts.calibration.as_ref().map(|c| Calibrator::new(c.clone()));
    screen_with(ledger, info, min_amount, opts, cal)
}

/// Each supplier's calibration input (first-two digit counts, smallest and largest amount)
/// and invoice count, from one quick pass over the invoices, before any battery (suppliers with
/// invoices, in id order): the same as [`calibration_inputs`] gives from their batteries, so
/// that the null tables and the power work can start beside the batteries.
pub fn quick_calibration_inputs(ledger: &Ledger) -> (Vec<SupplierInput>, Vec<u64>) {
    let k = ledger.suppliers.len();
    let mut inputs: Vec<SupplierInput> = (0..k).map(|_| SupplierInput { first_two_counts: vec![0; 90], amount_min: Amount(i64::MAX), amount_max: Amount(0) }).collect();
    let mut invoices = vec![0u64; k];
    for inv in &ledger.invoices {
        let s = inv.supplier as usize;
        invoices[s] += 1;
        let x = &mut inputs[s];
        x.amount_min = x.amount_min.min(inv.amount);
        x.amount_max = x.amount_max.max(inv.amount);
        if let Some(d) = inv.amount.abs().leading_digits(2) {
            x.first_two_counts[(d - 10) as usize] += 1;
        }
    }
    inputs.into_iter().zip(invoices).filter(|(_, n)| *n > 0).unzip()
}

/// The null-table sizes `cal` lacks for suppliers with these calibration inputs and invoice
/// counts (from [`quick_calibration_inputs`], before any battery: so that they can be
/// simulated beside the batteries; a size missed here is simulated when read, with the same
/// numbers).
pub fn screen_tables(cal: &Calibrator, inputs: &[SupplierInput], invoices: &[u64]) -> Vec<u64> {
    let ns: Vec<u64> = inputs.iter().map(SupplierInput::n).collect();
    tables_for(cal, &ns, invoices)
}

/// As [`screen`], with a calibrator that may hold null tables already (e.g. simulated while
/// the file was read). Natively the work is spread over two threads, so that memory stays
/// within the per-row budget: one makes the batteries (the suppliers', then the whole file's
/// and the credit notes'), which need memory; the other, which needs next to none, the null
/// tables and the power work for each supplier, from the quick pass's inputs
/// ([`quick_calibration_inputs`]; the calibration after the batteries finds them cached).
/// Once its batteries are done, the first thread takes null tables ([`table_items`], from the
/// costliest end) and then suppliers' power work too, with a copy of the calibrator (the
/// batteries' memory is free by then). The whole file's and the credit notes' batteries go to
/// whichever thread is free first: the second, when it is done before the suppliers' batteries
/// (large ledgers), sorts the whole file's amounts in narrower windows ([`WHOLE_BESIDE_PARTS`])
/// and leaves its duplicate groups to be merged from the suppliers' afterwards; once it has
/// nothing left, the suppliers' batteries take a second thread for the rest of their list. Every
/// number is the same as on one thread (tables and power results are seeded by their own size
/// and path).
pub fn screen_with(ledger: &Ledger, info: &IntakeInfo, min_amount: Amount, opts: &ScreenOptions, cal: Option<Calibrator>) -> ScreenReport {
    screen_threads(ledger, info, min_amount, opts, cal, None)
}

/// [`screen_with`] with the whole file's battery given to the calibration thread (`beside`
/// true: beside the suppliers' batteries) or to the battery thread (false), whichever is free
/// first otherwise. For tests: the report is the same either way.
#[doc(hidden)]
pub fn screen_with_whole(ledger: &Ledger, info: &IntakeInfo, min_amount: Amount, opts: &ScreenOptions, cal: Option<Calibrator>, beside: bool) -> ScreenReport {
    screen_threads(ledger, info, min_amount, opts, cal, Some(beside))
}

fn screen_threads(ledger: &Ledger, info: &IntakeInfo, min_amount: Amount, opts: &ScreenOptions, mut cal: Option<Calibrator>, beside: Option<bool>) -> ScreenReport {
    if cfg!(target_arch = "wasm32") {
        return finish_screen(ledger, info, min_amount, opts, supplier_batteries(ledger, opts), cal.as_mut());
    }
    // The calibration thread makes the quick pass (the suppliers' calibration inputs and
    // invoice counts, and the power work's order: costliest supplier first), the null tables,
    // then the power work one supplier at a time; the battery thread, once its batteries are
    // done, takes suppliers' power work too (with a copy of the calibrator, asked for then: the
    // copy holds the tables).
    let calibrating = cal.is_some();
    let plan: OnceLock<(Vec<SupplierInput>, Vec<u64>, Vec<usize>)> = OnceLock::new();
    let next = AtomicUsize::new(0);
    let table_plan: OnceLock<(Vec<Vec<u64>>, u32, u64)> = OnceLock::new(); // items, sims, seed
    let next_table = AtomicUsize::new(0);
    // the battery thread's tables, and how many items are done (by either thread)
    let made: (Mutex<(Vec<NullTable>, usize)>, Condvar) = (Mutex::new((Vec::new(), 0)), Condvar::new());
    let copy_wanted = AtomicBool::new(false);
    let copy: (Mutex<Option<Option<Calibrator>>>, Condvar) = (Mutex::new(None), Condvar::new());
    // the whole file's and the credit notes' batteries: taken by the first thread free
    let whole_taken = AtomicBool::new(false);
    // set once the calibration thread has nothing left: the suppliers' batteries may then use
    // a second thread
    let core_free = AtomicBool::new(false);
    let take_whole = |on_calibration_thread: bool| beside.map_or_else(|| !whole_taken.swap(true, Ordering::AcqRel), |b| b == on_calibration_thread);
    let ((Batteries { suppliers, counts, file_duplicates }, mine, theirs), (mut cal, whole_beside)) = std::thread::scope(|sc| {
        let calibration = sc.spawn(|| {
            let give = |c: Option<Calibrator>| {
                *copy.0.lock().expect("copy") = Some(c);
                copy.1.notify_all();
            };
            if let Some(c) = cal.as_mut() {
                let (inputs, invoices, order) = plan.get_or_init(|| {
                    let (inputs, invoices) = quick_calibration_inputs(ledger);
                    let order = costliest_first(&inputs, (0..inputs.len()).collect());
                    (inputs, invoices, order)
                });
                // the null tables: items taken from the costliest end, by the battery thread
                // too once its batteries are done; its tables come back through `made`
                let (items, _, _) = table_plan.get_or_init(|| (table_items(&screen_tables(c, inputs, invoices)), c.options().sims, c.options().seed));
                loop {
                    let k = next_table.fetch_add(1, Ordering::AcqRel);
                    let Some(j) = items.len().checked_sub(k + 1) else { break };
                    c.prepare(&items[j], 1);
                    made.0.lock().expect("made").1 += 1;
                }
                // wait for an item the battery thread is still simulating, then take its tables
                let mut m = made.0.lock().expect("made");
                while m.1 < items.len() {
                    m = made.1.wait(m).expect("made");
                }
                for t in m.0.drain(..) {
                    c.insert_table(t);
                }
                drop(m);
                loop {
                    if copy_wanted.swap(false, Ordering::AcqRel) {
                        give(Some(c.for_power_thread()));
                    }
                    let k = next.fetch_add(1, Ordering::Relaxed);
                    let Some(&i) = order.get(k) else { break };
                    c.power_of(&inputs[i]);
                }
            }
            give(None); // nothing (more) to share
            // the whole file's battery beside the suppliers' (its duplicate groups, merged from
            // theirs, go in afterwards: a placeholder spares the search)
            let whole_beside = take_whole(true).then(|| whole_file_and_credits_in(ledger, opts, opts.battery.tests.amounts.then(Duplicates::default), WHOLE_BESIDE_PARTS));
            core_free.store(true, Ordering::Release);
            (cal, whole_beside)
        });
        let mut b = supplier_batteries_with(ledger, opts, Some(&core_free)).0;
        let mine = take_whole(false).then(|| whole_file_and_credits(ledger, opts, b.file_duplicates.take()));
        // help with the null tables if any are left (their plan is set before the first is taken)
        if let Some((items, sims, seed)) = table_plan.get().filter(|p| next_table.load(Ordering::Acquire) < p.0.len()) {
            let benford = Categorical::new(&crate::benford::first_two());
            loop {
                let k = next_table.fetch_add(1, Ordering::AcqRel);
                let Some(j) = items.len().checked_sub(k + 1) else { break };
                let ts = NullTable::simulate_item(&benford, &items[j], *sims, *seed);
                let mut m = made.0.lock().expect("made");
                m.0.extend(ts);
                m.1 += 1;
                made.1.notify_all();
            }
        }
        // help with the power work if any is left
        let mut theirs = Vec::new();
        if calibrating && plan.get().is_none_or(|p| next.load(Ordering::Relaxed) < p.2.len()) {
            copy_wanted.store(true, Ordering::Release);
            let mut g = copy.0.lock().expect("copy");
            while g.is_none() {
                g = copy.1.wait(g).expect("copy");
            }
            if let (Some(Some(mut c)), Some((inputs, _, order))) = (g.take(), plan.get()) {
                drop(g);
                theirs = c.powers_shared(inputs, order, &next);
            }
        }
        ((b, mine, theirs), calibration.join().expect("calibration thread"))
    });
    let (whole, credits) = match (mine, whole_beside) {
        (Some(w), _) => w,
        (None, Some((mut whole, credits))) => {
            if let (Some(a), Some(d)) = (whole.tests.amount_checks.as_mut(), file_duplicates) {
                a.duplicates = d;
            }
            (whole, credits)
        }
        (None, None) => unreachable!("one thread takes the whole file's battery"),
    };
    if let (Some(c), Some((inputs, _, _))) = (cal.as_mut(), plan.get()) {
        for (i, r) in theirs {
            c.insert_power(&inputs[i], r);
        }
    }
    finish_screen_parts(ledger, info, min_amount, opts, suppliers, &counts, cal.as_mut(), whole, credits)
}

/// Every supplier's battery (suppliers with invoices, in id order), their first-two digit
/// counts (which calibration reads), and the whole file's duplicate findings merged from
/// theirs ([`DuplicatesMerge`]; None when the amount checks are off), which
/// [`whole_file_and_credits`] then need not search again.
#[derive(Clone)]
pub struct Batteries {
    pub suppliers: Vec<SupplierResult>,
    pub counts: Vec<Vec<u64>>,
    pub file_duplicates: Option<Duplicates>,
}

/// The first half of [`screen`]: every supplier's battery ([`Batteries`]).
pub fn supplier_batteries(ledger: &Ledger, opts: &ScreenOptions) -> Batteries {
    supplier_batteries_with(ledger, opts, None).0
}

/// [`supplier_batteries`] with a second thread taking suppliers from the other end of the list
/// from the start (for tests: the same batteries); also how many suppliers it took.
#[doc(hidden)]
pub fn supplier_batteries_helped(ledger: &Ledger, opts: &ScreenOptions) -> (Batteries, usize) {
    supplier_batteries_with(ledger, opts, Some(&AtomicBool::new(true)))
}

/// [`supplier_batteries`]; once `core_free` is set (the other thread has nothing left to do), a
/// second thread takes the suppliers after the largest from the end of the list while this one
/// goes on from the front, until the two meet. Each supplier's battery reads only its own
/// members, and the whole file's duplicate groups are merged by a total order, so the result is
/// the same. Returns the batteries and how many suppliers the second thread took.
fn supplier_batteries_with(ledger: &Ledger, opts: &ScreenOptions, core_free: Option<&AtomicBool>) -> (Batteries, usize) {
    // Memory: the largest supplier first, read through a list of its own invoice indices (or
    // the whole file as a slice when it has every invoice); then the others through one exactly
    // sized index array of theirs (4 bytes per invoice). No list of references is built.
    let k = ledger.suppliers.len();
    let mut sizes = vec![0usize; k];
    for inv in &ledger.invoices {
        sizes[inv.supplier as usize] += 1;
    }
    let big = (0..k).max_by_key(|&s| (sizes[s], std::cmp::Reverse(s))).filter(|&s| sizes[s] > 0);
    let mut out: Vec<Option<(SupplierResult, Vec<u64>)>> = (0..k).map(|_| None).collect();
    let mut merge = DuplicatesMerge::default();
    let keep = opts.battery.max_duplicate_groups;
    // One supplier's result and counts; its duplicates go to the whole file's, with its member
    // i at file index `at(i)`.
    fn one<M: Members + ?Sized>(ledger: &Ledger, sid: usize, invs: &M, at: impl Fn(usize) -> usize, opts: &ScreenOptions, merge: &mut DuplicatesMerge) -> Option<(SupplierResult, Vec<u64>)> {
        let r = population(sid as u32, &ledger.suppliers[sid].name, invs, opts);
        let c = first_two_counts(&r, invs);
        if let Some(a) = &r.tests.amount_checks {
            merge.add(&a.duplicates, at, opts.battery.max_duplicate_groups);
        }
        Some((r, c))
    }
    if let Some(b) = big {
        out[b] = if sizes[b] == ledger.invoices.len() {
            one(ledger, b, ledger.invoices.as_slice(), |i| i, opts, &mut merge)
        } else {
            let mut idx: Vec<u32> = Vec::with_capacity(sizes[b]);
            idx.extend((0..ledger.invoices.len() as u32).filter(|&i| ledger.invoices[i as usize].supplier as usize == b));
            one(ledger, b, &Indexed { all: &ledger.invoices, idx: &idx }, |i| idx[i] as usize, opts, &mut merge)
        };
    }
    let order = ledger.supplier_order_without(big.map(|b| b as u32));
    // A supplier of up to WINDOW_MIN invoices is copied out first (one bounded buffer per
    // thread, at most 1.8 MB, reused): its battery then reads them from cache instead of
    // gathering them from the whole store on every pass. Larger ones are read in place through
    // their indices.
    let small = (0..k).filter(|&s| Some(s) != big && sizes[s] <= battery::WINDOW_MIN).map(|s| sizes[s]).max().unwrap_or(0);
    let sids: Vec<usize> = (0..k).filter(|&s| Some(s) != big && sizes[s] > 0).collect();
    let taken: Vec<AtomicBool> = sids.iter().map(|_| AtomicBool::new(false)).collect();
    let run = |sid: usize, copy: &mut Vec<Invoice>, merge: &mut DuplicatesMerge| {
        let idx = order.of(sid);
        let at = |i: usize| idx[i] as usize;
        if idx.len() <= battery::WINDOW_MIN {
            copy.clear();
            let members = Indexed { all: &ledger.invoices, idx };
            copy.extend((0..idx.len()).map(|p| *members.at(p)));
            one(ledger, sid, copy.as_slice(), at, opts, merge)
        } else {
            one(ledger, sid, &Indexed { all: &ledger.invoices, idx }, at, opts, merge)
        }
    };
    let helped = std::thread::scope(|sc| {
        let mut helper = None;
        let mut copy: Vec<Invoice> = Vec::with_capacity(small);
        for (j, &sid) in sids.iter().enumerate() {
            if taken[j].swap(true, Ordering::AcqRel) {
                break; // the second thread, coming from the end, has taken the rest
            }
            if helper.is_none() && j + 1 < sids.len() && core_free.is_some_and(|f| f.load(Ordering::Acquire)) {
                let (sids, taken, run) = (&sids, &taken, &run);
                helper = Some(sc.spawn(move || {
                    let (mut copy, mut m, mut done) = (Vec::with_capacity(small), DuplicatesMerge::default(), Vec::new());
                    for j in (0..sids.len()).rev() {
                        if taken[j].swap(true, Ordering::AcqRel) {
                            break;
                        }
                        done.push((sids[j], run(sids[j], &mut copy, &mut m)));
                    }
                    (done, m)
                }));
            }
            out[sid] = run(sid, &mut copy, &mut merge);
        }
        let Some(h) = helper else { return 0 };
        let (done, m) = h.join().expect("battery helper thread");
        let n = done.len();
        for (sid, r) in done {
            out[sid] = r;
        }
        // its groups carry file indices already; the merge keeps the same groups in any order
        if let Some(d) = m.finish(keep) {
            merge.add(&d, |i| i, keep);
        }
        n
    });
    drop(order);
    let (suppliers, counts) = out.into_iter().flatten().unzip();
    (Batteries { suppliers, counts, file_duplicates: merge.finish(keep) }, helped)
}

/// The second half of [`screen`]: calibration with `cal` (made from `opts.calibration`, and
/// holding any null tables simulated ahead; None when calibration is off), ranking, the whole
/// file and the credit notes.
pub fn finish_screen(
    ledger: &Ledger,
    info: &IntakeInfo,
    min_amount: Amount,
    opts: &ScreenOptions,
    batteries: Batteries,
    cal: Option<&mut Calibrator>,
) -> ScreenReport {
    let Batteries { suppliers, counts, file_duplicates } = batteries;
    let (whole, credits) = whole_file_and_credits(ledger, opts, file_duplicates);
    finish_screen_parts(ledger, info, min_amount, opts, suppliers, &counts, cal, whole, credits)
}

/// The whole file's and the credit notes' results (their batteries). `file_duplicates`: the
/// whole file's duplicate findings from [`supplier_batteries`], when made (else searched here).
pub fn whole_file_and_credits(ledger: &Ledger, opts: &ScreenOptions, file_duplicates: Option<Duplicates>) -> (SupplierResult, SupplierResult) {
    whole_file_and_credits_in(ledger, opts, file_duplicates, battery::WINDOW_PARTS)
}

/// As [`whole_file_and_credits`], the amounts sorted in windows of about 1/parts of them.
fn whole_file_and_credits_in(ledger: &Ledger, opts: &ScreenOptions, file_duplicates: Option<Duplicates>, parts: usize) -> (SupplierResult, SupplierResult) {
    (
        population_in_windows(u32::MAX, "(whole file)", ledger.invoices.as_slice(), opts, file_duplicates, parts),
        population_in_windows(u32::MAX, "(credit notes)", ledger.credit_notes.as_slice(), opts, None, parts),
    )
}

/// Windows the whole file's amounts are sorted in when its battery runs beside the suppliers'
/// (natively, on the calibration thread once that is done): a sixteenth of the file (half a
/// byte per row) instead of a quarter, so that the two batteries together stay within the
/// memory per row of the suppliers' alone (docs/BENCHMARKS.md).
const WHOLE_BESIDE_PARTS: usize = 16;

/// [`finish_screen`] with the whole file's and the credit notes' results already made
/// ([`whole_file_and_credits`]).
#[allow(clippy::too_many_arguments)]
pub fn finish_screen_parts(
    ledger: &Ledger,
    info: &IntakeInfo,
    min_amount: Amount,
    opts: &ScreenOptions,
    mut suppliers: Vec<SupplierResult>,
    counts: &[Vec<u64>],
    cal: Option<&mut Calibrator>,
    whole: SupplierResult,
    credits: SupplierResult,
) -> ScreenReport {
    let calibration = cal.map(|c| calibrate_list_with(c, &mut suppliers, counts));
    rank(&mut suppliers);
    ScreenReport {
        rows: ledger.accounting.clone(),
        intake: info.clone(),
        parameters: Parameters {
            tests: opts.battery.tests.to_string(),
            min_amount,
            approval_limits: opts.battery.approval_limits.clone(),
        },
        whole_file: whole,
        credit_notes: credits,
        suppliers,
        calibration,
        caution: CAUTION,
    }
}

/// A readable ranked table for the terminal.
pub fn render_text(rep: &ScreenReport) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let r = &rep.rows;
    let _ = writeln!(s, "rows read {}  analysed {}  excluded {}", r.read, r.analysed, r.excluded);
    for e in &r.exclusions {
        let _ = writeln!(s, "  excluded {:>8}  {}", e.count, e.description);
    }
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "{:<4} {:<34} {:>8} {:>15} {:>8} {:>9} {:>9} {:>8} {:>7}",
        "rank", "supplier", "invoices", "amount", "MAD 1-2", "p (chi2)", "p 1st", "DF %", "top amt"
    );
    let _ = write!(s, "");
    let line = |s: &mut String, rank: String, sp: &SupplierResult| {
        let name: String = sp.name.chars().take(34).collect();
        let t = &sp.tests;
        let ft = t.first_two.as_ref();
        let verdict = match (&sp.verdict, &sp.calibration) {
            (Some(Verdict::Deviates), Some(c)) => format!("deviates (sim. p {:.2e}, corrected {:.2e})", c.mc_p_value, c.adjusted_p_value.unwrap_or(c.mc_p_value)),
            (Some(Verdict::Consistent), Some(c)) => format!("consistent (sim. p {:.3})", c.mc_p_value),
            (Some(Verdict::TooFew), Some(c)) => match c.more_invoices_needed {
                Some(m) => format!("too few invoices (about {m} more needed)"),
                None => "too few invoices".to_string(),
            },
            _ => String::new(),
        };
        let _ = writeln!(
            s,
            "{:<4} {:<34} {:>8} {:>15} {:>8} {:>9} {:>9} {:>8} {:>7}  {verdict}",
            rank,
            name,
            sp.invoices,
            sp.amount_total.to_string(),
            ft.map_or("-".into(), |f| format!("{:.5}", f.mad)),
            ft.map_or("-".into(), |f| format!("{:.2e}", f.p_value)),
            t.first_digit.as_ref().map_or("-".into(), |f| format!("{:.2e}", f.p_value)),
            t.distortion.as_ref().map_or("-".into(), |d| format!("{:+.1}", d.distortion_factor_pct)),
            t.amount_checks.as_ref().and_then(|a| a.most_frequent.first()).map_or("-".into(), |f| format!("{:.1}%", f.share * 100.0)),
        );
    };
    for (i, sp) in rep.suppliers.iter().enumerate() {
        line(&mut s, format!("{}", i + 1), sp);
    }
    line(&mut s, String::new(), &rep.whole_file);
    if rep.credit_notes.invoices > 0 {
        line(&mut s, String::new(), &rep.credit_notes);
    }
    if let Some(c) = &rep.calibration {
        let _ = writeln!(
            s,
            "\nCalibrated at {:.1} % confidence, seed {}, {} simulations per invoice count, {:?} correction across {} suppliers: {} deviate(s), {} with too few invoices for a verdict.",
            c.confidence * 100.0, c.seed, c.sims, c.correction, rep.suppliers.len(), c.alarms, c.too_few
        );
    }
    let _ = writeln!(s, "\nMAD 1-2: first-two digits mean absolute deviation; p (chi2): chi-square p-value, 89 df; p 1st: first digit; DF: distortion factor; top amt: share of the most frequent exact amount.");
    let _ = writeln!(s, "\n{}", rep.caution);
    s
}
