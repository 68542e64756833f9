//! Sample-size-aware calibration of the first-two digits test by Monte Carlo.
//!
//! Fixed MAD cut-offs ignore sample size: an honest supplier with few invoices has a large MAD
//! by chance alone. Here every verdict is calibrated to the supplier's own invoice count n:
//!
//! - **Null distributions** of MAD, chi-square, KS and max |Z| over honest (Benford) samples of
//!   size n, by exact multinomial sampling ([`sample`]) with a seeded generator ([`crate::rng`]).
//!   They are simulated once per n on a log-spaced grid (8 points per decade up to 10,000
//!   invoices, 2 a decade beyond, where the scaled distributions hardly move) and cached; for n
//!   between grid points the two neighbouring tables are used with the statistic rescaled by
//!   sqrt(n) (MAD and KS shrink like 1/sqrt(n); chi-square and max |Z| are scale-free) and the
//!   results interpolated linearly in log n. Below [`EXACT_BELOW`] invoices every n gets its own
//!   table (discreteness matters there and simulation is cheap).
//! - **p-values**: the Monte Carlo p-value (1 + #{T_sim >= t}) / (sims + 1) (Davison & Hinkley,
//!   *Bootstrap methods and their application*, 1997, eq. 4.11 — from memory), which is a valid
//!   p-value at any number of simulations.
//! - **Verdict** uses the MAD, the statistic practitioners read, calibrated to n.
//!   `deviates`: the (corrected, when a list is calibrated) p-value is at most 1 - confidence;
//!   otherwise `too_few` when even a supplier whose amounts are 100 % fabricated, spread evenly
//!   over its own amount range, would be detected with less than the chosen power at this n
//!   (decided sequentially, [`power`]); otherwise `consistent`. A deviation is a reason to look,
//!   not proof of anything.
//! - **Invoices needed**: the smallest n at which a deviation model (default: a share s of
//!   invoices fabricated with amounts uniform over the supplier's own range) is detected with the
//!   chosen power, from a simulated power curve ([`power`]: the honest part of the paths is
//!   shared by all suppliers).
//!
//! Determinism: each table is simulated from a stream derived from (seed, purpose, n), and each
//! power path from (seed, purpose, path index), so results never depend on the order in which
//! suppliers are calibrated, nor on how tables and suppliers are split over threads or Workers,
//! and native and wasm builds give identical numbers.

pub mod fdr;
pub mod power;
pub mod sample;

pub use fdr::{adjust, Adjusted, Correction};
pub use sample::Categorical;

use crate::amount::Amount;
use crate::benford;
use crate::rng::DetRng;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;
use std::sync::Arc;

/// Number of first-two-digit bins (10..=99).
pub const BINS: usize = 90;
/// Grid points per decade of n for the cached null tables, up to 10^COARSE_FROM_DECADE.
pub const GRID_PER_DECADE: u32 = 8;
/// From 10^COARSE_FROM_DECADE invoices on, the grid has COARSE_PER_DECADE points a decade: there
/// the sqrt(n)-scaled null distributions hardly change with n (the scaled 95th percentile of
/// MAD is 0.0904-0.091 from n = 1,000 to 10,000 in the numpy run quoted in calibrate_checks),
/// and each table costs the most to simulate.
pub const COARSE_FROM_DECADE: u32 = 4;
pub const COARSE_PER_DECADE: u32 = 2;
/// Every n below this gets its own null table instead of grid interpolation.
pub const EXACT_BELOW: u64 = 100;
/// Power-curve checkpoints per decade up to 10^COARSE_FROM_DECADE (every other grid point);
/// beyond, every (coarse) grid point.
pub const POWER_PER_DECADE: u32 = 4;

const TAG_NULL: u64 = 0x6e75_6c6c; // "null"
const TAG_NULL_PATH: u64 = 0x6e70_6174; // "npat"
const TAG_POWER: u64 = 0x706f_7772; // "powr"
const TAG_FULL: u64 = 0x6675_6c6c; // "full"

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum DeviationModel {
    /// A share `fabricated_share` of invoices with amounts uniform over [amount_min, amount_max].
    #[default]
    EvenSpread,
    /// The supplier's observed first-two digit proportions taken as its true profile
    /// (`fabricated_share` is not used). Observed proportions at small n overstate the
    /// deviation (noise looks like deviation), so this model is optimistic for small suppliers.
    ObservedProfile,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    Deviates,
    Consistent,
    TooFew,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CalibrationOptions {
    /// Confidence level c; a supplier deviates when its p-value <= 1 - c. Default 0.95.
    pub confidence: f64,
    pub seed: u64,
    /// Honest samples per null table. Default 10,000.
    pub sims: u32,
    /// Target power for `invoices_needed` and `too_few`. Default 0.8.
    pub power: f64,
    /// Share of fabricated invoices in the even-spread model. Default 0.3.
    pub fabricated_share: f64,
    pub deviation_model: DeviationModel,
    pub correction: Correction,
    /// Simulated paths per power curve. Default 400 (power SE <= 0.025).
    pub power_sims: u32,
    /// Power curves stop here; `invoices_needed` is None beyond. Default 100,000.
    pub max_invoices: u64,
}

impl Default for CalibrationOptions {
    fn default() -> Self {
        CalibrationOptions {
            confidence: 0.95,
            seed: 1,
            sims: 10_000,
            power: 0.8,
            fabricated_share: 0.3,
            deviation_model: DeviationModel::EvenSpread,
            correction: Correction::Fdr,
            power_sims: 400,
            max_invoices: 100_000,
        }
    }
}

/// Statistics of one count vector, from counts (same formulas as [`crate::stats`]).
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct CountStats {
    pub mad: f64,
    pub chi_square: f64,
    pub ks: f64,
    pub max_z: f64,
}

/// Per-n constants for the count-based statistics, padded with zeros to a multiple of
/// [`LANES`] bins (padded bins add exactly 0 to every sum and maximum).
#[derive(Clone, Debug)]
pub struct Moments {
    n: u64,
    /// Number of bins (before padding).
    k: usize,
    e: Vec<f64>,
    inv_e: Vec<f64>,
    cum_e: Vec<f64>,
    inv_sd: Vec<f64>,
    /// For the statistics of small n from the occupied bins only: the sum of e, and the bins
    /// by their Z at a count of 0, largest first, with those Zs.
    sum_e: f64,
    z0_order: Vec<(f64, u8)>,
    /// n < SPARSE_BELOW, at most 128 bins, none with zero probability.
    sparse: bool,
}

/// Below this n (where the null tables are simulated per size, most bins are empty and there
/// are many tables) the statistics are computed from the occupied bins only, with the empty
/// bins' share from per-n constants (`Moments::stats_sparse`). Measured (node harness and
/// examples/speed, side by side): the 500-supplier null tables 12 % faster in wasm, 3 % slower
/// natively; the page's calibration is what has the time target.
pub const SPARSE_BELOW: u64 = 100;

/// Running sums and maxima kept per lane, so that the loops over bins vectorise; the lanes are
/// combined as (l0 + l1) + (l2 + l3), the same order on every platform.
pub const LANES: usize = 4;

/// A bin count: u64 for observed counts, u32 for simulated ones (half the memory traffic).
pub trait Count: Copy + Default + Send + Sync + 'static {
    fn to_u64(self) -> u64;
    fn add_u64(&mut self, x: u64);
}
impl Count for u64 {
    #[inline(always)]
    fn to_u64(self) -> u64 {
        self
    }
    #[inline(always)]
    fn add_u64(&mut self, x: u64) {
        *self += x;
    }
}
impl Count for u32 {
    #[inline(always)]
    fn to_u64(self) -> u64 {
        self as u64
    }
    #[inline(always)]
    fn add_u64(&mut self, x: u64) {
        *self += x as u32;
    }
}

impl Moments {
    pub fn new(n: u64, p: &[f64]) -> Moments {
        let nf = n as f64;
        let k = p.len();
        let k4 = k.div_ceil(LANES) * LANES;
        let pad = |mut v: Vec<f64>| {
            v.resize(k4, 0.0);
            v
        };
        let e: Vec<f64> = p.iter().map(|&x| nf * x).collect();
        let inv_e = e.iter().map(|&x| if x > 0.0 { 1.0 / x } else { 0.0 }).collect();
        let mut acc = 0.0;
        let cum_e = p
            .iter()
            .map(|&x| {
                acc += x;
                nf * acc
            })
            .collect();
        let inv_sd = p
            .iter()
            .map(|&x| {
                let v = nf * x * (1.0 - x);
                if v > 0.0 { 1.0 / libm::sqrt(v) } else { 0.0 }
            })
            .collect();
        let sum_e = e.iter().sum();
        let mut z0_order: Vec<(f64, u8)> = e
            .iter()
            .zip(&inv_sd)
            .enumerate()
            .map(|(i, (&x, &isd)): (usize, (&f64, &f64))| (if 0.5 < x { x - 0.5 } else { x } * isd, i as u8))
            .collect();
        z0_order.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
        let sparse = n < SPARSE_BELOW && k <= 128 && e.iter().all(|&x| x > 0.0);
        Moments { n, k, e: pad(e), inv_e: pad(inv_e), cum_e: pad(cum_e), inv_sd: pad(inv_sd), sum_e, z0_order, sparse }
    }

    pub fn n(&self) -> u64 {
        self.n
    }

    /// The four statistics from the occupied bins (c_i > 0) only, the same quantities as the
    /// dense loop to rounding: with E = sum e_i,
    ///   sum |c_i - e_i| = E + sum_occ (|c_i - e_i| - e_i),
    ///   sum (c_i - e_i)^2 / e_i = E - 2n + sum_occ c_i^2 / e_i  (every e_i > 0),
    ///   KS: the running count is constant between occupied bins while cum_e rises, so the
    ///       largest |cum - cum_e| of such a stretch is at one of its ends,
    ///   max Z: the largest over the occupied bins and over the empty ones, whose Z is fixed for
    ///       the n (the first empty bin in `z0_order`).
    fn stats_sparse<C: Count>(&self, c: &[C]) -> CountStats {
        let nf = self.n as f64;
        let c = &c[..self.k];
        // occupied bins as a bitmap (no branch per bin), then visited in ascending order
        let mut occ = [0u64; 2];
        for (i, x) in c.iter().enumerate() {
            occ[i >> 6] |= ((x.to_u64() != 0) as u64) << (i & 63);
        }
        let (mut sad, mut chi, mut ks, mut mz) = (0.0f64, 0.0f64, 0.0f64, 0.0f64);
        let mut cum = 0u64;
        for (w, &word) in occ.iter().enumerate() {
            let mut bits = word;
            while bits != 0 {
                let i = w * 64 + bits.trailing_zeros() as usize;
                bits &= bits - 1;
                let x = c[i].to_u64();
                // the stretch before this bin ends at i - 1 with the running count so far (when
                // bin i - 1 is occupied this repeats its own term: no change to the maximum)
                let dk = (cum as i64 as f64 - self.cum_e[i.saturating_sub(1)]).abs() * ((i > 0) as u8 as f64);
                ks = if dk > ks { dk } else { ks };
                cum += x;
                let xf = x as i64 as f64;
                let d = xf - self.e[i];
                let ad = d.abs();
                sad += ad - self.e[i];
                chi += xf * xf * self.inv_e[i];
                let dk = (cum as i64 as f64 - self.cum_e[i]).abs();
                ks = if dk > ks { dk } else { ks };
                let num = if 0.5 < ad { ad - 0.5 } else { ad };
                let z = num * self.inv_sd[i];
                mz = if z > mz { z } else { mz };
            }
        }
        // the last stretch ends at the last bin (cum = n there)
        let dk = (cum as i64 as f64 - self.cum_e[self.k - 1]).abs();
        ks = if dk > ks { dk } else { ks };
        // the first stretch, running count 0 from bin 0: |0 - cum_e_0| (no larger than its end's)
        if c[0].to_u64() == 0 {
            let dk = self.cum_e[0];
            ks = if dk > ks { dk } else { ks };
        }
        if let Some(&(z, _)) = self.z0_order.iter().find(|(_, b)| occ[(*b as usize) >> 6] & (1 << (*b & 63)) == 0) {
            mz = if z > mz { z } else { mz };
        }
        CountStats { mad: (self.sum_e + sad) / (nf * self.k as f64), chi_square: self.sum_e - 2.0 * nf + chi, ks: ks / nf, max_z: mz }
    }

    /// MAD = mean_i |c_i / n - p_i| (Nigrini 2012, as in [`crate::stats::mad`]), summed in
    /// the lane order of [`LANES`].
    #[inline]
    pub fn mad<C: Count>(&self, c: &[C]) -> f64 {
        if self.n == 0 {
            return 0.0;
        }
        let c = &c[..self.k];
        let mut lane = [0.0f64; LANES];
        for (j, ee) in self.e.chunks_exact(LANES).enumerate() {
            for l in 0..LANES {
                let i = j * LANES + l;
                let x = if i < self.k { c[i].to_u64() as i64 as f64 } else { 0.0 };
                lane[l] += libm::fabs(x - ee[l]);
            }
        }
        ((lane[0] + lane[1]) + (lane[2] + lane[3])) / (self.n as f64 * self.k as f64)
    }

    /// All four statistics.
    pub fn stats<C: Count>(&self, c: &[C]) -> CountStats {
        if self.n == 0 {
            return CountStats { mad: 0.0, chi_square: 0.0, ks: 0.0, max_z: 0.0 };
        }
        if self.sparse {
            return self.stats_sparse(c);
        }
        let nf = self.n as f64;
        let c = &c[..self.k];
        let (mut sad, mut chi) = ([0.0f64; LANES], [0.0f64; LANES]);
        // maxima do not depend on the order: plain running values
        let (mut ks, mut mz) = (0.0f64, 0.0f64);
        // The counts and their running sum as f64 (exact: integers below 2^53); the padding
        // (count 0, e = cum_e = inv_sd = 0) adds 0 to every sum and maximum.
        let mut acc = 0u64;
        let chunks = self.e.chunks_exact(LANES).zip(self.inv_e.chunks_exact(LANES)).zip(self.cum_e.chunks_exact(LANES)).zip(self.inv_sd.chunks_exact(LANES));
        for (j, (((e, inv_e), cum_e), inv_sd)) in chunks.enumerate() {
            for l in 0..LANES {
                let i = j * LANES + l;
                let x = if i < self.k { c[i].to_u64() } else { 0 };
                acc += x;
                let d = x as i64 as f64 - e[l];
                let ad = d.abs();
                sad[l] += ad;
                chi[l] += d * d * inv_e[l];
                // cum_e is 0 in the padding, where acc = n: inv_sd's 0 keeps z at 0 there, and
                // KS takes only the real bins
                if i < self.k {
                    let dk = (acc as i64 as f64 - cum_e[l]).abs();
                    ks = if dk > ks { dk } else { ks };
                }
                // continuity correction of 1/(2n) in proportions = 0.5 in counts, applied only
                // when smaller than the difference (as crate::stats::z_stat); inv_sd is 0 where
                // p_i is 0 or 1, the 0 of z_stat there
                let num = if 0.5 < ad { ad - 0.5 } else { ad };
                let z = num * inv_sd[l];
                mz = if z > mz { z } else { mz };
            }
        }
        CountStats {
            mad: ((sad[0] + sad[1]) + (sad[2] + sad[3])) / (nf * self.k as f64),
            chi_square: (chi[0] + chi[1]) + (chi[2] + chi[3]),
            ks: ks / nf,
            max_z: mz,
        }
    }
}

/// Sorted simulated statistics of honest samples at one n.
#[derive(Clone, Debug)]
pub struct NullTable {
    pub n: u64,
    /// Ascending: mad, chi_square, ks, max_z.
    sorted: [Vec<f64>; 4],
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Statistic {
    Mad = 0,
    ChiSquare = 1,
    Ks = 2,
    MaxZ = 3,
}

impl Statistic {
    /// Exponent of n in the statistic's scale: MAD and KS ~ n^-1/2, the others ~ 1.
    fn scales_with_sqrt_n(self) -> bool {
        matches!(self, Statistic::Mad | Statistic::Ks)
    }
}

/// Relative tolerance for ties between a simulated and an observed statistic.
const TIE: f64 = 1e-12;

/// Whether the null table at n is read off the shared honest paths ([`NullTable::simulate_paths`]):
/// n below [`EXACT_BELOW`], or a grid point up to [`sample::GUIDE_MAX_N`].
pub fn on_path(n: u64) -> bool {
    n >= 1 && n <= sample::GUIDE_MAX_N && (n < EXACT_BELOW || grid_n(grid_floor(n)) == n)
}

/// The tables at `ns` as items to share between threads or Workers: those [`on_path`] in one
/// item (a batch costs about as much as its largest table), then each other one alone,
/// ascending (the costliest last).
pub fn table_items(ns: &[u64]) -> Vec<Vec<u64>> {
    let (path, mut own): (Vec<u64>, Vec<u64>) = ns.iter().partition(|&&n| on_path(n));
    own.sort_unstable();
    let mut items: Vec<Vec<u64>> = if path.is_empty() { Vec::new() } else { vec![path] };
    items.extend(own.into_iter().map(|n| vec![n]));
    items
}

/// The stops of every honest path up to `max`: 1, 2, ..., 99, then the grid points from 100
/// on (up to [`sample::GUIDE_MAX_N`]).
fn path_stops(max: u64) -> impl Iterator<Item = u64> {
    (1..EXACT_BELOW)
        .chain((grid_floor(EXACT_BELOW)..).map(grid_n).take_while(|&n| n <= sample::GUIDE_MAX_N))
        .take_while(move |&n| n <= max)
}

impl NullTable {
    /// Simulate `sims` honest samples of size n: for n [`on_path`], read off the honest paths
    /// ([`NullTable::simulate_paths`]); otherwise from the stream (seed, "null", n).
    pub fn simulate(benford: &Categorical, n: u64, sims: u32, seed: u64) -> NullTable {
        NullTable::simulate_item(benford, &[n], sims, seed).pop().expect("one table")
    }

    /// The tables at sizes `ns` (each [`on_path`]), in that order, from `sims` honest paths:
    /// path j draws invoice after invoice from its own stream (seed, "npat", j) with the guide
    /// table, and its counts are read at every size wanted. The path stops at the same sizes
    /// whatever is wanted ([`path_stops`]; one draw of the guide table uses 32 random bits and
    /// the draws between two stops come from whole 64-bit words), so the table at n is the same
    /// whether simulated alone or with others, and a batch of tables costs about as much as its
    /// largest one. Tables at different n come from the same paths (as a supplier's counts
    /// after n and after m invoices would): each is an exact sample of honest suppliers of its
    /// size.
    pub fn simulate_paths(benford: &Categorical, ns: &[u64], sims: u32, seed: u64) -> Vec<NullTable> {
        assert!(ns.iter().all(|&n| on_path(n)), "sizes on the honest paths");
        let mut want: Vec<u64> = ns.to_vec();
        want.sort_unstable();
        want.dedup();
        let Some(&max) = want.last() else { return Vec::new() };
        let moms: Vec<Moments> = want.iter().map(|&n| Moments::new(n, benford.probs())).collect();
        let mut cols: Vec<[Vec<f64>; 4]> = want.iter().map(|_| std::array::from_fn(|_| Vec::with_capacity(sims as usize))).collect();
        let stops: Vec<u64> = path_stops(max).collect();
        for j in 0..sims as u64 {
            let mut rng = DetRng::stream(seed, &[TAG_NULL_PATH, j]);
            let mut c = [0u32; BINS];
            let (mut at, mut k) = (0u64, 0usize);
            for &stop in &stops {
                benford.add_guided(&mut rng, stop - at, &mut c);
                at = stop;
                if want[k] == stop {
                    let st = moms[k].stats(&c);
                    let col = &mut cols[k];
                    col[0].push(st.mad);
                    col[1].push(st.chi_square);
                    col[2].push(st.ks);
                    col[3].push(st.max_z);
                    k += 1;
                    if k == want.len() {
                        break;
                    }
                }
            }
        }
        let mut scratch = Vec::new();
        let tables = want.iter().zip(cols).map(|(&n, mut c)| {
            for col in c.iter_mut() {
                sort_f64(col, &mut scratch);
            }
            NullTable { n, sorted: c }
        });
        in_order(ns, tables.collect())
    }

    /// The tables of one item of [`table_items`]: on the honest paths together, or the one
    /// other table.
    pub fn simulate_item(benford: &Categorical, item: &[u64], sims: u32, seed: u64) -> Vec<NullTable> {
        if item.iter().all(|&n| on_path(n)) {
            NullTable::simulate_paths(benford, item, sims, seed)
        } else {
            item.iter().map(|&n| NullTable::simulate_own(benford, n, sims, seed)).collect()
        }
    }

    /// Simulate `sims` honest samples of size n from the stream (seed, "null", n).
    fn simulate_own(benford: &Categorical, n: u64, sims: u32, seed: u64) -> NullTable {
        let mom = Moments::new(n, benford.probs());
        let mut rng = DetRng::stream(seed, &[TAG_NULL, n]);
        let mut cols: [Vec<f64>; 4] = std::array::from_fn(|_| Vec::with_capacity(sims as usize));
        fn run<C: Count>(benford: &Categorical, n: u64, sims: u32, rng: &mut DetRng, mom: &Moments, cols: &mut [Vec<f64>; 4]) {
            let mut c = [C::default(); BINS];
            for _ in 0..sims {
                c.iter_mut().for_each(|x| *x = C::default());
                benford.add(rng, n, &mut c);
                let s = mom.stats(&c);
                cols[0].push(s.mad);
                cols[1].push(s.chi_square);
                cols[2].push(s.ks);
                cols[3].push(s.max_z);
            }
        }
        // u32 counts (half the memory traffic) wherever no bin can overflow them
        if n <= u32::MAX as u64 {
            run::<u32>(benford, n, sims, &mut rng, &mom, &mut cols);
        } else {
            run::<u64>(benford, n, sims, &mut rng, &mom, &mut cols);
        }
        let mut scratch = Vec::new();
        for col in cols.iter_mut() {
            sort_f64(col, &mut scratch);
        }
        NullTable { n, sorted: cols }
    }

    /// Simulate the tables for every n in `ns` (in that order), split over up to `threads`
    /// threads (one on wasm32, where the page spreads the sizes over Workers instead) by items
    /// ([`table_items`]: the tables on the honest paths together, each other one alone). Every
    /// table depends only on (seed, sims, n), so the tables are the same whatever the split.
    pub fn simulate_many(benford: &Categorical, ns: &[u64], sims: u32, seed: u64, threads: usize) -> Vec<NullTable> {
        let threads = if cfg!(target_arch = "wasm32") { 1 } else { threads.max(1) };
        let mut distinct = ns.to_vec();
        distinct.sort_unstable();
        distinct.dedup();
        // the items ([`table_items`]), the costliest first, each to the least loaded thread
        let mut items = table_items(&distinct);
        let cost = |item: &Vec<u64>| table_cost(item.iter().copied().max().unwrap_or(0)) + 100 * (item.len() as u64 - 1);
        items.sort_by_key(|item| std::cmp::Reverse(cost(item)));
        let mut parts: Vec<(u64, Vec<Vec<u64>>)> = vec![(0, Vec::new()); threads];
        for item in items {
            let i = (0..threads).min_by_key(|&i| (parts[i].0, i)).unwrap_or(0);
            parts[i].0 += cost(&item);
            parts[i].1.push(item);
        }
        let run = |part: &[Vec<u64>]| part.iter().flat_map(|item| NullTable::simulate_item(benford, item, sims, seed)).collect::<Vec<_>>();
        let done: Vec<NullTable> = if threads == 1 {
            run(&parts[0].1)
        } else {
            std::thread::scope(|sc| {
                let hs: Vec<_> = parts[1..].iter().filter(|p| !p.1.is_empty()).map(|p| sc.spawn(move || run(&p.1))).collect();
                let mut out = run(&parts[0].1);
                for h in hs {
                    out.extend(h.join().expect("null table thread"));
                }
                out
            })
        };
        in_order(ns, done)
    }

    /// A table from its four sorted columns (mad, chi_square, ks, max_z), e.g. one simulated by
    /// another Worker. Panics unless the columns have equal length and are ascending.
    pub fn from_columns(n: u64, cols: [Vec<f64>; 4]) -> NullTable {
        assert!(cols.iter().all(|c| c.len() == cols[0].len()), "columns of equal length");
        assert!(cols.iter().all(|c| c.windows(2).all(|w| w[0].total_cmp(&w[1]).is_le())), "columns sorted");
        NullTable { n, sorted: cols }
    }

    /// The four sorted columns (mad, chi_square, ks, max_z).
    pub fn columns(&self) -> &[Vec<f64>; 4] {
        &self.sorted
    }

    pub fn sims(&self) -> usize {
        self.sorted[0].len()
    }

    pub fn sorted(&self, s: Statistic) -> &[f64] {
        &self.sorted[s as usize]
    }

    /// Monte Carlo p-value (1 + #{T >= t}) / (S + 1).
    pub fn p_value(&self, s: Statistic, t: f64) -> f64 {
        let v = &self.sorted[s as usize];
        let cut = t - TIE * t.abs();
        let below = v.partition_point(|&x| x < cut);
        (1 + v.len() - below) as f64 / (v.len() + 1) as f64
    }

    /// Critical value at level alpha: t rejects (p-value <= alpha) iff t > critical.
    /// +inf when no t can reject with this many simulations.
    pub fn critical(&self, s: Statistic, alpha: f64) -> f64 {
        let v = &self.sorted[s as usize];
        let k = libm::floor(alpha * (v.len() + 1) as f64) as i64 - 1;
        if k < 0 || v.is_empty() {
            return f64::INFINITY;
        }
        let k = (k as usize).min(v.len() - 1);
        v[v.len() - 1 - k]
    }
}

/// `tables` (one per distinct size) in the order of `ns`; a size asked twice gets a copy.
fn in_order(ns: &[u64], tables: Vec<NullTable>) -> Vec<NullTable> {
    let mut by_n: HashMap<u64, NullTable> = tables.into_iter().map(|t| (t.n, t)).collect();
    let mut out = Vec::with_capacity(ns.len());
    for (i, n) in ns.iter().enumerate() {
        out.push(if ns[i + 1..].contains(n) { by_n[n].clone() } else { by_n.remove(n).expect("simulated") });
    }
    out
}

/// Sort ascending in `f64::total_cmp` order, by an LSD radix sort over the bytes of the
/// order-preserving integer image of each value (sign bit flipped for positives, all bits for
/// negatives); bytes on which all keys agree are skipped. The result is the same as
/// `sort_unstable_by(total_cmp)`: total_cmp-equal values are bit-identical.
pub fn sort_f64(v: &mut [f64], scratch: &mut Vec<u64>) {
    #[inline(always)]
    fn key(x: f64) -> u64 {
        let b = x.to_bits();
        if b >> 63 == 1 { !b } else { b | (1 << 63) }
    }
    #[inline(always)]
    fn unkey(k: u64) -> f64 {
        f64::from_bits(if k >> 63 == 1 { k & !(1 << 63) } else { !k })
    }
    let n = v.len();
    if n < 64 {
        v.sort_unstable_by(|a, b| a.total_cmp(b));
        return;
    }
    let mut a: Vec<u64> = v.iter().map(|&x| key(x)).collect();
    scratch.clear();
    scratch.resize(n, 0);
    let mut hist = vec![[0u32; 256]; 8];
    for &k in &a {
        for (d, h) in hist.iter_mut().enumerate() {
            h[((k >> (8 * d)) & 0xff) as usize] += 1;
        }
    }
    let mut src = &mut a;
    let mut dst = scratch;
    for (d, h) in hist.iter().enumerate() {
        if h.iter().any(|&c| c as usize == n) {
            continue; // every key has the same byte here
        }
        let mut pos = [0u32; 256];
        let mut acc = 0u32;
        for (p, &c) in pos.iter_mut().zip(h.iter()) {
            *p = acc;
            acc += c;
        }
        for &k in src.iter() {
            let b = ((k >> (8 * d)) & 0xff) as usize;
            dst[pos[b] as usize] = k;
            pos[b] += 1;
        }
        std::mem::swap(&mut src, &mut dst);
    }
    for (x, &k) in v.iter_mut().zip(src.iter()) {
        *x = unkey(k);
    }
}

/// Threads used natively to simulate a batch of missing null tables ([`Calibrator::prepare`]).
pub const TABLE_THREADS: usize = 2;

/// Relative cost of simulating one null table at n: the guide table costs O(n) up to
/// [`sample::GUIDE_MAX_N`], the binomial tree about as much as the guide at that n; the
/// statistics about as much as 100 invoices (rough figures from `benches/calibrate.rs`).
fn table_cost(n: u64) -> u64 {
    n.min(sample::GUIDE_MAX_N) + 100
}

/// Split table sizes into `parts` lists of about equal simulation cost (largest first, each to
/// the least loaded list; ties to the lower list), so any order of `ns` gives the same split.
pub fn split_sizes(ns: &[u64], parts: usize) -> Vec<Vec<u64>> {
    split_sizes_by(ns, &vec![1; parts.max(1)])
}

/// As [`split_sizes`], with part i taking a share of the cost proportional to `weights[i]`
/// (e.g. a Worker that starts earlier takes more): each size, largest first, goes to the part
/// whose load after taking it, divided by its weight, is least (ties to the lower part).
pub fn split_sizes_by(ns: &[u64], weights: &[u64]) -> Vec<Vec<u64>> {
    let parts = weights.len().max(1);
    let w = |i: usize| weights.get(i).copied().unwrap_or(1).max(1) as u128;
    let mut order: Vec<u64> = ns.to_vec();
    order.sort_unstable_by(|a, b| table_cost(*b).cmp(&table_cost(*a)).then(b.cmp(a)));
    let mut out = vec![Vec::new(); parts];
    let mut load = vec![0u64; parts];
    for n in order {
        let c = table_cost(n);
        // compare (load_i + c) / w_i across parts without division: cross-multiplied
        let i = (0..parts)
            .min_by(|&a, &b| ((load[a] + c) as u128 * w(b)).cmp(&((load[b] + c) as u128 * w(a))).then(a.cmp(&b)))
            .unwrap_or(0);
        load[i] += c;
        out[i].push(n);
    }
    out
}

/// The grid point g's sample size: round(10^(g / GRID_PER_DECADE)) up to 10^COARSE_FROM_DECADE,
/// then round(10^(COARSE_FROM_DECADE + (g - g_c) / COARSE_PER_DECADE)) beyond (g_c the grid
/// index of 10^COARSE_FROM_DECADE).
pub fn grid_n(g: u32) -> u64 {
    let gc = COARSE_FROM_DECADE * GRID_PER_DECADE;
    let e = if g <= gc {
        g as f64 / GRID_PER_DECADE as f64
    } else {
        COARSE_FROM_DECADE as f64 + (g - gc) as f64 / COARSE_PER_DECADE as f64
    };
    libm::round(libm::pow(10.0, e)) as u64
}

/// Largest grid index with grid_n(g) <= n (n >= 1).
fn grid_floor(n: u64) -> u32 {
    let l = libm::log10(n as f64);
    let gc = COARSE_FROM_DECADE * GRID_PER_DECADE;
    let g = if l <= COARSE_FROM_DECADE as f64 {
        libm::floor(GRID_PER_DECADE as f64 * l)
    } else {
        gc as f64 + libm::floor(COARSE_PER_DECADE as f64 * (l - COARSE_FROM_DECADE as f64))
    };
    let mut g = g.max(0.0) as u32;
    while grid_n(g + 1) <= n {
        g += 1;
    }
    while g > 0 && grid_n(g) > n {
        g -= 1;
    }
    g
}

/// The grid index of the power checkpoint after the one at grid index g: every other grid point
/// (POWER_PER_DECADE a decade) up to 10^COARSE_FROM_DECADE, every grid point beyond.
fn next_checkpoint(g: u32) -> u32 {
    if g < COARSE_FROM_DECADE * GRID_PER_DECADE {
        g + GRID_PER_DECADE / POWER_PER_DECADE
    } else {
        g + 1
    }
}

/// The power checkpoints' sizes in order (10, 18, 32, ..., 10,000, 31,623, ...) up to `max`.
fn checkpoints(max: u64) -> impl Iterator<Item = u64> {
    std::iter::successors(Some(GRID_PER_DECADE), |&g| Some(next_checkpoint(g))).map(grid_n).take_while(move |&n| n <= max)
}

/// First-two digit probabilities of a continuous uniform on [a, b] (0 < a <= b): the overlap of
/// [d·10^k, (d+1)·10^k) with [a, b] summed over decades k, divided by b - a. For a == b all mass
/// is on the first-two digits of a.
pub fn uniform_first_two(a: f64, b: f64) -> [f64; BINS] {
    let mut out = [0.0f64; BINS];
    assert!(a > 0.0 && b >= a && b.is_finite(), "need 0 < a <= b");
    if b == a {
        let e = libm::floor(libm::log10(a));
        let mut d = libm::floor(a / libm::pow(10.0, e - 1.0)) as i64;
        d = d.clamp(10, 99);
        out[(d - 10) as usize] = 1.0;
        return out;
    }
    let e_lo = libm::floor(libm::log10(a)) as i32 - 1;
    let e_hi = libm::floor(libm::log10(b)) as i32 + 1;
    for e in e_lo..=e_hi {
        let unit = libm::pow(10.0, (e - 1) as f64);
        for d in 10..=99i32 {
            let lo = d as f64 * unit;
            let hi = (d + 1) as f64 * unit;
            let ov = hi.min(b) - lo.max(a);
            if ov > 0.0 {
                out[(d - 10) as usize] += ov;
            }
        }
    }
    let s: f64 = out.iter().sum();
    out.iter_mut().for_each(|x| *x /= s);
    out
}

/// (1 - s)·Benford + s·uniform on [a, b].
pub fn even_spread_mixture(a: f64, b: f64, share: f64) -> [f64; BINS] {
    mix_with_benford(&uniform_first_two(a, b), share)
}

/// (1 - share)·Benford + share·`u` over the 90 first-two bins.
fn mix_with_benford(u: &[f64; BINS], share: f64) -> [f64; BINS] {
    let p = benford::first_two();
    let s = share.clamp(0.0, 1.0);
    std::array::from_fn(|i| (1.0 - s) * p[i] + s * u[i])
}

/// Null-only result for one count vector.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct NullCalibration {
    pub invoices: u64,
    pub stats: CountStats,
    /// Calibrated p-value of the MAD ("how unusual among honest suppliers of this size").
    pub mc_p_value: f64,
    /// MAD above which this supplier deviates at the chosen confidence (single test).
    pub mad_critical: f64,
    pub chi2_mc_p_value: f64,
    pub ks_mc_p_value: f64,
    pub maxz_mc_p_value: f64,
}

#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct PowerPoint {
    pub invoices: u64,
    pub power: f64,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SupplierCalibration {
    pub invoices: u64,
    pub mad: f64,
    pub mc_p_value: f64,
    pub mad_critical: f64,
    pub chi2_mc_p_value: f64,
    pub ks_mc_p_value: f64,
    pub maxz_mc_p_value: f64,
    /// The p-value after the correction across the list (None for a single-supplier call).
    pub adjusted_p_value: Option<f64>,
    pub verdict: Verdict,
    /// Power at this n against 100 % evenly spread fabricated amounts (basis of `too_few`),
    /// estimated from `power_full_sims` samples (a sequential decision against the target
    /// power: fewer samples when the answer is clear early; see [`power`]).
    pub power_full_fabrication: f64,
    pub power_full_sims: u32,
    /// Smallest n at which the deviation model is detected with the chosen power; None when
    /// not reached by `max_invoices`.
    pub invoices_needed: Option<u64>,
    /// invoices_needed - invoices, 0 when already enough.
    pub more_invoices_needed: Option<u64>,
    pub power_curve: Vec<PowerPoint>,
    pub confidence: f64,
    pub seed: u64,
    pub sims: u32,
    pub deviation_model: DeviationModel,
    pub fabricated_share: f64,
}

/// One supplier's input for [`Calibrator::ledger`].
#[derive(Clone, Debug, PartialEq)]
pub struct SupplierInput {
    pub first_two_counts: Vec<u64>,
    pub amount_min: Amount,
    pub amount_max: Amount,
}

impl SupplierInput {
    /// The supplier's size as calibration reads it: invoices with first-two digits.
    pub fn n(&self) -> u64 {
        self.first_two_counts.iter().sum()
    }
}

/// Indices of `inputs` (those given in `idx`) in the order their power work is dealt: the
/// costliest (largest) supplier first, ties in the order given.
pub fn costliest_first(inputs: &[SupplierInput], mut idx: Vec<usize>) -> Vec<usize> {
    idx.sort_by_key(|&i| std::cmp::Reverse(inputs[i].n()));
    idx
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct LedgerCalibration {
    pub correction: Correction,
    /// The level the corrected p-values are held to: 1 - confidence.
    pub q: f64,
    pub alarms: usize,
    /// Indices (into the input) of the suppliers with an alarm.
    pub alarm_indices: Vec<usize>,
    pub suppliers: Vec<SupplierCalibration>,
}

/// Calibrates suppliers; caches null tables per n.
pub struct Calibrator {
    opts: CalibrationOptions,
    benford: Categorical,
    /// Shared (`Arc`): a copy for another thread's power work holds the same tables.
    tables: HashMap<u64, Arc<NullTable>>,
    threads: usize,
    /// Honest parts of the even-spread power paths, shared by every supplier's curve.
    honest: Option<power::HonestPaths>,
    /// The sequential power decision's bounds for (target power bits).
    seq_bounds: Option<(u64, Vec<(u32, i64, i64)>)>,
    /// Power work done per supplier key (here or by another Worker).
    powers: HashMap<power::PowerKey, power::PowerResult>,
    /// Power curves per model (amount range, and the counts' hash for the observed profile).
    curves: HashMap<(i64, i64, u64), Vec<PowerPoint>>,
}

impl Calibrator {
    pub fn new(opts: CalibrationOptions) -> Calibrator {
        assert!(opts.sims >= 1, "sims >= 1");
        assert!(opts.confidence > 0.0 && opts.confidence < 1.0, "0 < confidence < 1");
        assert!(opts.max_invoices < 1 << 31, "power paths count in u32: max_invoices < 2^31");
        Calibrator {
            opts,
            benford: Categorical::new(&benford::first_two()),
            tables: HashMap::new(),
            threads: TABLE_THREADS,
            honest: None,
            seq_bounds: None,
            powers: HashMap::new(),
            curves: HashMap::new(),
        }
    }

    pub fn options(&self) -> &CalibrationOptions {
        &self.opts
    }

    fn alpha(&self) -> f64 {
        1.0 - self.opts.confidence
    }

    /// The null table at exactly n (simulated on first use, then cached).
    pub fn table(&mut self, n: u64) -> &NullTable {
        let (b, sims, seed) = (&self.benford, self.opts.sims, self.opts.seed);
        self.tables.entry(n).or_insert_with(|| Arc::new(NullTable::simulate(b, n, sims, seed)))
    }

    /// The cached table at exactly n, if simulated already.
    pub fn cached_table(&self, n: u64) -> Option<&NullTable> {
        self.tables.get(&n).map(|t| &**t)
    }

    /// Every cached table, in no particular order.
    pub fn tables(&self) -> impl Iterator<Item = &NullTable> {
        self.tables.values().map(|t| &**t)
    }

    /// Number of cached tables.
    pub fn cached_tables(&self) -> usize {
        self.tables.len()
    }

    /// Threads for [`Calibrator::prepare`] inside [`Calibrator::ledger`] (default
    /// [`TABLE_THREADS`]; always 1 on wasm32). Numbers do not depend on it.
    pub fn set_threads(&mut self, threads: usize) {
        self.threads = threads.max(1);
    }

    /// The null-table sizes that calibrating suppliers of sizes `ns` (p-values and critical MAD)
    /// reads and that are not cached yet, ascending and distinct.
    pub fn missing_tables(&self, ns: &[u64]) -> Vec<u64> {
        let mut need: Vec<u64> = ns
            .iter()
            .filter(|&&n| n > 0)
            .flat_map(|&n| {
                let (a, b, _) = Self::bracket(n);
                [a, b]
            })
            .filter(|m| !self.tables.contains_key(m))
            .collect();
        need.sort_unstable();
        need.dedup();
        need
    }

    /// Put a table simulated elsewhere (e.g. by another Worker) in the cache. It must be the
    /// table of this calibrator's seed and sims at `t.n`; panics on a different number of sims.
    pub fn insert_table(&mut self, t: NullTable) {
        self.insert_shared_table(Arc::new(t));
    }

    /// As [`Calibrator::insert_table`], for a table held elsewhere too (not copied).
    pub fn insert_shared_table(&mut self, t: Arc<NullTable>) {
        assert_eq!(t.sims(), self.opts.sims as usize, "table with this calibrator's sims");
        self.tables.insert(t.n, t);
    }

    /// Simulate every missing table for suppliers of sizes `ns` at once, over up to `threads`
    /// threads. The same tables as lazily one by one: each is seeded by its own n.
    pub fn prepare(&mut self, ns: &[u64], threads: usize) {
        let need = self.missing_tables(ns);
        for t in NullTable::simulate_many(&self.benford, &need, self.opts.sims, self.opts.seed, threads) {
            self.tables.insert(t.n, Arc::new(t));
        }
    }

    /// The tables and weight used at n: exact (n, n, 0) or neighbours (n0, n1, w in (0, 1)).
    fn bracket(n: u64) -> (u64, u64, f64) {
        if n < EXACT_BELOW {
            return (n, n, 0.0);
        }
        let g = grid_floor(n);
        let n0 = grid_n(g);
        if n0 == n {
            return (n, n, 0.0);
        }
        let n1 = grid_n(g + 1);
        let w = (libm::log(n as f64) - libm::log(n0 as f64)) / (libm::log(n1 as f64) - libm::log(n0 as f64));
        (n0, n1, w)
    }

    /// Calibrated p-value of statistic value t at sample size n.
    pub fn p_value(&mut self, s: Statistic, n: u64, t: f64) -> f64 {
        let (n0, n1, w) = Self::bracket(n);
        let scale = |m: u64| if s.scales_with_sqrt_n() { libm::sqrt(n as f64 / m as f64) } else { 1.0 };
        let p0 = { let t0 = t * scale(n0); self.table(n0).p_value(s, t0) };
        if n1 == n0 {
            return p0;
        }
        let p1 = { let t1 = t * scale(n1); self.table(n1).p_value(s, t1) };
        (1.0 - w) * p0 + w * p1
    }

    /// Calibrated critical value of statistic s at n for level alpha.
    pub fn critical(&mut self, s: Statistic, n: u64, alpha: f64) -> f64 {
        let (n0, n1, w) = Self::bracket(n);
        let scale = |m: u64| if s.scales_with_sqrt_n() { libm::sqrt(m as f64 / n as f64) } else { 1.0 };
        let c0 = self.table(n0).critical(s, alpha) * scale(n0);
        if n1 == n0 {
            return c0;
        }
        let c1 = self.table(n1).critical(s, alpha) * scale(n1);
        (1.0 - w) * c0 + w * c1
    }

    /// Critical MAD at `confidence` for each n (the overview chart's limit curves).
    pub fn limit_curve(&mut self, confidence: f64, ns: &[u64]) -> Vec<f64> {
        ns.iter()
            .map(|&n| if n == 0 { f64::INFINITY } else { self.critical(Statistic::Mad, n, 1.0 - confidence) })
            .collect()
    }

    /// Statistics and calibrated p-values of one count vector (no power work).
    pub fn null_only(&mut self, first_two_counts: &[u64]) -> NullCalibration {
        assert_eq!(first_two_counts.len(), BINS, "90 first-two digit counts");
        let n: u64 = first_two_counts.iter().sum();
        let stats = Moments::new(n, self.benford.probs()).stats(first_two_counts);
        if n == 0 {
            return NullCalibration {
                invoices: 0,
                stats,
                mc_p_value: 1.0,
                mad_critical: f64::INFINITY,
                chi2_mc_p_value: 1.0,
                ks_mc_p_value: 1.0,
                maxz_mc_p_value: 1.0,
            };
        }
        let alpha = self.alpha();
        NullCalibration {
            invoices: n,
            stats,
            mc_p_value: self.p_value(Statistic::Mad, n, stats.mad),
            mad_critical: self.critical(Statistic::Mad, n, alpha),
            chi2_mc_p_value: self.p_value(Statistic::ChiSquare, n, stats.chi_square),
            ks_mc_p_value: self.p_value(Statistic::Ks, n, stats.ks),
            maxz_mc_p_value: self.p_value(Statistic::MaxZ, n, stats.max_z),
        }
    }

    /// Power of the calibrated MAD test at exactly n against `model` (probabilities over the 90
    /// bins), from `power_sims` samples of the stream (seed, tag, n).
    pub fn power_at(&mut self, model: &[f64], n: u64, tag: u64) -> f64 {
        let sims = self.opts.power_sims.max(1);
        self.power_looks(model, n, tag, &[(sims, -1, sims as i64 + 1)]).0
    }

    /// Power curve of the calibrated MAD test against `model` at the checkpoints
    /// 10^(j/4) (j = 4, 5, ..., 16; then 10^(j/2), j = 9, 10, ...), by `power_sims` nested paths: path i is one growing honest-or-
    /// fabricated invoice stream from (seed, "power", i), its counts at each checkpoint an exact
    /// multinomial draw of that size. Stops at the first checkpoint whose power is
    /// >= max(target, 0.95) (detection is then all but certain at any larger size: the curve is
    /// not drawn further, whatever the supplier's own size), or at `max_invoices`.
    pub fn power_curve(&mut self, model: &[f64], target: f64) -> Vec<PowerPoint> {
        let cat = Categorical::new(model);
        let sims = self.opts.power_sims.max(1) as usize;
        let alpha = self.alpha();
        let mut paths = vec![[0u64; BINS]; sims];
        let mut rngs: Vec<DetRng> = (0..sims as u64).map(|i| DetRng::stream(self.opts.seed, &[TAG_POWER, i])).collect();
        let mut out = Vec::new();
        let mut prev = 0u64;
        for n in checkpoints(self.opts.max_invoices) {
            let crit = self.critical(Statistic::Mad, n, alpha);
            let mom = Moments::new(n, self.benford.probs());
            let mut hits = 0usize;
            for (c, rng) in paths.iter_mut().zip(rngs.iter_mut()) {
                cat.add(rng, n - prev, c);
                if mom.mad(c) > crit {
                    hits += 1;
                }
            }
            let power = hits as f64 / sims as f64;
            out.push(PowerPoint { invoices: n, power });
            prev = n;
            if power >= target.max(0.95) {
                break;
            }
        }
        out
    }

    /// First n reaching `target` on a power curve, interpolated linearly in log n between the
    /// checkpoints around the crossing; None when the curve never reaches it.
    pub fn invoices_needed(curve: &[PowerPoint], target: f64) -> Option<u64> {
        let j = curve.iter().position(|p| p.power >= target)?;
        if j == 0 {
            return Some(curve[0].invoices);
        }
        let (a, b) = (curve[j - 1], curve[j]);
        let (la, lb) = (libm::log(a.invoices as f64), libm::log(b.invoices as f64));
        let f = ((target - a.power) / (b.power - a.power)).clamp(0.0, 1.0);
        let n = libm::ceil(libm::exp(la + f * (lb - la))) as u64;
        Some(n.clamp(a.invoices + 1, b.invoices))
    }

    /// The deviation model's bin probabilities for one supplier.
    pub fn deviation_probs(&self, first_two_counts: &[u64], amount_min: Amount, amount_max: Amount) -> [f64; BINS] {
        match self.opts.deviation_model {
            DeviationModel::EvenSpread => even_spread(amount_min, amount_max, self.opts.fabricated_share),
            DeviationModel::ObservedProfile => {
                let n: u64 = first_two_counts.iter().sum();
                if n == 0 {
                    let p = benford::first_two();
                    std::array::from_fn(|i| p[i])
                } else {
                    std::array::from_fn(|i| first_two_counts[i] as f64 / n as f64)
                }
            }
        }
    }

    /// Full calibration of one supplier as a single test (no correction across a list).
    /// `n` is the supplier's invoice count and must equal the sum of `first_two_counts`.
    pub fn supplier(&mut self, n: u64, first_two_counts: &[u64], amount_min: Amount, amount_max: Amount) -> SupplierCalibration {
        let base = self.null_only(first_two_counts);
        assert_eq!(base.invoices, n, "n must equal the sum of the first-two counts");
        let alarm = base.mc_p_value <= self.alpha();
        let input = SupplierInput { first_two_counts: first_two_counts.to_vec(), amount_min, amount_max };
        self.finish(base, None, alarm, &input)
    }

    /// Calibrate a whole supplier list with the chosen correction across it (q = 1 - confidence).
    pub fn ledger(&mut self, inputs: &[SupplierInput]) -> LedgerCalibration {
        // All null tables first, over threads: those of the suppliers' own sizes and the power
        // checkpoints every curve passes (every checkpoint up to the first at or above the largest n).
        let ns: Vec<u64> = inputs.iter().map(SupplierInput::n).collect();
        let ns = self.ledger_sizes(&ns);
        self.prepare(&ns, self.threads);
        self.powers(inputs, self.threads);
        let bases: Vec<NullCalibration> = inputs.iter().map(|s| self.null_only(&s.first_two_counts)).collect();
        let ps: Vec<f64> = bases.iter().map(|b| b.mc_p_value).collect();
        let q = self.alpha();
        let adj = adjust(&ps, self.opts.correction, q);
        let mut suppliers = Vec::with_capacity(inputs.len());
        for ((inp, base), a) in inputs.iter().zip(bases).zip(&adj) {
            suppliers.push(self.finish(base, Some(a.adjusted_p), a.alarm, inp));
        }
        let alarm_indices: Vec<usize> = adj.iter().enumerate().filter(|(_, a)| a.alarm).map(|(i, _)| i).collect();
        LedgerCalibration { correction: self.opts.correction, q, alarms: alarm_indices.len(), alarm_indices, suppliers }
    }

    /// The null tables almost every screen reads whatever its suppliers: the power-curve
    /// checkpoints from 10 to 10,000 invoices (every curve starts at 10 and most reach 95 %
    /// detection by then), those not cached yet. Another thread or Worker can simulate them
    /// while the ledger is still being read.
    pub fn likely_tables(&self) -> Vec<u64> {
        let top = grid_n(COARSE_FROM_DECADE * GRID_PER_DECADE);
        let ns: Vec<u64> = checkpoints(self.opts.max_invoices.min(top)).collect();
        self.missing_tables(&ns)
    }

    /// Every cached table (e.g. to keep them for the next screen with the same seed and sims).
    pub fn take_tables(&mut self) -> Vec<NullTable> {
        let mut v: Vec<NullTable> = self.tables.drain().map(|(_, t)| Arc::try_unwrap(t).unwrap_or_else(|t| (*t).clone())).collect();
        v.sort_by_key(|t| t.n);
        v
    }

    /// The null-table sizes [`Calibrator::ledger`] needs for suppliers of sizes `ns` that are
    /// not cached yet (their own brackets and the power-curve checkpoints), ascending: what
    /// another Worker can simulate ahead and [`Calibrator::insert_table`] put in.
    pub fn ledger_missing(&self, ns: &[u64]) -> Vec<u64> {
        self.missing_tables(&self.ledger_sizes(ns))
    }

    /// The suppliers' sizes and the power checkpoints every curve passes (up to the
    /// first at or above the largest n).
    fn ledger_sizes(&self, ns: &[u64]) -> Vec<u64> {
        let mut ns = ns.to_vec();
        let nmax = ns.iter().copied().max().unwrap_or(0);
        if nmax > 0 {
            for n in checkpoints(self.opts.max_invoices) {
                ns.push(n);
                if n >= nmax {
                    break;
                }
            }
        }
        ns
    }

    fn finish(&mut self, base: NullCalibration, adjusted: Option<f64>, alarm: bool, input: &SupplierInput) -> SupplierCalibration {
        let n = base.invoices;
        let power::PowerResult { power_full, power_full_sims, curve } = self.power_of(input);
        let needed = Self::invoices_needed(&curve, self.opts.power);
        let verdict = if alarm {
            Verdict::Deviates
        } else if power_full < self.opts.power {
            Verdict::TooFew
        } else {
            Verdict::Consistent
        };
        SupplierCalibration {
            invoices: n,
            mad: base.stats.mad,
            mc_p_value: base.mc_p_value,
            mad_critical: base.mad_critical,
            chi2_mc_p_value: base.chi2_mc_p_value,
            ks_mc_p_value: base.ks_mc_p_value,
            maxz_mc_p_value: base.maxz_mc_p_value,
            adjusted_p_value: adjusted,
            verdict,
            power_full_fabrication: power_full,
            power_full_sims,
            invoices_needed: needed,
            more_invoices_needed: needed.map(|m| m.saturating_sub(n)),
            power_curve: curve,
            confidence: self.opts.confidence,
            seed: self.opts.seed,
            sims: self.opts.sims,
            deviation_model: self.opts.deviation_model,
            fabricated_share: self.opts.fabricated_share,
        }
    }
}

/// Even-spread mixture over the supplier's amount range (absolute values, in currency units).
/// A range that is empty or not positive falls back to a point mass at the larger amount's
/// digits, or to Benford when both are zero.
fn even_spread(amount_min: Amount, amount_max: Amount, share: f64) -> [f64; BINS] {
    match even_spread_uniform(amount_min, amount_max) {
        Some(u) => mix_with_benford(&u, share),
        None => {
            let p = benford::first_two();
            std::array::from_fn(|i| p[i])
        }
    }
}

/// The first-two digit law of amounts uniform over the supplier's range (absolute values, in
/// currency units); a range whose lower end is not positive is taken as the point at the upper
/// end. None when both ends are zero (the even-spread model then falls back to Benford).
fn even_spread_uniform(amount_min: Amount, amount_max: Amount) -> Option<[f64; BINS]> {
    let (a, b) = {
        let x = amount_min.abs().to_f64();
        let y = amount_max.abs().to_f64();
        (x.min(y), x.max(y))
    };
    if b <= 0.0 {
        return None;
    }
    let a = if a <= 0.0 { b } else { a };
    Some(uniform_first_two(a, b))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn uniform_hand_worked() {
        // Hand-worked from the definition: uniform on [10, 100) gives every first-two block
        // width 1 of 90 -> 1/90; on [50, 150]: 50..99 width 1 each (1/100), 10..14 width 10
        // each (1/10).
        let u = uniform_first_two(10.0, 100.0);
        assert!(u.iter().all(|&x| (x - 1.0 / 90.0).abs() < 1e-12));
        let u = uniform_first_two(50.0, 150.0);
        for d in 10..=99usize {
            let e = if d >= 50 { 0.01 } else if d < 15 { 0.1 } else { 0.0 };
            assert!((u[d - 10] - e).abs() < 1e-12, "d={d} {}", u[d - 10]);
        }
        let u = uniform_first_two(42.0, 42.0);
        assert_eq!(u[32], 1.0);
    }

    #[test]
    fn grid_brackets() {
        assert_eq!(grid_n(8), 10);
        assert_eq!(grid_n(24), 1000);
        assert_eq!(grid_n(32), 10_000);
        assert_eq!(grid_n(33), 31_623);
        assert_eq!(grid_n(34), 100_000);
        assert!((1..60).all(|g| grid_n(g) > grid_n(g - 1) || grid_n(g) < 10), "grid ascending");
        for n in [100u64, 101, 999, 1000, 1001, 9_999, 10_000, 10_001, 31_622, 31_623, 54_321, 99_999, 100_000, 5_000_000] {
            let g = grid_floor(n);
            assert!(grid_n(g) <= n && n < grid_n(g + 1), "{n}");
        }
        // power checkpoints: 10^(1/4) steps to 10,000, then 10^(1/2)
        let mut g = 8;
        let mut cps = vec![];
        while grid_n(g) <= 100_000 {
            cps.push(grid_n(g));
            g = next_checkpoint(g);
        }
        assert_eq!(cps, [10, 18, 32, 56, 100, 178, 316, 562, 1000, 1778, 3162, 5623, 10_000, 31_623, 100_000]);
    }

    #[test]
    fn count_stats_match_stats_module() {
        let p = benford::first_two();
        let mut rng = DetRng::seed_from_u64(5);
        let cat = Categorical::new(&p);
        let mut c = vec![0u64; 90];
        cat.add(&mut rng, 777, &mut c);
        let s = Moments::new(777, &p).stats(&c);
        assert!((s.mad - crate::stats::mad(&c, &p)).abs() < 1e-15);
        assert!((s.chi_square - crate::stats::chi_square(&c, &p)).abs() < 1e-9);
        assert!((s.ks - crate::stats::ks(&c, &p)).abs() < 1e-12);
        let mz = (0..90).map(|i| crate::stats::z_stat(c[i], 777, p[i])).fold(0.0, f64::max);
        assert!((s.max_z - mz).abs() < 1e-9);
    }

    #[test]
    fn sparse_statistics_match_the_stats_module() {
        // Below SPARSE_BELOW the statistics come from the occupied bins only; they must agree
        // with crate::stats (the dense textbook formulas) to rounding error.
        let p = benford::first_two();
        let cat = Categorical::new(&p);
        let mut rng = DetRng::seed_from_u64(17);
        for n in [1u64, 2, 5, 13, 30, 63, 99] {
            assert!(n < SPARSE_BELOW);
            let mom = Moments::new(n, &p);
            for _ in 0..300 {
                let mut c = vec![0u64; 90];
                cat.add(&mut rng, n, &mut c);
                let s = mom.stats(&c);
                let rel = |a: f64, b: f64| (a - b).abs() <= 1e-12 * a.abs().max(b.abs()).max(1e-300);
                assert!(rel(s.mad, crate::stats::mad(&c, &p)), "n={n} mad");
                assert!(rel(s.chi_square, crate::stats::chi_square(&c, &p)), "n={n} chi {} {}", s.chi_square, crate::stats::chi_square(&c, &p));
                assert!(rel(s.ks, crate::stats::ks(&c, &p)), "n={n} ks {} {}", s.ks, crate::stats::ks(&c, &p));
                let mz = (0..90).map(|i| crate::stats::z_stat(c[i], n, p[i])).fold(0.0, f64::max);
                assert!(rel(s.max_z, mz), "n={n} maxz {} {mz}", s.max_z);
            }
        }
    }

    #[test]
    fn radix_sort_matches_total_cmp_sort() {
        let mut rng = DetRng::seed_from_u64(11);
        let mut scratch = Vec::new();
        for n in [0usize, 1, 63, 64, 65, 1000, 10_000] {
            let mut v: Vec<f64> = (0..n)
                .map(|i| match i % 7 {
                    0 => -0.0,
                    1 => 0.0,
                    2 => -(rng.next_f64() * 1e6),
                    3 => f64::INFINITY,
                    4 => (rng.below(50) as f64) * 0.25, // ties
                    _ => rng.next_f64() * libm::pow(10.0, (rng.below(40) as f64) - 20.0),
                })
                .collect();
            let mut want = v.clone();
            want.sort_unstable_by(|a, b| a.total_cmp(b));
            sort_f64(&mut v, &mut scratch);
            assert_eq!(v.iter().map(|x| x.to_bits()).collect::<Vec<_>>(), want.iter().map(|x| x.to_bits()).collect::<Vec<_>>(), "n={n}");
        }
    }

    #[test]
    fn critical_and_p_value_agree() {
        let b = Categorical::new(&benford::first_two());
        let t = NullTable::simulate(&b, 200, 999, 3);
        let c = t.critical(Statistic::Mad, 0.05);
        assert!(t.p_value(Statistic::Mad, c) > 0.05);
        assert!(t.p_value(Statistic::Mad, c * (1.0 + 1e-9)) <= 0.05);
    }
}
