//! `digitdrift watch FILE [--as-of YYYY-MM-DD] [--confidence 0.95] [--arl-years 100]
//! [--period month|year|day] [intake flags] [--format json|text]`: continuous monitoring for
//! scheduled runs.
//!
//! FILE may also be a digit-count table with a `period` column (detected by its header, as
//! `screen` does): the monitor then runs at period granularity (`monitor::watch_periods`).
//! `--period` on a ledger reports each supplier's evidence at the end of every period.
//!
//! Exit status: 0 when no supplier is in alarm, 3 when one or more are (as of `--as-of` when
//! given, otherwise at the end of the file), 2 on bad input (the `Err` path).

use crate::args::Args;
use crate::common::{format_flag, intake_options, read_ledger};
use digitdrift_core::intake::{days_from_civil, format_date};
use digitdrift_core::monitor::{self, PeriodKind, WatchOptions};

/// Strict ISO date `YYYY-MM-DD` (a real calendar day) to days since 1970-01-01.
pub fn parse_iso_day(s: &str) -> Option<i32> {
    let b = s.as_bytes();
    if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
        return None;
    }
    let num = |r: std::ops::Range<usize>| -> Option<u32> {
        let t = &s[r];
        if t.bytes().all(|c| c.is_ascii_digit()) { t.parse().ok() } else { None }
    };
    let (y, m, d) = (num(0..4)? as i32, num(5..7)?, num(8..10)?);
    if !(1..=12).contains(&m) || !(1..=31).contains(&d) {
        return None;
    }
    let days = days_from_civil(y, m, d);
    // Reject days that do not exist (e.g. 2023-02-30) by the round trip.
    (format_date(days) == s).then_some(days)
}

/// Does the file start with a digit-count table header?
fn is_count_table_file(file: &str) -> Result<bool, String> {
    use std::io::Read;
    let mut head = vec![0u8; 4096];
    let k = std::fs::File::open(file).and_then(|mut f| f.read(&mut head)).map_err(|e| format!("{file}: {e}"))?;
    Ok(digitdrift_core::counts::is_count_table(&head[..k]))
}

pub fn run(raw: &[String]) -> Result<u8, String> {
    let a = Args::parse(raw, &[])?;
    let intake = intake_options(&a)?;
    let json = format_flag(&a)?;
    let mut opts = WatchOptions::default();
    if let Some(c) = a.parse_num::<f64>("confidence")? {
        if !(c > 0.5 && c < 1.0) {
            return Err(format!("--confidence takes a number between 0.5 and 1 (e.g. 0.95), not {c}"));
        }
        opts.confidence = c;
    }
    if let Some(y) = a.parse_num::<f64>("arl-years")? {
        if !(y.is_finite() && y >= 1.0) {
            return Err(format!("--arl-years takes a number of years >= 1, not {y}"));
        }
        opts.arl_years = y;
    }
    if let Some(d) = a.get("as-of") {
        opts.as_of = Some(parse_iso_day(d).ok_or_else(|| format!("--as-of takes a date as YYYY-MM-DD, not '{d}'"))?);
    }
    opts.period_points = match a.get("period") {
        None => None,
        Some("month") => Some(PeriodKind::Month),
        Some("year") => Some(PeriodKind::Year),
        Some("day") => Some(PeriodKind::Day),
        Some(v) => return Err(format!("--period takes month, year or day, not '{v}'")),
    };
    a.finish()?;
    let [file] = a.positionals.as_slice() else {
        return Err("watch takes exactly one FILE".into());
    };
    let rep = if file != "-" && is_count_table_file(file)? {
        let bytes = std::fs::read(file).map_err(|e| format!("{file}: {e}"))?;
        let t = digitdrift_core::counts::read(&bytes).map_err(|e| format!("{file}: {e}"))?;
        if !t.has_period {
            return Err(format!(
                "{file}: this digit-count table has no 'period' column; monitoring needs counts per period (see the README for the monthly SQL)"
            ));
        }
        monitor::watch_periods(&t, &opts)
    } else {
        let res = read_ledger(file, intake)?;
        monitor::watch(&res.ledger, &opts)
    };
    if json {
        crate::common::print_json(&rep)?;
    } else {
        print!("{}", monitor::render_text(&rep));
    }
    let alarmed = match &rep.replay {
        Some(r) => !r.suppliers_in_alarm.is_empty(),
        None => rep.suppliers_in_alarm > 0,
    };
    Ok(if alarmed { 3 } else { 0 })
}

#[cfg(test)]
mod tests {
    use super::parse_iso_day;
    #[test]
    fn iso_days() {
        // 2024-01-01 is day 19,723 since 1970-01-01 (54 years, 13 leap days: 54*365 + 13).
        assert_eq!(parse_iso_day("2024-01-01"), Some(19_723));
        assert_eq!(parse_iso_day("1970-01-01"), Some(0));
        assert_eq!(parse_iso_day("2024-02-29"), Some(19_723 + 31 + 28));
        assert_eq!(parse_iso_day("2023-02-29"), None);
        assert_eq!(parse_iso_day("2024-1-01"), None);
        assert_eq!(parse_iso_day("01/02/2024"), None);
    }
}
