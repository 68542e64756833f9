//! One digit test over bin counts: proportions, per-bin Z, chi-square, KS, MAD and the
//! published MAD conformity bands.

use crate::stats;
use serde::Serialize;

/// One MAD band: `label` applies while MAD <= `upper` (the last band has no upper bound).
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct Band {
    pub label: &'static str,
    pub upper: Option<f64>,
}

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct Conformity {
    /// The band the MAD falls in, or "no_data" when n = 0.
    pub label: &'static str,
    pub bands: Vec<Band>,
    pub source: &'static str,
    pub note: &'static str,
}

pub const BANDS_SOURCE: &str = "MAD conformity ranges as published by M. Nigrini, Benford's Law (Wiley, 2012), \
Table 7.1 (values quoted from memory; check against the book before relying on them)";
pub const BANDS_NOTE: &str = "These fixed bands ignore sample size: a large population can fall outside them \
from harmless quirks, a small one can stay inside while manipulated. A digit deviation is a reason to look, \
not proof of wrongdoing.";
pub const ANALOGY_SOURCE: &str = "No published bands for this test known to us: the first-two digit bands \
(Nigrini 2012, Table 7.1, from memory) are shown by analogy only (common practice, no source)";

const LABELS: [&str; 4] = [
    "close_conformity",
    "acceptable_conformity",
    "marginally_acceptable_conformity",
    "nonconformity",
];

/// Upper limits of the first three bands (Nigrini 2012, Table 7.1, from memory).
pub fn band_limits(test: &str) -> Option<[f64; 3]> {
    match test {
        "first_digit" => Some([0.006, 0.012, 0.015]),
        "second_digit" => Some([0.008, 0.010, 0.012]),
        "first_two" | "second_order" => Some([0.0012, 0.0018, 0.0022]),
        "first_three" => Some([0.00036, 0.00044, 0.00050]),
        _ => None,
    }
}

fn conformity(test: &str, n: u64, mad: f64) -> Option<Conformity> {
    let lim = band_limits(test)?;
    let bands = (0..4)
        .map(|i| Band { label: LABELS[i], upper: lim.get(i).copied() })
        .collect();
    let label = if n == 0 {
        "no_data"
    } else {
        LABELS[lim.iter().position(|&u| mad <= u).unwrap_or(3)]
    };
    let source = if test == "second_order" { ANALOGY_SOURCE } else { BANDS_SOURCE };
    Some(Conformity { label, bands, source, note: BANDS_NOTE })
}

/// The result of one digit test (first, second, first-two, first-three, last-two digits,
/// and the first-two digits of the second-order differences).
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct DigitTest {
    /// Test name: first_digit, second_digit, first_two, first_three, last_two, second_order.
    pub test: &'static str,
    /// Number of values counted.
    pub n: u64,
    /// Digit value of the first bin (1, 0, 10, 100, 0, 10).
    pub first_bin: u32,
    pub counts: Vec<u64>,
    pub expected: Vec<f64>,
    pub observed: Vec<f64>,
    /// Per-bin Z with the continuity correction (`stats::z_stat`).
    pub z: Vec<f64>,
    /// Per bin: 0 none, 1 at |Z| > 1.96, 2 at |Z| > 2.576.
    pub flag: Vec<u8>,
    pub chi_square: f64,
    pub df: u32,
    pub p_value: f64,
    /// Bins whose expected count n p is below 5: the chi-square p-value is then only approximate
    /// (the usual rule of thumb, e.g. Cochran 1954).
    pub low_expected_bins: u32,
    pub ks: f64,
    /// 1.36 / sqrt(n) (large-sample 5 % critical value of the KS statistic; null when n = 0).
    pub ks_critical_5pct: f64,
    pub mad: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub conformity: Option<Conformity>,
    /// Monte Carlo p-value (filled by the calibration module).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mc_p_value: Option<f64>,
    /// Sample-size-aware MAD critical value (filled by the calibration module).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mad_critical: Option<f64>,
}

impl DigitTest {
    pub fn from_counts(test: &'static str, first_bin: u32, counts: Vec<u64>, expected: Vec<f64>) -> DigitTest {
        assert_eq!(counts.len(), expected.len());
        let n: u64 = counts.iter().sum();
        let nf = n as f64;
        let observed: Vec<f64> =
            counts.iter().map(|&c| if n == 0 { 0.0 } else { c as f64 / nf }).collect();
        let z: Vec<f64> = counts.iter().zip(&expected).map(|(&c, &p)| stats::z_stat(c, n, p)).collect();
        let flag = z.iter().map(|&z| stats::z_flag(z)).collect();
        let df = (counts.len() - 1) as u32;
        let chi = if n == 0 { 0.0 } else { stats::chi_square(&counts, &expected) };
        let p_value = stats::chi2_sf(chi, df as f64);
        let low_expected_bins = expected.iter().filter(|&&p| nf * p < 5.0).count() as u32;
        let mad = stats::mad(&counts, &expected);
        let ks = stats::ks(&counts, &expected);
        let ks_critical_5pct = if n == 0 { f64::INFINITY } else { 1.36 / nf.sqrt() };
        let conformity = conformity(test, n, mad);
        DigitTest {
            test,
            n,
            first_bin,
            counts,
            expected,
            observed,
            z,
            flag,
            chi_square: chi,
            df,
            p_value,
            low_expected_bins,
            ks,
            ks_critical_5pct,
            mad,
            conformity,
            mc_p_value: None,
            mad_critical: None,
        }
    }

    /// Digit values of the bins flagged at 1 % (|Z| > 2.576).
    pub fn flagged_bins(&self) -> Vec<u32> {
        self.flag.iter().enumerate().filter(|(_, &f)| f == 2).map(|(i, _)| self.first_bin + i as u32).collect()
    }
}
