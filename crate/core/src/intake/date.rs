//! Date cells -> days since 1970-01-01.
//!
//! Shapes: ISO 8601 `2024-03-07` (also `/` or `.` between parts, year first), `07.03.2024`,
//! `07/03/2024`, `03/07/2024` (day-first or month-first, decided for the whole column;
//! dotted dates are day-first),
//! two-digit years, compact `20240307`, spreadsheet serial numbers, and an optional time part
//! after a space or `T` (ignored).
//!
//! - Calendar arithmetic: proleptic Gregorian (Howard Hinnant, "chrono-Compatible Low-Level
//!   Date Algorithms", days_from_civil / civil_from_days).
//! - Two-digit years: 00-29 -> 2000-2029, 30-99 -> 1930-1999 (the spreadsheet default pivot,
//!   common practice, no source).
//! - Spreadsheet serial dates: day 1 = 1900-01-01 with the 1900 leap-year bug (serial 60 is the
//!   non-existent 1900-02-29), so for serials after 60 the date is 1899-12-30 + serial
//!   (common practice). Only serials 20000..=80000 (1954-10-03 .. 2119-01-11) are taken as
//!   dates, so that amounts or invoice numbers are not mistaken for dates.

use super::DateOrder;
use crate::ledger::NO_DATE;

/// Days since 1970-01-01 for a proleptic Gregorian date (Howard Hinnant's days_from_civil).
#[inline]
pub fn days_from_civil(y: i32, m: u32, d: u32) -> i32 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = (y - era * 400) as u32;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146097 + doe as i32 - 719468
}

/// (year, month, day) for days since 1970-01-01.
pub fn civil_from_days(z: i32) -> (i32, u32, u32) {
    let z = z + 719468;
    let era = if z >= 0 { z } else { z - 146096 } / 146097;
    let doe = (z - era * 146097) as u32;
    let yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
    let y = yoe as i32 + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// ISO date text for days since epoch ("" for no date).
pub fn format_date(days: i32) -> String {
    if days == NO_DATE {
        return String::new();
    }
    let (y, m, d) = civil_from_days(days);
    format!("{y:04}-{m:02}-{d:02}")
}

#[inline]
fn is_leap(y: i32) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

#[inline]
fn days_in_month(y: i32, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap(y) => 29,
        2 => 28,
        _ => 0,
    }
}

#[inline]
fn valid(y: i32, m: u32, d: u32) -> Option<i32> {
    if (1..=12).contains(&m) && d >= 1 && d <= days_in_month(y, m) && (1000..=9999).contains(&y) {
        Some(days_from_civil(y, m, d))
    } else {
        None
    }
}

fn year_of(v: u32, len: usize) -> Option<i32> {
    match len {
        2 => Some(if v < 30 { 2000 + v as i32 } else { 1900 + v as i32 }),
        4 => Some(v as i32),
        _ => None,
    }
}

/// Spreadsheet serial number -> days since 1970-01-01 (see the module note).
pub fn from_serial(serial: u32) -> i32 {
    // 1899-12-30 is day -25569 relative to 1970-01-01.
    serial as i32 - 25569
}

/// A date cell read on its own.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum DateCell {
    /// Unambiguous: year first, serial, compact, or a day/month pair that only fits one order
    /// (`hint` says which order it proved, if any).
    Fixed { days: i32, hint: Option<DateOrder> },
    /// `a/b/y` with both a and b <= 12 and a != b: day-first reading and month-first reading.
    Ambiguous { dmy: i32, mdy: i32 },
}

/// Read a date cell. `order` is the column's day/month order when known. None: not a date.
#[inline]
pub fn parse_date(cell: &[u8], order: Option<DateOrder>) -> Option<DateCell> {
    // Fast path (inlined into the row loop) for the two commonest shapes, `yyyy-mm-dd` and
    // `dd.mm.yyyy`; everything else in `parse_date_general`.
    if let Ok(c) = <&[u8; 10]>::try_from(cell) {
        let dg = |i: usize| c[i].wrapping_sub(b'0') as u32;
        let all = |idx: [usize; 8]| idx.iter().fold(true, |ok, &i| ok & (dg(i) < 10));
        if c[4] == b'-' && c[7] == b'-' && all([0, 1, 2, 3, 5, 6, 8, 9]) {
            let y = (dg(0) * 1000 + dg(1) * 100 + dg(2) * 10 + dg(3)) as i32;
            return valid(y, dg(5) * 10 + dg(6), dg(8) * 10 + dg(9)).map(|days| DateCell::Fixed { days, hint: Some(DateOrder::Ymd) });
        }
        if c[2] == b'.' && c[5] == b'.' && order != Some(DateOrder::Mdy) && all([0, 1, 3, 4, 6, 7, 8, 9]) {
            let y = (dg(6) * 1000 + dg(7) * 100 + dg(8) * 10 + dg(9)) as i32;
            let (d, m) = (dg(0) * 10 + dg(1), dg(3) * 10 + dg(4));
            if let Some(days) = valid(y, m, d) {
                return Some(DateCell::Fixed { days, hint: if order.is_some() { None } else { Some(DateOrder::Dmy) } });
            }
        }
    }
    parse_date_general(cell, order)
}

#[inline(never)]
fn parse_date_general(cell: &[u8], order: Option<DateOrder>) -> Option<DateCell> {
    let s = super::amount::trim_cell(cell);
    // Drop a time part: after 'T' or a space following the date.
    let end = s.iter().position(|&b| b == b' ' || b == b'T').unwrap_or(s.len());
    let (s, rest) = (&s[..end], &s[end..]);
    if !rest.is_empty() {
        let r = super::amount::trim_cell(&rest[1..]);
        if !r.is_empty() && !r.first().is_some_and(|b| b.is_ascii_digit()) {
            return None;
        }
    }
    if s.is_empty() {
        return None;
    }
    // Split into up to three numeric parts.
    let mut parts = [(0u32, 0usize); 3];
    let mut np = 0;
    let mut sep = 0u8;
    let mut cur = 0u32;
    let mut len = 0usize;
    for &b in s {
        if b.is_ascii_digit() {
            if len >= 8 {
                return None;
            }
            cur = cur * 10 + (b - b'0') as u32;
            len += 1;
        } else if matches!(b, b'-' | b'/' | b'.') {
            if len == 0 || np == 2 || (sep != 0 && sep != b) {
                return None;
            }
            sep = b;
            parts[np] = (cur, len);
            np += 1;
            cur = 0;
            len = 0;
        } else {
            return None;
        }
    }
    if len == 0 {
        // "07.03.2024." style trailing dot is not accepted; neither is "12."
        return None;
    }
    parts[np] = (cur, len);
    np += 1;
    match np {
        1 => {
            let (v, l) = parts[0];
            if l == 8 {
                let (y, m, d) = ((v / 10000) as i32, (v / 100) % 100, v % 100);
                if (1900..=2199).contains(&y) {
                    return valid(y, m, d).map(|days| DateCell::Fixed { days, hint: Some(DateOrder::Ymd) });
                }
                return None;
            }
            if (20000..=80000).contains(&v) && l == 5 {
                return Some(DateCell::Fixed { days: from_serial(v), hint: None });
            }
            None
        }
        3 => {
            let (a, la) = parts[0];
            let (b, lb) = parts[1];
            let (c, lc) = parts[2];
            if la == 4 {
                // Year first (ISO 8601 order).
                if lb > 2 || lc > 2 {
                    return None;
                }
                return valid(a as i32, b, c).map(|days| DateCell::Fixed { days, hint: Some(DateOrder::Ymd) });
            }
            if la > 2 || lb > 2 {
                return None;
            }
            let y = year_of(c, lc)?;
            let dmy = valid(y, b, a);
            let mdy = valid(y, a, b);
            match order {
                Some(DateOrder::Dmy) => dmy.map(|days| DateCell::Fixed { days, hint: None }),
                Some(DateOrder::Mdy) => mdy.map(|days| DateCell::Fixed { days, hint: None }),
                // Dotted dates are day-first wherever they are written (de, nl, nordic, pl,
                // ru...; common practice, no source).
                _ if sep == b'.' && dmy.is_some() => dmy.map(|days| DateCell::Fixed { days, hint: Some(DateOrder::Dmy) }),
                _ => match (dmy, mdy) {
                    (Some(x), Some(y2)) if x == y2 => Some(DateCell::Fixed { days: x, hint: None }),
                    (Some(x), Some(y2)) => Some(DateCell::Ambiguous { dmy: x, mdy: y2 }),
                    (Some(x), None) => Some(DateCell::Fixed { days: x, hint: Some(DateOrder::Dmy) }),
                    (None, Some(y2)) => Some(DateCell::Fixed { days: y2, hint: Some(DateOrder::Mdy) }),
                    (None, None) => None,
                },
            }
        }
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn iso(s: &str, o: Option<DateOrder>) -> Option<String> {
        match parse_date(s.as_bytes(), o)? {
            DateCell::Fixed { days, .. } => Some(format_date(days)),
            DateCell::Ambiguous { dmy, mdy } => Some(format!("{}|{}", format_date(dmy), format_date(mdy))),
        }
    }

    #[test]
    fn shapes() {
        assert_eq!(iso("2024-03-07", None).as_deref(), Some("2024-03-07"));
        assert_eq!(iso("2024-03-07T10:22:01", None).as_deref(), Some("2024-03-07"));
        assert_eq!(iso("2024-03-07 10:22", None).as_deref(), Some("2024-03-07"));
        assert_eq!(iso("07/03/2024", None).as_deref(), Some("2024-03-07|2024-07-03"));
        assert_eq!(iso("07.03.2024", None).as_deref(), Some("2024-03-07"));
        assert_eq!(iso("07.03.2024", Some(DateOrder::Dmy)).as_deref(), Some("2024-03-07"));
        assert_eq!(iso("03/07/2024", Some(DateOrder::Mdy)).as_deref(), Some("2024-03-07"));
        assert_eq!(iso("31/03/2024", None).as_deref(), Some("2024-03-31"));
        assert_eq!(iso("03/31/24", None).as_deref(), Some("2024-03-31"));
        assert_eq!(iso("03/31/95", None).as_deref(), Some("1995-03-31"));
        assert_eq!(iso("20240307", None).as_deref(), Some("2024-03-07"));
        assert_eq!(iso("2023-02-29", None), None);
        assert_eq!(iso("2024-02-29", None).as_deref(), Some("2024-02-29"));
        assert_eq!(iso("1234.56", None), None);
        assert_eq!(iso("Acme", None), None);
        assert_eq!(iso("05/05/2024", None).as_deref(), Some("2024-05-05"));
    }

    #[test]
    fn against_python_datetime() {
        // Reference values from Python's datetime (general-purpose library), computed as
        // date(1899,12,30) + timedelta(n) and (date(y,m,d) - date(1970,1,1)).days.
        for (serial, iso_text) in [(45292, "2024-01-01"), (45358, "2024-03-07"), (45658, "2025-01-01"), (20000, "1954-10-03"), (80000, "2119-01-11")] {
            assert_eq!(format_date(from_serial(serial)), iso_text, "{serial}");
            assert_eq!(iso(&serial.to_string(), None).as_deref(), Some(iso_text));
        }
        assert_eq!(days_from_civil(2024, 3, 7), 19789);
        assert_eq!(days_from_civil(1999, 12, 31), 10956);
        assert_eq!(days_from_civil(2000, 2, 29), 11016);
    }
}
