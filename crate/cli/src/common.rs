//! Options and file reading shared by the subcommands.

use crate::args::Args;
use digitdrift_core::intake::{DateOrder, DecimalConvention, Intake, IntakeOptions, IntakeResult};
use digitdrift_core::Amount;
use digitdrift_core::report::{ScreenReport, SupplierResult};
use serde::Serialize;
use std::io::{Read, Write};

/// Flags every ledger-reading subcommand accepts.
pub fn intake_options(a: &Args) -> Result<IntakeOptions, String> {
    let mut o = IntakeOptions::default();
    o.supplier = a.get("supplier").map(String::from);
    o.amount = a.get("amount").map(String::from);
    o.date = a.get("date").map(String::from);
    o.invoice = a.get("invoice").map(String::from);
    o.decimal = match a.get("decimal") {
        None => None,
        Some("comma") => Some(DecimalConvention::Comma),
        Some("point") => Some(DecimalConvention::Point),
        Some(v) => return Err(format!("--decimal takes comma or point, not '{v}'")),
    };
    o.date_order = match a.get("date-order") {
        None => None,
        Some("dmy") => Some(DateOrder::Dmy),
        Some("mdy") => Some(DateOrder::Mdy),
        Some("ymd") => Some(DateOrder::Ymd),
        Some(v) => return Err(format!("--date-order takes dmy, mdy or ymd, not '{v}'")),
    };
    if let Some(m) = a.get("min-amount") {
        let v = digitdrift_core::intake::parse_amount_simple(m)
            .ok_or_else(|| format!("--min-amount: cannot read '{m}'"))?;
        o.min_amount = Amount(v.0.abs());
    }
    Ok(o)
}

/// Read a ledger file (or `-` for standard input) through the intake.
pub fn read_ledger(path: &str, opts: IntakeOptions) -> Result<IntakeResult, String> {
    #[cfg(unix)]
    if let Some(f) = split_file(path) {
        return read_split_file(path, &f, opts, || ()).0;
    }
    stream_ledger(path, opts)
}

/// [`read_ledger`] with other work (`first`) done on a second thread meanwhile. A regular file
/// of at least two segments is read on both threads once `first` is done
/// ([`digitdrift_core::intake::read_split`]: the same result as one pass); anything else is
/// streamed in 1 MiB chunks on this thread.
pub fn read_ledger_with<T: Send>(path: &str, opts: IntakeOptions, first: impl FnOnce() -> T + Send) -> (Result<IntakeResult, String>, T) {
    #[cfg(unix)]
    if let Some(f) = split_file(path) {
        return read_split_file(path, &f, opts, first);
    }
    std::thread::scope(|sc| {
        let other = sc.spawn(first);
        let r = stream_ledger(path, opts);
        (r, other.join().expect("second thread"))
    })
}

/// The file at `path`, when it is a regular file of at least two segments (read on two threads).
#[cfg(unix)]
fn split_file(path: &str) -> Option<std::fs::File> {
    if path == "-" {
        return None;
    }
    let f = std::fs::File::open(path).ok()?;
    f.metadata().is_ok_and(|m| m.is_file() && m.len() >= 2 * digitdrift_core::intake::SEGMENT).then_some(f)
}

#[cfg(unix)]
fn read_split_file<T: Send>(path: &str, f: &std::fs::File, opts: IntakeOptions, first: impl FnOnce() -> T + Send) -> (Result<IntakeResult, String>, T) {
    let (r, out) = digitdrift_core::intake::read_split(f, opts, digitdrift_core::intake::SEGMENT, first);
    (r.map(|(r, _)| r).map_err(|e| format!("{path}: {e}")), out)
}

/// Stream a file (or `-` for standard input) through the intake in 1 MiB chunks.
fn stream_ledger(path: &str, opts: IntakeOptions) -> Result<IntakeResult, String> {
    let mut intake = Intake::new(opts);
    let mut src: Box<dyn Read> = if path == "-" {
        Box::new(std::io::stdin())
    } else {
        let f = std::fs::File::open(path).map_err(|e| format!("{path}: {e}"))?;
        if let Ok(m) = f.metadata() {
            if m.is_file() {
                intake.set_size_hint(m.len());
            }
        }
        Box::new(f)
    };
    let mut buf = vec![0u8; 1 << 20];
    loop {
        let k = src.read(&mut buf).map_err(|e| format!("{path}: {e}"))?;
        if k == 0 {
            break;
        }
        intake.feed(&buf[..k]).map_err(|e| format!("{path}: {e}"))?;
    }
    intake.finish().map_err(|e| format!("{path}: {e}"))
}

pub fn format_flag(a: &Args) -> Result<bool, String> {
    match a.get("format") {
        None | Some("text") => Ok(false),
        Some("json") => Ok(true),
        Some(v) => Err(format!("--format takes json or text, not '{v}'")),
    }
}

/// Pretty JSON and a newline on standard output, written as it is made (a large report is
/// never held as one string).
pub fn print_json<T: serde::Serialize>(v: &T) -> Result<(), String> {
    let mut out = std::io::BufWriter::with_capacity(1 << 16, std::io::stdout().lock());
    serde_json::to_writer_pretty(&mut out, v).map_err(|e| e.to_string())?;
    out.write_all(b"\n").and_then(|_| out.flush()).map_err(|e| e.to_string())
}

/// A screen report as [`print_json`] prints it (the same bytes), its suppliers written on two
/// threads: most of a large report is the suppliers' digit tables (about 180 KB of JSON each).
pub fn print_screen_json(rep: ScreenReport) -> Result<(), String> {
    let mut out = std::io::BufWriter::with_capacity(1 << 16, std::io::stdout().lock());
    write_screen_json(rep, &mut out).map_err(|e| e.to_string())
}

/// Suppliers per piece handed between the two threads of [`write_screen_json`].
const JSON_PIECE: usize = 8;

/// Write `rep` as `serde_json::to_writer_pretty` would, and a newline. The report without its
/// suppliers is made first (an empty list); the suppliers then go in its place in pieces of
/// [`JSON_PIECE`], alternately made on this thread and on a second one (which hands them over
/// in order, at most two pieces ahead), each supplier made alone two levels deep ([`Nested`]).
pub fn write_screen_json(mut rep: ScreenReport, out: &mut impl Write) -> std::io::Result<()> {
    let suppliers = std::mem::take(&mut rep.suppliers);
    let head = serde_json::to_vec_pretty(&rep)?;
    // the top level's fields are indented by two spaces, deeper ones by more: one match
    let key = b"\n  \"suppliers\": []";
    let at = head.windows(key.len()).position(|w| w == key).expect("a screen report has a suppliers list");
    let (before, after) = (&head[..at + key.len() - 2], &head[at + key.len()..]);
    out.write_all(before)?;
    if suppliers.is_empty() {
        out.write_all(b"[]")?;
    } else {
        out.write_all(b"[")?;
        let pieces: Vec<&[SupplierResult]> = suppliers.chunks(JSON_PIECE).collect();
        let piece = |k: usize| -> std::io::Result<Vec<u8>> {
            let mut buf = Vec::new();
            for (i, s) in pieces[k].iter().enumerate() {
                buf.extend_from_slice(if k == 0 && i == 0 { b"\n    " } else { b",\n    " });
                s.serialize(&mut serde_json::Serializer::with_formatter(&mut buf, Nested { level: 2, has_value: false }))?;
            }
            Ok(buf)
        };
        std::thread::scope(|sc| -> std::io::Result<()> {
            let (tx, rx) = std::sync::mpsc::sync_channel::<std::io::Result<Vec<u8>>>(2);
            let piece = &piece;
            let n = pieces.len();
            sc.spawn(move || {
                for k in (1..n).step_by(2) {
                    let r = piece(k);
                    let failed = r.is_err();
                    if tx.send(r).is_err() || failed {
                        break;
                    }
                }
            });
            for k in 0..n {
                let buf = if k % 2 == 0 { piece(k)? } else { rx.recv().expect("second writer thread")? };
                out.write_all(&buf)?;
            }
            Ok(())
        })?;
        out.write_all(b"\n  ]")?;
    }
    out.write_all(after)?;
    out.write_all(b"\n")?;
    out.flush()
}

/// serde_json's pretty layout (two spaces per level, "key": value), starting `level` levels
/// deep: a supplier made alone as it stands inside the report's list.
struct Nested {
    level: usize,
    has_value: bool,
}

impl Nested {
    fn line<W: ?Sized + Write>(&self, w: &mut W, first: bool) -> std::io::Result<()> {
        w.write_all(if first { b"\n" } else { b",\n" })?;
        self.indent(w)
    }
    fn indent<W: ?Sized + Write>(&self, w: &mut W) -> std::io::Result<()> {
        for _ in 0..self.level {
            w.write_all(b"  ")?;
        }
        Ok(())
    }
    fn close<W: ?Sized + Write>(&mut self, w: &mut W, bracket: &[u8]) -> std::io::Result<()> {
        self.level -= 1;
        if self.has_value {
            w.write_all(b"\n")?;
            self.indent(w)?;
        }
        w.write_all(bracket)
    }
}

impl serde_json::ser::Formatter for Nested {
    fn begin_array<W: ?Sized + Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.level += 1;
        self.has_value = false;
        w.write_all(b"[")
    }
    fn end_array<W: ?Sized + Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.close(w, b"]")
    }
    fn begin_array_value<W: ?Sized + Write>(&mut self, w: &mut W, first: bool) -> std::io::Result<()> {
        self.line(w, first)
    }
    fn end_array_value<W: ?Sized + Write>(&mut self, _w: &mut W) -> std::io::Result<()> {
        self.has_value = true;
        Ok(())
    }
    fn begin_object<W: ?Sized + Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.level += 1;
        self.has_value = false;
        w.write_all(b"{")
    }
    fn end_object<W: ?Sized + Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.close(w, b"}")
    }
    fn begin_object_key<W: ?Sized + Write>(&mut self, w: &mut W, first: bool) -> std::io::Result<()> {
        self.line(w, first)
    }
    fn begin_object_value<W: ?Sized + Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        w.write_all(b": ")
    }
    fn end_object_value<W: ?Sized + Write>(&mut self, _w: &mut W) -> std::io::Result<()> {
        self.has_value = true;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use digitdrift_core::report::{self, ScreenOptions};

    /// The two-thread writer gives serde_json's own pretty output of the whole report (the
    /// reference: `serde_json::to_vec_pretty`), for lists of none, one, one piece, a piece and
    /// one, an odd number of pieces and all of the demo ledger's suppliers.
    #[test]
    fn screen_json_as_serde_json_writes_it() {
        let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../demo-files/heathervale-vet-ledger.csv");
        let r = read_ledger(path, IntakeOptions::default()).expect("demo ledger");
        let opts = ScreenOptions { calibration: None, ..ScreenOptions::default() };
        let full = report::screen(&r.ledger, &r.info, IntakeOptions::default().min_amount, &opts);
        let all = full.suppliers.len();
        assert!(all > 2 * JSON_PIECE + 3, "the demo has {all} suppliers");
        for k in [0, 1, JSON_PIECE, JSON_PIECE + 1, 2 * JSON_PIECE + 3, all] {
            let mut rep = full.clone();
            rep.suppliers.truncate(k);
            let mut want = serde_json::to_vec_pretty(&rep).expect("json");
            want.push(b'\n');
            let mut got = Vec::new();
            write_screen_json(rep, &mut got).expect("written");
            assert!(got == want, "{k} suppliers: the output differs");
        }
    }
}
