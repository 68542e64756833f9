//! Working-paper exports: CSV of supplier results and of the invoices to pull, and the file
//! fingerprint. Byte-identical for the same file, settings and seed (fixed column order, fixed
//! number formatting, `\r\n` line ends as RFC 4180 specifies).
//!
//! Every text cell is neutralised against spreadsheet formula injection: a cell starting with
//! `=`, `+`, `-`, `@`, tab or carriage return gets a leading apostrophe (the guidance of the
//! OWASP "CSV Injection" page — from memory), then RFC 4180 quoting is applied.

use crate::report::{ScreenReport, CAUTION};
use sha2::{Digest, Sha256};

/// Incremental SHA-256 of the ledger file as read (hex, lower case).
#[derive(Clone, Default)]
pub struct Fingerprint(Sha256);

impl Fingerprint {
    pub fn new() -> Fingerprint {
        Fingerprint(Sha256::new())
    }
    pub fn update(&mut self, bytes: &[u8]) {
        self.0.update(bytes);
    }
    pub fn hex(&self) -> String {
        let d = self.0.clone().finalize();
        d.iter().map(|b| format!("{b:02x}")).collect()
    }
}

/// One CSV cell: formula-neutralised, then quoted when needed.
pub fn cell(s: &str) -> String {
    let neutral = match s.chars().next() {
        Some('=' | '+' | '-' | '@' | '\t' | '\r') => format!("'{s}"),
        _ => s.to_string(),
    };
    if neutral.contains([',', '"', '\n', '\r']) || neutral.starts_with(' ') || neutral.ends_with(' ') {
        format!("\"{}\"", neutral.replace('"', "\"\""))
    } else {
        neutral
    }
}

/// A number cell: written as is (numbers are not text, so a negative number stays a number).
pub(crate) fn num(x: f64, decimals: usize) -> String {
    if x.is_finite() { format!("{x:.decimals$}") } else { String::new() }
}

pub(crate) fn row(out: &mut String, cells: &[String]) {
    out.push_str(&cells.join(","));
    out.push_str("\r\n");
}

/// Supplier results, ranked as in the report.
pub fn suppliers_csv(rep: &ScreenReport, file_name: &str, sha256: &str) -> String {
    let mut out = String::new();
    row(&mut out, &[cell("# digitdrift supplier results"), cell(&format!("file: {file_name}")), cell(&format!("sha256: {sha256}"))]);
    if let Some(c) = &rep.calibration {
        row(&mut out, &[cell(&format!("# confidence {} seed {} simulations {} correction {:?}", c.confidence, c.seed, c.sims, c.correction))]);
    }
    row(&mut out, &[cell(&format!("# {CAUTION}"))]);
    row(
        &mut out,
        &[
            "rank", "supplier", "verdict", "invoices", "amount_total", "first_two_mad", "mad_limit_at_size", "simulated_p", "corrected_p",
            "chi_square", "chi_square_p", "first_digit_p", "distortion_factor_pct", "invoices_needed",
        ]
        .map(String::from),
    );
    for (i, s) in rep.suppliers.iter().enumerate() {
        let ft = s.tests.first_two.as_ref();
        let cal = s.calibration.as_ref();
        row(
            &mut out,
            &[
                (i + 1).to_string(),
                cell(&s.name),
                cell(match s.verdict {
                    Some(crate::calibrate::Verdict::Deviates) => "deviates",
                    Some(crate::calibrate::Verdict::Consistent) => "consistent",
                    Some(crate::calibrate::Verdict::TooFew) => "too_few",
                    None => "",
                }),
                s.invoices.to_string(),
                s.amount_total.to_string(),
                ft.map_or(String::new(), |f| num(f.mad, 6)),
                cal.map_or(String::new(), |c| num(c.mad_critical, 6)),
                cal.map_or(String::new(), |c| format!("{:.6e}", c.mc_p_value)),
                cal.and_then(|c| c.adjusted_p_value).map_or(String::new(), |p| format!("{p:.6e}")),
                ft.map_or(String::new(), |f| num(f.chi_square, 3)),
                ft.map_or(String::new(), |f| format!("{:.6e}", f.p_value)),
                s.tests.first_digit.as_ref().map_or(String::new(), |f| format!("{:.6e}", f.p_value)),
                s.tests.distortion.as_ref().map_or(String::new(), |d| num(d.distortion_factor_pct, 3)),
                cal.and_then(|c| c.invoices_needed).map_or(String::new(), |n| n.to_string()),
            ],
        );
    }
    out
}

/// One invoice on the pull list.
#[derive(Clone, Debug, serde::Deserialize, serde::Serialize)]
pub struct PullItem {
    pub supplier: String,
    pub line: u64,
    pub date: String,
    pub amount: String,
    pub reason: String,
}

/// The invoices to pull, with the reason each was selected, sorted by supplier then line.
pub fn pull_csv(items: &[PullItem], file_name: &str, sha256: &str) -> String {
    let mut v: Vec<&PullItem> = items.iter().collect();
    v.sort_by(|a, b| a.supplier.cmp(&b.supplier).then(a.line.cmp(&b.line)).then(a.reason.cmp(&b.reason)));
    let mut out = String::new();
    row(&mut out, &[cell("# digitdrift invoices to pull"), cell(&format!("file: {file_name}")), cell(&format!("sha256: {sha256}"))]);
    row(&mut out, &[cell(&format!("# {CAUTION}"))]);
    row(&mut out, &["supplier", "line", "date", "amount", "reason"].map(String::from));
    for p in v {
        row(&mut out, &[cell(&p.supplier), p.line.to_string(), cell(&p.date), cell(&p.amount), cell(&p.reason)]);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formulas_are_neutralised() {
        // OWASP CSV injection guidance (from memory): prefix cells starting with = + - @ tab CR.
        assert_eq!(cell("=HYPERLINK(\"x\")"), "\"'=HYPERLINK(\"\"x\"\")\"");
        assert_eq!(cell("+1"), "'+1");
        assert_eq!(cell("-2+3"), "'-2+3");
        assert_eq!(cell("@SUM(A1)"), "'@SUM(A1)");
        assert_eq!(cell("\tx"), "'\tx");
        assert_eq!(cell("\rx"), "\"'\rx\"");
        assert_eq!(cell("Acme, Ltd"), "\"Acme, Ltd\"");
        assert_eq!(cell("plain"), "plain");
    }

    #[test]
    fn sha256_known_vector() {
        // FIPS 180-2, appendix B.3: SHA-256 of one million "a", fed in uneven pieces.
        let mut f = Fingerprint::new();
        let data = vec![b'a'; 1_000_000];
        for piece in data.chunks(65_537) {
            f.update(piece);
        }
        assert_eq!(f.hex(), "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
    }
}
