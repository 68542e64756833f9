//! The in-memory ledger: compact invoices (32 bytes each), distinct supplier names, and the
//! row accounting. Invariant: `accounting.read == accounting.analysed + accounting.excluded`,
//! and every data row of the file is counted exactly once.

use crate::amount::Amount;
use serde::Serialize;

/// One analysed invoice (or credit note). 32 bytes: the memory target is <= 32 bytes per row
/// plus distinct supplier names.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
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
    /// 1-based line number in the file (after decoding).
    pub line: u32,
    /// Reserved flags (bit 0: injected by a detection trial).
    pub flags: u32,
}

pub const NO_DATE: i32 = i32::MIN;
pub const FLAG_INJECTED: u32 = 1;

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
        match self.exclusions.iter_mut().find(|e| e.reason == reason) {
            Some(e) => {
                e.count += 1;
                if e.rows.len() < EXCLUSION_ROWS_KEPT {
                    e.rows.push(line);
                }
            }
            None => {
                self.exclusions.push(Exclusion {
                    reason,
                    description: reason.describe(),
                    count: 1,
                    rows: vec![line],
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
    /// Invoice indices grouped per supplier (index = supplier id), each in file order.
    pub fn by_supplier(&self) -> Vec<Vec<u32>> {
        let mut g = vec![Vec::new(); self.suppliers.len()];
        for (i, inv) in self.invoices.iter().enumerate() {
            g[inv.supplier as usize].push(i as u32);
        }
        g
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
    #[test]
    fn invoice_is_32_bytes() {
        assert_eq!(std::mem::size_of::<Invoice>(), 32);
    }
    #[test]
    fn keys_fold_case_and_space() {
        assert_eq!(supplier_key("  Acme\u{a0} Feeds  LTD "), "acme feeds ltd");
    }
}
