//! Power of the monitor: median detection delay after a supplier switches to evenly spread
//! (fabricated) amounts, next to the one-shot chi-square reference computed here by simulation
//! (statrs chi-square critical value). Also measures the design levers (which family of
//! alternatives) on the same kind of streams; the standard family is the one kept.
//!
//! Streams: 1,000 honest invoices (log-uniform amounts over 10..100,000 — exactly Benford for
//! first-two digits, a mathematical fact), then invoices of which a share s (100 % or 30 %) are
//! spread evenly over 100..900 (first-two digits then uniform over 10..89: 1/80 each) and the
//! rest stay honest. Change-detector threshold 110,000 (100 years of 1,100 invoices a year),
//! since-start threshold 20 (95 %), as in the issue.
//!
//! Run with `cargo test --test monitor_power -- --nocapture` to see the numbers.

use digitdrift_core::monitor::{first_two_bin, Alternative, Family, Monitor, STANDARD_LOWS, STANDARD_SHARES, STANDARD_SPANS};
use digitdrift_core::Amount;
use rand_core::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use statrs::distribution::{ChiSquared, ContinuousCDF};

fn unif(r: &mut Xoshiro256PlusPlus) -> f64 {
    (r.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
}
fn honest_bin(r: &mut Xoshiro256PlusPlus) -> usize {
    let x = 10f64.powf(1.0 + 4.0 * unif(r));
    first_two_bin(Amount::from_scaled((x * 100.0).floor() as i64, 2).unwrap()).unwrap()
}
fn fake_bin(r: &mut Xoshiro256PlusPlus) -> usize {
    let x = 100.0 + 800.0 * unif(r);
    first_two_bin(Amount::from_scaled((x * 100.0).floor() as i64, 2).unwrap()).unwrap()
}
fn mixed_bin(r: &mut Xoshiro256PlusPlus, share: f64) -> usize {
    if unif(r) < share { fake_bin(r) } else { honest_bin(r) }
}

const SWITCH: usize = 1000;
const CAP: usize = 6000;

/// Returns (median delay, false alarms before the switch, streams not detected within CAP).
fn delays(fam: &Family, share: f64, streams: usize, seed: u64) -> (f64, usize, usize) {
    let log20 = 20f64.ln();
    let lc = 110_000f64.ln();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut mon = Monitor::new(fam, log20, lc);
    let mut d = Vec::new();
    let (mut early, mut missed) = (0, 0);
    'stream: for _ in 0..streams {
        mon.reset(log20, lc);
        for _ in 0..SWITCH {
            let c = mon.push(honest_bin(&mut rng));
            if c.since_start || c.since_change {
                early += 1;
                continue 'stream;
            }
        }
        for t in 1..=CAP {
            let c = mon.push(mixed_bin(&mut rng, share));
            if c.since_start || c.since_change {
                d.push(t as f64);
                continue 'stream;
            }
        }
        missed += 1;
        d.push(f64::INFINITY);
    }
    d.sort_by(|a, b| a.partial_cmp(b).unwrap());
    (d[d.len() / 2], early, missed)
}

/// Invoices to the since-start alarm for a supplier fabricating from its first invoice.
fn median_from_start(fam: &Family, share: f64, streams: usize, seed: u64) -> f64 {
    let log20 = 20f64.ln();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut mon = Monitor::new(fam, log20, f64::INFINITY);
    let mut d = Vec::new();
    for _ in 0..streams {
        mon.reset(log20, f64::INFINITY);
        let mut t = 0;
        loop {
            t += 1;
            if mon.push(mixed_bin(&mut rng, share)).since_start || t >= CAP {
                break;
            }
        }
        d.push(t as f64);
    }
    d.sort_by(|a, b| a.partial_cmp(b).unwrap());
    d[d.len() / 2]
}

/// Smallest n at which a one-shot chi-square test (df 89, 5 %; critical value from statrs) on n
/// invoices drawn after the switch rejects Benford with probability >= 80 %, by simulation.
fn one_shot_n(share: f64, seed: u64) -> usize {
    let crit = ChiSquared::new(89.0).unwrap().inverse_cdf(0.95);
    let p = digitdrift_core::benford::first_two();
    let reps = 2000;
    let power = |n: usize, rng: &mut Xoshiro256PlusPlus| {
        let mut hit = 0;
        for _ in 0..reps {
            let mut c = [0u32; 90];
            for _ in 0..n {
                c[mixed_bin(rng, share)] += 1;
            }
            let nf = n as f64;
            let chi: f64 = (0..90).map(|b| (c[b] as f64 - nf * p[b]).powi(2) / (nf * p[b])).sum();
            hit += (chi >= crit) as u32;
        }
        hit as f64 / reps as f64
    };
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let (mut lo, mut hi) = (1usize, 4000usize);
    while hi - lo > 1 {
        let mid = (lo + hi) / 2;
        if power(mid, &mut rng) >= 0.8 { hi = mid } else { lo = mid }
    }
    hi
}

fn grid(lows: &[f64], spans: &[f64], shares: &[f64]) -> Family {
    let mut a = Vec::new();
    for &l in lows {
        for &m in spans {
            for &s in shares {
                a.push(Alternative { low: l, high: l * m, share: s });
            }
        }
    }
    Family::new(a)
}

#[test]
fn detection_delay_against_one_shot_reference() {
    let fam = Family::standard();
    let streams = 300;
    let ref100 = one_shot_n(1.0, 11);
    let ref30 = one_shot_n(0.3, 12);
    let (m100, e100, x100) = delays(&fam, 1.0, streams, 21);
    let (m30, e30, x30) = delays(&fam, 0.3, streams, 22);
    eprintln!("switch after invoice {SWITCH} to amounts spread evenly over 100..900, {streams} streams, standard family ({} alternatives)", fam.len());
    eprintln!("  100 %: median delay {m100:>5} invoices; one-shot chi-square 80 % power at n = {ref100}; ratio {:.2} (target <= 3); {e100} alarms before the switch, {x100} not detected in {CAP}", m100 / ref100 as f64);
    eprintln!("   30 %: median delay {m30:>5} invoices; one-shot chi-square 80 % power at n = {ref30}; ratio {:.2} (target <= 3); {e30} alarms before the switch, {x30} not detected in {CAP}", m30 / ref30 as f64);
    // The reference values (from its own simulation): about 50 and 800.
    assert!((35..=70).contains(&ref100), "one-shot reference 100 %: {ref100}");
    assert!((600..=1000).contains(&ref30), "one-shot reference 30 %: {ref30}");
    assert!(m100 <= 3.0 * ref100 as f64);
    assert!(m30 <= 3.0 * ref30 as f64);
    let s100 = median_from_start(&fam, 1.0, streams, 31);
    let s30 = median_from_start(&fam, 0.3, streams, 32);
    eprintln!("  fabricating from the first invoice: since-start alarm at median invoice {s100} (100 %), {s30} (30 %)");
    assert!(s100 <= 3.0 * ref100 as f64 && s30 <= 3.0 * ref30 as f64);
}

/// The levers, measured (printed; the standard family is kept because it is within target in
/// both cases while covering ranges other than 100..900). The issue's own numbers for a plain
/// Dirichlet-multinomial mixture over the 90 bins were 441-1,056 (100 %) and mostly > 3,000
/// (30 %); that design is not re-measured here.
#[test]
fn design_levers() {
    let streams = 150;
    let designs: Vec<(&str, Family)> = vec![
        ("standard: 20 ranges x shares {0.15,0.4,1}", Family::standard()),
        ("20 ranges, share 1 only", grid(&STANDARD_LOWS, &STANDARD_SPANS, &[1.0])),
        ("20 ranges, share 0.4 only", grid(&STANDARD_LOWS, &STANDARD_SPANS, &[0.4])),
        ("flat spread (one whole decade) x 3 shares", grid(&[1.0], &[10.0], &STANDARD_SHARES)),
        ("within-decade ranges only (a*m <= 10)", {
            let mut a = Vec::new();
            for &l in &STANDARD_LOWS {
                for &m in &STANDARD_SPANS {
                    if l * m <= 10.0 {
                        for &s in &STANDARD_SHARES {
                            a.push(Alternative { low: l, high: l * m, share: s });
                        }
                    }
                }
            }
            Family::new(a)
        }),
        ("oracle: exactly 100..900 at the true share", grid(&[1.0], &[9.0], &[1.0, 0.3])),
    ];
    eprintln!("design levers ({streams} streams each; median delay after the switch, 100 % / 30 %):");
    let mut std_res = (0.0, 0.0);
    for (i, (name, fam)) in designs.iter().enumerate() {
        let (a, ea, _) = delays(fam, 1.0, streams, 41);
        let (b, eb, xb) = delays(fam, 0.3, streams, 42);
        eprintln!("  {name:<46} K={:>3}: {a:>6} / {b:>6}   (early alarms {ea}/{eb}, 30 % missed {xb})", fam.len());
        if i == 0 {
            std_res = (a, b);
        }
    }
    assert!(std_res.0.is_finite() && std_res.1.is_finite());
}
