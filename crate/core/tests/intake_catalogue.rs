//! Runs every file of tests/intake-catalogue/ (awkward or broken ledgers, all invented) and
//! compares the outcome with the `.expect` file beside it. The expected values were written
//! by hand from the rules each case names (totals summed with Python's `decimal` module by
//! tests/intake-catalogue/make_catalogue.py, independent of this crate's parser).
//!
//! `.expect` format: one `key: value` per line, `#` comments. Keys:
//! error, message_contains, encoding, delimiter, header_line, decimal, date_order,
//! mapping (1-based `supplier=1 amount=4 date=3 invoice=2`, `-` for none), read, analysed,
//! excluded, exclusion (repeatable, `reason count @ l1 l2 ...`; when any is given the list must
//! be complete), invoices (count), invoices_total, credit_notes (count), credit_total,
//! suppliers (count), supplier_names (`|`-separated, in order of first appearance),
//! invoice (repeatable, `line amount [date]`), warning_contains, chunked (feed size in bytes).

use digitdrift_core::intake::{format_date, DateOrder, DecimalConvention, Intake, IntakeOptions};
use digitdrift_core::Amount;
use std::path::{Path, PathBuf};

fn catalogue_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/intake-catalogue")
}

fn sum(v: impl Iterator<Item = Amount>) -> String {
    Amount(v.map(|a| a.0).sum()).to_string()
}

fn check_one(data_path: &Path, expect: &str) -> Vec<String> {
    let mut fails = Vec::new();
    let bytes = std::fs::read(data_path).unwrap();
    let mut kv: Vec<(String, String)> = Vec::new();
    for l in expect.lines() {
        let l = l.trim();
        if l.is_empty() || l.starts_with('#') {
            continue;
        }
        let (k, v) = l.split_once(':').unwrap_or_else(|| panic!("{}: bad line {l}", data_path.display()));
        kv.push((k.trim().to_string(), v.trim().to_string()));
    }
    let get = |k: &str| kv.iter().find(|(a, _)| a == k).map(|(_, v)| v.as_str());
    let all = |k: &str| kv.iter().filter(|(a, _)| a == k).map(|(_, v)| v.clone()).collect::<Vec<_>>();
    let mut opts = IntakeOptions::default();
    if let Some(d) = get("opt_decimal") {
        opts.decimal = Some(if d == "comma" { DecimalConvention::Comma } else { DecimalConvention::Point });
    }
    if let Some(d) = get("opt_date_order") {
        opts.date_order = Some(match d { "dmy" => DateOrder::Dmy, "mdy" => DateOrder::Mdy, _ => DateOrder::Ymd });
    }
    let chunk: usize = get("chunked").map_or(usize::MAX, |c| c.parse().unwrap());
    let mut it = Intake::new(opts);
    let mut res = Ok(());
    for c in bytes.chunks(chunk.min(bytes.len().max(1))) {
        res = it.feed(c);
        if res.is_err() {
            break;
        }
    }
    let out = res.and_then(|_| it.finish());
    let mut f = |ok: bool, what: String| {
        if !ok {
            fails.push(what);
        }
    };
    match (&out, get("error")) {
        (Err(e), Some(kind)) => {
            let j = serde_json::to_value(e).unwrap();
            f(j["kind"] == kind, format!("error kind {} != {kind}", j["kind"]));
            if let Some(m) = get("message_contains") {
                f(e.to_string().contains(m), format!("message '{e}' lacks '{m}'"));
            }
            return fails;
        }
        (Err(e), None) => {
            f(false, format!("unexpected error: {e}"));
            return fails;
        }
        (Ok(_), Some(kind)) => {
            f(false, format!("expected error {kind}, got a ledger"));
            return fails;
        }
        (Ok(_), None) => {}
    }
    let r = out.unwrap();
    let (l, info) = (&r.ledger, &r.info);
    let acc = &l.accounting;
    f(acc.is_consistent(), "accounting inconsistent".into());
    if let Some(v) = get("encoding") {
        f(info.encoding == v, format!("encoding {} != {v}", info.encoding));
    }
    if let Some(v) = get("delimiter") {
        let d = if v == "tab" { '\t' } else { v.chars().next().unwrap() };
        f(info.delimiter == d, format!("delimiter {:?} != {d:?}", info.delimiter));
    }
    if let Some(v) = get("header_line") {
        f(info.header_line.to_string() == v, format!("header_line {} != {v}", info.header_line));
    }
    if let Some(v) = get("decimal") {
        let d = serde_json::to_value(info.decimal).unwrap();
        f(d == v, format!("decimal {d} != {v}"));
    }
    if let Some(v) = get("date_order") {
        let d = serde_json::to_value(info.date_order).unwrap();
        let d = d.as_str().unwrap_or("-");
        f(d == v, format!("date_order {d} != {v}"));
    }
    if let Some(v) = get("mapping") {
        let m = &info.mapping;
        let o = |c: Option<usize>| c.map_or("-".to_string(), |c| (c + 1).to_string());
        let got = format!("supplier={} amount={} date={} invoice={}", m.supplier + 1, m.amount + 1, o(m.date), o(m.invoice));
        f(got == v, format!("mapping {got} != {v}"));
    }
    for (k, n) in [("read", acc.read), ("analysed", acc.analysed), ("excluded", acc.excluded)] {
        if let Some(v) = get(k) {
            f(n.to_string() == v, format!("{k} {n} != {v}"));
        }
    }
    let ex = all("exclusion");
    if !ex.is_empty() || get("excluded") == Some("0") {
        let got: Vec<String> = acc
            .exclusions
            .iter()
            .map(|e| {
                let rows: Vec<String> = e.rows.iter().map(|r| r.to_string()).collect();
                format!("{} {} @ {}", serde_json::to_value(e.reason).unwrap().as_str().unwrap(), e.count, rows.join(" "))
            })
            .collect();
        let mut want = ex.clone();
        want.sort();
        let mut g2 = got.clone();
        g2.sort();
        f(g2 == want, format!("exclusions {got:?} != {ex:?}"));
    }
    if let Some(v) = get("invoices") {
        f(l.invoices.len().to_string() == v, format!("invoices {} != {v}", l.invoices.len()));
    }
    if let Some(v) = get("credit_notes") {
        f(l.credit_notes.len().to_string() == v, format!("credit_notes {} != {v}", l.credit_notes.len()));
    }
    if let Some(v) = get("invoices_total") {
        let s = sum(l.invoices.iter().map(|i| i.amount));
        f(s == v, format!("invoices_total {s} != {v}"));
    }
    if let Some(v) = get("credit_total") {
        let s = sum(l.credit_notes.iter().map(|i| i.amount));
        f(s == v, format!("credit_total {s} != {v}"));
    }
    if let Some(v) = get("suppliers") {
        f(l.suppliers.len().to_string() == v, format!("suppliers {} != {v}", l.suppliers.len()));
    }
    if let Some(v) = get("supplier_names") {
        let got: Vec<&str> = l.suppliers.iter().map(|s| s.name.as_str()).collect();
        let want: Vec<&str> = v.split('|').map(|s| s.trim()).collect();
        f(got == want, format!("supplier_names {got:?} != {want:?}"));
    }
    for inv in all("invoice") {
        let p: Vec<&str> = inv.split_whitespace().collect();
        let line: u32 = p[0].parse().unwrap();
        match l.invoices.iter().chain(l.credit_notes.iter()).find(|i| i.line() == line) {
            None => f(false, format!("no invoice at line {line}")),
            Some(i) => {
                let a = i.amount;
                f(a.to_string() == p[1], format!("line {line}: amount {} != {}", a, p[1]));
                if let Some(d) = p.get(2) {
                    let got = format_date(i.date);
                    let got = if got.is_empty() { "-".to_string() } else { got };
                    f(got == *d, format!("line {line}: date {got} != {d}"));
                }
            }
        }
    }
    for w in all("warning_contains") {
        f(info.warnings.iter().any(|x| x.contains(&w)), format!("no warning containing '{w}' in {:?}", info.warnings));
    }
    fails
}

#[test]
fn catalogue() {
    let dir = catalogue_dir();
    let mut cases: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "expect"))
        .collect();
    cases.sort();
    assert!(cases.len() >= 40, "catalogue has {} cases", cases.len());
    let mut failures = Vec::new();
    for exp in &cases {
        let stem = exp.file_stem().unwrap().to_str().unwrap();
        let data = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .find(|p| p.file_stem().unwrap().to_str() == Some(stem) && p.extension().is_some_and(|e| e != "expect"))
            .unwrap_or_else(|| panic!("no data file for {stem}"));
        let fails = check_one(&data, &std::fs::read_to_string(exp).unwrap());
        for x in fails {
            failures.push(format!("{stem}: {x}"));
        }
    }
    assert!(failures.is_empty(), "{} failures:\n{}", failures.len(), failures.join("\n"));
}
