//! The screen result: what every front end (CLI text/JSON, the page) shows. Assembles the digit
//! battery per supplier, for the whole file and for the credit notes, then (when asked) the
//! sample-size calibration and the false-alarm control across suppliers.

use crate::battery::{self, Battery, BatteryOptions};
use crate::intake::IntakeInfo;
use crate::ledger::{Accounting, Invoice, Ledger};
use crate::Amount;
use serde::Serialize;

#[derive(Clone, Debug, Default)]
pub struct ScreenOptions {
    pub battery: BatteryOptions,
}

/// One population's results: a supplier, the whole file, or the credit notes.
#[derive(Clone, Debug, Serialize)]
pub struct SupplierResult {
    /// Supplier id (index into the ledger's suppliers); u32::MAX for whole-file populations.
    pub id: u32,
    pub name: String,
    pub invoices: u64,
    pub amount_total: Amount,
    pub amount_min: Amount,
    pub amount_max: Amount,
    pub first_date: Option<String>,
    pub last_date: Option<String>,
    /// One object per test: first_digit, second_digit, first_two, first_three, last_two,
    /// summation, second_order, distortion, amount_checks.
    #[serde(flatten)]
    pub tests: Battery,
}

#[derive(Clone, Debug, Serialize)]
pub struct ScreenReport {
    pub rows: Accounting,
    pub intake: IntakeInfo,
    pub parameters: Parameters,
    pub whole_file: SupplierResult,
    /// Credit notes (negative amounts), screened as their own population.
    pub credit_notes: SupplierResult,
    /// Ranked: most deviating first.
    pub suppliers: Vec<SupplierResult>,
    pub caution: &'static str,
}

#[derive(Clone, Debug, Serialize)]
pub struct Parameters {
    pub tests: String,
    pub min_amount: Amount,
    pub approval_limits: Vec<Amount>,
}

pub const CAUTION: &str = "A deviation from Benford's law is a reason to look, not proof of wrongdoing. Many honest suppliers deviate for plain reasons (fixed price lists, subscriptions, regulated fees). Do not confront a supplier or an employee on this alone; follow professional auditing standards, the firm's policies, local law and counsel.";

pub fn population(id: u32, name: &str, invs: &[&Invoice], opts: &ScreenOptions) -> SupplierResult {
    let mut total = Amount::ZERO;
    let (mut lo, mut hi) = (Amount(i64::MAX), Amount(0));
    let (mut d0, mut d1) = (i32::MAX, i32::MIN);
    for inv in invs {
        total = total.saturating_add(inv.amount);
        lo = lo.min(inv.amount);
        hi = hi.max(inv.amount);
        if inv.date != crate::ledger::NO_DATE {
            d0 = d0.min(inv.date);
            d1 = d1.max(inv.date);
        }
    }
    if invs.is_empty() {
        lo = Amount::ZERO;
    }
    let date = |d: i32| (d != i32::MAX && d != i32::MIN).then(|| crate::intake::format_date(d));
    SupplierResult {
        id,
        name: name.to_string(),
        invoices: invs.len() as u64,
        amount_total: total,
        amount_min: lo,
        amount_max: hi,
        first_date: date(d0),
        last_date: date(d1),
        tests: battery::run(invs, &opts.battery),
    }
}

fn rank_key(s: &SupplierResult) -> f64 {
    s.tests
        .first_two
        .as_ref()
        .map(|t| t.mc_p_value.unwrap_or(t.p_value))
        .or_else(|| s.tests.first_digit.as_ref().map(|t| t.p_value))
        .unwrap_or(1.0)
}

pub fn screen(ledger: &Ledger, info: &IntakeInfo, min_amount: Amount, opts: &ScreenOptions) -> ScreenReport {
    let groups = ledger.by_supplier();
    let mut suppliers: Vec<SupplierResult> = groups
        .iter()
        .enumerate()
        .filter(|(_, g)| !g.is_empty())
        .map(|(sid, g)| {
            let invs: Vec<&Invoice> = g.iter().map(|&i| &ledger.invoices[i as usize]).collect();
            population(sid as u32, &ledger.suppliers[sid].name, &invs, opts)
        })
        .collect();
    suppliers.sort_by(|a, b| {
        rank_key(a)
            .partial_cmp(&rank_key(b))
            .unwrap_or(std::cmp::Ordering::Equal)
            .then(a.name.cmp(&b.name))
    });
    let all: Vec<&Invoice> = ledger.invoices.iter().collect();
    let credits: Vec<&Invoice> = ledger.credit_notes.iter().collect();
    ScreenReport {
        rows: ledger.accounting.clone(),
        intake: info.clone(),
        parameters: Parameters {
            tests: opts.battery.tests.to_string(),
            min_amount,
            approval_limits: opts.battery.approval_limits.clone(),
        },
        whole_file: population(u32::MAX, "(whole file)", &all, opts),
        credit_notes: population(u32::MAX, "(credit notes)", &credits, opts),
        suppliers,
        caution: CAUTION,
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
    let _ = writeln!(
        s,
        "{:<4} {:<34} {:>8} {:>15} {:>8} {:>9} {:>9} {:>8} {:>7}",
        "rank", "supplier", "invoices", "amount", "MAD 1-2", "p (chi2)", "p 1st", "DF %", "top amt"
    );
    let line = |s: &mut String, rank: String, sp: &SupplierResult| {
        let name: String = sp.name.chars().take(34).collect();
        let t = &sp.tests;
        let ft = t.first_two.as_ref();
        let _ = writeln!(
            s,
            "{:<4} {:<34} {:>8} {:>15} {:>8} {:>9} {:>9} {:>8} {:>7}",
            rank,
            name,
            sp.invoices,
            sp.amount_total.to_string(),
            ft.map_or("-".into(), |f| format!("{:.5}", f.mad)),
            ft.map_or("-".into(), |f| format!("{:.2e}", f.p_value)),
            t.first_digit.as_ref().map_or("-".into(), |f| format!("{:.2e}", f.p_value)),
            t.distortion.as_ref().map_or("-".into(), |d| format!("{:+.1}", d.distortion_factor_pct)),
            t.amount_checks.as_ref().and_then(|a| a.most_frequent.first()).map_or("-".into(), |f| format!("{:.1}%", f.share * 100.0)),
        );
    };
    for (i, sp) in rep.suppliers.iter().enumerate() {
        line(&mut s, format!("{}", i + 1), sp);
    }
    line(&mut s, String::new(), &rep.whole_file);
    if rep.credit_notes.invoices > 0 {
        line(&mut s, String::new(), &rep.credit_notes);
    }
    let _ = writeln!(s, "\nMAD 1-2: first-two digits mean absolute deviation; p (chi2): chi-square p-value, 89 df; p 1st: first digit; DF: distortion factor; top amt: share of the most frequent exact amount.");
    let _ = writeln!(s, "\n{}", rep.caution);
    s
}
