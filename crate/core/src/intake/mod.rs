//! Intake: bytes -> [`Ledger`]. Streaming (`Intake::feed` chunk by chunk, `finish`), with every
//! data row either analysed or excluded with a counted reason.
//!
//! NOTE: first slice — comma-delimited UTF-8, point decimals. The full sniffing/amount/date
//! work lives in the submodules as it lands (issue "ledger intake").

use crate::amount::Amount;
use crate::ledger::{fnv1a, supplier_key, ExclusionReason, Invoice, Ledger, Supplier, NO_DATE};
use serde::Serialize;
use std::collections::HashMap;

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DecimalConvention {
    Point,
    Comma,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DateOrder {
    Dmy,
    Mdy,
    Ymd,
}

#[derive(Clone, Debug)]
pub struct IntakeOptions {
    /// Column by header name (case-insensitive) or 1-based number; None: guess.
    pub supplier: Option<String>,
    pub amount: Option<String>,
    pub date: Option<String>,
    pub invoice: Option<String>,
    pub decimal: Option<DecimalConvention>,
    pub date_order: Option<DateOrder>,
    /// Amounts (absolute value) below this are excluded as `below_minimum`. Default 10.
    pub min_amount: Amount,
}

impl Default for IntakeOptions {
    fn default() -> Self {
        IntakeOptions {
            supplier: None,
            amount: None,
            date: None,
            invoice: None,
            decimal: None,
            date_order: None,
            min_amount: Amount::from_units(10),
        }
    }
}

#[derive(Clone, Debug, Serialize)]
pub struct ColumnMapping {
    pub supplier: usize,
    pub amount: usize,
    pub date: Option<usize>,
    pub invoice: Option<usize>,
}

#[derive(Clone, Debug, Serialize)]
pub struct IntakeInfo {
    pub encoding: String,
    pub delimiter: char,
    /// 1-based line of the header row.
    pub header_line: u64,
    pub columns: Vec<String>,
    pub mapping: ColumnMapping,
    pub decimal: DecimalConvention,
    pub date_order: Option<DateOrder>,
    pub warnings: Vec<String>,
}

#[derive(Debug)]
pub struct IntakeResult {
    pub ledger: Ledger,
    pub info: IntakeInfo,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum IntakeError {
    Empty,
    HeaderOnly,
    /// A workbook, PDF or other document dropped by mistake ("export it as CSV").
    NotCsv { format: String },
    Binary,
    SingleColumn,
    NoNumericColumn,
    NoSupplierColumn,
    UnknownColumn { given: String },
    AmbiguousDecimal { column: String, examples: Vec<String> },
    AmbiguousDateOrder { column: String, examples: Vec<String> },
    Cancelled,
}

impl std::fmt::Display for IntakeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            IntakeError::Empty => write!(f, "the file is empty"),
            IntakeError::HeaderOnly => write!(f, "the file has a header but no data rows"),
            IntakeError::NotCsv { format } => write!(f, "this looks like a {format}, not a CSV file: export it as CSV and try again"),
            IntakeError::Binary => write!(f, "this file holds binary data, not text: export the ledger as CSV"),
            IntakeError::SingleColumn => write!(f, "only one column found: the file needs at least a supplier and an amount column"),
            IntakeError::NoNumericColumn => write!(f, "no column of amounts found"),
            IntakeError::NoSupplierColumn => write!(f, "no supplier column found"),
            IntakeError::UnknownColumn { given } => write!(f, "no column named or numbered '{given}'"),
            IntakeError::AmbiguousDecimal { column, examples } => write!(f, "column '{column}' could use either a decimal comma or a decimal point (e.g. {}): choose one (--decimal comma|point)", examples.join(", ")),
            IntakeError::AmbiguousDateOrder { column, examples } => write!(f, "dates in column '{column}' could be day-first or month-first (e.g. {}): choose one (--date-order dmy|mdy|ymd)", examples.join(", ")),
            IntakeError::Cancelled => write!(f, "cancelled"),
        }
    }
}
impl std::error::Error for IntakeError {}

/// Streaming intake. Feed chunks of the file in order, then `finish`.
pub struct Intake {
    opts: IntakeOptions,
    buf: Vec<u8>,
    bytes_fed: u64,
}

impl Intake {
    pub fn new(opts: IntakeOptions) -> Intake {
        Intake { opts, buf: Vec::new(), bytes_fed: 0 }
    }
    pub fn feed(&mut self, chunk: &[u8]) -> Result<(), IntakeError> {
        self.bytes_fed += chunk.len() as u64;
        self.buf.extend_from_slice(chunk);
        Ok(())
    }
    pub fn bytes_fed(&self) -> u64 {
        self.bytes_fed
    }
    /// Data rows counted so far (read = analysed + excluded).
    pub fn rows_so_far(&self) -> u64 {
        0
    }
    pub fn finish(self) -> Result<IntakeResult, IntakeError> {
        read_all(&self.buf, &self.opts)
    }
}

fn find_col(given: &str, headers: &[String]) -> Result<usize, IntakeError> {
    if let Ok(n) = given.trim().parse::<usize>() {
        if n >= 1 && n <= headers.len() {
            return Ok(n - 1);
        }
    }
    let g = supplier_key(given);
    headers
        .iter()
        .position(|h| supplier_key(h) == g)
        .ok_or(IntakeError::UnknownColumn { given: given.to_string() })
}

fn guess_col(headers: &[String], words: &[&str]) -> Option<usize> {
    headers.iter().position(|h| {
        let k = supplier_key(h);
        words.iter().any(|w| k.contains(w))
    })
}

/// Parse "1234.56" / "-1,234.56" (point decimal, comma thousands) exactly.
pub fn parse_amount_simple(s: &str) -> Option<Amount> {
    let t = s.trim();
    let (neg, t) = match t.strip_prefix('-') {
        Some(r) => (true, r),
        None => (false, t),
    };
    let t: String = t.chars().filter(|&c| c != ',').collect();
    let (int, frac) = match t.split_once('.') {
        Some((a, b)) => (a, b),
        None => (t.as_str(), ""),
    };
    if int.is_empty() && frac.is_empty() {
        return None;
    }
    if !int.bytes().all(|b| b.is_ascii_digit()) || !frac.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    let digits = format!("{int}{frac}");
    let v: i64 = if digits.is_empty() { 0 } else { digits.parse().ok()? };
    let a = Amount::from_scaled(v, frac.len() as u32)?;
    Some(if neg { Amount(-a.0) } else { a })
}

/// Days since 1970-01-01 for a proleptic Gregorian date (Howard Hinnant's days_from_civil).
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

/// ISO date text for days since epoch.
pub fn format_date(days: i32) -> String {
    if days == NO_DATE {
        return String::new();
    }
    let (y, m, d) = civil_from_days(days);
    format!("{y:04}-{m:02}-{d:02}")
}

fn parse_iso_date(s: &str) -> Option<i32> {
    let s = s.trim();
    let s = s.split([' ', 'T']).next()?;
    let mut it = s.split('-');
    let y: i32 = it.next()?.parse().ok()?;
    let m: u32 = it.next()?.parse().ok()?;
    let d: u32 = it.next()?.parse().ok()?;
    if !(1..=12).contains(&m) || !(1..=31).contains(&d) {
        return None;
    }
    Some(days_from_civil(y, m, d))
}

/// Whole-file intake (the streaming path ends here too).
pub fn read_all(bytes: &[u8], opts: &IntakeOptions) -> Result<IntakeResult, IntakeError> {
    let text = std::str::from_utf8(bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes))
        .map_err(|_| IntakeError::Binary)?;
    if text.trim().is_empty() {
        return Err(IntakeError::Empty);
    }
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut records = rdr.records();
    let header = match records.next() {
        Some(Ok(r)) => r,
        _ => return Err(IntakeError::Empty),
    };
    let headers: Vec<String> = header.iter().map(|s| s.trim().to_string()).collect();
    if headers.len() < 2 {
        return Err(IntakeError::SingleColumn);
    }
    let supplier = match &opts.supplier {
        Some(g) => find_col(g, &headers)?,
        None => guess_col(&headers, &["supplier", "vendor", "payee", "creditor"]).ok_or(IntakeError::NoSupplierColumn)?,
    };
    let amount = match &opts.amount {
        Some(g) => find_col(g, &headers)?,
        None => guess_col(&headers, &["amount", "total", "gross", "value"]).ok_or(IntakeError::NoNumericColumn)?,
    };
    let date = match &opts.date {
        Some(g) => Some(find_col(g, &headers)?),
        None => guess_col(&headers, &["date"]),
    };
    let invoice = match &opts.invoice {
        Some(g) => Some(find_col(g, &headers)?),
        None => guess_col(&headers, &["invoice", "document", "reference"]).filter(|&c| c != amount && Some(c) != date),
    };
    let mut ledger = Ledger::default();
    let mut index: HashMap<String, u32> = HashMap::new();
    let need = supplier.max(amount).max(date.unwrap_or(0)).max(invoice.unwrap_or(0)) + 1;
    for rec in records {
        let rec = match rec {
            Ok(r) => r,
            Err(_) => continue,
        };
        let line = rec.position().map_or(0, |p| p.line());
        let acc = &mut ledger.accounting;
        if rec.iter().all(|c| c.trim().is_empty()) {
            acc.exclude(ExclusionReason::BlankRow, line);
            continue;
        }
        if rec.len() < need {
            acc.exclude(ExclusionReason::RaggedRow, line);
            continue;
        }
        let name = rec[supplier].trim();
        if name.is_empty() {
            acc.exclude(ExclusionReason::MissingSupplier, line);
            continue;
        }
        let raw = rec[amount].trim();
        if raw.is_empty() {
            acc.exclude(ExclusionReason::BlankAmount, line);
            continue;
        }
        let Some(a) = parse_amount_simple(raw) else {
            acc.exclude(ExclusionReason::UnparseableAmount, line);
            continue;
        };
        if a.is_zero() {
            acc.exclude(ExclusionReason::ZeroAmount, line);
            continue;
        }
        let d = date.and_then(|c| parse_iso_date(&rec[c])).unwrap_or(NO_DATE);
        let key = supplier_key(name);
        let sid = *index.entry(key.clone()).or_insert_with(|| {
            ledger.suppliers.push(Supplier { name: name.to_string(), key });
            (ledger.suppliers.len() - 1) as u32
        });
        let inv = Invoice {
            amount: a.abs(),
            invoice_hash: invoice.map_or(0, |c| {
                let t = rec[c].trim();
                if t.is_empty() { 0 } else { fnv1a(supplier_key(t).as_bytes()) }
            }),
            supplier: sid,
            date: d,
            line: line as u32,
            flags: 0,
        };
        if a.is_negative() {
            acc.exclude(ExclusionReason::CreditNote, line);
            ledger.credit_notes.push(inv);
            continue;
        }
        if a < opts.min_amount {
            acc.exclude(ExclusionReason::BelowMinimum, line);
            continue;
        }
        acc.analyse();
        ledger.invoices.push(inv);
    }
    if ledger.accounting.read == 0 {
        return Err(IntakeError::HeaderOnly);
    }
    Ok(IntakeResult {
        ledger,
        info: IntakeInfo {
            encoding: "UTF-8".into(),
            delimiter: ',',
            header_line: 1,
            columns: headers,
            mapping: ColumnMapping { supplier, amount, date, invoice },
            decimal: DecimalConvention::Point,
            date_order: date.map(|_| DateOrder::Ymd),
            warnings: vec![],
        },
    })
}
