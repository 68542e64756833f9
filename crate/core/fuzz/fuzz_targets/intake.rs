//! Fuzz the ledger intake: any bytes, fed in chunks whose sizes come from the input, must
//! never panic, and a finished ledger must keep read = analysed + excluded.
#![no_main]

use digitdrift_core::intake::{preview, Intake, IntakeOptions};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    // First byte: chunk size 1..=256 (so splits land everywhere), rest: the file.
    let (chunk, file) = match data.split_first() {
        Some((&c, rest)) => (c as usize + 1, rest),
        None => (1, data),
    };
    let _ = preview(file, &IntakeOptions::default());
    let mut it = Intake::new(IntakeOptions::default());
    for c in file.chunks(chunk) {
        if it.feed(c).is_err() {
            return;
        }
    }
    if let Ok(r) = it.finish() {
        let a = &r.ledger.accounting;
        assert!(a.is_consistent());
        assert_eq!(a.analysed as usize, r.ledger.invoices.len());
        assert!(r.ledger.invoices.iter().all(|i| (i.supplier as usize) < r.ledger.suppliers.len()));
    }
});
