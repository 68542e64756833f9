use digitdrift_core::intake::{Intake, IntakeOptions};
use digitdrift_core::report::{self, ScreenOptions};
use std::time::Instant;
fn main() {
    let path = std::env::args().nth(1).unwrap();
    let data = std::fs::read(&path).unwrap();
    let mut it = Intake::new(IntakeOptions::default());
    for c in data.chunks(1 << 20) { it.feed(c).unwrap(); }
    let r = it.finish().unwrap();
    for tests in ["first,second,first_two,first_three,last_two,summation,distortion", "first,second,first_two,first_three", "distortion", "summation", "last_two", "second_order", "amounts", "second_order,amounts"] {
        let mut o = ScreenOptions::default();
        o.battery.tests = tests.parse().unwrap();
        let mut best = f64::MAX;
        for _ in 0..3 {
            let t = Instant::now();
            let w = report::population(u32::MAX, "w", r.ledger.invoices.as_slice(), &o);
            std::hint::black_box(&w);
            best = best.min(t.elapsed().as_secs_f64());
        }
        println!("{tests:70} {best:.4}");
    }
}
