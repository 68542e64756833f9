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
