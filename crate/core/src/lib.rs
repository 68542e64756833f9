//! digitdrift core: pure Rust over bytes and counts. No browser, no wasm types.
//!
//! Code map (see DEVELOPERS.md for the invariants):
//! - [`amount`]   exact money amounts (scaled integers) and their significant digits
//! - [`benford`]  expected digit proportions under Benford's law
//! - [`ledger`]   the in-memory ledger: compact invoices, supplier names, row accounting
//! - [`intake`]   bytes -> ledger: sniffing, column guessing, amount/date parsing, exclusions
//! - [`stats`]    MAD, chi-square, Z, Kolmogorov-Smirnov over digit counts
//! - [`battery`]  the digit-test battery and amount checks per population
//! - [`calibrate`] Monte Carlo null distributions per sample size, verdicts, invoices needed, FDR
//! - [`monitor`]  anytime-valid evidence, change detection, replay, amount at risk
//! - [`report`]   the screen result and its JSON / text renderings
//! - [`trial`]    detection trial: invented invoices on a copy, sensitivity and false alarms

pub mod amount;
pub mod benford;
pub mod ledger;
pub mod intake;
pub mod stats;
pub mod battery;
pub mod calibrate;
pub mod monitor;
pub mod report;
pub mod export;
pub mod counts;
pub mod rng;
pub mod trial;
pub mod workload;

pub use amount::Amount;
pub use ledger::{Accounting, ExclusionReason, Invoice, Ledger};
