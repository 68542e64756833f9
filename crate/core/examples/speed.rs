//! Native side of the side-by-side speed comparison (bench/browser.mjs times the same
//! `digitdrift_core::workload` functions in Chromium). Prints one JSON line of seconds.
//! Run: `cargo run --release -p digitdrift-core --example speed`.
use digitdrift_core::workload;
use std::time::Instant;

fn time<T>(f: impl FnOnce() -> T) -> (f64, T) {
    let t = Instant::now();
    let v = f();
    (t.elapsed().as_secs_f64(), v)
}

fn main() {
    let sims = 200_000u32;
    let (t_mult, _) = time(|| workload::multinomial_stats(1_000, sims, 1));
    let (t_null, _) = time(|| workload::calibrate_ledger_500(false));
    let (t_full, _) = time(|| workload::calibrate_ledger_500(true));
    // the same null tables simulated over 2 threads (the page uses 2 Workers instead)
    let (t_null2, _) = time(|| workload::calibrate_ledger_500_threads(false, 2));
    let (t_full2, _) = time(|| workload::calibrate_ledger_500_threads(true, 2));
    println!(
        "{{\"sims\":{sims},\"multinomial_stats_n1000_s\":{t_mult},\"sims_per_s\":{},\"ledger500_null_s\":{t_null},\"ledger500_full_s\":{t_full},\"ledger500_null_2_s\":{t_null2},\"ledger500_full_2_s\":{t_full2}}}",
        sims as f64 / t_mult
    );
}
