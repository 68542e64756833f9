//! Fixed workloads for speed comparisons. The same functions are timed natively
//! (`examples/speed.rs`) and in Chromium through the binding layer (`bench/browser.mjs`), so a
//! wasm/native ratio compares exactly the same work. Nothing here is used by the screen itself.

use crate::amount::Amount;
use crate::benford;
use crate::calibrate::{CalibrationOptions, Calibrator, Categorical, Moments, SupplierInput};
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
    let inputs = ledger_500();
    let mut cal = Calibrator::new(CalibrationOptions::default());
    if full {
        cal.ledger(&inputs).alarms
    } else {
        inputs.iter().filter(|s| cal.null_only(&s.first_two_counts).mc_p_value <= 0.05).count()
    }
}
