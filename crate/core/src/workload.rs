//! Fixed workloads for speed comparisons. The same functions are timed natively
//! (`examples/speed.rs`) and in Chromium through the binding layer (`bench/browser.mjs`), so a
//! wasm/native ratio compares exactly the same work. Nothing here is used by the screen itself.

use crate::amount::Amount;
use crate::benford;
use crate::calibrate::{CalibrationOptions, Calibrator, Categorical, Moments, NullTable, SupplierInput};
use crate::rng::DetRng;

/// `sims` multinomial samples of `n` invoices over the 90 first-two bins under Benford, each
/// followed by the statistics a null table keeps (MAD, chi-square, KS, max |Z|), as
/// `NullTable::simulate` does. Returns the sum of the MADs (so the work cannot be optimised away).
pub fn multinomial_stats(n: u64, sims: u32, seed: u64) -> f64 {
    let p = benford::first_two();
    let cat = Categorical::new(&p);
    let mom = Moments::new(n, &p);
    let mut rng = DetRng::seed_from_u64(seed);
    let mut cnt = [0u64; 90];
    let mut acc = 0.0;
    for _ in 0..sims {
        cnt.iter_mut().for_each(|x| *x = 0);
        cat.add(&mut rng, n, &mut cnt);
        acc += mom.stats(&cnt).mad;
    }
    acc
}

/// An invented 500-supplier list: sizes log-uniform from 20 to 20,000 invoices, counts drawn
/// under Benford (the same list as `benches/calibrate.rs`).
pub fn ledger_500() -> Vec<SupplierInput> {
    let p = benford::first_two();
    let cat = Categorical::new(&p);
    let mut rng = DetRng::seed_from_u64(99);
    (0..500)
        .map(|_| {
            let n = libm::round(libm::exp(libm::log(20.0) + rng.next_f64() * libm::log(1000.0))) as u64;
            let mut c = vec![0u64; 90];
            cat.add(&mut rng, n, &mut c);
            SupplierInput { first_two_counts: c, amount_min: Amount::from_units(12), amount_max: Amount::from_units(4_800) }
        })
        .collect()
}

/// Calibrates [`ledger_500`] from a cold cache at the default 10,000 simulations per size:
/// `full` adds power curves and invoices needed. Returns the number of alarms.
pub fn calibrate_ledger_500(full: bool) -> usize {
    calibrate_ledger_500_threads(full, 1)
}

/// As [`calibrate_ledger_500`], with the missing null tables simulated first over `threads`
/// threads ([`Calibrator::prepare`]; one on wasm32). Same numbers for any `threads`.
pub fn calibrate_ledger_500_threads(full: bool, threads: usize) -> usize {
    let inputs = ledger_500();
    let mut cal = Calibrator::new(CalibrationOptions::default());
    cal.set_threads(threads);
    if full {
        cal.ledger(&inputs).alarms
    } else {
        let ns: Vec<u64> = inputs.iter().map(SupplierInput::n).collect();
        cal.prepare(&ns, threads);
        inputs.iter().filter(|s| cal.null_only(&s.first_two_counts).mc_p_value <= 0.05).count()
    }
}

/// The null-table sizes [`calibrate_ledger_500`] without power curves needs (cold cache).
pub fn ledger_500_table_sizes() -> Vec<u64> {
    let ns: Vec<u64> = ledger_500().iter().map(SupplierInput::n).collect();
    Calibrator::new(CalibrationOptions::default()).missing_tables(&ns)
}

/// [`calibrate_ledger_500`] without power curves, from tables simulated elsewhere (e.g. by two
/// Workers): `ns` and, per n, its four sorted columns of `sims` values concatenated in `flat`
/// (as [`null_tables_flat`] gives them). Returns the number of alarms.
pub fn calibrate_ledger_500_from(ns: &[u64], flat: &[f64]) -> usize {
    let inputs = ledger_500();
    let mut cal = Calibrator::new(CalibrationOptions::default());
    let sims = cal.options().sims as usize;
    assert_eq!(flat.len(), ns.len() * 4 * sims, "4 columns of sims values per table");
    for (i, &n) in ns.iter().enumerate() {
        let at = |j: usize| flat[(4 * i + j) * sims..(4 * i + j + 1) * sims].to_vec();
        cal.insert_table(NullTable::from_columns(n, [at(0), at(1), at(2), at(3)]));
    }
    inputs.iter().filter(|s| cal.null_only(&s.first_two_counts).mc_p_value <= 0.05).count()
}

/// The null tables at `ns` (default seed and sims), each as its four sorted columns, concatenated.
pub fn null_tables_flat(ns: &[u64]) -> Vec<f64> {
    let o = CalibrationOptions::default();
    let cat = Categorical::new(&benford::first_two());
    let mut out = Vec::with_capacity(ns.len() * 4 * o.sims as usize);
    for t in NullTable::simulate_many(&cat, ns, o.sims, o.seed, 1) {
        for c in t.columns() {
            out.extend_from_slice(c);
        }
    }
    out
}
