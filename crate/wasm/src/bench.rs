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
