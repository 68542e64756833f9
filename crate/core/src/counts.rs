//! Digit-count tables: the screen of a ledger too large for one machine, from counts an SQL engine
//! produced (`supplier, first_two, invoices, amount`, optionally `period`). The first-digit,
//! second-digit, first-two digits and summation tests and the calibration need only these counts
//! (first digit = first_two / 10, second digit = first_two mod 10), so their results equal those
//! from the raw file.
//!
//! The SQL that makes the table (DuckDB; portable to other engines) is in the README.
//!
//! With a `period` column (`YYYY-MM` for a month, `YYYY` for a year, `YYYY-MM-DD` for a day)
//! the counts are also kept per period, and `monitor::watch_periods` runs the monitor at period
//! granularity (`digitdrift watch` on such a table).

use crate::amount::Amount;
use crate::battery::{Battery, DigitTest, Summation};
use crate::benford;
use crate::intake::{parse_amount_simple, ColumnMapping, DecimalConvention, IntakeInfo};
use crate::ledger::{supplier_key, Accounting};
use crate::report::{self, Parameters, ScreenOptions, ScreenReport, SupplierResult};
use std::collections::HashMap;

/// The header a count table must have (case-insensitive, any order; `period` optional).
/// Optional: `amount_min`, `amount_max` (per row; the supplier's range for the deviation model).
pub const COLUMNS: [&str; 4] = ["supplier", "first_two", "invoices", "amount"];

#[derive(Clone, Debug)]
pub struct SupplierCounts {
    pub name: String,
    pub counts: [u64; 90],
    /// Amount total per first-two bin.
    pub sums: [Amount; 90],
    /// Smallest and largest amount, when the table has `amount_min` / `amount_max` columns.
    pub range: Option<(Amount, Amount)>,
    /// Counts per period, in period order (empty without a `period` column).
    pub periods: Vec<PeriodCounts>,
}

/// One supplier's counts in one period.
#[derive(Clone, Debug)]
pub struct PeriodCounts {
    /// The period as written in the table (`2024-03`, `2024` or `2024-03-31`).
    pub label: String,
    /// First and last day of the period (days since 1970-01-01).
    pub first_day: i32,
    pub last_day: i32,
    pub counts: [u64; 90],
    pub sums: [Amount; 90],
}

/// A period label to its first and last day: `YYYY-MM` (a month), `YYYY` (a year) or
/// `YYYY-MM-DD` (a day). `None` for anything else.
pub fn parse_period(s: &str) -> Option<(i32, i32)> {
    use crate::intake::{days_from_civil, format_date};
    let s = s.trim();
    let num = |t: &str| -> Option<u32> { (!t.is_empty() && t.bytes().all(|c| c.is_ascii_digit())).then(|| t.parse().ok()).flatten() };
    let parts: Vec<&str> = s.split('-').collect();
    match parts.as_slice() {
        [y] if y.len() == 4 => {
            let y = num(y)? as i32;
            Some((days_from_civil(y, 1, 1), days_from_civil(y, 12, 31)))
        }
        [y, m] if y.len() == 4 && m.len() == 2 => {
            let (y, m) = (num(y)? as i32, num(m)?);
            if !(1..=12).contains(&m) {
                return None;
            }
            let next = if m == 12 { days_from_civil(y + 1, 1, 1) } else { days_from_civil(y, m + 1, 1) };
            Some((days_from_civil(y, m, 1), next - 1))
        }
        [y, m, d] if y.len() == 4 && m.len() == 2 && d.len() == 2 => {
            let day = days_from_civil(num(y)? as i32, num(m)?, num(d)?);
            (format_date(day) == s).then_some((day, day))
        }
        _ => None,
    }
}

#[derive(Clone, Debug, Default)]
pub struct CountTable {
    pub suppliers: Vec<SupplierCounts>,
    /// Table rows read, and rows that could not be used (with reasons, as line numbers).
    pub rows_read: u64,
    pub bad_rows: Vec<(u64, String)>,
    pub has_period: bool,
}

/// Does this header line name a count table?
pub fn is_count_table(head: &[u8]) -> bool {
    let text = String::from_utf8_lossy(&head[..head.len().min(4096)]);
    let first = text.trim_start_matches('\u{feff}').lines().next().unwrap_or("");
    let cols: Vec<String> = first.split([',', ';', '\t']).map(|c| supplier_key(c.trim_matches('"'))).collect();
    COLUMNS.iter().all(|c| cols.iter().any(|k| k == c))
}

/// Read a count table (UTF-8 CSV with a header).
pub fn read(bytes: &[u8]) -> Result<CountTable, String> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let delim = {
        let first = bytes.split(|&b| b == b'\n').next().unwrap_or(b"");
        [b',', b';', b'\t'].into_iter().max_by_key(|d| first.iter().filter(|b| *b == d).count()).unwrap_or(b',')
    };
    let mut rdr = csv::ReaderBuilder::new().delimiter(delim).flexible(true).from_reader(bytes);
    let headers: Vec<String> = rdr.headers().map_err(|e| e.to_string())?.iter().map(supplier_key).collect();
    let col = |n: &str| headers.iter().position(|h| h == n).ok_or_else(|| format!("count table has no '{n}' column"));
    let (cs, cd, cn, ca) = (col("supplier")?, col("first_two")?, col("invoices")?, col("amount")?);
    let (cmin, cmax) = (col("amount_min").ok(), col("amount_max").ok());
    let cper = col("period").ok();
    // (supplier, period label) -> index into that supplier's periods
    let mut pindex: HashMap<(usize, String), usize> = HashMap::new();
    let mut t = CountTable { has_period: headers.iter().any(|h| h == "period"), ..Default::default() };
    let mut index: HashMap<String, usize> = HashMap::new();
    for rec in rdr.records() {
        let rec = rec.map_err(|e| e.to_string())?;
        let line = rec.position().map_or(0, |p| p.line());
        t.rows_read += 1;
        let get = |i: usize| rec.get(i).unwrap_or("").trim();
        let name = get(cs);
        let d: Option<u32> = get(cd).parse().ok().filter(|d| (10..=99).contains(d));
        let n: Option<u64> = get(cn).parse().ok();
        let a = parse_amount_simple(get(ca));
        let (Some(d), Some(n), Some(a)) = (d, n, a) else {
            t.bad_rows.push((line, "first_two must be 10..99, invoices a whole number, amount a number".into()));
            continue;
        };
        if name.is_empty() {
            t.bad_rows.push((line, "supplier empty".into()));
            continue;
        }
        let period = match cper {
            None => None,
            Some(c) => match parse_period(get(c)) {
                Some(fl) => Some((get(c).to_string(), fl)),
                None => {
                    t.bad_rows.push((line, "period must be YYYY-MM (a month), YYYY (a year) or YYYY-MM-DD (a day)".into()));
                    continue;
                }
            },
        };
        let key = supplier_key(name);
        let i = *index.entry(key).or_insert_with(|| {
            t.suppliers.push(SupplierCounts { name: name.to_string(), counts: [0; 90], sums: [Amount::ZERO; 90], range: None, periods: Vec::new() });
            t.suppliers.len() - 1
        });
        let s = &mut t.suppliers[i];
        s.counts[(d - 10) as usize] += n;
        s.sums[(d - 10) as usize] = s.sums[(d - 10) as usize].saturating_add(a);
        if let Some((label, (first_day, last_day))) = period {
            let np = s.periods.len();
            let j = *pindex.entry((i, label.clone())).or_insert(np);
            if j == np {
                s.periods.push(PeriodCounts { label, first_day, last_day, counts: [0; 90], sums: [Amount::ZERO; 90] });
            }
            let pc = &mut s.periods[j];
            pc.counts[(d - 10) as usize] += n;
            pc.sums[(d - 10) as usize] = pc.sums[(d - 10) as usize].saturating_add(a);
        }
        if let (Some(lo), Some(hi)) = (cmin.and_then(|c| parse_amount_simple(get(c))), cmax.and_then(|c| parse_amount_simple(get(c)))) {
            s.range = Some(match s.range {
                None => (lo, hi),
                Some((a0, b0)) => (a0.min(lo), b0.max(hi)),
            });
        }
    }
    if t.suppliers.is_empty() {
        return Err("the count table has no usable rows".into());
    }
    for s in &mut t.suppliers {
        s.periods.sort_by_key(|p| (p.last_day, p.first_day));
        if let Some(w) = s.periods.windows(2).find(|w| w[1].first_day <= w[0].last_day) {
            return Err(format!("supplier '{}': periods {} and {} overlap; use one kind of period (all months, all years or all days)", s.name, w[0].label, w[1].label));
        }
    }
    Ok(t)
}

fn population(id: u32, s: &SupplierCounts, opts: &ScreenOptions) -> SupplierResult {
    let c = s.counts;
    let mut c1 = vec![0u64; 9];
    let mut c2 = vec![0u64; 10];
    for (i, &n) in c.iter().enumerate() {
        let d = i as u32 + 10;
        c1[(d / 10 - 1) as usize] += n;
        c2[(d % 10) as usize] += n;
    }
    let t = opts.battery.tests;
    let total = s.sums.iter().fold(Amount::ZERO, |a, &b| a.saturating_add(b));
    let summation = t.summation.then(|| {
        let tot = total.to_f64();
        let sums: Vec<f64> = s.sums.iter().map(|a| a.to_f64()).collect();
        let shares: Vec<f64> = sums.iter().map(|&x| if tot > 0.0 { x / tot } else { 0.0 }).collect();
        let e = 1.0 / 90.0;
        let mad = shares.iter().map(|x| (x - e).abs()).sum::<f64>() / 90.0;
        Summation {
            test: "summation",
            n: c.iter().sum(),
            first_bin: 10,
            total: tot,
            sums,
            counts: c.to_vec(),
            shares,
            expected_share: e,
            mad,
            flag_ratio: opts.battery.summation_flag_ratio,
            flagged: Vec::new(),
        }
    });
    let n: u64 = c.iter().sum();
    SupplierResult {
        id,
        name: s.name.clone(),
        invoices: n,
        amount_total: total,
        // Without amount_min/amount_max columns the even-spread model uses the bins' range.
        amount_min: s.range.map_or(Amount::from_units(c.iter().position(|&x| x > 0).map_or(10, |i| i as i64 + 10)), |r| r.0),
        amount_max: s.range.map_or(Amount::from_units(c.iter().rposition(|&x| x > 0).map_or(99, |i| i as i64 + 11)), |r| r.1),
        first_date: None,
        last_date: None,
        tests: Battery {
            first_digit: t.first.then(|| DigitTest::from_counts("first_digit", 1, c1, benford::first_digit())),
            second_digit: t.second.then(|| DigitTest::from_counts("second_digit", 0, c2, benford::second_digit())),
            first_two: Some(DigitTest::from_counts("first_two", 10, c.to_vec(), benford::first_two())),
            summation,
            ..Battery::default()
        },
        verdict: None,
        invoices_needed: None,
        calibration: None,
    }
}

/// The screen from a count table: first, second, first-two digits and summation tests, with the
/// same calibration and correction across suppliers as a raw-file screen.
pub fn screen(t: &CountTable, opts: &ScreenOptions) -> ScreenReport {
    let mut suppliers: Vec<SupplierResult> =
        t.suppliers.iter().enumerate().map(|(i, s)| population(i as u32, s, opts)).collect();
    let mut all = SupplierCounts { name: "(whole file)".into(), counts: [0; 90], sums: [Amount::ZERO; 90], range: None, periods: Vec::new() };
    for s in &t.suppliers {
        for i in 0..90 {
            all.counts[i] += s.counts[i];
            all.sums[i] = all.sums[i].saturating_add(s.sums[i]);
        }
    }
    let whole = population(u32::MAX, &all, opts);
    let counts: Vec<Vec<u64>> = t.suppliers.iter().map(|s| s.counts.to_vec()).collect();
    let calibration = opts.calibration.as_ref().map(|c| report::calibrate_list(&mut suppliers, &counts, c));
    report::rank(&mut suppliers);
    let mut rows = Accounting::default();
    rows.read = whole.invoices;
    rows.analysed = whole.invoices;
    let empty = SupplierCounts { name: "(credit notes)".into(), counts: [0; 90], sums: [Amount::ZERO; 90], range: None, periods: Vec::new() };
    ScreenReport {
        rows,
        intake: IntakeInfo {
            encoding: "UTF-8".into(),
            delimiter: ',',
            header_line: 1,
            columns: COLUMNS.iter().map(|s| s.to_string()).collect(),
            mapping: ColumnMapping { supplier: 0, amount: 3, date: None, invoice: None },
            decimal: DecimalConvention::Point,
            date_order: None,
            warnings: vec![format!(
                "digit-count table: {} table rows, {} unusable; only the first, second, first-two digits and summation tests can be computed from counts",
                t.rows_read,
                t.bad_rows.len()
            )],
        },
        parameters: Parameters { tests: "first,second,first_two,summation (from counts)".into(), min_amount: Amount::ZERO, approval_limits: vec![] },
        whole_file: whole,
        credit_notes: population(u32::MAX, &empty, opts),
        suppliers,
        calibration,
        caution: report::CAUTION,
    }
}
