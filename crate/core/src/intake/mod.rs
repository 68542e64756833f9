//! Intake: bytes -> [`Ledger`]. Streaming: [`Intake::feed`] chunk by chunk, then
//! [`Intake::finish`]. Every data row is either analysed or excluded with a counted reason.
//!
//! Flow: the first 64 KiB (or the whole file if shorter) are held back and sniffed
//! ([`sniff`]): documents dropped by mistake, encoding, delimiter, header row (title or blank
//! lines above it are a preamble and not counted as rows), column roles ([`columns`]), the
//! decimal convention of the amount column ([`amount`]) and the day/month order of the date
//! column ([`date`]). From then on chunks are decoded and split into records ([`scan`]) as they
//! arrive; only an unfinished record is kept between chunks.
//!
//! Decisions documented here:
//! - Negative amounts are credit notes (stored as their absolute value in
//!   `Ledger::credit_notes`, counted under `credit_note`) when their absolute value is at least
//!   the minimum; smaller ones are counted under `below_minimum` like small invoices, so both
//!   populations are screened above the same minimum.
//! - A date cell that is present but unreadable does not exclude the row (the digit tests do
//!   not need dates): the invoice is kept without a date and a warning counts such rows.
//! - If the decimal convention cannot be told from the first 64 KiB, rows whose amounts read
//!   differently under the two conventions are held back until a later row decides it; if no
//!   row ever does, `finish` returns [`IntakeError::AmbiguousDecimal`]. The same for day/month
//!   order ([`IntakeError::AmbiguousDateOrder`]).

pub mod amount;
pub mod columns;
pub mod date;
mod intern;
pub mod scan;
pub mod sniff;
mod split;

pub use amount::{parse_amount, trim_cell, Hint};
pub use date::{civil_from_days, days_from_civil, format_date, parse_date, DateCell};
pub use split::{read_split, read_split_parts, ByteSource, ReadError, SplitStats, SEGMENT};

use crate::amount::Amount;
use crate::ledger::{fnv1a, supplier_key, ExclusionReason, Invoice, Ledger, Supplier, NO_DATE};
use columns::Role;
use scan::{Record, RecordView, Scan, Scanner};
use serde::Serialize;
use sniff::{Enc, SNIFF_LEN};
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

/// 0-based column indices.
#[derive(Clone, Debug, Serialize, PartialEq, Eq)]
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
    /// 1-based line of the header row (0: the file has no header row).
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
    /// A record longer than [`MAX_RECORD`] bytes: almost always a quote that is never closed.
    RecordTooLong { line: u64 },
    /// Two roles were given the same column.
    SameColumn { column: String },
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
            IntakeError::RecordTooLong { line } => write!(f, "the row starting at line {line} never ends (more than 1 MiB): probably a quote (\") that is never closed"),
            IntakeError::SameColumn { column } => write!(f, "column '{column}' was chosen for two different roles"),
        }
    }
}
impl std::error::Error for IntakeError {}

/// Longest record accepted (bytes of decoded text).
pub const MAX_RECORD: usize = 1 << 20;
/// Data rows shown by [`preview`].
pub const PREVIEW_ROWS: usize = 20;

/// An undecided convention, with example cells, for the page to ask about.
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct Ambiguity {
    pub column: String,
    pub examples: Vec<String>,
}

/// One data row of the preview, raw and as it would be read.
#[derive(Clone, Debug, Serialize)]
pub struct PreviewRow {
    pub line: u64,
    pub cells: Vec<String>,
    pub supplier: Option<String>,
    /// Exact decimal text (e.g. "-1234.50"); None when unreadable or ambiguous.
    pub amount: Option<String>,
    /// When the decimal convention is undecided: the readings [point, comma].
    pub amount_readings: Vec<String>,
    /// ISO date; None when no date column, empty, unreadable or ambiguous.
    pub date: Option<String>,
    /// When day/month order is undecided: the readings [day-first, month-first].
    pub date_readings: Vec<String>,
    pub excluded: Option<ExclusionReason>,
    pub exclusion: Option<&'static str>,
}

/// What the mapping step of the page shows.
#[derive(Clone, Debug, Serialize)]
pub struct Preview {
    pub encoding: String,
    pub delimiter: char,
    pub header_line: u64,
    pub header: Vec<String>,
    pub columns: Vec<String>,
    pub mapping: ColumnMapping,
    /// None: not decided (see `decimal_ambiguous`) or no separators seen yet.
    pub decimal: Option<DecimalConvention>,
    pub decimal_ambiguous: Option<Ambiguity>,
    pub date_order: Option<DateOrder>,
    pub date_order_ambiguous: Option<Ambiguity>,
    pub rows: Vec<PreviewRow>,
    pub warnings: Vec<String>,
}

/// Preview of the first rows for the mapping step. Pass the first 64 KiB of the file (a
/// shorter `head` is taken to be the whole file). Unlike [`read_all`], an undecided decimal
/// convention or date order is not an error: it is flagged with examples.
pub fn preview(head: &[u8], opts: &IntakeOptions) -> Result<Preview, IntakeError> {
    let eof = head.len() < SNIFF_LEN;
    let mut run = Run::start(head, eof, opts, true)?;
    let s = &run.setup;
    let decimal_ambiguous = if run.conv.is_none() && !run.amb_dec.is_empty() {
        Some(Ambiguity { column: s.columns[s.mapping.amount].clone(), examples: run.amb_dec.clone() })
    } else {
        None
    };
    let date_order_ambiguous = match s.mapping.date {
        Some(c) if run.order.is_none() && !run.amb_date.is_empty() => {
            Some(Ambiguity { column: s.columns[c].clone(), examples: run.amb_date.clone() })
        }
        _ => None,
    };
    let warnings = run.warnings();
    let s = &run.setup;
    Ok(Preview {
        encoding: s.enc.name().to_string(),
        delimiter: s.delim as char,
        header_line: s.header_line,
        header: s.header.clone(),
        columns: s.columns.clone(),
        mapping: s.mapping.clone(),
        decimal: run.conv,
        decimal_ambiguous,
        date_order: run.reported_order(),
        date_order_ambiguous,
        rows: run.preview.take().unwrap_or_default(),
        warnings,
    })
}

/// Whole-file intake (the streaming path with one chunk).
pub fn read_all(bytes: &[u8], opts: &IntakeOptions) -> Result<IntakeResult, IntakeError> {
    let mut it = Intake::new(opts.clone());
    it.feed(bytes)?;
    it.finish()
}

/// The general amount parser on text (the cell decides its own convention; `1,234` is read
/// with the comma as thousands grouping). Used for `--min-amount`.
pub fn parse_amount_simple(s: &str) -> Option<Amount> {
    amount::parse_amount_str(s)
}

enum State {
    Head(Vec<u8>),
    Run(Box<Run>),
    Failed(IntakeError),
}

/// Streaming intake. Feed chunks of the file in order, then `finish`.
pub struct Intake {
    opts: IntakeOptions,
    bytes_fed: u64,
    state: State,
    /// The file's size in bytes, when known ([`Intake::set_size_hint`]).
    size_hint: Option<u64>,
}

impl Intake {
    pub fn new(opts: IntakeOptions) -> Intake {
        Intake { opts, bytes_fed: 0, state: State::Head(Vec::new()), size_hint: None }
    }

    /// The whole file's size in bytes, if known before feeding (a file on disk, a browser
    /// `File`). Once the first MiB is read, the invoice store is reserved for the rows that
    /// many bytes should hold (plus 1/32), so it is not copied while it grows; without a hint,
    /// or past the estimate, it grows by 1/8 at a time (see [`push_bounded`]).
    pub fn set_size_hint(&mut self, total_bytes: u64) {
        self.size_hint = Some(total_bytes);
    }

    /// Feed the next chunk. Chunks may split characters, quoted fields or line breaks anywhere.
    /// Errors found while sniffing (not a CSV, no amount column, ...) are returned as soon as
    /// the first 64 KiB are in, and again on every later call.
    pub fn feed(&mut self, chunk: &[u8]) -> Result<(), IntakeError> {
        self.bytes_fed += chunk.len() as u64;
        let r = match &mut self.state {
            State::Failed(e) => return Err(e.clone()),
            State::Head(raw) => {
                // Hold back only the sniff window; the rest of a big chunk streams on.
                let take = chunk.len().min(SNIFF_LEN - raw.len());
                raw.extend_from_slice(&chunk[..take]);
                if raw.len() >= SNIFF_LEN {
                    let raw = std::mem::take(raw);
                    Run::start(&raw, false, &self.opts, false).and_then(|mut r| {
                        let res = r.push(&chunk[take..], false);
                        self.state = State::Run(Box::new(r));
                        res
                    })
                } else {
                    Ok(())
                }
            }
            State::Run(run) => run.push(chunk, false),
        };
        if let Err(e) = &r {
            self.state = State::Failed(e.clone());
        }
        if let (State::Run(run), Some(total)) = (&mut self.state, self.size_hint) {
            if !run.reserved && (self.bytes_fed >= RESERVE_AFTER || self.bytes_fed >= total) {
                run.reserved = true;
                run.reserve_for(self.bytes_fed, total);
            }
        }
        r
    }

    pub fn bytes_fed(&self) -> u64 {
        self.bytes_fed
    }

    /// Data rows counted so far (analysed + excluded, plus rows held back while the decimal
    /// convention is undecided). 0 until the first 64 KiB are in.
    pub fn rows_so_far(&self) -> u64 {
        match &self.state {
            State::Run(r) => r.ledger.accounting.read + r.deferred.len() as u64,
            _ => 0,
        }
    }

    pub fn finish(self) -> Result<IntakeResult, IntakeError> {
        let run = match self.state {
            State::Failed(e) => return Err(e),
            State::Head(raw) => Box::new(Run::start(&raw, true, &self.opts, false)?),
            State::Run(mut run) => {
                run.push(&[], true)?;
                run
            }
        };
        run.finish()
    }
}

/// Bytes read before the invoice store is reserved from the size hint.
const RESERVE_AFTER: u64 = 1 << 20;

/// Push onto an invoice store that grows by 1/8 of its length at a time (at least 1,024) rather
/// than doubling, so its capacity stays within about 12.5 % of its length. (Natively a large
/// realloc is a remap; in wasm linear memory it is a copy, old and new block at once.)
#[inline]
pub(crate) fn push_bounded(v: &mut Vec<Invoice>, inv: Invoice) {
    reserve_bounded(v, 1);
    v.push(inv);
}

/// Room for `more` invoices in a store that grows as [`push_bounded`] says: by `more` or by 1/8
/// of its length, whichever is more (at least 1,024).
#[inline]
pub(crate) fn reserve_bounded(v: &mut Vec<Invoice>, more: usize) {
    if v.capacity() - v.len() < more {
        v.reserve_exact(more.max(v.len() / 8).max(1024));
    }
}

/// Example cells kept for a message about an undecided convention (decimal mark, day/month order).
const EXAMPLES_KEPT: usize = 3;

/// What the head of the file decided.
#[derive(Clone)]
struct Setup {
    enc: Enc,
    delim: u8,
    header_line: u64,
    header: Vec<String>,
    columns: Vec<String>,
    mapping: ColumnMapping,
    /// Cells a row needs to reach every mapped column.
    need: usize,
    /// Cells of the header (or of the widest common row): more non-empty cells is an error.
    width: usize,
    header_amount: Vec<u8>,
    header_supplier: Vec<u8>,
    body_start: usize,
    body_line: u64,
    warnings: Vec<String>,
}


struct Run {
    setup: Setup,
    scanner: Scanner,
    decoder: Option<encoding_rs::Decoder>,
    work: Vec<u8>,
    pos: usize,
    line: u64,
    rec: Record,
    min_amount: Amount,
    conv: Option<DecimalConvention>,
    /// Day/month order for `a/b/y` cells, once known (Dmy or Mdy).
    order: Option<DateOrder>,
    saw_iso: bool,
    /// `--date-order ymd` given: only year-first dates (and serials) are read.
    ymd_only: bool,
    ledger: Ledger,
    raw_map: intern::Interner,
    key_map: HashMap<String, u32>,
    /// Rows whose amount is ambiguous while the convention is undecided (thousands reading,
    /// signed).
    deferred: Vec<Invoice>,
    /// The store was reserved from the size hint (once).
    reserved: bool,
    /// (line, month-first reading) of rows whose date was read day-first provisionally.
    date_alts: Vec<(u32, i32)>,
    amb_dec: Vec<String>,
    amb_date: Vec<String>,
    run_sum: i128,
    run_rows: u64,
    grand_sum: i128,
    grand_rows: u64,
    bad_dates: u64,
    recoded_names: u64,
    decimal_votes: (u64, u64),
    total_prefixes: Vec<[u8; 3]>,
    total_first: [bool; 256],
    preview: Option<Vec<PreviewRow>>,
    /// A row with no supplier and a readable non-zero amount was met: whether it is a total
    /// depends on the sums of the rows above (a part read on its own cannot tell; see
    /// [`split`]).
    sum_rows: bool,
    /// A totals row reset the running sum.
    reset: bool,
}

fn decode_name(raw: &[u8], recoded: &mut u64) -> String {
    match std::str::from_utf8(raw) {
        Ok(s) => s.to_string(),
        Err(_) => {
            // Not UTF-8 although the head of the file was: read this cell as Windows-1252
            // (WHATWG Encoding Standard via encoding_rs).
            *recoded += 1;
            encoding_rs::WINDOWS_1252.decode_without_bom_handling(raw).0.into_owned()
        }
    }
}

fn cell_text(raw: &[u8]) -> String {
    String::from_utf8_lossy(trim_cell(raw)).into_owned()
}

/// Hash of an invoice number's normalised form: fnv1a of `supplier_key(text)`, computed
/// without allocating for ASCII text.
fn invoice_hash(raw: &[u8]) -> u64 {
    let t = trim_cell(raw);
    if t.is_empty() {
        return 0;
    }
    if t.is_ascii() {
        let mut h: u64 = 0xcbf29ce484222325;
        let mut pending_space = false;
        let mut any = false;
        for &b in t {
            if b.is_ascii_whitespace() || b == 0x0B {
                pending_space = any;
                continue;
            }
            if pending_space {
                h ^= b' ' as u64;
                h = h.wrapping_mul(0x100000001b3);
                pending_space = false;
            }
            h ^= b.to_ascii_lowercase() as u64;
            h = h.wrapping_mul(0x100000001b3);
            any = true;
        }
        h
    } else {
        fnv1a(supplier_key(&String::from_utf8_lossy(t)).as_bytes())
    }
}

fn eq_fold(a: &[u8], b: &[u8]) -> bool {
    a.len() == b.len() && a.eq_ignore_ascii_case(b)
}

/// Content statistics of one column over the sampled rows.
#[derive(Default, Clone)]
struct ColStats {
    non_empty: usize,
    amounts: usize,
    with_sep: usize,
    dates: usize,
    text: usize,
    distinct: usize,
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
        .or_else(|| {
            let f = columns::fold(given);
            headers.iter().position(|h| columns::fold(h) == f)
        })
        .ok_or(IntakeError::UnknownColumn { given: given.to_string() })
}

fn analyse_head(text: &[u8], eof: bool, enc: Enc, opts: &IntakeOptions) -> Result<Setup, IntakeError> {
    if text.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(IntakeError::Empty);
    }
    if sniff::looks_binary(text) {
        return Err(IntakeError::Binary);
    }
    let (delim, mode_w) = sniff::detect_delimiter(text, eof);
    if mode_w < 2 {
        return Err(IntakeError::SingleColumn);
    }
    let recs = sniff::sample_records(text, delim, eof, 2000);
    let Some(hi) = recs.iter().position(|r| sniff::width(&r.cells) >= mode_w) else {
        return Err(IntakeError::SingleColumn);
    };
    let cand = &recs[hi];
    let looks_numeric = |c: &str| {
        let b = c.as_bytes();
        !trim_cell(b).is_empty() && (parse_amount(b, None).is_some() || parse_date(b, None).is_some())
    };
    let keyword = cand.cells.iter().any(|c| {
        let f = columns::fold(c);
        [Role::Supplier, Role::Amount, Role::Date, Role::Invoice].iter().any(|&r| columns::score(&f, r) > 0)
    });
    let has_header = keyword || !cand.cells.iter().any(|c| looks_numeric(c));
    let ncols = cand.cells.len().max(mode_w);
    let (header, header_line, body_start, body_line, body) = if has_header {
        let next_line = recs.get(hi + 1).map_or(cand.line + 1, |r| r.line);
        (cand.cells.clone(), cand.line, cand.next, next_line, &recs[hi + 1..])
    } else {
        (Vec::new(), 0, cand.start, cand.line, &recs[hi..])
    };
    let columns: Vec<String> = (0..ncols)
        .map(|i| {
            let h = header.get(i).map(|s| s.trim().to_string()).unwrap_or_default();
            if h.is_empty() { format!("column {}", i + 1) } else { h }
        })
        .collect();
    // Content statistics over the body sample (rows as wide as the header).
    let mut stats = vec![ColStats::default(); ncols];
    let mut seen: Vec<std::collections::HashSet<String>> = vec![Default::default(); ncols];
    for r in body.iter().take(1000) {
        if sniff::width(&r.cells) < 2 || r.cells == header {
            continue;
        }
        for (i, c) in r.cells.iter().enumerate().take(ncols) {
            let b = trim_cell(c.as_bytes());
            if b.is_empty() {
                continue;
            }
            let st = &mut stats[i];
            st.non_empty += 1;
            let is_date = parse_date(b, None).is_some() && b.iter().any(|x| !x.is_ascii_digit());
            let amt = parse_amount(b, None);
            if parse_date(b, None).is_some() {
                st.dates += 1;
            }
            if is_date {
            } else if let Some((_, h)) = amt {
                st.amounts += 1;
                if h != Hint::Neutral {
                    st.with_sep += 1;
                }
            } else {
                st.text += 1;
            }
            if seen[i].len() < 5000 && seen[i].insert(supplier_key(c)) {
                st.distinct += 1;
            }
        }
    }
    let frac = |a: usize, n: usize| if n == 0 { 0.0 } else { a as f64 / n as f64 };
    let folded: Vec<String> = if has_header { columns.iter().map(|c| columns::fold(c)).collect() } else { vec![String::new(); ncols] };
    let mut used: Vec<usize> = Vec::new();
    let explicit = |g: &Option<String>| -> Result<Option<usize>, IntakeError> {
        match g {
            Some(g) => find_col(g, &columns).map(Some),
            None => Ok(None),
        }
    };
    let ex_amount = explicit(&opts.amount)?;
    let ex_supplier = explicit(&opts.supplier)?;
    let ex_date = explicit(&opts.date)?;
    let ex_invoice = explicit(&opts.invoice)?;
    for c in [ex_amount, ex_supplier, ex_date, ex_invoice].into_iter().flatten() {
        if used.contains(&c) {
            return Err(IntakeError::SameColumn { column: columns[c].clone() });
        }
        used.push(c);
    }
    let by_header = |role: Role, used: &[usize], ok: &dyn Fn(&ColStats) -> bool| -> Option<usize> {
        let mut best: Option<(i32, usize)> = None;
        for (i, f) in folded.iter().enumerate() {
            if used.contains(&i) || !ok(&stats[i]) {
                continue;
            }
            let s = columns::score(f, role);
            if s > 0 && best.is_none_or(|(bs, _)| s > bs) {
                best = Some((s, i));
            }
        }
        best.map(|b| b.1)
    };
    // Amount.
    let amount_ok = |s: &ColStats| s.non_empty == 0 || frac(s.amounts, s.non_empty) >= 0.5;
    let amount = match ex_amount {
        Some(c) => c,
        None => {
            let c = by_header(Role::Amount, &used, &amount_ok).or_else(|| {
                let mut best: Option<((u64, u64), usize)> = None;
                for (i, s) in stats.iter().enumerate() {
                    if used.contains(&i) || s.non_empty == 0 || frac(s.amounts, s.non_empty) < 0.8 {
                        continue;
                    }
                    let key = ((frac(s.with_sep, s.non_empty) * 1000.0) as u64, (frac(s.amounts, s.non_empty) * 1000.0) as u64);
                    if best.is_none_or(|(bk, _)| key > bk) {
                        best = Some((key, i));
                    }
                }
                best.map(|b| b.1)
            });
            // A header that says "amount" wins over content when no column reads as amounts.
            let c = c.or_else(|| by_header(Role::Amount, &used, &|_| true));
            let c = c.ok_or(IntakeError::NoNumericColumn)?;
            used.push(c);
            c
        }
    };
    let date = match ex_date {
        Some(c) => Some(c),
        None => {
            let date_ok = |s: &ColStats| s.non_empty == 0 || frac(s.dates, s.non_empty) >= 0.5;
            let c = by_header(Role::Date, &used, &date_ok).or_else(|| {
                (0..ncols).find(|&i| !used.contains(&i) && stats[i].non_empty > 0 && frac(stats[i].dates, stats[i].non_empty) >= 0.8)
            });
            let c = c.or_else(|| by_header(Role::Date, &used, &|_| true));
            if let Some(c) = c {
                used.push(c);
            }
            c
        }
    };
    let supplier = match ex_supplier {
        Some(c) => c,
        None => {
            let text_ok = |s: &ColStats| s.non_empty == 0 || frac(s.text, s.non_empty) >= 0.5;
            let c = by_header(Role::Supplier, &used, &text_ok).or_else(|| {
                let mut best: Option<(f64, usize)> = None;
                for (i, s) in stats.iter().enumerate() {
                    if used.contains(&i) || s.non_empty == 0 || frac(s.text, s.non_empty) < 0.8 {
                        continue;
                    }
                    let r = frac(s.distinct, s.non_empty);
                    if (r < 1.0 || s.non_empty == 1) && best.is_none_or(|(br, _)| r < br) {
                        best = Some((r, i));
                    }
                }
                best.map(|b| b.1)
            });
            let c = c.ok_or(IntakeError::NoSupplierColumn)?;
            used.push(c);
            c
        }
    };
    let invoice = match ex_invoice {
        Some(c) => Some(c),
        None => by_header(Role::Invoice, &used, &|_| true),
    };
    let mapping = ColumnMapping { supplier, amount, date, invoice };
    let need = [Some(supplier), Some(amount), date, invoice].into_iter().flatten().max().unwrap() + 1;
    let mut warnings = Vec::new();
    if !has_header {
        warnings.push("no header row found: columns were chosen from their content".to_string());
    }
    Ok(Setup {
        enc,
        delim,
        header_line,
        header_amount: header.get(amount).map(|h| trim_cell(h.as_bytes()).to_vec()).unwrap_or_default(),
        header_supplier: header.get(supplier).map(|h| trim_cell(h.as_bytes()).to_vec()).unwrap_or_default(),
        header,
        width: ncols,
        columns,
        mapping,
        need,
        body_start,
        body_line,
        warnings,
    })
}

impl Run {
    fn start(raw: &[u8], eof: bool, opts: &IntakeOptions, preview: bool) -> Result<Run, IntakeError> {
        let body = raw;
        if body.is_empty() || body == b"\xEF\xBB\xBF" || body == [0xFF, 0xFE] || body == [0xFE, 0xFF] {
            return Err(IntakeError::Empty);
        }
        if let Some(kind) = sniff::document_kind(raw) {
            return Err(IntakeError::NotCsv { format: kind.to_string() });
        }
        let enc = sniff::detect_encoding(raw, eof);
        let bom = enc.bom_len(raw);
        let decoder = match enc {
            Enc::Utf8 | Enc::Utf8Bom => None,
            e => Some(e.encoding().new_decoder_without_bom_handling()),
        };
        let setup = Setup {
            enc,
            delim: b',',
            header_line: 0,
            header: vec![],
            columns: vec![],
            mapping: ColumnMapping { supplier: 0, amount: 0, date: None, invoice: None },
            need: 0,
            width: 0,
            header_amount: vec![],
            header_supplier: vec![],
            body_start: 0,
            body_line: 1,
            warnings: vec![],
        };
        let order = match opts.date_order {
            Some(DateOrder::Ymd) | None => None,
            o => o,
        };
        let mut run = Run::fresh(setup, Amount(opts.min_amount.0.abs()), opts.decimal, order, opts.date_order == Some(DateOrder::Ymd));
        run.decoder = decoder;
        run.work = Vec::with_capacity(raw.len() + 1024);
        run.preview = if preview { Some(Vec::new()) } else { None };
        run.decode(&raw[bom..], eof);
        run.setup = analyse_head(&run.work, eof, enc, opts)?;
        run.scanner = Scanner::new(run.setup.delim);
        run.pos = run.setup.body_start;
        run.line = run.setup.body_line;
        if opts.decimal.is_none() {
            run.sniff_conventions(eof);
        }
        run.process(eof, true)?;
        Ok(run)
    }

    /// A run with these settings and nothing read: lines from 1, no suppliers, no sums, no
    /// decoder or preview.
    fn fresh(setup: Setup, min_amount: Amount, conv: Option<DecimalConvention>, order: Option<DateOrder>, ymd_only: bool) -> Run {
        let total_prefixes = columns::total_prefixes();
        let mut total_first = [false; 256];
        for p in &total_prefixes {
            total_first[p[0] as usize] = true;
        }
        Run {
            scanner: Scanner::new(setup.delim),
            setup,
            decoder: None,
            work: Vec::new(),
            pos: 0,
            line: 1,
            rec: Record::default(),
            min_amount,
            conv,
            order,
            saw_iso: false,
            ymd_only,
            ledger: Ledger::default(),
            raw_map: intern::Interner::default(),
            key_map: HashMap::new(),
            deferred: Vec::new(),
            reserved: false,
            date_alts: Vec::new(),
            amb_dec: Vec::new(),
            amb_date: Vec::new(),
            run_sum: 0,
            run_rows: 0,
            grand_sum: 0,
            grand_rows: 0,
            bad_dates: 0,
            recoded_names: 0,
            decimal_votes: (0, 0),
            total_prefixes,
            total_first,
            preview: None,
            sum_rows: false,
            reset: false,
        }
    }

    /// Decide the decimal convention (majority of the cells that tell) and the date order
    /// from the rows in the head.
    fn sniff_conventions(&mut self, eof: bool) {
        let recs = sniff::sample_records(&self.work[self.pos..], self.setup.delim, eof, 5000);
        let (mut point, mut comma) = (0u64, 0u64);
        let (mut dmy, mut mdy) = (0u64, 0u64);
        let a = self.setup.mapping.amount;
        for r in &recs {
            if let Some(c) = r.cells.get(a) {
                match parse_amount(c.as_bytes(), None) {
                    Some((_, Hint::Point)) => point += 1,
                    Some((_, Hint::Comma)) => comma += 1,
                    _ => {}
                }
            }
            if let (Some(d), None, false) = (self.setup.mapping.date, self.order, self.ymd_only) {
                if let Some(c) = r.cells.get(d) {
                    match parse_date(c.as_bytes(), None) {
                        Some(DateCell::Fixed { hint: Some(DateOrder::Dmy), .. }) => dmy += 1,
                        Some(DateCell::Fixed { hint: Some(DateOrder::Mdy), .. }) => mdy += 1,
                        _ => {}
                    }
                }
            }
        }
        if point + comma > 0 {
            self.conv = Some(if comma > point { DecimalConvention::Comma } else { DecimalConvention::Point });
            self.decimal_votes = (point, comma);
        }
        if self.order.is_none() && dmy + mdy > 0 {
            self.order = Some(if mdy > dmy { DateOrder::Mdy } else { DateOrder::Dmy });
            if dmy > 0 && mdy > 0 {
                self.setup.warnings.push(format!("dates: {dmy} cells read only day-first, {mdy} only month-first; read as {}", if mdy > dmy { "month-first" } else { "day-first" }));
            }
        }
    }

    fn decode(&mut self, src: &[u8], last: bool) {
        match &mut self.decoder {
            None => self.work.extend_from_slice(src),
            Some(d) => {
                let mut src = src;
                loop {
                    let need = d.max_utf8_buffer_length(src.len()).unwrap_or(src.len() * 3 + 16).max(16);
                    let old = self.work.len();
                    self.work.resize(old + need, 0);
                    let (res, read, written, _) = d.decode_to_utf8(src, &mut self.work[old..], last);
                    self.work.truncate(old + written);
                    src = &src[read..];
                    if res == encoding_rs::CoderResult::InputEmpty {
                        break;
                    }
                }
            }
        }
    }

    fn push(&mut self, chunk: &[u8], eof: bool) -> Result<(), IntakeError> {
        if self.decoder.is_some() || self.preview.is_some() {
            self.decode(chunk, eof);
            return self.process(eof, true);
        }
        // UTF-8: records are read in place in the chunk; only the record left unfinished at
        // its end is copied (into `work`). A record left over from the previous chunk is
        // completed first, taking the chunk up to the next line break, then twice as much
        // each time while it is still open (a long quoted field stays linear).
        let mut chunk = chunk;
        while self.pos < self.work.len() {
            if chunk.is_empty() {
                return self.process(eof, true);
            }
            let open = self.work.len() - self.pos;
            let nl = chunk.iter().position(|&b| b == b'\n').map_or(chunk.len(), |k| k + 1);
            let take = nl.max(open.min(chunk.len()));
            self.work.extend_from_slice(&chunk[..take]);
            chunk = &chunk[take..];
            // The length limit is checked once the whole chunk is in, as if fed at once.
            self.process(eof && chunk.is_empty(), chunk.is_empty())?;
        }
        self.work.clear();
        self.pos = 0;
        let (pos, res) = self.process_data(chunk, 0, eof, true);
        res?;
        self.work.extend_from_slice(&chunk[pos..]);
        Ok(())
    }

    fn process(&mut self, eof: bool, check_len: bool) -> Result<(), IntakeError> {
        let work = std::mem::take(&mut self.work);
        let (pos, res) = self.process_data(&work, self.pos, eof, check_len);
        self.work = work;
        self.pos = pos;
        res?;
        if self.pos > 0 {
            self.work.drain(..self.pos);
            self.pos = 0;
        }
        Ok(())
    }

    /// Count the complete records of `data` from `pos` on; returns where the first record not
    /// yet complete starts (or where the preview filled up).
    fn process_data(&mut self, data: &[u8], mut pos: usize, eof: bool, check_len: bool) -> (usize, Result<(), IntakeError>) {
        let mut rec = std::mem::take(&mut self.rec);
        let mut res = Ok(());
        while pos < data.len() {
            if let Some(p) = &self.preview {
                if p.len() >= PREVIEW_ROWS {
                    break;
                }
            }
            let (r, view) = self.scanner.scan_view(data, pos, eof, &mut rec);
            match r {
                Scan::Done { next, lines } => {
                    let line = self.line;
                    let outcome = self.handle(view, line);
                    if self.preview.is_some() {
                        self.preview_row(view, line, outcome);
                    }
                    self.line += lines;
                    pos = next;
                }
                Scan::More => {
                    if check_len && data.len() - pos > MAX_RECORD {
                        res = Err(IntakeError::RecordTooLong { line: self.line });
                    }
                    break;
                }
            }
        }
        self.rec = rec;
        (pos, res)
    }

    fn is_totals_word(&self, rec: RecordView) -> bool {
        let m = &self.setup.mapping;
        let Some(first) = rec.fields().map(trim_cell).find(|c| !c.is_empty()) else { return false };
        if first.len() < 3 || first.len() > 60 {
            return false;
        }
        let p = [first[0].to_ascii_lowercase(), first[1].to_ascii_lowercase(), first[2].to_ascii_lowercase()];
        if !self.total_first[p[0] as usize] || !self.total_prefixes.contains(&p) {
            return false;
        }
        let f = columns::fold(&String::from_utf8_lossy(first));
        if columns::is_total_word(&f, true) {
            return true;
        }
        // "Total 2024", "Summe Januar": only when the row has no date and no invoice number.
        let empty = |c: Option<usize>| c.is_some_and(|c| rec.len() <= c || trim_cell(rec.field(c)).is_empty());
        (m.date.is_some() || m.invoice.is_some())
            && (m.date.is_none() || empty(m.date))
            && (m.invoice.is_none() || empty(m.invoice))
            && columns::is_total_word(&f, false)
    }

    /// Count one data row. Returns the exclusion reason, None when analysed (or held back).
    fn handle(&mut self, rec: RecordView, line: u64) -> Option<ExclusionReason> {
        let m = self.setup.mapping.clone();
        let width = rec.width();
        macro_rules! exclude {
            ($r:expr) => {{
                self.ledger.accounting.exclude($r, line);
                return Some($r);
            }};
        }
        if width == 0 {
            exclude!(ExclusionReason::BlankRow);
        }
        if self.setup.header_line > 0
            && rec.len() > m.amount.max(m.supplier)
            && eq_fold(trim_cell(rec.field(m.amount)), &self.setup.header_amount)
            && eq_fold(trim_cell(rec.field(m.supplier)), &self.setup.header_supplier)
        {
            exclude!(ExclusionReason::RepeatedHeader);
        }
        if self.is_totals_word(rec) {
            self.end_running_sum();
            exclude!(ExclusionReason::TotalsLine);
        }
        if width > self.setup.width {
            exclude!(ExclusionReason::TooManyCells);
        }
        if rec.len() < self.setup.need {
            exclude!(ExclusionReason::RaggedRow);
        }
        let name = trim_cell(rec.field(m.supplier));
        let raw_amount = trim_cell(rec.field(m.amount));
        if name.is_empty() {
            // A line with no supplier whose amount is the sum of the rows above is a total.
            if let Some((a, _)) = parse_amount(raw_amount, self.conv) {
                let v = a.0 as i128;
                self.sum_rows |= v != 0;
                if v != 0 && ((self.run_rows > 0 && v == self.run_sum) || (self.grand_rows > 0 && v == self.grand_sum)) {
                    self.end_running_sum();
                    exclude!(ExclusionReason::TotalsLine);
                }
            }
            exclude!(ExclusionReason::MissingSupplier);
        }
        if raw_amount.is_empty() {
            exclude!(ExclusionReason::BlankAmount);
        }
        let parsed = match self.conv {
            Some(c) => amount::parse_amount_known(raw_amount, c).map(|a| (a, Hint::Neutral)),
            None => parse_amount(raw_amount, None),
        };
        let Some((a, hint)) = parsed else {
            exclude!(ExclusionReason::UnparseableAmount);
        };
        let mut held = false;
        if self.conv.is_none() {
            match hint {
                Hint::Point => self.set_decimal(DecimalConvention::Point),
                Hint::Comma => self.set_decimal(DecimalConvention::Comma),
                Hint::Ambiguous => {
                    held = true;
                    if self.amb_dec.len() < EXAMPLES_KEPT {
                        self.amb_dec.push(String::from_utf8_lossy(raw_amount).into_owned());
                    }
                }
                Hint::Neutral => {}
            }
        }
        if a.is_zero() {
            exclude!(ExclusionReason::ZeroAmount);
        }
        self.run_sum += a.0 as i128;
        self.grand_sum += a.0 as i128;
        self.run_rows += 1;
        self.grand_rows += 1;
        // Date.
        let mut date = NO_DATE;
        if let Some(dc) = m.date {
            let cell = trim_cell(rec.field(dc));
            if !cell.is_empty() {
                let parsed = match parse_date(cell, self.order) {
                    // Year-first was asked for: other shapes are unreadable, not guessed.
                    Some(DateCell::Fixed { hint: Some(DateOrder::Dmy | DateOrder::Mdy), .. }) | Some(DateCell::Ambiguous { .. }) if self.ymd_only => None,
                    p => p,
                };
                match parsed {
                    Some(DateCell::Fixed { days, hint }) => {
                        date = days;
                        match hint {
                            Some(DateOrder::Ymd) => self.saw_iso = true,
                            Some(o) if self.order.is_none() => self.set_order(o),
                            _ => {}
                        }
                    }
                    Some(DateCell::Ambiguous { dmy, mdy }) => {
                        date = dmy;
                        self.date_alts.push((line as u32, mdy));
                        if self.amb_date.len() < EXAMPLES_KEPT {
                            self.amb_date.push(String::from_utf8_lossy(cell).into_owned());
                        }
                    }
                    None => self.bad_dates += 1,
                }
            }
        }
        // Supplier id: exact previous spelling, then exact spelling seen before, then key.
        // Supplier id: exact spelling seen before, then key.
        let id = match self.raw_map.get(name) {
            Some(id) => id,
            None => {
                let display = decode_name(name, &mut self.recoded_names);
                let key = supplier_key(&display);
                let id = match self.key_map.get(&key) {
                    Some(&id) => id,
                    None => {
                        let id = self.ledger.suppliers.len() as u32;
                        self.key_map.insert(key.clone(), id);
                        self.ledger.suppliers.push(Supplier { name: display.trim().to_string(), key });
                        id
                    }
                };
                self.raw_map.insert(name, id);
                id
            }
        };
        let inv = Invoice::new(a, m.invoice.map_or(0, |c| invoice_hash(rec.field(c))), id, date, line);
        if held {
            self.deferred.push(inv);
            return None;
        }
        self.classify(inv)
    }

    /// A totals row ends the running sum (the rows since the last total).
    fn end_running_sum(&mut self) {
        self.run_sum = 0;
        self.run_rows = 0;
        self.reset = true;
    }

    /// Invoice (signed amount) -> invoices, credit notes or below minimum.
    fn classify(&mut self, mut inv: Invoice) -> Option<ExclusionReason> {
        let acc = &mut self.ledger.accounting;
        let line = inv.line() as u64;
        let a = inv.amount;
        if a.abs() < self.min_amount {
            acc.exclude(ExclusionReason::BelowMinimum, line);
            return Some(ExclusionReason::BelowMinimum);
        }
        inv.amount = a.abs();
        if a.is_negative() {
            acc.exclude(ExclusionReason::CreditNote, line);
            push_bounded(&mut self.ledger.credit_notes, inv);
            return Some(ExclusionReason::CreditNote);
        }
        acc.analyse();
        push_bounded(&mut self.ledger.invoices, inv);
        None
    }

    /// Reserve the stores for the rows `total` bytes should hold, from the rows in the first
    /// `fed` bytes, plus 1/32.
    fn reserve_for(&mut self, fed: u64, total: u64) {
        let scale = total as f64 / fed.max(1) as f64 * (1.0 + 1.0 / 32.0);
        // Rows held back (decimal convention undecided) are counted as invoices.
        let held = self.deferred.len();
        for (v, extra) in [(&mut self.ledger.invoices, held), (&mut self.ledger.credit_notes, 0)] {
            let want = ((v.len() + extra) as f64 * scale).ceil() as usize + 16;
            if want > v.capacity() {
                v.reserve_exact(want - v.len());
            }
        }
    }

    fn set_decimal(&mut self, c: DecimalConvention) {
        self.conv = Some(c);
        let held = std::mem::take(&mut self.deferred);
        if held.is_empty() {
            return;
        }
        for mut inv in held {
            if c == DecimalConvention::Comma {
                // Thousands reading x*10000 units -> decimal reading x/1000: exact.
                inv.amount = Amount(inv.amount.0 / 1000);
            }
            self.classify(inv);
        }
        // Every invoice has its own line: an in-place sort gives the one order.
        self.ledger.invoices.sort_unstable_by_key(|i| i.line());
        self.ledger.credit_notes.sort_unstable_by_key(|i| i.line());
        for e in &mut self.ledger.accounting.exclusions {
            e.rows.sort_unstable();
        }
    }

    fn set_order(&mut self, o: DateOrder) {
        self.order = Some(o);
        let alts = std::mem::take(&mut self.date_alts);
        if o != DateOrder::Mdy || alts.is_empty() {
            return;
        }
        let map: HashMap<u32, i32> = alts.into_iter().collect();
        for inv in self.ledger.invoices.iter_mut().chain(self.ledger.credit_notes.iter_mut()).chain(self.deferred.iter_mut()) {
            if let Some(&d) = map.get(&inv.line()) {
                inv.date = d;
            }
        }
    }

    fn reported_order(&self) -> Option<DateOrder> {
        self.setup.mapping.date?;
        match self.order {
            Some(o) => Some(o),
            None if self.ymd_only => Some(DateOrder::Ymd),
            None if self.date_alts.is_empty() && self.saw_iso => Some(DateOrder::Ymd),
            None => None,
        }
    }

    fn preview_row(&mut self, rec: RecordView, line: u64, outcome: Option<ExclusionReason>) {
        let m = &self.setup.mapping;
        let cells: Vec<String> = rec.fields().map(|f| String::from_utf8_lossy(f).into_owned()).collect();
        let get = |c: usize| if c < rec.len() { Some(trim_cell(rec.field(c))) } else { None };
        let supplier = get(m.supplier).filter(|s| !s.is_empty()).map(cell_text);
        let (mut amount, mut amount_readings) = (None, Vec::new());
        if let Some(c) = get(m.amount) {
            match parse_amount(c, self.conv) {
                Some((_, Hint::Ambiguous)) if self.conv.is_none() => {
                    for conv in [DecimalConvention::Point, DecimalConvention::Comma] {
                        if let Some((a, _)) = parse_amount(c, Some(conv)) {
                            amount_readings.push(a.to_string());
                        }
                    }
                }
                Some((a, _)) => amount = Some(a.to_string()),
                None => {}
            }
        }
        let (mut date, mut date_readings) = (None, Vec::new());
        if let Some(c) = m.date.and_then(get) {
            match parse_date(c, self.order) {
                Some(DateCell::Fixed { days, .. }) => date = Some(format_date(days)),
                Some(DateCell::Ambiguous { dmy, mdy }) => date_readings = vec![format_date(dmy), format_date(mdy)],
                None => {}
            }
        }
        let row = PreviewRow {
            line,
            cells,
            supplier,
            amount,
            amount_readings,
            date,
            date_readings,
            excluded: outcome,
            exclusion: outcome.map(|r| r.describe()),
        };
        if let Some(p) = &mut self.preview {
            p.push(row);
        }
    }

    fn warnings(&self) -> Vec<String> {
        let mut w = self.setup.warnings.clone();
        let (p, c) = self.decimal_votes;
        if p > 0 && c > 0 {
            w.push(format!("amounts: {p} cells read only with a decimal point, {c} only with a decimal comma; read with a decimal {}", if c > p { "comma" } else { "point" }));
        }
        if self.bad_dates > 0 {
            w.push(format!("{} rows have a date that could not be read; they are analysed without a date", self.bad_dates));
        }
        if self.recoded_names > 0 {
            w.push(format!("{} supplier names were not valid UTF-8 and were read as Windows-1252", self.recoded_names));
        }
        w
    }

    fn finish(mut self: Box<Self>) -> Result<IntakeResult, IntakeError> {
        let s = &self.setup;
        if self.conv.is_none() && !self.deferred.is_empty() {
            return Err(IntakeError::AmbiguousDecimal { column: s.columns[s.mapping.amount].clone(), examples: self.amb_dec.clone() });
        }
        if let Some(dc) = s.mapping.date {
            if self.order.is_none() && !self.date_alts.is_empty() {
                return Err(IntakeError::AmbiguousDateOrder { column: s.columns[dc].clone(), examples: self.amb_date.clone() });
            }
        }
        let acc = &self.ledger.accounting;
        if acc.read == acc.count_of(ExclusionReason::BlankRow) {
            return Err(IntakeError::HeaderOnly);
        }
        debug_assert!(acc.is_consistent());
        let warnings = self.warnings();
        let date_order = self.reported_order();
        let s = &self.setup;
        let info = IntakeInfo {
            encoding: s.enc.name().to_string(),
            delimiter: s.delim as char,
            header_line: s.header_line,
            columns: s.columns.clone(),
            mapping: s.mapping.clone(),
            decimal: self.conv.unwrap_or(DecimalConvention::Point),
            date_order,
            warnings,
        };
        let mut ledger = std::mem::take(&mut self.ledger);
        // Give back what the estimate or the last growth step left unused (in place).
        ledger.invoices.shrink_to_fit();
        ledger.credit_notes.shrink_to_fit();
        Ok(IntakeResult { ledger, info })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The store grows by 1/8 (at least 1,024), never doubling: capacity stays within 12.5 %
    /// (+1,024) of the length at every push. (The bound is our own memory target, issue 9.)
    #[test]
    fn store_growth_is_bounded() {
        let mut v: Vec<Invoice> = Vec::new();
        let mut grows = 0;
        for i in 0..300_000u64 {
            let cap = v.capacity();
            push_bounded(&mut v, Invoice::new(Amount(i as i64 + 1), 0, 0, crate::ledger::NO_DATE, i + 2));
            grows += (v.capacity() != cap) as u32;
            assert!(v.capacity() <= v.len() + v.len() / 8 + 1024, "len {} cap {}", v.len(), v.capacity());
        }
        assert!(grows > 10, "grew {grows} times");
    }

    /// With the file's size known, the store is reserved once from the first MiB and ends
    /// exactly sized; without it, it also ends exactly sized. Same rows either way.
    #[test]
    fn size_hint_reserves_once_and_store_ends_exact() {
        let mut text = String::from("Supplier,Invoice No,Date,Amount\n");
        for i in 0..60_000u32 {
            text.push_str(&format!("Supplier {},N{i},2024-03-{:02},{}.{:02}\n", i % 7, 1 + i % 28, 10 + (i * 7919) % 90_000, i % 100));
            if i % 10 == 0 {
                text.push_str(&format!("Supplier 1,C{i},2024-04-01,-{}.00\n", 15 + i % 50));
            }
        }
        let bytes = text.as_bytes();
        let run = |hint: bool| {
            let mut it = Intake::new(IntakeOptions::default());
            if hint {
                it.set_size_hint(bytes.len() as u64);
            }
            let mut caps = Vec::new();
            for c in bytes.chunks(1 << 16) {
                it.feed(c).unwrap();
                if let State::Run(r) = &it.state {
                    caps.push(r.ledger.invoices.capacity());
                }
            }
            (it.finish().unwrap().ledger, caps)
        };
        let (with, caps) = run(true);
        let (without, _) = run(false);
        assert_eq!(with.invoices, without.invoices);
        assert_eq!(with.credit_notes, without.credit_notes);
        assert_eq!((with.invoices.len(), with.credit_notes.len()), (60_000, 6_000));
        for l in [&with, &without] {
            assert_eq!(l.invoices.capacity(), l.invoices.len());
            assert_eq!(l.credit_notes.capacity(), l.credit_notes.len());
        }
        // Reserved once the first MiB was in (16 chunks of 64 KiB), then not grown again: the
        // rows are alike, so the estimate (+1/32) covers the file.
        let after = &caps[16..];
        assert!(after.windows(2).all(|w| w[0] == w[1]), "{caps:?}");
        assert!(after[0] >= 60_000 && after[0] <= 60_000 + 60_000 / 16, "{}", after[0]);
    }

    #[test]
    fn epoch_days() {
        // Unix epoch; 2000-03-01 is day 11017 (Hinnant's paper uses these as checks).
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11017);
        assert_eq!(civil_from_days(11017), (2000, 3, 1));
    }

    /// Streaming in place: a record left open at a chunk's end (here a quoted field with line
    /// breaks, 600 KiB long) is read the same whatever the chunk sizes; a quote never closed is
    /// reported at the line where its record starts, whatever the chunk sizes.
    #[test]
    fn long_records_across_chunks() {
        let mut t = String::from("Supplier,Note,Amount\n");
        for i in 0..3000 {
            t.push_str(&format!("S{},x,{}.50\n", i % 7, 10 + i));
        }
        t.push_str("S1,\"");
        for i in 0..40_000 {
            t.push_str(&format!("line {i}\n"));
        }
        t.push_str("\",12.50\nS2,y,13.50\n");
        let closed = t.clone();
        t.push_str("S3,\"never closed\n");
        for i in 0..150_000 {
            t.push_str(&format!("more {i}\n"));
        }
        let feed = |b: &[u8], step: usize| -> Result<String, IntakeError> {
            let mut it = Intake::new(IntakeOptions::default());
            for c in b.chunks(step) {
                it.feed(c)?;
            }
            let r = it.finish()?;
            Ok(format!("{:?} {:?}", r.ledger.accounting.read, r.ledger.invoices))
        };
        let whole = feed(closed.as_bytes(), usize::MAX).unwrap();
        assert!(whole.starts_with("3002 "), "{}", &whole[..20]);
        for step in [1 << 20, 65_536, 4093, 777] {
            assert_eq!(feed(closed.as_bytes(), step).unwrap(), whole, "{step}");
            assert_eq!(feed(t.as_bytes(), step).unwrap_err(), IntakeError::RecordTooLong { line: 40_000 + 3002 + 2 }, "{step}");
        }
        assert_eq!(feed(t.as_bytes(), usize::MAX).unwrap_err(), IntakeError::RecordTooLong { line: 43_004 });
    }

    #[test]
    fn invoice_hash_matches_key_hash() {
        for s in ["  INV-001 ", "a  b\tc", "Ünï 12", "x"] {
            assert_eq!(invoice_hash(s.as_bytes()), fnv1a(supplier_key(s).as_bytes()), "{s}");
        }
    }
}
