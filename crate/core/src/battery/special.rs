//! Summation test, second-order test and distortion factor.

use super::digits::DigitTest;
use super::sort::Sorted;
use crate::amount::{Amount, SCALE};
use crate::benford;
use crate::stats;
use serde::Serialize;

// ---------------------------------------------------------------- summation

/// Summation test: the amount sum per first-two bin against equal shares 1/90. Under
/// Benford's law the expected sum is the same for every first-two bin (the sum-invariance
/// property; Allaart, "An invariant-sum characterization of Benford's law", J. Appl. Prob.
/// 34, 1997; used as the summation test in Nigrini 2012, ch. 6 — references from memory).
/// A large share in one bin usually means a few very large amounts there.
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct Summation {
    pub test: &'static str,
    pub n: u64,
    pub first_bin: u32,
    /// Total of |amounts| (currency units).
    pub total: f64,
    /// Sum per bin 10..=99 (currency units).
    pub sums: Vec<f64>,
    pub counts: Vec<u64>,
    /// sums / total.
    pub shares: Vec<f64>,
    pub expected_share: f64,
    /// Mean absolute deviation of the shares from 1/90.
    pub mad: f64,
    /// A bin is flagged when share >= flag_ratio / 90 (common practice, no source).
    pub flag_ratio: f64,
    pub flagged: Vec<SummationBin>,
}

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct SummationBin {
    pub bin: u32,
    pub sum: f64,
    pub share: f64,
    /// share / (1/90).
    pub ratio: f64,
    pub count: u64,
    /// Index of the largest invoice in the bin, and its share of the bin's sum.
    pub largest_invoice: usize,
    pub largest_amount: Amount,
    pub largest_share_of_bin: f64,
}

pub(crate) struct SummationAcc {
    sums: [u128; 90],
    counts: [u64; 90],
    max: [(u64, usize); 90],
}

impl SummationAcc {
    pub fn new() -> Self {
        SummationAcc { sums: [0; 90], counts: [0; 90], max: [(0, 0); 90] }
    }
    #[inline]
    pub fn add(&mut self, d2: u32, a: Amount, idx: usize) {
        let b = (d2 - 10) as usize;
        let v = a.0.unsigned_abs();
        self.sums[b] += v as u128;
        self.counts[b] += 1;
        if v > self.max[b].0 {
            self.max[b] = (v, idx);
        }
    }
    pub fn finish(self, flag_ratio: f64) -> Summation {
        let total: u128 = self.sums.iter().sum();
        let sc = SCALE as f64;
        let shares: Vec<f64> =
            self.sums.iter().map(|&s| if total == 0 { 0.0 } else { s as f64 / total as f64 }).collect();
        let e = 1.0 / 90.0;
        let n: u64 = self.counts.iter().sum();
        let mad = if n == 0 { 0.0 } else { shares.iter().map(|s| (s - e).abs()).sum::<f64>() / 90.0 };
        let flagged = (0..90)
            .filter(|&b| n > 0 && shares[b] >= flag_ratio * e)
            .map(|b| SummationBin {
                bin: 10 + b as u32,
                sum: self.sums[b] as f64 / sc,
                share: shares[b],
                ratio: shares[b] / e,
                count: self.counts[b],
                largest_invoice: self.max[b].1,
                largest_amount: Amount(self.max[b].0 as i64),
                largest_share_of_bin: self.max[b].0 as f64 / self.sums[b] as f64,
            })
            .collect();
        Summation {
            test: "summation",
            n,
            first_bin: 10,
            total: total as f64 / sc,
            sums: self.sums.iter().map(|&s| s as f64 / sc).collect(),
            counts: self.counts.to_vec(),
            shares,
            expected_share: e,
            mad,
            flag_ratio,
            flagged,
        }
    }
}

// ---------------------------------------------------------------- second order

pub const SECOND_ORDER_SOURCE: &str = "Second-order test: first-two digits of the differences between \
neighbouring amounts once sorted. Nigrini & Miller, 'Data diagnostics using second-order tests of \
Benford's Law', Auditing: A Journal of Practice & Theory 28(2), 2009 (from memory): for almost any \
continuous data with enough values the differences come close to Benford's first-two proportions, \
whether or not the data themselves follow Benford; rounded or repeated amounts show as spikes \
(e.g. at 10, 20, ..., 90) and inserted or missing values as other irregularities. Amounts are held to \
the cent, so where they are dense (neighbours a few cents apart, e.g. thousands of small invoices) the \
differences are whole numbers of cents and spike at 10, 20, ..., 90 from that rounding alone.";

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct SecondOrder {
    #[serde(flatten)]
    pub digits: DigitTest,
    /// Differences computed (nonzero amounts - 1).
    pub differences: u64,
    /// Zero differences (equal neighbouring amounts) are excluded from the counts.
    pub zero_differences: u64,
    /// Nonzero differences below 0.10: with amounts to the cent they have one significant digit
    /// and can only land in bins 10, 20, ..., 90 (a rounding effect, not a finding).
    pub differences_below_ten_cents: u64,
    pub source: &'static str,
}

/// The second-order test fed the sorted amounts window by window (ascending): differences of
/// neighbours, across window edges too.
pub(crate) struct SecondOrderAcc {
    c: Vec<u64>,
    zeros: u64,
    tiny: u64,
    prev: Option<u64>,
    len: usize,
}

impl Default for SecondOrderAcc {
    fn default() -> Self {
        SecondOrderAcc { c: vec![0u64; 90], zeros: 0, tiny: 0, prev: None, len: 0 }
    }
}

impl SecondOrderAcc {
    pub fn feed(&mut self, sorted: &Sorted) {
        self.len += sorted.len();
        for i in 0..sorted.len() {
            let k = sorted.key(i);
            if let Some(p) = self.prev.replace(k) {
                self.diff(k - p);
            }
        }
    }
    fn diff(&mut self, d: u64) {
        if d == 0 {
            self.zeros += 1;
            return;
        }
        if d < (SCALE / 10) as u64 {
            self.tiny += 1;
        }
        let d = Amount(d.min(i64::MAX as u64) as i64);
        if let Some(v) = d.leading_digits(2) {
            self.c[(v - 10) as usize] += 1;
        }
    }
    pub fn finish(self) -> SecondOrder {
        SecondOrder {
            digits: DigitTest::from_counts("second_order", 10, self.c, benford::first_two()),
            differences: self.len.saturating_sub(1) as u64,
            zero_differences: self.zeros,
            differences_below_ten_cents: self.tiny,
            source: SECOND_ORDER_SOURCE,
        }
    }
}

// ---------------------------------------------------------------- distortion factor

pub const DISTORTION_SOURCE: &str = "Distortion factor model: M. Nigrini, 'A taxpayer compliance \
application of Benford's law', Journal of the American Taxation Association 18(1), 1996 (from memory). \
Each amount is scaled to [10, 100) by moving the decimal point; the actual mean (AM) is compared with \
the Benford expectation EM = 90 / ln 10 = 39.0865; DF = (AM - EM) / EM. Z = (AM - EM) / (sigma / sqrt n) \
with sigma = sqrt(4950 / ln 10 - EM^2) = 24.940, the standard deviation of a Benford variable on \
[10, 100) (computed from the density 1 / (x ln 10); sigma / EM = 0.638, which matches the factor quoted \
in the literature as we recall it).";

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct Distortion {
    pub test: &'static str,
    pub n: u64,
    pub actual_mean: f64,
    pub expected_mean: f64,
    /// (AM - EM) / EM in percent. Positive: amounts pushed up within their decade (towards the
    /// next power of ten); negative: pushed down.
    pub distortion_factor_pct: f64,
    pub sigma: f64,
    pub z: f64,
    /// Two-sided normal p-value of z.
    pub p_value: f64,
    pub source: &'static str,
}

/// EM = 90 / ln 10: mean of a Benford variable on [10, 100).
pub fn benford_scaled_mean() -> f64 {
    90.0 / std::f64::consts::LN_10
}

/// Standard deviation of a Benford variable on [10, 100): E[X^2] = (100^2 - 10^2) / (2 ln 10).
pub fn benford_scaled_sd() -> f64 {
    let m = benford_scaled_mean();
    (4950.0 / std::f64::consts::LN_10 - m * m).sqrt()
}

const POW10: [f64; 20] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17,
    1e18, 1e19,
];

/// |amount| scaled to [10, 100) (the decimal point moved; the power of ten found exactly from
/// the integer). None for zero.
pub fn scaled_to_decade(a: Amount) -> Option<f64> {
    let v = a.0.unsigned_abs();
    if v == 0 {
        return None;
    }
    let k = v.ilog10(); // exact
    let x = if k >= 1 { v as f64 / POW10[(k - 1) as usize] } else { v as f64 * 10.0 };
    Some(x.clamp(10.0, 99.999_999_999_999))
}

#[derive(Default)]
pub(crate) struct DistortionAcc {
    n: u64,
    sum: f64,
}

impl DistortionAcc {
    #[inline]
    pub fn add(&mut self, a: Amount) {
        if let Some(x) = scaled_to_decade(a) {
            self.n += 1;
            self.sum += x;
        }
    }
    pub fn finish(self) -> Distortion {
        let em = benford_scaled_mean();
        let sigma = benford_scaled_sd();
        let am = if self.n == 0 { em } else { self.sum / self.n as f64 };
        let z = if self.n == 0 { 0.0 } else { (am - em) / (sigma / (self.n as f64).sqrt()) };
        Distortion {
            test: "distortion",
            n: self.n,
            actual_mean: am,
            expected_mean: em,
            distortion_factor_pct: 100.0 * (am - em) / em,
            sigma,
            z,
            p_value: stats::normal_two_sided(z),
            source: DISTORTION_SOURCE,
        }
    }
}
