//! Intake properties:
//! - every split point of a small file (UTF-8 with multi-byte characters, UTF-16LE,
//!   Windows-1252; quoted fields with CRLF inside) gives the same result as one chunk;
//! - random ledgers written in every supported format round-trip to the same amounts to the
//!   cent, the same dates and the same supplier set (the writer below follows the published
//!   shapes: CLDR grouping/decimal conventions, RFC 4180 quoting, ISO 8601 dates, the WHATWG
//!   windows-1252 and Unicode UTF-16 encodings);
//! - arbitrary bytes fed in arbitrary chunks never panic and keep read = analysed + excluded
//!   (the same check as the cargo-fuzz target in crate/core/fuzz).

use digitdrift_core::intake::{civil_from_days, days_from_civil, preview, read_all, DateOrder, Intake, IntakeOptions};
use digitdrift_core::ledger::NO_DATE;
use proptest::prelude::*;

fn fingerprint(bytes: &[u8], chunks: &[usize]) -> String {
    let mut it = Intake::new(IntakeOptions::default());
    let mut start = 0;
    let mut rows_seen = 0;
    for &end in chunks.iter().chain(std::iter::once(&bytes.len())) {
        if let Err(e) = it.feed(&bytes[start..end]) {
            return format!("error {e}");
        }
        assert!(it.rows_so_far() >= rows_seen, "rows_so_far never goes back");
        rows_seen = it.rows_so_far();
        start = end;
    }
    assert_eq!(it.bytes_fed(), bytes.len() as u64);
    match it.finish() {
        Err(e) => format!("error {e}"),
        Ok(r) => format!(
            "{}\n{:?}\n{:?}\n{:?}\n{}",
            serde_json::to_string(&r.ledger.accounting).unwrap(),
            r.ledger.invoices,
            r.ledger.credit_notes,
            r.ledger.suppliers.iter().map(|s| &s.name).collect::<Vec<_>>(),
            serde_json::to_string(&r.info).unwrap()
        ),
    }
}

const SMALL: &str = "Bericht über Lieferanten\r\n\r\nLieferant;Beleg;Datum;Betrag\r\n\
\"Müller \"\"Süd\"\" GmbH\";\"R-1\r\nTeil 2\";07.03.2024;1.234,56 €\r\n\
Ærø Fisk ApS;R-2;08.03.2024;-89,10\r\n\
€uro Büro;R-3;09.03.2024;(12,00)\r\n\
\r\nSumme;;;1.133,46\r\nZoë Café;R-4;10.03.2024;99,99\r\n";

fn every_split(bytes: &[u8]) {
    let whole = fingerprint(bytes, &[]);
    assert!(!whole.starts_with("error"), "{whole}");
    for i in 0..=bytes.len() {
        assert_eq!(fingerprint(bytes, &[i]), whole, "split at byte {i}");
    }
}

#[test]
fn every_split_point_utf8() {
    let b = SMALL.as_bytes();
    every_split(b);
    // Two split points too (every pair in the first 120 bytes, then every 7th).
    let whole = fingerprint(b, &[]);
    for i in 0..b.len() {
        for j in (i..b.len()).step_by(if i < 120 { 1 } else { 7 }) {
            assert_eq!(fingerprint(b, &[i, j]), whole, "split at {i} and {j}");
        }
    }
    let r = read_all(b, &IntakeOptions::default()).unwrap();
    // Hand-checked: header on line 3; the quoted field spans lines 4-5; the blank line is 8,
    // the totals line 9 (the amounts above sum to 1234.56 - 89.10 - 12.00 = 1133.46).
    assert_eq!(r.info.header_line, 3);
    assert_eq!(r.ledger.invoices.iter().map(|i| i.line()).collect::<Vec<_>>(), vec![4, 10]);
    assert_eq!(r.ledger.credit_notes.iter().map(|i| i.line()).collect::<Vec<_>>(), vec![6, 7]);
    assert_eq!(r.ledger.accounting.read, 6);
    assert_eq!(r.ledger.suppliers[0].name, "Müller \"Süd\" GmbH");
}

#[test]
fn every_split_point_utf16le() {
    let mut b = vec![0xFF, 0xFE];
    for u in SMALL.encode_utf16() {
        b.extend_from_slice(&u.to_le_bytes());
    }
    every_split(&b);
    assert_eq!(fingerprint(&b, &[]).split('\n').next(), fingerprint(SMALL.as_bytes(), &[]).split('\n').next());
}

#[test]
fn every_split_point_cp1252() {
    let (b, _, unmappable) = encoding_rs::WINDOWS_1252.encode(SMALL);
    assert!(!unmappable);
    every_split(&b);
    let r = read_all(&b, &IntakeOptions::default()).unwrap();
    assert_eq!(r.info.encoding, "Windows-1252");
    // 0x80 is U+20AC in windows-1252 (WHATWG Encoding Standard index).
    assert!(r.ledger.suppliers.iter().any(|s| s.name == "€uro Büro"));
}

#[test]
fn preview_agrees_with_read_all() {
    let p = preview(SMALL.as_bytes(), &IntakeOptions::default()).unwrap();
    let r = read_all(SMALL.as_bytes(), &IntakeOptions::default()).unwrap();
    assert_eq!(p.mapping, r.info.mapping);
    assert_eq!(p.header_line, 3);
    assert_eq!(p.rows.len(), 6);
    assert_eq!(p.rows[0].amount.as_deref(), Some("1234.56"));
    assert_eq!(p.rows[0].date.as_deref(), Some("2024-03-07"));
    assert_eq!(p.rows[1].excluded, Some(digitdrift_core::ExclusionReason::CreditNote));
    assert_eq!(p.rows[4].excluded, Some(digitdrift_core::ExclusionReason::TotalsLine));
    // Ambiguity is flagged, not an error.
    let amb = "Supplier;Date;Amount\nA;03/04/2024;1,234\nB;05/06/2024;12,500\n";
    let p = preview(amb.as_bytes(), &IntakeOptions::default()).unwrap();
    assert!(p.decimal_ambiguous.is_some() && p.date_order_ambiguous.is_some());
    assert_eq!(p.rows[0].amount_readings, vec!["1234.00", "1.234"]);
    assert_eq!(p.rows[0].date_readings, vec!["2024-04-03", "2024-03-04"]);
    assert!(read_all(amb.as_bytes(), &IntakeOptions::default()).is_err());
}

// ---------- round trip ----------

#[derive(Debug, Clone)]
struct Fmt {
    delim: u8,
    comma: bool,
    grouping: u8, // 0 none, 1 separator, 2 space, 3 nbsp, 4 narrow nbsp, 5 apostrophe
    neg: u8,      // 0 -x, 1 (x), 2 x-, 3 x CR
    currency: u8, // 0 none, 1 "EUR " before, 2 " €" after
    date: u8,     // 0 iso, 1 dd.mm.yyyy, 2 dd/mm/yyyy, 3 mm/dd/yyyy, 4 serial
    enc: u8,      // 0 utf8, 1 utf8 bom, 2 utf16le, 3 utf16be, 4 windows-1252
    crlf: bool,
    quote_all: bool,
}

const NAMES: &[&str] = &["Acme Ltd", "Müller GmbH", "Smith, Jones & Co", "Ærø Fisk ApS", "O'Brien \"Tools\"", "Café Zoë", "Łódź Sp. z o.o."];

fn money(cents: i64, f: &Fmt) -> String {
    let a = cents.unsigned_abs();
    let (whole, frac) = (a / 100, a % 100);
    let digits = whole.to_string();
    let (gsep, dsep) = if f.comma { (".", ",") } else { (",", ".") };
    let g = match f.grouping {
        0 => "",
        1 => gsep,
        2 => " ",
        3 => "\u{a0}",
        4 => "\u{202f}",
        _ => if f.comma { " " } else { "'" },
    };
    let mut int = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            int.push_str(g);
        }
        int.push(c);
    }
    let core = format!("{int}{dsep}{frac:02}");
    let signed = if cents < 0 {
        match f.neg {
            0 => format!("-{core}"),
            1 => format!("({core})"),
            2 => format!("{core}-"),
            _ => format!("{core} CR"),
        }
    } else {
        core
    };
    match f.currency {
        1 => format!("EUR {signed}"),
        2 => format!("{signed} €"),
        _ => signed,
    }
}

fn date_text(days: i32, f: &Fmt) -> String {
    let (y, m, d) = civil_from_days(days);
    match f.date {
        0 => format!("{y:04}-{m:02}-{d:02}"),
        1 => format!("{d:02}.{m:02}.{y:04}"),
        2 => format!("{d:02}/{m:02}/{y:04}"),
        3 => format!("{m:02}/{d:02}/{y:04}"),
        _ => (days + 25569).to_string(),
    }
}

fn cell(s: &str, f: &Fmt) -> String {
    let d = f.delim as char;
    if f.quote_all || s.contains(d) || s.contains('"') || s.contains('\n') || s.contains('\r') {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn write(rows: &[(usize, i64, i32)], f: &Fmt) -> Vec<u8> {
    let d = (f.delim as char).to_string();
    let nl = if f.crlf { "\r\n" } else { "\n" };
    let mut t = ["Supplier", "Invoice No", "Invoice Date", "Amount"].map(|h| cell(h, f)).join(&d) + nl;
    for (i, (s, c, day)) in rows.iter().enumerate() {
        let r = [cell(NAMES[*s], f), cell(&format!("INV-{i}"), f), cell(&date_text(*day, f), f), cell(&money(*c, f), f)];
        t.push_str(&r.join(&d));
        t.push_str(nl);
    }
    match f.enc {
        0 => t.into_bytes(),
        1 => [b"\xEF\xBB\xBF".as_slice(), t.as_bytes()].concat(),
        2 => std::iter::once(0xFEFFu16).chain(t.encode_utf16()).flat_map(|u| u.to_le_bytes()).collect(),
        3 => std::iter::once(0xFEFFu16).chain(t.encode_utf16()).flat_map(|u| u.to_be_bytes()).collect(),
        _ => encoding_rs::WINDOWS_1252.encode(&t).0.into_owned(),
    }
}

fn fmt_strategy() -> impl Strategy<Value = Fmt> {
    (
        prop::sample::select(vec![b',', b';', b'\t', b'|']),
        any::<bool>(),
        0u8..6,
        0u8..4,
        0u8..3,
        0u8..5,
        0u8..5,
        any::<bool>(),
        any::<bool>(),
    )
        .prop_map(|(delim, comma, grouping, neg, currency, date, enc, crlf, quote_all)| Fmt {
            delim, comma, grouping, neg, currency, date, enc, crlf, quote_all,
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn round_trip(
        f in fmt_strategy(),
        rows in prop::collection::vec((0usize..NAMES.len(), 1000i64..2_000_000_000, 18000i32..22000, any::<bool>()), 1..40),
        chunk in 1usize..5000,
    ) {
        // Windows-1252 cannot write Ł: use the other names there.
        let rows: Vec<(usize, i64, i32)> = rows.iter().enumerate().map(|(i, &(s, c, d, neg))| {
            let s = if f.enc == 4 && NAMES[s].starts_with('Ł') { 0 } else { s };
            // The first row's day is the 25th, so day/month order is always decidable.
            let d = if i == 0 { let (y, m, _) = civil_from_days(d); days_from_civil(y, m, 25) } else { d };
            (s, if neg { -c } else { c }, d)
        }).collect();
        // Windows-1252 has no narrow no-break space (U+202F): it groups with U+00A0 there.
        let mut f = f;
        if f.enc == 4 && f.grouping == 4 { f.grouping = 3; }
        let bytes = write(&rows, &f);
        let mut it = Intake::new(IntakeOptions::default());
        for c in bytes.chunks(chunk) { it.feed(c).unwrap(); }
        let r = it.finish().unwrap_or_else(|e| panic!("{e}\n{}", String::from_utf8_lossy(&bytes)));
        let l = &r.ledger;
        prop_assert_eq!(l.accounting.read, rows.len() as u64);
        prop_assert_eq!(l.accounting.excluded as usize, l.credit_notes.len());
        let pos: Vec<i64> = rows.iter().filter(|r| r.1 > 0).map(|r| r.1 * 100).collect();
        let neg: Vec<i64> = rows.iter().filter(|r| r.1 < 0).map(|r| -r.1 * 100).collect();
        prop_assert_eq!(l.invoices.iter().map(|i| i.amount.0).collect::<Vec<_>>(), pos);
        prop_assert_eq!(l.credit_notes.iter().map(|i| i.amount.0).collect::<Vec<_>>(), neg);
        let dates: Vec<i32> = l.invoices.iter().chain(&l.credit_notes).map(|i| i.date).collect();
        let mut want_dates: Vec<i32> = rows.iter().filter(|r| r.1 > 0).map(|r| r.2).collect();
        want_dates.extend(rows.iter().filter(|r| r.1 < 0).map(|r| r.2));
        prop_assert_eq!(dates, want_dates);
        let mut got: Vec<&str> = l.suppliers.iter().map(|s| s.name.as_str()).collect();
        let mut want: Vec<&str> = rows.iter().map(|r| NAMES[r.0]).collect();
        got.sort(); want.sort(); want.dedup();
        prop_assert_eq!(got, want);
        if matches!(f.date, 1 | 2) { prop_assert_eq!(r.info.date_order, Some(DateOrder::Dmy)); }
        if f.date == 3 { prop_assert_eq!(r.info.date_order, Some(DateOrder::Mdy)); }
        prop_assert!(l.invoices.iter().all(|i| i.date != NO_DATE));
    }

    #[test]
    fn arbitrary_bytes_never_panic(data in prop::collection::vec(any::<u8>(), 0..3000), chunk in 1usize..700) {
        fuzz_like(&data, chunk);
    }

    #[test]
    fn mutated_ledgers_never_panic(pos in 0usize..200, byte in any::<u8>(), chunk in 1usize..300) {
        let mut d = SMALL.as_bytes().to_vec();
        let p = pos % d.len();
        d[p] = byte;
        fuzz_like(&d, chunk);
        d.truncate(p);
        fuzz_like(&d, chunk);
    }
}

fn fuzz_like(data: &[u8], chunk: usize) {
    let mut it = Intake::new(IntakeOptions::default());
    for c in data.chunks(chunk.max(1)) {
        if it.feed(c).is_err() {
            return;
        }
    }
    if let Ok(r) = it.finish() {
        assert!(r.ledger.accounting.is_consistent());
        assert_eq!(r.ledger.accounting.analysed as usize, r.ledger.invoices.len());
    }
    let _ = preview(data, &IntakeOptions::default());
}

// ---------- scanner vs the csv crate ----------

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    /// Records written by the `csv` crate (a general-purpose RFC 4180 implementation) are split
    /// into the same fields by our scanner, for any field text and any delimiter.
    #[test]
    fn scanner_matches_csv_crate(
        recs in prop::collection::vec(prop::collection::vec("[a-c ;,\t|\"\r\n€ü]{0,6}", 2..5), 1..8),
        d in prop::sample::select(vec![b',', b';', b'\t', b'|']),
        crlf in any::<bool>(),
    ) {
        let mut w = csv::WriterBuilder::new()
            .delimiter(d)
            .terminator(if crlf { csv::Terminator::CRLF } else { csv::Terminator::Any(b'\n') })
            .quote_style(csv::QuoteStyle::Necessary)
            .flexible(true)
            .from_writer(vec![]);
        for r in &recs { w.write_record(r).unwrap(); }
        let data = w.into_inner().unwrap();
        let sc = digitdrift_core::intake::scan::Scanner::new(d);
        let mut rec = digitdrift_core::intake::scan::Record::default();
        let mut pos = 0;
        let mut got: Vec<Vec<String>> = vec![];
        while pos < data.len() {
            match sc.scan(&data, pos, true, &mut rec) {
                digitdrift_core::intake::scan::Scan::Done { next, .. } => {
                    got.push(rec.fields().map(|f| String::from_utf8(f.to_vec()).unwrap()).collect());
                    pos = next;
                }
                digitdrift_core::intake::scan::Scan::More => unreachable!(),
            }
        }
        // (A record of one empty field is written as `""` and reads back as one empty field.)
        prop_assert_eq!(got, recs);
    }
}

/// Files larger than the 64 KiB sniff window: one chunk, chunks that end inside the window,
/// and chunks that straddle its end all give the same ledger.
#[test]
fn large_file_chunkings_agree() {
    let mut t = String::from("Lieferant;Beleg;Datum;Betrag\r\n");
    for i in 0..4000u32 {
        let name = ["\"Müller; Söhne\"", "Ærø", "\"Zoë \"\"Z\"\"\""][i as usize % 3];
        t.push_str(&format!("{name};\"R{i}\r\nx\";{:02}.03.2024;{}.{:03},{:02}\r\n", 1 + i % 28, 1 + i % 9, i % 1000, i % 100));
    }
    let b = t.as_bytes();
    assert!(b.len() > 100_000);
    let whole = fingerprint(b, &[]);
    assert!(!whole.starts_with("error"), "{whole}");
    for cuts in [vec![65535], vec![65536], vec![65537], vec![1000, 70000], vec![30000, 64000, 66000], vec![b.len() - 1]] {
        assert_eq!(fingerprint(b, &cuts), whole, "{cuts:?}");
    }
    let steps: Vec<usize> = (1..b.len()).step_by(4093).collect();
    assert_eq!(fingerprint(b, &steps), whole);
    let r = read_all(b, &IntakeOptions::default()).unwrap();
    assert_eq!(r.ledger.accounting.read, 4000);
    assert_eq!(r.ledger.suppliers.len(), 3);
    // Each record spans two physical lines: record k starts on line 2 + 2k.
    assert_eq!(r.ledger.invoices[3999].line(), 2 + 2 * 3999);
}
