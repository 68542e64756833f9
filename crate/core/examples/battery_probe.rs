//! Probe for the reference tests (tests/reference/test_battery*.py): runs the battery on data
//! from stdin and prints JSON.
//!
//!   battery_probe amounts [--tests LIST] [--limit AMOUNT]... [--last-two cents|whole_units]
//!       stdin: one invoice per line, `amount[,supplier[,date_days[,invoice_number]]]`
//!       (amount as decimal text, up to 4 decimals and 14 whole digits; supplier a number; date
//!       in days since 1970-01-01; blank lines and lines starting with '#' are skipped; any
//!       other unreadable amount is an error)
//!   battery_probe counts TEST        stdin: JSON array of bin counts; TEST one of first_digit,
//!       second_digit, first_two, first_three, last_two, second_order
//!   battery_probe binom K N P        prints P(X >= K) for X ~ binomial(N, P)
//!   battery_probe normal Z           prints the two-sided normal p-value of Z
//!   battery_probe bins TEST BIN      stdin as for `amounts`; prints bin_members as JSON

use digitdrift_core::battery::{self, BatteryOptions, DigitTest, TestSet};
use digitdrift_core::ledger::{fnv1a, Invoice, NO_DATE};
use digitdrift_core::{benford, stats, Amount};
use std::io::Read;

fn parse_amount(s: &str) -> Option<Amount> {
    let s = s.trim();
    let (neg, body) = match s.strip_prefix('-') {
        Some(b) => (true, b),
        None => (false, s),
    };
    let (w, f) = body.split_once('.').unwrap_or((body, ""));
    if w.is_empty() && f.is_empty() {
        return None;
    }
    if !w.bytes().all(|b| b.is_ascii_digit()) || !f.bytes().all(|b| b.is_ascii_digit()) || f.len() > 4 {
        return None;
    }
    let whole: i64 = if w.is_empty() { 0 } else { w.parse().ok()? };
    let frac: i64 = if f.is_empty() { 0 } else { f.parse::<i64>().ok()? * 10i64.pow(4 - f.len() as u32) };
    let v = whole.checked_mul(10_000)?.checked_add(frac)?;
    Some(Amount(if neg { -v } else { v }))
}

fn read_invoices(text: &str) -> Vec<Invoice> {
    let mut out = Vec::new();
    for (ln, line) in text.lines().enumerate() {
        let mut cells = line.split(',');
        if line.trim().is_empty() || line.starts_with('#') {
            continue;
        }
        let Some(a) = cells.next().and_then(parse_amount) else {
            eprintln!("line {}: amount not readable (or beyond the exact range): {line}", ln + 1);
            std::process::exit(1);
        };
        let supplier = cells.next().and_then(|s| s.trim().parse().ok()).unwrap_or(0);
        let date = cells.next().and_then(|s| s.trim().parse().ok()).unwrap_or(NO_DATE);
        let invoice_hash = cells.next().map(|s| s.trim()).filter(|s| !s.is_empty()).map_or(0, |s| fnv1a(s.as_bytes()));
        out.push(Invoice::new(a, invoice_hash, supplier, date, ln as u64 + 1));
    }
    out
}

fn stdin() -> String {
    let mut s = String::new();
    std::io::stdin().read_to_string(&mut s).expect("stdin");
    s
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let cmd = args.first().map(String::as_str).unwrap_or("");
    match cmd {
        "amounts" | "bins" => {
            let mut opts = BatteryOptions::default();
            let mut rest = Vec::new();
            let mut i = 1;
            while i < args.len() {
                match args[i].as_str() {
                    "--tests" => {
                        opts.tests = args[i + 1].parse::<TestSet>().unwrap_or_else(|e| panic!("{e}"));
                        i += 1;
                    }
                    "--limit" => {
                        opts.approval_limits.push(parse_amount(&args[i + 1]).expect("limit"));
                        i += 1;
                    }
                    "--last-two" => {
                        opts.last_two_basis = args[i + 1].parse().unwrap();
                        i += 1;
                    }
                    other => rest.push(other.to_string()),
                }
                i += 1;
            }
            let inv = read_invoices(&stdin());
            let refs: Vec<&Invoice> = inv.iter().collect();
            if cmd == "amounts" {
                let b = battery::run(&refs, &opts);
                println!("{}", serde_json::to_string(&b).unwrap());
            } else {
                let bin: u32 = rest[1].parse().unwrap();
                let m = battery::bin_members_with(&rest[0], bin, &refs, &opts);
                println!("{}", serde_json::to_string(&m).unwrap());
            }
        }
        "counts" => {
            let test = args.get(1).expect("test name").as_str();
            let counts: Vec<u64> = serde_json::from_str(&stdin()).expect("JSON array of counts");
            let (name, first, exp): (&'static str, u32, Vec<f64>) = match test {
                "first_digit" => ("first_digit", 1, benford::first_digit()),
                "second_digit" => ("second_digit", 0, benford::second_digit()),
                "first_two" => ("first_two", 10, benford::first_two()),
                "first_three" => ("first_three", 100, benford::first_three()),
                "second_order" => ("second_order", 10, benford::first_two()),
                "last_two" => ("last_two", 0, vec![0.01; 100]),
                _ => panic!("unknown test {test}"),
            };
            let t = DigitTest::from_counts(name, first, counts, exp);
            println!("{}", serde_json::to_string(&t).unwrap());
        }
        "binom" => {
            let k: u64 = args[1].parse().unwrap();
            let n: u64 = args[2].parse().unwrap();
            let p: f64 = args[3].parse().unwrap();
            println!("{}", stats::binom_sf_ge(k, n, p));
        }
        "normal" => {
            let z: f64 = args[1].parse().unwrap();
            println!("{}", stats::normal_two_sided(z));
        }
        _ => {
            eprintln!("usage: battery_probe amounts|bins|counts|binom|normal ...");
            std::process::exit(2);
        }
    }
}
