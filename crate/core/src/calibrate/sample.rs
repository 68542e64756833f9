//! Exact multinomial sampling over up to 128 categories, integer-only for small n.
//!
//! Two exact methods, chosen by n:
//! - **Guide table** (Chen & Asau, "On generating random variates from an empirical
//!   distribution", AIIE Transactions 6, 1974): the cumulative probabilities are held as u32
//!   thresholds (so each category probability is exact to 2^-32); each invoice takes 32 random
//!   bits, one look-up in a 16,384-entry table (16 KiB, held in L1 cache) and, for the ~0.5 % of
//!   entries that straddle a threshold (89 of 16,384 for Benford's 90 bins), a short walk. Two
//!   invoices per 64-bit draw. Cost O(n). The table size changes only speed: the category is
//!   always the one whose threshold interval holds the 32 bits, so counts are the same for any
//!   table size.
//! - **Binomial splitting** (the multinomial factorises into binomials: the invoices of a group
//!   of categories split between its two halves as Binomial(n_group, p_half / p_group), halved
//!   again down to single categories, k - 1 binomials in a balanced tree), each binomial drawn with
//!   inversion (np < 10) or BTRS (Hörmann, "The generation of binomial random variates",
//!   J. Statist. Comput. Simul. 46, 1993). Cost O(categories), independent of n.
//!
//! All floating point work uses `libm` (pure Rust) so the same seed gives the same counts on
//! every platform.

use super::Count;
use crate::rng::DetRng;

pub const MAX_BINS: usize = 128;
/// Guide-table size (bits): 16,384 one-byte entries, of which at most 127 (for Benford's 90
/// bins 89, about 0.5 %) straddle a threshold. Also for a distribution sampled only a few
/// hundred thousand times (a supplier's power curve): a 1,024-entry table, quicker to build,
/// made the power work at 2M rows 39 % slower by its walks (measured side by side on the
/// 2-core x86_64, 2026-12-05: 0.37 s vs 0.27 s for 500 suppliers).
pub const GUIDE_BITS: u32 = 14;

/// A guide table (a fixed size, so that look-ups need no bounds check).
type Guide = Box<[u8; 1 << GUIDE_BITS]>;
/// Guide entry flag: the entry straddles a threshold (walk from its first category).
const WALK: u8 = 0x80;

/// Above this n the binomial splitting tree is used (measured side by side on the 2-core
/// x86_64, 2026-12-04: guide 3.83 us vs tree 4.80 us at n = 5,000, 4.59 vs 4.63 at 6,000; the
/// tree costs about 3.2 us whatever n beyond).
pub const GUIDE_MAX_N: u64 = 6_000;

/// A categorical distribution prepared for fast multinomial sampling.
#[derive(Clone, Debug)]
pub struct Categorical {
    k: usize,
    probs: Vec<f64>,
    /// thr[i] = round(2^32 * (p_0 + ... + p_i)); thr[i] = 2^32 for i >= k-1 (padded to 128 so
    /// that every index a guide entry can produce is in bounds without a check).
    thr: Box<[u64; MAX_BINS]>,
    /// The category of the first 32-bit value of each bucket, WALK-flagged when the bucket
    /// straddles a threshold.
    guide: Guide,
    /// The binary splitting tree, breadth first: node j sends each of its invoices left with
    /// probability `split[j].left_p`.
    split: Vec<Split>,
}

/// One internal node of the splitting tree over categories [lo, hi): left is [lo, mid).
#[derive(Clone, Copy, Debug)]
struct Split {
    /// P(left | this node) = (p_lo + ... + p_{mid-1}) / (p_lo + ... + p_{hi-1}).
    left_p: f64,
    /// Where each side's invoices go: a node index, or LEAF | category.
    left: u16,
    right: u16,
}
const LEAF: u16 = 0x8000;

impl Categorical {
    /// From non-negative weights (normalised here). Panics on an empty, all-zero or
    /// over-long (> 128) input, or on a negative or non-finite weight.
    pub fn new(weights: &[f64]) -> Categorical {
        let bits = GUIDE_BITS;
        let k = weights.len();
        assert!(k >= 1 && k <= MAX_BINS, "1..=128 categories");
        assert!(weights.iter().all(|w| w.is_finite() && *w >= 0.0), "weights must be finite and >= 0");
        let total: f64 = weights.iter().sum();
        assert!(total > 0.0, "weights sum to zero");
        let probs: Vec<f64> = weights.iter().map(|w| w / total).collect();

        let mut thr = Box::new([1u64 << 32; MAX_BINS]);
        let mut cum = 0.0f64;
        let full = 4294967296.0f64; // 2^32
        let mut prev = 0u64;
        for (i, &p) in probs.iter().enumerate() {
            cum += p;
            let t = if i + 1 == k { 1u64 << 32 } else { libm::round(cum.min(1.0) * full) as u64 };
            let t = t.max(prev).min(1u64 << 32);
            thr[i] = t;
            prev = t;
        }
        // Zero-weight categories must never be drawn: their threshold interval is empty
        // (t == prev) by construction. A positive weight rounded to an empty interval has
        // probability < 2^-33, the documented quantisation.
        let mut table = vec![0u8; 1 << bits];
        let guide = &mut table;
        let width = 1u64 << (32 - bits);
        let mut j = 0usize;
        for (b, slot) in guide.iter_mut().enumerate() {
            let lo = b as u64 * width;
            let hi = lo + width; // exclusive
            while thr[j] <= lo {
                j += 1;
            }
            // Category j holds lo; the whole bucket is in j when thr[j] >= hi, else it is walked.
            *slot = if thr[j] >= hi { j as u8 } else { j as u8 | WALK };
        }

        // Splitting tree: halve [lo, hi) by category count (balanced depth, so the binomials of
        // one level do not wait on each other), breadth first.
        let mut split: Vec<Split> = Vec::new();
        let mut ranges: Vec<(usize, usize)> = Vec::new();
        if k > 1 {
            ranges.push((0, k));
        }
        let mut j = 0;
        while j < ranges.len() {
            let (lo, hi) = ranges[j];
            let mid = lo + (hi - lo) / 2;
            let mass = |a: usize, b: usize| probs[a..b].iter().sum::<f64>();
            let (ml, mt) = (mass(lo, mid), mass(lo, hi));
            let left_p = if mt > 0.0 { (ml / mt).clamp(0.0, 1.0) } else { 0.0 };
            let mut side = |a: usize, b: usize| -> u16 {
                if b - a == 1 {
                    LEAF | a as u16
                } else {
                    ranges.push((a, b));
                    (ranges.len() - 1) as u16
                }
            };
            let left = side(lo, mid);
            let right = side(mid, hi);
            split.push(Split { left_p, left, right });
            j += 1;
        }
        let guide: Guide = table.into_boxed_slice().try_into().expect("guide size");
        Categorical { k, probs, thr, guide, split }
    }

    pub fn len(&self) -> usize {
        self.k
    }
    pub fn is_empty(&self) -> bool {
        self.k == 0
    }
    pub fn probs(&self) -> &[f64] {
        &self.probs
    }

    /// The probability of category i as the guide table samples it (a multiple of 2^-32).
    pub fn quantised_prob(&self, i: usize) -> f64 {
        let lo = if i == 0 { 0 } else { self.thr[i - 1] };
        (self.thr[i] - lo) as f64 / 4294967296.0
    }

    /// Add a Multinomial(n, p) draw to `counts` (length >= k), by the faster exact method.
    #[inline]
    pub fn add<C: Count>(&self, rng: &mut DetRng, n: u64, counts: &mut [C]) {
        if n <= GUIDE_MAX_N {
            self.add_guided(rng, n, counts)
        } else {
            self.add_binomial(rng, n, counts)
        }
    }

    /// Guide-table method, one category look-up per invoice.
    pub fn add_guided<C: Count>(&self, rng: &mut DetRng, n: u64, counts: &mut [C]) {
        assert!(counts.len() >= self.k);
        // u32 local counters: split huge n into chunks that cannot overflow them
        let mut left = n;
        while left > 0 {
            let chunk = left.min(1u64 << 31);
            self.guided_chunk(rng, chunk, counts);
            left -= chunk;
        }
    }

    /// The category of the 32-bit uniform u (same answer as a plain search of `thr`).
    #[inline(always)]
    fn category<const N: usize>(guide: &[u8; N], thr: &[u64; MAX_BINS], u: u32) -> usize {
        // N = 2^bits: the bucket u >> (32 - bits) = (u as u64 * N) >> 32 is always < N
        let g = guide[((u as u64 * N as u64) >> 32) as usize];
        if g & WALK == 0 {
            return g as usize;
        }
        let mut j = (g & !WALK) as usize;
        while u as u64 >= thr[j & (MAX_BINS - 1)] {
            j += 1;
        }
        j
    }

    fn guided_chunk<C: Count>(&self, rng: &mut DetRng, n: u64, counts: &mut [C]) {
        self.guided_with(&self.guide, rng, n, counts)
    }

    #[inline(always)]
    fn guided_with<C: Count, const N: usize>(&self, guide: &[u8; N], rng: &mut DetRng, n: u64, counts: &mut [C]) {
        let thr: &[u64; MAX_BINS] = &self.thr;
        let counts = &mut counts[..self.k];
        if n < 64 {
            // few invoices: straight into the counts (clearing and summing local counters
            // would cost more than the draws)
            for _ in 0..n / 2 {
                let x = rng.next_u64();
                counts[Self::category(guide, thr, x as u32)].add_u64(1);
                counts[Self::category(guide, thr, (x >> 32) as u32)].add_u64(1);
            }
            if n % 2 == 1 {
                counts[Self::category(guide, thr, rng.next_u32())].add_u64(1);
            }
            return;
        }
        // Two counter arrays, one per half of each 64-bit draw, so that two invoices landing in
        // the same bin do not wait on each other's increment; summed at the end (same counts).
        let mut c0 = [0u32; MAX_BINS];
        let mut c1 = [0u32; MAX_BINS];
        for _ in 0..n / 2 {
            let x = rng.next_u64();
            c0[Self::category(guide, thr, x as u32) & (MAX_BINS - 1)] += 1;
            c1[Self::category(guide, thr, (x >> 32) as u32) & (MAX_BINS - 1)] += 1;
        }
        if n % 2 == 1 {
            c0[Self::category(guide, thr, rng.next_u32()) & (MAX_BINS - 1)] += 1;
        }
        for i in 0..self.k {
            counts[i].add_u64((c0[i] + c1[i]) as u64);
        }
    }

    /// Binomial splitting: the invoices of each tree node are split between its halves by one
    /// Binomial(n_node, P(left | node)) draw, from the root down (breadth first).
    pub fn add_binomial<C: Count>(&self, rng: &mut DetRng, n: u64, counts: &mut [C]) {
        assert!(counts.len() >= self.k);
        if self.split.is_empty() {
            counts[0].add_u64(n);
            return;
        }
        let mut node_n = [0u64; MAX_BINS];
        node_n[0] = n;
        for (j, sp) in self.split.iter().enumerate() {
            let m = node_n[j];
            let l = binomial(rng, m, sp.left_p);
            for (side, x) in [(sp.left, l), (sp.right, m - l)] {
                if side & LEAF != 0 {
                    counts[(side & !LEAF) as usize].add_u64(x);
                } else {
                    node_n[side as usize] = x;
                }
            }
        }
    }
}

/// One Binomial(n, p) variate: inversion when n·min(p, 1-p) < 10, BTRS otherwise.
pub fn binomial(rng: &mut DetRng, n: u64, p: f64) -> u64 {
    if n == 0 || p <= 0.0 {
        return 0;
    }
    if p >= 1.0 {
        return n;
    }
    let flip = p > 0.5;
    let r = if flip { 1.0 - p } else { p };
    let y = if (n as f64) * r < BTRS_MIN_NP { binomial_inversion(rng, n, r) } else { binomial_btrs(rng, n, r) };
    if flip {
        n - y
    } else {
        y
    }
}

/// BTRS is valid from n·p >= 10 (Hörmann 1993, section 3).
const BTRS_MIN_NP: f64 = 10.0;

/// Sequential-search inversion from 0 (BINV in Kachitvichyanukul & Schmeiser, "Binomial random
/// variate generation", CACM 31(2), 1988), r <= 0.5.
fn binomial_inversion(rng: &mut DetRng, n: u64, r: f64) -> u64 {
    let q = 1.0 - r;
    let nf = n as f64;
    let qn = libm::exp(nf * libm::log1p(-r));
    let ratio = r / q;
    let np = nf * r;
    let bound = (np + 10.0 * libm::sqrt(np * q + 1.0)).min(nf);
    'outer: loop {
        let mut x = 0u64;
        let mut px = qn;
        let mut u = rng.next_f64();
        while u > px {
            x += 1;
            if x as f64 > bound {
                continue 'outer;
            }
            u -= px;
            px *= ((n - x + 1) as f64) * ratio / (x as f64);
        }
        return x;
    }
}

/// floor(x), bit for bit as `libm::floor` (including -0.0), inlined: the sampler takes one
/// per try and a call into libm's software floor cost more than the rest of the try.
/// Exact because every non-integral f64 has |x| < 2^52, where the i64 conversion is exact.
#[inline(always)]
fn floor(x: f64) -> f64 {
    if !(libm::fabs(x) < 4503599627370496.0) {
        return libm::floor(x); // |x| >= 2^52 (already integral), inf or NaN
    }
    let t = x as i64 as f64;
    if t == x {
        x
    } else if t > x {
        t - 1.0
    } else {
        t
    }
}

/// log(k!) - [(k + 1/2) log(k + 1) - (k + 1) + log(2 pi)/2], the tail of Stirling's series
/// for log(k!), as used by Hörmann (1993) for BTRD/BTRS: exact values for k < 10 (from
/// lgamma), the series 1/12 - 1/360 + 1/1260 in 1/(k+1) beyond (absolute error < 1e-10).
#[inline]
fn stirling_tail(k: f64) -> f64 {
    const TAIL: [f64; 10] = [
        0.0810614667953272,
        0.0413406959554092,
        0.0276779256849983,
        0.02079067210376509,
        0.0166446911898211,
        0.0138761288230707,
        0.0118967099458917,
        0.0104112652619720,
        0.00925546218271273,
        0.00833056343336287,
    ];
    if k < 10.0 {
        return TAIL[k as usize];
    }
    let kp1 = k + 1.0;
    let r = 1.0 / kp1;
    let r2 = r * r;
    (1.0 / 12.0 - (1.0 / 360.0 - (1.0 / 1260.0) * r2) * r2) * r
}

/// BTRS, "transformed rejection with squeeze" (W. Hörmann, "The generation of binomial random
/// variates", J. Statist. Comput. Simul. 46, 1993, 101-110, algorithm BTRS), for r <= 0.5 and
/// n·r >= 10. Each try takes two uniforms; about 80 % of tries are accepted by the box test
/// alone. Otherwise the try is accepted iff log(v·alpha / (a/us² + b)) <= log f(k) - log f(m)
/// (f the binomial probability function, m = floor((n+1) r) its mode). The log-ratio is first
/// bracketed by BTPE's squeeze t ± rho (Kachitvichyanukul & Schmeiser 1988, step 5.2), which
/// settles most such tries with one logarithm; the rest evaluate it with Stirling's series as
/// in the paper (error below 1e-10; the terms in m once per variate).
fn binomial_btrs(rng: &mut DetRng, n: u64, r: f64) -> u64 {
    let nf = n as f64;
    let q = 1.0 - r;
    let npq = nf * r * q;
    // IEEE 754 square root is correctly rounded, so the hardware instruction (sqrtsd, wasm's
    // f64.sqrt) gives the same bits on every platform, and much faster than a software one
    let spq = npq.sqrt();
    let b = 1.15 + 2.53 * spq;
    let a = -0.0873 + 0.0248 * b + 0.01 * r;
    let c = nf * r + 0.5;
    let inv_b = 1.0 / b;
    let v_r = 0.92 - 4.2 * inv_b;
    let two_a = 2.0 * a;
    let alpha = (2.83 + 5.1 * inv_b) * spq;
    let m = floor((nf + 1.0) * r);
    let inv_npq = 1.0 / npq;
    let squeeze_below = npq / 2.0 - 1.0;
    // the terms of the exact log-ratio that do not depend on k, on the first try that needs them
    let mut slow: Option<(f64, f64)> = None;
    loop {
        let u = rng.next_open01() - 0.5;
        let v = rng.next_open01();
        let us = 0.5 - libm::fabs(u);
        let y = (two_a / us + b) * u + c;
        // floor(y) for y >= 0 is the truncation (saturating far above n); y < 0 is rejected
        if !(y >= 0.0) {
            continue;
        }
        let ki = y as u64;
        if ki > n {
            continue;
        }
        if us >= 0.07 && v <= v_r {
            return ki;
        }
        let k = ki as f64;
        let lhs = libm::log(v * alpha / (a / (us * us) + b));
        let d = libm::fabs(k - m);
        if d < squeeze_below {
            // |log f(k)/f(m) - t| <= rho (BTPE's squeeze, step 5.2)
            let rho = (d * inv_npq) * ((d * (d / 3.0 + 0.625) + 0.1666666666666) * inv_npq + 0.5);
            let t = -d * d * 0.5 * inv_npq;
            if lhs < t - rho {
                return ki;
            }
            if lhs > t + rho {
                continue;
            }
        }
        let (lr, cm) = *slow.get_or_insert_with(|| {
            let lr = libm::log(r / q);
            // (m + 1/2) log((m + 1) q / (r (n - m + 1))) + fc(m) + fc(n - m) + (n + 1) log(n - m + 1)
            let cm = (m + 0.5) * libm::log(q * (m + 1.0) / (r * (nf - m + 1.0)))
                + stirling_tail(m)
                + stirling_tail(nf - m)
                + (nf + 1.0) * libm::log(nf - m + 1.0);
            (lr, cm)
        });
        // log f(k)/f(m) = cm - (n + 1) log(n - k + 1) + (k + 1/2) log(r/q (n - k + 1) / (k + 1))
        //                 - fc(k) - fc(n - k)
        let nk1 = nf - k + 1.0;
        let rhs = cm - (nf + 1.0) * libm::log(nk1) + (k + 0.5) * (lr + libm::log(nk1 / (k + 1.0)))
            - stirling_tail(k)
            - stirling_tail(nf - k);
        if lhs <= rhs {
            return ki;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn guide_table_quantisation_is_within_2_pow_32() {
        let p = crate::benford::first_two();
        let c = Categorical::new(&p);
        for (i, &pi) in p.iter().enumerate() {
            assert!((c.quantised_prob(i) - pi).abs() <= 1.0 / 4294967296.0, "bin {i}");
        }
    }

    #[test]
    fn counts_sum_to_n_both_methods() {
        let p = crate::benford::first_two();
        let c = Categorical::new(&p);
        let mut rng = DetRng::seed_from_u64(3);
        for n in [0u64, 1, 2, 3, 999, 1000, 2501, 40_000, 1_000_000] {
            let mut a = vec![0u64; 90];
            c.add_guided(&mut rng, n.min(50_000), &mut a);
            assert_eq!(a.iter().sum::<u64>(), n.min(50_000));
            let mut b = vec![0u64; 90];
            c.add_binomial(&mut rng, n, &mut b);
            assert_eq!(b.iter().sum::<u64>(), n);
        }
    }

    #[test]
    fn zero_weight_bins_never_drawn() {
        let mut w = vec![0.0; 90];
        w[5] = 1.0;
        w[80] = 3.0;
        let c = Categorical::new(&w);
        let mut rng = DetRng::seed_from_u64(9);
        let mut a = vec![0u64; 90];
        c.add_guided(&mut rng, 10_000, &mut a);
        c.add_binomial(&mut rng, 10_000, &mut a);
        assert_eq!(a[5] + a[80], 20_000);
    }
}
