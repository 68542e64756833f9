//! Heap memory of the native screen, phase by phase, measured by a counting global allocator
//! (bytes requested from the allocator; not RSS, which `/usr/bin/time -f %M` gives).
//! Usage: mem_profile FILE [--no-calibration]
//! Prints one JSON line: rows, and per phase the heap live at its start, its peak above that,
//! and the bytes live at its end (all in bytes; `_per_row` divided by the analysed rows).
//! Phases follow `digitdrift screen FILE --format json`: intake fed 1 MiB reads (the reading
//! buffer counted), every supplier's battery, calibration + ranking + the whole file + the
//! credit notes (report::finish_screen), then the JSON text (streamed, as the CLI writes it).
use digitdrift_core::intake::{Intake, IntakeOptions};
use digitdrift_core::report::{self, ScreenOptions};
use std::alloc::{GlobalAlloc, Layout, System};
use std::io::Read;
use std::sync::atomic::{AtomicUsize, Ordering::Relaxed};

struct Counting;
static CUR: AtomicUsize = AtomicUsize::new(0);
static PEAK: AtomicUsize = AtomicUsize::new(0);

fn grew(n: usize) {
    let c = CUR.fetch_add(n, Relaxed) + n;
    PEAK.fetch_max(c, Relaxed);
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, l: Layout) -> *mut u8 {
        let p = System.alloc(l);
        if !p.is_null() {
            grew(l.size());
        }
        p
    }
    unsafe fn alloc_zeroed(&self, l: Layout) -> *mut u8 {
        let p = System.alloc_zeroed(l);
        if !p.is_null() {
            grew(l.size());
        }
        p
    }
    unsafe fn dealloc(&self, p: *mut u8, l: Layout) {
        System.dealloc(p, l);
        CUR.fetch_sub(l.size(), Relaxed);
    }
    unsafe fn realloc(&self, p: *mut u8, l: Layout, new: usize) -> *mut u8 {
        // A growing realloc is counted as the allocator must hold it at worst: old and new
        // block at once (what it costs in wasm linear memory, where blocks are copied, not
        // remapped). A shrinking one is done in place (glibc and dlmalloc split the block).
        let q = System.realloc(p, l, new);
        if !q.is_null() {
            if new > l.size() {
                grew(new);
                CUR.fetch_sub(l.size(), Relaxed);
            } else {
                CUR.fetch_sub(l.size() - new, Relaxed);
            }
        }
        q
    }
}

#[global_allocator]
static A: Counting = Counting;

struct Phase {
    name: &'static str,
    start: usize,
    peak: usize,
    end: usize,
}

fn phase<T>(out: &mut Vec<Phase>, name: &'static str, f: impl FnOnce() -> T) -> T {
    let start = CUR.load(Relaxed);
    PEAK.store(start, Relaxed);
    let r = f();
    out.push(Phase { name, start, peak: PEAK.load(Relaxed), end: CUR.load(Relaxed) });
    r
}

fn main() {
    let mut args = std::env::args().skip(1);
    let path = args.next().expect("usage: mem_profile FILE [--no-calibration]");
    let mut sopts = ScreenOptions::default();
    if args.next().as_deref() == Some("--no-calibration") {
        sopts.calibration = None;
    }
    let mut ph = Vec::new();
    let res = phase(&mut ph, "intake", || {
        let mut it = Intake::new(IntakeOptions::default());
        let mut f = std::fs::File::open(&path).expect("cannot open FILE");
        // As the CLI does (digitdrift screen FILE): the file's size reserves the store.
        it.set_size_hint(f.metadata().expect("metadata").len());
        let mut buf = vec![0u8; 1 << 20];
        loop {
            let k = f.read(&mut buf).expect("read failed");
            if k == 0 {
                break;
            }
            it.feed(&buf[..k]).expect("intake failed");
        }
        it.finish().expect("intake failed")
    });
    let l = &res.ledger;
    let (n, c) = (l.invoices.len(), l.credit_notes.len());
    let names: usize = l.suppliers.iter().map(|s| s.name.capacity() + s.key.capacity()).sum();
    let store = (l.invoices.capacity() + l.credit_notes.capacity()) * std::mem::size_of_val(&l.invoices[..1][0]);
    let b = phase(&mut ph, "supplier_batteries", || report::supplier_batteries(l, &sopts));
    let mut cal = sopts.calibration.as_ref().map(|c| digitdrift_core::calibrate::Calibrator::new(c.clone()));
    let rep = phase(&mut ph, "finish_screen", || report::finish_screen(l, &res.info, IntakeOptions::default().min_amount, &sopts, b, cal.as_mut()));
    drop(cal);
    // Written as the CLI writes it (streamed; counted, not kept).
    struct Count(usize);
    impl std::io::Write for Count {
        fn write(&mut self, b: &[u8]) -> std::io::Result<usize> {
            self.0 += b.len();
            Ok(b.len())
        }
        fn flush(&mut self) -> std::io::Result<()> {
            Ok(())
        }
    }
    let json_len = phase(&mut ph, "json", || {
        let mut c = Count(0);
        serde_json::to_writer_pretty(std::io::BufWriter::new(&mut c), &rep).unwrap();
        c.0
    });
    let overall = ph.iter().map(|p| p.peak).max().unwrap_or(0);
    let pr = |b: usize| b as f64 / n.max(1) as f64;
    let phases: Vec<String> = ph
        .iter()
        .map(|p| {
            format!(
                "\"{}\":{{\"start\":{},\"peak_above_start\":{},\"end\":{},\"peak_above_start_per_row\":{:.2}}}",
                p.name,
                p.start,
                p.peak - p.start,
                p.end,
                pr(p.peak - p.start)
            )
        })
        .collect();
    println!(
        "{{\"analysed\":{n},\"credit_notes\":{c},\"suppliers\":{},\"names_bytes\":{names},\"invoice_store_bytes\":{store},\"invoice_store_per_row\":{:.2},\"heap_peak\":{overall},\"heap_peak_per_row\":{:.2},\"json_len\":{},{}}}",
        l.suppliers.len(),
        pr(store),
        pr(overall),
        json_len,
        phases.join(",")
    );
}
