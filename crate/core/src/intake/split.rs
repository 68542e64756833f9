//! One file read on two threads (natively; the page's Workers read in turn).
//!
//! The file is cut into segments of [`SEGMENT`] bytes, each moved on to the next line start
//! (the byte after the first LF at or after its nominal start). The first segment goes through
//! the ordinary [`Intake`] (head sniffed, conventions decided). Every later segment is read by
//! whichever thread is free into a *part*: a run with the head's settings that numbers lines
//! from 1 and interns suppliers on its own. Parts are joined in file order: the supplier ids
//! mapped by key (new ones numbered in order of first appearance, as one pass would), lines
//! shifted by the lines before, counts and kept example rows merged. A segment the first thread
//! reaches when everything before it is joined is fed to the intake directly.
//!
//! A part is joined only when reading it alone cannot have differed from reading it in turn;
//! otherwise the rest of the file is read in turn from that segment on (same result, slower):
//! - the intake before it must end at a record boundary (no record left open: a cut inside a
//!   quoted field is found here);
//! - the decimal convention is known from the head (else the file is read in turn from the
//!   start), and the day/month order is the same before, in and after the part as in the head;
//! - the part met no row without a supplier and with a non-zero amount (whether that row is a
//!   total depends on the sums of the rows above), no supplier name that was not UTF-8 (the
//!   warning counts each spelling once per file) and no error.
//!
//! The result is the one [`Intake::feed`] gives on the whole file in order (tested byte for
//! byte on every case of the test catalogue, cut at many sizes).

use super::*;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{Condvar, Mutex};

/// Segment size for files read on two threads (8 MiB: a dozen segments for 100 MB, so the
/// two threads end within one segment of each other).
pub const SEGMENT: u64 = 8 << 20;

/// Bytes read at a time.
const READ: usize = 1 << 20;

/// Random-access bytes: a file (natively) or a slice in memory.
pub trait ByteSource: Sync {
    fn size(&self) -> u64;
    /// Read into `buf` from `offset`; 0 only at the end.
    fn read_at(&self, offset: u64, buf: &mut [u8]) -> std::io::Result<usize>;
}

impl ByteSource for [u8] {
    fn size(&self) -> u64 {
        self.len() as u64
    }
    fn read_at(&self, offset: u64, buf: &mut [u8]) -> std::io::Result<usize> {
        let from = (offset.min(self.len() as u64)) as usize;
        let k = buf.len().min(self.len() - from);
        buf[..k].copy_from_slice(&self[from..from + k]);
        Ok(k)
    }
}

#[cfg(unix)]
impl ByteSource for std::fs::File {
    fn size(&self) -> u64 {
        self.metadata().map_or(0, |m| m.len())
    }
    fn read_at(&self, offset: u64, buf: &mut [u8]) -> std::io::Result<usize> {
        std::os::unix::fs::FileExt::read_at(self, buf, offset)
    }
}

/// A read failed, or the intake did.
#[derive(Debug)]
pub enum ReadError {
    Io(std::io::Error),
    Intake(IntakeError),
}

impl std::fmt::Display for ReadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ReadError::Io(e) => e.fmt(f),
            ReadError::Intake(e) => e.fmt(f),
        }
    }
}

impl std::error::Error for ReadError {}

/// How a split read went.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct SplitStats {
    /// Segments the file was cut into (1: read in turn).
    pub segments: usize,
    /// Segments read into parts and joined.
    pub joined: usize,
    /// The segment from which the rest was read in turn, when a part could not be joined.
    pub in_turn_from: Option<usize>,
}

/// A segment read on its own.
enum Part {
    /// No line starts in it.
    Empty,
    /// The part and the bytes it was fed.
    Read(Box<Run>, u64),
    /// It could not stand alone (see the module text).
    Unfit,
}

/// Read `src` like [`Intake::feed`] in order then [`Intake::finish`], on two threads: this one
/// and another that first runs `first` (other work to overlap with reading, e.g. null tables)
/// and then reads segments too. Segments of `segment` bytes (at least 64 KiB; [`SEGMENT`]).
/// Returns the result, how the read went, and `first`'s value.
pub fn read_split<S: ByteSource + ?Sized, T: Send>(
    src: &S,
    opts: IntakeOptions,
    segment: u64,
    first: impl FnOnce() -> T + Send,
) -> (Result<(IntakeResult, SplitStats), ReadError>, T) {
    split_read(src, opts, segment, first, true)
}

/// [`read_split`] with every segment after the first read into a part and joined, never fed to
/// the intake directly (for tests: which segments are joined then does not depend on which
/// thread is quicker).
#[doc(hidden)]
pub fn read_split_parts<S: ByteSource + ?Sized, T: Send>(
    src: &S,
    opts: IntakeOptions,
    segment: u64,
    first: impl FnOnce() -> T + Send,
) -> (Result<(IntakeResult, SplitStats), ReadError>, T) {
    split_read(src, opts, segment, first, false)
}

fn split_read<S: ByteSource + ?Sized, T: Send>(
    src: &S,
    opts: IntakeOptions,
    segment: u64,
    first: impl FnOnce() -> T + Send,
    direct: bool,
) -> (Result<(IntakeResult, SplitStats), ReadError>, T) {
    let segment = segment.max(SNIFF_LEN as u64);
    let size = src.size();
    let segments = size.div_ceil(segment).max(1) as usize;
    // the settings every part starts from, once the first segment is in (None: read in turn)
    let template: (Mutex<Option<Option<Box<Run>>>>, Condvar) = (Mutex::new(None), Condvar::new());
    let next = AtomicUsize::new(1);
    let stop = AtomicBool::new(false);
    let parts: (Mutex<Vec<Option<Part>>>, Condvar) = (Mutex::new((0..segments).map(|_| None).collect()), Condvar::new());
    let publish = |t: Option<Box<Run>>| {
        *template.0.lock().expect("template") = Some(t);
        template.1.notify_all();
    };
    // Take segments until none is left or `stop`; each one read into a part.
    let take = |tpl: &Run, buf: &mut Vec<u8>| {
        while !stop.load(Ordering::Acquire) {
            let k = next.fetch_add(1, Ordering::AcqRel);
            if k >= segments {
                break;
            }
            let part = read_part(src, segment, k, tpl, buf);
            parts.0.lock().expect("parts")[k] = Some(part);
            parts.1.notify_all();
        }
    };
    std::thread::scope(|sc| {
        let other = sc.spawn(|| {
            let out = first();
            let mut g = template.0.lock().expect("template");
            while g.is_none() {
                g = template.1.wait(g).expect("template");
            }
            let tpl = g.take().flatten();
            drop(g);
            if let Some(tpl) = tpl {
                take(&tpl, &mut Vec::new());
            }
            out
        });
        let res = (|| {
            let mut buf = Vec::new();
            let mut intake = Intake::new(opts);
            intake.set_size_hint(size);
            let mut stats = SplitStats { segments, ..SplitStats::default() };
            let fed = feed_segment(src, segment, 0, &mut buf, &mut |c| intake.feed(c))?;
            let tpl = if segments > 1 && fed.is_some() { intake.template() } else { None };
            let Some(tpl) = tpl else {
                publish(None);
                stats.segments = 1;
                if segments > 1 {
                    if let Some(from) = fed {
                        feed_from(src, from, &mut buf, &mut |c| intake.feed(c))?;
                    }
                }
                return Ok((intake.finish().map_err(ReadError::Intake)?, stats));
            };
            publish(Some(tpl.clone_part()));
            // `joined`: segments before it are all in the intake
            let mut joined = 1usize;
            let in_turn = loop {
                // join what is ready, in order
                let mut failed = None;
                loop {
                    let part = {
                        let mut p = parts.0.lock().expect("parts");
                        match p.get_mut(joined).and_then(Option::take) {
                            Some(part) => part,
                            None => break,
                        }
                    };
                    if !intake.join(part, &tpl, &mut stats) {
                        failed = Some(joined);
                        break;
                    }
                    joined += 1;
                }
                if failed.is_some() {
                    break failed;
                }
                if joined >= segments {
                    break None;
                }
                let k = next.fetch_add(1, Ordering::AcqRel);
                if k >= segments {
                    // the other thread is reading what is left: wait for its next part
                    let mut p = parts.0.lock().expect("parts");
                    while p[joined].is_none() {
                        p = parts.1.wait(p).expect("parts");
                    }
                    continue;
                }
                if direct && k == joined {
                    // everything before is in: read it in turn, into the intake itself
                    feed_segment(src, segment, k, &mut buf, &mut |c| intake.feed(c))?;
                    joined += 1;
                } else {
                    let part = read_part(src, segment, k, &tpl, &mut buf);
                    parts.0.lock().expect("parts")[k] = Some(part);
                }
            };
            stop.store(true, Ordering::Release);
            if let Some(k) = in_turn {
                stats.in_turn_from = Some(k);
                if let Some(from) = segment_start(src, segment, k, &mut buf).map_err(ReadError::Io)? {
                    feed_from(src, from, &mut buf, &mut |c| intake.feed(c))?;
                }
            }
            Ok((intake.finish().map_err(ReadError::Intake)?, stats))
        })();
        // on an early error the other thread may still wait for the settings
        if template.0.lock().expect("template").is_none() {
            publish(None);
        }
        stop.store(true, Ordering::Release);
        (res, other.join().expect("reading thread"))
    })
}

/// Read `len` bytes or fewer at `at` into `buf` (resized to `READ`).
fn read_chunk<'b, S: ByteSource + ?Sized>(src: &S, at: u64, buf: &'b mut Vec<u8>) -> std::io::Result<&'b [u8]> {
    buf.resize(READ, 0);
    loop {
        match src.read_at(at, buf) {
            Ok(k) => return Ok(&buf[..k]),
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(e),
        }
    }
}

/// The first line start at or after `from`: the byte after the first LF there (None: no LF).
fn line_start<S: ByteSource + ?Sized>(src: &S, from: u64, buf: &mut Vec<u8>) -> std::io::Result<Option<u64>> {
    let mut at = from;
    loop {
        let c = read_chunk(src, at, buf)?;
        if c.is_empty() {
            return Ok(None);
        }
        if let Some(i) = c.iter().position(|&b| b == b'\n') {
            return Ok(Some(at + i as u64 + 1));
        }
        at += c.len() as u64;
    }
}

/// Where segment k starts (None: no line starts in it or after).
fn segment_start<S: ByteSource + ?Sized>(src: &S, segment: u64, k: usize, buf: &mut Vec<u8>) -> std::io::Result<Option<u64>> {
    if k == 0 {
        return Ok(Some(0));
    }
    line_start(src, k as u64 * segment, buf)
}

/// Feed segment k's bytes: from its start to the next segment's (or the end). Returns where
/// the next segment starts (None: the file ends in this one), or the error `feed` gave.
fn feed_segment<S: ByteSource + ?Sized>(
    src: &S,
    segment: u64,
    k: usize,
    buf: &mut Vec<u8>,
    feed: &mut dyn FnMut(&[u8]) -> Result<(), IntakeError>,
) -> Result<Option<u64>, ReadError> {
    let Some(mut at) = segment_start(src, segment, k, buf).map_err(ReadError::Io)? else { return Ok(None) };
    let end = (k as u64 + 1) * segment; // the next segment starts at the first line start from here
    if at > end {
        return Ok(Some(at)); // the line start found is the next segment's too: nothing here
    }
    loop {
        let c = read_chunk(src, at, buf).map_err(ReadError::Io)?;
        if c.is_empty() {
            return Ok(None);
        }
        let n = c.len() as u64;
        if at + n > end {
            let from = end.saturating_sub(at) as usize;
            if let Some(i) = c[from..].iter().position(|&b| b == b'\n') {
                let cut = from + i + 1;
                feed(&c[..cut]).map_err(ReadError::Intake)?;
                return Ok(Some(at + cut as u64));
            }
        }
        feed(c).map_err(ReadError::Intake)?;
        at += n;
        if at > end {
            // the rest of this chunk had no LF past the end: the next LF ends the segment
            return feed_to_line_end(src, at, buf, feed);
        }
    }
}

/// Feed from `at` up to and including the next LF (or the end).
fn feed_to_line_end<S: ByteSource + ?Sized>(src: &S, mut at: u64, buf: &mut Vec<u8>, feed: &mut dyn FnMut(&[u8]) -> Result<(), IntakeError>) -> Result<Option<u64>, ReadError> {
    loop {
        let c = read_chunk(src, at, buf).map_err(ReadError::Io)?;
        if c.is_empty() {
            return Ok(None);
        }
        if let Some(i) = c.iter().position(|&b| b == b'\n') {
            feed(&c[..=i]).map_err(ReadError::Intake)?;
            return Ok(Some(at + i as u64 + 1));
        }
        feed(c).map_err(ReadError::Intake)?;
        at += c.len() as u64;
    }
}

/// Feed everything from `at` to the end.
fn feed_from<S: ByteSource + ?Sized>(src: &S, mut at: u64, buf: &mut Vec<u8>, feed: &mut dyn FnMut(&[u8]) -> Result<(), IntakeError>) -> Result<(), ReadError> {
    loop {
        let c = read_chunk(src, at, buf).map_err(ReadError::Io)?;
        if c.is_empty() {
            return Ok(());
        }
        feed(c).map_err(ReadError::Intake)?;
        at += c.len() as u64;
    }
}

/// Segment k read on its own into a part (from `tpl`'s settings); the last one to its end.
fn read_part<S: ByteSource + ?Sized>(src: &S, segment: u64, k: usize, tpl: &Run, buf: &mut Vec<u8>) -> Part {
    let mut run = tpl.clone_part();
    let mut fed = 0u64;
    let r = feed_segment(src, segment, k, buf, &mut |c| {
        fed += c.len() as u64;
        run.push(c, false)
    });
    match r {
        Ok(_) if fed == 0 => Part::Empty,
        Ok(end) => {
            if end.is_none() && run.push(&[], true).is_err() {
                return Part::Unfit;
            }
            Part::Read(run, fed)
        }
        Err(_) => Part::Unfit,
    }
}

impl Intake {
    /// The settings a part starts from: the head's, once it is read, when every row after it
    /// can be read without the rows before (UTF-8, decimal convention known, no preview).
    fn template(&self) -> Option<Box<Run>> {
        match &self.state {
            State::Run(r) if r.decoder.is_none() && r.preview.is_none() && r.conv.is_some() && r.deferred.is_empty() => Some(r.clone_part()),
            _ => None,
        }
    }

    /// Join the next segment's part; false (nothing changed) when it cannot be joined.
    fn join(&mut self, part: Part, tpl: &Run, stats: &mut SplitStats) -> bool {
        let State::Run(run) = &mut self.state else { return false };
        match part {
            Part::Empty => true,
            Part::Unfit => false,
            Part::Read(p, fed) => {
                if !run.join(*p, tpl) {
                    return false;
                }
                self.bytes_fed += fed;
                stats.joined += 1;
                true
            }
        }
    }
}

impl Run {
    /// A run with this one's settings and nothing read: lines from 1, no suppliers.
    fn clone_part(&self) -> Box<Run> {
        Box::new(Run {
            setup: self.setup.clone(),
            scanner: Scanner::new(self.setup.delim),
            decoder: None,
            work: Vec::new(),
            pos: 0,
            line: 1,
            rec: Record::default(),
            min_amount: self.min_amount,
            conv: self.conv,
            order: self.order,
            saw_iso: false,
            ymd_only: self.ymd_only,
            ledger: Ledger::default(),
            raw_map: intern::Interner::default(),
            key_map: HashMap::new(),
            deferred: Vec::new(),
            reserved: true,
            date_alts: Vec::new(),
            amb_dec: Vec::new(),
            amb_date: Vec::new(),
            run_sum: 0,
            run_rows: 0,
            grand_sum: 0,
            grand_rows: 0,
            bad_dates: 0,
            recoded_names: 0,
            decimal_votes: (0, 0),
            total_prefixes: self.total_prefixes.clone(),
            total_first: self.total_first,
            preview: None,
            sum_rows: false,
            reset: false,
        })
    }

    /// Append part `p` (read from `tpl`'s settings) when reading it in turn could not have
    /// differed (see the module text); false, leaving self as it was, otherwise.
    fn join(&mut self, p: Run, tpl: &Run) -> bool {
        let fits = self.pos == self.work.len()
            && self.conv.is_some()
            && p.conv == self.conv
            && self.order == tpl.order
            && p.order == tpl.order
            && p.deferred.is_empty()
            && !p.sum_rows
            && p.recoded_names == 0;
        if !fits {
            return false;
        }
        let off = self.line - 1;
        let ids: Vec<u32> = p
            .ledger
            .suppliers
            .into_iter()
            .map(|s| match self.key_map.get(&s.key) {
                Some(&id) => id,
                None => {
                    let id = self.ledger.suppliers.len() as u32;
                    self.key_map.insert(s.key.clone(), id);
                    self.ledger.suppliers.push(s);
                    id
                }
            })
            .collect();
        let moved = |inv: &Invoice| Invoice::new(inv.amount, inv.invoice_hash, ids[inv.supplier as usize], inv.date, inv.line() as u64 + off);
        for (to, from) in [(&mut self.ledger.invoices, &p.ledger.invoices), (&mut self.ledger.credit_notes, &p.ledger.credit_notes)] {
            if to.capacity() - to.len() < from.len() {
                to.reserve_exact(from.len().max(to.len() / 8));
            }
            to.extend(from.iter().map(moved));
        }
        let acc = &mut self.ledger.accounting;
        let pa = p.ledger.accounting;
        acc.read += pa.read;
        acc.analysed += pa.analysed;
        acc.excluded += pa.excluded;
        for e in pa.exclusions {
            let rows = e.rows.iter().map(|&l| l + off);
            match acc.exclusions.iter_mut().find(|x| x.reason == e.reason) {
                Some(x) => {
                    x.count += e.count;
                    let room = crate::ledger::EXCLUSION_ROWS_KEPT.saturating_sub(x.rows.len());
                    x.rows.extend(rows.take(room));
                }
                None => {
                    acc.exclusions.push(crate::ledger::Exclusion { rows: rows.collect(), ..e });
                    acc.exclusions.sort_by_key(|x| x.reason);
                }
            }
        }
        self.date_alts.extend(p.date_alts.iter().map(|&(l, d)| ((l as u64 + off) as u32, d)));
        let room = 3usize.saturating_sub(self.amb_date.len());
        self.amb_date.extend(p.amb_date.into_iter().take(room));
        self.saw_iso |= p.saw_iso;
        self.bad_dates += p.bad_dates;
        if p.reset {
            (self.run_sum, self.run_rows) = (p.run_sum, p.run_rows);
        } else {
            self.run_sum += p.run_sum;
            self.run_rows += p.run_rows;
        }
        self.reset |= p.reset;
        self.grand_sum += p.grand_sum;
        self.grand_rows += p.grand_rows;
        self.line = p.line + off;
        // a record the part left open continues in the next segment
        self.work = p.work;
        self.pos = p.pos;
        true
    }
}
