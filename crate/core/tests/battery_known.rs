//! The digit-test battery checked against published tables, hand-worked examples and
//! sequences whose digit laws are mathematical facts. Sources beside each check.

use digitdrift_core::battery::{self, BatteryOptions, DigitTest, TestSet};
use digitdrift_core::ledger::{Invoice, NO_DATE};
use digitdrift_core::{benford, Amount};

fn inv(raw: i64) -> Invoice {
    Invoice::new(Amount(raw), 0, 0, NO_DATE, 0)
}
fn units(u: i64) -> Invoice {
    inv(u * 10_000)
}
fn run(v: &[Invoice], tests: &str) -> battery::Battery {
    let r: Vec<&Invoice> = v.iter().collect();
    battery::run(&r, &BatteryOptions { tests: tests.parse().unwrap(), ..Default::default() })
}

// ---------------------------------------------------------------- a tiny exact bignum

/// Non-negative integer in base 10^9, little-endian limbs.
#[derive(Clone)]
struct Big(Vec<u32>);
const BASE: u64 = 1_000_000_000;
impl Big {
    fn one() -> Big {
        Big(vec![1])
    }
    fn add(&self, o: &Big) -> Big {
        let mut out = Vec::with_capacity(self.0.len().max(o.0.len()) + 1);
        let mut carry = 0u64;
        for i in 0..self.0.len().max(o.0.len()) {
            let s = carry + *self.0.get(i).unwrap_or(&0) as u64 + *o.0.get(i).unwrap_or(&0) as u64;
            out.push((s % BASE) as u32);
            carry = s / BASE;
        }
        if carry > 0 {
            out.push(carry as u32);
        }
        Big(out)
    }
    /// Decimal text, exact.
    fn decimal(&self) -> String {
        let mut s = self.0.last().unwrap().to_string();
        for l in self.0.iter().rev().skip(1) {
            s.push_str(&format!("{:09}", l));
        }
        s
    }
    /// An Amount holding the leading (up to) 18 significant digits; digit tests only read
    /// significant digits, so the scale does not matter.
    fn leading_amount(&self) -> Amount {
        let s = self.decimal();
        let head = &s[..s.len().min(18)];
        Amount(head.parse::<i64>().unwrap())
    }
}

#[test]
fn bignum_is_exact() {
    // 2^100 = 1267650600228229401496703205376 (exact; also Python `2**100`).
    let mut x = Big::one();
    for _ in 0..100 {
        x = x.add(&x);
    }
    assert_eq!(x.decimal(), "1267650600228229401496703205376");
    assert_eq!(x.leading_amount(), Amount(126765060022822940));
}

// ---------------------------------------------------------------- expected proportions

#[test]
fn expected_proportions_match_published_tables() {
    // Published Benford table of first-digit and second-digit proportions (Benford 1938;
    // Nigrini, Benford's Law, Wiley 2012, Table 5.1 — values quoted from memory, and
    // cross-checked by computing log10(1 + 1/d) in tests/reference/test_battery_reference.py).
    let first = [30.103, 17.609, 12.494, 9.691, 7.918, 6.695, 5.799, 5.115, 4.576];
    for (p, t) in benford::first_digit().iter().zip(first) {
        assert!((100.0 * p - t).abs() < 0.0005, "{p} vs {t}");
    }
    let second = [11.968, 11.389, 10.882, 10.433, 10.031, 9.668, 9.337, 9.035, 8.757, 8.500];
    for (p, t) in benford::second_digit().iter().zip(second) {
        assert!((100.0 * p - t).abs() < 0.0005, "{p} vs {t}");
    }
    // First-three: P(100) = log10(1.01) = 0.00432137..., P(999) = log10(1000/999) = 0.00043451...
    let f3 = benford::first_three();
    assert!((f3[0] - 0.004321373782642).abs() < 1e-12);
    assert!((f3[899] - 0.000434511774018).abs() < 1e-12);
    assert!((f3.iter().sum::<f64>() - 1.0).abs() < 1e-12);
}

// ---------------------------------------------------------------- hand-worked Z

#[test]
fn z_and_flags_hand_worked() {
    // Hand-worked (second digit 0): p = sum_{d=1..9} log10(1 + 1/(10 d)) = 0.1196793, n = 500,
    // count 40: |0.08 - 0.1196793| = 0.0396793, minus 1/(2*500) = 0.0386793;
    // sd = sqrt(0.1196793 * 0.8803207 / 500) = 0.0145156; Z = 2.66461 -> flag 2 (> 2.576).
    let mut c = vec![50u64; 10];
    c[0] = 40;
    c[9] = 500 - 40 - 50 * 8;
    let t = DigitTest::from_counts("second_digit", 0, c, benford::second_digit());
    assert_eq!(t.n, 500);
    assert!((t.z[0] - 2.66461).abs() < 1e-4, "{}", t.z[0]);
    assert_eq!(t.flag[0], 2);
    // Bin 9: p = 0.0850, count 60: |0.12 - 0.0850| = 0.0350, minus 0.001 = 0.0340;
    // sd = sqrt(0.0850 * 0.9150 / 500) = 0.012471; Z = 2.726 (p from the table above, 8.500 %).
    assert!((t.z[9] - 2.726).abs() < 0.01, "{}", t.z[9]);
    // When the correction exceeds the difference it is not applied (Nigrini 2012, from memory):
    // a count equal to the expectation gives Z = 0 and no flag.
    let e = DigitTest::from_counts("first_digit", 1, vec![301, 176, 125, 97, 79, 67, 58, 51, 46], benford::first_digit());
    assert!(e.z[0] < 0.1 && e.flag[0] == 0, "{}", e.z[0]);
    // Flag thresholds: |Z| > 1.96 -> 1, > 2.576 -> 2 (standard normal table).
    assert_eq!(digitdrift_core::stats::z_flag(1.95), 0);
    assert_eq!(digitdrift_core::stats::z_flag(-2.0), 1);
    assert_eq!(digitdrift_core::stats::z_flag(2.6), 2);
    assert!((e.ks_critical_5pct - 1.36 / (1000f64).sqrt()).abs() < 1e-12);
    assert_eq!(e.df, 8);
}

// ---------------------------------------------------------------- known Benford sequences

fn powers_of_two(n: usize) -> Vec<Invoice> {
    let mut x = Big::one();
    (0..n)
        .map(|_| {
            x = x.add(&x);
            inv(x.leading_amount().0)
        })
        .collect()
}

fn fibonacci(n: usize) -> Vec<Invoice> {
    let (mut a, mut b) = (Big::one(), Big::one());
    (0..n)
        .map(|_| {
            let v = inv(a.leading_amount().0);
            let c = a.add(&b);
            a = std::mem::replace(&mut b, c);
            v
        })
        .collect()
}

#[test]
fn powers_of_two_conform() {
    // First digits of 2^n, n = 1..1000: n log10 2 mod 1 is equidistributed (Weyl's
    // equidistribution theorem, log10 2 irrational), so the digits follow Benford's law, and
    // as a low-discrepancy sequence far more closely than a random sample.
    let v = powers_of_two(1000);
    let b = run(&v, "first,second,first_two");
    let f = b.first_digit.unwrap();
    // Exact count of leading 1s among 2^1..2^1000 is 301 (Python `str(2**n)[0]`, re-checked in
    // the reference script).
    assert_eq!(f.counts[0], 301);
    assert_eq!(f.counts, vec![301, 176, 125, 97, 79, 69, 56, 52, 45]);
    assert!(f.mad < 0.006, "mad {}", f.mad); // close conformity (Nigrini 2012 bands, from memory)
    assert_eq!(f.conformity.as_ref().unwrap().label, "close_conformity");
    assert!(f.p_value > 0.9, "p {}", f.p_value);
    assert!(f.flag.iter().all(|&x| x == 0));
    assert!(f.ks < f.ks_critical_5pct);
    assert!(b.second_digit.unwrap().p_value > 0.5);
    assert!(b.first_two.unwrap().p_value > 0.5);
}

#[test]
fn fibonacci_conform() {
    // First 1000 Fibonacci numbers F1..F1000: by Binet's formula F_n ~ phi^n / sqrt 5, so
    // log10 F_n ~ n log10 phi - log10 sqrt 5, equidistributed mod 1 (Weyl; log10 phi irrational).
    let v = fibonacci(1000);
    let b = run(&v, "first,first_two");
    let f = b.first_digit.unwrap();
    assert_eq!(f.counts, vec![301, 177, 125, 96, 80, 67, 56, 53, 45]); // Python exact ints
    assert!(f.mad < 0.006 && f.p_value > 0.9, "{} {}", f.mad, f.p_value);
    assert!(f.flag.iter().all(|&x| x == 0));
    assert!(b.first_two.unwrap().p_value > 0.5);
}

#[test]
fn uniform_integers_are_flagged() {
    // 1..9999 each once: every first digit has 1111 values (11.1 %), far from 30.1 % for 1
    // (arithmetic, not Benford): the first-digit test must flag it.
    let v: Vec<Invoice> = (1..=9999).map(units).collect();
    let b = run(&v, "first,distortion");
    let f = b.first_digit.unwrap();
    assert_eq!(f.counts, vec![1111; 9]);
    assert!(f.p_value < 1e-100, "{}", f.p_value);
    assert_eq!(f.conformity.as_ref().unwrap().label, "nonconformity");
    assert_eq!(f.flag[0], 2);
    assert_eq!(f.flag[8], 2);
    assert!(f.ks > f.ks_critical_5pct);
    // Uniform data sit high in their decades: positive distortion factor.
    let d = b.distortion.unwrap();
    assert!(d.distortion_factor_pct > 20.0 && d.z > 10.0, "{:?}", d);
}

// ---------------------------------------------------------------- samples

struct Xs(u64);
impl Xs {
    fn next(&mut self) -> u64 {
        // xorshift64* (Vigna 2016)
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545F4914F6CDD1D)
    }
    fn unif(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Benford sample: 10^U with U uniform over 4 decades (scale invariance: a log-uniform
/// variable over whole decades is exactly Benford), held with 4 decimals.
fn benford_sample(n: usize, seed: u64) -> Vec<Invoice> {
    let mut r = Xs(seed);
    (0..n).map(|_| inv((10f64.powf(1.0 + 4.0 * r.unif()) * 10_000.0).round() as i64)).collect()
}

#[test]
fn second_order_on_benford_and_sorted_uniform_data() {
    // Nigrini & Miller 2009 (from memory): the first-two digits of the differences of sorted
    // values come close to Benford for almost any continuous data, Benford or not.
    let b = run(&benford_sample(20_000, 7), "second_order,first_two");
    let so = b.second_order.unwrap();
    assert_eq!(so.digits.n + so.zero_differences, 19_999);
    assert!(so.digits.mad < 0.0018, "benford sample second-order MAD {}", so.digits.mad);

    // Uniform data (not Benford: the first-digit test flags them) with cents.
    let mut r = Xs(11);
    let u: Vec<Invoice> = (0..20_000).map(|_| inv(100_000 + (r.unif() * 1e9) as i64)).collect();
    let bu = run(&u, "first,second_order");
    assert!(bu.first_digit.unwrap().p_value < 1e-50);
    let sou = bu.second_order.unwrap();
    assert!(sou.digits.mad < 0.0018, "uniform second-order MAD {}", sou.digits.mad);

    // Sorted uniform grid 1..9999 whole units: every difference is 1.00, so all of them land
    // in bin 10 -- the spike the method describes for equally spaced (rounded) values.
    let g: Vec<Invoice> = (1..=9999).map(units).collect();
    let sg = run(&g, "second_order").second_order.unwrap();
    assert_eq!(sg.digits.counts[0], 9998);
    assert_eq!(sg.zero_differences, 0);
    assert!(sg.digits.p_value < 1e-100);

    // Rounded data (whole units, many values): differences are whole numbers, mostly small,
    // so spikes sit at bins 10, 20, ..., 90 and the bins between are (nearly) empty.
    let mut r = Xs(5);
    let w: Vec<Invoice> = (0..20_000).map(|_| units(10 + (r.unif() * 20_000.0) as i64)).collect();
    let sw = run(&w, "second_order").second_order.unwrap();
    assert!(sw.zero_differences > 1000);
    let tens: u64 = (0..9).map(|k| sw.digits.counts[k * 10]).sum();
    assert!(tens as f64 > 0.99 * sw.digits.n as f64, "{tens} of {}", sw.digits.n);
}

#[test]
fn second_order_hand_worked() {
    // Sorted 10.00, 10.05, 10.10, 20.00, 20.00: differences 0.05, 0.05, 9.90, 0 -> bin 50 twice
    // (0.05 reads as "5.0"), bin 99 once, one zero difference excluded, two below 0.10.
    let v = [units(20), inv(100_500), units(10), units(20), inv(101_000)];
    let so = run(&v, "second_order").second_order.unwrap();
    assert_eq!(so.differences, 4);
    assert_eq!(so.zero_differences, 1);
    assert_eq!(so.differences_below_ten_cents, 2);
    assert_eq!(so.digits.n, 3);
    assert_eq!(so.digits.counts[50 - 10], 2);
    assert_eq!(so.digits.counts[99 - 10], 1);
    let r: Vec<&Invoice> = v.iter().collect();
    // Drill-down: bin 50 comes from the pairs (10.00, 10.05) and (10.05, 10.10).
    assert_eq!(battery::bin_members("second_order", 50, &r), vec![1, 2, 4]);
    // Bin 99: the pair (10.10 = index 4, first 20.00 = index 0; ties keep file order).
    assert_eq!(battery::bin_members("second_order", 99, &r), vec![0, 4]);
}

#[test]
fn benford_sample_passes_everything_moderately() {
    let v = benford_sample(50_000, 3);
    let b = run(&v, "all");
    for t in [b.first_digit.as_ref(), b.second_digit.as_ref(), b.first_two.as_ref()] {
        let t = t.unwrap();
        assert!(t.p_value > 1e-4, "{} p {}", t.test, t.p_value);
        assert_ne!(t.conformity.as_ref().unwrap().label, "nonconformity", "{}", t.test);
    }
    // Summation: shares near 1/90 (sum invariance, Allaart 1997 from memory); 50,000 draws
    // over 4 decades leave noise, so only a loose bound.
    let s = b.summation.unwrap();
    assert!((s.shares.iter().sum::<f64>() - 1.0).abs() < 1e-9);
    assert!(s.mad < 0.004, "summation MAD {}", s.mad);
    let d = b.distortion.unwrap();
    assert!(d.z.abs() < 4.0, "{:?}", d);
    // Cents of Benford amounts >= 10.00 are close to uniform.
    assert!(b.last_two.unwrap().p_value > 1e-4);
}

#[test]
fn summation_flags_one_huge_amount() {
    let mut v = benford_sample(5_000, 9);
    v.push(units(4_700_000)); // first-two 47
    let s = run(&v, "summation").summation.unwrap();
    let f = s.flagged.iter().find(|f| f.bin == 47).expect("bin 47 flagged");
    assert_eq!(f.largest_invoice, 5_000);
    assert!(f.largest_share_of_bin > 0.5);
    assert_eq!(s.counts.iter().sum::<u64>(), 5_001);
}

#[test]
fn distortion_hand_worked() {
    // Two amounts 50.00 and 5000.00 both scale to 50: AM = 50,
    // DF = (50 - 39.0865) / 39.0865 = 27.921 %. sigma = sqrt(4950/ln 10 - (90/ln 10)^2) = 24.940
    // (integral of the Benford density on [10,100)); Z = 10.9135 / (24.940 / sqrt 2) = 0.6188.
    let d = run(&[units(50), units(5000)], "distortion").distortion.unwrap();
    assert!((d.expected_mean - 39.0865).abs() < 1e-4);
    assert!((d.distortion_factor_pct - 27.921).abs() < 1e-3, "{}", d.distortion_factor_pct);
    assert!((d.sigma - 24.940).abs() < 1e-3);
    assert!((d.z - 0.6188).abs() < 1e-3, "{}", d.z);
    // sigma / EM ~ 0.638, the factor we recall from the literature (from memory).
    assert!((d.sigma / d.expected_mean - 0.638).abs() < 1e-3);
}

// ---------------------------------------------------------------- options, JSON, drill-down

#[test]
fn test_set_parsing_and_selection() {
    assert_eq!("all".parse::<TestSet>().unwrap(), TestSet::all());
    let t: TestSet = "first, first_two,amounts".parse().unwrap();
    assert!(t.first && t.first_two && t.amounts && !t.second && !t.summation);
    let e = "first,benfordish".parse::<TestSet>().unwrap_err().to_string();
    assert!(e.contains("benfordish") && e.contains("second_order") && e.contains("all"), "{e}");
    assert!("".parse::<TestSet>().is_err());
    assert_eq!(t.to_string(), "first,first_two,amounts");

    let b = run(&benford_sample(300, 1), "first_two");
    let j = serde_json::to_value(&b).unwrap();
    let o = j.as_object().unwrap();
    assert_eq!(o.keys().collect::<Vec<_>>(), vec!["first_two"]);
    let ft = &o["first_two"];
    assert_eq!(ft["counts"].as_array().unwrap().len(), 90);
    for k in ["mad", "chi_square", "p_value", "z", "flag", "ks", "ks_critical_5pct", "conformity", "expected", "observed"] {
        assert!(ft.get(k).is_some(), "{k}");
    }
    assert!(ft.get("mc_p_value").is_none() && ft.get("mad_critical").is_none());
    let all = serde_json::to_value(run(&benford_sample(300, 1), "all")).unwrap();
    for k in ["first_digit", "second_digit", "first_two", "first_three", "last_two", "summation", "second_order", "distortion", "amount_checks"] {
        assert!(all.get(k).is_some(), "{k}");
    }
    assert!(all["second_order"].get("p_value").is_some()); // flattened digit test
}

#[test]
fn bin_members_match_counts() {
    let v = benford_sample(2_000, 21);
    let r: Vec<&Invoice> = v.iter().collect();
    let b = battery::run(&r, &BatteryOptions::default());
    for t in [b.first_digit, b.second_digit, b.first_two, b.first_three, b.last_two].into_iter().flatten() {
        for (i, &c) in t.counts.iter().enumerate() {
            let m = battery::bin_members(t.test, t.first_bin + i as u32, &r);
            assert_eq!(m.len() as u64, c, "{} bin {}", t.test, t.first_bin + i as u32);
        }
    }
    let m = battery::bin_members("first", 1, &r);
    assert!(m.iter().all(|&i| v[i].amount.leading_digits(1) == Some(1)));
    // Second order: every pair behind a bar is returned; a bar with count c has >= c + 1 invoices.
    let so = b.second_order.unwrap();
    let c10 = so.digits.counts[0];
    if c10 > 0 {
        assert!(battery::bin_members("second_order", 10, &r).len() as u64 > c10);
    }
    assert!(battery::bin_members("nonsense", 10, &r).is_empty());
}

#[test]
fn last_two_basis() {
    use battery::LastTwoBasis::*;
    // Cents basis: 1234.56 -> 56; 9.99 is below 10.00 -> not counted. Whole units: 1234.56 -> 34,
    // 999.00 below 1000 -> not counted.
    assert_eq!(Cents.bin(Amount(12_345_600)), Some(56));
    assert_eq!(Cents.bin(Amount(99_900)), None);
    assert_eq!(WholeUnits.bin(Amount(12_345_600)), Some(34));
    assert_eq!(WholeUnits.bin(Amount(9_990_000)), None);
    let t = run(&[units(10), units(20)], "last_two").last_two.unwrap();
    assert_eq!(t.counts[0], 2);
    assert_eq!(t.n, 2);
}

#[test]
fn empty_population() {
    let b = run(&[], "all");
    let f = b.first_digit.unwrap();
    assert_eq!(f.n, 0);
    assert_eq!(f.p_value, 1.0);
    assert_eq!(f.conformity.unwrap().label, "no_data");
    assert_eq!(b.amount_checks.unwrap().n, 0);
    assert!(serde_json::to_string(&run(&[], "all")).is_ok());
}
