//! Multiple-testing control across a supplier list.
//!
//! - Benjamini & Hochberg, "Controlling the false discovery rate: a practical and powerful
//!   approach to multiple testing", JRSS B 57(1), 1995, pp. 289-300: step-up procedure; the
//!   adjusted p-value of the i-th smallest of m p-values is min_{j >= i} min(1, m p_(j) / j).
//! - Bonferroni: min(1, m p).

use serde::{Deserialize, Serialize};

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Correction {
    /// Benjamini-Hochberg false-discovery-rate control (the default).
    #[default]
    Fdr,
    /// Bonferroni family-wise error control.
    Bonferroni,
    /// No correction: each supplier tested on its own.
    None,
}

#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Adjusted {
    pub adjusted_p: f64,
    /// adjusted_p <= q.
    pub alarm: bool,
}

/// Adjusted p-values and alarms at level `q`, in the order of `p_values`. NaN p-values are
/// treated as 1 (no evidence).
pub fn adjust(p_values: &[f64], correction: Correction, q: f64) -> Vec<Adjusted> {
    let m = p_values.len();
    let clean: Vec<f64> = p_values.iter().map(|&p| if p.is_nan() { 1.0 } else { p.clamp(0.0, 1.0) }).collect();
    let adj: Vec<f64> = match correction {
        Correction::None => clean.clone(),
        Correction::Bonferroni => clean.iter().map(|&p| (p * m as f64).min(1.0)).collect(),
        Correction::Fdr => {
            let mut idx: Vec<usize> = (0..m).collect();
            // stable sort by p, ties by input order (the adjusted values of ties are equal anyway)
            idx.sort_by(|&a, &b| clean[a].partial_cmp(&clean[b]).unwrap_or(std::cmp::Ordering::Equal));
            let mut out = vec![1.0; m];
            let mut running = 1.0f64;
            for rank in (0..m).rev() {
                let i = idx[rank];
                let v = (clean[i] * m as f64 / (rank + 1) as f64).min(1.0);
                running = running.min(v);
                out[i] = running;
            }
            out
        }
    };
    adj.into_iter().map(|a| Adjusted { adjusted_p: a, alarm: a <= q }).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bh_hand_worked() {
        // Hand-worked from the definition (BH 1995): m = 5, sorted p = .01 .02 .03 .04 .20
        // m p / rank = .05 .05 .05 .05 .20 -> adjusted = .05 .05 .05 .05 .20.
        let a = adjust(&[0.04, 0.01, 0.20, 0.03, 0.02], Correction::Fdr, 0.05);
        let got: Vec<f64> = a.iter().map(|x| x.adjusted_p).collect();
        for (g, e) in got.iter().zip([0.05, 0.05, 0.20, 0.05, 0.05]) {
            assert!((g - e).abs() < 1e-12, "{got:?}");
        }
        assert_eq!(a.iter().filter(|x| x.alarm).count(), 4);
        let b = adjust(&[0.04, 0.01, 0.20, 0.03, 0.02], Correction::Bonferroni, 0.05);
        assert!((b[1].adjusted_p - 0.05).abs() < 1e-12 && b[1].alarm);
        assert!(!b[4].alarm); // 0.02 * 5 = 0.10
    }
}
