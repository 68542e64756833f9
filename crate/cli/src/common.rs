//! Options and file reading shared by the subcommands.

use crate::args::Args;
use digitdrift_core::intake::{DateOrder, DecimalConvention, Intake, IntakeOptions, IntakeResult};
use digitdrift_core::Amount;
use std::io::Read;

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
    use std::io::Write;
    let mut out = std::io::BufWriter::with_capacity(1 << 16, std::io::stdout().lock());
    serde_json::to_writer_pretty(&mut out, v).map_err(|e| e.to_string())?;
    out.write_all(b"\n").and_then(|_| out.flush()).map_err(|e| e.to_string())
}
