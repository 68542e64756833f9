//! Calibration speed. Targets (issue): >= 500,000 multinomial samples/s for 90 bins at n = 1,000
//! native single-threaded; a 500-supplier ledger calibrated at 10,000 sims per size well under 1 s.

use criterion::{criterion_group, criterion_main, BatchSize, Criterion, Throughput};
use digitdrift_core::benford;
use digitdrift_core::calibrate::{CalibrationOptions, Calibrator, Categorical, Moments};
use digitdrift_core::rng::DetRng;

fn sampling(c: &mut Criterion) {
    let p = benford::first_two();
    let cat = Categorical::new(&p);
    let mut g = c.benchmark_group("multinomial_90");
    g.throughput(Throughput::Elements(1));
    for n in [1_000u64, 2_500, 10_000, 100_000] {
        let mut rng = DetRng::seed_from_u64(1);
        let mut cnt = [0u64; 90];
        if n <= 10_000 {
            g.bench_function(format!("guide n={n}"), |b| {
                b.iter(|| {
                    cnt.iter_mut().for_each(|x| *x = 0);
                    cat.add_guided(&mut rng, n, &mut cnt);
                    cnt[0]
                })
            });
        }
        g.bench_function(format!("binomial n={n}"), |b| {
            b.iter(|| {
                cnt.iter_mut().for_each(|x| *x = 0);
                cat.add_binomial(&mut rng, n, &mut cnt);
                cnt[0]
            })
        });
    }
    // sample + all four statistics, as a null table does
    let mom = Moments::new(1000, &p);
    let mut rng = DetRng::seed_from_u64(2);
    let mut cnt = [0u64; 90];
    g.bench_function("sample+stats n=1000", |b| {
        b.iter(|| {
            cnt.iter_mut().for_each(|x| *x = 0);
            cat.add(&mut rng, 1000, &mut cnt);
            mom.stats(&cnt).mad
        })
    });
    g.finish();
}

fn ledger(c: &mut Criterion) {
    let inputs = digitdrift_core::workload::ledger_500();
    let mut g = c.benchmark_group("ledger_500");
    g.sample_size(10);
    g.bench_function("null only, 10k sims", |b| {
        b.iter_batched(
            || Calibrator::new(CalibrationOptions::default()),
            |mut cal| inputs.iter().map(|s| cal.null_only(&s.first_two_counts).mc_p_value).sum::<f64>(),
            BatchSize::LargeInput,
        )
    });
    g.bench_function("full (power curves, invoices needed), 10k sims", |b| {
        b.iter_batched(
            || Calibrator::new(CalibrationOptions::default()),
            |mut cal| cal.ledger(&inputs).alarms,
            BatchSize::LargeInput,
        )
    });
    g.finish();
}

criterion_group!(benches, sampling, ledger);
criterion_main!(benches);
