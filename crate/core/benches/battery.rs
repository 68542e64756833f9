//! Battery speed: all tests over one population of 2,000,000 invoices (target: well under
//! 100 ms natively in release), plus the digit pass alone and the sort-based checks alone.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use digitdrift_core::battery::{self, BatteryOptions};
use digitdrift_core::ledger::Invoice;
use digitdrift_core::Amount;

/// Log-uniform amounts over [10, 1,000,000) with cents, dates over four years, numbers for
/// most invoices (deterministic LCG, Knuth MMIX constants).
fn population(n: usize) -> Vec<Invoice> {
    let mut s: u64 = 0x2545F4914F6CDD1D;
    let mut next = || {
        s = s.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        s
    };
    (0..n)
        .map(|i| {
            let u = (next() >> 11) as f64 / (1u64 << 53) as f64;
            let cents = (10f64.powf(1.0 + 5.0 * u) * 100.0).round() as i64;
            let r = next();
            Invoice::new(Amount(cents * 100), if r % 10 == 0 { 0 } else { r >> 20 }, (r % 500) as u32, 18_000 + (r >> 40) as i32 % 1460, i as u64 + 2)
        })
        .collect()
}

fn bench(c: &mut Criterion) {
    let pop = population(2_000_000);
    let refs: Vec<&Invoice> = pop.iter().collect();
    let mut g = c.benchmark_group("battery");
    g.sample_size(10);
    g.throughput(Throughput::Elements(refs.len() as u64));
    let cases = [
        ("all", BatteryOptions {
            approval_limits: vec![Amount::from_units(5_000), Amount::from_units(25_000)],
            ..Default::default()
        }),
        ("digits", BatteryOptions {
            tests: "first,second,first_two,first_three,last_two,summation,distortion".parse().unwrap(),
            ..Default::default()
        }),
        ("second_order", BatteryOptions { tests: "second_order".parse().unwrap(), ..Default::default() }),
        ("amounts", BatteryOptions { tests: "amounts".parse().unwrap(), ..Default::default() }),
    ];
    for (name, opts) in &cases {
        g.bench_with_input(BenchmarkId::new(*name, refs.len()), &refs, |b, r| b.iter(|| battery::run(r, opts)));
    }
    g.bench_function("bin_members_first_two_2M", |b| b.iter(|| battery::bin_members("first_two", 47, &refs)));
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
