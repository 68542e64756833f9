//! The demo ledger must not change by accident: the generator's output is pinned by a hash of
//! its first 1,000 lines, compared byte for byte with the checked-in CSV, and its true story must
//! match the table in demo-files/README.md.

use digitdrift_demo_gen::{civil_from_days, days_from_civil, fnv1a64, generate, truth_markdown, Twist, HEADER};
use std::path::PathBuf;

fn repo_file(rel: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..").join(rel)
}

fn first_lines(csv: &[u8], n: usize) -> &[u8] {
    let mut seen = 0;
    for (i, &b) in csv.iter().enumerate() {
        if b == b'\n' {
            seen += 1;
            if seen == n {
                return &csv[..=i];
            }
        }
    }
    csv
}

/// Pinned when the ledger was last regenerated on purpose (cross-checked with an independent
/// FNV-1a in Python over the checked-in file). If you change the generator
/// deliberately, regenerate the CSV, update this value and the README table.
const FIRST_1000_LINES_FNV1A: u64 = 0x43f0_af38_34be_bcd3;

#[test]
fn first_thousand_lines_are_pinned() {
    let l = generate();
    let h = fnv1a64(first_lines(&l.csv, 1000));
    assert_eq!(h, FIRST_1000_LINES_FNV1A, "generator output changed: first 1,000 lines hash {h:#018x}");
}

#[test]
fn generation_is_repeatable_in_process() {
    assert!(generate().csv == generate().csv);
}

#[test]
fn checked_in_csv_matches_the_generator() {
    let path = repo_file("demo-files/heathervale-vet-ledger.csv");
    let Ok(have) = std::fs::read(&path) else {
        eprintln!("{} not present: whole-file check skipped", path.display());
        return;
    };
    let want = generate().csv;
    assert!(have == want, "{} differs from the generator output; run `cargo run -p digitdrift-demo-gen --release -- demo-files/heathervale-vet-ledger.csv`", path.display());
}

#[test]
fn readme_tells_the_generated_story() {
    let path = repo_file("demo-files/README.md");
    let Ok(readme) = std::fs::read_to_string(&path) else {
        panic!("{} missing", path.display());
    };
    let truth = truth_markdown(&generate());
    assert!(readme.contains(&truth), "the table in {} is out of date; paste the output of `demo-gen --truth`:\n{truth}", path.display());
}

#[test]
fn file_shape_is_a_simple_export() {
    let l = generate();
    assert!(l.csv.len() < 10_500_000, "CSV too large: {} bytes", l.csv.len());
    let text = std::str::from_utf8(&l.csv).expect("UTF-8");
    let mut lines = text.split_terminator('\n');
    assert_eq!(lines.next(), Some(HEADER));
    let (lo, hi) = (days_from_civil(2021, 1, 1), days_from_civil(2025, 12, 31));
    let (mut rows, mut blanks, mut neg, mut zero, mut small) = (0u64, 0u64, 0u64, 0u64, 0u64);
    for line in lines {
        if line.is_empty() {
            blanks += 1;
            continue;
        }
        rows += 1;
        let f: Vec<&str> = line.split(',').collect();
        assert_eq!(f.len(), 6, "{line}");
        // ISO date inside the five years.
        let d: Vec<u32> = f[2].split('-').map(|x| x.parse().unwrap()).collect();
        let day = days_from_civil(d[0] as i32, d[1], d[2]);
        assert_eq!(civil_from_days(day), (d[0] as i32, d[1], d[2]), "{line}");
        assert!((lo..=hi).contains(&day), "{line}");
        // Decimal point, exactly two decimals, no thousands separator.
        let a = f[5];
        let (whole, cents) = a.split_once('.').expect(line);
        assert_eq!(cents.len(), 2, "{line}");
        assert!(whole.trim_start_matches('-').bytes().all(|b| b.is_ascii_digit()), "{line}");
        let p: i64 = format!("{whole}{cents}").parse().unwrap();
        match p {
            p if p < 0 => neg += 1,
            0 => zero += 1,
            1..=999 => small += 1,
            _ => {}
        }
    }
    assert_eq!(rows, l.data_rows);
    assert_eq!((blanks, neg, zero, small), (l.messy.blank_lines, l.messy.credit_notes, l.messy.zero_amounts, l.messy.below_ten));
    assert!((130_000..=160_000).contains(&rows), "{rows} rows");
    // Messy rows stay rare (common practice for a demo, no source).
    assert!(neg + zero + small + blanks < 100);
}

#[test]
fn fabrications_are_where_the_story_says() {
    let l = generate();
    let text = std::str::from_utf8(&l.csv).unwrap();
    assert_eq!(l.fabrications.len(), 3);
    for f in &l.fabrications {
        let rows: Vec<(&str, i64)> = text
            .lines()
            .filter(|r| r.starts_with(&format!("{},", f.supplier)))
            .map(|r| {
                let v: Vec<&str> = r.split(',').collect();
                (v[2], v[5].replace('.', "").parse().unwrap())
            })
            .collect();
        assert_eq!(rows.len() as u64, f.supplier_invoices, "{}", f.supplier);
        match f.twist {
            Twist::FakeSupplier => {
                assert_eq!(f.fabricated_invoices, f.supplier_invoices);
                assert_eq!(rows.iter().map(|r| r.1).sum::<i64>(), f.fabricated_total);
                assert!(rows.iter().all(|r| r.0 >= f.first.as_str()));
            }
            Twist::BelowLimit { from, low, limit, .. } => {
                let from = format!("{:04}-{:02}-{:02}", from.0, from.1, from.2);
                let band = |r: &&(&str, i64)| r.1 >= low && r.1 < limit;
                // Genuine invoices can land in the band too, so the band holds at least the
                // fabricated ones after the date.
                let after = rows.iter().filter(|r| r.0 >= from.as_str()).filter(band).count() as u64;
                assert!(after >= f.fabricated_invoices);
                let before = rows.iter().filter(|r| r.0 < from.as_str()).filter(band).count() as u64;
                assert!(before * 10 < f.fabricated_invoices, "band already crowded before the date: {before}");
            }
            Twist::Padding { share, .. } => {
                let frac = f.fabricated_invoices as f64 / rows.iter().filter(|r| r.0 >= f.first.as_str()).count() as f64;
                assert!((frac - share as f64 / 1000.0).abs() < 0.05, "padding share {frac}");
                let (lo, hi) = f.range.unwrap();
                assert!(lo < hi);
            }
            Twist::None => unreachable!(),
        }
    }
}
