//! Replay of a 2,000,000-row ledger for all suppliers (after intake): `monitor::watch`, both
//! statistics, trajectories, alarms and estimates. Target: <= 100 ms native.
//! The ledger mirrors the intake benchmark's generated file (400 suppliers, dates within 2024
//! in random file order, amounts log-uniform from 10 to 100,000, i.e. Benford), with 20 suppliers switching to amounts
//! spread evenly over 100..900 half-way through the year so that alarms and estimates run too.
//! Run: `cargo bench -p digitdrift-core --bench monitor`.

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use digitdrift_core::intake::days_from_civil;
use digitdrift_core::ledger::{supplier_key, Invoice, Ledger, Supplier};
use digitdrift_core::monitor::{first_two_bin, watch, Family, Monitor, WatchOptions};
use digitdrift_core::Amount;
use digitdrift_core::rng::DetRng;
use std::hint::black_box;

fn ledger(rows: usize) -> Ledger {
    let mut l = Ledger::default();
    for i in 0..400 {
        let n = format!("Supplier {i:03} Ltd");
        l.suppliers.push(Supplier { key: supplier_key(&n), name: n });
    }
    let mut rng = DetRng::seed_from_u64(0x9E37_79B9_7F4A_7C15);
    let mut next = || rng.next_u64();
    let day0 = days_from_civil(2024, 1, 1);
    for i in 0..rows {
        let r = next();
        let s = (r % 400) as u32;
        let doy = ((r >> 9) % 366) as i32;
        let u = (r >> 11) as f64 * (1.0 / (1u64 << 53) as f64);
        let cents = if s < 20 && doy >= 183 {
            10_000 + (r >> 20) % 80_000
        } else {
            // log-uniform from 10 to 100,000 (Benford digits), truncated to cents
            (10f64.powf(1.0 + 4.0 * u) * 100.0) as u64
        };
        l.invoices.push(Invoice::new(Amount::from_scaled(cents as i64, 2).unwrap(), 0, s, day0 + doy, i as u64 + 2));
    }
    l
}

fn bench(c: &mut Criterion) {
    let l = ledger(2_000_000);
    let opts = WatchOptions::default();
    let rep = watch(&l, &opts);
    eprintln!("{} suppliers, {} in alarm", rep.suppliers_watched, rep.suppliers_in_alarm);
    let mut g = c.benchmark_group("monitor");
    g.sample_size(10);
    g.throughput(Throughput::Elements(l.invoices.len() as u64));
    g.bench_function("watch_2m_rows", |b| b.iter(|| black_box(watch(black_box(&l), &opts))));
    let fam = Family::standard();
    let bins: Vec<usize> = l.invoices.iter().map(|i| first_two_bin(i.amount).unwrap()).collect();
    g.bench_function("push_2m_invoices", |b| {
        b.iter(|| {
            let mut m = Monitor::new(&fam, 3.0, 11.6);
            let mut k = 0u32;
            for &d in &bins {
                let c = m.push(d);
                k += c.since_change as u32;
            }
            black_box((k, m.log_since_start()))
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
