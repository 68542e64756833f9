//! Native side of the intake-only benchmark (`node bench/browser.mjs --intake-only FILE`):
//! reads FILE into memory, then times intake alone fed in 1 MiB chunks (like the Worker's
//! File.slice loop), best of RUNS (default 3), in wall-clock time and (Linux) in CPU time of
//! this thread (on a shared machine wall time includes waiting for a core). Prints one JSON line.
//! Usage: intake_speed FILE [RUNS]
use digitdrift_core::intake::{Intake, IntakeOptions};
use std::time::Instant;

/// Nanoseconds this thread has spent on a CPU (Linux /proc/thread-self/schedstat, field 1).
fn thread_cpu_ns() -> Option<u64> {
    let s = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    s.split_whitespace().next()?.parse().ok()
}

fn main() {
    let mut args = std::env::args().skip(1);
    let path = args.next().expect("usage: intake_speed FILE [RUNS]");
    let runs: usize = args.next().map_or(3, |s| s.parse().expect("RUNS must be a number"));
    let data = std::fs::read(&path).expect("cannot read FILE");
    let (mut best, mut best_cpu, mut read, mut analysed) = (f64::INFINITY, f64::INFINITY, 0, 0);
    for _ in 0..runs.max(1) {
        let c0 = thread_cpu_ns();
        let t0 = Instant::now();
        let mut it = Intake::new(IntakeOptions::default());
        for chunk in data.chunks(1 << 20) {
            it.feed(chunk).expect("intake failed");
        }
        let r = it.finish().expect("intake failed");
        best = best.min(t0.elapsed().as_secs_f64());
        if let (Some(c0), Some(c1)) = (c0, thread_cpu_ns()) {
            best_cpu = best_cpu.min((c1 - c0) as f64 / 1e9);
        }
        read = r.ledger.accounting.read;
        analysed = r.ledger.accounting.analysed;
    }
    let mb = data.len() as f64 / 1e6;
    let cpu = if best_cpu.is_finite() { format!("{:.1}", mb / best_cpu) } else { "null".into() };
    println!("{{\"mb\":{mb:.3},\"rows_read\":{read},\"rows_analysed\":{analysed},\"native_seconds\":{best:.4},\"native_mb_per_s\":{:.1},\"native_cpu_mb_per_s\":{cpu}}}", mb / best);
}
