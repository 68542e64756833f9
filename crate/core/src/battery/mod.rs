//! The digit-test battery and amount checks for one population (a supplier, the whole file, or
//! the credit notes): first, second, first-two, first-three and last-two digits, the summation
//! test, the second-order test, the distortion factor, and amount checks (frequent exact
//! amounts, round amounts, possible duplicates, clusters just below approval limits).
//!
//! Digits are read exactly from the integer amount with [`Amount::leading_digits`]; all tests
//! use |amount| (credit notes are stored positive). One pass over the population feeds every
//! digit test; one radix sort of the amounts feeds the second-order test and the amount checks.
//!
//! Decisions:
//! - Last-two digits: by default the cents of amounts of at least 10.00 (at least the 3rd and
//!   4th significant digits, so close to uniform); [`LastTwoBasis::WholeUnits`] reads the last
//!   two whole-unit digits of amounts of at least 1000 instead, for populations invoiced in
//!   whole units.
//! - First-three and second digits use every nonzero amount (a one-digit amount like 5.00 reads
//!   as "5.0", as its decimal text would); intake already drops amounts below its minimum.
//! - MAD conformity bands are the published fixed bands (see [`BANDS_SOURCE`]); they ignore
//!   sample size, and the calibration module fills `mc_p_value` / `mad_critical` later.
//!
//! A deviation is a reason to look, not proof of wrongdoing: do not accuse a supplier on it
//! alone; defer to professional auditing standards, local law and counsel.

mod amounts;
mod digits;
mod sort;
mod special;

pub use amounts::{
    AmountChecks, DuplicateGroup, Duplicates, DuplicatesMerge, FrequentAmount, LimitCluster, RoundAmounts, RoundLevel,
};
pub use digits::{band_limits, Band, Conformity, DigitTest, BANDS_NOTE, BANDS_SOURCE};
pub use special::{Distortion, SecondOrder, Summation, SummationBin};

use crate::amount::{Amount, SCALE};
use crate::benford;
use crate::ledger::Invoice;
use serde::Serialize;
use sort::Sorted;
pub use sort::{WINDOW_MIN, WINDOW_PARTS};
use std::fmt;
use std::str::FromStr;

/// Which tests to run. Parse from "all" or a comma list of [`TestSet::NAMES`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct TestSet {
    pub first: bool,
    pub second: bool,
    pub first_two: bool,
    pub first_three: bool,
    pub last_two: bool,
    pub summation: bool,
    pub second_order: bool,
    pub distortion: bool,
    pub amounts: bool,
}

impl TestSet {
    /// Valid names, in display order.
    pub const NAMES: [&'static str; 9] = [
        "first", "second", "first_two", "first_three", "last_two", "summation", "second_order",
        "distortion", "amounts",
    ];

    pub const fn all() -> TestSet {
        TestSet {
            first: true,
            second: true,
            first_two: true,
            first_three: true,
            last_two: true,
            summation: true,
            second_order: true,
            distortion: true,
            amounts: true,
        }
    }
    pub const fn none() -> TestSet {
        TestSet {
            first: false,
            second: false,
            first_two: false,
            first_three: false,
            last_two: false,
            summation: false,
            second_order: false,
            distortion: false,
            amounts: false,
        }
    }
    fn slot(&mut self, name: &str) -> Option<&mut bool> {
        Some(match name {
            "first" => &mut self.first,
            "second" => &mut self.second,
            "first_two" => &mut self.first_two,
            "first_three" => &mut self.first_three,
            "last_two" => &mut self.last_two,
            "summation" => &mut self.summation,
            "second_order" => &mut self.second_order,
            "distortion" => &mut self.distortion,
            "amounts" => &mut self.amounts,
            _ => return None,
        })
    }
    pub fn contains(&self, name: &str) -> bool {
        let mut c = *self;
        c.slot(name).is_some_and(|b| *b)
    }
}

impl Default for TestSet {
    fn default() -> Self {
        TestSet::all()
    }
}

/// An unknown test name given to [`TestSet::from_str`].
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TestSetError {
    pub given: String,
}

impl fmt::Display for TestSetError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.given.is_empty() {
            write!(f, "no test named")?;
        } else {
            write!(f, "unknown test '{}'", self.given)?;
        }
        write!(f, "; valid: all, {}", TestSet::NAMES.join(", "))
    }
}
impl std::error::Error for TestSetError {}

impl FromStr for TestSet {
    type Err = TestSetError;
    /// "all", or names separated by commas (white space ignored, case-insensitive, '-' = '_').
    fn from_str(s: &str) -> Result<TestSet, TestSetError> {
        let mut set = TestSet::none();
        let mut any = false;
        for raw in s.split(',') {
            let name = raw.trim().to_ascii_lowercase().replace('-', "_");
            if name.is_empty() {
                continue;
            }
            if name == "all" {
                set = TestSet::all();
            } else {
                *set.slot(&name).ok_or(TestSetError { given: raw.trim().to_string() })? = true;
            }
            any = true;
        }
        if !any {
            return Err(TestSetError { given: String::new() });
        }
        Ok(set)
    }
}

impl fmt::Display for TestSet {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if *self == TestSet::all() {
            return write!(f, "all");
        }
        let names: Vec<&str> = TestSet::NAMES.iter().copied().filter(|n| self.contains(n)).collect();
        write!(f, "{}", names.join(","))
    }
}

/// Which two digits the last-two digits test reads.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum LastTwoBasis {
    /// Default. The last two digits as written with two decimals, i.e. the cents, for amounts
    /// of at least 10.00: they are then at least the 3rd and 4th significant digits, which are
    /// close to uniform for Benford data (so 1/100 per pair is a fair expectation). Digits
    /// beyond the cents (4-decimal amounts) are ignored.
    #[default]
    Cents,
    /// The last two digits of the whole-unit part, for amounts >= 1000 whole units (again at
    /// least the 3rd and 4th significant digits). For populations invoiced in whole units,
    /// where the cents are always 00 (that is reported by the round-amount check).
    WholeUnits,
}

impl LastTwoBasis {
    /// The bin (0..=99) of one amount, or None when the amount is too small for this basis.
    pub fn bin(self, a: Amount) -> Option<u32> {
        let a = a.abs();
        match self {
            LastTwoBasis::Cents => (a.0 >= 10 * SCALE).then(|| a.cents() as u32),
            LastTwoBasis::WholeUnits => {
                let w = a.whole_units();
                (w >= 1000).then_some((w % 100) as u32)
            }
        }
    }
}

impl FromStr for LastTwoBasis {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_lowercase().as_str() {
            "cents" => Ok(LastTwoBasis::Cents),
            "whole" | "whole_units" | "units" => Ok(LastTwoBasis::WholeUnits),
            _ => Err(format!("unknown last-two basis '{s}'; valid: cents, whole_units")),
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct BatteryOptions {
    pub tests: TestSet,
    /// Approval limits entered by the user (default none). Each is checked for a cluster just
    /// below it.
    pub approval_limits: Vec<Amount>,
    /// Width of the window just below each limit, as a fraction of the limit (default 0.10:
    /// [0.9 L, L)). Common practice, no source.
    pub limit_window: f64,
    pub last_two_basis: LastTwoBasis,
    /// How many most frequent exact amounts to list (default 10).
    pub top_amounts: usize,
    /// At most this many invoice indices per listed item (default 500); the count is always
    /// complete and `invoices_truncated` says when the list was cut. `bin_members` gives all.
    pub max_listed: usize,
    /// At most this many duplicate groups listed (default 200, largest amounts first).
    pub max_duplicate_groups: usize,
    /// Summation test: a bin is flagged when its share of the total is at least this many
    /// times the expected 1/90 (default 2.0; common practice, no source).
    pub summation_flag_ratio: f64,
}

impl Default for BatteryOptions {
    fn default() -> Self {
        BatteryOptions {
            tests: TestSet::all(),
            approval_limits: Vec::new(),
            limit_window: 0.10,
            last_two_basis: LastTwoBasis::Cents,
            top_amounts: 10,
            max_listed: 500,
            max_duplicate_groups: 200,
            summation_flag_ratio: 2.0,
        }
    }
}

/// The battery for one population. Fields are None when the test was not selected.
#[derive(Clone, Debug, Serialize, PartialEq, Default)]
pub struct Battery {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub first_digit: Option<DigitTest>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub second_digit: Option<DigitTest>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub first_two: Option<DigitTest>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub first_three: Option<DigitTest>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub last_two: Option<DigitTest>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub summation: Option<Summation>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub second_order: Option<SecondOrder>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub distortion: Option<Distortion>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub amount_checks: Option<AmountChecks>,
}

/// Uniform expectation over `k` bins.
fn uniform(k: usize) -> Vec<f64> {
    vec![1.0 / k as f64; k]
}

/// A population's members, in population order: a slice of invoices (the whole file, the credit
/// notes), references, or indices into the ledger's invoices ([`Indexed`], a supplier). The
/// battery reads members through this, so a population needs no copy or list of references.
pub trait Members {
    fn len(&self) -> usize;
    fn at(&self, p: usize) -> &Invoice;
    fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

impl Members for [Invoice] {
    #[inline]
    fn len(&self) -> usize {
        <[Invoice]>::len(self)
    }
    #[inline]
    fn at(&self, p: usize) -> &Invoice {
        &self[p]
    }
}

impl Members for [&Invoice] {
    #[inline]
    fn len(&self) -> usize {
        <[&Invoice]>::len(self)
    }
    #[inline]
    fn at(&self, p: usize) -> &Invoice {
        self[p]
    }
}

impl<T> Members for Vec<T>
where
    [T]: Members,
{
    #[inline]
    fn len(&self) -> usize {
        Members::len(self.as_slice())
    }
    #[inline]
    fn at(&self, p: usize) -> &Invoice {
        self.as_slice().at(p)
    }
}

/// Members given as indices (ascending: file order) into a slice of invoices.
#[derive(Clone, Copy)]
pub struct Indexed<'a> {
    pub all: &'a [Invoice],
    pub idx: &'a [u32],
}

impl Members for Indexed<'_> {
    #[inline]
    fn len(&self) -> usize {
        self.idx.len()
    }
    #[inline]
    fn at(&self, p: usize) -> &Invoice {
        // Members are mostly read in order: ask for the one PREFETCH ahead now, so that its
        // cache line is on the way (the gaps between members defeat the hardware prefetcher).
        #[cfg(target_arch = "x86_64")]
        if let Some(&j) = self.idx.get(p + PREFETCH) {
            // SAFETY: a prefetch hint never faults; the address is in bounds of `all` anyway.
            unsafe { std::arch::x86_64::_mm_prefetch(self.all.as_ptr().wrapping_add(j as usize) as *const i8, std::arch::x86_64::_MM_HINT_T0) };
        }
        &self.all[self.idx[p] as usize]
    }
}

/// How many members ahead [`Indexed`] asks for (x86-64 only).
#[cfg(target_arch = "x86_64")]
const PREFETCH: usize = 32;

/// Calls `f` with a population's nonzero amounts as sort keys (|amount| in amount units),
/// sorted by amount (ties in index order), window by window in ascending order: each window
/// holds about 1/parts of the members at most ([`sort::windows`]), 8 bytes each.
pub(crate) fn for_each_sorted_window<M: Members + ?Sized>(invoices: &M, parts: usize, mut f: impl FnMut(&Sorted)) {
    let amount = |i: usize| invoices.at(i).amount.0.unsigned_abs();
    for w in sort::windows(invoices.len(), parts, amount) {
        f(&Sorted::of_window(invoices.len(), amount, w));
    }
}

/// Run the selected tests over one population.
pub fn run<M: Members + ?Sized>(invoices: &M, opts: &BatteryOptions) -> Battery {
    run_with_totals(invoices, opts, None).0
}

/// A population's totals, gathered in the battery's pass over it: the sum of the amounts
/// (saturating), the smallest and largest amount (zero for no members), and the first and last
/// date (days since 1970-01-01; None when no member is dated).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Totals {
    pub total: Amount,
    pub min: Amount,
    pub max: Amount,
    pub first_date: Option<i32>,
    pub last_date: Option<i32>,
}

#[derive(Clone, Copy)]
struct TotalsAcc {
    total: Amount,
    lo: Amount,
    hi: Amount,
    d0: i32,
    d1: i32,
}

impl TotalsAcc {
    fn new() -> TotalsAcc {
        TotalsAcc { total: Amount::ZERO, lo: Amount(i64::MAX), hi: Amount(0), d0: i32::MAX, d1: i32::MIN }
    }
    #[inline]
    fn add(&mut self, inv: &Invoice) {
        self.total = self.total.saturating_add(inv.amount);
        self.lo = self.lo.min(inv.amount);
        self.hi = self.hi.max(inv.amount);
        if inv.date != crate::ledger::NO_DATE {
            self.d0 = self.d0.min(inv.date);
            self.d1 = self.d1.max(inv.date);
        }
    }
    fn finish(self, empty: bool) -> Totals {
        let date = |d: i32| (d != i32::MAX && d != i32::MIN).then_some(d);
        Totals { total: self.total, min: if empty { Amount::ZERO } else { self.lo }, max: self.hi, first_date: date(self.d0), last_date: date(self.d1) }
    }
}

/// As [`run`], with the population's [`Totals`] from the same pass (one pass less over members
/// read through an index list), and its duplicate findings known already when `known` is
/// given (merged from the parts it is a disjoint union of, by [`DuplicatesMerge`]; the whole
/// file from its suppliers), which then are not searched again.
pub fn run_with_totals<M: Members + ?Sized>(invoices: &M, opts: &BatteryOptions, known: Option<Duplicates>) -> (Battery, Totals) {
    run_in_windows(invoices, opts, known, sort::WINDOW_PARTS)
}

/// As [`run_with_totals`], sorting the amounts in windows of about 1/parts of the members
/// ([`sort::windows`]; 8 bytes each): more parts hold less at once and take more passes. The
/// results do not depend on it.
pub fn run_in_windows<M: Members + ?Sized>(invoices: &M, opts: &BatteryOptions, known: Option<Duplicates>, parts: usize) -> (Battery, Totals) {
    let t = opts.tests;
    let mut totals = TotalsAcc::new();
    let mut c1 = [0u64; 9];
    let mut c2 = [0u64; 10];
    let mut c12 = [0u64; 90];
    let mut c3 = vec![0u64; 900];
    let mut c_last = [0u64; 100];
    let mut sum_acc = special::SummationAcc::new();
    let mut dist_acc = special::DistortionAcc::default();
    let need_pass = t.first || t.second || t.first_two || t.first_three || t.last_two || t.summation || t.distortion;
    if need_pass {
        for i in 0..invoices.len() {
            let inv = invoices.at(i);
            totals.add(inv);
            let a = inv.amount.abs();
            let Some(d3) = a.leading_digits(3) else { continue };
            let d2 = d3 / 10;
            c1[(d3 / 100 - 1) as usize] += 1;
            c2[(d2 % 10) as usize] += 1;
            c12[(d2 - 10) as usize] += 1;
            c3[(d3 - 100) as usize] += 1;
            if t.last_two {
                if let Some(b) = opts.last_two_basis.bin(a) {
                    c_last[b as usize] += 1;
                }
            }
            if t.summation {
                sum_acc.add(d2, a, i);
            }
            if t.distortion {
                dist_acc.add(a);
            }
        }
    }
    if !need_pass {
        for i in 0..invoices.len() {
            totals.add(invoices.at(i));
        }
    }
    let mut b = Battery::default();
    if t.first {
        b.first_digit = Some(DigitTest::from_counts("first_digit", 1, c1.to_vec(), benford::first_digit()));
    }
    if t.second {
        b.second_digit = Some(DigitTest::from_counts("second_digit", 0, c2.to_vec(), benford::second_digit()));
    }
    if t.first_two {
        b.first_two = Some(DigitTest::from_counts("first_two", 10, c12.to_vec(), benford::first_two()));
    }
    if t.first_three {
        b.first_three = Some(DigitTest::from_counts("first_three", 100, c3, benford::first_three()));
    }
    if t.last_two {
        b.last_two = Some(DigitTest::from_counts("last_two", 0, c_last.to_vec(), uniform(100)));
    }
    if t.summation {
        b.summation = Some(sum_acc.finish(opts.summation_flag_ratio));
    }
    if t.distortion {
        b.distortion = Some(dist_acc.finish());
    }
    if t.second_order || t.amounts {
        let mut so = special::SecondOrderAcc::default();
        let mut runs = amounts::RunsAcc::new(known.is_some());
        for_each_sorted_window(invoices, parts, |sorted| {
            if t.second_order {
                so.feed(sorted);
            }
            if t.amounts {
                runs.feed(invoices, sorted, opts);
            }
        });
        if t.second_order {
            b.second_order = Some(so.finish());
        }
        if t.amounts {
            b.amount_checks = Some(amounts::amount_checks(invoices, runs, opts, known));
        }
    }
    (b, totals.finish(invoices.is_empty()))
}

/// Indices (into `invoices`, ascending) of the invoices behind one bar of a digit chart.
/// `test` is a battery field name or a [`TestSet`] name: first_digit/first, second_digit/second,
/// first_two, first_three, last_two (cents basis; use [`bin_members_with`] for another),
/// summation (same bins as first_two), second_order (both invoices of every sorted-neighbour
/// pair whose difference falls in the bin). Unknown test or bin: empty.
pub fn bin_members<M: Members + ?Sized>(test: &str, bin_value: u32, invoices: &M) -> Vec<usize> {
    bin_members_with(test, bin_value, invoices, &BatteryOptions::default())
}

/// [`bin_members`] honouring the options (the last-two basis).
pub fn bin_members_with<M: Members + ?Sized>(test: &str, bin_value: u32, invoices: &M, opts: &BatteryOptions) -> Vec<usize> {
    let members = || (0..invoices.len()).map(|i| (i, invoices.at(i)));
    let pick = |k: u32| -> Vec<usize> {
        members().filter(|(_, inv)| inv.amount.leading_digits(k) == Some(bin_value)).map(|(i, _)| i).collect()
    };
    match test {
        "first_digit" | "first" => pick(1),
        "first_two" | "summation" => pick(2),
        "first_three" => pick(3),
        "second_digit" | "second" => members()
            .filter(|(_, inv)| inv.amount.second_digit() == Some(bin_value))
            .map(|(i, _)| i)
            .collect(),
        "last_two" => members()
            .filter(|(_, inv)| opts.last_two_basis.bin(inv.amount) == Some(bin_value))
            .map(|(i, _)| i)
            .collect(),
        "second_order" => {
            let mut out = Vec::new();
            let mut prev: Option<(u64, u32)> = None;
            for_each_sorted_window(invoices, sort::WINDOW_PARTS, |sorted| {
                for i in 0..sorted.len() {
                    let (k, x) = (sorted.key(i), sorted.idx(i));
                    if let Some((pk, px)) = prev.replace((k, x)) {
                        let d = k - pk;
                        if d > 0 && Amount(d as i64).leading_digits(2) == Some(bin_value) {
                            out.push(px as usize);
                            out.push(x as usize);
                        }
                    }
                }
            });
            out.sort_unstable();
            out.dedup();
            out
        }
        _ => Vec::new(),
    }
}
