//! Record scanner over decoded UTF-8 bytes.
//!
//! Quoting follows RFC 4180 section 2: a field may be enclosed in double quotes; inside, a
//! doubled quote stands for one quote, and delimiters and line breaks are literal. Lenient
//! where exports are sloppy (common practice, no source): spaces before an opening quote are
//! dropped, text after a closing quote is kept, a quote inside an unquoted field is literal.
//! Line breaks are LF, CRLF or a lone CR (classic Mac exports).

/// One record: unquoted field bytes back to back, and where each field ends.
#[derive(Default, Debug, Clone)]
pub struct Record {
    pub buf: Vec<u8>,
    pub ends: Vec<usize>,
}

impl Record {
    #[inline]
    pub fn len(&self) -> usize {
        self.ends.len()
    }
    #[inline]
    pub fn field(&self, i: usize) -> &[u8] {
        let s = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.buf[s..self.ends[i]]
    }
    /// Number of fields after dropping trailing fields that are empty or white space.
    pub fn width(&self) -> usize {
        let mut w = self.len();
        while w > 0 && super::amount::trim_cell(self.field(w - 1)).is_empty() {
            w -= 1;
        }
        w
    }
    pub fn fields(&self) -> impl Iterator<Item = &[u8]> {
        (0..self.len()).map(move |i| self.field(i))
    }
}

/// Bytes that end an unquoted run: the delimiter, CR, LF.
pub struct Scanner {
    special: [bool; 256],
    pub delim: u8,
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
        Scanner { special, delim }
    }

    /// Scan the record starting at `data[pos]` (pos < data.len()). `eof`: no more data
    /// will follow, so the end of `data` ends the record.
    pub fn scan(&self, data: &[u8], pos: usize, eof: bool, rec: &mut Record) -> Scan {
        rec.buf.clear();
        rec.ends.clear();
        let n = data.len();
        let mut i = pos;
        let mut lines = 0u64;
        loop {
            // Quoted field?
            let mut j = i;
            while j < n && data[j] == b' ' {
                j += 1;
            }
            if j < n && data[j] == b'"' {
                j += 1;
                loop {
                    let q = match data[j..].iter().position(|&b| b == b'"') {
                        Some(k) => j + k,
                        None => {
                            if !eof {
                                return Scan::More;
                            }
                            // Unclosed quote at the end of the file: take the rest.
                            lines += count_breaks(&data[j..]);
                            rec.buf.extend_from_slice(&data[j..]);
                            rec.ends.push(rec.buf.len());
                            return Scan::Done { next: n, lines };
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
                        return Scan::More;
                    }
                    j = q + 1;
                    break;
                }
                i = j;
            }
            let st = i;
            while i < n && !self.special[data[i] as usize] {
                i += 1;
            }
            rec.buf.extend_from_slice(&data[st..i]);
            rec.ends.push(rec.buf.len());
            if i == n {
                return if eof { Scan::Done { next: n, lines } } else { Scan::More };
            }
            let b = data[i];
            if b == self.delim {
                i += 1;
                if i == n && !eof {
                    return Scan::More;
                }
                if i == n {
                    rec.ends.push(rec.buf.len());
                    return Scan::Done { next: n, lines };
                }
                continue;
            }
            if b == b'\n' {
                return Scan::Done { next: i + 1, lines: lines + 1 };
            }
            // CR: CRLF or a lone CR.
            if i + 1 < n {
                let next = if data[i + 1] == b'\n' { i + 2 } else { i + 1 };
                return Scan::Done { next, lines: lines + 1 };
            }
            return if eof { Scan::Done { next: n, lines: lines + 1 } } else { Scan::More };
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
