//! Amount checks beside the digits: most frequent exact amounts, round amounts, possible
//! duplicate invoices, clusters just below approval limits. Every item that lists invoices
//! carries their indices into the population slice given to [`super::run`].

use super::sort::{sort_u64_in_place, Sorted};
use super::Members;
use super::BatteryOptions;
use crate::amount::{Amount, SCALE};
use crate::ledger::NO_DATE;
use crate::stats;
use serde::Serialize;

pub const AMOUNT_NOTE: &str = "Amount checks point at invoices worth a look. Repeated, round or \
near-limit amounts have many innocent causes (fixed fees, instalments, price lists); do not accuse \
a supplier on them alone.";

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct FrequentAmount {
    pub amount: Amount,
    pub count: u64,
    /// count / n.
    pub share: f64,
    pub invoices: Vec<usize>,
    pub invoices_truncated: bool,
}

/// One level of roundness. `conditional_rate` is count / base, where the base is the coarser
/// level (all amounts for `.00`; `.00` amounts >= 100 for whole hundreds; whole hundreds >= 1000
/// for whole thousands), so each level is judged against the population's own rate one level
/// up. `reference_rate` is what uniform trailing digits would give; `p_value` is the binomial
/// upper tail P(X >= count | base, reference_rate).
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct RoundLevel {
    pub level: &'static str,
    pub count: u64,
    /// count / n.
    pub rate: f64,
    pub base: u64,
    pub base_description: &'static str,
    pub conditional_rate: f64,
    pub reference_rate: f64,
    pub p_value: f64,
    pub invoices: Vec<usize>,
    pub invoices_truncated: bool,
}

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct RoundAmounts {
    pub n: u64,
    pub levels: Vec<RoundLevel>,
    pub reference: &'static str,
}

pub const ROUND_REFERENCE: &str = "Reference rates assume uniform trailing digits: 1/100 for cents \
of .00, 1/100 for a .00 amount of at least 100 to be a whole hundred, 1/10 for a whole hundred of at \
least 1000 to be a whole thousand (common practice, no source; for 3-digit amounts Benford's second \
digit makes 00 slightly likelier, about 1.2 %). Compare a supplier's rates with the whole file's too.";

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct DuplicateGroup {
    /// "same_amount_date" (same supplier, amount and date) or "same_number" (same supplier and
    /// invoice number).
    pub kind: &'static str,
    pub supplier: u32,
    /// The amount (for same_number: the largest amount in the group).
    pub amount: Amount,
    /// Days since 1970-01-01 (same_amount_date only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub date: Option<i32>,
    pub count: u64,
    /// Sum of the amounts beyond the first invoice of the group (paid twice if a true duplicate).
    pub extra_amount: Amount,
    pub invoices: Vec<usize>,
}

#[derive(Clone, Debug, Default, Serialize, PartialEq)]
pub struct Duplicates {
    pub same_amount_date_groups: u64,
    pub same_amount_date_invoices: u64,
    pub same_number_groups: u64,
    pub same_number_invoices: u64,
    /// Invoices without a date (not checked for same amount + date).
    pub undated: u64,
    /// Invoices without an invoice number (not checked for same number).
    pub unnumbered: u64,
    /// Largest extra amount first.
    pub groups: Vec<DuplicateGroup>,
    pub groups_truncated: bool,
}

/// A cluster check just below one approval limit L: the window [low, L) against two
/// neighbouring bands of three times its width on a log scale, [band_low, low) and
/// [L, band_high). If amounts were spread evenly on a log scale near L (a locally smooth
/// density; common practice, no source — our own design), each of the N invoices in
/// [band_low, band_high) falls in the window with probability `expected_share` =
/// log(L/low) / log(band_high/band_low); `p_value` = P(X >= count) for X ~ binomial(N, share).
/// Invoices split to stay below L also thin out the band above L, which this design counts.
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct LimitCluster {
    pub limit: Amount,
    pub window_low: Amount,
    pub band_low: Amount,
    pub band_high: Amount,
    pub count: u64,
    pub below_band_count: u64,
    pub above_band_count: u64,
    pub expected_share: f64,
    /// Count expected in the window from the two neighbouring bands alone.
    pub expected: f64,
    /// count / expected (null when nothing is expected).
    pub ratio: f64,
    pub p_value: f64,
    pub invoices: Vec<usize>,
    pub invoices_truncated: bool,
}

#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct AmountChecks {
    /// Nonzero amounts examined.
    pub n: u64,
    pub distinct_amounts: u64,
    pub most_frequent: Vec<FrequentAmount>,
    pub round: RoundAmounts,
    pub duplicates: Duplicates,
    /// One per approval limit given (default none).
    pub limits: Vec<LimitCluster>,
    pub note: &'static str,
}

/// Listed order of duplicate groups: largest extra amount first, then by members (stable).
fn sort_groups(g: &mut [DuplicateGroup]) {
    g.sort_by(|a, b| b.extra_amount.cmp(&a.extra_amount).then(a.invoices.cmp(&b.invoices)));
}

/// Keep at most about 2 x `keep` groups in memory: when full, keep the first `keep` of them in
/// listed order. A stable sort of the kept ones followed by later groups gives the same first
/// `keep` as one sort of all of them at the end.
fn prune_groups(g: &mut Vec<DuplicateGroup>, keep: usize) {
    if g.len() >= 2 * keep.max(64) {
        sort_groups(g);
        g.truncate(keep);
    }
}

fn capped(mut v: Vec<usize>, cap: usize) -> (Vec<usize>, bool) {
    v.sort_unstable();
    let t = v.len() > cap;
    v.truncate(cap);
    (v, t)
}

/// The runs of equal amounts, fed the sorted amounts window by window (ascending): distinct
/// amounts, the most frequent exact amounts (ties: larger amount first) with their members,
/// and the groups of the same supplier, amount and date. No list of runs is kept.
#[derive(Default)]
pub(crate) struct RunsAcc {
    n: u64,
    distinct: u64,
    /// (count, amount, capped members, truncated), best first; at most top_amounts.
    top: Vec<(usize, u64, Vec<usize>, bool)>,
    groups: Vec<DuplicateGroup>,
    sad_g: u64,
    sad_i: u64,
    local: Vec<(u32, i32, u32)>,
    /// The duplicate groups are known already (see [`DuplicatesMerge`]): only the runs.
    known: bool,
}

impl RunsAcc {
    /// `known`: the population's duplicate groups come from [`DuplicatesMerge`], so the runs
    /// are not grouped by supplier and date here.
    pub fn new(known: bool) -> RunsAcc {
        RunsAcc { known, ..RunsAcc::default() }
    }

    pub fn feed<M: Members + ?Sized>(&mut self, invoices: &M, sorted: &Sorted, opts: &BatteryOptions) {
        self.n += sorted.len() as u64;
        let better = |l: usize, k: u64, t: &(usize, u64, Vec<usize>, bool)| l > t.0 || (l == t.0 && k > t.1);
        let mut i = 0;
        while i < sorted.len() {
            let key = sorted.key(i);
            let mut j = i + 1;
            while j < sorted.len() && sorted.key(j) == key {
                j += 1;
            }
            self.distinct += 1;
            let (s, l) = (i, j - i);
            i = j;
            if l < 2 {
                continue;
            }
            let top = &mut self.top;
            if opts.top_amounts > 0 && (top.len() < opts.top_amounts || better(l, key, &top[top.len() - 1])) {
                let at = top.iter().position(|t| better(l, key, t)).unwrap_or(top.len());
                // Members of a run are in index order: the first cap + 1 decide the list.
                let (inv, t) = capped((s..s + l).take(opts.max_listed + 1).map(|k| sorted.idx(k) as usize).collect(), opts.max_listed);
                top.insert(at, (l, key, inv, t));
                top.truncate(opts.top_amounts);
            }
            if self.known {
                continue;
            }
            // Same supplier, amount and date (dated invoices only).
            let local = &mut self.local;
            local.clear();
            for k in s..s + l {
                let idx = sorted.idx(k);
                let inv = invoices.at(idx as usize);
                if inv.date != NO_DATE {
                    local.push((inv.supplier, inv.date, idx));
                }
            }
            local.sort_unstable();
            for g in repeated_runs(&local) {
                self.sad_g += 1;
                self.sad_i += g.len() as u64;
                let amt = Amount(key as i64);
                prune_groups(&mut self.groups, opts.max_duplicate_groups);
                self.groups.push(DuplicateGroup {
                    kind: "same_amount_date",
                    supplier: g[0].0,
                    amount: amt,
                    date: Some(g[0].1),
                    count: g.len() as u64,
                    extra_amount: Amount(amt.0.saturating_mul((g.len() - 1) as i64)),
                    invoices: g.iter().map(|x| x.2 as usize).collect(),
                });
            }
        }
    }
}

/// The runs of two or more entries with equal (supplier, key) in a sorted list of
/// (supplier, key, index): the candidate duplicate groups.
fn repeated_runs<K: PartialEq>(v: &[(u32, K, u32)]) -> impl Iterator<Item = &[(u32, K, u32)]> {
    v.chunk_by(|x, y| x.0 == y.0 && x.1 == y.1).filter(|g| g.len() >= 2)
}

/// The amount checks from the runs (fed every window) and passes over the population.
/// `known`: the population's duplicates, merged from its suppliers' ([`DuplicatesMerge`]);
/// the runs were then fed with `RunsAcc::new(true)`.
pub(crate) fn amount_checks<M: Members + ?Sized>(invoices: &M, runs: RunsAcc, opts: &BatteryOptions, known: Option<Duplicates>) -> AmountChecks {
    let RunsAcc { n, distinct, top, mut groups, sad_g, sad_i, .. } = runs;
    let cap = opts.max_listed;
    let (mut sn_g, mut sn_i) = (0u64, 0u64);
    let most_frequent = top
        .into_iter()
        .map(|(count, key, inv, t)| FrequentAmount {
            amount: Amount(key as i64),
            count: count as u64,
            share: count as f64 / n as f64,
            invoices: inv,
            invoices_truncated: t,
        })
        .collect();
    let limits = opts
        .approval_limits
        .iter()
        .filter(|l| l.0 > 0)
        .map(|&l| limit_cluster(invoices, l, opts.limit_window, cap))
        .collect();

    // A 32-bit mix of (supplier, number) above the member's index in one word.
    let mixed = |i: usize, h: u64, s: u32| {
        let h = (h ^ (s as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15)).wrapping_mul(0xD6E8_FEB8_6659_FD93);
        (h >> 32) << 32 | i as u64
    };
    // One sequential pass: round amounts, undated and numbered invoices (and, for a population
    // of one window, the numbered words themselves).
    let one_window = invoices.len() <= super::WINDOW_MIN;
    let mut numbered: Vec<u64> = Vec::new();
    let (mut c00, mut b100, mut c100, mut b1000, mut c1000) = (0u64, 0u64, 0u64, 0u64, 0u64);
    let (mut l00, mut l100, mut l1000) = (Vec::new(), Vec::new(), Vec::new());
    let (mut undated, mut numbered_count) = (0u64, 0usize);
    // Numbered invoices per value of the mix's top 12 bits: the sizes of the windows below.
    let mut by_top = if one_window { Vec::new() } else { vec![0usize; 1 << 12] };
    for i in 0..invoices.len() {
        let inv = invoices.at(i);
        if inv.date == NO_DATE {
            undated += 1;
        }
        if inv.invoice_hash != 0 && known.is_none() {
            numbered_count += 1;
            let x = mixed(i, inv.invoice_hash, inv.supplier);
            if one_window {
                numbered.push(x);
            } else {
                by_top[(x >> 52) as usize] += 1;
            }
        }
        let v = inv.amount.0.unsigned_abs();
        if v == 0 || v % SCALE as u64 != 0 {
            continue;
        }
        c00 += 1;
        if l00.len() <= cap {
            l00.push(i);
        }
        let w = v / SCALE as u64;
        if w < 100 {
            continue;
        }
        b100 += 1;
        if w % 100 != 0 {
            continue;
        }
        c100 += 1;
        if l100.len() <= cap {
            l100.push(i);
        }
        if w < 1000 {
            continue;
        }
        b1000 += 1;
        if w % 1000 == 0 {
            c1000 += 1;
            if l1000.len() <= cap {
                l1000.push(i);
            }
        }
    }
    let level = |level, count: u64, base: u64, base_description, reference_rate: f64, list: Vec<usize>| {
        let (inv, t) = capped(list, cap);
        RoundLevel {
            level,
            count,
            rate: if n == 0 { 0.0 } else { count as f64 / n as f64 },
            base,
            base_description,
            conditional_rate: if base == 0 { 0.0 } else { count as f64 / base as f64 },
            reference_rate,
            p_value: stats::binom_sf_ge(count, base, reference_rate),
            invoices: inv,
            invoices_truncated: t,
        }
    };
    let round = RoundAmounts {
        n,
        levels: vec![
            level("cents_00", c00, n, "all amounts", 0.01, l00),
            level("whole_hundreds", c100, b100, "amounts with .00 cents and at least 100", 0.01, l100),
            level("whole_thousands", c1000, b1000, "whole hundreds of at least 1000", 0.1, l1000),
        ],
        reference: ROUND_REFERENCE,
    };
    if let Some(duplicates) = known {
        return AmountChecks { n, distinct_amounts: distinct, most_frequent, round, duplicates, limits, note: AMOUNT_NOTE };
    }

    // Same supplier and invoice number. The numbered words sorted in place: equal pairs land in
    // one run (in index order); the rare unequal pairs sharing a mix are told apart exactly
    // inside the run.
    // Large populations go in 2^k windows by the mix's top k bits (the mix is spread evenly, so
    // each holds about a quarter of the numbered invoices at most), ascending.
    let unnumbered = invoices.len() as u64 - numbered_count as u64;
    let per = (numbered_count / 4).max(super::WINDOW_MIN);
    let mut k = 0u32;
    while k < 12 && numbered_count >> k > per {
        k += 1;
    }
    debug_assert!(!one_window || k == 0);
    if !one_window {
        // One buffer, sized for the largest window (never grown by doubling).
        let largest = by_top.chunks(1 << (12 - k)).map(|c| c.iter().sum::<usize>()).max().unwrap_or(0);
        numbered = Vec::with_capacity(largest);
    }
    drop(by_top);
    let mut local2: Vec<(u32, u64, u32)> = Vec::new();
    for w in 0..1u64 << k {
        if !one_window {
            numbered.clear();
            for i in 0..invoices.len() {
                let inv = invoices.at(i);
                if inv.invoice_hash != 0 {
                    let x = mixed(i, inv.invoice_hash, inv.supplier);
                    if k == 0 || x >> (64 - k) == w {
                        numbered.push(x);
                    }
                }
            }
        }
        sort_u64_in_place(&mut numbered);
        let mut i = 0;
        while i < numbered.len() {
            let mut j = i + 1;
            while j < numbered.len() && numbered[j] >> 32 == numbered[i] >> 32 {
                j += 1;
            }
            if j - i >= 2 {
                local2.clear();
                local2.extend(numbered[i..j].iter().map(|&x| {
                    let idx = x as u32;
                    let inv = invoices.at(idx as usize);
                    (inv.supplier, inv.invoice_hash, idx)
                }));
                local2.sort_unstable();
                for g in repeated_runs(&local2) {
                    sn_g += 1;
                    sn_i += g.len() as u64;
                    let idx: Vec<usize> = g.iter().map(|x| x.2 as usize).collect();
                    let amts: Vec<i64> = idx.iter().map(|&x| invoices.at(x).amount.0.saturating_abs()).collect();
                    let max = *amts.iter().max().unwrap();
                    let total: i64 = amts.iter().fold(0i64, |s, &x| s.saturating_add(x));
                    prune_groups(&mut groups, opts.max_duplicate_groups);
                    groups.push(DuplicateGroup {
                        kind: "same_number",
                        supplier: g[0].0,
                        amount: Amount(max),
                        date: None,
                        count: g.len() as u64,
                        extra_amount: Amount(total.saturating_sub(amts[0])),
                        invoices: idx,
                    });
                }
            }
            i = j;
        }
    }
    drop(numbered);
    sort_groups(&mut groups);
    let groups_truncated = sad_g + sn_g > opts.max_duplicate_groups as u64;
    groups.truncate(opts.max_duplicate_groups);
    let duplicates = Duplicates {
        same_amount_date_groups: sad_g,
        same_amount_date_invoices: sad_i,
        same_number_groups: sn_g,
        same_number_invoices: sn_i,
        undated,
        unnumbered,
        groups,
        groups_truncated,
    };

    AmountChecks { n, distinct_amounts: distinct, most_frequent, round, duplicates, limits, note: AMOUNT_NOTE }
}

/// The duplicate findings of a population that is a disjoint union of others (the whole file,
/// of its suppliers), from theirs: every group lies within one supplier (same supplier and
/// amount and date, or same supplier and number), so the counts add up, and the population's
/// first `max_duplicate_groups` groups in listed order are among its parts' first as many
/// (a part's members mapped to the population's indices keep their order, and with it the
/// order of groups of equal extra amount).
#[derive(Default)]
pub struct DuplicatesMerge {
    d: Option<Duplicates>,
}

impl DuplicatesMerge {
    /// Add one part's duplicates; `to_whole(i)` is the population index of the part's member i
    /// (increasing in i).
    pub fn add(&mut self, part: &Duplicates, to_whole: impl Fn(usize) -> usize, keep: usize) {
        let d = self.d.get_or_insert_with(Duplicates::default);
        d.same_amount_date_groups += part.same_amount_date_groups;
        d.same_amount_date_invoices += part.same_amount_date_invoices;
        d.same_number_groups += part.same_number_groups;
        d.same_number_invoices += part.same_number_invoices;
        d.undated += part.undated;
        d.unnumbered += part.unnumbered;
        for g in &part.groups {
            prune_groups(&mut d.groups, keep);
            d.groups.push(DuplicateGroup {
                kind: g.kind,
                supplier: g.supplier,
                amount: g.amount,
                date: g.date,
                count: g.count,
                extra_amount: g.extra_amount,
                invoices: g.invoices.iter().map(|&i| to_whole(i)).collect(),
            });
        }
    }

    /// The population's duplicates (None when no part was added).
    pub fn finish(self, keep: usize) -> Option<Duplicates> {
        let mut d = self.d?;
        sort_groups(&mut d.groups);
        d.groups_truncated = d.same_amount_date_groups + d.same_number_groups > keep as u64;
        d.groups.truncate(keep);
        Some(d)
    }
}

/// Counts by one pass over the population: `#keys in [x, y)` is what positions in the sorted
/// amounts would give (zero amounts never count: every band starts at 1 or more).
fn limit_cluster<M: Members + ?Sized>(invoices: &M, limit: Amount, window: f64, cap: usize) -> LimitCluster {
    let w = window.clamp(1e-6, 0.9);
    let lv = limit.0 as f64;
    let low = ((lv * (1.0 - w)).round() as u64).max(1);
    let hi = limit.0 as u64;
    let r = (hi as f64 / low as f64).powi(3);
    let band_low = ((low as f64 / r).round() as u64).max(1);
    let band_high = (hi as f64 * r).round() as u64;
    let (mut count, mut below, mut above) = (0u64, 0u64, 0u64);
    let mut list = Vec::new();
    for i in 0..invoices.len() {
        let v = invoices.at(i).amount.0.unsigned_abs();
        if v >= low && v < hi {
            count += 1;
            if list.len() <= cap {
                list.push(i);
            }
        } else if v >= band_low && v < low {
            below += 1;
        } else if v >= hi && v < band_high {
            above += 1;
        }
    }
    let total = count + below + above;
    let lw = (hi as f64 / low as f64).ln();
    let share = lw / (band_high as f64 / band_low as f64).ln();
    // Expected from the neighbours alone (density per log unit times the window's log width).
    let expected = (below + above) as f64 * lw / ((low as f64 / band_low as f64).ln() + (band_high as f64 / hi as f64).ln());
    let (inv, t) = capped(list, cap);
    LimitCluster {
        limit,
        window_low: Amount(low as i64),
        band_low: Amount(band_low as i64),
        band_high: Amount(band_high as i64),
        count,
        below_band_count: below,
        above_band_count: above,
        expected_share: share,
        expected,
        ratio: if expected > 0.0 { count as f64 / expected } else { f64::NAN },
        p_value: stats::binom_sf_ge(count, total, share),
        invoices: inv,
        invoices_truncated: t,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pruning while groups are found keeps exactly the first groups a single sort of all of
    /// them lists (ties in extra amount and members included; order of finding kept for equals).
    #[test]
    fn pruned_groups_are_the_first_of_one_sort() {
        let mut x: u64 = 0x853c49e6748fea9b;
        let mut all = Vec::new();
        for i in 0..5000usize {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let kind = if i % 2 == 0 { "same_amount_date" } else { "same_number" };
            let members = vec![(x % 40) as usize, 40 + (x >> 20) as usize % 3];
            all.push(DuplicateGroup { kind, supplier: 0, amount: Amount(1), date: None, count: 2, extra_amount: Amount((x >> 40) as i64 % 25), invoices: members });
        }
        for keep in [1usize, 10, 200] {
            let mut pruned = Vec::new();
            for g in &all {
                prune_groups(&mut pruned, keep);
                pruned.push(g.clone());
            }
            sort_groups(&mut pruned);
            pruned.truncate(keep);
            let mut once = all.clone();
            sort_groups(&mut once);
            once.truncate(keep);
            assert_eq!(pruned, once, "keep {keep}");
        }
    }
}
