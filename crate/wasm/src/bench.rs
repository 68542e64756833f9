//! Speed workloads exposed to the browser benchmark (bench/browser.mjs); the work itself is in
//! `digitdrift_core::workload`, timed in JS with performance.now().
use digitdrift_core::workload;
use wasm_bindgen::prelude::*;

#[wasm_bindgen(js_name = benchMultinomialStats)]
pub fn bench_multinomial_stats(n: u32, sims: u32, seed: u32) -> f64 {
    workload::multinomial_stats(n as u64, sims, seed as u64)
}

#[wasm_bindgen(js_name = benchCalibrateLedger500)]
pub fn bench_calibrate_ledger_500(full: bool) -> usize {
    workload::calibrate_ledger_500(full)
}

// Two-Worker calibration of the 500-supplier list (bench/speed.mjs): one Worker asks for the
// missing table sizes and their split, each Worker simulates its share, the first one calibrates
// from both shares. The tables are seeded per size, so the numbers are those of one Worker.

#[wasm_bindgen(js_name = benchLedger500TableSizes)]
pub fn bench_ledger_500_table_sizes() -> Vec<f64> {
    workload::ledger_500_table_sizes().into_iter().map(|n| n as f64).collect()
}

/// Share `part` of `parts` of the table sizes `ns` (balanced by simulation cost).
#[wasm_bindgen(js_name = benchTableShare)]
pub fn bench_table_share(ns: &[f64], part: usize, parts: usize) -> Vec<f64> {
    let ns: Vec<u64> = ns.iter().map(|&n| n as u64).collect();
    digitdrift_core::calibrate::split_sizes(&ns, parts).get(part).map_or(Vec::new(), |v| v.iter().map(|&n| n as f64).collect())
}

#[wasm_bindgen(js_name = benchNullTables)]
pub fn bench_null_tables(ns: &[f64]) -> Vec<f64> {
    let ns: Vec<u64> = ns.iter().map(|&n| n as u64).collect();
    workload::null_tables_flat(&ns)
}

#[wasm_bindgen(js_name = benchCalibrateLedger500From)]
pub fn bench_calibrate_ledger_500_from(ns: &[f64], flat: &[f64]) -> usize {
    let ns: Vec<u64> = ns.iter().map(|&n| n as u64).collect();
    workload::calibrate_ledger_500_from(&ns, flat)
}
