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

/// Intake alone, for the browser benchmark's intake-only mode (`node bench/browser.mjs
/// --intake-only FILE`): the Worker feeds the file's 1 MiB `File.slice` chunks straight into
/// [`digitdrift_core::intake::Intake`] (no SHA-256 fingerprint, no digit tests, no calibration)
/// and times it with performance.now().
#[wasm_bindgen(js_name = BenchIntake)]
pub struct BenchIntake {
    intake: Option<digitdrift_core::intake::Intake>,
}

#[wasm_bindgen(js_class = BenchIntake)]
impl BenchIntake {
    #[wasm_bindgen(constructor)]
    pub fn new() -> BenchIntake {
        BenchIntake { intake: Some(digitdrift_core::intake::Intake::new(Default::default())) }
    }

    /// The file's size (as the page's `Session::setSizeHint`).
    #[wasm_bindgen(js_name = setSizeHint)]
    pub fn set_size_hint(&mut self, bytes: f64) {
        if let Some(i) = self.intake.as_mut() {
            i.set_size_hint(bytes.max(0.0) as u64);
        }
    }

    pub fn feed(&mut self, chunk: &[u8]) -> Result<(), JsValue> {
        let it = self.intake.as_mut().ok_or_else(|| JsValue::from_str("intake already finished"))?;
        it.feed(chunk).map_err(|e| JsValue::from_str(&e.to_string()))
    }

    /// Finish; returns `[rows read, rows analysed]`.
    pub fn finish(&mut self) -> Result<Vec<f64>, JsValue> {
        let it = self.intake.take().ok_or_else(|| JsValue::from_str("intake already finished"))?;
        let r = it.finish().map_err(|e| JsValue::from_str(&e.to_string()))?;
        Ok(vec![r.ledger.accounting.read as f64, r.ledger.accounting.analysed as f64])
    }
}

impl Default for BenchIntake {
    fn default() -> Self {
        Self::new()
    }
}
