//! Native side of the intake-only benchmark (`node bench/browser.mjs --intake-only FILE`):
//! reads FILE into memory, then times intake alone fed in 1 MiB chunks (like the Worker's
//! File.slice loop), best of RUNS (default 3). Prints one JSON line.
//! Usage: intake_speed FILE [RUNS]
use digitdrift_core::intake::{Intake, IntakeOptions};
use std::time::Instant;

fn main() {
    let mut args = std::env::args().skip(1);
    let path = args.next().expect("usage: intake_speed FILE [RUNS]");
    let runs: usize = args.next().map_or(3, |s| s.parse().expect("RUNS must be a number"));
    let data = std::fs::read(&path).expect("cannot read FILE");
    let (mut best, mut read, mut analysed) = (f64::INFINITY, 0, 0);
    for _ in 0..runs.max(1) {
        let t0 = Instant::now();
        let mut it = Intake::new(IntakeOptions::default());
        for chunk in data.chunks(1 << 20) {
            it.feed(chunk).expect("intake failed");
        }
        let r = it.finish().expect("intake failed");
        best = best.min(t0.elapsed().as_secs_f64());
        read = r.ledger.accounting.read;
        analysed = r.ledger.accounting.analysed;
    }
    let mb = data.len() as f64 / 1e6;
    println!("{{\"mb\":{mb:.3},\"rows_read\":{read},\"rows_analysed\":{analysed},\"native_seconds\":{best:.4},\"native_mb_per_s\":{:.1}}}", mb / best);
}
