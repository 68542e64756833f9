//! Detection trial: how often does the screen catch invented invoices on *this* ledger, and at
//! what cost in false alarms?
//!
//! # What a replication does
//!
//! The trial never touches the session's ledger. It reads it once ([`Trial::new`]) and then, for
//! each replication `r` (seeded, independent of the order replications are run in):
//!
//! 1. **Who is injected.** The *pool* of suppliers (by default those the screen calls
//!    `consistent`: [`consistent_suppliers`]) is shuffled by the stream `(seed, "assign", r)`;
//!    the first `ceil(len × (1 − controls))` get invented invoices, the rest stay untouched as
//!    *controls* (default `controls = 0.5`: half of the pool). The false-alarm rate is measured
//!    on the controls: suppliers that look like the injected ones but were left alone. Suppliers
//!    outside the pool stay untouched too; their alarms are reported apart.
//! 2. **What is injected.** Of an injected supplier's `m` invoices dated on or after `from`
//!    (all of them when no date is given), `round(share × m)` chosen at random are replaced by
//!    invented ones with the same date and line, marked [`crate::Invoice::injected`] in the copy
//!    ([`Trial::copy_ledger`]). Replacing rather than adding keeps the supplier's invoice count
//!    and timeline, so the calibration compares like with like; the mix the screen sees is
//!    "a share `share` of this supplier's invoices since `from` were made up". Amounts follow a
//!    [`Pattern`]; a supplier that ends up with no invented invoice (share 0) is a control.
//! 3. **Batch.** Every supplier's first-two digits MAD is calibrated to its invoice count with
//!    the same [`Calibrator`] (one for the whole trial: null tables are per invoice count and
//!    invoice counts do not change, so they are simulated once) and the screen's correction
//!    across the list is applied at each confidence level, exactly as [`crate::report::screen`]
//!    decides `deviates` (checked in `tests/trial.rs`).
//! 4. **Monitoring.** Each injected supplier's invoices are read in the order
//!    [`crate::monitor::watch`] reads them (date, ties by file order; file order when undated)
//!    through the same [`Monitor`] with the same alarm lines (since the start: `1/α`; since a
//!    change: `max(arl_years × invoices per year, 1/α)`), resumed from a snapshot taken just
//!    before the first invoice that can be replaced (the part before it cannot change). Alarm
//!    positions agree with `watch` on the copy (checked in `tests/trial.rs`).
//!
//! # What is reported, per confidence level
//!
//! - **sensitivity**: share of injected suppliers detected by the pipeline (batch screen at the
//!   end of the file, or the monitor at any time), pooled over replications; also batch and
//!   monitoring alone.
//! - **false-alarm rate**: share of control suppliers with an alarm (same breakdown).
//! - **delay**: for detected suppliers, invoices of that supplier from its first invented invoice
//!   up to and including the one that raised the alarm, and the days between them; when only the
//!   batch screen detects it, the detection is at the end of the file. An alarm that was already
//!   raised before the first invented invoice counts as detection but has no delay to measure:
//!   its share is reported (`alarmed_before_injection`) and the medians are over the suppliers
//!   detected at or after their first invented invoice (undetected ones have no delay).
//! - **paid before detection**: invented amount paid up to and including the alarm invoice
//!   (median over the same suppliers).
//! - **Monte Carlo error of the medians**: for each of the three medians, the 95 %
//!   distribution-free interval `[X_(r), X_(s)]` of order statistics, `r`, `s` from
//!   `Binomial(m, 1/2)` ([`MedianInterval`], [`median_ranks`]; Conover, *Practical
//!   Nonparametric Statistics*, 3rd ed., §3.2). The `m` observations are the pooled
//!   supplier-replications; they are treated as independent draws (replications are
//!   independent; within one, suppliers get independent streams). Suppliers differ, so the
//!   median estimated is that of the mix of the pool's suppliers the trial injects. Every
//!   replication injects the same number of them, drawn without replacement; compared with
//!   independent draws of supplier this should make the interval conservative rather than
//!   too narrow (our reasoning, not checked by a test).
//! - **Monte Carlo standard errors** of the rates: the ratio estimator's standard error over
//!   replications, `sqrt(Σ_r (x_r − p̂ y_r)² / (R (R − 1))) / ȳ` (Cochran, *Sampling
//!   Techniques*, 3rd ed. 1977, §6.4 — from memory); with one replication the binomial
//!   `sqrt(p̂ (1 − p̂) / Σ y)`. They measure the trial's own randomness (which invoices, which
//!   amounts, who is a control), not what the real suppliers are.
//!
//! A trial on invented invoices says how sensitive the screen is to *these patterns* on this
//! ledger; real fabrication may look different. A deviation is a reason to look, not proof.

use crate::amount::Amount;
use crate::benford;
use crate::calibrate::{adjust, CalibrationOptions, Calibrator, Correction, Moments, Statistic};
use crate::intake::format_date;
use crate::ledger::{Ledger, NO_DATE};
use crate::monitor::{self, first_two_bin, Family, Monitor, BINS};
use crate::report::ScreenReport;
use crate::rng::DetRng;
use serde::{Deserialize, Serialize};
use std::sync::OnceLock;

const TAG_ASSIGN: u64 = 0x6173_7367; // "asgn"
const TAG_INJECT: u64 = 0x696e_6a74; // "injt"

/// Confidence levels swept by default (the screen's own level is added when missing).
pub const DEFAULT_LEVELS: [f64; 5] = [0.8, 0.9, 0.95, 0.99, 0.999];

/// How invented amounts are made.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Pattern {
    /// Spread evenly (uniformly, to the cent) over a range: by default the supplier's own
    /// 10th to 90th percentile of amounts.
    Even,
    /// Kept just below an approval limit: uniform over [90 % of the limit, limit − 0.01].
    BelowLimit,
    /// A few amounts (default 3, picked from the supplier's own invoices) used again and again.
    Repeat,
    /// Made up by a person: see [`by_hand_amount`] for the digit preferences and their sources.
    ByHand,
}

impl Pattern {
    pub fn parse(s: &str) -> Option<Pattern> {
        match s.trim().to_ascii_lowercase().replace('_', "-").as_str() {
            "even" => Some(Pattern::Even),
            "below-limit" => Some(Pattern::BelowLimit),
            "repeat" => Some(Pattern::Repeat),
            "by-hand" => Some(Pattern::ByHand),
            _ => None,
        }
    }
    pub fn describe(self) -> &'static str {
        match self {
            Pattern::Even => "amounts spread evenly over a range",
            Pattern::BelowLimit => "amounts kept just below an approval limit",
            Pattern::Repeat => "a few amounts repeated",
            Pattern::ByHand => "amounts invented by hand (human digit preferences)",
        }
    }
}

#[derive(Clone, Debug, Serialize)]
pub struct TrialOptions {
    pub pattern: Pattern,
    /// Share (0..=1) of an injected supplier's invoices dated on or after `from` that are invented.
    pub share: f64,
    /// Days since 1970-01-01: only invoices dated on or after it are replaced. None: all.
    pub from: Option<i32>,
    pub replications: u32,
    pub seed: u64,
    /// Confidence levels to report (sorted, the screen's level included).
    pub levels: Vec<f64>,
    /// Share of the pool left untouched as controls in each replication. Default 0.5.
    pub controls: f64,
    /// Range of the even spread (all injected suppliers). None: each supplier's own 10th-90th percentile.
    pub range: Option<(Amount, Amount)>,
    /// Approval limit for `below-limit`. None: per supplier, the largest of 1, 2, 5 × 10^k at or
    /// below its 90th percentile amount (at least 20.00).
    pub limit: Option<Amount>,
    /// How many distinct amounts `repeat` uses. Default 3.
    pub repeated_amounts: u32,
    /// Invented amounts are never below this (the screen's minimum amount). Default 10.00.
    pub min_amount: Amount,
    /// The screen's calibration: confidence, seed, simulations, correction across the list.
    pub calibration: CalibrationOptions,
    /// The monitor's change-detector run length in years (as `watch`). Default 100.
    pub arl_years: f64,
}

impl Default for TrialOptions {
    fn default() -> Self {
        TrialOptions {
            pattern: Pattern::Even,
            share: 0.3,
            from: None,
            replications: 100,
            seed: 1,
            levels: DEFAULT_LEVELS.to_vec(),
            controls: 0.5,
            range: None,
            limit: None,
            repeated_amounts: 3,
            min_amount: Amount::from_units(10),
            calibration: CalibrationOptions::default(),
            arl_years: 100.0,
        }
    }
}

/// Suppliers the screen calls `consistent` (the default pool).
pub fn consistent_suppliers(rep: &ScreenReport) -> Vec<u32> {
    let mut v: Vec<u32> = rep
        .suppliers
        .iter()
        .filter(|s| s.verdict == Some(crate::calibrate::Verdict::Consistent))
        .map(|s| s.id)
        .collect();
    v.sort_unstable();
    v
}

fn family() -> &'static Family {
    static F: OnceLock<Family> = OnceLock::new();
    F.get_or_init(Family::standard)
}

/// One supplier as the trial reads it.
struct Prep {
    id: u32,
    name: String,
    n: u64,
    /// Invoice indices (into the ledger) in the monitor's reading order.
    order: Vec<u32>,
    /// First-two digit bin per position.
    bins: Vec<u8>,
    counts: [u64; BINS],
    mom: Moments,
    base_p: f64,
    /// Positions (in reading order) that may be replaced: dated on or after `from`.
    eligible: Vec<u32>,
    /// Days per position (NO_DATE when undated).
    dates: Vec<i32>,
    amounts: Vec<Amount>,
    q10: i64,
    q90: i64,
    /// ln of the change detector's alarm line per level.
    log_change: Vec<f64>,
    /// Monitor state after the positions before the first eligible one.
    snapshot: Monitor<'static>,
    /// First crossing per level within that prefix.
    prefix_alarm: Vec<Option<u32>>,
    /// First crossing per level on the real invoices.
    base_alarm: Vec<Option<u32>>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Role {
    Injected,
    Control,
    Outside,
}

/// One supplier's outcome in one replication.
#[derive(Clone, Debug, Serialize)]
pub struct SupplierOutcome {
    pub id: u32,
    pub role: Role,
    pub invented: u32,
    /// Per level: flagged by the batch screen (after the correction across the list).
    pub batch: Vec<bool>,
    /// Per level: 0-based position (reading order) of the invoice that raised the monitor's alarm.
    pub monitor: Vec<Option<u32>>,
}

#[derive(Clone, Copy, Debug, Default)]
struct Tally {
    n: u64,
    batch: u64,
    monitor: u64,
    any: u64,
}

#[derive(Clone, Copy, Debug)]
struct Delay {
    /// The monitor's alarm came before the first invented invoice (no delay to measure).
    before: bool,
    invoices: u64,
    days: Option<i64>,
    paid: f64,
}

#[derive(Clone, Debug, Default)]
struct LevelRep {
    injected: Tally,
    controls: Tally,
    outside: Tally,
    delay_any: Vec<Delay>,
    delay_monitor: Vec<Delay>,
}

/// One replication's result.
#[derive(Clone, Debug)]
pub struct Replication {
    pub index: u32,
    pub suppliers: Vec<SupplierOutcome>,
    /// Invented amount paid in this replication (all injected suppliers, currency units).
    pub invented_paid: f64,
    pub invented_invoices: u64,
    levels: Vec<LevelRep>,
}

/// A prepared trial over one ledger. Run replications one at a time
/// ([`Trial::run_replication`]) or all at once ([`Trial::run`]), then [`Trial::report`].
pub struct Trial {
    opts: TrialOptions,
    cal: Calibrator,
    preps: Vec<Prep>,
    /// Indices into `preps`.
    pool: Vec<usize>,
    base_p: Vec<f64>,
    log_start: Vec<f64>,
    last_date: i32,
    done: Vec<Replication>,
    eligible_invoices: u64,
}

impl Trial {
    /// Prepare a trial. `pool`: supplier ids that may receive invented invoices.
    pub fn new(ledger: &Ledger, opts: TrialOptions, pool: &[u32]) -> Result<Trial, String> {
        let mut opts = opts;
        if !(0.0..=1.0).contains(&opts.share) || opts.share.is_nan() {
            return Err(format!("share must be between 0 and 1 (got {})", opts.share));
        }
        if !(0.0..1.0).contains(&opts.controls) {
            return Err(format!("controls must be at least 0 and below 1 (got {})", opts.controls));
        }
        if opts.replications == 0 {
            return Err("at least one replication is needed".into());
        }
        if let Some((a, b)) = opts.range {
            if !(a.0 > 0 && b.0 >= a.0) {
                return Err("the even-spread range needs 0 < low <= high".into());
            }
        }
        if let Some(l) = opts.limit {
            if l.0 < Amount::from_units(1).0 {
                return Err("the approval limit must be at least 1.00".into());
            }
        }
        let c = opts.calibration.confidence;
        opts.levels.retain(|l| *l > 0.0 && *l < 1.0);
        if !opts.levels.iter().any(|l| (l - c).abs() < 1e-12) {
            opts.levels.push(c);
        }
        opts.levels.sort_by(|a, b| a.total_cmp(b));
        opts.levels.dedup_by(|a, b| (*a - *b).abs() < 1e-12);
        opts.repeated_amounts = opts.repeated_amounts.max(1);

        let fam = family();
        let alphas: Vec<f64> = opts.levels.iter().map(|c| (1.0 - c).clamp(1e-12, 0.5)).collect();
        let log_start: Vec<f64> = alphas.iter().map(|a| (1.0 / a).ln()).collect();
        let mut cal = Calibrator::new(opts.calibration.clone());
        let p_benford = benford::first_two();
        let groups = monitor::reading_orders(ledger);
        let mut preps = Vec::new();
        let mut last_date = NO_DATE;
        for inv in &ledger.invoices {
            last_date = last_date.max(inv.date);
        }
        let mut eligible_invoices = 0u64;
        for (sid, g) in groups.iter().enumerate() {
            if g.is_empty() {
                continue;
            }
            let n = g.len() as u64;
            let mut bins = Vec::with_capacity(g.len());
            let mut counts = [0u64; BINS];
            let mut dates = Vec::with_capacity(g.len());
            let mut amounts = Vec::with_capacity(g.len());
            for &i in g {
                let v = &ledger.invoices[i as usize];
                let b = first_two_bin(v.amount).unwrap_or(0);
                bins.push(b as u8);
                counts[b] += 1;
                dates.push(v.date);
                amounts.push(v.amount);
            }
            let by_date = dates.iter().all(|&d| d != NO_DATE);
            let per_year = if by_date {
                let span = ((dates[dates.len() - 1] - dates[0] + 1) as f64 / 365.25).max(1.0);
                n as f64 / span
            } else {
                n as f64
            };
            let log_change: Vec<f64> = alphas.iter().map(|a| (opts.arl_years * per_year).max(1.0 / a).ln()).collect();
            let eligible: Vec<u32> = match opts.from {
                None => (0..g.len() as u32).collect(),
                Some(f) => (0..g.len() as u32).filter(|&p| dates[p as usize] != NO_DATE && dates[p as usize] >= f).collect(),
            };
            let mom = Moments::new(n, &p_benford);
            let base_p = cal.p_value(Statistic::Mad, n, mom.mad(&counts));
            let mut sorted: Vec<i64> = amounts.iter().map(|a| a.0).collect();
            sorted.sort_unstable();
            // Monitor: the lowest alarm lines as the monitor's own (cheap pre-check), exact
            // per-level comparison in logs.
            let lo_start = log_start[0];
            let lo_change = log_change.iter().cloned().fold(f64::INFINITY, f64::min);
            let mut mon = Monitor::new(fam, lo_start, lo_change);
            let first_elig = eligible.first().map_or(g.len(), |&p| p as usize);
            let mut alarms = vec![None; alphas.len()];
            let mut snapshot = None;
            for (pos, &b) in bins.iter().enumerate() {
                if pos == first_elig {
                    snapshot = Some((mon.clone(), alarms.clone()));
                }
                let cr = mon.push(b as usize);
                if cr.since_start || cr.since_change {
                    mark(&mon, &log_start, &log_change, &mut alarms, pos as u32);
                }
            }
            let (snapshot, prefix_alarm) = snapshot.unwrap_or_else(|| (mon.clone(), alarms.clone()));
            eligible_invoices += eligible.len() as u64;
            preps.push(Prep {
                id: sid as u32,
                name: ledger.suppliers[sid].name.clone(),
                n,
                order: g.clone(),
                bins,
                counts,
                mom,
                base_p,
                eligible,
                dates,
                amounts,
                q10: monitor::sorted_quantile(&sorted, 0.10),
                q90: monitor::sorted_quantile(&sorted, 0.90),
                log_change,
                snapshot,
                prefix_alarm,
                base_alarm: alarms,
            });
        }
        let mut pool_idx = Vec::new();
        for &id in pool {
            match preps.iter().position(|p| p.id == id) {
                Some(i) => {
                    if !pool_idx.contains(&i) {
                        pool_idx.push(i)
                    }
                }
                None => return Err(format!("supplier {id} has no invoices to inject into")),
            }
        }
        pool_idx.sort_unstable();
        let base_p = preps.iter().map(|p| p.base_p).collect();
        Ok(Trial { opts, cal, preps, pool: pool_idx, base_p, log_start, last_date, done: Vec::new(), eligible_invoices })
    }

    pub fn options(&self) -> &TrialOptions {
        &self.opts
    }
    pub fn levels(&self) -> &[f64] {
        &self.opts.levels
    }
    pub fn replications_done(&self) -> u32 {
        self.done.len() as u32
    }
    pub fn replications(&self) -> &[Replication] {
        &self.done
    }
    pub fn pool_ids(&self) -> Vec<u32> {
        self.pool.iter().map(|&i| self.preps[i].id).collect()
    }

    /// Pool members injected in replication r (indices into preps), by the stream (seed, assign, r).
    fn assignment(&self, r: u32) -> Vec<usize> {
        let mut v = self.pool.clone();
        let mut rng = DetRng::stream(self.opts.seed, &[TAG_ASSIGN, r as u64]);
        for i in (1..v.len()).rev() {
            let j = rng.below(i as u64 + 1) as usize;
            v.swap(i, j);
        }
        let k = ((v.len() as f64) * (1.0 - self.opts.controls)).ceil() as usize;
        v.truncate(k.min(v.len()));
        v.sort_unstable();
        v
    }

    /// The invented invoices of one supplier in replication r: (position, amount), ascending
    /// positions. Depends only on (seed, r, supplier id).
    fn invent(&self, r: u32, p: &Prep) -> Vec<(u32, Amount)> {
        let m = p.eligible.len();
        let k = if self.opts.share >= 1.0 { m } else { ((m as f64) * self.opts.share).round() as usize };
        if k == 0 {
            return Vec::new();
        }
        let mut rng = DetRng::stream(self.opts.seed, &[TAG_INJECT, r as u64, p.id as u64]);
        let mut pos = p.eligible.clone();
        for i in 0..k {
            let j = i + rng.below((m - i) as u64) as usize;
            pos.swap(i, j);
        }
        pos.truncate(k);
        pos.sort_unstable();
        let cent = 100i64; // one cent in ten-thousandths
        let min_c = (self.opts.min_amount.0 + cent - 1) / cent;
        let (q10c, q90c) = (p.q10 / cent, p.q90 / cent);
        let gen: Box<dyn Fn(&mut DetRng) -> i64> = match self.opts.pattern {
            Pattern::Even => {
                let (lo, hi) = match self.opts.range {
                    Some((a, b)) => (a.0 / cent, b.0 / cent),
                    None => (q10c, q90c),
                };
                let lo = lo.max(min_c).max(1);
                let hi = hi.max(lo);
                Box::new(move |g: &mut DetRng| lo + g.below((hi - lo + 1) as u64) as i64)
            }
            Pattern::BelowLimit => {
                let lim = match self.opts.limit {
                    Some(l) => l.0 / cent,
                    None => default_limit_cents(q90c),
                };
                let lo = ((lim * 9 + 9) / 10).max(min_c);
                let hi = (lim - 1).max(lo);
                Box::new(move |g: &mut DetRng| lo + g.below((hi - lo + 1) as u64) as i64)
            }
            Pattern::Repeat => {
                let few: Vec<i64> = (0..self.opts.repeated_amounts)
                    .map(|_| (p.amounts[rng.below(p.amounts.len() as u64) as usize].0 / cent).max(min_c))
                    .collect();
                Box::new(move |g: &mut DetRng| few[g.below(few.len() as u64) as usize])
            }
            Pattern::ByHand => {
                let (lo, hi) = (q10c.max(min_c).max(1), q90c.max(min_c).max(1));
                Box::new(move |g: &mut DetRng| by_hand_amount(g, lo, hi).max(min_c))
            }
        };
        pos.into_iter().map(|q| (q, Amount(gen(&mut rng) * cent))).collect()
    }

    /// The ledger of replication r: a copy of `ledger` (never the original) with the invented
    /// invoices in place, each marked injected.
    pub fn copy_ledger(&self, ledger: &Ledger, r: u32) -> Ledger {
        let mut copy = ledger.clone();
        for &pi in &self.assignment(r) {
            let p = &self.preps[pi];
            for (pos, a) in self.invent(r, p) {
                let inv = &mut copy.invoices[p.order[pos as usize] as usize];
                inv.amount = a;
                inv.set_injected(true);
            }
        }
        copy
    }

    /// Run the next replication; returns how many are done.
    pub fn run_replication(&mut self) -> u32 {
        let r = self.done.len() as u32;
        let rep = self.replicate(r);
        self.done.push(rep);
        self.done.len() as u32
    }

    /// Run every remaining replication.
    pub fn run(&mut self) {
        while self.done.len() < self.opts.replications as usize {
            self.run_replication();
        }
    }

    fn replicate(&mut self, r: u32) -> Replication {
        let nl = self.opts.levels.len();
        let injected_set = self.assignment(r);
        let mut role = vec![Role::Outside; self.preps.len()];
        for &i in &self.pool {
            role[i] = Role::Control;
        }
        let mut ps = self.base_p.clone();
        let mut invented: Vec<Vec<(u32, Amount)>> = vec![Vec::new(); self.preps.len()];
        let mut monitor: Vec<Vec<Option<u32>>> = self.preps.iter().map(|p| p.base_alarm.clone()).collect();
        let mut invented_paid = 0.0;
        let mut invented_invoices = 0u64;
        for &pi in &injected_set {
            let inv = self.invent(r, &self.preps[pi]);
            if inv.is_empty() {
                continue;
            }
            role[pi] = Role::Injected;
            let p = &self.preps[pi];
            // batch: counts with the replaced bins
            let mut counts = p.counts;
            let mut bins_new: Vec<(u32, u8)> = Vec::with_capacity(inv.len());
            for &(pos, a) in &inv {
                let b = first_two_bin(a).unwrap_or(0);
                counts[p.bins[pos as usize] as usize] -= 1;
                counts[b] += 1;
                bins_new.push((pos, b as u8));
                invented_paid += a.to_f64();
            }
            invented_invoices += inv.len() as u64;
            let (n, mad) = (p.n, p.mom.mad(&counts));
            ps[pi] = self.cal.p_value(Statistic::Mad, n, mad);
            // monitoring: resume after the unchangeable prefix
            let p = &self.preps[pi];
            let mut mon = p.snapshot.clone();
            let mut alarms = p.prefix_alarm.clone();
            let start = p.eligible[0] as usize;
            let mut k = 0usize;
            for pos in start..p.bins.len() {
                if alarms.iter().all(|a| a.is_some()) {
                    break;
                }
                let b = if k < bins_new.len() && bins_new[k].0 as usize == pos {
                    k += 1;
                    bins_new[k - 1].1
                } else {
                    p.bins[pos]
                };
                let cr = mon.push(b as usize);
                if cr.since_start || cr.since_change {
                    mark(&mon, &self.log_start, &p.log_change, &mut alarms, pos as u32);
                }
            }
            monitor[pi] = alarms;
            invented[pi] = inv;
        }
        let batch: Vec<Vec<bool>> = self
            .opts
            .levels
            .iter()
            .map(|c| adjust(&ps, self.opts.calibration.correction, 1.0 - c).iter().map(|a| a.alarm).collect())
            .collect();
        let mut levels = vec![LevelRep::default(); nl];
        let mut suppliers = Vec::with_capacity(self.preps.len());
        for (pi, p) in self.preps.iter().enumerate() {
            let b: Vec<bool> = (0..nl).map(|l| batch[l][pi]).collect();
            for l in 0..nl {
                let (bd, md) = (b[l], monitor[pi][l]);
                let t = match role[pi] {
                    Role::Injected => &mut levels[l].injected,
                    Role::Control => &mut levels[l].controls,
                    Role::Outside => &mut levels[l].outside,
                };
                t.n += 1;
                t.batch += bd as u64;
                t.monitor += md.is_some() as u64;
                t.any += (bd || md.is_some()) as u64;
                if role[pi] == Role::Injected {
                    let inv = &invented[pi];
                    let f = inv[0].0;
                    let delay_at = |a: u32| -> Delay {
                        if a < f {
                            return Delay { before: true, invoices: 0, days: Some(0), paid: 0.0 };
                        }
                        let (da, df) = (p.dates[a as usize], p.dates[f as usize]);
                        Delay {
                            before: false,
                            invoices: (a - f) as u64 + 1,
                            days: (da != NO_DATE && df != NO_DATE).then(|| (da - df) as i64),
                            paid: inv.iter().take_while(|(q, _)| *q <= a).map(|(_, x)| x.to_f64()).sum(),
                        }
                    };
                    if let Some(a) = md {
                        let d = delay_at(a);
                        levels[l].delay_monitor.push(d);
                        levels[l].delay_any.push(d);
                    } else if bd {
                        let df = p.dates[f as usize];
                        levels[l].delay_any.push(Delay {
                            before: false,
                            invoices: p.n - f as u64,
                            days: (df != NO_DATE && self.last_date != NO_DATE).then(|| (self.last_date - df) as i64),
                            paid: inv.iter().map(|(_, x)| x.to_f64()).sum(),
                        });
                    }
                }
            }
            suppliers.push(SupplierOutcome { id: p.id, role: role[pi], invented: invented[pi].len() as u32, batch: b, monitor: monitor[pi].clone() });
        }
        Replication { index: r, suppliers, invented_paid, invented_invoices, levels }
    }

    /// The summary over the replications run so far.
    pub fn report(&self) -> TrialReport {
        let reps = &self.done;
        let levels = self
            .opts
            .levels
            .iter()
            .enumerate()
            .map(|(l, &c)| {
                let take = |f: &dyn Fn(&LevelRep) -> (u64, u64)| -> Vec<(u64, u64)> { reps.iter().map(|r| f(&r.levels[l])).collect() };
                let rate = |xy: Vec<(u64, u64)>| Rate::from(&xy);
                let inj = |g: fn(&Tally) -> u64| rate(take(&|x| (g(&x.injected), x.injected.n)));
                let ctl = |g: fn(&Tally) -> u64| rate(take(&|x| (g(&x.controls), x.controls.n)));
                let out = |g: fn(&Tally) -> u64| rate(take(&|x| (g(&x.outside), x.outside.n)));
                let all_any: Vec<Delay> = reps.iter().flat_map(|r| r.levels[l].delay_any.iter().copied()).collect();
                let injected_n: u64 = reps.iter().map(|r| r.levels[l].injected.n).sum();
                let before = all_any.iter().filter(|d| d.before).count() as u64;
                let any: Vec<Delay> = all_any.iter().copied().filter(|d| !d.before).collect();
                let mon: Vec<Delay> = reps.iter().flat_map(|r| r.levels[l].delay_monitor.iter().copied()).filter(|d| !d.before).collect();
                let inv_days_paid = |v: &[Delay]| -> (Vec<f64>, Vec<f64>, Vec<f64>) {
                    (
                        v.iter().map(|d| d.invoices as f64).collect(),
                        v.iter().filter_map(|d| d.days.map(|x| x as f64)).collect(),
                        v.iter().map(|d| d.paid).collect(),
                    )
                };
                let (any_inv, any_days, any_paid) = inv_days_paid(&any);
                let (mon_inv, mon_days, mon_paid) = inv_days_paid(&mon);
                let sens = inj(|t| t.any);
                let fa = ctl(|t| t.any);
                LevelSummary {
                    confidence: c,
                    sensitivity: sens.rate,
                    sensitivity_se: sens.se,
                    false_alarm_rate: fa.rate,
                    false_alarm_rate_se: fa.se,
                    median_delay_invoices: median(any_inv.clone()),
                    median_delay_days: median(any_days.clone()),
                    paid_before_detection: median(any_paid.clone()),
                    median_delay_invoices_interval: median_interval(any_inv),
                    median_delay_days_interval: median_interval(any_days),
                    paid_before_detection_interval: median_interval(any_paid),
                    detected: all_any.len() as u64,
                    detected_after_injection: any.len() as u64,
                    alarmed_before_injection: (injected_n > 0).then(|| before as f64 / injected_n as f64),
                    batch: Part {
                        sensitivity: inj(|t| t.batch).rate,
                        sensitivity_se: inj(|t| t.batch).se,
                        false_alarm_rate: ctl(|t| t.batch).rate,
                        false_alarm_rate_se: ctl(|t| t.batch).se,
                        median_delay_invoices: None,
                        median_delay_days: None,
                        paid_before_detection: None,
                        median_delay_invoices_interval: None,
                        median_delay_days_interval: None,
                        paid_before_detection_interval: None,
                    },
                    monitoring: Part {
                        sensitivity: inj(|t| t.monitor).rate,
                        sensitivity_se: inj(|t| t.monitor).se,
                        false_alarm_rate: ctl(|t| t.monitor).rate,
                        false_alarm_rate_se: ctl(|t| t.monitor).se,
                        median_delay_invoices: median(mon_inv.clone()),
                        median_delay_days: median(mon_days.clone()),
                        paid_before_detection: median(mon_paid.clone()),
                        median_delay_invoices_interval: median_interval(mon_inv),
                        median_delay_days_interval: median_interval(mon_days),
                        paid_before_detection_interval: median_interval(mon_paid),
                    },
                    outside_pool: OutsidePart {
                        alarm_rate: out(|t| t.any).rate,
                        batch: out(|t| t.batch).rate,
                        monitoring: out(|t| t.monitor).rate,
                    },
                }
            })
            .collect();
        let r = reps.len().max(1) as f64;
        let o = &self.opts;
        TrialReport {
            kind: "detection trial (invented invoices on a copy of the ledger; not the screen's results)",
            parameters: TrialParameters {
                pattern: o.pattern,
                pattern_description: o.pattern.describe(),
                share: o.share,
                from: o.from.map(format_date),
                replications: reps.len() as u32,
                replications_planned: o.replications,
                seed: o.seed,
                controls: o.controls,
                range: o.range,
                limit: o.limit,
                repeated_amounts: o.repeated_amounts,
                calibration_seed: o.calibration.seed,
                calibration_sims: o.calibration.sims,
                correction: o.calibration.correction,
                screen_confidence: o.calibration.confidence,
                arl_years: o.arl_years,
            },
            pool: self.pool.iter().map(|&i| PoolSupplier { id: self.preps[i].id, name: self.preps[i].name.clone(), invoices: self.preps[i].n, eligible_invoices: self.preps[i].eligible.len() as u64 }).collect(),
            suppliers_screened: self.preps.len() as u64,
            eligible_invoices: self.eligible_invoices,
            mean_injected_suppliers: reps.iter().map(|x| x.levels.first().map_or(0, |l| l.injected.n)).sum::<u64>() as f64 / r,
            mean_control_suppliers: reps.iter().map(|x| x.levels.first().map_or(0, |l| l.controls.n)).sum::<u64>() as f64 / r,
            mean_invented_invoices: reps.iter().map(|x| x.invented_invoices).sum::<u64>() as f64 / r,
            mean_invented_paid: reps.iter().map(|x| x.invented_paid).sum::<f64>() / r,
            levels,
            method: METHOD.to_vec(),
            by_hand_sources: if o.pattern == Pattern::ByHand { Some(BY_HAND_SOURCES) } else { None },
            caution: TRIAL_CAUTION,
        }
    }
}

/// Record, per level not yet crossed, a crossing at `pos` when the evidence is at its line.
#[inline]
fn mark(mon: &Monitor, log_start: &[f64], log_change: &[f64], alarms: &mut [Option<u32>], pos: u32) {
    let (ls, lc) = (mon.log_since_start(), mon.log_since_change());
    for l in 0..alarms.len() {
        if alarms[l].is_none() && (ls >= log_start[l] || lc >= log_change[l]) {
            alarms[l] = Some(pos);
        }
    }
}

/// Largest of 1, 2, 5 × 10^k (in cents) at or below `q90` cents, at least 20.00.
fn default_limit_cents(q90: i64) -> i64 {
    let mut best = 2000;
    let mut unit = 1000i64; // 10.00
    while unit <= q90 && unit < i64::MAX / 10 {
        for m in [1, 2, 5] {
            if unit * m <= q90 {
                best = best.max(unit * m);
            }
        }
        unit *= 10;
    }
    best
}

/// Weights (per mille) of the first digit 1..9 of a made-up amount: nearly even, with few 1s.
/// Our own illustrative weights; the direction follows Hill, "Random-number guessing and the
/// first digit phenomenon", Psychological Reports 62(3), 1988, pp. 967-971 (numbers people make
/// up do not show Benford's excess of leading 1s) — from memory.
pub const BY_HAND_FIRST: [u32; 9] = [80, 100, 120, 120, 130, 120, 130, 110, 90];
/// Weights (per mille) of later digits 0..9: 7 favoured, then 3, 0 and 1 avoided. Our own
/// weights; the preference for 7 follows Kubovy & Psotka, "The predominance of seven and the
/// apparent spontaneity of numerical choices", J. Exp. Psychology: Human Perception and
/// Performance 2(2), 1976, pp. 291-294 — from memory.
pub const BY_HAND_LATER: [u32; 10] = [60, 70, 100, 120, 100, 110, 100, 150, 110, 80];
/// Chance that a digit equal to the previous one is drawn again rather than kept: people
/// repeat digits less often than chance (Wagenaar, "Generation of random sequences by human
/// subjects: a critical survey of literature", Psychological Bulletin 77(1), 1972, pp. 65-72 —
/// from memory). 0.7 is our own choice.
pub const BY_HAND_REDRAW_REPEAT: f64 = 0.7;

pub const BY_HAND_SOURCES: &str = "Invented-by-hand amounts: size spread evenly on a log scale between the supplier's 10th and 90th percentile; first digit nearly even over 1-9 with few 1s (direction from Hill 1988, Psychological Reports 62:967-971); later digits favour 7 and 3 and avoid 0 and 1 (preference for 7: Kubovy & Psotka 1976, J. Exp. Psych. HPP 2:291-294); a digit equal to the one before is usually redrawn (people repeat digits less than chance: Wagenaar 1972, Psychological Bulletin 77:65-72); cents are .00 half the time and .50 a tenth of the time (round-number preference, common practice, no source). The weights are our own illustration; the sources are cited from memory.";

fn weighted(g: &mut DetRng, w: &[u32]) -> u32 {
    let tot: u32 = w.iter().sum();
    let mut x = g.below(tot as u64) as u32;
    for (i, &wi) in w.iter().enumerate() {
        if x < wi {
            return i as u32;
        }
        x -= wi;
    }
    (w.len() - 1) as u32
}

/// One made-up amount in cents between about `lo` and `hi` cents (see [`BY_HAND_SOURCES`]).
pub fn by_hand_amount(g: &mut DetRng, lo: i64, hi: i64) -> i64 {
    let (lo, hi) = (lo.max(100), hi.max(lo.max(100)));
    // Size: log-uniform between lo and hi (in whole units), giving the number of whole digits.
    let (l0, l1) = (libm::log10(lo as f64 / 100.0), libm::log10(hi as f64 / 100.0));
    let x = l0 + (l1 - l0) * g.next_f64();
    let whole_digits = (libm::floor(x) as i64 + 1).clamp(1, 15) as u32;
    let mut v: i64 = 0;
    let mut prev = 10u32;
    for k in 0..whole_digits + 2 {
        let cents_pos = k >= whole_digits;
        if cents_pos && k == whole_digits {
            // cents: .00 half the time, .50 a tenth of the time
            let u = g.below(10);
            if u < 5 {
                return v * 100;
            }
            if u == 5 {
                return v * 100 + 50;
            }
        }
        let mut d = if k == 0 { 1 + weighted(g, &BY_HAND_FIRST) } else { weighted(g, &BY_HAND_LATER) };
        if d == prev && g.next_f64() < BY_HAND_REDRAW_REPEAT {
            d = if k == 0 { 1 + weighted(g, &BY_HAND_FIRST) } else { weighted(g, &BY_HAND_LATER) };
        }
        prev = d;
        v = v * 10 + d as i64;
    }
    v
}

/// A rate pooled over replications with its Monte Carlo standard error.
#[derive(Clone, Copy, Debug)]
struct Rate {
    rate: Option<f64>,
    se: Option<f64>,
}

impl Rate {
    fn from(xy: &[(u64, u64)]) -> Rate {
        let (sx, sy): (u64, u64) = xy.iter().fold((0, 0), |(a, b), &(x, y)| (a + x, b + y));
        if sy == 0 {
            return Rate { rate: None, se: None };
        }
        let p = sx as f64 / sy as f64;
        let r = xy.len() as f64;
        let se = if xy.len() >= 2 {
            let ybar = sy as f64 / r;
            let ss: f64 = xy.iter().map(|&(x, y)| (x as f64 - p * y as f64).powi(2)).sum();
            (ss / (r * (r - 1.0))).sqrt() / ybar
        } else {
            (p * (1.0 - p) / sy as f64).sqrt()
        };
        Rate { rate: Some(p), se: Some(se) }
    }
}

fn median(mut v: Vec<f64>) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(|a, b| a.total_cmp(b));
    let m = v.len();
    Some(if m % 2 == 1 { v[m / 2] } else { (v[m / 2 - 1] + v[m / 2]) / 2.0 })
}

/// Distribution-free confidence interval for a median: the order statistics
/// `[X_(r), X_(s)]` of `m` observations (Conover, *Practical Nonparametric Statistics*, 3rd ed.
/// 1999, §3.2, "confidence interval for a quantile", with p = 1/2). With `Y ~ Binomial(m, 1/2)`,
/// `r − 1` is the largest `k` with `P(Y ≤ k) ≤ 0.025` and, by the symmetry of `Binomial(m, 1/2)`,
/// `s = m + 1 − r`; the interval covers the median with probability at least
/// `P(r ≤ Y ≤ s − 1) = 1 − 2 P(Y ≤ r − 1) ≥ 95 %`, whatever the distribution (ties included).
/// The trial treats its pooled supplier-replications as the sample: the interval is the
/// Monte Carlo error of the median the trial estimates, not a statement about real suppliers.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct MedianInterval {
    pub low: f64,
    pub high: f64,
    /// 1-based ranks r and s of the order statistics used.
    pub rank_low: u64,
    pub rank_high: u64,
    /// Number of observations m the median is taken over.
    pub observations: u64,
    /// `1 − 2 P(Y ≤ r − 1)`: the interval's guaranteed coverage (at least 0.95).
    pub coverage: f64,
}

/// One-sided tail of the interval: `P(Y ≤ r − 1) ≤ 1/40` (2.5 %, so 95 % two-sided).
const MEDIAN_TAIL_DEN: u32 = 40;

/// Ranks `(r, s)` and coverage of the 95 % order-statistic interval for the median of `m`
/// observations, or None when `m < 6` (then even `[X_(1), X_(m)]` covers less than 95 %:
/// `1 − 2 × 2^−m < 0.95`). Exact: the cumulative binomial probabilities are summed in log
/// space with `libm` (the same on every platform), and whenever one of them lies within a
/// relative 1e-9 of the 2.5 % line the decision is taken again in exact integer arithmetic
/// ([`median_rank_exact`]), so rounding can never choose the rank.
pub fn median_ranks(m: u64) -> Option<(u64, u64, f64)> {
    if m < 6 {
        return None;
    }
    let tail = 1.0 / MEDIAN_TAIL_DEN as f64;
    // ln P(Y = i) by the ratio recurrence P(i+1)/P(i) = (m − i)/(i + 1), from P(0) = 2^−m.
    let mut ln_p = -(m as f64) * core::f64::consts::LN_2;
    let mut cdf = libm::exp(ln_p);
    let mut k = 0u64; // largest k so far with cdf(k) <= tail
    let mut cdf_k = cdf;
    let mut near = (cdf - tail).abs() <= 1e-9 * tail;
    let mut i = 0u64;
    while i < m {
        ln_p += libm::log((m - i) as f64 / (i + 1) as f64);
        i += 1;
        let next = cdf + libm::exp(ln_p);
        near |= (next - tail).abs() <= 1e-9 * tail;
        if next > tail {
            break;
        }
        cdf = next;
        k = i;
        cdf_k = cdf;
    }
    if near {
        k = median_rank_exact(m)? - 1;
        cdf_k = binom_half_cdf_f64(m, k);
    }
    let r = k + 1;
    Some((r, m + 1 - r, 1.0 - 2.0 * cdf_k))
}

/// `P(Y ≤ k)` for `Y ~ Binomial(m, 1/2)`, summed in log space with `libm` (display only).
fn binom_half_cdf_f64(m: u64, k: u64) -> f64 {
    let mut ln_p = -(m as f64) * core::f64::consts::LN_2;
    let mut cdf = libm::exp(ln_p);
    for i in 0..k.min(m) {
        ln_p += libm::log((m - i) as f64 / (i + 1) as f64);
        cdf += libm::exp(ln_p);
    }
    cdf
}

/// The rank r of [`median_ranks`] in exact integer arithmetic: the largest `r ≥ 1` with
/// `40 × Σ_{i<r} C(m, i) ≤ 2^m`, or None when even `r = 1` fails (`m < 6`). Costs about
/// `m²/64` word operations: used by [`median_ranks`] only to settle a near tie, and by tests.
pub fn median_rank_exact(m: u64) -> Option<u64> {
    // Little-endian base-2^32 naturals.
    fn mul_small(a: &mut Vec<u32>, x: u32) {
        let mut carry = 0u64;
        for w in a.iter_mut() {
            let t = *w as u64 * x as u64 + carry;
            *w = t as u32;
            carry = t >> 32;
        }
        if carry > 0 {
            a.push(carry as u32);
        }
    }
    fn div_small(a: &mut Vec<u32>, x: u32) {
        let mut rem = 0u64;
        for w in a.iter_mut().rev() {
            let t = (rem << 32) | *w as u64;
            *w = (t / x as u64) as u32;
            rem = t % x as u64;
        }
        debug_assert_eq!(rem, 0, "binomial coefficients divide exactly");
        while a.len() > 1 && *a.last().unwrap() == 0 {
            a.pop();
        }
    }
    fn add(a: &mut Vec<u32>, b: &[u32]) {
        if a.len() < b.len() {
            a.resize(b.len(), 0);
        }
        let mut carry = 0u64;
        for (i, w) in a.iter_mut().enumerate() {
            let t = *w as u64 + b.get(i).copied().unwrap_or(0) as u64 + carry;
            *w = t as u32;
            carry = t >> 32;
        }
        if carry > 0 {
            a.push(carry as u32);
        }
    }
    fn le(a: &[u32], b: &[u32]) -> bool {
        let top = |v: &[u32]| v.iter().rposition(|&w| w != 0).map_or(0, |p| p + 1);
        let (la, lb) = (top(a), top(b));
        if la != lb {
            return la < lb;
        }
        for i in (0..la).rev() {
            if a[i] != b[i] {
                return a[i] < b[i];
            }
        }
        true
    }
    let mut two_m = vec![0u32; (m / 32) as usize + 1];
    two_m[(m / 32) as usize] = 1u32 << (m % 32);
    let mut c = vec![1u32]; // C(m, i)
    let mut sum = vec![1u32]; // Σ_{j ≤ i} C(m, j)
    let mut r = 0u64;
    let mut i = 0u64;
    loop {
        let mut scaled = sum.clone();
        mul_small(&mut scaled, MEDIAN_TAIL_DEN);
        if !le(&scaled, &two_m) {
            break;
        }
        r = i + 1; // P(Y ≤ i) ≤ 1/40, so r − 1 = i is allowed
        if i == m {
            break;
        }
        mul_small(&mut c, (m - i) as u32);
        div_small(&mut c, (i + 1) as u32);
        add(&mut sum, &c);
        i += 1;
    }
    (r >= 1).then_some(r)
}

/// The 95 % interval for the median of `v` (see [`MedianInterval`]); None below 6 values.
fn median_interval(mut v: Vec<f64>) -> Option<MedianInterval> {
    let m = v.len() as u64;
    let (r, s, coverage) = median_ranks(m)?;
    v.sort_by(|a, b| a.total_cmp(b));
    Some(MedianInterval { low: v[(r - 1) as usize], high: v[(s - 1) as usize], rank_low: r, rank_high: s, observations: m, coverage })
}

#[derive(Clone, Debug, Serialize)]
pub struct Part {
    pub sensitivity: Option<f64>,
    pub sensitivity_se: Option<f64>,
    pub false_alarm_rate: Option<f64>,
    pub false_alarm_rate_se: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub median_delay_invoices: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub median_delay_days: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub paid_before_detection: Option<f64>,
    /// 95 % order-statistic intervals of the three medians (see [`MedianInterval`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub median_delay_invoices_interval: Option<MedianInterval>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub median_delay_days_interval: Option<MedianInterval>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub paid_before_detection_interval: Option<MedianInterval>,
}

#[derive(Clone, Debug, Serialize)]
pub struct OutsidePart {
    /// Share of suppliers outside the pool with an alarm (batch or monitoring). These are real,
    /// untouched suppliers; many were already flagged by the screen.
    pub alarm_rate: Option<f64>,
    pub batch: Option<f64>,
    pub monitoring: Option<f64>,
}

/// Results at one confidence level. Null when there was nothing to measure (e.g. no injected
/// supplier at share 0: sensitivity is null).
#[derive(Clone, Debug, Serialize)]
pub struct LevelSummary {
    pub confidence: f64,
    /// Injected suppliers detected by the batch screen or the monitor.
    pub sensitivity: Option<f64>,
    pub sensitivity_se: Option<f64>,
    /// Control suppliers (pool, left untouched) with an alarm from either.
    pub false_alarm_rate: Option<f64>,
    pub false_alarm_rate_se: Option<f64>,
    /// Median over suppliers detected after their first invented invoice: that supplier's
    /// invoices from the first invented one up to and including the one raising the alarm.
    pub median_delay_invoices: Option<f64>,
    pub median_delay_days: Option<f64>,
    /// Median over the same suppliers of the invented amount paid up to the alarm.
    pub paid_before_detection: Option<f64>,
    /// Monte Carlo error of the three medians: 95 % distribution-free intervals from order
    /// statistics (Conover 1999, §3.2; see [`MedianInterval`]). Null below 6 observations.
    pub median_delay_invoices_interval: Option<MedianInterval>,
    pub median_delay_days_interval: Option<MedianInterval>,
    pub paid_before_detection_interval: Option<MedianInterval>,
    /// Detected supplier-replications (any time).
    pub detected: u64,
    /// Detected at or after the first invented invoice: the medians are over these.
    pub detected_after_injection: u64,
    /// Share of injected suppliers whose monitor alarm came before any invented invoice (the
    /// real invoices already raised it; counted as detected, no delay).
    pub alarmed_before_injection: Option<f64>,
    pub batch: Part,
    pub monitoring: Part,
    pub outside_pool: OutsidePart,
}

#[derive(Clone, Debug, Serialize)]
pub struct TrialParameters {
    pub pattern: Pattern,
    pub pattern_description: &'static str,
    pub share: f64,
    pub from: Option<String>,
    pub replications: u32,
    pub replications_planned: u32,
    pub seed: u64,
    pub controls: f64,
    pub range: Option<(Amount, Amount)>,
    pub limit: Option<Amount>,
    pub repeated_amounts: u32,
    pub calibration_seed: u64,
    pub calibration_sims: u32,
    pub correction: Correction,
    pub screen_confidence: f64,
    pub arl_years: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct PoolSupplier {
    pub id: u32,
    pub name: String,
    pub invoices: u64,
    pub eligible_invoices: u64,
}

#[derive(Clone, Debug, Serialize)]
pub struct TrialReport {
    pub kind: &'static str,
    pub parameters: TrialParameters,
    pub pool: Vec<PoolSupplier>,
    pub suppliers_screened: u64,
    pub eligible_invoices: u64,
    pub mean_injected_suppliers: f64,
    pub mean_control_suppliers: f64,
    pub mean_invented_invoices: f64,
    pub mean_invented_paid: f64,
    pub levels: Vec<LevelSummary>,
    pub method: Vec<&'static str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub by_hand_sources: Option<&'static str>,
    pub caution: &'static str,
}

pub const TRIAL_CAUTION: &str = "A detection trial runs on invented invoices placed in a copy of the ledger: it says how often the screen would catch these patterns on this ledger, not whether anything in the real ledger is fabricated. Real fabrication may look different. A deviation from Benford's law is a reason to look, not proof of wrongdoing: do not confront a supplier or an employee on it alone; follow professional auditing standards, the firm's policies, local law and counsel.";

const METHOD: [&str; 6] = [
    "each replication shuffles the pool of suppliers; part of it gets invented invoices, the rest are left untouched as controls",
    "an injected supplier's invoices dated on or after the start date are replaced at random by invented ones at the chosen share (same dates, same count), in a copy of the ledger",
    "batch: the first-two digits MAD of every supplier, calibrated to its invoice count, corrected across the list at each confidence level, as the screen does",
    "monitoring: the same evidence and alarm lines as the replay view, read in date order; delay counts the supplier's invoices from the first invented one to the alarm",
    "sensitivity: injected suppliers detected by either; false-alarm rate: controls with an alarm; standard errors are Monte Carlo errors over replications",
    "medians (delay, amount paid by the alarm) come with a 95 % distribution-free interval from order statistics (Conover, Practical Nonparametric Statistics, 3rd ed., section 3.2), over the pooled supplier-replications; none below 6 of them",
];

fn pct(x: Option<f64>) -> String {
    x.map_or("-".into(), |v| format!("{:.1} %", v * 100.0))
}
fn pct_se(x: Option<f64>, se: Option<f64>) -> String {
    match (x, se) {
        (Some(v), Some(s)) => format!("{:.1} ± {:.1} %", v * 100.0, s * 100.0),
        _ => "-".into(),
    }
}
/// A median with its 95 % interval: `68 (61–75)`; the interval is left out below 6 values.
fn med(x: Option<f64>, iv: Option<MedianInterval>, d: usize) -> String {
    match (x, iv) {
        (Some(v), Some(i)) => format!("{v:.d$} ({:.d$}–{:.d$})", i.low, i.high),
        (Some(v), None) => format!("{v:.d$} (too few)"),
        _ => "-".into(),
    }
}

/// Readable summary for the terminal.
pub fn render_text(t: &TrialReport) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let p = &t.parameters;
    let _ = writeln!(s, "DETECTION TRIAL — invented invoices in a copy of the ledger; these are not the screen's results.");
    let _ = writeln!(
        s,
        "pattern: {} · share {:.0} % of each injected supplier's invoices{} · {} replications, seed {}",
        p.pattern_description,
        p.share * 100.0,
        p.from.as_ref().map_or(String::new(), |d| format!(" from {d}")),
        p.replications,
        p.seed
    );
    let _ = writeln!(
        s,
        "pool: {} suppliers (about {:.1} injected and {:.1} left untouched as controls per replication); {:.0} invented invoices and {:.2} invented amount per replication on average",
        t.pool.len(),
        t.mean_injected_suppliers,
        t.mean_control_suppliers,
        t.mean_invented_invoices,
        t.mean_invented_paid
    );
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "{:>10}  {:>16}  {:>16}  {:>12} {:>12}  {:>12} {:>12}  {:>16} {:>16} {:>32} {:>14}",
        "confidence", "sensitivity", "false alarms", "sens. batch", "f.a. batch", "sens. watch", "f.a. watch", "delay (inv)", "delay (d)", "paid before", "alarm already"
    );
    for l in &t.levels {
        let _ = writeln!(
            s,
            "{:>9.1}%  {:>16}  {:>16}  {:>12} {:>12}  {:>12} {:>12}  {:>16} {:>16} {:>32} {:>14}",
            l.confidence * 100.0,
            pct_se(l.sensitivity, l.sensitivity_se),
            pct_se(l.false_alarm_rate, l.false_alarm_rate_se),
            pct(l.batch.sensitivity),
            pct(l.batch.false_alarm_rate),
            pct(l.monitoring.sensitivity),
            pct(l.monitoring.false_alarm_rate),
            med(l.median_delay_invoices, l.median_delay_invoices_interval, 0),
            med(l.median_delay_days, l.median_delay_days_interval, 0),
            med(l.paid_before_detection, l.paid_before_detection_interval, 2),
            pct(l.alarmed_before_injection),
        );
    }
    let _ = writeln!(s, "\nsensitivity: injected suppliers caught by the batch screen or the monitor; false alarms: untouched control suppliers with an alarm; ± one Monte Carlo standard error. Delay and paid before: medians over the suppliers caught after their first invented invoice (invoices and days from it to the alarm; invented amount paid by then), in brackets the 95 % distribution-free interval for each median from order statistics (Conover, Practical Nonparametric Statistics, 3rd ed., §3.2), \"too few\" below 6 values. Alarm already: injected suppliers whose real invoices had raised the monitor's alarm before any invented one.");
    if let Some(b) = t.by_hand_sources {
        let _ = writeln!(s, "\n{b}");
    }
    let _ = writeln!(s, "\n{}", t.caution);
    s
}

/// The first line of every trial export: what it is (a trial on invented invoices, not the
/// screen's results) and how it was run.
pub fn export_notice(t: &TrialReport) -> String {
    let p = &t.parameters;
    format!(
        "digitdrift DETECTION TRIAL on invented invoices placed in a copy of the ledger - not the screen's results and not findings about the real ledger. Pattern: {}; share {}{}; {} replications; seed {}",
        p.pattern_description,
        p.share,
        p.from.as_ref().map_or(String::new(), |d| format!(" of invoices from {d}")),
        p.replications,
        p.seed
    )
}

/// The trial's results as CSV (RFC 4180, `\r\n`, every text cell formula-neutralised by
/// [`crate::export::cell`]), kept apart from the screen's exports: its first line marks it as a
/// trial on invented invoices, every data row says so again in its first column, and the
/// parameters, the pool and the caution come before the table. One row per confidence level
/// and detection route (screen or monitor; batch screen alone; monitor alone).
pub fn trial_csv(t: &TrialReport, file_name: &str, sha256: &str) -> String {
    use crate::export::{cell, num, row};
    let p = &t.parameters;
    let mut out = String::new();
    row(&mut out, &[cell(&format!("# {}", export_notice(t))), cell(&format!("file: {file_name}")), cell(&format!("sha256: {sha256}"))]);
    row(
        &mut out,
        &[cell(&format!(
            "# pattern {}; share {}; from {}; replications {} (planned {}); seed {}; controls {}; calibration seed {} simulations {} correction {:?}; screen confidence {}",
            serde_json::to_string(&p.pattern).unwrap_or_default().trim_matches('"'),
            p.share,
            p.from.as_deref().unwrap_or("start"),
            p.replications,
            p.replications_planned,
            p.seed,
            p.controls,
            p.calibration_seed,
            p.calibration_sims,
            p.correction,
            p.screen_confidence
        ))],
    );
    let mut pool = vec![cell(&format!("# pool of {} suppliers that may get invented invoices", t.pool.len()))];
    pool.extend(t.pool.iter().map(|s| cell(&s.name)));
    row(&mut out, &pool);
    row(&mut out, &[cell(&format!("# {}", t.caution))]);
    row(
        &mut out,
        &[
            "record", "confidence", "detection", "sensitivity", "sensitivity_se", "false_alarm_rate", "false_alarm_rate_se",
            "median_delay_invoices", "median_delay_invoices_low", "median_delay_invoices_high",
            "median_delay_days", "median_delay_days_low", "median_delay_days_high",
            "paid_before_detection", "paid_before_detection_low", "paid_before_detection_high",
            "detected", "detected_after_injection", "alarmed_before_injection",
        ]
        .map(String::from),
    );
    let o = |x: Option<f64>, d: usize| x.map_or(String::new(), |v| num(v, d));
    let iv = |m: Option<f64>, i: Option<MedianInterval>, d: usize| -> [String; 3] { [o(m, d), o(i.map(|i| i.low), d), o(i.map(|i| i.high), d)] };
    for l in &t.levels {
        let parts: [(&str, &Part); 2] = [("batch_screen", &l.batch), ("monitor", &l.monitoring)];
        let mut emit = |route: &str, sens: Option<f64>, sens_se, fa: Option<f64>, fa_se, med: [[String; 3]; 3], extra: [String; 3]| {
            let mut cells = vec![cell("trial (invented invoices)"), num(l.confidence, 4), cell(route), o(sens, 6), o(sens_se, 6), o(fa, 6), o(fa_se, 6)];
            for m in med {
                cells.extend(m);
            }
            cells.extend(extra);
            row(&mut out, &cells);
        };
        emit(
            "screen_or_monitor",
            l.sensitivity,
            l.sensitivity_se,
            l.false_alarm_rate,
            l.false_alarm_rate_se,
            [
                iv(l.median_delay_invoices, l.median_delay_invoices_interval, 1),
                iv(l.median_delay_days, l.median_delay_days_interval, 1),
                iv(l.paid_before_detection, l.paid_before_detection_interval, 2),
            ],
            [l.detected.to_string(), l.detected_after_injection.to_string(), o(l.alarmed_before_injection, 6)],
        );
        for (route, pt) in parts {
            emit(
                route,
                pt.sensitivity,
                pt.sensitivity_se,
                pt.false_alarm_rate,
                pt.false_alarm_rate_se,
                [
                    iv(pt.median_delay_invoices, pt.median_delay_invoices_interval, 1),
                    iv(pt.median_delay_days, pt.median_delay_days_interval, 1),
                    iv(pt.paid_before_detection, pt.paid_before_detection_interval, 2),
                ],
                [String::new(), String::new(), String::new()],
            );
        }
    }
    out
}

/// The trial's results as JSON, marked the same way: `{"notice", "file", "sha256", "caution",
/// "trial": <the report>}`, `notice` first.
pub fn trial_json(t: &TrialReport, file_name: &str, sha256: &str) -> String {
    #[derive(Serialize)]
    struct Export<'a> {
        notice: String,
        file: &'a str,
        sha256: &'a str,
        caution: &'static str,
        trial: &'a TrialReport,
    }
    let e = Export { notice: export_notice(t), file: file_name, sha256, caution: t.caution, trial: t };
    serde_json::to_string_pretty(&e).unwrap_or_default() + "\n"
}
