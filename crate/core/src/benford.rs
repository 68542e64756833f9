//! Expected digit proportions under Benford's law (Benford 1938; Newcomb 1881):
//! P(first k significant digits = d) = log10(1 + 1/d) for d in [10^(k-1), 10^k).

/// P(first significant digits = d) for any leading-digit block d >= 1.
/// Uses the pure-Rust `libm` so the value is bit-identical native and in wasm (the platform
/// log10 of glibc and of the wasm runtime can differ in the last bit).
pub fn p_leading(d: u32) -> f64 {
    libm::log10(1.0 + 1.0 / d as f64)
}

/// First digit 1..=9: index 0 is digit 1.
pub fn first_digit() -> Vec<f64> {
    (1..=9).map(p_leading).collect()
}

/// First-two digits 10..=99: index 0 is 10.
pub fn first_two() -> Vec<f64> {
    (10..=99).map(p_leading).collect()
}

/// First-three digits 100..=999: index 0 is 100.
pub fn first_three() -> Vec<f64> {
    (100..=999).map(p_leading).collect()
}

/// Second digit 0..=9: sum over first digits 1..9 of log10(1 + 1/(10 d1 + d2)).
pub fn second_digit() -> Vec<f64> {
    (0..=9)
        .map(|d2| (1..=9).map(|d1| p_leading(10 * d1 + d2)).sum())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn first_two_reference_values() {
        // log10(1.1) = 0.0413926851582... ("4.14 %" quoted in the trade: common practice).
        let p = first_two();
        assert!((p[0] - 0.041392685158225).abs() < 1e-12);
        // log10(100/99) = 0.0043648054...
        assert!((p[89] - 0.004364805402450).abs() < 1e-12);
        let s: f64 = p.iter().sum();
        assert!((s - 1.0).abs() < 1e-12);
    }
}
