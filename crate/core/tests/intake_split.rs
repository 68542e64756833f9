//! A file read on two threads in segments (`intake::read_split`) gives exactly what one pass of
//! `Intake::feed` gives: the same suppliers (ids, names, keys), invoices and credit notes (every
//! field, line numbers included), row accounting with its example rows, file settings and
//! warnings, or the same error. The reference is the crate's own one-pass intake, itself
//! checked against hand-written expectations (tests/intake_catalogue.rs); here every case of
//! that catalogue is made long enough to be cut (repeated end to end) and cut at several
//! segment sizes, and a generated ledger with awkward rows on both sides of every cut is read
//! with and without the features that must send the rest of the file through in turn.

use digitdrift_core::intake::{read_split, read_split_parts, Intake, IntakeOptions, IntakeResult, SplitStats};
use std::path::Path;

fn one_pass(bytes: &[u8], opts: &IntakeOptions) -> Result<IntakeResult, String> {
    let mut it = Intake::new(opts.clone());
    it.set_size_hint(bytes.len() as u64);
    for c in bytes.chunks(1 << 20) {
        if let Err(e) = it.feed(c) {
            return Err(e.to_string());
        }
    }
    it.finish().map_err(|e| e.to_string())
}

/// Everything a result holds, as text.
fn show(r: &Result<IntakeResult, String>) -> String {
    match r {
        Ok(r) => format!("{:?}\n{}", r.ledger, serde_json::to_string(&r.info).unwrap()),
        Err(e) => format!("error: {e}"),
    }
}

/// Read in segments: `parts` joins every segment after the first (none fed directly).
fn split(bytes: &[u8], opts: &IntakeOptions, segment: u64, parts: bool) -> (Result<IntakeResult, String>, SplitStats) {
    let read = if parts { read_split_parts::<[u8], bool> } else { read_split::<[u8], bool> };
    let (r, ran) = read(bytes, opts.clone(), segment, || true);
    assert!(ran, "the other thread's first job ran");
    match r {
        Ok((r, s)) => (Ok(r), s),
        Err(e) => (Err(e.to_string()), SplitStats::default()),
    }
}

/// Both ways of reading in segments equal one pass; the stats of the all-parts way.
fn same(bytes: &[u8], opts: &IntakeOptions, segment: u64, what: &str) -> SplitStats {
    let want = show(&one_pass(bytes, opts));
    let mut out = SplitStats::default();
    for parts in [false, true] {
        let (got, stats) = split(bytes, opts, segment, parts);
        let got = show(&got);
        if got != want {
            let at = got.bytes().zip(want.bytes()).position(|(a, b)| a != b).unwrap_or(0);
            panic!(
                "{what}, segment {segment}, all parts {parts}: split read differs at char {at} ({stats:?})\n split: {}\n whole: {}",
                &got[at.saturating_sub(200)..(at + 200).min(got.len())],
                &want[at.saturating_sub(200)..(at + 200).min(want.len())]
            );
        }
        out = stats;
    }
    out
}

/// A small deterministic generator (SplitMix64).
struct Mix(u64);
impl Mix {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
}

/// An invented ledger of `rows` rows with rows the intake excludes or treats specially spread
/// through it: blank lines, ragged rows, a repeated header, totals rows named as such, zero and
/// unreadable amounts, credit notes, amounts below the minimum, unreadable dates, quoted names
/// with commas, supplier spellings that differ in case and spaces, and (when asked) quoted
/// cells holding line breaks, rows without a supplier and CRLF line ends.
fn ledger(rows: usize, seed: u64, quoted_breaks: bool, no_supplier: bool, crlf: bool) -> Vec<u8> {
    let mut g = Mix(seed);
    let nl = if crlf { "\r\n" } else { "\n" };
    let mut s = format!("Supplier,Invoice No,Date,Amount{nl}");
    let names = ["Alder Feed Co", "alder  feed co", "Birch & Sons", "\"Cobalt, Ltd\"", "Dunmore Lab Supplies", "Eskdale Pharma", "FERN VALE TRANSPORT", "Fern Vale Transport"];
    for i in 0..rows {
        let k = g.below(1000);
        let name = if k < 40 { format!("Supplier {}", g.below(3000)) } else { names[g.below(names.len() as u64) as usize].to_string() };
        let day = 1 + g.below(28);
        let month = 1 + g.below(12);
        let amount = format!("{}.{:02}", 1 + g.below(50_000), g.below(100));
        let line = match k {
            0..=2 => String::new(),
            3..=4 => format!("{name},N{i}"),
            5 => "Supplier,Invoice No,Date,Amount".to_string(),
            6..=7 => format!("Total,,,{amount}"),
            8 => format!("{name},N{i},2024-{month:02}-{day:02},0.00"),
            9 => format!("{name},N{i},2024-{month:02}-{day:02},n/a"),
            10..=30 => format!("{name},N{i},2024-{month:02}-{day:02},-{amount}"),
            31..=33 => format!("{name},N{i},2024-{month:02}-{day:02},0.{:02}", 1 + g.below(90)),
            34..=35 => format!("{name},N{i},sometime,{amount}"),
            36..=38 if quoted_breaks => format!("\"{name}{nl}(branch {})\",N{i},2024-{month:02}-{day:02},{amount}", g.below(9)),
            39 if no_supplier => format!(",N{i},2024-{month:02}-{day:02},{amount}"),
            _ => format!("{name},N{i},2024-{month:02}-{day:02},{amount}"),
        };
        s.push_str(&line);
        s.push_str(nl);
    }
    s.into_bytes()
}

/// Generated ledgers cut at several sizes: the parts are joined (and a run of joined parts is
/// not all the file went through) unless a cut falls inside a quoted line break or a part holds
/// a row without a supplier, when the rest is read in turn; every result equals one pass.
#[test]
fn generated_ledgers_read_in_segments_equal_one_pass() {
    let opts = IntakeOptions::default();
    for seed in 1..=3u64 {
        let plain = ledger(40_000, seed, false, false, seed == 2);
        for segment in [64 << 10, 100_000, 257_123] {
            let st = same(&plain, &opts, segment, &format!("plain seed {seed}"));
            assert!(st.segments > 4, "{st:?}");
            assert_eq!(st.in_turn_from, None, "seed {seed} segment {segment}: {st:?}");
            assert_eq!(st.joined, st.segments - 1, "seed {seed} segment {segment}: {st:?}");
        }
        let awkward = ledger(40_000, seed + 10, true, false, seed == 3);
        for segment in [64 << 10, 77_777, 100_000, 131_073] {
            same(&awkward, &opts, segment, &format!("quoted line breaks seed {seed}"));
        }
        // a cut placed on a line break inside a quoted cell: the part after it cannot be
        // joined (the intake before it ends inside a record), so the rest is read in turn
        let inner = awkward.windows(9).enumerate().skip(70_000).find(|(_, w)| &w[1..] == b"(branch " && w[0] == b'\n').map(|(p, _)| p as u64).expect("a quoted line break");
        let st = same(&awkward, &opts, inner, &format!("cut in a quoted cell, seed {seed}"));
        assert_eq!(st.in_turn_from, Some(1), "{st:?}");
        let sums = ledger(40_000, seed + 20, false, true, false);
        let st = same(&sums, &opts, 64 << 10, &format!("no-supplier rows seed {seed}"));
        assert!(st.in_turn_from.is_some(), "{st:?}");
    }
}

/// The options that change how rows are read hold in every part.
#[test]
fn options_hold_in_every_segment() {
    let bytes = ledger(30_000, 7, false, false, false);
    let o = IntakeOptions { min_amount: digitdrift_core::intake::parse_amount_simple("25.00").unwrap(), ..IntakeOptions::default() };
    same(&bytes, &o, 64 << 10, "minimum 25");
    let o = IntakeOptions { supplier: Some("Invoice No".into()), ..IntakeOptions::default() };
    same(&bytes, &o, 90_000, "supplier column named");
}

/// Every catalogue case (awkward encodings, delimiters, preambles, decimal commas, ambiguous
/// dates, broken files), repeated end to end until it is long enough to cut, gives the same
/// result or error read in segments as in one pass.
#[test]
fn catalogue_cases_repeated_read_in_segments_equal_one_pass() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/intake-catalogue");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x != "expect" && x != "py" && x != "md"))
        .collect();
    files.sort();
    assert!(files.len() >= 20, "catalogue found: {}", files.len());
    let mut joined = 0;
    for f in &files {
        let one = std::fs::read(f).unwrap();
        if one.is_empty() {
            continue;
        }
        let mut big = Vec::new();
        while big.len() < 400_000 {
            big.extend_from_slice(&one);
        }
        for segment in [64 << 10, 99_991] {
            let st = same(&big, &IntakeOptions::default(), segment, &f.display().to_string());
            joined += st.joined;
        }
    }
    assert!(joined > 0);
}

/// Read from a file on disk (positioned reads, as the CLI does) the same as from memory.
#[cfg(unix)]
#[test]
fn file_on_disk_reads_as_in_memory() {
    let bytes = ledger(30_000, 5, false, false, false);
    let path = std::env::temp_dir().join(format!("digitdrift-split-{}.csv", std::process::id()));
    std::fs::write(&path, &bytes).unwrap();
    let f = std::fs::File::open(&path).unwrap();
    let (r, ()) = read_split(&f, IntakeOptions::default(), 64 << 10, || ());
    std::fs::remove_file(&path).ok();
    let (r, st) = r.unwrap();
    assert!(st.segments > 4 && st.in_turn_from.is_none(), "{st:?}");
    assert_eq!(show(&Ok(r)), show(&one_pass(&bytes, &IntakeOptions::default())));
}
