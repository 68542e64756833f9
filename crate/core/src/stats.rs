//! Statistics over digit counts: MAD, chi-square and its p-value, per-bin Z with continuity
//! correction, Kolmogorov-Smirnov. Formulas as published for digit analysis (Nigrini, *Benford's
//! Law*, Wiley 2012, ch. 4-5 — from memory; the formulas themselves are the standard ones).

use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Mean absolute deviation between observed and expected proportions.
pub fn mad(counts: &[u64], expected: &[f64]) -> f64 {
    let n: u64 = counts.iter().sum();
    if n == 0 {
        return 0.0;
    }
    let nf = n as f64;
    counts
        .iter()
        .zip(expected)
        .map(|(&c, &p)| (c as f64 / nf - p).abs())
        .sum::<f64>()
        / counts.len() as f64
}

/// Pearson chi-square statistic sum (O - E)^2 / E with E = n p.
pub fn chi_square(counts: &[u64], expected: &[f64]) -> f64 {
    let n: u64 = counts.iter().sum();
    let nf = n as f64;
    counts
        .iter()
        .zip(expected)
        .map(|(&c, &p)| {
            let e = nf * p;
            if e > 0.0 { (c as f64 - e).powi(2) / e } else { 0.0 }
        })
        .sum()
}

/// Upper-tail probability of the chi-square distribution with `df` degrees of freedom.
pub fn chi2_sf(x: f64, df: f64) -> f64 {
    if !x.is_finite() {
        return 0.0;
    }
    if x <= 0.0 {
        return 1.0;
    }
    let d = ChiSquared::new(df).expect("df > 0");
    d.sf(x)
}

/// Z-statistic of one bin with the continuity correction 1/(2n), applied only when it is
/// smaller than the absolute difference (Nigrini 2012, eq. 4.x — from memory).
pub fn z_stat(count: u64, n: u64, p: f64) -> f64 {
    if n == 0 || p <= 0.0 || p >= 1.0 {
        return 0.0;
    }
    let nf = n as f64;
    let po = count as f64 / nf;
    let diff = (po - p).abs();
    let cc = 1.0 / (2.0 * nf);
    let num = if cc < diff { diff - cc } else { diff };
    num / (p * (1.0 - p) / nf).sqrt()
}

/// Kolmogorov-Smirnov statistic over the ordered bins: max |cumulative observed - expected|.
pub fn ks(counts: &[u64], expected: &[f64]) -> f64 {
    let n: u64 = counts.iter().sum();
    if n == 0 {
        return 0.0;
    }
    let nf = n as f64;
    let (mut co, mut ce, mut m) = (0.0f64, 0.0f64, 0.0f64);
    for (&c, &p) in counts.iter().zip(expected) {
        co += c as f64 / nf;
        ce += p;
        m = m.max((co - ce).abs());
    }
    m
}

/// Two-sided 95 % binomial band for a proportion p at sample size n (normal approximation
/// with continuity correction, as drawn around the expected curve on the charts).
pub fn binomial_band(p: f64, n: u64) -> (f64, f64) {
    if n == 0 {
        return (0.0, 1.0);
    }
    let nf = n as f64;
    let half = 1.959963984540054 * (p * (1.0 - p) / nf).sqrt() + 1.0 / (2.0 * nf);
    ((p - half).max(0.0), (p + half).min(1.0))
}

/// Upper tail P(X >= k) of a binomial(n, p) variable, via the regularised incomplete beta
/// function: P(X >= k) = I_p(k, n - k + 1) (standard identity, e.g. Abramowitz & Stegun 26.5.24).
pub fn binom_sf_ge(k: u64, n: u64, p: f64) -> f64 {
    if k == 0 {
        return 1.0;
    }
    if k > n {
        return 0.0;
    }
    if p <= 0.0 {
        return 0.0;
    }
    if p >= 1.0 {
        return 1.0;
    }
    statrs::function::beta::beta_reg(k as f64, (n - k + 1) as f64, p).clamp(0.0, 1.0)
}

/// Two-sided normal p-value 2 * (1 - Phi(|z|)) = erfc(|z| / sqrt 2).
pub fn normal_two_sided(z: f64) -> f64 {
    if !z.is_finite() {
        return 0.0;
    }
    statrs::function::erf::erfc(z.abs() / std::f64::consts::SQRT_2).clamp(0.0, 1.0)
}

/// Flag of one bin from its Z: 0 none, 1 at |Z| > 1.96 (5 % two-sided), 2 at |Z| > 2.576 (1 %).
/// Critical values of the standard normal (any normal table).
pub fn z_flag(z: f64) -> u8 {
    let a = z.abs();
    if a > 2.576 {
        2
    } else if a > 1.96 {
        1
    } else {
        0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chi2_critical_value_df89() {
        // Handbook 5 % critical value of chi-square with 89 df is 112.022 (any chi-square
        // table; also scipy.stats.chi2.ppf(0.95, 89) = 112.0220...).
        let p = chi2_sf(112.022, 89.0);
        assert!((p - 0.05).abs() < 1e-4, "{p}");
    }

    #[test]
    #[allow(clippy::approx_constant)] // the handbook's rounded 0.30103, on purpose
    fn z_hand_worked() {
        // Hand-worked: n = 1000, p = 0.30103, count 350: po = 0.35, diff = 0.04897,
        // minus 1/2000 = 0.04847; sd = sqrt(0.30103*0.69897/1000) = 0.0145057...
        // Z = 0.04847 / 0.0145057 = 3.3414...
        let z = z_stat(350, 1000, 0.30103);
        assert!((z - 3.3414).abs() < 1e-3, "{z}");
    }
}
