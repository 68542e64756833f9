//! Continuous monitoring: evidence against Benford's law that stays valid however often it is
//! looked at, a change detector with a stated false-alarm run length, replay as of a date, and an
//! estimate of the amount at risk.
//!
//! # What is computed, per supplier
//!
//! Each supplier's invoices are read in date order (ties by file order, i.e. line number). When
//! any of a supplier's invoices has no date, that supplier is read in file order only, and the
//! report says so. Every invoice contributes its first-two digits `d` (10..=99), read exactly
//! from the integer amount ([`Amount::leading_digits`]).
//!
//! **Alternatives.** Fabricated amounts are modelled as a share `λ` of invoices whose amounts are
//! spread evenly over some range, the rest following Benford:
//! `q(d) = (1 - λ) p(d) + λ u_r(d)`, where `p` is the Benford first-two distribution and `u_r`
//! the exact first-two distribution of an amount spread evenly (uniformly) over the range `r`
//! ([`even_spread_first_two`]). The family ([`Family::standard`]) is a fixed grid chosen before
//! seeing any data: ranges with "round" lower ends `a ∈ {1, 2, 3, 5, 7}` (times any power of
//! ten) and upper ends `a·m` with `m ∈ {2, 3, 5, 10}` (20 ranges; those with `a·m > 10` cross a
//! power of ten), times shares `λ ∈ {0.15, 0.4, 1}`: K = 60 alternatives, each with prior weight
//! 1/60. This is a one-parameter-per-component family instead of a Dirichlet mixture over all
//! 90 bins: a mixture over 90 bins pays about (89/2)·ln n nats of "regret" for not knowing the
//! alternative, a finite grid pays at most ln 60 ≈ 4.1 nats, which is what makes the detector
//! react in tens rather than hundreds of invoices (measured in `tests/monitor_power.rs`).
//!
//! **Since the first invoice** (an e-process). For each alternative `k` the likelihood ratio
//! `W_k(t) = Π_{i≤t} q_k(d_i)/p(d_i)` is a non-negative martingale with mean 1 under Benford
//! (a *test martingale*: Ville 1939; Shafer, Shen, Vereshchagin & Vovk, "Test martingales,
//! Bayes factors and p-values", Statistical Science 2011). Their prior-weighted average
//! `E(t) = Σ_k π_k W_k(t)` is again a test martingale (a discrete Robbins-type mixture: Robbins,
//! "Statistical methods related to the law of the iterated logarithm", Ann. Math. Stat. 1970;
//! averages of e-values stay e-values: Vovk & Wang, "E-values: calibration, combination and
//! applications", Ann. Stat. 2021). By Ville's inequality `P(sup_t E(t) ≥ 1/α) ≤ α` on honest
//! (Benford) data, so the alarm "E crosses 1/α", α = 1 − confidence, may be checked after every
//! invoice with no inflation of the false-alarm chance (the "safe testing" reading of e-values:
//! Grünwald, de Heide & Koolen, "Safe testing", JRSS B 2024; Ramdas, Grünwald, Vovk & Shafer,
//! "Game-theoretic statistics and safe anytime-valid inference", Stat. Sci. 2023 — citations
//! from memory). `E(t)` depends on the digit counts only, so it also has a closed form
//! ([`closed_form_log_since_start`]) that the O(K) update is tested against.
//!
//! **Since a change** (an e-detector of Shiryaev–Roberts type). For each alternative,
//! `R_k(t) = (R_k(t-1) + 1) · q_k(d_t)/p(d_t)`, `R_k(0) = 0`, i.e. the sum over all possible
//! change points `j ≤ t` of the likelihood ratio of invoices `j..=t` (Shiryaev 1963; Roberts
//! 1966). The detector is `R(t) = Σ_k π_k R_k(t)`. Under Benford `E[R(t) | past] = R(t-1) + 1`,
//! so `R(t) - t` is a martingale, and by optional stopping the alarm time
//! `τ = min{t : R(t) ≥ c}` has average run length `E[τ] ≥ c` invoices on honest data (Pollak,
//! "Average run lengths of an optimal method of detecting a change in distribution", Ann. Stat.
//! 1987; as an "e-detector": Shin, Ramdas & Rinaldo, "E-detectors: a nonparametric framework for
//! sequential change detection", 2023/24 — from memory). Doob's maximal inequality on the
//! submartingale `R` also gives `P(τ ≤ m) ≤ m / c`.
//!
//! **Threshold of the change detector.** `c = arl_years × (invoices per year of that supplier)`,
//! where invoices per year is the supplier's invoice count over its dated span in years
//! (365.25 days), the span taken as at least one year; undated suppliers are treated as if their
//! file covered one year. So with the default 100 years, the average time to a false alarm on an
//! honest supplier is at least 100 years of that supplier's invoicing, and a list of 40 honest
//! suppliers sees on average at most about one false alarm per 2.5 years. `c` is never set
//! below `1/α`.
//!
//! **Cost.** Both statistics update in O(K) per invoice (K = 60) from a precomputed 90×K table
//! of ratios, with a shared scale factor so that nothing overflows; components smaller than
//! 1e-200 of their statistic are set to zero, which can only lower the statistic (so the
//! guarantees above still hold). Equal prior weights let all components share one scaled "+1"
//! term; components are updated in blocks of 8 lanes (padding components have ratio 0 and stay
//! 0) with plain multiplies and adds in a fixed order, so the result has the same bits with or
//! without the AVX code path chosen at run time on x86_64, and in wasm. The replay copies each
//! supplier's invoices into a compact buffer in one sequential pass over the ledger (a counting
//! sort by supplier), orders each supplier by date with a counting sort by day, and then reads
//! memory in order (`benches/monitor.rs` measures it).
//!
//! An alarm is a reason to look, not proof of fraud: suppliers must not be accused on it alone;
//! defer to professional auditing standards, local law and counsel.

use crate::amount::{Amount, POW10};
use crate::benford;
use crate::counts::CountTable;
use crate::intake::{civil_from_days, format_date};
use crate::ledger::{Invoice, Ledger, NO_DATE};
use serde::Serialize;

/// Number of first-two digit bins (10..=99).
pub const BINS: usize = 90;

/// First-two digit bin (0 = "10", 89 = "99") of an amount, read exactly. None for zero.
#[inline]
pub fn first_two_bin(a: Amount) -> Option<usize> {
    a.leading_digits(2).map(|d| (d - 10) as usize)
}

/// Exact first-two digit distribution of an amount spread evenly (uniformly) over `[lo, hi)`,
/// `0 < lo`. Bin `b` gets the total length of `[lo, hi) ∩ ⋃_k [(10+b)·10^k, (11+b)·10^k)` over
/// `hi - lo`. When `hi <= lo` (a single value) the whole mass goes to the bin of `lo`.
pub fn even_spread_first_two(lo: f64, hi: f64) -> [f64; BINS] {
    let mut q = [0.0f64; BINS];
    assert!(lo > 0.0 && lo.is_finite() && hi.is_finite(), "even spread needs 0 < lo, finite ends");
    if hi <= lo {
        let e = lo.log10().floor() as i32 - 1;
        let mut d = (lo / 10f64.powi(e)).floor() as i64;
        d = d.clamp(10, 99);
        q[(d - 10) as usize] = 1.0;
        return q;
    }
    let k0 = lo.log10().floor() as i32 - 2;
    let k1 = hi.log10().floor() as i32;
    for k in k0..=k1 {
        let s = 10f64.powi(k);
        for (b, qb) in q.iter_mut().enumerate() {
            let a = (10 + b) as f64 * s;
            let z = (11 + b) as f64 * s;
            let len = z.min(hi) - a.max(lo);
            if len > 0.0 {
                *qb += len;
            }
        }
    }
    let tot: f64 = q.iter().sum();
    for v in q.iter_mut() {
        *v /= tot;
    }
    q
}

/// One alternative to Benford: share `share` of amounts spread evenly over
/// `[low, high) × 10^j` (any power of ten), the rest Benford.
#[derive(Clone, Copy, Debug, Serialize, PartialEq)]
pub struct Alternative {
    pub low: f64,
    pub high: f64,
    pub share: f64,
}

impl Alternative {
    /// First-two probabilities `(1 - share) p + share u`.
    pub fn first_two(&self) -> [f64; BINS] {
        let u = even_spread_first_two(self.low, self.high);
        let p = benford::first_two();
        let mut q = [0.0; BINS];
        for b in 0..BINS {
            q[b] = (1.0 - self.share) * p[b] + self.share * u[b];
        }
        q
    }
}

/// A fixed, weighted family of alternatives with its table of likelihood ratios.
#[derive(Clone, Debug)]
pub struct Family {
    alts: Vec<Alternative>,
    weights: Vec<f64>,
    /// `ratio[b * k_pad + k] = q_k(b) / p(b)`, padded to a multiple of `LANES` with ratio 0 (so a
    /// padding component stays 0 although the shared "+1" of the change detector reaches it).
    ratio: Vec<f64>,
    /// The same table as blocks of `LANES` components: `lanes[b * (k_pad / LANES) + j]`.
    lanes: Vec<[f64; LANES]>,
    log_ratio: Vec<f64>,
    k_pad: usize,
}

/// Lower ends of the standard ranges (times any power of ten).
pub const STANDARD_LOWS: [f64; 5] = [1.0, 2.0, 3.0, 5.0, 7.0];
/// Upper end over lower end of the standard ranges.
pub const STANDARD_SPANS: [f64; 4] = [2.0, 3.0, 5.0, 10.0];
/// Shares of evenly spread amounts in the standard family.
pub const STANDARD_SHARES: [f64; 3] = [0.15, 0.4, 1.0];

impl Family {
    /// The standard grid (see the module documentation): 20 ranges × 3 shares, equal weights.
    pub fn standard() -> Family {
        let mut alts = Vec::new();
        for &a in &STANDARD_LOWS {
            for &m in &STANDARD_SPANS {
                for &s in &STANDARD_SHARES {
                    alts.push(Alternative { low: a, high: a * m, share: s });
                }
            }
        }
        Family::new(alts)
    }

    /// Any family, with equal prior weights 1/K (equal weights let the update share one
    /// "+1" term across components, which keeps it cheap).
    pub fn new(alts: Vec<Alternative>) -> Family {
        assert!(!alts.is_empty());
        let weights = vec![1.0 / alts.len() as f64; alts.len()];
        let k = alts.len();
        let k_pad = k.div_ceil(LANES) * LANES;
        let p = benford::first_two();
        let mut ratio = vec![0.0; BINS * k_pad];
        let mut log_ratio = vec![0.0; BINS * k_pad];
        for (j, a) in alts.iter().enumerate() {
            let q = a.first_two();
            for b in 0..BINS {
                let r = q[b] / p[b];
                ratio[b * k_pad + j] = r;
                log_ratio[b * k_pad + j] = r.ln();
            }
        }
        let lanes = ratio.chunks_exact(LANES).map(|c| c.try_into().expect("LANES-sized chunk")).collect();
        Family { alts, weights, ratio, lanes, log_ratio, k_pad }
    }

    pub fn len(&self) -> usize {
        self.alts.len()
    }
    pub fn is_empty(&self) -> bool {
        self.alts.is_empty()
    }
    pub fn alternatives(&self) -> &[Alternative] {
        &self.alts
    }
    pub fn weights(&self) -> &[f64] {
        &self.weights
    }
    /// `q_k(bin) / p(bin)`.
    pub fn ratio(&self, k: usize, bin: usize) -> f64 {
        self.ratio[bin * self.k_pad + k]
    }
}

/// Crossings found by one [`Monitor::push`].
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Crossing {
    /// Since-the-start evidence is at or above its threshold after this invoice.
    pub since_start: bool,
    /// Since-a-change detector is at or above its threshold after this invoice.
    pub since_change: bool,
}

/// The running state of both statistics for one stream of first-two digits.
#[derive(Clone, Debug)]
pub struct Monitor<'a> {
    fam: &'a Family,
    /// Since-start components π_k W_k, times e^{-scale_w} (blocks of `LANES`).
    w: Vec<[f64; LANES]>,
    /// Change-detector components π_k R_k, times e^{-scale_r} (blocks of `LANES`).
    r: Vec<[f64; LANES]>,
    /// π e^{-scale_r} (π = 1/K): the "+1" of the Shiryaev–Roberts recursion, weighted and scaled.
    pi_r: f64,
    scale_w: f64,
    scale_r: f64,
    sum_w: f64,
    sum_r: f64,
    log_thr_w: f64,
    log_thr_r: f64,
    thr_w: f64,
    thr_r: f64,
    n: u64,
    counts: [u64; BINS],
}

/// Components are updated in blocks of this many (independent sums, so the loop vectorises).
const LANES: usize = 8;

#[inline(always)]
fn sum_lanes(a: &[f64; LANES]) -> f64 {
    ((a[0] + a[1]) + (a[2] + a[3])) + ((a[4] + a[5]) + (a[6] + a[7]))
}

/// One invoice for every component: `w ← w·l`, `r ← (r + π)·l`, with per-lane sums (even and
/// odd blocks of lanes summed apart, then added: shorter dependency chains). Plain IEEE multiplies and adds in a fixed order (no fused multiply-add), so every
/// instruction set gives the same bits.
#[inline(always)]
fn lane_block(w8: &mut [f64; LANES], r8: &mut [f64; LANES], l8: &[f64; LANES], pi: f64, aw: &mut [f64; LANES], ar: &mut [f64; LANES]) {
    for i in 0..LANES {
        let l = l8[i];
        let a = w8[i] * l;
        w8[i] = a;
        aw[i] += a;
        let b = (r8[i] + pi) * l;
        r8[i] = b;
        ar[i] += b;
    }
}

#[inline(always)]
fn lanes_body(w: &mut [[f64; LANES]], r: &mut [[f64; LANES]], row: &[[f64; LANES]], pi: f64) -> ([f64; LANES], [f64; LANES]) {
    let z = [0.0f64; LANES];
    let (mut w0, mut w1, mut r0, mut r1) = (z, z, z, z);
    let n2 = w.len() / 2 * 2;
    let (wa, wb) = w.split_at_mut(n2);
    let (ra, rb) = r.split_at_mut(n2);
    let (la, lb) = row.split_at(n2);
    for ((w2, r2), l2) in wa.chunks_exact_mut(2).zip(ra.chunks_exact_mut(2)).zip(la.chunks_exact(2)) {
        let [a0, a1] = w2 else { unreachable!() };
        let [b0, b1] = r2 else { unreachable!() };
        lane_block(a0, b0, &l2[0], pi, &mut w0, &mut r0);
        lane_block(a1, b1, &l2[1], pi, &mut w1, &mut r1);
    }
    for ((a, b), l) in wb.iter_mut().zip(rb.iter_mut()).zip(lb) {
        lane_block(a, b, l, pi, &mut w0, &mut r0);
    }
    let mut ow = z;
    let mut or = z;
    for i in 0..LANES {
        ow[i] = w0[i] + w1[i];
        or[i] = r0[i] + r1[i];
    }
    (ow, or)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
#[inline(never)]
fn lanes_body_avx(w: &mut [[f64; LANES]], r: &mut [[f64; LANES]], row: &[[f64; LANES]], pi: f64) -> ([f64; LANES], [f64; LANES]) {
    lanes_body(w, r, row, pi)
}

#[inline(always)]
fn lanes_step(w: &mut [[f64; LANES]], r: &mut [[f64; LANES]], row: &[[f64; LANES]], pi: f64) -> ([f64; LANES], [f64; LANES]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx") {
            // SAFETY: the CPU has AVX (checked just above).
            return unsafe { lanes_body_avx(w, r, row, pi) };
        }
    }
    lanes_body(w, r, row, pi)
}

const RESCALE_HI: f64 = 1e100;
const RESCALE_LO: f64 = 1e-100;
const FLUSH_REL: f64 = 1e-200;
const FLUSH_EVERY: u64 = 64;

impl<'a> Monitor<'a> {
    /// A fresh monitor; alarms at `ln E ≥ log_thr_start` and `ln R ≥ log_thr_change`.
    pub fn new(fam: &'a Family, log_thr_start: f64, log_thr_change: f64) -> Monitor<'a> {
        let mut m = Monitor {
            fam,
            w: vec![[0.0; LANES]; fam.k_pad / LANES],
            r: vec![[0.0; LANES]; fam.k_pad / LANES],
            pi_r: 0.0,
            scale_w: 0.0,
            scale_r: 0.0,
            sum_w: 1.0,
            sum_r: 0.0,
            log_thr_w: log_thr_start,
            log_thr_r: log_thr_change,
            thr_w: 0.0,
            thr_r: 0.0,
            n: 0,
            counts: [0; BINS],
        };
        m.reset(log_thr_start, log_thr_change);
        m
    }

    /// Start again (a new supplier) with new thresholds.
    pub fn reset(&mut self, log_thr_start: f64, log_thr_change: f64) {
        let k = self.fam.len();
        for j in 0..self.fam.k_pad {
            let pi = if j < k { self.fam.weights[j] } else { 0.0 };
            self.w[j / LANES][j % LANES] = pi;
            self.r[j / LANES][j % LANES] = 0.0;
        }
        self.pi_r = 1.0 / k as f64;
        self.scale_w = 0.0;
        self.scale_r = 0.0;
        self.sum_w = 1.0;
        self.sum_r = 0.0;
        self.log_thr_w = log_thr_start;
        self.log_thr_r = log_thr_change;
        self.thr_w = log_thr_start.exp();
        self.thr_r = log_thr_change.exp();
        self.n = 0;
        self.counts = [0; BINS];
    }

    /// Add one invoice (its first-two digit bin, 0..90). O(K).
    #[inline]
    pub fn push(&mut self, bin: usize) -> Crossing {
        let nb = self.w.len();
        let row = &self.fam.lanes[bin * nb..bin * nb + nb];
        let (sw, sr) = lanes_step(&mut self.w, &mut self.r, row, self.pi_r);
        self.settle(bin, &sw, &sr)
    }

    /// After the lane update of one invoice in `bin` (lane sums `sw`, `sr`): the new sums, the
    /// counts, a rescale when due, and the crossing. Shared by [`Monitor::push`] and
    /// [`Monitor::push_run`], so both take the same steps in the same order.
    #[inline(always)]
    fn settle(&mut self, bin: usize, sw: &[f64; LANES], sr: &[f64; LANES]) -> Crossing {
        self.sum_w = sum_lanes(sw);
        self.sum_r = sum_lanes(sr);
        self.n += 1;
        self.counts[bin] += 1;
        if !(RESCALE_LO..=RESCALE_HI).contains(&self.sum_w) || !(RESCALE_LO..=RESCALE_HI).contains(&self.sum_r) || self.n % FLUSH_EVERY == 0 {
            self.rescale();
        }
        Crossing { since_start: self.sum_w >= self.thr_w, since_change: self.sum_r >= self.thr_r }
    }

    /// Add the invoices of `bins` one by one, exactly as repeated [`Monitor::push`] (the same
    /// operations in the same order, so the same bits), stopping early after the first invoice
    /// whose crossing is wanted: since the start when `want_start`, since a change when
    /// `want_change`. Returns how many invoices were added and, on an early stop, that invoice's
    /// crossing. The CPU feature check is made once per stretch, not per invoice; the lane
    /// update stays an out-of-line call (inlined here it was no longer vectorised).
    pub fn push_run(&mut self, bins: &[u8], want_start: bool, want_change: bool) -> (usize, Option<Crossing>) {
        #[cfg(target_arch = "x86_64")]
        {
            if std::is_x86_feature_detected!("avx") {
                // SAFETY: the CPU has AVX (checked just above).
                return unsafe { self.push_run_avx(bins, want_start, want_change) };
            }
        }
        self.push_run_body(bins, want_start, want_change, lanes_body)
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx")]
    fn push_run_avx(&mut self, bins: &[u8], want_start: bool, want_change: bool) -> (usize, Option<Crossing>) {
        self.push_run_body(bins, want_start, want_change, |w, r, row, pi| lanes_body_avx(w, r, row, pi))
    }

    #[inline(always)]
    fn push_run_body<F>(&mut self, bins: &[u8], want_start: bool, want_change: bool, body: F) -> (usize, Option<Crossing>)
    where
        F: Fn(&mut [[f64; LANES]], &mut [[f64; LANES]], &[[f64; LANES]], f64) -> ([f64; LANES], [f64; LANES]),
    {
        let nb = self.w.len();
        let lanes = &self.fam.lanes;
        for (i, &b) in bins.iter().enumerate() {
            let bin = b as usize;
            let row = &lanes[bin * nb..bin * nb + nb];
            let (sw, sr) = body(&mut self.w, &mut self.r, row, self.pi_r);
            let cr = self.settle(bin, &sw, &sr);
            if (cr.since_start && want_start) || (cr.since_change && want_change) {
                return (i + 1, Some(cr));
            }
        }
        (bins.len(), None)
    }

    #[cold]
    fn rescale(&mut self) {
        let k = self.fam.len();
        if self.sum_w == 0.0 && self.n > 0 {
            // Every surviving component met a bin its alternative gives probability 0 (the others
            // had been flushed or had underflowed): recompute the components exactly from the
            // counts (the closed form), in log space.
            let kp = self.fam.k_pad;
            let lw: Vec<f64> = (0..k)
                .map(|j| {
                    let mut v = self.fam.weights[j].ln();
                    for b in 0..BINS {
                        if self.counts[b] > 0 {
                            v += self.counts[b] as f64 * self.fam.log_ratio[b * kp + j];
                        }
                    }
                    v
                })
                .collect();
            let m = lw.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
            let w = self.w.as_flattened_mut();
            for j in 0..k {
                w[j] = (lw[j] - m).exp();
            }
            self.sum_w = w.iter().sum();
            self.scale_w = m;
            self.thr_w = (self.log_thr_w - self.scale_w).exp();
        }
        if self.sum_r == 0.0 && self.n > 0 && self.sum_w > 0.0 {
            // The same for the change detector: restart it at R' = E, which is below the true
            // R (each R_k contains the term W_k of a change at the first invoice); a lower
            // statistic can only delay an alarm, so the run-length bound still holds.
            let w = self.w.as_flattened().to_vec();
            self.r.as_flattened_mut().copy_from_slice(&w);
            self.sum_r = self.sum_w;
            self.scale_r = self.scale_w;
            self.thr_r = (self.log_thr_r - self.scale_r).exp();
            self.pi_r = if self.scale_r > 600.0 { 0.0 } else { (-self.scale_r).exp() / k as f64 };
        }
        if self.sum_w > 0.0 && !(RESCALE_LO..=RESCALE_HI).contains(&self.sum_w) {
            let s = self.sum_w;
            for v in self.w.as_flattened_mut() {
                *v /= s;
            }
            self.scale_w += s.ln();
            self.sum_w = 1.0;
            self.thr_w = (self.log_thr_w - self.scale_w).exp();
        }
        if self.sum_r > 0.0 && !(RESCALE_LO..=RESCALE_HI).contains(&self.sum_r) {
            let s = self.sum_r;
            for v in self.r.as_flattened_mut() {
                *v /= s;
            }
            self.scale_r += s.ln();
            self.sum_r = 1.0;
            self.thr_r = (self.log_thr_r - self.scale_r).exp();
            // The "+1" term, scaled; below e^-600 of the statistic it is dropped (conservative).
            let f = if self.scale_r > 600.0 { 0.0 } else { (-self.scale_r).exp() };
            self.pi_r = f / k as f64;
        }
        let fw = self.sum_w * FLUSH_REL;
        for v in self.w.as_flattened_mut() {
            if *v < fw {
                *v = 0.0;
            }
        }
        let fr = self.sum_r * FLUSH_REL;
        for v in self.r.as_flattened_mut() {
            if *v < fr {
                *v = 0.0;
            }
        }
    }

    /// Add a whole period of invoices given only their first-two counts (order unknown). The
    /// since-the-start components are multiplied by the period's likelihood ratio
    /// `Λ_k = Π q_k/p = exp(Σ_b n_b ln(q_k(b)/p(b)))` — the same product the invoices would give
    /// one by one in any order, so `E` at the period end is exactly the invoice-level value. The
    /// change detector runs over periods: `R_k ← (R_k + 1)·Λ_k`, change points at period starts
    /// only (under Benford `E[Λ_k] = 1`, so `R − (periods)` is again a martingale and the run
    /// length bound holds in periods). Crossings are checked at the period end only.
    pub fn push_counts(&mut self, counts: &[u64; BINS]) -> Crossing {
        let k = self.fam.len();
        let kp = self.fam.k_pad;
        let mut l = vec![0.0f64; k];
        for b in 0..BINS {
            if counts[b] > 0 {
                let c = counts[b] as f64;
                for (j, lj) in l.iter_mut().enumerate() {
                    *lj += c * self.fam.log_ratio[b * kp + j];
                }
            }
        }
        let m = l.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        let (w, r) = (self.w.as_flattened_mut(), self.r.as_flattened_mut());
        for j in 0..k {
            let f = (l[j] - m).exp();
            w[j] *= f;
            r[j] = (r[j] + self.pi_r) * f;
        }
        self.scale_w += m;
        self.scale_r += m;
        self.n += counts.iter().sum::<u64>();
        for b in 0..BINS {
            self.counts[b] += counts[b];
        }
        self.sum_w = self.w.as_flattened().iter().sum();
        self.sum_r = self.r.as_flattened().iter().sum();
        self.thr_w = (self.log_thr_w - self.scale_w).exp();
        self.thr_r = (self.log_thr_r - self.scale_r).exp();
        self.pi_r = if self.scale_r > 600.0 { 0.0 } else { (-self.scale_r).exp() / k as f64 };
        // Renormalise (and recover from a statistic that became 0), as after an invoice.
        self.rescale();
        Crossing { since_start: self.sum_w >= self.thr_w, since_change: self.sum_r >= self.thr_r }
    }

    /// ln E(t): the since-the-start e-process now.
    pub fn log_since_start(&self) -> f64 {
        self.sum_w.ln() + self.scale_w
    }
    /// ln R(t): the since-a-change (Shiryaev–Roberts) statistic now; −∞ before any invoice.
    pub fn log_since_change(&self) -> f64 {
        self.sum_r.ln() + self.scale_r
    }
    pub fn invoices(&self) -> u64 {
        self.n
    }
    pub fn counts(&self) -> &[u64; BINS] {
        &self.counts
    }
    /// Index of the alternative carrying most of the change detector now.
    pub fn leading_change_alternative(&self) -> usize {
        let k = self.fam.len();
        let r = self.r.as_flattened();
        (0..k).max_by(|&a, &b| r[a].partial_cmp(&r[b]).unwrap()).unwrap_or(0)
    }
}

/// ln E from the digit counts alone: `ln Σ_k π_k exp(Σ_b n_b ln(q_k(b)/p(b)))`
/// (log-sum-exp). This is the closed form the O(K) update must agree with.
pub fn closed_form_log_since_start(fam: &Family, counts: &[u64; BINS]) -> f64 {
    let k = fam.len();
    let mut terms = Vec::with_capacity(k);
    for j in 0..k {
        let mut s = fam.weights[j].ln();
        for b in 0..BINS {
            if counts[b] > 0 {
                s += counts[b] as f64 * fam.log_ratio[b * fam.k_pad + j];
            }
        }
        terms.push(s);
    }
    log_sum_exp(&terms)
}

/// ln R from the whole sequence by the definition `Σ_k π_k Σ_{j≤t} Π_{i=j..t} q_k/p`, O(t·K)
/// in log space (for tests of the recursion).
pub fn direct_log_since_change(fam: &Family, bins: &[usize]) -> f64 {
    let k = fam.len();
    let mut terms = Vec::with_capacity(k * bins.len());
    for j in 0..k {
        // suffix sums of log ratios
        let mut s = 0.0;
        for &b in bins.iter().rev() {
            s += fam.log_ratio[b * fam.k_pad + j];
            terms.push(fam.weights[j].ln() + s);
        }
    }
    log_sum_exp(&terms)
}

fn log_sum_exp(t: &[f64]) -> f64 {
    let m = t.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
    if !m.is_finite() {
        return m;
    }
    m + t.iter().map(|v| (v - m).exp()).sum::<f64>().ln()
}

// ---------------------------------------------------------------------------------------------
// Share of evenly spread amounts: maximum likelihood and profile-likelihood interval.

/// Maximum-likelihood share `λ` of the mixture `(1-λ) p + λ u` given first-two counts, with a
/// profile-likelihood interval `{λ : 2(ℓ(λ̂) - ℓ(λ)) ≤ χ²₁(conf)}` (Wilks 1938; for a single
/// parameter the profile likelihood is the likelihood itself).
#[derive(Clone, Copy, Debug, Serialize, PartialEq)]
pub struct ShareEstimate {
    pub mle: f64,
    pub low: f64,
    pub high: f64,
}

fn loglik(counts: &[u64; BINS], p: &[f64], u: &[f64; BINS], lam: f64) -> f64 {
    let mut s = 0.0;
    for b in 0..BINS {
        if counts[b] > 0 {
            s += counts[b] as f64 * ((1.0 - lam) * p[b] + lam * u[b]).ln();
        }
    }
    s
}

fn dloglik(counts: &[u64; BINS], p: &[f64], u: &[f64; BINS], lam: f64) -> f64 {
    let mut s = 0.0;
    for b in 0..BINS {
        if counts[b] > 0 {
            s += counts[b] as f64 * (u[b] - p[b]) / ((1.0 - lam) * p[b] + lam * u[b]);
        }
    }
    s
}

/// Maximum-likelihood share: ℓ is concave in λ, so Newton steps safeguarded by a bisection
/// bracket on the sign of ℓ' converge in a few iterations.
fn share_mle(counts: &[u64; BINS], p: &[f64], u: &[f64; BINS]) -> f64 {
    let top = 1.0 - 1e-12;
    if dloglik(counts, p, u, 0.0) <= 0.0 {
        return 0.0;
    }
    if dloglik(counts, p, u, top) >= 0.0 {
        return 1.0;
    }
    let (mut a, mut b) = (0.0, top);
    let mut x = 0.5;
    for _ in 0..200 {
        let (mut d1, mut d2) = (0.0, 0.0);
        for k in 0..BINS {
            if counts[k] > 0 {
                let g = u[k] - p[k];
                let m = (1.0 - x) * p[k] + x * u[k];
                d1 += counts[k] as f64 * g / m;
                d2 -= counts[k] as f64 * g * g / (m * m);
            }
        }
        if d1 > 0.0 { a = x } else { b = x }
        let nx = if d2 < 0.0 { x - d1 / d2 } else { f64::NAN };
        let nx = if nx > a && nx < b { nx } else { 0.5 * (a + b) };
        if (nx - x).abs() < 1e-13 || b - a < 1e-13 {
            return nx;
        }
        x = nx;
    }
    x
}

/// See [`ShareEstimate`]. `conf` in (0, 1).
pub fn fabricated_share(counts: &[u64; BINS], u: &[f64; BINS], conf: f64) -> ShareEstimate {
    let p = benford::first_two();
    let n: u64 = counts.iter().sum();
    if n == 0 {
        return ShareEstimate { mle: 0.0, low: 0.0, high: 1.0 };
    }
    let mle = share_mle(counts, &p, u);
    let crit = chi2_1_quantile(conf) / 2.0;
    let lmax = loglik(counts, &p, u, mle);
    // g(λ) = ℓ(λ̂) − ℓ(λ) − crit is convex with g(λ̂) < 0: each end of the interval is the root
    // of g between λ̂ and 0 (or 1). Newton steps from the outside end approach a root of a convex
    // function without overshooting; they are safeguarded by the bracket (bisection when a
    // step leaves it or g is not finite, e.g. ln 0 at λ = 1).
    let g = |lam: f64| lmax - loglik(counts, &p, u, lam) - crit;
    let root = |inside: f64, outside: f64| {
        let (mut a, mut b) = (inside, outside); // g(a) <= 0 < g(b)
        let mut x = b;
        for _ in 0..200 {
            let gx = g(x);
            if gx > 0.0 {
                b = x;
            } else {
                a = x;
            }
            let d = -dloglik(counts, &p, u, x);
            let nx = if gx.is_finite() && d != 0.0 && d.is_finite() { x - gx / d } else { f64::NAN };
            let (lo, hi) = if a < b { (a, b) } else { (b, a) };
            let nx = if nx > lo && nx < hi { nx } else { 0.5 * (a + b) };
            if (nx - x).abs() < 1e-13 || (b - a).abs() < 1e-13 {
                return nx;
            }
            x = nx;
        }
        x
    };
    let low = if g(0.0) > 0.0 { root(mle, 0.0) } else { 0.0 };
    let high = if g(1.0) > 0.0 { root(mle, 1.0) } else { 1.0 };
    ShareEstimate { mle, low, high }
}

/// Quantile of the chi-square distribution with one degree of freedom: (Φ⁻¹((1+c)/2))².
pub fn chi2_1_quantile(conf: f64) -> f64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    let z = Normal::new(0.0, 1.0).unwrap().inverse_cdf(0.5 + conf / 2.0);
    z * z
}

// ---------------------------------------------------------------------------------------------
// The watch report.

#[derive(Clone, Debug, Serialize)]
pub struct WatchOptions {
    /// Confidence of the since-the-start alarm: alarm when E ≥ 1/(1 − confidence). Default 0.95.
    pub confidence: f64,
    /// Replay date (days since 1970-01-01): the state as of the end of that day.
    pub as_of: Option<i32>,
    /// Average run length of the change detector on honest data, in years of each supplier's
    /// own invoicing. Default 100.
    pub arl_years: f64,
    /// Most points kept in each supplier's evidence trajectory (besides the alarm point). Default 400.
    pub trajectory_points: usize,
    /// Report the trajectory at the end of every period of this kind (the last invoice dated in
    /// it) instead of every n-th invoice: what a count table with periods can be compared with.
    pub period_points: Option<PeriodKind>,
}

/// Calendar periods for evidence at period ends.
#[derive(Clone, Copy, Debug, Serialize, PartialEq, Eq)]
pub enum PeriodKind {
    Day,
    Month,
    Year,
}

impl PeriodKind {
    /// The period label of a day, as a count table writes it (`2024-03-31`, `2024-03`, `2024`).
    pub fn label(self, day: i32) -> String {
        let t = format_date(day);
        match self {
            PeriodKind::Day => t,
            PeriodKind::Month => t[..7].to_string(),
            PeriodKind::Year => t[..4].to_string(),
        }
    }
    /// A number identifying the period of a day (equal for days of the same period).
    fn key(self, day: i32) -> i64 {
        let (y, m, _) = civil_from_days(day);
        match self {
            PeriodKind::Day => day as i64,
            PeriodKind::Month => y as i64 * 12 + m as i64,
            PeriodKind::Year => y as i64,
        }
    }
}

impl Default for WatchOptions {
    fn default() -> Self {
        WatchOptions { confidence: 0.95, as_of: None, arl_years: 100.0, trajectory_points: 400, period_points: None }
    }
}

/// Evidence now (or as of a date), natural logarithms.
#[derive(Clone, Debug, Serialize)]
pub struct Evidence {
    /// ln E: since-the-start e-process.
    pub since_start_log: f64,
    /// ln(1/α): alarm line of the since-the-start evidence.
    pub since_start_threshold_log: f64,
    /// ln R: since-a-change (Shiryaev–Roberts e-detector) statistic.
    pub since_change_log: f64,
    /// ln c: alarm line of the change detector.
    pub since_change_threshold_log: f64,
    /// c: guaranteed lower bound on the average run length on honest data, in invoices.
    pub run_length_invoices: f64,
    /// The same bound in years of this supplier's invoicing.
    pub run_length_years: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct TrajectoryPoint {
    /// 1-based position of the invoice in the supplier's (date-ordered) stream.
    pub invoice: u64,
    pub date: Option<String>,
    pub since_start_log: f64,
    pub since_change_log: f64,
    /// True on the point of the alarm.
    pub alarm: bool,
    /// The period this point ends (e.g. `2024-03`), when evidence is reported at period ends.
    pub period: Option<String>,
}

/// Estimate of the fabricated part of an alarmed supplier's payments. An estimate, not a finding.
#[derive(Clone, Debug, Serialize)]
pub struct FabricatedEstimate {
    /// Estimated start of the deviation: first invoice for a since-the-start alarm, otherwise
    /// the last restart of a CUSUM run with the alternative leading the detector at the alarm.
    pub window_from_invoice: u64,
    pub window_from_date: Option<String>,
    pub window_invoices: u64,
    pub window_paid: Amount,
    /// The even spread used: over the supplier's own range of amounts in the window (see
    /// `own_range_fit`: quantile range of highest likelihood).
    pub even_spread_low: Amount,
    pub even_spread_high: Amount,
    /// Maximum-likelihood share of evenly spread amounts, with profile-likelihood interval.
    pub share: ShareEstimate,
    /// Expected amount in the evenly spread component: Σ amount × P(even spread | digits),
    /// at the estimate and at the interval ends (currency units).
    pub amount: f64,
    pub amount_low: f64,
    pub amount_high: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct SupplierWatch {
    pub id: u32,
    pub name: String,
    pub invoices: u64,
    pub amount_total: Amount,
    pub first_date: Option<String>,
    pub last_date: Option<String>,
    /// "date" or "file order" (when some invoices have no date).
    pub order: &'static str,
    pub undated_invoices: u64,
    pub invoices_per_year: f64,
    pub in_alarm: bool,
    /// ISO date of the first crossing (null when none, or when that invoice has no date).
    pub alarm_date: Option<String>,
    /// 1-based position in the stream of the invoice that raised the alarm.
    pub alarm_invoice: Option<u64>,
    pub alarm_line: Option<u32>,
    /// "since_start" or "since_change" (the first to cross; since_start on a tie).
    pub alarm_evidence: Option<&'static str>,
    pub since_start_alarm_date: Option<String>,
    pub since_change_alarm_date: Option<String>,
    /// Invoices and amount up to and including the invoice that raised the alarm.
    pub invoices_before_alarm: Option<u64>,
    pub paid_before_alarm: Option<Amount>,
    /// Invoices and amount after that invoice.
    pub invoices_after_alarm: Option<u64>,
    pub paid_after_alarm: Option<Amount>,
    pub evidence: Evidence,
    pub trajectory: Vec<TrajectoryPoint>,
    pub estimate: Option<FabricatedEstimate>,
}

#[derive(Clone, Debug, Serialize)]
pub struct ReplaySupplier {
    pub id: u32,
    pub name: String,
    pub alarm_date: Option<String>,
    pub alarm_evidence: Option<&'static str>,
    /// Invoices dated on or before the as-of date.
    pub invoices_so_far: u64,
    pub paid_so_far: Amount,
    pub paid_since_alarm: Amount,
    pub evidence: Evidence,
}

#[derive(Clone, Debug, Serialize)]
pub struct Replay {
    pub as_of: String,
    pub suppliers_in_alarm: Vec<ReplaySupplier>,
    pub paid_to_suppliers_in_alarm: Amount,
    /// Invoices that could not be placed in time (no date) and are left out of the replay.
    pub undated_invoices_left_out: u64,
}

#[derive(Clone, Debug, Serialize)]
pub struct AmountAtRisk {
    pub label: &'static str,
    pub confidence: f64,
    pub suppliers_in_alarm: u64,
    /// Total paid to suppliers in alarm (all their invoices).
    pub paid_to_suppliers_in_alarm: Amount,
    /// Sum over alarmed suppliers of the estimated evenly spread (plausibly fabricated) amount.
    pub plausibly_fabricated: f64,
    pub plausibly_fabricated_low: f64,
    pub plausibly_fabricated_high: f64,
    pub method: &'static str,
}

#[derive(Clone, Debug, Serialize)]
pub struct WatchReport {
    pub confidence: f64,
    pub arl_years: f64,
    pub alternatives: usize,
    pub method: Vec<&'static str>,
    pub notes: Vec<String>,
    pub suppliers_watched: u64,
    pub suppliers_in_alarm: u64,
    /// Alarmed suppliers first (earliest alarm first), then by closeness to an alarm line.
    pub suppliers: Vec<SupplierWatch>,
    pub replay: Option<Replay>,
    pub amount_at_risk: AmountAtRisk,
    pub caution: &'static str,
}

pub const CAUTION: &str = "An alarm is a reason to look, not proof of wrongdoing. Do not accuse a supplier on digit evidence alone; follow professional auditing standards, local law and counsel.";

const AT_RISK_LABEL: &str = "estimate, not a finding";
const AT_RISK_METHOD: &str = "per alarmed supplier, maximum-likelihood share of a mixture of Benford and an even spread over the supplier's own range of amounts since the estimated start of the deviation, with a profile-likelihood interval at the chosen confidence; amount = sum of amounts weighted by the probability each came from the even spread";

const METHOD: [&str; 3] = [
    "since the start: average of 60 likelihood-ratio test martingales (Benford vs. a share of evenly spread amounts); alarm when it reaches 1/(1 - confidence) — by Ville's inequality an honest supplier ever reaches it with probability at most 1 - confidence",
    "since a change: average of 60 Shiryaev-Roberts statistics over the same alternatives (an e-detector); alarm at c = run-length years x the supplier's invoices per year, which guarantees an average run length of at least c invoices on honest data",
    "each supplier's invoices are read in date order, ties by file order; first-two digits read exactly from the amounts",
];

/// ISO date text of a day number, as [`format_date`] writes it (checked in the tests), without
/// the formatting machinery: the replay writes one per trajectory point.
fn days_opt(d: i32) -> Option<String> {
    if d == NO_DATE {
        return None;
    }
    let (y, m, day) = civil_from_days(d);
    if !(0..=9999).contains(&y) {
        return Some(format_date(d));
    }
    let (y, m, day) = (y as u32, m, day);
    let b = [
        b'0' + (y / 1000) as u8,
        b'0' + (y / 100 % 10) as u8,
        b'0' + (y / 10 % 10) as u8,
        b'0' + (y % 10) as u8,
        b'-',
        b'0' + (m / 10) as u8,
        b'0' + (m % 10) as u8,
        b'-',
        b'0' + (day / 10) as u8,
        b'0' + (day % 10) as u8,
    ];
    Some(String::from_utf8(b.to_vec()).expect("ASCII digits"))
}

/// What the replay needs of one invoice, copied out of the ledger (16 bytes; the statistics
/// then read memory in order instead of jumping around the ledger).
#[derive(Clone, Copy, Debug, Default)]
struct Rec {
    amount: i64,
    date: i32,
    /// Index of the invoice in the ledger.
    idx: u32,
}

/// Invoices grouped per supplier, each group in file order: a counting sort by supplier that
/// reads the ledger once in order and writes compact records. Also returns the group starts
/// and the number of undated invoices per supplier.
fn group(ledger: &Ledger) -> (Vec<Rec>, Vec<usize>, Vec<u64>) {
    let ns = ledger.suppliers.len();
    let (cnt, undated) = count_groups(&ledger.invoices, ns);
    let start = group_starts(&cnt);
    let recs = scatter(&ledger.invoices, 0..ns, &start);
    (recs, start, undated)
}

/// Invoices and undated invoices per supplier among `inv`.
fn count_groups(inv: &[Invoice], ns: usize) -> (Vec<usize>, Vec<u64>) {
    let mut cnt = vec![0usize; ns];
    let mut undated = vec![0u64; ns];
    for i in inv {
        cnt[i.supplier as usize] += 1;
        undated[i.supplier as usize] += (i.date == NO_DATE) as u64;
    }
    (cnt, undated)
}

/// Start of every supplier's group (and the total at the end) from the counts.
fn group_starts(cnt: &[usize]) -> Vec<usize> {
    let mut start = vec![0usize; cnt.len() + 1];
    for k in 0..cnt.len() {
        start[k + 1] = start[k] + cnt[k];
    }
    start
}

/// The records of suppliers `sids` only (their groups, each in file order, starting at record
/// `start[sids.start]` of the whole grouping): one read of the ledger in order. The invoices of
/// other suppliers are written to one spare slot past the end (no branch on the supplier), so
/// that shards can group their own suppliers side by side.
fn scatter(inv: &[Invoice], sids: std::ops::Range<usize>, start: &[usize]) -> Vec<Rec> {
    let base = start[sids.start];
    let len = start[sids.end] - base;
    let ns = start.len() - 1;
    let mut recs = vec![Rec::default(); len + 1];
    // (next slot, step): step 0 and the spare slot for suppliers of other shards.
    let mut pos = vec![(len, 0usize); ns];
    for s in sids {
        pos[s] = (start[s] - base, 1);
    }
    for (j, i) in inv.iter().enumerate() {
        let p = &mut pos[i.supplier as usize];
        recs[p.0] = Rec { amount: i.amount.0, date: i.date, idx: j as u32 };
        p.0 += p.1;
    }
    recs.truncate(len);
    recs
}

/// One supplier's invoices (`g`, in file order) into reading order, in place: by date, ties by
/// line number, when `by_date`; else by line number. When the ledger's line numbers rise with
/// its index (`lines_in_order`, always so for a file read by the intake) file order is line
/// order, so an already ordered group is left as it is, and otherwise a stable counting sort by
/// day (when the days spanned are few) or a sort on the unique key (date, index) is used.
/// `scratch` and `cnt` are reused buffers.
fn reading_order(ledger: &Ledger, g: &mut [Rec], by_date: bool, lines_in_order: bool, scratch: &mut Vec<Rec>, cnt: &mut Vec<u32>) {
    let inv = &ledger.invoices;
    if !lines_in_order {
        if by_date {
            g.sort_by_key(|r| (r.date, inv[r.idx as usize].line()));
        } else {
            g.sort_by_key(|r| inv[r.idx as usize].line());
        }
        return;
    }
    if !by_date || g.windows(2).all(|w| w[0].date <= w[1].date) {
        return;
    }
    let (lo, hi) = g.iter().fold((i32::MAX, i32::MIN), |(a, b), r| (a.min(r.date), b.max(r.date)));
    let span = (hi as i64 - lo as i64 + 1) as usize;
    if span <= 4 * g.len() + 1024 {
        cnt.clear();
        cnt.resize(span + 1, 0);
        for r in g.iter() {
            cnt[(r.date - lo) as usize + 1] += 1;
        }
        for k in 1..cnt.len() {
            cnt[k] += cnt[k - 1];
        }
        scratch.clear();
        scratch.resize(g.len(), Rec::default());
        for r in g.iter() {
            let c = &mut cnt[(r.date - lo) as usize];
            scratch[*c as usize] = *r;
            *c += 1;
        }
        g.copy_from_slice(scratch);
    } else {
        g.sort_unstable_by_key(|r| ((r.date as i64) << 32) | r.idx as i64);
    }
}

/// True when the ledger's line numbers rise with its index (always so for a file read by the
/// intake): file order is then line order.
fn lines_in_order(ledger: &Ledger) -> bool {
    ledger.invoices.windows(2).all(|w| w[0].line() <= w[1].line())
}

/// Every supplier's invoices (indices into the ledger) in the order [`watch`] reads them: by
/// date with ties by line when all of the supplier's invoices are dated, else by line.
pub fn reading_orders(ledger: &Ledger) -> Vec<Vec<u32>> {
    let (mut recs, start, undated) = group(ledger);
    let in_order = lines_in_order(ledger);
    let (mut scratch, mut cnt) = (Vec::new(), Vec::new());
    (0..ledger.suppliers.len())
        .map(|s| {
            let g = &mut recs[start[s]..start[s + 1]];
            reading_order(ledger, g, undated[s] == 0, in_order, &mut scratch, &mut cnt);
            g.iter().map(|r| r.idx).collect()
        })
        .collect()
}


/// First-two digit bin of a scaled amount, exactly as [`first_two_bin`] (the same integer
/// quotient `|v| / 10^(digits - 2)`, or `|v| · 10` for a one-digit integer) without the
/// general digit-reading machinery. Zero gives bin 0, as in the replay.
#[inline]
fn bin_of_scaled(v: i64) -> usize {
    let v = v.unsigned_abs();
    if v == 0 {
        return 0;
    }
    // One division by a power of ten from a table: no branch on the number of digits (a
    // `match` with constant divisors mispredicted on amounts spanning several decades).
    let d = v.ilog10() as usize;
    let q = if d == 0 { v * 10 } else { v / POW10[d - 1] };
    (q - 10) as usize
}

/// Start of the deviation for a change alarm: replay a CUSUM `max(M, 1)·L` with the leading
/// alternative up to the alarm and return the (0-based) position where its last run began.
fn cusum_onset(fam: &Family, k: usize, bins: &[usize]) -> usize {
    let mut m: f64 = 0.0;
    let mut start = 0;
    for (i, &b) in bins.iter().enumerate() {
        if m < 1.0 {
            m = 1.0;
            start = i;
        }
        m *= fam.ratio(k, b);
    }
    start
}

/// The value at rank round((m - 1) f) of `sorted` (m values, ascending; `f` in [0, 1]).
pub(crate) fn sorted_quantile(sorted: &[i64], f: f64) -> i64 {
    sorted[((sorted.len() - 1) as f64 * f).round() as usize]
}

/// Expected fabricated amount at share `lam`: every invoice's amount weighted by the posterior
/// probability that its first-two bin came from the even spread `u` rather than Benford `p`.
/// `sums[b]` is the amount paid in bin `b` (the weight depends on the bin only).
fn expected_fabricated(sums: &[f64; BINS], p: &[f64], u: &[f64; BINS], lam: f64) -> f64 {
    (0..BINS)
        .map(|b| {
            let num = lam * u[b];
            let den = (1.0 - lam) * p[b] + num;
            if den > 0.0 { sums[b] * num / den } else { 0.0 }
        })
        .sum()
}

/// The supplier's own range for the even spread: among ranges between low and high quantiles
/// of the window's amounts (low 0, 1, 2, 5, 10 %; high 90, 95, 98, 99, 100 %), the one whose
/// fitted mixture has the highest likelihood (a profile likelihood over the range; a few
/// stray amounts outside the fabricated range then do not stretch it). Returns the range, its
/// first-two distribution and the share estimate at that range.
fn own_range_fit(counts: &[u64; BINS], sorted: &[i64], conf: f64) -> (i64, i64, [f64; BINS], ShareEstimate) {
    let p = benford::first_two();
    let q = |f: f64| sorted_quantile(sorted, f);
    let mut best: Option<(f64, i64, i64, [f64; BINS])> = None;
    for lf in [0.0, 0.01, 0.02, 0.05, 0.10] {
        for hf in [0.90, 0.95, 0.98, 0.99, 1.0] {
            let (lo, hi) = (q(lf), q(hf));
            let u = even_spread_first_two(Amount(lo).to_f64(), Amount(hi).to_f64());
            let m = share_mle(counts, &p, &u);
            let ll = loglik(counts, &p, &u, m);
            if best.as_ref().is_none_or(|b| ll > b.0) {
                best = Some((ll, lo, hi, u));
            }
        }
    }
    let (_, lo, hi, u) = best.expect("non-empty window");
    let e = fabricated_share(counts, &u, conf);
    (lo, hi, u, e)
}

/// Run both statistics over every supplier of the ledger.
pub fn watch(ledger: &Ledger, opts: &WatchOptions) -> WatchReport {
    let fam = Family::standard();
    let alpha = (1.0 - opts.confidence).clamp(1e-12, 0.5);
    let log_thr_start = (1.0 / alpha).ln();
    let inv = &ledger.invoices;
    let ns = ledger.suppliers.len();
    let threads = cfg!(not(target_arch = "wasm32")) && std::thread::available_parallelism().map_or(1, |n| n.get()) > 1;
    // Grouping by supplier: counted (in two halves of the ledger side by side, when there are
    // two threads and many invoices), then each shard writes the records of its own suppliers.
    let (cnt, undated_of) = if threads && inv.len() >= 100_000 {
        let (ia, ib) = inv.split_at(inv.len() / 2);
        let ((mut ca, mut ua), (cb, ub)) = std::thread::scope(|sc| {
            let h = sc.spawn(|| count_groups(ib, ns));
            (count_groups(ia, ns), h.join().expect("count thread"))
        });
        for k in 0..ns {
            ca[k] += cb[k];
            ua[k] += ub[k];
        }
        (ca, ua)
    } else {
        count_groups(inv, ns)
    };
    let start = group_starts(&cnt);
    let lines_in_order = lines_in_order(ledger);
    let ctx = ShardContext { ledger, opts, fam: &fam, alpha, log_thr_start, lines_in_order, undated_of: &undated_of, start: &start };
    // Suppliers are independent: two shards (split at a supplier boundary near half of the
    // invoices) run on two threads where the platform has them; the results are joined in
    // supplier order, so the report is the same as from one thread.
    let mid = (0..=ns).find(|&k| start[k] >= inv.len() / 2).unwrap_or(ns);
    let two = threads && start[mid].min(inv.len() - start[mid]) >= 50_000;
    let ((mut suppliers, mut replay_rows, ua), (sb, rpb, ub)) = if two {
        std::thread::scope(|sc| {
            let h = sc.spawn(|| replay_shard(&ctx, &mut scatter(inv, mid..ns, &start), mid..ns, start[mid]));
            let first = replay_shard(&ctx, &mut scatter(inv, 0..mid, &start), 0..mid, 0);
            (first, h.join().expect("replay thread"))
        })
    } else {
        let mut recs = scatter(inv, 0..ns, &start);
        let (ra, rb) = recs.split_at_mut(start[mid]);
        (replay_shard(&ctx, ra, 0..mid, 0), replay_shard(&ctx, rb, mid..ns, start[mid]))
    };
    suppliers.extend(sb);
    replay_rows.extend(rpb);
    assemble(suppliers, replay_rows, Vec::new(), ua + ub, opts, fam.len())
}

/// What every shard of the replay reads.
struct ShardContext<'a> {
    ledger: &'a Ledger,
    opts: &'a WatchOptions,
    fam: &'a Family,
    alpha: f64,
    log_thr_start: f64,
    lines_in_order: bool,
    undated_of: &'a [u64],
    start: &'a [usize],
}

/// The replay of suppliers `sids`, whose records are `recs` (starting at record `base`).
fn replay_shard(ctx: &ShardContext, recs: &mut [Rec], sids: std::ops::Range<usize>, base: usize) -> (Vec<SupplierWatch>, Vec<ReplaySupplier>, u64) {
    let ShardContext { ledger, opts, fam, alpha, log_thr_start, lines_in_order, undated_of, start } = *ctx;
    let mut mon = Monitor::new(fam, log_thr_start, log_thr_start);
    let mut suppliers = Vec::new();
    let mut replay_rows = Vec::new();
    let mut undated_total = 0u64;
    let (mut scratch, mut cnt) = (Vec::new(), Vec::new());
    let mut bins: Vec<u8> = Vec::new();
    let traj_max = opts.trajectory_points.max(2);

    for sid in sids {
        let order_buf = &mut recs[start[sid] - base..start[sid + 1] - base];
        if order_buf.is_empty() {
            continue;
        }
        let inv = |i: u32| -> &Invoice { &ledger.invoices[i as usize] };
        let undated = undated_of[sid];
        undated_total += undated;
        let by_date = undated == 0;
        reading_order(ledger, order_buf, by_date, lines_in_order, &mut scratch, &mut cnt);
        let order_buf = &*order_buf;
        let n = order_buf.len() as u64;
        let (first, last) = if by_date {
            (order_buf[0].date, order_buf[order_buf.len() - 1].date)
        } else {
            (NO_DATE, NO_DATE)
        };
        let span_years = if by_date { ((last - first + 1) as f64 / 365.25).max(1.0) } else { 1.0 };
        let per_year = n as f64 / span_years;
        let c = (opts.arl_years * per_year).max(1.0 / alpha);
        let log_c = c.ln();
        mon.reset(log_thr_start, log_c);

        let step = (n as usize).div_ceil(traj_max).max(1);
        let mut traj = Vec::with_capacity(traj_max + 2);
        let mut alarm: Option<(usize, &'static str)> = None;
        let mut ss_alarm: Option<usize> = None;
        let mut sc_alarm: Option<usize> = None;
        let mut lead_k = 0usize;
        let mut asof_state: Option<(u64, f64, f64)> = None;
        // Bins and the total first; the statistics then run in stretches between the points
        // where something is recorded (a trajectory point, the as-of cut, a first crossing).
        bins.clear();
        let mut total = Amount::ZERO;
        for v in order_buf {
            bins.push(bin_of_scaled(v.amount) as u8);
            total = total.saturating_add(Amount(v.amount));
        }
        let nu = n as usize;
        // Invoices read when the replay date is passed: the first dated after it.
        let cut = match opts.as_of {
            Some(a) if by_date => Some(order_buf.iter().position(|v| v.date > a).unwrap_or(nu)),
            _ => None,
        };
        let periods = if by_date { opts.period_points } else { None };
        // The next position at or after `q` that is a regular trajectory point or the last.
        let next_point = |q: usize| -> usize {
            match periods {
                Some(kind) => (q..nu).find(|&p| p + 1 == nu || kind.key(order_buf[p + 1].date) != kind.key(order_buf[p].date)).unwrap_or(nu - 1),
                None => ((q / step + 1) * step - 1).min(nu - 1),
            }
        };
        let mut pos = 0usize; // invoices read so far
        let mut np = next_point(0);
        loop {
            if cut == Some(pos) && asof_state.is_none() {
                asof_state = Some((pos as u64, mon.log_since_start(), mon.log_since_change()));
            }
            if pos == nu {
                break;
            }
            let mut end = np + 1;
            if let Some(c) = cut {
                if c > pos {
                    end = end.min(c);
                }
            }
            let (used, cr) = mon.push_run(&bins[pos..end], ss_alarm.is_none(), sc_alarm.is_none());
            let p = pos + used - 1;
            pos += used;
            let mut is_alarm = false;
            if let Some(cr) = cr {
                if cr.since_start && ss_alarm.is_none() {
                    ss_alarm = Some(p);
                }
                if cr.since_change && sc_alarm.is_none() {
                    sc_alarm = Some(p);
                }
                if alarm.is_none() && (cr.since_start || cr.since_change) {
                    alarm = Some((p, if cr.since_start { "since_start" } else { "since_change" }));
                    lead_k = mon.leading_change_alternative();
                    is_alarm = true;
                }
            }
            let at_point = p == np;
            if is_alarm || at_point {
                let v = &order_buf[p];
                traj.push(TrajectoryPoint {
                    invoice: p as u64 + 1,
                    date: days_opt(v.date),
                    since_start_log: mon.log_since_start(),
                    since_change_log: mon.log_since_change(),
                    alarm: is_alarm,
                    period: match periods {
                        Some(kind) if at_point => Some(kind.label(v.date)),
                        _ => None,
                    },
                });
            }
            if at_point && pos < nu {
                np = next_point(pos);
            }
        }
        let prefix_paid = |k: usize| order_buf[..k].iter().fold(Amount::ZERO, |t, v| t.saturating_add(Amount(v.amount)));
        let paid_before = alarm.map_or(Amount::ZERO, |(p, _)| prefix_paid(p + 1));
        let asof_state = asof_state.map(|(k, since_start_log, since_change_log)| CutState { pos: k as usize, invoices: k, paid: prefix_paid(k as usize), since_start_log, since_change_log });
        let evidence_now = Evidence {
            since_start_log: mon.log_since_start(),
            since_start_threshold_log: log_thr_start,
            since_change_log: mon.log_since_change(),
            since_change_threshold_log: log_c,
            run_length_invoices: c,
            run_length_years: c / per_year,
        };
        let date_at = |pos: usize| days_opt(order_buf[pos].date);
        let estimate = alarm.map(|(apos, which)| {
            let bins_usize: Vec<usize> = bins[..=apos].iter().map(|&b| b as usize).collect();
            let from = if which == "since_start" { 0 } else { cusum_onset(fam, lead_k, &bins_usize) };
            let window = &order_buf[from..];
            let mut counts = [0u64; BINS];
            let mut sums = [0.0f64; BINS];
            let mut paid = Amount::ZERO;
            let mut sorted: Vec<i64> = Vec::with_capacity(window.len());
            for r in window {
                let a = Amount(r.amount);
                let b = first_two_bin(a).unwrap_or(0);
                counts[b] += 1;
                sums[b] += a.to_f64();
                paid = paid.saturating_add(a);
                sorted.push(a.0);
            }
            sorted.sort_unstable();
            let (lo, hi, u, share) = own_range_fit(&counts, &sorted, opts.confidence);
            let p = benford::first_two();
            let expected = |lam: f64| expected_fabricated(&sums, &p, &u, lam);
            FabricatedEstimate {
                window_from_invoice: from as u64 + 1,
                window_from_date: date_at(from),
                window_invoices: window.len() as u64,
                window_paid: paid,
                even_spread_low: Amount(lo),
                even_spread_high: Amount(hi),
                amount: expected(share.mle),
                amount_low: expected(share.low),
                amount_high: expected(share.high),
                share,
            }
        });
        let alarm = alarm.map(|(p, which)| AlarmAt { pos: p, which, date: date_at(p), invoices: p as u64 + 1, line: Some(inv(order_buf[p].idx).line()), paid_before });
        let crossings = (ss_alarm.and_then(date_at), sc_alarm.and_then(date_at));
        let head = SupplierHead { id: sid, name: ledger.suppliers[sid].name.clone(), invoices: n, amount_total: total, days: (first, last), order: if by_date { "date" } else { "file order" }, undated_invoices: undated, invoices_per_year: per_year };
        let (watch, replay_row) = supplier_result(head, alarm, crossings, evidence_now, traj, estimate, asof_state);
        suppliers.push(watch);
        replay_rows.extend(replay_row);
    }
    (suppliers, replay_rows, undated_total)
}

/// A supplier's first alarm, in the units of its path (invoice position or period index).
struct AlarmAt {
    pos: usize,
    which: &'static str,
    date: Option<String>,
    /// Invoices up to and including the alarm (its invoice, or the end of its period).
    invoices: u64,
    line: Option<u32>,
    paid_before: Amount,
}

/// The monitor at the as-of cut: the first position after the cut (invoice or period), the
/// invoices and amount up to it, and ln E, ln R there.
struct CutState {
    pos: usize,
    invoices: u64,
    paid: Amount,
    since_start_log: f64,
    since_change_log: f64,
}

impl CutState {
    fn at(pos: usize, invoices: u64, paid: Amount, mon: &Monitor) -> CutState {
        CutState { pos, invoices, paid, since_start_log: mon.log_since_start(), since_change_log: mon.log_since_change() }
    }
}

/// What a supplier's result says that does not depend on the alarm.
struct SupplierHead {
    id: usize,
    name: String,
    invoices: u64,
    amount_total: Amount,
    /// First and last day (`NO_DATE` when read in file order).
    days: (i32, i32),
    order: &'static str,
    undated_invoices: u64,
    invoices_per_year: f64,
}

/// One supplier's result, and its replay row when a replay date was asked for (`cut`) and the
/// alarm came before the cut: shared by the invoice path ([`watch`]) and the period path
/// ([`watch_periods`]). `crossings` are the dates of the first since-start and since-change
/// crossings.
fn supplier_result(
    head: SupplierHead,
    alarm: Option<AlarmAt>,
    crossings: (Option<String>, Option<String>),
    evidence: Evidence,
    trajectory: Vec<TrajectoryPoint>,
    estimate: Option<FabricatedEstimate>,
    cut: Option<CutState>,
) -> (SupplierWatch, Option<ReplaySupplier>) {
    let SupplierHead { id, name, invoices: n, amount_total: total, days: (first, last), order, undated_invoices, invoices_per_year } = head;
    let replay_row = match (cut, &alarm) {
        (Some(c), Some(a)) if a.pos < c.pos => Some(ReplaySupplier {
            id: id as u32,
            name: name.clone(),
            alarm_date: a.date.clone(),
            alarm_evidence: Some(a.which),
            invoices_so_far: c.invoices,
            paid_so_far: c.paid,
            paid_since_alarm: Amount(c.paid.0 - a.paid_before.0),
            evidence: Evidence { since_start_log: c.since_start_log, since_change_log: c.since_change_log, ..evidence.clone() },
        }),
        _ => None,
    };
    let watch = SupplierWatch {
        id: id as u32,
        name,
        invoices: n,
        amount_total: total,
        first_date: days_opt(first),
        last_date: days_opt(last),
        order,
        undated_invoices,
        invoices_per_year,
        in_alarm: alarm.is_some(),
        alarm_invoice: alarm.as_ref().map(|a| a.invoices),
        alarm_line: alarm.as_ref().and_then(|a| a.line),
        alarm_evidence: alarm.as_ref().map(|a| a.which),
        since_start_alarm_date: crossings.0,
        since_change_alarm_date: crossings.1,
        invoices_before_alarm: alarm.as_ref().map(|a| a.invoices),
        paid_before_alarm: alarm.as_ref().map(|a| a.paid_before),
        invoices_after_alarm: alarm.as_ref().map(|a| n - a.invoices),
        paid_after_alarm: alarm.as_ref().map(|a| Amount(total.0 - a.paid_before.0)),
        alarm_date: alarm.and_then(|a| a.date),
        evidence,
        trajectory,
        estimate,
    };
    (watch, replay_row)
}

/// Notes, ranking, amount at risk and replay: the part of the report shared by [`watch`] and
/// [`watch_periods`].
fn assemble(mut suppliers: Vec<SupplierWatch>, mut replay_rows: Vec<ReplaySupplier>, mut notes: Vec<String>, undated_total: u64, opts: &WatchOptions, alternatives: usize) -> WatchReport {
    if undated_total > 0 {
        notes.push(format!(
            "{undated_total} invoices have no date: suppliers with undated invoices are read in file order only, get no alarm date, and are left out of the replay; their run length assumes the file covers one year"
        ));
    }
    let closeness = |s: &SupplierWatch| {
        (s.evidence.since_start_log - s.evidence.since_start_threshold_log)
            .max(s.evidence.since_change_log - s.evidence.since_change_threshold_log)
    };
    suppliers.sort_by(|a, b| {
        b.in_alarm
            .cmp(&a.in_alarm)
            .then_with(|| match (a.in_alarm, b.in_alarm) {
                (true, true) => (a.alarm_date.is_none(), &a.alarm_date).cmp(&(b.alarm_date.is_none(), &b.alarm_date)),
                _ => closeness(b).partial_cmp(&closeness(a)).unwrap_or(std::cmp::Ordering::Equal),
            })
            .then(a.name.cmp(&b.name))
    });
    let alarmed: Vec<&SupplierWatch> = suppliers.iter().filter(|s| s.in_alarm).collect();
    let amount_at_risk = AmountAtRisk {
        label: AT_RISK_LABEL,
        confidence: opts.confidence,
        suppliers_in_alarm: alarmed.len() as u64,
        paid_to_suppliers_in_alarm: alarmed.iter().fold(Amount::ZERO, |t, s| t.saturating_add(s.amount_total)),
        plausibly_fabricated: alarmed.iter().filter_map(|s| s.estimate.as_ref()).map(|e| e.amount).sum(),
        plausibly_fabricated_low: alarmed.iter().filter_map(|s| s.estimate.as_ref()).map(|e| e.amount_low).sum(),
        plausibly_fabricated_high: alarmed.iter().filter_map(|s| s.estimate.as_ref()).map(|e| e.amount_high).sum(),
        method: AT_RISK_METHOD,
    };
    let suppliers_in_alarm = alarmed.len() as u64;
    let replay = opts.as_of.map(|a| {
        replay_rows.sort_by(|x, y| x.alarm_date.cmp(&y.alarm_date).then(x.name.cmp(&y.name)));
        Replay {
            as_of: format_date(a),
            paid_to_suppliers_in_alarm: replay_rows.iter().fold(Amount::ZERO, |t, s| t.saturating_add(s.paid_so_far)),
            suppliers_in_alarm: replay_rows,
            undated_invoices_left_out: undated_total,
        }
    });
    WatchReport {
        confidence: opts.confidence,
        arl_years: opts.arl_years,
        alternatives,
        method: METHOD.to_vec(),
        notes,
        suppliers_watched: suppliers.len() as u64,
        suppliers_in_alarm,
        suppliers,
        replay,
        amount_at_risk,
        caution: CAUTION,
    }
}

/// The monitor at period granularity, from a digit-count table with a `period` column (see
/// [`crate::counts`]). Within a period the order of the invoices is unknown, so evidence is
/// evaluated only at period ends ([`Monitor::push_counts`]): the since-the-start e-process there
/// equals the invoice-level one evaluated at the same period end (a product of per-invoice
/// likelihood ratios does not depend on their order), and Ville's inequality still bounds the
/// chance that it ever crosses (it is looked at less often, never more). The change detector
/// takes change points at period starts and has an average run length of at least c periods,
/// c = run-length years × the supplier's periods with invoices per year. The alarm date is the
/// last day of the period in which the evidence crosses; invoices and amount "before the alarm"
/// are those up to the end of that period.
pub fn watch_periods(t: &CountTable, opts: &WatchOptions) -> WatchReport {
    let fam = Family::standard();
    let alpha = (1.0 - opts.confidence).clamp(1e-12, 0.5);
    let log_thr_start = (1.0 / alpha).ln();
    let mut mon = Monitor::new(&fam, log_thr_start, log_thr_start);
    let mut suppliers = Vec::new();
    let mut replay_rows = Vec::new();
    let traj_max = opts.trajectory_points.max(2);
    let p = benford::first_two();
    for (sid, sc) in t.suppliers.iter().enumerate() {
        let per = &sc.periods;
        if per.is_empty() {
            continue;
        }
        let n: u64 = per.iter().map(|x| x.counts.iter().sum::<u64>()).sum();
        let (first, last) = (per[0].first_day, per[per.len() - 1].last_day);
        let span_years = ((last - first + 1) as f64 / 365.25).max(1.0);
        let periods_per_year = per.len() as f64 / span_years;
        let c = (opts.arl_years * periods_per_year).max(1.0 / alpha);
        let log_c = c.ln();
        mon.reset(log_thr_start, log_c);
        let step = per.len().div_ceil(traj_max).max(1);
        let mut traj = Vec::new();
        let (mut cum_n, mut total) = (0u64, Amount::ZERO);
        let mut cum_at: Vec<(u64, Amount)> = Vec::with_capacity(per.len());
        let mut alarm: Option<(usize, &'static str)> = None;
        let (mut ss_alarm, mut sc_alarm) = (None, None);
        let mut lead_k = 0usize;
        let mut asof_state: Option<CutState> = None;
        for (i, x) in per.iter().enumerate() {
            if let Some(a) = opts.as_of {
                if asof_state.is_none() && x.last_day > a {
                    asof_state = Some(CutState::at(i, cum_n, total, &mon));
                }
            }
            let cr = mon.push_counts(&x.counts);
            cum_n += x.counts.iter().sum::<u64>();
            total = x.sums.iter().fold(total, |t, &v| t.saturating_add(v));
            cum_at.push((cum_n, total));
            if cr.since_start && ss_alarm.is_none() {
                ss_alarm = Some(i);
            }
            if cr.since_change && sc_alarm.is_none() {
                sc_alarm = Some(i);
            }
            let mut is_alarm = false;
            if alarm.is_none() && (cr.since_start || cr.since_change) {
                alarm = Some((i, if cr.since_start { "since_start" } else { "since_change" }));
                lead_k = mon.leading_change_alternative();
                is_alarm = true;
            }
            if is_alarm || (i + 1) % step == 0 || i + 1 == per.len() {
                traj.push(TrajectoryPoint {
                    invoice: cum_n,
                    date: days_opt(x.last_day),
                    since_start_log: mon.log_since_start(),
                    since_change_log: mon.log_since_change(),
                    alarm: is_alarm,
                    period: Some(x.label.clone()),
                });
            }
        }
        if opts.as_of.is_some() && asof_state.is_none() {
            asof_state = Some(CutState::at(per.len(), cum_n, total, &mon));
        }
        let evidence_now = Evidence {
            since_start_log: mon.log_since_start(),
            since_start_threshold_log: log_thr_start,
            since_change_log: mon.log_since_change(),
            since_change_threshold_log: log_c,
            run_length_invoices: c,
            run_length_years: c / periods_per_year,
        };
        let date_at = |i: usize| days_opt(per[i].last_day);
        let paid_before = alarm.map_or(Amount::ZERO, |(i, _)| cum_at[i].1);
        let estimate = alarm.map(|(apos, which)| {
            // Start of the deviation: last restart of a period-level CUSUM with the leading
            // alternative, as for invoices.
            let from = if which == "since_start" {
                0
            } else {
                let (mut m, mut start) = (0.0f64, 0usize);
                for (i, x) in per[..=apos].iter().enumerate() {
                    if m < 1.0 {
                        m = 1.0;
                        start = i;
                    }
                    let ll: f64 = (0..BINS).filter(|&b| x.counts[b] > 0).map(|b| x.counts[b] as f64 * fam.ratio(lead_k, b).ln()).sum();
                    m = (m.ln() + ll).exp();
                }
                start
            };
            let mut counts = [0u64; BINS];
            let mut sums = [0.0f64; BINS];
            let mut paid = Amount::ZERO;
            for x in &per[from..] {
                for b in 0..BINS {
                    counts[b] += x.counts[b];
                    sums[b] += x.sums[b].to_f64();
                    paid = paid.saturating_add(x.sums[b]);
                }
            }
            let wn: u64 = counts.iter().sum();
            // Amounts are not in a count table: the even spread is chosen among the standard
            // ranges (scale-free for first-two digits) and the whole decade by likelihood, and
            // placed at the power of ten of the window's mean amount.
            let mut best: Option<(f64, f64, f64, [f64; BINS])> = None;
            for (lo, hi) in STANDARD_LOWS.iter().flat_map(|&a| STANDARD_SPANS.iter().map(move |&m| (a, a * m))).chain([(1.0, 10.0)]) {
                let u = even_spread_first_two(lo, hi);
                let mle = share_mle(&counts, &p, &u);
                let ll = loglik(&counts, &p, &u, mle);
                if best.as_ref().is_none_or(|b| ll > b.0) {
                    best = Some((ll, lo, hi, u));
                }
            }
            let (_, lo, hi, u) = best.expect("non-empty family");
            let share = fabricated_share(&counts, &u, opts.confidence);
            let mean = if wn > 0 { paid.to_f64() / wn as f64 } else { 1.0 };
            let scale = if mean > 0.0 { 10f64.powi(mean.log10().floor() as i32) } else { 1.0 };
            let expected = |lam: f64| expected_fabricated(&sums, &p, &u, lam);
            let amt = |x: f64| Amount::from_scaled((x * 10_000.0).round() as i64, 4).unwrap_or(Amount::ZERO);
            FabricatedEstimate {
                window_from_invoice: if from == 0 { 1 } else { cum_at[from - 1].0 + 1 },
                window_from_date: days_opt(per[from].first_day),
                window_invoices: wn,
                window_paid: paid,
                even_spread_low: amt(lo * scale),
                even_spread_high: amt(hi * scale),
                amount: expected(share.mle),
                amount_low: expected(share.low),
                amount_high: expected(share.high),
                share,
            }
        });
        let alarm = alarm.map(|(i, which)| AlarmAt { pos: i, which, date: date_at(i), invoices: cum_at[i].0, line: None, paid_before });
        let crossings = (ss_alarm.and_then(date_at), sc_alarm.and_then(date_at));
        let head = SupplierHead { id: sid, name: sc.name.clone(), invoices: n, amount_total: total, days: (first, last), order: "period", undated_invoices: 0, invoices_per_year: n as f64 / span_years };
        let (watch, replay_row) = supplier_result(head, alarm, crossings, evidence_now, traj, estimate, asof_state);
        suppliers.push(watch);
        replay_rows.extend(replay_row);
    }
    let notes = vec![
        "digit-count table with periods: the order of invoices within a period is unknown, so evidence is evaluated only at period ends; the since-the-start evidence there equals the invoice-level value (a product of per-invoice likelihood ratios does not depend on their order); the change detector takes change points at period starts, its run length is counted in periods with invoices; alarm dates are period ends".to_string(),
    ];
    assemble(suppliers, replay_rows, notes, 0, opts, fam.len())
}

/// Readable summary for the terminal, ending with the caution.
pub fn render_text(rep: &WatchReport) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "suppliers watched {}  in alarm {}  (since-start alarm at {:.0} % confidence; change detector run length >= {} years of each supplier's invoices)",
        rep.suppliers_watched,
        rep.suppliers_in_alarm,
        rep.confidence * 100.0,
        rep.arl_years
    );
    for n in &rep.notes {
        let _ = writeln!(s, "note: {n}");
    }
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "{:<30} {:>8} {:>11} {:>12} {:>15} {:>15} {:>13} {:>13}",
        "supplier", "invoices", "alarm date", "evidence", "paid before", "paid after", "ln E / line", "ln R / line"
    );
    const MAX_ROWS: usize = 60;
    for sp in rep.suppliers.iter().take(MAX_ROWS) {
        let name: String = sp.name.chars().take(30).collect();
        let date = match (&sp.alarm_date, sp.alarm_invoice) {
            (Some(d), _) => d.clone(),
            (None, Some(k)) => format!("invoice {k}"),
            (None, None) => "-".into(),
        };
        let which = match sp.alarm_evidence {
            Some("since_start") => "since start",
            Some("since_change") => "since change",
            _ => "-",
        };
        let amt = |a: Option<Amount>| a.map_or("-".to_string(), |a| a.to_string());
        let e = &sp.evidence;
        let _ = writeln!(
            s,
            "{:<30} {:>8} {:>11} {:>12} {:>15} {:>15} {:>6.1}/{:<6.1} {:>6.1}/{:<6.1}",
            name,
            sp.invoices,
            date,
            which,
            amt(sp.paid_before_alarm),
            amt(sp.paid_after_alarm),
            e.since_start_log,
            e.since_start_threshold_log,
            e.since_change_log,
            e.since_change_threshold_log
        );
    }
    if rep.suppliers.len() > MAX_ROWS {
        let _ = writeln!(s, "... {} more suppliers, none in alarm (see --format json)", rep.suppliers.len() - MAX_ROWS);
    }
    if let Some(r) = &rep.replay {
        let _ = writeln!(s, "\nas of {}: {} suppliers in alarm, paid to them so far {}", r.as_of, r.suppliers_in_alarm.len(), r.paid_to_suppliers_in_alarm);
        for x in &r.suppliers_in_alarm {
            let _ = writeln!(
                s,
                "  {:<30} alarm {} ({}), paid so far {}, of which since the alarm {}",
                x.name.chars().take(30).collect::<String>(),
                x.alarm_date.as_deref().unwrap_or("-"),
                x.alarm_evidence.unwrap_or("-"),
                x.paid_so_far,
                x.paid_since_alarm
            );
        }
        if r.undated_invoices_left_out > 0 {
            let _ = writeln!(s, "  ({} undated invoices left out of the replay)", r.undated_invoices_left_out);
        }
    }
    let a = &rep.amount_at_risk;
    let _ = writeln!(
        s,
        "\namount at risk ({}): paid to {} suppliers in alarm {}; plausibly fabricated about {:.2} ({:.2} to {:.2} at {:.0} %)",
        a.label,
        a.suppliers_in_alarm,
        a.paid_to_suppliers_in_alarm,
        a.plausibly_fabricated,
        a.plausibly_fabricated_low,
        a.plausibly_fabricated_high,
        a.confidence * 100.0
    );
    let _ = writeln!(s, "\n{}", rep.caution);
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The constant-divisor bin agrees with the general digit reader (`Amount::leading_digits`,
    /// itself checked against hand-worked digits in its own tests) at every power-of-ten edge
    /// and on random amounts, negative ones and the extremes included.
    #[test]
    fn bin_of_scaled_matches_first_two_bin() {
        let mut vals: Vec<i64> = vec![1, 9, 10, 11, 99, 100, 101, i64::MAX, i64::MIN + 1, i64::MIN];
        let mut p: i64 = 1;
        for _ in 0..18 {
            p *= 10;
            for d in [-1, 0, 1] {
                for m in [1, 2, 5, 9, 10] {
                    if let Some(x) = p.checked_mul(m).and_then(|x| x.checked_add(d)) {
                        vals.push(x);
                    }
                }
            }
        }
        let mut x: u64 = 0x2545_F491_4F6C_DD1D;
        for _ in 0..200_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            vals.push((x >> (x % 60)) as i64 * if x & 1 == 0 { 1 } else { -1 });
        }
        for v in vals.into_iter().filter(|&v| v != 0) {
            assert_eq!(Some(bin_of_scaled(v)), first_two_bin(Amount(v)), "amount {v}");
        }
    }

    #[test]
    fn day_text_matches_format_date() {
        // Every day of 1900..=2100, every 13th day from 0001 to 9999, and days outside (fallback).
        let day = crate::intake::days_from_civil;
        let days = (day(1900, 1, 1)..=day(2100, 12, 31)).chain((day(1, 1, 1) - 400..=day(9999, 12, 31) + 400).step_by(13));
        for d in days {
            assert_eq!(days_opt(d).unwrap(), format_date(d), "day {d}");
        }
        assert_eq!(days_opt(NO_DATE), None);
    }

    /// The Newton interval ends agree with plain bisection on g(λ) = ℓ(λ̂) − ℓ(λ) − crit.
    #[test]
    fn share_interval_matches_bisection() {
        let p = benford::first_two();
        for (lo, hi, lam, n) in [(100.0, 900.0, 0.3, 400.0), (2.0, 7.0, 0.05, 5000.0), (1.0, 10.0, 0.9, 60.0), (300.0, 900.0, 1.0, 200.0)] {
            let u = even_spread_first_two(lo, hi);
            let mut c = [0u64; BINS];
            for b in 0..BINS {
                c[b] = (((1.0 - lam) * p[b] + lam * u[b]) * n).round() as u64;
            }
            let e = fabricated_share(&c, &u, 0.95);
            let crit = chi2_1_quantile(0.95) / 2.0;
            let lmax = loglik(&c, &p, &u, e.mle);
            let g = |x: f64| lmax - loglik(&c, &p, &u, x) - crit;
            let bis = |mut inside: f64, mut outside: f64| {
                for _ in 0..200 {
                    let m = 0.5 * (inside + outside);
                    if g(m) > 0.0 { outside = m } else { inside = m }
                }
                0.5 * (inside + outside)
            };
            let want_low = if g(0.0) > 0.0 { bis(e.mle, 0.0) } else { 0.0 };
            let want_high = if g(1.0) > 0.0 { bis(e.mle, 1.0) } else { 1.0 };
            assert!((e.low - want_low).abs() < 1e-9 && (e.high - want_high).abs() < 1e-9, "{e:?} vs {want_low} {want_high}");
            assert!(e.low <= e.mle && e.mle <= e.high);
        }
    }
}
