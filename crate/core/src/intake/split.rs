//! One file read on two threads, natively. (The page reads in turn: in Chromium a second
//! Worker reading the same File slowed the reading rather than sharing it; docs/BENCHMARKS.md.)
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
//!   start), and the day/month order is the same before and after the part as when the first
//!   segment was in;
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

/// A segment read on its own (see the module text), to be joined by [`Intake::join_part`].
enum Part {
    /// No line starts in it.
    Empty,
    /// The run it was read into, the bytes it was fed, and the day/month order it started from.
    Read(Box<Run>, u64, Option<DateOrder>),
    /// It could not stand alone (an error, or the file ended inside its last record).
    Unfit,
}

/// Cuts segment k out of the bytes pushed from its nominal start (k · segment) on: skips to
/// the first line start at or after it (none for segment 0), passes on the bytes up to and
/// including the first LF at or after the next segment's nominal start, then is done.
struct SegmentCut {
    /// File offset of the next byte pushed.
    at: u64,
    /// The segment's bytes have begun (a line start was found).
    begun: bool,
    /// The first LF at or after this offset ends the segment.
    end: u64,
    done: bool,
}

impl SegmentCut {
    /// Segment k of `segment` bytes; the bytes pushed must start at `k * segment`.
    fn new(segment: u64, k: usize) -> SegmentCut {
        let from = k as u64 * segment;
        SegmentCut { at: from, begun: k == 0, end: from.saturating_add(segment), done: false }
    }

    /// Everything from segment k's start to the end of the file.
    fn rest(segment: u64, k: usize) -> SegmentCut {
        SegmentCut { end: u64::MAX, ..SegmentCut::new(segment, k) }
    }

    /// The file offset the next pushed bytes must start at.
    fn offset(&self) -> u64 {
        self.at
    }

    /// The segment has ended (no more bytes belong to it).
    fn done(&self) -> bool {
        self.done
    }

    /// The part of `chunk` (the next bytes of the file) that belongs to the segment.
    fn cut<'a>(&mut self, chunk: &'a [u8]) -> &'a [u8] {
        if self.done {
            return &[];
        }
        let base = self.at;
        self.at += chunk.len() as u64;
        let mut from = 0usize;
        if !self.begun {
            match chunk.iter().position(|&b| b == b'\n') {
                Some(i) => {
                    from = i + 1;
                    self.begun = true;
                    // the line start found lies past the end: it is the next segment's
                    if base + from as u64 > self.end {
                        self.done = true;
                        return &[];
                    }
                }
                None => return &[],
            }
        }
        // the first LF at or after `end` in this chunk ends the segment
        let look = (self.end.saturating_sub(base) as usize).max(from);
        if look < chunk.len() {
            if let Some(i) = chunk[look..].iter().position(|&b| b == b'\n') {
                self.done = true;
                return &chunk[from..look + i + 1];
            }
        }
        &chunk[from..]
    }
}

/// Feed segment k (from a [`SegmentCut`]) to `feed`. Returns whether the file ended within it.
fn feed_cut<S: ByteSource + ?Sized>(src: &S, mut cut: SegmentCut, buf: &mut Vec<u8>, feed: &mut dyn FnMut(&[u8]) -> Result<(), IntakeError>) -> Result<bool, ReadError> {
    while !cut.done() {
        let c = read_chunk(src, cut.offset(), buf).map_err(ReadError::Io)?;
        if c.is_empty() {
            return Ok(true);
        }
        let c = cut.cut(c);
        if !c.is_empty() {
            feed(c).map_err(ReadError::Intake)?;
        }
    }
    Ok(false)
}

/// Segment k read on its own into a part (from `tpl`'s settings).
fn read_part<S: ByteSource + ?Sized>(src: &S, segment: u64, k: usize, tpl: &Run, buf: &mut Vec<u8>) -> Part {
    let mut run = tpl.clone_part();
    let mut fed = 0u64;
    let ended = feed_cut(src, SegmentCut::new(segment, k), buf, &mut |c| {
        fed += c.len() as u64;
        run.push(c, false)
    });
    match ended {
        Err(_) => Part::Unfit,
        Ok(_) if fed == 0 => Part::Empty,
        Ok(ended) => {
            // a segment that did not reach its end LF ends with the file
            if ended && run.push(&[], true).is_err() {
                return Part::Unfit;
            }
            Part::Read(run, fed, tpl.order)
        }
    }
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
            let ended = feed_cut(src, SegmentCut::new(segment, 0), &mut buf, &mut |c| intake.feed(c))?;
            let tpl = if segments > 1 && !ended { intake.template() } else { None };
            let Some(tpl) = tpl else {
                publish(None);
                stats.segments = 1;
                if !ended {
                    feed_cut(src, SegmentCut::rest(segment, 1), &mut buf, &mut |c| intake.feed(c))?;
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
                    let read = matches!(part, Part::Read(..));
                    if !intake.join_part(part) {
                        failed = Some(joined);
                        break;
                    }
                    stats.joined += read as usize;
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
                    feed_cut(src, SegmentCut::new(segment, k), &mut buf, &mut |c| intake.feed(c))?;
                    joined += 1;
                } else {
                    let part = read_part(src, segment, k, &tpl, &mut buf);
                    parts.0.lock().expect("parts")[k] = Some(part);
                }
            };
            stop.store(true, Ordering::Release);
            if let Some(k) = in_turn {
                stats.in_turn_from = Some(k);
                feed_cut(src, SegmentCut::rest(segment, k), &mut buf, &mut |c| intake.feed(c))?;
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

/// Read up to `READ` bytes at `at` into `buf`.
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

impl Intake {
    /// The settings a part starts from: the head's, once it is read, when every row after it
    /// can be read without the rows before (UTF-8, decimal convention known, no preview).
    fn template(&self) -> Option<Box<Run>> {
        match &self.state {
            State::Run(r) if r.decoder.is_none() && r.preview.is_none() && r.conv.is_some() && r.deferred.is_empty() => Some(r.clone_part()),
            _ => None,
        }
    }

    /// Join the next segment's part: true when it is in (or was empty); false, with nothing
    /// changed, when it cannot be joined — then read the rest of the file in turn from that
    /// segment's start ([`SegmentCut::rest`]).
    fn join_part(&mut self, part: Part) -> bool {
        let State::Run(run) = &mut self.state else { return false };
        match part {
            Part::Empty => true,
            Part::Unfit => false,
            Part::Read(p, fed, start_order) => {
                if !run.join(*p, start_order) {
                    return false;
                }
                self.bytes_fed += fed;
                true
            }
        }
    }
}

impl Run {
    /// A run with this one's settings and nothing read: lines from 1, no suppliers.
    fn clone_part(&self) -> Box<Run> {
        let mut r = Run::fresh(self.setup.clone(), self.min_amount, self.conv, self.order, self.ymd_only);
        r.reserved = true;
        Box::new(r)
    }

    /// Append part `p` (read from settings with day/month order `start_order`) when reading it
    /// in turn could not have differed (see the module text); false, leaving self as it was,
    /// otherwise.
    fn join(&mut self, p: Run, start_order: Option<DateOrder>) -> bool {
        let fits = self.pos == self.work.len()
            && self.conv.is_some()
            && p.conv == self.conv
            && self.order == start_order
            && p.order == start_order
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
            reserve_bounded(to, from.len());
            to.extend(from.iter().map(moved));
        }
        self.ledger.accounting.absorb(p.ledger.accounting, off);
        self.date_alts.extend(p.date_alts.iter().map(|&(l, d)| ((l as u64 + off) as u32, d)));
        let room = EXAMPLES_KEPT.saturating_sub(self.amb_date.len());
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
