//! Record scanner over decoded UTF-8 bytes.
//!
//! Quoting follows RFC 4180 section 2: a field may be enclosed in double quotes; inside, a
//! doubled quote stands for one quote, and delimiters and line breaks are literal. Lenient
//! where exports are sloppy (common practice, no source): spaces before an opening quote are
//! dropped, text after a closing quote is kept, a quote inside an unquoted field is literal.
//! Line breaks are LF, CRLF or a lone CR (classic Mac exports).

/// One record: field bytes in `buf`, field `i` at `spans[i]`. For a record without quotes
/// `buf` is a verbatim copy of the record (one copy per record); once a quoted field is met,
/// unquoted contents are appended field by field.
#[derive(Default, Debug, Clone)]
pub struct Record {
    pub buf: Vec<u8>,
    pub spans: Vec<(usize, usize)>,
}

impl Record {
    /// The same fields as a [`RecordView`] over this record's own buffer.
    #[inline]
    pub fn view(&self) -> RecordView<'_> {
        RecordView { buf: &self.buf, spans: &self.spans }
    }
    #[inline]
    pub fn len(&self) -> usize {
        self.spans.len()
    }
    #[inline]
    pub fn is_empty(&self) -> bool {
        self.spans.is_empty()
    }
    #[inline]
    pub fn field(&self, i: usize) -> &[u8] {
        self.view().field(i)
    }
    /// Number of fields after dropping trailing fields that are empty or white space.
    pub fn width(&self) -> usize {
        self.view().width()
    }
    pub fn fields(&self) -> impl Iterator<Item = &[u8]> {
        self.view().fields()
    }
}

/// A record's fields without a copy: `buf` is either the scanned data from the record's
/// start (a record without quotes) or the [`Record`]'s own buffer (a quoted field was met).
#[derive(Clone, Copy)]
pub struct RecordView<'a> {
    pub buf: &'a [u8],
    pub spans: &'a [(usize, usize)],
}

impl<'a> RecordView<'a> {
    #[inline]
    pub fn len(&self) -> usize {
        self.spans.len()
    }
    #[inline]
    pub fn is_empty(&self) -> bool {
        self.spans.is_empty()
    }
    #[inline]
    pub fn field(&self, i: usize) -> &'a [u8] {
        let (s, e) = self.spans[i];
        &self.buf[s..e]
    }
    /// Number of fields after dropping trailing fields that are empty or white space.
    #[inline]
    pub fn width(&self) -> usize {
        let w = self.len();
        // Fast path: a last field starting with printable ASCII is not blank (trim_cell only
        // drops ASCII white space and the UTF-8 no-break and thin spaces, all other bytes).
        if w > 0 && matches!(self.field(w - 1).first(), Some(0x21..=0x7E)) {
            return w;
        }
        self.width_slow()
    }
    #[cold]
    fn width_slow(&self) -> usize {
        let mut w = self.len();
        while w > 0 && super::amount::trim_cell(self.field(w - 1)).is_empty() {
            w -= 1;
        }
        w
    }
    pub fn fields(&self) -> impl Iterator<Item = &'a [u8]> + 'a {
        let v = *self;
        (0..v.len()).map(move |i| v.field(i))
    }
}

/// Bytes that end an unquoted run: the delimiter, CR, LF.
pub struct Scanner {
    special: [bool; 256],
    pub delim: u8,
    /// The delimiter repeated in every byte (for the word-at-a-time search).
    delim8: u64,
}

const ONES: u64 = 0x0101_0101_0101_0101;
const HIGHS: u64 = 0x8080_8080_8080_8080;

/// High bit set in the lowest byte of `v` that is zero (bits above it may be set spuriously,
/// which the callers ignore by taking the lowest set bit). The classic "has zero byte" test
/// (Alan Mycroft's; Sean Anderson, "Bit Twiddling Hacks", Stanford).
#[inline(always)]
fn zero_bytes(v: u64) -> u64 {
    v.wrapping_sub(ONES) & !v & HIGHS
}

/// Outcome of scanning one record.
pub enum Scan {
    /// A complete record; `next` is where the following record starts, `lines` the line
    /// breaks consumed (inside quotes and the terminator).
    Done { next: usize, lines: u64 },
    /// The record is not complete in the data given (more data needed).
    More,
}

#[inline]
fn count_breaks(s: &[u8]) -> u64 {
    let mut n = 0;
    for (i, &b) in s.iter().enumerate() {
        if b == b'\n' || (b == b'\r' && s.get(i + 1) != Some(&b'\n')) {
            n += 1;
        }
    }
    n
}

impl Scanner {
    pub fn new(delim: u8) -> Scanner {
        let mut special = [false; 256];
        special[delim as usize] = true;
        special[b'\n' as usize] = true;
        special[b'\r' as usize] = true;
        Scanner { special, delim, delim8: ONES.wrapping_mul(delim as u64) }
    }

    /// First index at or after `i` holding the delimiter, CR or LF (`data.len()` if none),
    /// eight bytes at a time.
    #[inline(always)]
    fn find_special(&self, data: &[u8], mut i: usize) -> usize {
        let n = data.len();
        while i + 8 <= n {
            let w = u64::from_le_bytes(data[i..i + 8].try_into().unwrap());
            let m = zero_bytes(w ^ self.delim8) | zero_bytes(w ^ (ONES * b'\n' as u64)) | zero_bytes(w ^ (ONES * b'\r' as u64));
            if m != 0 {
                return i + (m.trailing_zeros() / 8) as usize;
            }
            i += 8;
        }
        while i < n && !self.special[data[i] as usize] {
            i += 1;
        }
        i
    }

    /// Scan the record starting at `data[pos]` like [`Scanner::scan`], without copying a
    /// record that has no quoted field: the view then points into `data`.
    #[inline]
    pub fn scan_view<'a>(&self, data: &'a [u8], pos: usize, eof: bool, rec: &'a mut Record) -> (Scan, RecordView<'a>) {
        let (r, copied) = self.scan_inner(data, pos, eof, rec, false);
        let buf: &'a [u8] = if copied { &rec.buf } else { &data[pos..] };
        (r, RecordView { buf, spans: &rec.spans })
    }

    /// Scan the record starting at `data[pos]` (pos < data.len()). `eof`: no more data
    /// will follow, so the end of `data` ends the record.
    pub fn scan(&self, data: &[u8], pos: usize, eof: bool, rec: &mut Record) -> Scan {
        self.scan_inner(data, pos, eof, rec, true).0
    }

    /// The scanner. `copy_plain`: copy a record without quotes into `rec.buf` too. Returns
    /// whether the fields are in `rec.buf` (else the spans are offsets from `pos` in `data`).
    #[inline(always)]
    fn scan_inner(&self, data: &[u8], pos: usize, eof: bool, rec: &mut Record, copy_plain: bool) -> (Scan, bool) {
        rec.buf.clear();
        rec.spans.clear();
        let n = data.len();
        let mut i = pos;
        let mut lines = 0u64;
        // While `copying` is false, spans are offsets from `pos` into `data` and `buf` is
        // filled with `data[pos..end]` once the record is complete.
        let mut copying = false;
        macro_rules! done {
            ($next:expr, $lines:expr, $end:expr) => {{
                if !copying && copy_plain {
                    rec.buf.extend_from_slice(&data[pos..$end]);
                }
                return (Scan::Done { next: $next, lines: $lines }, copying || copy_plain);
            }};
        }
        loop {
            // Quoted field?
            let mut j = i;
            while j < n && data[j] == b' ' {
                j += 1;
            }
            let mut start = None;
            if j < n && data[j] == b'"' {
                if !copying {
                    rec.buf.extend_from_slice(&data[pos..i]);
                    copying = true;
                }
                start = Some(rec.buf.len());
                j += 1;
                loop {
                    let q = match data[j..].iter().position(|&b| b == b'"') {
                        Some(k) => j + k,
                        None => {
                            if !eof {
                                return (Scan::More, copying);
                            }
                            // Unclosed quote at the end of the file: take the rest.
                            lines += count_breaks(&data[j..]);
                            rec.buf.extend_from_slice(&data[j..]);
                            rec.spans.push((start.unwrap(), rec.buf.len()));
                            return (Scan::Done { next: n, lines }, true);
                        }
                    };
                    lines += count_breaks(&data[j..q]);
                    rec.buf.extend_from_slice(&data[j..q]);
                    if q + 1 < n && data[q + 1] == b'"' {
                        rec.buf.push(b'"');
                        j = q + 2;
                        continue;
                    }
                    if q + 1 == n && !eof {
                        return (Scan::More, copying);
                    }
                    j = q + 1;
                    break;
                }
                i = j;
            }
            let st = i;
            i = self.find_special(data, i);
            if copying {
                let s0 = start.unwrap_or(rec.buf.len());
                rec.buf.extend_from_slice(&data[st..i]);
                rec.spans.push((s0, rec.buf.len()));
            } else {
                rec.spans.push((st - pos, i - pos));
            }
            if i == n {
                if eof {
                    done!(n, lines, n)
                }
                return (Scan::More, copying);
            }
            let b = data[i];
            if b == self.delim {
                i += 1;
                if i == n && !eof {
                    return (Scan::More, copying);
                }
                if i == n {
                    if copying {
                        rec.spans.push((rec.buf.len(), rec.buf.len()));
                    } else {
                        rec.spans.push((i - pos, i - pos));
                    }
                    done!(n, lines, n)
                }
                continue;
            }
            if b == b'\n' {
                done!(i + 1, lines + 1, i)
            }
            // CR: CRLF or a lone CR.
            if i + 1 < n {
                let next = if data[i + 1] == b'\n' { i + 2 } else { i + 1 };
                done!(next, lines + 1, i)
            }
            if eof {
                done!(n, lines + 1, i)
            }
            return (Scan::More, copying);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn all(data: &str, d: u8) -> Vec<(Vec<String>, u64)> {
        let sc = Scanner::new(d);
        let mut rec = Record::default();
        let mut pos = 0;
        let mut line = 1;
        let mut out = vec![];
        while pos < data.len() {
            match sc.scan(data.as_bytes(), pos, true, &mut rec) {
                Scan::Done { next, lines } => {
                    out.push((rec.fields().map(|f| String::from_utf8_lossy(f).into_owned()).collect(), line));
                    line += lines;
                    pos = next;
                }
                Scan::More => unreachable!(),
            }
        }
        out
    }

    #[test]
    fn rfc4180_examples() {
        // RFC 4180 section 2, rules 5-7: quoted fields with CRLF, commas and doubled quotes.
        let r = all("aaa,\"b\r\nbb\",ccc\r\nzzz,yyy,xxx\r\n", b',');
        assert_eq!(r[0].0, vec!["aaa", "b\r\nbb", "ccc"]);
        assert_eq!(r[1].0, vec!["zzz", "yyy", "xxx"]);
        assert_eq!(r[1].1, 3, "second record starts on physical line 3");
        let r = all("\"aaa\",\"b\"\"bb\",\"ccc\"", b',');
        assert_eq!(r[0].0, vec!["aaa", "b\"bb", "ccc"]);
        let r = all("a;b;\n\rc;d", b';');
        assert_eq!(r.len(), 3);
        assert_eq!(r[0].0, vec!["a", "b", ""]);
        assert_eq!(r[1].0, vec![""], "a lone CR ends a (blank) line");
        assert_eq!(r[2].0, vec!["c", "d"]);
        assert_eq!(r[2].1, 3);
    }
}
