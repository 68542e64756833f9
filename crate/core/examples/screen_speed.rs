//! Native side of the page's calibration benchmark (`node bench/speed.mjs --page`): reads a
//! ledger, then times the screen in the page Worker's phases — the batteries
//! (`report::supplier_batteries`), the null tables every supplier's calibration reads
//! (`report::calibration_tables`, simulated on 1 thread, then again on 2), and the rest
//! (`report::finish_screen`: power curves, invoices needed, ranking, whole-file battery).
//! Prints one JSON line of seconds and the ranked suppliers' calibrated p-values.
//! Usage: screen_speed FILE
use digitdrift_core::calibrate::{CalibrationOptions, Calibrator};
use digitdrift_core::intake::{Intake, IntakeOptions};
use digitdrift_core::report::{self, ScreenOptions};
use std::time::Instant;

fn main() {
    let path = std::env::args().nth(1).expect("usage: screen_speed FILE");
    let data = std::fs::read(&path).expect("cannot read FILE");
    let o = IntakeOptions::default();
    let min = o.min_amount;
    let mut it = Intake::new(o);
    for chunk in data.chunks(1 << 20) {
        it.feed(chunk).expect("intake failed");
    }
    let r = it.finish().expect("intake failed");
    let opts = ScreenOptions::default();
    let t = Instant::now();
    let (suppliers, counts) = report::supplier_batteries(&r.ledger, &opts);
    let batteries = t.elapsed().as_secs_f64();
    let mut tables = [0.0f64; 2];
    let mut out = None;
    for (k, threads) in [1usize, 2].into_iter().enumerate() {
        let mut cal = Calibrator::new(CalibrationOptions::default());
        let need = report::calibration_tables(&cal, &suppliers, &counts);
        let t = Instant::now();
        cal.prepare(&need, threads);
        tables[k] = t.elapsed().as_secs_f64();
        if k == 0 {
            cal.set_threads(1);
            let t = Instant::now();
            let rep = report::finish_screen(&r.ledger, &r.info, min, &opts, suppliers.clone(), &counts, Some(&mut cal));
            out = Some((t.elapsed().as_secs_f64(), need.len(), rep));
        }
    }
    let (finish, ntables, rep) = out.expect("screen");
    // per ranked supplier: calibrated p-value, corrected p-value, invoices needed (-1: none)
    let mc: Vec<[f64; 3]> = rep
        .suppliers
        .iter()
        .filter_map(|s| s.calibration.as_ref())
        .map(|c| [c.mc_p_value, c.adjusted_p_value.unwrap_or(-1.0), c.invoices_needed.map_or(-1.0, |n| n as f64)])
        .collect();
    println!(
        "{{\"suppliers\":{},\"tables\":{ntables},\"batteries_s\":{batteries},\"tables_1_s\":{},\"tables_2_s\":{},\"finish_s\":{finish},\"mc\":{}}}",
        rep.suppliers.len(),
        tables[0],
        tables[1],
        serde_json::to_string(&mc).expect("json")
    );
}
