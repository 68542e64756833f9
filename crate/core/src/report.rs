//! The screen result: what every front end (CLI text/JSON, the page) shows.

use crate::benford;
use crate::intake::IntakeInfo;
use crate::ledger::{Accounting, Ledger};
use crate::stats;
use crate::Amount;
use serde::Serialize;

#[derive(Clone, Debug, Serialize)]
pub struct FirstTwo {
    /// Counts for first-two digits 10..=99.
    pub counts: Vec<u64>,
    pub mad: f64,
    pub chi_square: f64,
    pub df: u32,
    pub p_value: f64,
}

impl FirstTwo {
    pub fn from_counts(counts: Vec<u64>) -> FirstTwo {
        let exp = benford::first_two();
        let mad = stats::mad(&counts, &exp);
        let chi = stats::chi_square(&counts, &exp);
        FirstTwo { mad, chi_square: chi, df: 89, p_value: stats::chi2_sf(chi, 89.0), counts }
    }
}

#[derive(Clone, Debug, Serialize)]
pub struct SupplierResult {
    pub id: u32,
    pub name: String,
    pub invoices: u64,
    pub amount_total: Amount,
    pub first_two: FirstTwo,
}

#[derive(Clone, Debug, Serialize)]
pub struct ScreenReport {
    pub rows: Accounting,
    pub intake: IntakeInfo,
    pub whole_file: SupplierResult,
    /// Ranked: most deviating first.
    pub suppliers: Vec<SupplierResult>,
}

fn first_two_counts<'a>(it: impl Iterator<Item = &'a crate::Invoice>) -> (Vec<u64>, u64, Amount) {
    let mut c = vec![0u64; 90];
    let (mut n, mut total) = (0u64, Amount::ZERO);
    for inv in it {
        if let Some(d) = inv.amount.leading_digits(2) {
            c[(d - 10) as usize] += 1;
        }
        n += 1;
        total = total.saturating_add(inv.amount);
    }
    (c, n, total)
}

pub fn screen(ledger: &Ledger, info: &IntakeInfo) -> ScreenReport {
    let groups = ledger.by_supplier();
    let mut suppliers: Vec<SupplierResult> = groups
        .iter()
        .enumerate()
        .filter(|(_, g)| !g.is_empty())
        .map(|(sid, g)| {
            let (c, n, total) = first_two_counts(g.iter().map(|&i| &ledger.invoices[i as usize]));
            SupplierResult {
                id: sid as u32,
                name: ledger.suppliers[sid].name.clone(),
                invoices: n,
                amount_total: total,
                first_two: FirstTwo::from_counts(c),
            }
        })
        .collect();
    suppliers.sort_by(|a, b| {
        a.first_two
            .p_value
            .partial_cmp(&b.first_two.p_value)
            .unwrap_or(std::cmp::Ordering::Equal)
            .then(a.name.cmp(&b.name))
    });
    let (c, n, total) = first_two_counts(ledger.invoices.iter());
    ScreenReport {
        rows: ledger.accounting.clone(),
        intake: info.clone(),
        whole_file: SupplierResult {
            id: u32::MAX,
            name: "(whole file)".into(),
            invoices: n,
            amount_total: total,
            first_two: FirstTwo::from_counts(c),
        },
        suppliers,
    }
}

/// A readable ranked table for the terminal.
pub fn render_text(rep: &ScreenReport) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let r = &rep.rows;
    let _ = writeln!(s, "rows read {}  analysed {}  excluded {}", r.read, r.analysed, r.excluded);
    for e in &r.exclusions {
        let _ = writeln!(s, "  excluded {:>8}  {}", e.count, e.description);
    }
    let _ = writeln!(s);
    let _ = writeln!(s, "{:<4} {:<36} {:>9} {:>16} {:>8} {:>9} {:>10}", "rank", "supplier", "invoices", "amount", "MAD", "chi2", "p-value");
    for (i, sp) in rep.suppliers.iter().enumerate() {
        let name: String = sp.name.chars().take(36).collect();
        let _ = writeln!(
            s,
            "{:<4} {:<36} {:>9} {:>16} {:>8.5} {:>9.1} {:>10.3e}",
            i + 1, name, sp.invoices, sp.amount_total.to_string(), sp.first_two.mad, sp.first_two.chi_square, sp.first_two.p_value
        );
    }
    let w = &rep.whole_file;
    let _ = writeln!(s, "{:<4} {:<36} {:>9} {:>16} {:>8.5} {:>9.1} {:>10.3e}", "", w.name, w.invoices, w.amount_total.to_string(), w.first_two.mad, w.first_two.chi_square, w.first_two.p_value);
    let _ = writeln!(s, "\nA digit deviation is a reason to look, not proof of wrongdoing. Do not accuse a supplier on it alone.");
    s
}
