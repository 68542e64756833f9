//! The in-memory ledger: compact invoices (28 bytes each), distinct supplier names, and the
//! row accounting. Invariant: `accounting.read == accounting.analysed + accounting.excluded`,
//! and every data row of the file is counted exactly once.

use crate::amount::Amount;
use serde::Serialize;

/// One analysed invoice (or credit note). 28 bytes: `repr(packed(4))` keeps the two 8-byte
/// fields at 4-byte alignment (no padding), and the detection trial's "injected" mark is the top
/// bit of the line number. The memory target is <= 32 bytes per analysed row plus distinct
/// supplier names, screen included (see docs/BENCHMARKS.md).
///
/// Fields of a packed struct are read by value (`inv.amount`, `{ inv.amount }`); taking a
/// reference to one does not compile.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[repr(C, packed(4))]
pub struct Invoice {
    /// Exact amount. Invoices are positive; credit notes are kept positive too (their sign is
    /// carried by the population they are in).
    pub amount: Amount,
    /// FNV-1a hash of the normalised invoice number, 0 when there is none.
    pub invoice_hash: u64,
    /// Index into `Ledger::suppliers`.
    pub supplier: u32,
    /// Days since 1970-01-01, or `NO_DATE`.
    pub date: i32,
    /// Bits 0..=30: 1-based line number in the file (after decoding), at most [`LINE_MAX`];
    /// bit 31: injected by a detection trial ([`Invoice::injected`]).
    line_mark: u32,
}

pub const NO_DATE: i32 = i32::MIN;
/// Largest line number an invoice keeps (2^31 - 1); later lines are stored as this.
pub const LINE_MAX: u32 = (1 << 31) - 1;
const INJECTED_BIT: u32 = 1 << 31;

impl Invoice {
    /// An invoice at `line` (1-based; clamped to [`LINE_MAX`]), not injected.
    pub fn new(amount: Amount, invoice_hash: u64, supplier: u32, date: i32, line: u64) -> Invoice {
        Invoice { amount, invoice_hash, supplier, date, line_mark: line.min(LINE_MAX as u64) as u32 }
    }
    /// 1-based line number in the file.
    #[inline]
    pub fn line(&self) -> u32 {
        self.line_mark & LINE_MAX
    }
    /// Invented by a detection trial (only ever set in the trial's copy of the ledger).
    #[inline]
    pub fn injected(&self) -> bool {
        self.line_mark & INJECTED_BIT != 0
    }
    pub fn set_injected(&mut self, injected: bool) {
        self.line_mark = (self.line_mark & LINE_MAX) | if injected { INJECTED_BIT } else { 0 };
    }
}

#[derive(Clone, Debug, Serialize)]
pub struct Supplier {
    /// Original spelling (first seen), trimmed, for display.
    pub name: String,
    /// Normalised key: trimmed, inner white space folded, lower-cased.
    pub key: String,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ExclusionReason {
    BlankRow,
    BlankAmount,
    UnparseableAmount,
    ZeroAmount,
    /// Negative amounts are credit notes: excluded from the invoice tests but kept as their
    /// own population (`Ledger::credit_notes`) so they can be screened separately.
    CreditNote,
    BelowMinimum,
    MissingSupplier,
    RaggedRow,
    TotalsLine,
    RepeatedHeader,
    UnparseableDate,
    /// More non-empty cells than the header has: usually an unquoted delimiter inside a
    /// value (e.g. a decimal comma in a comma-separated file), so no cell can be trusted.
    TooManyCells,
}

impl ExclusionReason {
    pub fn describe(self) -> &'static str {
        match self {
            ExclusionReason::BlankRow => "blank row",
            ExclusionReason::BlankAmount => "amount cell empty",
            ExclusionReason::UnparseableAmount => "amount not readable as a number",
            ExclusionReason::ZeroAmount => "amount is zero",
            ExclusionReason::CreditNote => "negative amount (credit note, screened separately)",
            ExclusionReason::BelowMinimum => "amount below the test minimum",
            ExclusionReason::MissingSupplier => "supplier cell empty",
            ExclusionReason::RaggedRow => "row has too few cells",
            ExclusionReason::TotalsLine => "totals or subtotal line",
            ExclusionReason::RepeatedHeader => "repeated header line",
            ExclusionReason::UnparseableDate => "date not readable",
            ExclusionReason::TooManyCells => "row has more cells than the header (unquoted delimiter inside a value?)",
        }
    }
}

/// Rows excluded for one reason: how many, and the first 20 line numbers.
#[derive(Clone, Debug, Serialize)]
pub struct Exclusion {
    pub reason: ExclusionReason,
    pub description: &'static str,
    pub count: u64,
    pub rows: Vec<u64>,
}

pub const EXCLUSION_ROWS_KEPT: usize = 20;

#[derive(Clone, Debug, Default, Serialize)]
pub struct Accounting {
    /// Data rows read (header and preamble lines not counted).
    pub read: u64,
    pub analysed: u64,
    pub excluded: u64,
    pub exclusions: Vec<Exclusion>,
}

impl Accounting {
    pub fn exclude(&mut self, reason: ExclusionReason, line: u64) {
        self.read += 1;
        self.excluded += 1;
        self.add_excluded(reason, 1, std::iter::once(line));
    }
    /// Add the rows of a later part of the same file, read on its own with its lines numbered
    /// from 1 (`line_offset`: the lines before it): counts summed, the first rows kept.
    pub(crate) fn absorb(&mut self, later: Accounting, line_offset: u64) {
        self.read += later.read;
        self.analysed += later.analysed;
        self.excluded += later.excluded;
        for e in later.exclusions {
            self.add_excluded(e.reason, e.count, e.rows.into_iter().map(|l| l + line_offset));
        }
    }
    /// `count` more rows excluded for `reason`, the first of them on lines `rows`: the first
    /// [`EXCLUSION_ROWS_KEPT`] line numbers are kept, reasons in order.
    fn add_excluded(&mut self, reason: ExclusionReason, count: u64, rows: impl Iterator<Item = u64>) {
        match self.exclusions.iter_mut().find(|e| e.reason == reason) {
            Some(e) => {
                e.count += count;
                let room = EXCLUSION_ROWS_KEPT.saturating_sub(e.rows.len());
                e.rows.extend(rows.take(room));
            }
            None => {
                self.exclusions.push(Exclusion {
                    reason,
                    description: reason.describe(),
                    count,
                    rows: rows.take(EXCLUSION_ROWS_KEPT).collect(),
                });
                self.exclusions.sort_by_key(|e| e.reason);
            }
        }
    }
    pub fn analyse(&mut self) {
        self.read += 1;
        self.analysed += 1;
    }
    pub fn count_of(&self, reason: ExclusionReason) -> u64 {
        self.exclusions.iter().find(|e| e.reason == reason).map_or(0, |e| e.count)
    }
    pub fn is_consistent(&self) -> bool {
        self.read == self.analysed + self.excluded
            && self.excluded == self.exclusions.iter().map(|e| e.count).sum::<u64>()
    }
}

#[derive(Clone, Debug, Default)]
pub struct Ledger {
    pub suppliers: Vec<Supplier>,
    /// Positive invoices at or above the minimum, in file order.
    pub invoices: Vec<Invoice>,
    /// Credit notes (negative amounts, stored as their absolute value), in file order.
    pub credit_notes: Vec<Invoice>,
    pub accounting: Accounting,
}

impl Ledger {
    /// Invoices of one supplier, in file order.
    pub fn invoices_of(&self, supplier: u32) -> impl Iterator<Item = &Invoice> {
        self.invoices.iter().filter(move |i| i.supplier == supplier)
    }
    /// Invoice indices grouped per supplier, each group in file order, in one exactly sized
    /// array (4 bytes per invoice; a counting sort by supplier id).
    pub fn supplier_order(&self) -> SupplierOrder {
        self.supplier_order_without(None)
    }
    /// As [`Ledger::supplier_order`], leaving out one supplier's invoices (its group is empty).
    pub fn supplier_order_without(&self, skip: Option<u32>) -> SupplierOrder {
        let k = self.suppliers.len();
        let mut start = vec![0u32; k + 1];
        for inv in &self.invoices {
            start[inv.supplier as usize + 1] += 1;
        }
        if let Some(s) = skip {
            start[s as usize + 1] = 0;
        }
        for s in 0..k {
            start[s + 1] += start[s];
        }
        let mut next = start.clone();
        let mut idx = vec![0u32; start[k] as usize];
        for (i, inv) in self.invoices.iter().enumerate() {
            if Some(inv.supplier) == skip {
                continue;
            }
            let s = inv.supplier as usize;
            idx[next[s] as usize] = i as u32;
            next[s] += 1;
        }
        SupplierOrder { start, idx }
    }
}

/// Invoice indices grouped by supplier ([`Ledger::supplier_order`]).
#[derive(Clone, Debug, Default)]
pub struct SupplierOrder {
    /// `idx[start[s]..start[s + 1]]` are supplier s's invoices.
    pub start: Vec<u32>,
    pub idx: Vec<u32>,
}

impl SupplierOrder {
    /// Supplier `s`'s invoice indices, ascending (file order).
    pub fn of(&self, s: usize) -> &[u32] {
        &self.idx[self.start[s] as usize..self.start[s + 1] as usize]
    }
}

/// Normalise a supplier name into its comparison key: trim, fold inner white space
/// (including no-break spaces) to one space, lower-case.
pub fn supplier_key(name: &str) -> String {
    let mut out = String::with_capacity(name.len());
    for w in name.split(|c: char| c.is_whitespace() || c == '\u{a0}' || c == '\u{202f}') {
        if w.is_empty() {
            continue;
        }
        if !out.is_empty() {
            out.push(' ');
        }
        for c in w.chars() {
            out.extend(c.to_lowercase());
        }
    }
    out
}

/// FNV-1a 64-bit hash (for invoice numbers: duplicate detection without storing the text).
pub fn fnv1a(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf29ce484222325;
    for &b in bytes {
        h ^= b as u64;
        h = h.wrapping_mul(0x100000001b3);
    }
    h
}

#[cfg(test)]
mod tests {
    use super::*;
    /// The memory target (issue 9) rests on this size: a growing `Invoice` fails here.
    #[test]
    fn invoice_is_28_bytes() {
        assert_eq!(std::mem::size_of::<Invoice>(), 28);
        assert_eq!(std::mem::align_of::<Invoice>(), 4);
    }
    #[test]
    fn line_and_injected_mark_round_trip() {
        for line in [1u64, 2, 1000, LINE_MAX as u64 - 1, LINE_MAX as u64] {
            let mut i = Invoice::new(Amount(12345), 7, 3, 19000, line);
            assert_eq!((i.line() as u64, i.injected()), (line, false));
            i.set_injected(true);
            assert_eq!((i.line() as u64, i.injected()), (line, true));
            assert_eq!((i.amount, i.invoice_hash, i.supplier, i.date), (Amount(12345), 7, 3, 19000));
            i.set_injected(false);
            assert_eq!((i.line() as u64, i.injected()), (line, false));
        }
        // Lines past 2^31 - 1 are clamped, never spill into the mark.
        let i = Invoice::new(Amount(1), 0, 0, NO_DATE, 1 << 40);
        assert_eq!((i.line(), i.injected()), (LINE_MAX, false));
    }
    #[test]
    fn supplier_order_groups_in_file_order() {
        let mut l = Ledger::default();
        for k in ["a", "b", "c"] {
            l.suppliers.push(Supplier { name: k.into(), key: k.into() });
        }
        for (i, s) in [2u32, 0, 2, 2, 0].into_iter().enumerate() {
            l.invoices.push(Invoice::new(Amount(100 + i as i64), 0, s, NO_DATE, i as u64 + 2));
        }
        let o = l.supplier_order();
        // the plain grouping, one list per supplier in file order
        let mut by = vec![Vec::new(); 3];
        for (i, inv) in l.invoices.iter().enumerate() {
            by[inv.supplier as usize].push(i as u32);
        }
        for s in 0..3 {
            assert_eq!(o.of(s), by[s].as_slice());
        }
        assert_eq!((o.of(0), o.of(1), o.of(2)), (&[1u32, 4][..], &[][..], &[0u32, 2, 3][..]));
        assert_eq!(o.idx.capacity(), 5);
        let w = l.supplier_order_without(Some(2));
        assert_eq!((w.of(0), w.of(1), w.of(2)), (&[1u32, 4][..], &[][..], &[][..]));
        assert_eq!(w.idx.capacity(), 2);
    }
    #[test]
    fn keys_fold_case_and_space() {
        assert_eq!(supplier_key("  Acme\u{a0} Feeds  LTD "), "acme feeds ltd");
    }
}
