//! The detection trial on simulated ledgers.
//!
//! Honest amounts are log-uniform over four whole decades (10 to 100,000), truncated to cents:
//! their first-two digits follow Benford's law (log10 of the amount is uniform modulo 1 — the
//! classical characterisation, e.g. Hill, "A statistical derivation of the significant-digit
//! law", Statistical Science 10(4), 1995). Against that outside fact:
//!
//! - share 0: nothing is injected, and the batch false-alarm rate of the uncorrected test is
//!   within binomial error of the nominal level 1 − confidence (a Monte Carlo p-value is valid at
//!   any number of simulations: Davison & Hinkley 1997, eq. 4.11 — from memory), the corrected
//!   (Benjamini–Hochberg, JRSS B 1995) rate is at most the level, and the monitor's rate is
//!   below the level plus the change detector's Doob bound (Ville 1939; Pollak 1987);
//! - share 100 % evenly spread at 1,000 invoices: sensitivity >= 99 %;
//! - sensitivity rises with the share and with the number of invoices (within Monte Carlo error);
//! - same seed, same numbers; another seed, numbers within the stated Monte Carlo error (rates
//!   within 4 standard errors; the 95 % intervals of the medians overlap);
//! - the medians' intervals use the ranks of Conover's order-statistic interval (Practical
//!   Nonparametric Statistics, 3rd ed., §3.2), recomputed here from exact binomial sums;
//! - the trial's batch verdicts and monitor alarms are exactly those of `report::screen` and
//!   `monitor::watch` run on the copy of the ledger it describes, and the session's ledger is
//!   never changed.
//!
//! `cargo test --test trial -- --nocapture` prints the numbers.

use digitdrift_core::calibrate::{CalibrationOptions, Correction, Verdict};
use digitdrift_core::intake::{days_from_civil, format_date, Intake, IntakeOptions, IntakeResult};
use digitdrift_core::monitor::{watch, WatchOptions};
use digitdrift_core::report::{screen, ScreenOptions};
use digitdrift_core::trial::{
    by_hand_amount, median_rank_exact, median_ranks, trial_csv, trial_json, LevelSummary, MedianInterval, Pattern, Trial, TrialOptions, TrialReport,
    BY_HAND_LATER,
};
use digitdrift_core::rng::DetRng;
use digitdrift_core::Amount;

/// `sizes[i]` invoices for supplier "S{i}", honest (Benford) amounts, dated evenly over
/// 2022-2023, read through the real intake.
fn honest(sizes: &[usize], seed: u64) -> IntakeResult {
    let mut g = DetRng::seed_from_u64(seed);
    let d0 = days_from_civil(2022, 1, 1);
    let mut csv = String::from("Supplier,Date,Amount\n");
    for (s, &n) in sizes.iter().enumerate() {
        for i in 0..n {
            let x = libm::pow(10.0, 1.0 + 4.0 * g.next_f64());
            let cents = libm::floor(x * 100.0) as i64;
            let day = d0 + (i as f64 / n as f64 * 730.0) as i32;
            csv.push_str(&format!("S{s},{},{}.{:02}\n", format_date(day), cents / 100, cents % 100));
        }
    }
    let mut intake = Intake::new(IntakeOptions::default());
    intake.feed(csv.as_bytes()).unwrap();
    intake.finish().unwrap()
}

fn cal(sims: u32, correction: Correction) -> CalibrationOptions {
    CalibrationOptions { sims, correction, ..CalibrationOptions::default() }
}

fn run(res: &IntakeResult, opts: TrialOptions) -> (Trial, TrialReport) {
    let all: Vec<u32> = (0..res.ledger.suppliers.len() as u32).collect();
    let mut t = Trial::new(&res.ledger, opts, &all).unwrap();
    t.run();
    let r = t.report();
    (t, r)
}

fn level(r: &TrialReport, c: f64) -> &LevelSummary {
    r.levels.iter().find(|l| (l.confidence - c).abs() < 1e-9).unwrap()
}

#[test]
fn share_zero_nothing_injected_false_alarms_at_the_nominal_level() {
    // 600 honest suppliers, 80 to 320 invoices each.
    let sizes: Vec<usize> = (0..600).map(|i| [80, 150, 320][i % 3]).collect();
    let res = honest(&sizes, 11);
    for correction in [Correction::None, Correction::Fdr] {
        let opts = TrialOptions { share: 0.0, replications: 2, calibration: cal(4000, correction), ..TrialOptions::default() };
        let (_, r) = run(&res, opts);
        assert_eq!(r.mean_injected_suppliers, 0.0);
        assert_eq!(r.mean_invented_invoices, 0.0);
        let years = 2.0;
        for l in &r.levels {
            assert!(l.sensitivity.is_none(), "no injected supplier, no sensitivity");
            let alpha = 1.0 - l.confidence;
            let fa_b = l.batch.false_alarm_rate.unwrap();
            let fa_m = l.monitoring.false_alarm_rate.unwrap();
            // Binomial standard error over the 600 suppliers at the nominal level.
            let se = (alpha * (1.0 - alpha) / 600.0).sqrt();
            println!("{correction:?} confidence {:.3}: batch false alarms {:.4} (nominal {alpha:.4} ± {se:.4}), monitoring {:.4}", l.confidence, fa_b, fa_m);
            match correction {
                Correction::None => assert!((fa_b - alpha).abs() <= 3.0 * se + 1.0 / 600.0, "batch {fa_b} vs {alpha}"),
                _ => assert!(fa_b <= alpha + 3.0 * se, "corrected batch {fa_b} above {alpha}"),
            }
            // Ville: since-start at most alpha; Doob: change detector at most years / arl_years.
            assert!(fa_m <= alpha + years / 100.0 + 3.0 * se, "monitoring {fa_m}");
            if alpha >= 0.05 {
                assert!(fa_m < alpha, "monitoring {fa_m} not below {alpha}");
            }
        }
    }
}

#[test]
fn whole_supplier_evenly_spread_at_1000_invoices_is_caught() {
    let res = honest(&vec![1000; 40], 12);
    for range in [None, Some((Amount::from_units(100), Amount::from_units(900)))] {
        let opts = TrialOptions { share: 1.0, replications: 3, range, calibration: cal(2000, Correction::Fdr), ..TrialOptions::default() };
        let (_, r) = run(&res, opts);
        let l = level(&r, 0.95);
        println!("share 100 %, range {range:?}: sensitivity {:?} (batch {:?}, monitoring {:?}), false alarms {:?}", l.sensitivity, l.batch.sensitivity, l.monitoring.sensitivity, l.false_alarm_rate);
        assert_eq!(r.mean_injected_suppliers, 20.0);
        assert!(l.batch.sensitivity.unwrap() >= 0.99);
        assert!(l.sensitivity.unwrap() >= 0.99);
        assert!(l.monitoring.median_delay_invoices.unwrap() < 200.0);
    }
}

fn sens(r: &TrialReport) -> (f64, f64) {
    let l = level(r, 0.95);
    (l.sensitivity.unwrap(), l.sensitivity_se.unwrap())
}

#[test]
fn sensitivity_rises_with_share_and_with_invoices() {
    let range = Some((Amount::from_units(100), Amount::from_units(900)));
    let base = TrialOptions { replications: 4, range, calibration: cal(2000, Correction::Fdr), ..TrialOptions::default() };
    let res = honest(&vec![400; 40], 13);
    let by_share: Vec<(f64, f64)> = [0.05, 0.12, 0.3].iter().map(|&s| sens(&run(&res, TrialOptions { share: s, ..base.clone() }).1)).collect();
    let by_n: Vec<(f64, f64)> = [120usize, 400, 1500]
        .iter()
        .map(|&n| sens(&run(&honest(&vec![n; 40], 14), TrialOptions { share: 0.12, ..base.clone() }).1))
        .collect();
    println!("sensitivity at 95 % by share 5/12/30 %: {by_share:?}; by invoices 120/400/1500 at 12 %: {by_n:?}");
    for v in [&by_share, &by_n] {
        for w in v.windows(2) {
            let tol = 2.0 * (w[0].1.powi(2) + w[1].1.powi(2)).sqrt();
            assert!(w[1].0 + tol >= w[0].0, "not monotone within error: {v:?}");
        }
        assert!(v[2].0 > v[0].0 + 0.3, "no clear rise: {v:?}");
    }
}

#[test]
fn same_seed_same_numbers_other_seed_within_error() {
    let res = honest(&vec![400; 40], 15);
    let o = |seed| TrialOptions { share: 0.12, seed, replications: 6, range: Some((Amount::from_units(100), Amount::from_units(900))), calibration: cal(2000, Correction::Fdr), ..TrialOptions::default() };
    let a = serde_json::to_string(&run(&res, o(1)).1).unwrap();
    let b = serde_json::to_string(&run(&res, o(1)).1).unwrap();
    assert_eq!(a, b);
    let (ra, rb) = (run(&res, o(1)).1, run(&res, o(2)).1);
    for (la, lb) in ra.levels.iter().zip(&rb.levels) {
        for (x, y) in [
            ((la.sensitivity, la.sensitivity_se), (lb.sensitivity, lb.sensitivity_se)),
            ((la.false_alarm_rate, la.false_alarm_rate_se), (lb.false_alarm_rate, lb.false_alarm_rate_se)),
        ] {
            let (p, sp, q, sq) = (x.0.unwrap(), x.1.unwrap(), y.0.unwrap(), y.1.unwrap());
            println!("confidence {:.3}: seed 1 {p:.3} ± {sp:.3}, seed 2 {q:.3} ± {sq:.3}", la.confidence);
            assert!((p - q).abs() <= 4.0 * (sp * sp + sq * sq).sqrt() + 1e-12, "{p} vs {q}");
        }
    }
    // Medians: two independent runs each give an interval covering the true median with
    // probability >= 95 % (Conover §3.2), so the two intervals overlap unless one of them misses.
    let mut compared = 0;
    for (la, lb) in ra.levels.iter().zip(&rb.levels) {
        let pairs: [(Option<f64>, Option<MedianInterval>, Option<f64>, Option<MedianInterval>); 6] = [
            (la.median_delay_invoices, la.median_delay_invoices_interval, lb.median_delay_invoices, lb.median_delay_invoices_interval),
            (la.median_delay_days, la.median_delay_days_interval, lb.median_delay_days, lb.median_delay_days_interval),
            (la.paid_before_detection, la.paid_before_detection_interval, lb.paid_before_detection, lb.paid_before_detection_interval),
            (la.monitoring.median_delay_invoices, la.monitoring.median_delay_invoices_interval, lb.monitoring.median_delay_invoices, lb.monitoring.median_delay_invoices_interval),
            (la.monitoring.median_delay_days, la.monitoring.median_delay_days_interval, lb.monitoring.median_delay_days, lb.monitoring.median_delay_days_interval),
            (la.monitoring.paid_before_detection, la.monitoring.paid_before_detection_interval, lb.monitoring.paid_before_detection, lb.monitoring.paid_before_detection_interval),
        ];
        for (ma, ia, mb, ib) in pairs {
            if let (Some(ma), Some(ia), Some(mb), Some(ib)) = (ma, ia, mb, ib) {
                println!("confidence {:.3}: median seed 1 {ma:.1} ({:.1}-{:.1}, m={}), seed 2 {mb:.1} ({:.1}-{:.1}, m={})", la.confidence, ia.low, ia.high, ia.observations, ib.low, ib.high, ib.observations);
                assert!(ia.low <= ma && ma <= ia.high && ib.low <= mb && mb <= ib.high, "a median outside its own interval");
                assert!(ia.low <= ib.high && ib.low <= ia.high, "intervals of the two seeds do not overlap: {ia:?} {ib:?}");
                assert!(ia.coverage >= 0.95 && ib.coverage >= 0.95);
                compared += 1;
            }
        }
    }
    assert!(compared >= 6, "too few medians with an interval to compare ({compared})");
    let l = level(&ra, 0.95);
    assert!(l.sensitivity_se.unwrap() > 0.0, "the error estimate must be able to be non-zero");
    let iv = l.median_delay_invoices_interval.unwrap();
    assert!(iv.high > iv.low, "the interval of a median must be able to have a width");
    assert_ne!(serde_json::to_string(&ra).unwrap(), serde_json::to_string(&rb).unwrap());
}

#[test]
fn replications_one_at_a_time_equal_all_at_once() {
    // The page runs one replication per call; replication r depends only on (seed, r).
    let res = honest(&vec![300; 12], 16);
    let o = TrialOptions { share: 0.2, replications: 3, calibration: cal(1000, Correction::Fdr), ..TrialOptions::default() };
    let (_, all) = run(&res, o.clone());
    let ids: Vec<u32> = (0..12).collect();
    let mut t = Trial::new(&res.ledger, TrialOptions { replications: 50, ..o }, &ids).unwrap();
    for _ in 0..3 {
        t.run_replication();
    }
    let part = t.report();
    assert_eq!(serde_json::to_string(&all.levels).unwrap(), serde_json::to_string(&part.levels).unwrap());
}

#[test]
fn trial_agrees_with_screen_and_watch_on_its_copy_and_never_touches_the_ledger() {
    let res = honest(&[300, 450, 600, 800, 1000, 1300, 350, 700, 900, 1500], 17);
    let before = res.ledger.invoices.clone();
    let from = days_from_civil(2023, 1, 1);
    for pattern in [Pattern::Even, Pattern::BelowLimit, Pattern::Repeat, Pattern::ByHand] {
        let c = cal(1000, Correction::Fdr);
        let opts = TrialOptions { pattern, share: 0.25, from: Some(from), replications: 2, calibration: c.clone(), ..TrialOptions::default() };
        let (t, _) = run(&res, opts);
        let li = t.levels().iter().position(|l| (l - 0.95).abs() < 1e-12).unwrap();
        for (r, rep) in t.replications().iter().enumerate() {
            let copy = t.copy_ledger(&res.ledger, r as u32);
            let marked = copy.invoices.iter().filter(|i| i.injected()).count() as u32;
            assert_eq!(marked, rep.suppliers.iter().map(|s| s.invented).sum::<u32>());
            assert!(marked > 0);
            for (a, b) in copy.invoices.iter().zip(&res.ledger.invoices) {
                if !a.injected() {
                    assert_eq!(a, b, "an invoice not marked as invented was changed");
                } else {
                    assert!(a.date >= from && a.date == b.date && a.line() == b.line() && a.supplier == b.supplier);
                }
            }
            if pattern == Pattern::BelowLimit {
                // Invented amounts just below the supplier's limit: first-two digits 90..99 of it.
                assert!(copy.invoices.iter().filter(|i| i.injected()).all(|i| {
                    let l = i.amount.leading_digits(2).unwrap();
                    (45..=49).contains(&l) || (90..=99).contains(&l) || (18..=19).contains(&l)
                }));
            }
            let sopts = ScreenOptions { calibration: Some(c.clone()), ..ScreenOptions::default() };
            let scr = screen(&copy, &res.info, Amount::from_units(10), &sopts);
            let w = watch(&copy, &WatchOptions { confidence: 0.95, ..WatchOptions::default() });
            for s in &rep.suppliers {
                let v = scr.suppliers.iter().find(|x| x.id == s.id).unwrap().verdict.unwrap();
                assert_eq!(v == Verdict::Deviates, s.batch[li], "{pattern:?} rep {r} supplier {}: batch", s.id);
                let ws = w.suppliers.iter().find(|x| x.id == s.id).unwrap();
                assert_eq!(ws.alarm_invoice, s.monitor[li].map(|p| p as u64 + 1), "{pattern:?} rep {r} supplier {}: monitor", s.id);
            }
        }
    }
    assert_eq!(res.ledger.invoices, before, "the session's ledger was changed");
}

#[test]
fn invented_by_hand_digits_follow_the_stated_preferences() {
    // Our own generator against its own stated weights (a check of the implementation, not of
    // the psychology): later whole-unit digits drawn with BY_HAND_LATER, repeats mostly redrawn.
    let mut g = DetRng::seed_from_u64(5);
    let mut counts = [0u64; 10];
    let mut repeats = 0u64;
    let mut pairs = 0u64;
    for _ in 0..20_000 {
        let v = by_hand_amount(&mut g, 100_000, 900_000); // 1,000.00 to 9,000.00
        let whole = (v / 100).to_string();
        let d: Vec<u32> = whole.bytes().map(|b| (b - b'0') as u32).collect();
        for w in d.windows(2) {
            pairs += 1;
            repeats += (w[0] == w[1]) as u64;
        }
        for &x in &d[1..] {
            counts[x as usize] += 1;
        }
    }
    let tot: u64 = counts.iter().sum();
    assert!(counts[7] > counts[1] * 3 / 2, "{counts:?}");
    // Without redraws a repeat would happen about sum w_i^2 ~ 10.6 % of the time.
    let no_redraw: f64 = BY_HAND_LATER.iter().map(|&w| (w as f64 / 1000.0).powi(2)).sum();
    println!("by hand: later digits {counts:?} of {tot}; repeats {:.3} (chance {no_redraw:.3})", repeats as f64 / pairs as f64);
    assert!((repeats as f64 / pairs as f64) < no_redraw * 0.6);
}

/// Σ_{i ≤ k} C(m, i) in u128 (exact for m ≤ 120), computed independently of the core.
fn binom_sum_u128(m: u64, k: u64) -> u128 {
    let mut c: u128 = 1;
    let mut s: u128 = 1;
    for i in 0..k {
        c = c * (m - i) as u128 / (i + 1) as u128;
        s += c;
    }
    s
}

#[test]
fn median_interval_ranks_follow_the_binomial_order_statistic_rule() {
    // Conover, Practical Nonparametric Statistics, 3rd ed., §3.2 (p = 1/2): r − 1 is the largest
    // k with P(Y ≤ k) ≤ 0.025 for Y ~ Binomial(m, 1/2), s = m + 1 − r. Worked by hand: m = 10,
    // P(Y ≤ 1) = 11/1024 = 0.0107, P(Y ≤ 2) = 56/1024 = 0.0547, so [X(2), X(9)] with coverage
    // 1 − 22/1024 = 0.978515625; m = 20, P(Y ≤ 5) = 21700/2^20 = 0.0207, P(Y ≤ 6) = 0.0577, so
    // [X(6), X(15)], coverage 0.958610 (also scipy.stats.binom, tests/reference/test_trial_cli.py).
    assert_eq!(median_ranks(10).map(|x| (x.0, x.1)), Some((2, 9)));
    assert!((median_ranks(10).unwrap().2 - (1.0 - 22.0 / 1024.0)).abs() < 1e-12);
    assert_eq!(median_ranks(20).map(|x| (x.0, x.1)), Some((6, 15)));
    assert!((median_ranks(20).unwrap().2 - (1.0 - 2.0 * 21700.0 / 1048576.0)).abs() < 1e-12);
    // Below 6 observations even [X(1), X(m)] covers less than 95 % (1 − 2^(1−m)).
    for m in 0..6 {
        assert_eq!(median_ranks(m), None, "m = {m}");
        assert_eq!(median_rank_exact(m), None);
    }
    assert_eq!(median_ranks(6).map(|x| (x.0, x.1)), Some((1, 6)));
    // Exact integer rule, recomputed here in u128, for every m from 6 to 120.
    for m in 6..=120u64 {
        let two_m: u128 = 1u128 << m;
        let k = (0..m).take_while(|&k| 40 * binom_sum_u128(m, k) <= two_m).last().unwrap();
        let (r, s, cov) = median_ranks(m).unwrap();
        assert_eq!((r, s), (k + 1, m - k), "m = {m}");
        assert_eq!(median_rank_exact(m), Some(k + 1));
        let want = 1.0 - 2.0 * (binom_sum_u128(m, k) as f64 / two_m as f64);
        assert!((cov - want).abs() < 1e-12 && cov >= 0.95, "m = {m}: coverage {cov} vs {want}");
    }
    // The log-space sum agrees with the exact big-integer rule far beyond u128.
    for m in (121..=1500u64).chain([2047, 4096, 5000]) {
        assert_eq!(median_ranks(m).map(|x| x.0), median_rank_exact(m), "m = {m}");
    }
}

#[test]
fn trial_export_is_marked_kept_apart_and_formula_safe() {
    // A supplier named like a formula: the pool row lists it, and it must come out neutralised
    // (OWASP CSV-injection guidance, as the screen's exports: leading apostrophe — from memory).
    let mut res = honest(&[300, 300, 300, 300], 18);
    res.ledger.suppliers[1].name = "=HYPERLINK(\"x\")".into();
    res.ledger.suppliers[2].name = "-2+3, Ltd".into();
    let o = TrialOptions { share: 0.3, seed: 9, replications: 3, calibration: cal(500, Correction::Fdr), ..TrialOptions::default() };
    let (_, r) = run(&res, o);
    let csv = trial_csv(&r, "@ledger.csv", "5e1f0c9d");
    let mut rd = csv::ReaderBuilder::new().has_headers(false).flexible(true).from_reader(csv.as_bytes());
    let rows: Vec<Vec<String>> = rd.records().map(|x| x.unwrap().iter().map(String::from).collect()).collect();
    assert!(rows[0][0].starts_with("# digitdrift DETECTION TRIAL on invented invoices"), "{}", rows[0][0]);
    assert!(rows[0][0].contains("seed 9") && rows[0][0].contains("3 replications") && rows[0][0].contains("share 0.3"));
    assert!(rows[0][0].contains("not the screen's results"));
    assert!(csv.contains("reason to look, not proof"), "the caution is in the export");
    assert!(rows.iter().flatten().any(|c| c == "'=HYPERLINK(\"x\")"), "formula-like supplier name neutralised");
    assert!(rows.iter().flatten().any(|c| c == "'-2+3, Ltd"));
    for c in rows.iter().flatten() {
        assert!(!c.starts_with(['=', '+', '@', '\t', '\r']), "cell not neutralised: {c}");
        assert!(!c.starts_with('-') || c.parse::<f64>().is_ok(), "text cell starting with '-': {c}");
    }
    let header = rows.iter().position(|r| r[0] == "record").unwrap();
    let data = &rows[header + 1..];
    assert_eq!(data.len(), 3 * r.levels.len());
    assert!(data.iter().all(|d| d[0] == "trial (invented invoices)" && d.len() == rows[header].len()));
    let l = level(&r, 0.95);
    let d = data.iter().find(|d| d[1] == "0.9500" && d[2] == "screen_or_monitor").unwrap();
    assert_eq!(d[3].parse::<f64>().unwrap(), (l.sensitivity.unwrap() * 1e6).round() / 1e6);
    if let Some(iv) = l.median_delay_invoices_interval {
        assert_eq!(d[8].parse::<f64>().unwrap(), iv.low);
        assert_eq!(d[9].parse::<f64>().unwrap(), iv.high);
    }
    assert!(csv.split("\r\n").all(|l| !l.contains('\n')) && csv.ends_with("\r\n"), "RFC 4180 line ends");
    let j: serde_json::Value = serde_json::from_str(&trial_json(&r, "@ledger.csv", "5e1f0c9d")).unwrap();
    assert!(j["notice"].as_str().unwrap().starts_with("digitdrift DETECTION TRIAL on invented invoices"));
    assert_eq!(j["trial"]["parameters"]["seed"], 9);
    assert!(j["caution"].as_str().unwrap().contains("not proof"));
    assert_eq!(j["trial"]["levels"].as_array().unwrap().len(), r.levels.len());
}
