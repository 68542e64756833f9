use digitdrift_core::intake::{Intake, IntakeOptions};
use digitdrift_core::report::{self, ScreenOptions};
use std::time::Instant;
fn main() {
    let path = std::env::args().nth(1).unwrap();
    let which = std::env::args().nth(2).unwrap_or("sup".into());
    let data = std::fs::read(&path).unwrap();
    let mut it = Intake::new(IntakeOptions::default());
    for chunk in data.chunks(1 << 20) { it.feed(chunk).unwrap(); }
    let r = it.finish().unwrap();
    let opts = ScreenOptions::default();
    for _ in 0..3 {
        let t = Instant::now();
        if which == "sup" {
            let b = report::supplier_batteries(&r.ledger, &opts);
            std::hint::black_box(&b);
        } else {
            let b = report::whole_file_and_credits(&r.ledger, &opts, None);
            std::hint::black_box(&b);
        }
        println!("{:.3}", t.elapsed().as_secs_f64());
    }
}
