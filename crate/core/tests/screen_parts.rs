//! The native screen's split over two threads gives the same report as the single-thread
//! order, and the quick pass's calibration inputs equal those read from the batteries.
//! Self-consistency checks on the demo ledger (invented data).

use digitdrift_core::calibrate::{CalibrationOptions, Calibrator};
use digitdrift_core::intake::{Intake, IntakeOptions};
use digitdrift_core::report::{self, ScreenOptions};

fn demo() -> digitdrift_core::intake::IntakeResult {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-files/heathervale-vet-ledger.csv");
    let mut it = Intake::new(IntakeOptions::default());
    it.feed(&std::fs::read(path).expect("demo ledger")).expect("intake");
    it.finish().expect("intake")
}

#[test]
fn quick_inputs_equal_the_batteries_inputs() {
    let r = demo();
    let opts = ScreenOptions::default();
    let b = report::supplier_batteries(&r.ledger, &opts);
    let (quick, invoices) = report::quick_calibration_inputs(&r.ledger);
    assert!(quick.len() > 10);
    assert_eq!(quick, report::calibration_inputs(&b.suppliers, &b.counts));
    assert_eq!(invoices, b.suppliers.iter().map(|s| s.invoices).collect::<Vec<_>>());
}

#[test]
fn two_thread_screen_equals_one_thread_order() {
    let r = demo();
    let min = IntakeOptions::default().min_amount;
    let mut opts = ScreenOptions::default();
    opts.calibration = Some(CalibrationOptions { sims: 2000, ..CalibrationOptions::default() });
    let split = report::screen(&r.ledger, &r.info, min, &opts);
    let mut cal = Calibrator::new(opts.calibration.clone().unwrap());
    let one = report::finish_screen(&r.ledger, &r.info, min, &opts, report::supplier_batteries(&r.ledger, &opts), Some(&mut cal));
    assert_eq!(serde_json::to_string(&split).unwrap(), serde_json::to_string(&one).unwrap());
    assert!(split.calibration.as_ref().is_some_and(|c| c.alarms > 0), "the demo has deviating suppliers");
}

/// The whole file's battery run beside the suppliers' on the calibration thread (its amounts
/// sorted in narrower windows, its duplicate groups merged from the suppliers' afterwards) or
/// after them on the battery thread: the same report as the one-thread order, with and without
/// calibration.
#[test]
fn whole_file_beside_or_after_equals_one_thread_order() {
    let r = demo();
    let min = IntakeOptions::default().min_amount;
    for calibrate in [false, true] {
        let opts = ScreenOptions { calibration: calibrate.then(|| CalibrationOptions { sims: 1000, ..CalibrationOptions::default() }), ..ScreenOptions::default() };
        let mut cal = opts.calibration.clone().map(Calibrator::new);
        let one = report::finish_screen(&r.ledger, &r.info, min, &opts, report::supplier_batteries(&r.ledger, &opts), cal.as_mut());
        let groups = one.whole_file.tests.amount_checks.as_ref().map_or(0, |a| a.duplicates.groups.len());
        assert!(groups > 100, "the demo's whole file has duplicate groups to merge: {groups}");
        let one = serde_json::to_string(&one).unwrap();
        for beside in [true, false] {
            let got = report::screen_with_whole(&r.ledger, &r.info, min, &opts, opts.calibration.clone().map(Calibrator::new), beside);
            assert_eq!(serde_json::to_string(&got).unwrap(), one, "calibration {calibrate}, beside {beside}");
        }
    }
}

/// The suppliers' batteries with a second thread taking suppliers from the end of the list: the
/// same batteries, counts and merged duplicate groups as one thread.
#[test]
fn suppliers_batteries_on_two_threads_equal_one() {
    let r = demo();
    let opts = ScreenOptions::default();
    let one = report::supplier_batteries(&r.ledger, &opts);
    let (two, helped) = report::supplier_batteries_helped(&r.ledger, &opts);
    assert!(helped >= 5, "the second thread took {helped} suppliers");
    assert_eq!(serde_json::to_string(&two.suppliers).unwrap(), serde_json::to_string(&one.suppliers).unwrap());
    assert_eq!(two.counts, one.counts);
    let dup = |b: &report::Batteries| serde_json::to_string(&b.file_duplicates).unwrap();
    assert!(one.file_duplicates.as_ref().is_some_and(|d| d.groups.len() > 100));
    assert_eq!(dup(&two), dup(&one));
}
