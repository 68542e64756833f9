//! Native side of the page's calibration benchmark (`node bench/speed.mjs --page`): reads a
//! ledger, then times the screen in the page Worker's phases — the batteries
//! (`report::supplier_batteries`), the null tables every supplier's calibration reads
//! (`report::calibration_tables`), the power work per supplier (`Calibrator::powers`: power
//! against wholly fabricated amounts, power curves) and the rest (`report::finish_screen`:
//! p-values, correction, ranking, whole-file battery), once with the tables and the power work
//! on 1 thread and once on 2. Prints one JSON line of seconds and the ranked suppliers'
//! calibrated p-values (the same from both runs, or it exits 1).
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
    let b = report::supplier_batteries(&r.ledger, &opts);
    let (suppliers, counts) = (&b.suppliers, &b.counts);
    let batteries = t.elapsed().as_secs_f64();
    let inputs = report::calibration_inputs(suppliers, counts);
    let mut runs = Vec::new();
    for threads in [1usize, 2] {
        let mut cal = Calibrator::new(CalibrationOptions::default());
        cal.set_threads(threads);
        let need = report::calibration_tables(&cal, suppliers, counts);
        let t = Instant::now();
        cal.prepare(&need, threads);
        let tables = t.elapsed().as_secs_f64();
        let t = Instant::now();
        cal.powers(&inputs, threads);
        let powers = t.elapsed().as_secs_f64();
        let t = Instant::now();
        let rep = report::finish_screen(&r.ledger, &r.info, min, &opts, b.clone(), Some(&mut cal));
        let finish = t.elapsed().as_secs_f64();
        // per ranked supplier: calibrated p-value, corrected p-value, invoices needed (-1: none)
        let mc: Vec<[f64; 3]> = rep
            .suppliers
            .iter()
            .filter_map(|s| s.calibration.as_ref())
            .map(|c| [c.mc_p_value, c.adjusted_p_value.unwrap_or(-1.0), c.invoices_needed.map_or(-1.0, |n| n as f64)])
            .collect();
        runs.push((tables, powers, finish, need.len(), rep.suppliers.len(), mc));
    }
    if runs[0].5 != runs[1].5 {
        eprintln!("1 and 2 threads gave different numbers");
        std::process::exit(1);
    }
    let (t1, p1, f1, ntables, nsup, _) = &runs[0];
    let (t2, p2, f2, _, _, mc) = &runs[1];
    println!(
        "{{\"suppliers\":{nsup},\"tables\":{ntables},\"batteries_s\":{batteries},\"tables_1_s\":{t1},\"tables_2_s\":{t2},\"power_1_s\":{p1},\"power_2_s\":{p2},\"finish_1_s\":{f1},\"finish_2_s\":{f2},\"mc\":{}}}",
        serde_json::to_string(mc).expect("json")
    );
}
