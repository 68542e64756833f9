//! Exact money amounts. An amount is an `i64` count of ten-thousandths of a currency unit, so
//! every amount with up to four decimals as written is held exactly and sums are exact to the cent.
//! Digits are read from this integer (the decimal text's significant digits), never via floating point.

use serde::{Serialize, Serializer};
use std::fmt;

/// Number of fractional decimal digits kept exactly.
pub const SCALE_DIGITS: u32 = 4;
/// 10^SCALE_DIGITS: amount units per whole currency unit.
pub const SCALE: i64 = 10_000;

#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
pub struct Amount(pub i64);

/// 10^0 ..= 10^19 (every power of ten a u64 holds).
pub(crate) const POW10: [u64; 20] = {
    let mut t = [1u64; 20];
    let mut i = 1;
    while i < 20 {
        t[i] = t[i - 1] * 10;
        i += 1;
    }
    t
};

impl Amount {
    pub const ZERO: Amount = Amount(0);

    /// Whole currency units (e.g. `Amount::from_units(10)` is 10.00).
    pub const fn from_units(u: i64) -> Amount {
        Amount(u * SCALE)
    }

    /// From minor units with `decimals` fractional digits, e.g. `(123456, 2)` is 1234.56.
    /// Returns None on overflow or when more than four decimals would be lost.
    pub fn from_scaled(value: i64, decimals: u32) -> Option<Amount> {
        if decimals > SCALE_DIGITS {
            let div = 10i64.checked_pow(decimals - SCALE_DIGITS)?;
            if value % div != 0 {
                return None;
            }
            return Some(Amount(value / div));
        }
        let mul = 10i64.pow(SCALE_DIGITS - decimals);
        value.checked_mul(mul).map(Amount)
    }

    pub fn abs(self) -> Amount {
        Amount(self.0.saturating_abs())
    }
    pub fn is_negative(self) -> bool {
        self.0 < 0
    }
    pub fn is_zero(self) -> bool {
        self.0 == 0
    }

    /// Whole-unit part of |amount| (truncated).
    pub fn whole_units(self) -> u64 {
        self.0.unsigned_abs() / SCALE as u64
    }

    /// Fractional part of |amount| in hundredths (cents), truncated.
    pub fn cents(self) -> u64 {
        (self.0.unsigned_abs() % SCALE as u64) / 100
    }

    /// The first `k` significant digits of |amount| as an integer, e.g. 1234.56 with k=2 -> 12,
    /// 0.0456 with k=2 -> 45, 5 with k=2 -> 50 (a single significant digit is padded with zero,
    /// as the decimal text "5.0" would be). None for zero.
    pub fn leading_digits(self, k: u32) -> Option<u32> {
        let v = self.0.unsigned_abs();
        if v == 0 || k == 0 || k > 18 {
            return None;
        }
        let d = v.ilog10() + 1; // number of decimal digits of the integer
        Some(if d >= k { v / POW10[(d - k) as usize] } else { v * POW10[(k - d) as usize] } as u32)
    }

    /// The second significant digit (0-9).
    pub fn second_digit(self) -> Option<u32> {
        self.leading_digits(2).map(|d| d % 10)
    }

    /// Amount as f64 currency units: ONLY for display, charts and sums in statistics,
    /// never for digit extraction.
    pub fn to_f64(self) -> f64 {
        self.0 as f64 / SCALE as f64
    }

    pub fn checked_add(self, o: Amount) -> Option<Amount> {
        self.0.checked_add(o.0).map(Amount)
    }
    pub fn saturating_add(self, o: Amount) -> Amount {
        Amount(self.0.saturating_add(o.0))
    }
}

impl fmt::Display for Amount {
    /// Plain decimal text with at least two decimals: `-1234.5` -> `-1234.50`, `0.1234` -> `0.1234`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let neg = self.0 < 0;
        let v = self.0.unsigned_abs();
        let whole = v / SCALE as u64;
        let frac = v % SCALE as u64;
        let mut frac_s = format!("{:04}", frac);
        while frac_s.len() > 2 && frac_s.ends_with('0') {
            frac_s.pop();
        }
        write!(f, "{}{}.{}", if neg { "-" } else { "" }, whole, frac_s)
    }
}

impl Serialize for Amount {
    /// Serialised as a JSON number in currency units (exact decimal text, e.g. 1234.56).
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        // serde_json's arbitrary_precision is off; the f64 of an exact decimal with <= 15
        // significant digits round-trips to the same shortest text.
        s.serialize_f64(self.to_f64())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn leading_digits_from_integer_text() {
        let a = Amount::from_scaled(123456, 2).unwrap(); // 1234.56
        assert_eq!(a.leading_digits(1), Some(1));
        assert_eq!(a.leading_digits(2), Some(12));
        assert_eq!(a.leading_digits(3), Some(123));
        assert_eq!(a.second_digit(), Some(2));
        assert_eq!(Amount::from_scaled(456, 4).unwrap().leading_digits(2), Some(45));
        assert_eq!(Amount::from_units(5).leading_digits(2), Some(50));
        assert_eq!(Amount::from_units(-99).leading_digits(2), Some(99));
        assert_eq!(Amount::ZERO.leading_digits(2), None);
        // A value whose f64 product would misround: 0.29 * 100 = 28.999999999999996 in f64.
        assert_eq!(Amount::from_scaled(29, 2).unwrap().leading_digits(2), Some(29));
        assert_eq!(Amount::from_scaled(1_000_000_000_000_001, 2).unwrap().leading_digits(2), Some(10));
    }

    #[test]
    fn display_is_exact() {
        assert_eq!(Amount::from_scaled(-123450, 2).unwrap().to_string(), "-1234.50");
        assert_eq!(Amount::from_scaled(1234, 4).unwrap().to_string(), "0.1234");
        assert_eq!(Amount::from_units(7).to_string(), "7.00");
        assert_eq!(Amount::from_scaled(12345, 5), None);
        assert_eq!(Amount::from_scaled(12340, 5), Some(Amount(1234)));
    }
}
