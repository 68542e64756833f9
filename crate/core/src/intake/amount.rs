//! Amount cells -> exact [`Amount`]s. Byte-level, no allocation, never f64.
//!
//! Accepted shapes (each rule's origin noted; where there is no published rule it is
//! "common practice, no source"):
//! - decimal point with comma grouping `1,234.56`, decimal comma with point grouping `1.234,56`
//!   (the two conventions of CLDR number formats, e.g. en vs de locales);
//! - grouping by space, no-break space U+00A0, narrow no-break space U+202F (CLDR fr / nb / sv
//!   locales), thin space U+2009, apostrophe `'` or U+2019 (CLDR de-CH);
//!   every group after the first must have exactly three digits (Western grouping; Indian
//!   lakh grouping is not accepted);
//! - currency symbols (`$ € £ ¥ ₹ ₩ ₽ ₺ ₪ ₫ ₱ ₦ ¤`, `kr`, `kr.`, `Fr.`, `zł`, `R$`, `Kč`, `Ft`, `lei`)
//!   or a three-letter upper-case ISO 4217 code before or after the number;
//! - negatives as `-x`, `−x` (U+2212), `(x)` (accounting brackets), `x-` (trailing minus of
//!   mainframe and some ERP exports), `x CR` / `x DR` (credit negative, debit positive:
//!   common practice of balance listings, no source; sign conventions differ by ledger side);
//! - at most four decimals are kept exactly (more only when the extra digits are zeros).

use super::DecimalConvention;
use crate::amount::Amount;

/// What a cell says about the decimal convention on its own.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Hint {
    /// No `.` or `,` in the number: reads the same under both conventions.
    Neutral,
    /// Only a decimal point reading is possible.
    Point,
    /// Only a decimal comma reading is possible.
    Comma,
    /// A single `.` or `,` followed by exactly three digits (`1,234`): thousands separator or
    /// decimal separator. The value returned is the thousands reading; the decimal reading is
    /// exactly 1/1000 of it.
    Ambiguous,
}

/// Maximum separators recorded in one number (`1.234.567.890.123,45` has 5).
const MAX_SEPS: usize = 8;

#[inline]
fn is_ws(b: u8) -> bool {
    b == b' ' || b == b'\t'
}

/// Trim ASCII white space and the UTF-8 no-break / narrow no-break / thin spaces at both ends.
#[inline(always)]
pub fn trim_cell(s: &[u8]) -> &[u8] {
    // Fast path: printable ASCII at both ends (every byte trimmed is white space, CR, LF or
    // part of a multi-byte space, none of them in 0x21..=0x7E), or an empty cell.
    match s {
        [] => s,
        [0x21..=0x7E, ..] if matches!(s[s.len() - 1], 0x21..=0x7E) => s,
        _ => trim_cell_slow(s),
    }
}

#[inline(never)]
fn trim_cell_slow(mut s: &[u8]) -> &[u8] {
    loop {
        match s {
            [b, rest @ ..] if is_ws(*b) || *b == b'\r' || *b == b'\n' => s = rest,
            [0xC2, 0xA0, rest @ ..] => s = rest,
            [0xE2, 0x80, 0xAF | 0x89, rest @ ..] => s = rest,
            _ => break,
        }
    }
    loop {
        match s {
            [rest @ .., b] if is_ws(*b) || *b == b'\r' || *b == b'\n' => s = rest,
            [rest @ .., 0xC2, 0xA0] => s = rest,
            [rest @ .., 0xE2, 0x80, 0xAF | 0x89] => s = rest,
            _ => break,
        }
    }
    s
}

/// Length of a currency marker at the start of `s` (0 if none).
fn currency_prefix(s: &[u8]) -> usize {
    const SYMS: &[&[u8]] = &[
        "R$".as_bytes(), "US$".as_bytes(), "A$".as_bytes(), "C$".as_bytes(), "$".as_bytes(),
        "€".as_bytes(), "£".as_bytes(), "¥".as_bytes(), "₹".as_bytes(), "₩".as_bytes(),
        "₽".as_bytes(), "₺".as_bytes(), "₪".as_bytes(), "₫".as_bytes(), "₱".as_bytes(),
        "₦".as_bytes(), "¤".as_bytes(), "kr.".as_bytes(), "kr".as_bytes(), "Kr".as_bytes(),
        "Fr.".as_bytes(), "fr.".as_bytes(), "zł".as_bytes(), "Kč".as_bytes(), "Ft".as_bytes(),
        "lei".as_bytes(),
    ];
    for sym in SYMS {
        if s.starts_with(sym) {
            return sym.len();
        }
    }
    // ISO 4217 alphabetic code: three upper-case letters.
    if s.len() >= 3 && s[..3].iter().all(|b| b.is_ascii_uppercase()) && !s[..3].eq_ignore_ascii_case(b"CR") {
        if s.len() == 3 || !s[3].is_ascii_alphabetic() {
            return 3;
        }
    }
    0
}

/// Length of a currency marker at the end of `s` (0 if none).
fn currency_suffix(s: &[u8]) -> usize {
    const SYMS: &[&[u8]] = &[
        "€".as_bytes(), "$".as_bytes(), "£".as_bytes(), "¥".as_bytes(), "₹".as_bytes(),
        "₽".as_bytes(), "₺".as_bytes(), "₪".as_bytes(), "₫".as_bytes(), "¤".as_bytes(),
        "kr.".as_bytes(), "kr".as_bytes(), ",-".as_bytes(), "zł".as_bytes(), "Kč".as_bytes(),
        "Ft".as_bytes(), "lei".as_bytes(), "Fr.".as_bytes(),
    ];
    for sym in SYMS {
        if s.ends_with(sym) && *sym != b",-" {
            return sym.len();
        }
    }
    let n = s.len();
    if n >= 3 && s[n - 3..].iter().all(|b| b.is_ascii_uppercase()) {
        if n == 3 || !s[n - 4].is_ascii_alphabetic() {
            return 3;
        }
    }
    0
}

fn strip_ws_start(s: &[u8]) -> &[u8] {
    trim_cell(s)
}

/// Parse one amount cell. `conv`: the column's decimal convention when known; `None` lets
/// the cell decide (see [`Hint`]). Returns the amount and what the cell said about the
/// convention, or `None` when the cell is not a readable amount. An empty cell is `None` too
/// (callers check for blank first).
pub fn parse_amount(cell: &[u8], conv: Option<DecimalConvention>) -> Option<(Amount, Hint)> {
    let mut s = trim_cell(cell);
    if s.is_empty() {
        return None;
    }
    let mut neg = false;
    // Fast path: a plain number (digit first and last) has no sign or currency marker.
    if !(s[0].is_ascii_digit() && s[s.len() - 1].is_ascii_digit()) {
        strip_markers(&mut s, &mut neg);
    }
    parse_core(s, neg, conv)
}

/// Strip brackets, CR/DR, currency markers and signs, setting `neg`.
fn strip_markers(s: &mut &[u8], neg: &mut bool) {
    let mut t: &[u8] = s;
    let mut n = *neg;
    // Brackets, CR/DR, currency and signs may come in any order: "-€ 12", "€ (12)",
    // "12 CR €"...
    for _ in 0..3 {
        if t.len() >= 2 && t[0] == b'(' && t[t.len() - 1] == b')' {
            n = !n;
            t = trim_cell(&t[1..t.len() - 1]);
        }
        if t.len() >= 2 {
            let tail = &t[t.len() - 2..];
            if tail.eq_ignore_ascii_case(b"CR") {
                n = !n;
                t = trim_cell(&t[..t.len() - 2]);
            } else if tail.eq_ignore_ascii_case(b"DR") {
                t = trim_cell(&t[..t.len() - 2]);
            }
        }
        let k = currency_prefix(t);
        if k > 0 {
            t = strip_ws_start(&t[k..]);
        }
        let k = currency_suffix(t);
        if k > 0 {
            t = trim_cell(&t[..t.len() - k]);
        }
        if let Some(r) = t.strip_prefix(b"-").or_else(|| t.strip_prefix("−".as_bytes())) {
            n = !n;
            t = strip_ws_start(r);
        } else if let Some(r) = t.strip_prefix(b"+") {
            t = strip_ws_start(r);
        } else if let Some(r) = t.strip_suffix(b"-").or_else(|| t.strip_suffix("−".as_bytes())) {
            n = !n;
            t = trim_cell(r);
        }
        if t.is_empty() || (t[0].is_ascii_digit() && t[t.len() - 1].is_ascii_digit()) {
            break;
        }
    }
    *s = t;
    *neg = n;
}

fn parse_core(s: &[u8], neg: bool, conv: Option<DecimalConvention>) -> Option<(Amount, Hint)> {
    if s.is_empty() {
        return None;
    }
    // Scan digits and separators. seps[k] = (kind, digits before it since previous sep).
    // kind: b'.' b',' or b' ' (any space-like or apostrophe grouping).
    let mut value: u64 = 0;
    let mut ndigits = 0u32;
    let mut seps = [(0u8, 0u32); MAX_SEPS];
    let mut nseps = 0usize;
    let mut run = 0u32; // digits since the last separator
    let mut i = 0;
    let n = s.len();
    while i < n {
        let b = s[i];
        if b.is_ascii_digit() {
            if ndigits > 0 || b != b'0' {
                ndigits += 1;
            }
            if ndigits > 18 {
                return None;
            }
            value = value * 10 + (b - b'0') as u64;
            run += 1;
            i += 1;
            continue;
        }
        let (kind, len) = match b {
            b'.' | b',' => (b, 1),
            b' ' | b'\'' => (b' ', 1),
            0xC2 if i + 1 < n && s[i + 1] == 0xA0 => (b' ', 2),
            0xE2 if i + 2 < n && s[i + 1] == 0x80 && matches!(s[i + 2], 0xAF | 0x89 | 0x99) => (b' ', 3),
            _ => return None,
        };
        if nseps == MAX_SEPS || (run == 0 && !(kind != b' ' && nseps == 0 && i == 0)) {
            // Two separators in a row, or a grouping mark with no digit before it.
            // (".5" / ",5" with no integer part is allowed.)
            return None;
        }
        seps[nseps] = (kind, run);
        nseps += 1;
        run = 0;
        i += len;
    }
    let trailing = run; // digits after the last separator
    if nseps == 0 {
        if trailing == 0 {
            return None;
        }
        let a = Amount::from_scaled(value as i64, 0)?;
        return Some((if neg { Amount(-a.0) } else { a }, Hint::Neutral));
    }
    let seps = &seps[..nseps];
    let dots = seps.iter().filter(|s| s.0 == b'.').count();
    let commas = seps.iter().filter(|s| s.0 == b',').count();
    let spaces = nseps - dots - commas;
    let last = seps[nseps - 1].0;
    let hint = if dots > 0 && commas > 0 {
        if last == b'.' { Hint::Point } else { Hint::Comma }
    } else if dots + commas == 0 {
        Hint::Neutral
    } else if dots + commas > 1 {
        // The repeated mark groups thousands; the other one would be the decimal.
        if dots > 1 { Hint::Comma } else { Hint::Point }
    } else {
        // One mark. Thousands reading needs 1-3 digits before (not a lone 0), exactly 3
        // after, and no other grouping in the number.
        let before = if nseps >= 2 { seps[nseps - 2].1 } else { seps[0].1 };
        let mark_is_last = last != b' ';
        let lone_zero = value / 1000 == 0 && nseps == 1;
        if mark_is_last && trailing == 3 && spaces == 0 && (1..=3).contains(&before) && !lone_zero {
            Hint::Ambiguous
        } else if dots == 1 {
            Hint::Point
        } else {
            Hint::Comma
        }
    };
    let dec = match (conv, hint) {
        (Some(DecimalConvention::Point), _) => b'.',
        (Some(DecimalConvention::Comma), _) => b',',
        (None, Hint::Point) => b'.',
        (None, Hint::Comma) => b',',
        // Thousands reading: the mark present is a grouping mark.
        (None, Hint::Ambiguous) => {
            if dots == 1 { b',' } else { b'.' }
        }
        (None, Hint::Neutral) => b'.',
    };
    // Validate against the chosen decimal mark: at most one, last; every group after a
    // grouping mark has exactly three digits; the first group 1-3 digits.
    let mut frac_digits = 0u32;
    let mut seen_dec = false;
    for (k, &(kind, before)) in seps.iter().enumerate() {
        let after = if k + 1 < nseps { seps[k + 1].1 } else { trailing };
        if kind == dec {
            if seen_dec || k + 1 != nseps {
                return None;
            }
            seen_dec = true;
            frac_digits = after;
            if before == 0 && after == 0 {
                return None;
            }
        } else {
            // grouping mark
            if k == 0 && !(1..=3).contains(&before) {
                return None;
            }
            if after != 3 {
                return None;
            }
        }
    }
    let _ = ndigits;
    let a = Amount::from_scaled(i64::try_from(value).ok()?, frac_digits)?;
    let a = if neg { Amount(-a.0) } else { a };
    Some((a, hint))
}

/// [`parse_amount`] for a column whose decimal convention is decided, returning the amount
/// only (the hint no longer matters). Plain cells (digits, grouping marks, one decimal mark,
/// at most 18 bytes) are read here in one pass; anything else goes to the general parser,
/// so the reading is always exactly that of `parse_amount(cell, Some(conv))`.
#[inline]
pub fn parse_amount_known(cell: &[u8], conv: DecimalConvention) -> Option<Amount> {
    let s = trim_cell(cell);
    let n = s.len();
    if (1..=18).contains(&n) && s[0].is_ascii_digit() && s[n - 1].is_ascii_digit() {
        let (dec, grp) = match conv {
            DecimalConvention::Point => (b'.', b','),
            DecimalConvention::Comma => (b',', b'.'),
        };
        // At most 18 digits: the value fits in an i64.
        let mut value: u64 = 0;
        let mut run = 0u32;
        let mut groups = 0u32;
        let mut i = 0;
        let mut plain = true;
        let mut frac = 0u32;
        while i < n {
            let b = s[i];
            let d = b.wrapping_sub(b'0');
            if d < 10 {
                value = value * 10 + d as u64;
                run += 1;
            } else if b == grp {
                if (groups == 0 && !(1..=3).contains(&run)) || (groups > 0 && run != 3) {
                    plain = false;
                    break;
                }
                groups += 1;
                run = 0;
            } else if b == dec {
                if groups > 0 && run != 3 {
                    plain = false;
                    break;
                }
                for &b in &s[i + 1..] {
                    let d = b.wrapping_sub(b'0');
                    if d >= 10 {
                        plain = false;
                        break;
                    }
                    value = value * 10 + d as u64;
                }
                frac = (n - i - 1) as u32;
                run = 3; // the grouping is checked already
                break;
            } else {
                plain = false;
                break;
            }
            i += 1;
        }
        if plain && (groups == 0 || run == 3) {
            return Amount::from_scaled(value as i64, frac);
        }
    }
    parse_amount(cell, Some(conv)).map(|(a, _)| a)
}

/// General parser on text with the convention decided by the text itself; an ambiguous
/// `1,234` is read with the separator as thousands grouping.
pub fn parse_amount_str(s: &str) -> Option<Amount> {
    parse_amount(s.as_bytes(), None).map(|(a, _)| a)
}

#[cfg(test)]
mod tests {

    use super::trim_cell;

    /// trim_cell (with its fast path) against std's `str::trim_matches` on the same set of
    /// spaces, over every string of up to 4 pieces from an alphabet of spaces and text.
    #[test]
    fn trim_cell_agrees_with_std_trim_matches() {
        let alphabet = [" ", "\t", "\r", "\n", "\u{a0}", "\u{202f}", "\u{2009}", "a", "1", "~", "é", "\u{2003}", ""];
        let spaces = |c: char| matches!(c, ' ' | '\t' | '\r' | '\n' | '\u{a0}' | '\u{202f}' | '\u{2009}');
        let n = alphabet.len();
        for code in 0..n.pow(4) {
            let mut t = String::new();
            let mut c = code;
            for _ in 0..4 {
                t.push_str(alphabet[c % n]);
                c /= n;
            }
            assert_eq!(trim_cell(t.as_bytes()), t.trim_matches(spaces).as_bytes(), "{t:?}");
        }
    }
    use super::*;
    use DecimalConvention::*;

    fn p(s: &str, c: Option<DecimalConvention>) -> Option<String> {
        parse_amount(s.as_bytes(), c).map(|(a, _)| a.to_string())
    }

    /// The fast path reads every cell exactly as the general parser does: all strings of up
    /// to 7 bytes over digits, both marks and a space, and random longer ones.
    #[test]
    fn known_convention_fast_path_agrees() {
        let alpha = b"0159.,- ";
        let mut cell = Vec::new();
        for len in 1..=7u32 {
            for code in 0..(alpha.len() as u64).pow(len) {
                cell.clear();
                let mut c = code;
                for _ in 0..len {
                    cell.push(alpha[(c % alpha.len() as u64) as usize]);
                    c /= alpha.len() as u64;
                }
                for conv in [Point, Comma] {
                    assert_eq!(parse_amount_known(&cell, conv), parse_amount(&cell, Some(conv)).map(|x| x.0), "{:?} {conv:?}", String::from_utf8_lossy(&cell));
                }
            }
        }
        let mut rng = crate::rng::DetRng::seed_from_u64(7);
        for _ in 0..200_000 {
            let len = 8 + (rng.next_u64() % 16) as usize;
            cell.clear();
            for _ in 0..len {
                let r = rng.next_u64() % 16;
                cell.push(if r < 10 { b'0' + r as u8 } else { b".,.,9 "[(r - 10) as usize] });
            }
            for conv in [Point, Comma] {
                assert_eq!(parse_amount_known(&cell, conv), parse_amount(&cell, Some(conv)).map(|x| x.0), "{:?} {conv:?}", String::from_utf8_lossy(&cell));
            }
        }
    }

    #[test]
    fn shapes() {
        assert_eq!(p("1,234.56", None).as_deref(), Some("1234.56"));
        assert_eq!(p("1.234,56", None).as_deref(), Some("1234.56"));
        assert_eq!(p("1 234,56", None).as_deref(), Some("1234.56"));
        assert_eq!(p("1\u{a0}234,56", None).as_deref(), Some("1234.56"));
        assert_eq!(p("1\u{202f}234,56", None).as_deref(), Some("1234.56"));
        assert_eq!(p("1'234.56", None).as_deref(), Some("1234.56"));
        assert_eq!(p("CHF 1'234.56", None).as_deref(), Some("1234.56"));
        assert_eq!(p("1.234,56 €", None).as_deref(), Some("1234.56"));
        assert_eq!(p("-€1,234.56", None).as_deref(), Some("-1234.56"));
        assert_eq!(p("(1,234.56)", None).as_deref(), Some("-1234.56"));
        assert_eq!(p("1234.56-", None).as_deref(), Some("-1234.56"));
        assert_eq!(p("1,234.56 CR", None).as_deref(), Some("-1234.56"));
        assert_eq!(p("1,234.56 DR", None).as_deref(), Some("1234.56"));
        assert_eq!(p("USD 99", None).as_deref(), Some("99.00"));
        assert_eq!(p("EUR (1,234.56)", None).as_deref(), Some("-1234.56"));
        assert_eq!(p("1.234,56 CR €", None).as_deref(), Some("-1234.56"));
        assert_eq!(p("12,5", None).as_deref(), Some("12.50"));
        assert_eq!(p("0,125", None).as_deref(), Some("0.125"));
        assert_eq!(p("1.234.567", None).as_deref(), Some("1234567.00"));
        assert_eq!(p("1,234", Some(Comma)).as_deref(), Some("1.234"));
        assert_eq!(p("1,234", Some(Point)).as_deref(), Some("1234.00"));
        assert_eq!(parse_amount(b"1,234", None).unwrap().1, Hint::Ambiguous);
        assert_eq!(parse_amount(b"1234,567", None).unwrap().1, Hint::Comma);
        assert_eq!(p("1,5", Some(Point)), None);
        assert_eq!(p("1.234,56", Some(Point)), None);
        assert_eq!(p("12,34,567.00", None), None);
        assert_eq!(p("twelve", None), None);
        assert_eq!(p("1.2E+05", None), None);
        assert_eq!(p("", None), None);
        assert_eq!(p("-", None), None);
        assert_eq!(p("12.34567", None), None);
        assert_eq!(p("12.34560", None).as_deref(), Some("12.3456"));
    }
}
