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
//! - **Conditional binomials** (the multinomial factorises into a chain of binomials,
//!   count_i ~ Bin(n - sum_{j<i} count_j, p_i / sum_{j>=i} p_j)), each binomial drawn with
//!   inversion (np < 30) or BTPE (Kachitvichyanukul & Schmeiser, "Binomial random variate
//!   generation", CACM 31(2), 1988). Cost O(categories), independent of n.
//!
//! All floating point work uses `libm` (pure Rust) so the same seed gives the same counts on
//! every platform.

use crate::rng::DetRng;

pub const MAX_BINS: usize = 128;
const GUIDE_BITS: u32 = 14;
const GUIDE: usize = 1 << GUIDE_BITS;
/// Guide entry flag: the entry straddles a threshold (walk from its first category).
const WALK: u8 = 0x80;

/// Above this n the binomial chain is used (measured with `benches/calibrate.rs` on a loaded
/// 2-core x86_64: guide 7.7 us vs chain 21.6 us at n = 2,500; 25.7 vs 15.7 us at n = 10,000).
pub const GUIDE_MAX_N: u64 = 6_000;

/// A categorical distribution prepared for fast multinomial sampling.
#[derive(Clone, Debug)]
pub struct Categorical {
    k: usize,
    probs: Vec<f64>,
    /// thr[i] = round(2^32 * (p_0 + ... + p_i)); thr[i] = 2^32 for i >= k-1 (padded to 128 so
    /// that every index a guide entry can produce is in bounds without a check).
    thr: Box<[u64; MAX_BINS]>,
    guide: Box<[u8; GUIDE]>,
    /// cond[i] = p_i / (p_i + ... + p_{k-1}), for the binomial chain.
    cond: Vec<f64>,
}

impl Categorical {
    /// From non-negative weights (normalised here). Panics on an empty, all-zero or
    /// over-long (> 128) input, or on a negative or non-finite weight.
    pub fn new(weights: &[f64]) -> Categorical {
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
        let mut guide = Box::new([0u8; GUIDE]);
        let width = 1u64 << (32 - GUIDE_BITS);
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

        let mut tail = vec![0.0f64; k + 1];
        for i in (0..k).rev() {
            tail[i] = tail[i + 1] + probs[i];
        }
        let cond = (0..k)
            .map(|i| {
                if i + 1 == k {
                    1.0
                } else if tail[i] > 0.0 {
                    (probs[i] / tail[i]).clamp(0.0, 1.0)
                } else {
                    0.0
                }
            })
            .collect();
        Categorical { k, probs, thr, guide, cond }
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
    pub fn add(&self, rng: &mut DetRng, n: u64, counts: &mut [u64]) {
        if n <= GUIDE_MAX_N {
            self.add_guided(rng, n, counts)
        } else {
            self.add_binomial(rng, n, counts)
        }
    }

    /// Guide-table method, one category look-up per invoice.
    pub fn add_guided(&self, rng: &mut DetRng, n: u64, counts: &mut [u64]) {
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
    fn category(guide: &[u8; GUIDE], thr: &[u64; MAX_BINS], u: u32) -> usize {
        let g = guide[(u >> (32 - GUIDE_BITS)) as usize];
        if g & WALK == 0 {
            return g as usize;
        }
        let mut j = (g & !WALK) as usize;
        while u as u64 >= thr[j & (MAX_BINS - 1)] {
            j += 1;
        }
        j
    }

    fn guided_chunk(&self, rng: &mut DetRng, n: u64, counts: &mut [u64]) {
        // Two counter arrays, one per half of each 64-bit draw, so that two invoices landing in
        // the same bin do not wait on each other's increment; summed at the end (same counts).
        let mut c0 = [0u32; MAX_BINS];
        let mut c1 = [0u32; MAX_BINS];
        let guide: &[u8; GUIDE] = &self.guide;
        let thr: &[u64; MAX_BINS] = &self.thr;
        for _ in 0..n / 2 {
            let x = rng.next_u64();
            c0[Self::category(guide, thr, x as u32) & (MAX_BINS - 1)] += 1;
            c1[Self::category(guide, thr, (x >> 32) as u32) & (MAX_BINS - 1)] += 1;
        }
        if n % 2 == 1 {
            c0[Self::category(guide, thr, rng.next_u32()) & (MAX_BINS - 1)] += 1;
        }
        for i in 0..self.k {
            counts[i] += (c0[i] + c1[i]) as u64;
        }
    }

    /// Conditional-binomial method.
    pub fn add_binomial(&self, rng: &mut DetRng, n: u64, counts: &mut [u64]) {
        assert!(counts.len() >= self.k);
        let mut rem = n;
        for i in 0..self.k - 1 {
            if rem == 0 {
                return;
            }
            let x = binomial(rng, rem, self.cond[i]);
            counts[i] += x;
            rem -= x;
        }
        counts[self.k - 1] += rem;
    }
}

/// One Binomial(n, p) variate: inversion when n·min(p, 1-p) < 30, BTPE otherwise.
pub fn binomial(rng: &mut DetRng, n: u64, p: f64) -> u64 {
    if n == 0 || p <= 0.0 {
        return 0;
    }
    if p >= 1.0 {
        return n;
    }
    let flip = p > 0.5;
    let r = if flip { 1.0 - p } else { p };
    let y = if (n as f64) * r < 30.0 { binomial_inversion(rng, n, r) } else { binomial_btpe(rng, n, r) };
    if flip {
        n - y
    } else {
        y
    }
}

/// Sequential-search inversion from 0 (BINV in Kachitvichyanukul & Schmeiser 1988), r <= 0.5.
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

/// floor(x), bit for bit as `libm::floor` (including -0.0), inlined: BTPE takes several per
/// variate and a call into libm's software floor cost more than the rest of its setup.
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

/// log(k!) via libm's lgamma (pure Rust).
#[inline]
fn log_fact(k: f64) -> f64 {
    libm::lgamma(k + 1.0)
}

/// BTPE (Kachitvichyanukul & Schmeiser 1988, algorithm BTPE, steps 0-5.3), r <= 0.5 and
/// n·r >= 30. The final acceptance test compares with the exact log-ratio f(y)/f(M) computed
/// from lgamma instead of the paper's Stirling-series expansion (same test, exact).
fn binomial_btpe(rng: &mut DetRng, n: u64, r: f64) -> u64 {
    let nf = n as f64;
    let q = 1.0 - r;
    let nrq = nf * r * q;
    let fm = nf * r + r;
    let m = floor(fm);
    let p1 = floor(2.195 * libm::sqrt(nrq) - 4.6 * q) + 0.5;
    let xm = m + 0.5;
    let xl = xm - p1;
    let xr = xm + p1;
    let c = 0.134 + 20.5 / (15.3 + m);
    let a = (fm - xl) / (fm - xl * r);
    let lam_l = a * (1.0 + 0.5 * a);
    let a = (xr - fm) / (xr * q);
    let lam_r = a * (1.0 + 0.5 * a);
    let p2 = p1 * (1.0 + 2.0 * c);
    let p3 = p2 + c / lam_l;
    let p4 = p3 + c / lam_r;
    let s = r / q;
    let mi = m as u64;
    loop {
        // Step 1
        let u = rng.next_f64() * p4;
        let mut v = rng.next_open01();
        let y: f64;
        if u <= p1 {
            // triangular region: always accepted
            return floor(xm - p1 * v + u) as u64;
        } else if u <= p2 {
            // Step 2: parallelograms
            let x = xl + (u - p1) / c;
            v = v * c + 1.0 - libm::fabs(m - x + 0.5) / p1;
            if v > 1.0 {
                continue;
            }
            y = floor(x);
        } else if u <= p3 {
            // Step 3: left exponential tail
            y = floor(xl + libm::log(v) / lam_l);
            if y < 0.0 {
                continue;
            }
            v *= (u - p2) * lam_l;
        } else {
            // Step 4: right exponential tail
            y = floor(xr - libm::log(v) / lam_r);
            if y > nf {
                continue;
            }
            v *= (u - p3) * lam_r;
        }
        // Step 5: acceptance / rejection of y with v ~ U(0, hat(y)/hat(M))
        let k = libm::fabs(y - m);
        if k <= 20.0 || k >= nrq / 2.0 - 1.0 {
            // Step 5.1: explicit evaluation of f(y)/f(M) by the recurrence
            let yi = y as u64;
            let a = s * (nf + 1.0);
            let mut f = 1.0f64;
            if mi < yi {
                for i in (mi + 1)..=yi {
                    f *= a / i as i64 as f64 - s;
                }
            } else if mi > yi {
                for i in (yi + 1)..=mi {
                    f /= a / i as i64 as f64 - s;
                }
            }
            if v <= f {
                return yi;
            }
            continue;
        }
        // Step 5.2: squeeze on log f(y)/f(M)
        let rho = (k / nrq) * ((k * (k / 3.0 + 0.625) + 0.1666666666666) / nrq + 0.5);
        let t = -k * k / (2.0 * nrq);
        let av = libm::log(v);
        if av < t - rho {
            return y as u64;
        }
        if av > t + rho {
            continue;
        }
        // Step 5.3: exact log f(y) - log f(M)
        let lf = log_fact(m) + log_fact(nf - m) - log_fact(y) - log_fact(nf - y) + (y - m) * libm::log(s);
        if av <= lf {
            return y as u64;
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
