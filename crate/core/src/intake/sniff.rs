//! Sniffing on the first bytes of a file: documents dropped by mistake, text encoding,
//! delimiter.

use super::scan::{Record, Scan, Scanner};
use encoding_rs::{Encoding, UTF_16BE, UTF_16LE, UTF_8, WINDOWS_1252};

/// How much of the file is looked at before deciding encoding, delimiter, header and columns.
pub const SNIFF_LEN: usize = 64 * 1024;

/// File signatures of documents that are not CSV ("magic numbers" as published for each
/// format: ZIP local file header `PK\x03\x04` (PKWARE APPNOTE; .xlsx/.ods/.numbers are ZIP
/// containers), OLE2 compound file `D0 CF 11 E0 A1 B1 1A E1` (MS-CFB; .xls), `%PDF-` (ISO 32000),
/// `{\rtf` (RTF spec), gzip `1F 8B` (RFC 1952), PNG, JPEG, and the XML / HTML spreadsheet exports.
pub fn document_kind(head: &[u8]) -> Option<&'static str> {
    let h = head.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(head);
    if h.starts_with(b"PK\x03\x04") || h.starts_with(b"PK\x05\x06") {
        return Some("spreadsheet workbook or other ZIP archive (.xlsx, .ods)");
    }
    if h.starts_with(&[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1]) {
        return Some("Excel 97-2003 workbook (.xls)");
    }
    if h.starts_with(b"%PDF-") {
        return Some("PDF document");
    }
    if h.starts_with(b"{\\rtf") {
        return Some("RTF document");
    }
    if h.starts_with(&[0x1F, 0x8B]) {
        return Some("compressed (gzip) file");
    }
    if h.starts_with(b"\x89PNG") || h.starts_with(&[0xFF, 0xD8, 0xFF]) {
        return Some("picture");
    }
    let lead: Vec<u8> = h.iter().take(512).copied().filter(|b| !b.is_ascii_whitespace()).map(|b| b.to_ascii_lowercase()).collect();
    if lead.starts_with(b"<?xml") {
        let t = String::from_utf8_lossy(&h[..h.len().min(2048)]).to_ascii_lowercase();
        if t.contains("workbook") || t.contains("mso-application") || t.contains("spreadsheet") {
            return Some("Excel XML spreadsheet");
        }
        return Some("XML document");
    }
    if lead.starts_with(b"<!doctypehtml") || lead.starts_with(b"<html") || lead.starts_with(b"<table") {
        return Some("web page (HTML table)");
    }
    None
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Enc {
    Utf8,
    Utf8Bom,
    Utf16Le,
    Utf16Be,
    Windows1252,
}

impl Enc {
    pub fn name(self) -> &'static str {
        match self {
            Enc::Utf8 => "UTF-8",
            Enc::Utf8Bom => "UTF-8 (with BOM)",
            Enc::Utf16Le => "UTF-16LE",
            Enc::Utf16Be => "UTF-16BE",
            Enc::Windows1252 => "Windows-1252",
        }
    }
    pub fn encoding(self) -> &'static Encoding {
        match self {
            Enc::Utf8 | Enc::Utf8Bom => UTF_8,
            Enc::Utf16Le => UTF_16LE,
            Enc::Utf16Be => UTF_16BE,
            Enc::Windows1252 => WINDOWS_1252,
        }
    }
    /// Bytes of byte order mark to skip.
    pub fn bom_len(self, head: &[u8]) -> usize {
        match self {
            Enc::Utf8Bom => 3,
            Enc::Utf16Le if head.starts_with(&[0xFF, 0xFE]) => 2,
            Enc::Utf16Be if head.starts_with(&[0xFE, 0xFF]) => 2,
            _ => 0,
        }
    }
}

/// Decide the encoding from the head of the file. BOMs as in the Unicode Standard ch. 23.8;
/// UTF-16 without BOM recognised by its zero bytes (ASCII text in UTF-16 has every other byte
/// zero: common practice); otherwise UTF-8 if the head is valid UTF-8 (a character cut at the
/// end of the head is allowed), else Windows-1252. Latin-1 (ISO-8859-1) files are read as
/// Windows-1252, which the WHATWG Encoding Standard makes the decoder for the "latin1" and
/// "iso-8859-1" labels (decoding via encoding_rs).
pub fn detect_encoding(head: &[u8], eof: bool) -> Enc {
    if head.starts_with(b"\xEF\xBB\xBF") {
        return Enc::Utf8Bom;
    }
    if head.starts_with(&[0xFF, 0xFE]) {
        return Enc::Utf16Le;
    }
    if head.starts_with(&[0xFE, 0xFF]) {
        return Enc::Utf16Be;
    }
    let n = head.len().min(4096) & !1;
    if n >= 4 {
        let even_zero = head[..n].iter().step_by(2).filter(|&&b| b == 0).count();
        let odd_zero = head[1..n].iter().step_by(2).filter(|&&b| b == 0).count();
        let half = n / 2;
        if odd_zero * 10 >= half * 7 && even_zero * 10 < half {
            return Enc::Utf16Le;
        }
        if even_zero * 10 >= half * 7 && odd_zero * 10 < half {
            return Enc::Utf16Be;
        }
    }
    match std::str::from_utf8(head) {
        Ok(_) => Enc::Utf8,
        Err(e) => {
            // A multi-byte character cut at the end of the sniff window is fine.
            if !eof && e.error_len().is_none() {
                Enc::Utf8
            } else {
                Enc::Windows1252
            }
        }
    }
}

/// Text that is mostly control characters or NUL is binary data, not a ledger.
pub fn looks_binary(text: &[u8]) -> bool {
    let sample = &text[..text.len().min(SNIFF_LEN)];
    if sample.is_empty() {
        return false;
    }
    let bad = sample
        .iter()
        .filter(|&&b| b == 0 || (b < 0x20 && !matches!(b, b'\t' | b'\n' | b'\r' | 0x0C)) || b == 0x7F)
        .count();
    // U+FFFD from undecodable UTF-16 also counts.
    let repl = sample.windows(3).filter(|w| *w == [0xEF, 0xBF, 0xBD]).count();
    bad * 100 > sample.len() || repl * 20 > sample.len()
}

/// Candidate delimiters, in order of preference on a tie.
pub const DELIMS: [u8; 4] = [b';', b'\t', b',', b'|'];

/// One record of the sniff sample.
pub struct SampleRec {
    /// 1-based physical line where the record starts.
    pub line: u64,
    /// Byte offset where the record starts and where the next one starts.
    pub start: usize,
    pub next: usize,
    pub cells: Vec<String>,
}

/// Parse up to `max` records of `text` with delimiter `d`.
pub fn sample_records(text: &[u8], d: u8, eof: bool, max: usize) -> Vec<SampleRec> {
    let sc = Scanner::new(d);
    let mut rec = Record::default();
    let mut pos = 0;
    let mut line = 1u64;
    let mut out = Vec::new();
    while pos < text.len() && out.len() < max {
        match sc.scan(text, pos, eof, &mut rec) {
            Scan::Done { next, lines } => {
                let cells = rec.fields().map(|f| String::from_utf8_lossy(f).into_owned()).collect();
                out.push(SampleRec { line, start: pos, next, cells });
                line += lines;
                pos = next;
            }
            Scan::More => break,
        }
    }
    out
}

pub fn width(cells: &[String]) -> usize {
    let mut w = cells.len();
    while w > 0 && cells[w - 1].trim().is_empty() {
        w -= 1;
    }
    w
}

/// Pick the delimiter whose records agree best on a field count of at least 2: the score is
/// the number of records having the most common width (common practice, no source).
/// Returns (delimiter, that width).
pub fn detect_delimiter(text: &[u8], eof: bool) -> (u8, usize) {
    let mut best = (b',', 1usize, 0usize);
    for &d in DELIMS.iter() {
        let recs = sample_records(text, d, eof, 200);
        let mut counts: std::collections::HashMap<usize, usize> = Default::default();
        for r in &recs {
            let w = width(&r.cells);
            if w >= 2 {
                *counts.entry(w).or_default() += 1;
            }
        }
        // Most common width; on a tie the wider one.
        if let Some((&w, &c)) = counts.iter().max_by_key(|(&w, &c)| (c, w)) {
            if c > best.2 || (c == best.2 && w > best.1) {
                best = (d, w, c);
            }
        }
    }
    (best.0, best.1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn signatures() {
        assert!(document_kind(b"PK\x03\x04\x14\x00").unwrap().contains("xlsx"));
        assert!(document_kind(&[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1, 0]).unwrap().contains("xls"));
        assert!(document_kind(b"%PDF-1.7\n").unwrap().contains("PDF"));
        assert_eq!(document_kind(b"Supplier;Amount\n"), None);
    }

    #[test]
    fn encodings() {
        assert_eq!(detect_encoding(b"\xEF\xBB\xBFa;b", true), Enc::Utf8Bom);
        assert_eq!(detect_encoding(b"\xFF\xFEa\0;\0", true), Enc::Utf16Le);
        assert_eq!(detect_encoding(b"a\0;\0b\0\n\0", true), Enc::Utf16Le);
        assert_eq!(detect_encoding(b"\0a\0;\0b\0\n", true), Enc::Utf16Be);
        assert_eq!(detect_encoding("Müller;1".as_bytes(), true), Enc::Utf8);
        assert_eq!(detect_encoding(b"M\xFCller;1", true), Enc::Windows1252);
        // A UTF-8 character cut by the end of the sniff window.
        assert_eq!(detect_encoding(b"M\xC3", false), Enc::Utf8);
    }

    #[test]
    fn delimiters() {
        assert_eq!(detect_delimiter(b"a;b;c\n1,5;2;3\n4;5,5;6\n", true), (b';', 3));
        assert_eq!(detect_delimiter(b"Report\n\na,b,c\n1,2,3\n", true), (b',', 3));
        assert_eq!(detect_delimiter(b"a\tb\n\"1,5\"\t2\n", true), (b'\t', 2));
        assert_eq!(detect_delimiter(b"a|b|c\n1|2|3\n", true), (b'|', 3));
    }
}
