//! Detection trial over the demo ledger (143k rows, 38 suppliers; the pool is the 25 suppliers
//! the screen calls consistent): preparation (reading order, null tables, monitor prefixes) and
//! 100 replications of 20 % evenly spread invented invoices from 2024-01-01. The page's target
//! is 100 replications in under 10 s in Chromium; this is the native figure.
//! Run: `cargo bench -p digitdrift-core --bench trial`.

use criterion::{criterion_group, criterion_main, Criterion};
use digitdrift_core::intake::{days_from_civil, Intake, IntakeOptions};
use digitdrift_core::report::{screen, ScreenOptions};
use digitdrift_core::trial::{consistent_suppliers, Pattern, Trial, TrialOptions};
use digitdrift_core::Amount;
use std::hint::black_box;

fn bench(c: &mut Criterion) {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-files/heathervale-vet-ledger.csv");
    let bytes = std::fs::read(path).expect("demo ledger");
    let mut intake = Intake::new(IntakeOptions::default());
    intake.feed(&bytes).unwrap();
    let res = intake.finish().unwrap();
    let rep = screen(&res.ledger, &res.info, Amount::from_units(10), &ScreenOptions::default());
    let pool = consistent_suppliers(&rep);
    let opts = TrialOptions {
        pattern: Pattern::Even,
        share: 0.2,
        from: Some(days_from_civil(2024, 1, 1)),
        replications: 100,
        ..TrialOptions::default()
    };
    let mut g = c.benchmark_group("trial");
    g.sample_size(10);
    g.bench_function("demo ledger: prepare + 100 replications", |b| {
        b.iter(|| {
            let mut t = Trial::new(&res.ledger, opts.clone(), &pool).unwrap();
            t.run();
            black_box(t.report())
        })
    });
    g.bench_function("demo ledger: prepare only", |b| b.iter(|| black_box(Trial::new(&res.ledger, opts.clone(), &pool).unwrap().replications_done())));
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
