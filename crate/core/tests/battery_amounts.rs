//! Amount checks: frequent amounts, round amounts, duplicates, clusters below approval limits.

use digitdrift_core::battery::{self, BatteryOptions};
use digitdrift_core::ledger::{Invoice, NO_DATE};
use digitdrift_core::Amount;

fn inv(raw: i64, supplier: u32, date: i32, number: u64) -> Invoice {
    Invoice::new(Amount(raw), number, supplier, date, 0)
}

fn checks(v: &[Invoice], limits: &[i64]) -> battery::AmountChecks {
    let r: Vec<&Invoice> = v.iter().collect();
    let opts = BatteryOptions {
        tests: "amounts".parse().unwrap(),
        approval_limits: limits.iter().map(|&l| Amount::from_units(l)).collect(),
        ..Default::default()
    };
    battery::run(&r, &opts).amount_checks.unwrap()
}

/// Log-uniform amounts over [10, 100000) with cents (deterministic LCG, Knuth MMIX constants).
fn smooth(n: usize, seed: u64) -> Vec<Invoice> {
    let mut s = seed;
    (0..n)
        .map(|i| {
            s = s.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            let u = (s >> 11) as f64 / (1u64 << 53) as f64;
            inv((10f64.powf(1.0 + 4.0 * u) * 100.0).round() as i64 * 100, 0, 1000 + i as i32, 0)
        })
        .collect()
}

#[test]
fn frequent_amounts_and_indices() {
    let mut v = smooth(1000, 1);
    for k in 0..7 {
        v.push(inv(4_990_000, 0, 5000 + k, 0)); // 499.00 x 7
    }
    v.push(inv(4_990_000, 0, 6000, 0));
    let c = checks(&v, &[]);
    let top = &c.most_frequent[0];
    assert_eq!(top.amount, Amount(4_990_000));
    assert_eq!(top.count, 8);
    assert!((top.share - 8.0 / 1008.0).abs() < 1e-12);
    assert_eq!(top.invoices, (1000..1008).collect::<Vec<_>>());
    assert!(c.most_frequent.len() <= 10);
}

#[test]
fn round_amounts_against_reference_rates() {
    // 200 amounts: 100 with free cents, 60 at .00 of which 30 whole hundreds of which 10
    // whole thousands.
    let mut v = Vec::new();
    for i in 0..100 {
        v.push(inv((1000 + i) * 10_000 + ((i % 99) + 1) * 100, 0, NO_DATE, 0)); // cents 01..99
    }
    for i in 0..30 {
        v.push(inv((1101 + 3 * i) * 10_000, 0, NO_DATE, 0)); // 1101.00 .. 1188.00: .00, not /100
    }
    for i in 0..20 {
        v.push(inv((i + 1) * 100 * 10_000, 0, NO_DATE, 0)); // 100.00 .. 2000.00 whole hundreds
    }
    for i in 0..10 {
        v.push(inv((i + 1) * 1000 * 10_000, 0, NO_DATE, 0)); // 1000.00 .. 10000.00 whole thousands
    }
    let c = checks(&v, &[]);
    let l = &c.round.levels;
    assert_eq!(l[0].level, "cents_00");
    assert!(v[..100].iter().all(|x| x.amount.0 % 10_000 != 0));
    assert_eq!(l[0].count, 60);
    assert_eq!(l[0].base, 160);
    // Whole hundreds: the 20 + the 10 thousands = 30, of a base of 60 (.00 and >= 100).
    assert_eq!(l[1].base, 60);
    assert_eq!(l[1].count, 30);
    // Whole thousands: 1000 and 2000 among the 20, plus the 10 = 12, of a base of 21 whole
    // hundreds >= 1000 (1000, 1100, ..., 2000 and the 10).
    assert_eq!(l[2].base, 21);
    assert_eq!(l[2].count, 12);
    assert_eq!(l[1].invoices.len(), 30);
    // Binomial upper tail: 60 of 160 at rate 0.01 is astronomically unlikely.
    assert!(l[0].p_value < 1e-50);
}

#[test]
fn duplicates_by_amount_date_and_number() {
    let mut v = smooth(500, 2);
    v.push(inv(v[10].amount.0, v[10].supplier, v[10].date, 0)); // same supplier, amount, date
    v.push(inv(v[20].amount.0, 9, v[20].date, 0)); // other supplier: not a duplicate
    v.push(inv(777_700, 3, 10, 42));
    v.push(inv(888_800, 3, 11, 42)); // same number 42, supplier 3
    v.push(inv(999_900, 4, 12, 42)); // same number, other supplier: not a duplicate
    let c = checks(&v, &[]);
    let d = &c.duplicates;
    assert_eq!(d.same_amount_date_groups, 1);
    assert_eq!(d.same_amount_date_invoices, 2);
    assert_eq!(d.same_number_groups, 1);
    let g = d.groups.iter().find(|g| g.kind == "same_amount_date").unwrap();
    assert_eq!(g.invoices, vec![10, 500]);
    assert_eq!(g.extra_amount, { v[10].amount });
    let g = d.groups.iter().find(|g| g.kind == "same_number").unwrap();
    assert_eq!(g.invoices, vec![502, 503]);
    assert_eq!(g.supplier, 3);
    assert_eq!(d.unnumbered, 502);
}

#[test]
fn cluster_below_limit_stands_out_and_smooth_data_does_not() {
    let base = smooth(20_000, 3);
    let c = checks(&base, &[5000]);
    let l = &c.limits[0];
    assert_eq!(l.window_low, Amount::from_units(4500));
    // Smooth log-uniform data: the window count is what the neighbours predict.
    assert!(l.p_value > 1e-3, "{:?}", l);
    assert!((l.ratio - 1.0).abs() < 0.3, "{}", l.ratio);
    // Add 150 invoices between 4,800 and 4,999.
    let mut v = base.clone();
    for i in 0..150 {
        v.push(inv((4_800 + i) * 10_000 + 9_900, 0, NO_DATE, 0));
    }
    let c = checks(&v, &[5000, 20000]);
    let l = &c.limits[0];
    assert!(l.p_value < 1e-10, "{:?}", l);
    assert!(l.ratio > 1.5);
    assert!((20_000..20_150).all(|i| l.invoices.contains(&i)));
    assert_eq!(l.count as usize, l.invoices.len());
    // The other limit is unaffected.
    assert!(c.limits[1].p_value > 1e-3);
    // Expected from the neighbours only: with q the window's share of the log range,
    // expected = (below + above) * q / (1 - q).
    let q = l.expected_share;
    assert!((l.expected - (l.below_band_count + l.above_band_count) as f64 * q / (1.0 - q)).abs() < 1e-6);
}

/// The whole file's duplicate findings merged from its suppliers' (what the screen does, so the
/// whole file is not searched twice) equal a search of the whole file itself: counts, the
/// listed groups and their order, with the list cut short or not, when suppliers share amounts,
/// dates and numbers with each other (no group may span two suppliers), and for suppliers read
/// through each of the screen's three paths (the largest, one of more than 65,536 invoices
/// read in place, small ones copied out). Self-consistency against the direct search.
#[test]
fn whole_file_duplicates_merged_from_suppliers_equal_a_direct_search() {
    use digitdrift_core::ledger::{Ledger, Supplier};
    use digitdrift_core::report::{self, ScreenOptions};
    let mut s: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = |m: u64| {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (s >> 33) % m
    };
    // supplier sizes: two above 65,536 (largest read by its index list, the other in place),
    // then small ones
    let sizes = [90_000usize, 70_000, 3000, 500, 40, 1];
    let mut invoices = Vec::new();
    for (sid, &n) in sizes.iter().enumerate() {
        for _ in 0..n {
            let amount =
                [1_000_000, 2_500_000, 123_400][next(3) as usize] + 10_000 * next(400) as i64;
            let date = if next(10) == 0 {
                NO_DATE
            } else {
                19_000 + next(30) as i32
            };
            let number = if next(4) == 0 { 0 } else { 1 + next(60_000) };
            invoices.push((sid as u32, amount, date, number));
        }
    }
    // interleave the suppliers in file order
    for i in (1..invoices.len()).rev() {
        invoices.swap(i, next(i as u64 + 1) as usize);
    }
    let ledger = Ledger {
        suppliers: (0..sizes.len())
            .map(|k| Supplier {
                name: format!("S{k}"),
                key: format!("s{k}"),
            })
            .collect(),
        invoices: invoices
            .iter()
            .enumerate()
            .map(|(line, &(sid, a, d, n))| inv_line(a, sid, d, n, line as u64))
            .collect(),
        ..Default::default()
    };
    for keep in [200usize, 7] {
        let mut opts = ScreenOptions::default();
        opts.battery.max_duplicate_groups = keep;
        let merged = report::supplier_batteries(&ledger, &opts)
            .file_duplicates
            .expect("amount checks on");
        let direct = battery::run(ledger.invoices.as_slice(), &opts.battery)
            .amount_checks
            .unwrap()
            .duplicates;
        assert!(
            direct.same_amount_date_groups > 100
                && direct.same_number_groups > 100
                && direct.groups_truncated,
            "{direct:?}"
        );
        assert_eq!(merged, direct, "keep {keep}");
    }
}

fn inv_line(raw: i64, supplier: u32, date: i32, number: u64, line: u64) -> Invoice {
    Invoice::new(Amount(raw), number, supplier, date, line)
}
