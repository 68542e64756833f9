//! Power of the calibrated MAD test against deviation models, by simulation.
//!
//! - **Power against wholly fabricated amounts** (the `too_few` verdict) at the supplier's own n,
//!   decided sequentially: honest-or-not samples are drawn in blocks of [`SEQ_BLOCK`] and the
//!   simulation stops as soon as the hits so far leave no doubt on which side of the target
//!   power the true power lies — an exact binomial tail of at most [`SEQ_DELTA`] at the target
//!   (a curtailed Monte Carlo decision in the spirit of Besag & Clifford, "Sequential Monte Carlo
//!   p-values", Biometrika 78, 1991 — from memory) — or at `power_sims` samples. The estimate
//!   hits / samples is reported with the number of samples it rests on.
//! - **Power curves** under the even-spread model (1 − s)·Benford + s·Uniform[a, b] are built
//!   from one shared set of honest paths: every invoice of a path is fabricated with
//!   probability s, independently, so at each checkpoint m a path holds F ~ Bin(m, s) fabricated
//!   invoices and m − F honest ones, the honest counts ~ Multinomial(m − F, Benford), both nested
//!   along the path. Neither depends on the supplier, so they are simulated once per calibrator
//!   ([`HonestPaths`]); each supplier then only draws its F fabricated invoices from its own
//!   Uniform[a, b] digit law. The counts at every checkpoint are an exact draw from the
//!   mixture, as before; suppliers share common random numbers for the honest part.

use super::*;

const TAG_HONEST: u64 = 0x686f_6e73; // "hons"

/// The bins rounded up to a whole number of lanes.
const PADDED: usize = BINS.div_ceil(LANES) * LANES;

/// MAD of honest-minus-expected `hd` plus fabricated counts `f` (both PADDED long, zero in the
/// padding) at size n: sum |hd_i + f_i| / (n · BINS), in lanes.
#[inline]
fn mad_hd(hd: &[f64], f: &[u32; PADDED], n: u64) -> f64 {
    let mut lane = [0.0f64; LANES];
    for (h, c) in hd[..PADDED].chunks_exact(LANES).zip(f.chunks_exact(LANES)) {
        for l in 0..LANES {
            lane[l] += libm::fabs(h[l] + c[l] as f64);
        }
    }
    ((lane[0] + lane[1]) + (lane[2] + lane[3])) / (n as f64 * BINS as f64)
}

/// Samples per block of the sequential power decision.
pub const SEQ_BLOCK: u32 = 20;
/// Largest exact binomial tail, at the target power, on which the sequential decision stops.
pub const SEQ_DELTA: f64 = 0.001;

/// Honest parts of the power paths under the even-spread mixture, checkpoint by checkpoint.
#[derive(Clone)]
pub(super) struct HonestPaths {
    share: f64,
    sims: usize,
    /// Sizes of the checkpoints simulated so far.
    sizes: Vec<u64>,
    /// Per checkpoint: fabricated invoices F of every path.
    fab: Vec<Vec<u32>>,
    /// Per checkpoint: every path's honest counts minus the Benford expectation at the
    /// checkpoint's size, h_i - m·p_i, `sims` rows of PADDED (zero in the padding).
    honest: Vec<Vec<f64>>,
    rngs: Vec<DetRng>,
    cur_f: Vec<u64>,
    cur_h: Vec<[u32; BINS]>,
}

impl HonestPaths {
    pub(super) fn new(seed: u64, sims: usize, share: f64) -> HonestPaths {
        HonestPaths {
            share: share.clamp(0.0, 1.0),
            sims,
            sizes: Vec::new(),
            fab: Vec::new(),
            honest: Vec::new(),
            rngs: (0..sims as u64).map(|i| DetRng::stream(seed, &[TAG_HONEST, i])).collect(),
            cur_f: vec![0; sims],
            cur_h: vec![[0u32; BINS]; sims],
        }
    }

    /// Simulate up to checkpoint number j (0: n = 10).
    fn extend_to(&mut self, j: usize, benford: &Categorical) {
        while self.sizes.len() <= j {
            let size = checkpoints(u64::MAX).nth(self.sizes.len()).expect("checkpoints go on");
            let dm = size - self.sizes.last().copied().unwrap_or(0);
            let m = size as f64;
            let e: Vec<f64> = benford.probs().iter().map(|&p| m * p).collect();
            let mut fab = Vec::with_capacity(self.sims);
            let mut honest = Vec::with_capacity(self.sims * PADDED);
            for i in 0..self.sims {
                let rng = &mut self.rngs[i];
                let df = sample::binomial(rng, dm, self.share);
                self.cur_f[i] += df;
                benford.add(rng, dm - df, &mut self.cur_h[i]);
                fab.push(self.cur_f[i] as u32);
                honest.extend(self.cur_h[i].iter().zip(&e).map(|(&h, &x)| h as f64 - x));
                honest.resize(honest.len() + (PADDED - BINS), 0.0);
            }
            self.sizes.push(size);
            self.fab.push(fab);
            self.honest.push(honest);
        }
    }
}

/// For each look k = SEQ_BLOCK, 2·SEQ_BLOCK, ... (and `sims` itself): (k, lo, hi) such that
/// h hits <= lo means P(X <= h) <= SEQ_DELTA and h >= hi means P(X >= h) <= SEQ_DELTA for
/// X ~ Bin(k, target) (lo = -1 / hi = k + 1 when no such h). Exact sums of binomial
/// probabilities from libm's lgamma, so every platform decides alike.
pub fn sequential_bounds(target: f64, sims: u32) -> Vec<(u32, i64, i64)> {
    let t = target.clamp(1e-12, 1.0 - 1e-12);
    let mut looks: Vec<u32> = (1..).map(|b| b * SEQ_BLOCK).take_while(|&k| k < sims).collect();
    looks.push(sims.max(1));
    looks
        .into_iter()
        .map(|k| {
            let kf = k as f64;
            let pmf: Vec<f64> = (0..=k)
                .map(|h| {
                    let h = h as f64;
                    libm::exp(libm::lgamma(kf + 1.0) - libm::lgamma(h + 1.0) - libm::lgamma(kf - h + 1.0) + h * libm::log(t) + (kf - h) * libm::log1p(-t))
                })
                .collect();
            let mut lo = -1i64;
            let mut acc = 0.0;
            for (h, p) in pmf.iter().enumerate() {
                acc += p;
                if acc <= SEQ_DELTA {
                    lo = h as i64;
                } else {
                    break;
                }
            }
            let mut hi = k as i64 + 1;
            let mut acc = 0.0;
            for (h, p) in pmf.iter().enumerate().rev() {
                acc += p;
                if acc <= SEQ_DELTA {
                    hi = h as i64;
                } else {
                    break;
                }
            }
            (k, lo, hi)
        })
        .collect()
}

impl Calibrator {
    /// Power of the calibrated MAD test at exactly n against `model`, decided sequentially
    /// against `target` (see the module text): (hits / samples, samples), samples from the
    /// stream (seed, tag, n), at most `power_sims`.
    pub fn power_sequential(&mut self, model: &[f64], n: u64, tag: u64, target: f64) -> (f64, u32) {
        let sims = self.opts.power_sims.max(1);
        if self.seq_bounds.as_ref().map(|b| b.0) != Some(target.to_bits()) {
            self.seq_bounds = Some((target.to_bits(), sequential_bounds(target, sims)));
        }
        let bounds = self.seq_bounds.as_ref().expect("bounds").1.clone(); // about 20 looks
        self.power_looks(model, n, tag, &bounds)
    }

    /// Samples of size n from `model`, from the stream (seed, tag, n), tested with the
    /// calibrated MAD; at each look (k, lo, hi) after k samples, stop when the hits are <= lo or
    /// >= hi. Returns (hits / samples, samples).
    pub(super) fn power_looks(&mut self, model: &[f64], n: u64, tag: u64, looks: &[(u32, i64, i64)]) -> (f64, u32) {
        if n == 0 {
            return (0.0, 0);
        }
        let crit = self.critical(Statistic::Mad, n, self.alpha());
        let cat = Categorical::new(model);
        let mom = Moments::new(n, self.benford.probs());
        let mut rng = DetRng::stream(self.opts.seed, &[tag, n]);
        let mut hits = 0i64;
        let mut done = 0u32;
        let mut c = [0u64; BINS]; // a supplier's n may exceed u32 counts
        for &(k, lo, hi) in looks {
            while done < k {
                c.iter_mut().for_each(|x| *x = 0);
                cat.add(&mut rng, n, &mut c);
                if mom.mad(&c) > crit {
                    hits += 1;
                }
                done += 1;
            }
            if hits <= lo || hits >= hi {
                break;
            }
        }
        (hits as f64 / done as f64, done)
    }

    /// Power curve under the even-spread mixture (1 − share)·Benford + share·`uniform`, from the
    /// shared honest paths (see the module text); same checkpoints and stopping rule as
    /// [`Calibrator::power_curve`].
    pub fn power_curve_mixture(&mut self, uniform: &[f64], target: f64) -> Vec<PowerPoint> {
        let sims = self.opts.power_sims.max(1) as usize;
        self.ensure_honest();
        let cat = Categorical::new(uniform);
        let alpha = self.alpha();
        let mut fab = vec![[0u32; PADDED]; sims]; // counts <= max_invoices
        let mut rngs: Vec<DetRng> = (0..sims as u64).map(|i| DetRng::stream(self.opts.seed, &[TAG_POWER, i])).collect();
        let mut out = Vec::new();
        for (j, n) in checkpoints(self.opts.max_invoices).enumerate() {
            let crit = self.critical(Statistic::Mad, n, alpha);
            let hp = self.honest.as_mut().expect("honest paths");
            hp.extend_to(j, &self.benford);
            let (fj, hj) = (&hp.fab[j], &hp.honest[j]);
            let mut hits = 0usize;
            for (i, (c, rng)) in fab.iter_mut().zip(rngs.iter_mut()).enumerate() {
                let before = if j == 0 { 0 } else { hp.fab[j - 1][i] };
                cat.add(rng, (fj[i] - before) as u64, c);
                if mad_hd(&hj[i * PADDED..(i + 1) * PADDED], c, n) > crit {
                    hits += 1;
                }
            }
            let power = hits as f64 / sims as f64;
            out.push(PowerPoint { invoices: n, power });
            if power >= target.max(0.95) {
                break;
            }
        }
        out
    }
}

/// The power work of one supplier: what [`Calibrator::finish`] reads besides the null tables.
#[derive(Clone, Debug, PartialEq)]
pub struct PowerResult {
    pub power_full: f64,
    pub power_full_sims: u32,
    pub curve: Vec<PowerPoint>,
}

impl PowerResult {
    /// Append to a flat f64 list: power_full, power_full_sims, curve length, then (invoices,
    /// power) per point. Every value is exact in f64 (invoice counts are far below 2^53).
    pub fn push_flat(&self, out: &mut Vec<f64>) {
        out.extend_from_slice(&[self.power_full, self.power_full_sims as f64, self.curve.len() as f64]);
        for p in &self.curve {
            out.extend_from_slice(&[p.invoices as f64, p.power]);
        }
    }

    /// Read one result written by [`PowerResult::push_flat`] at `*at`, advancing it.
    pub fn read_flat(flat: &[f64], at: &mut usize) -> Option<PowerResult> {
        let head = flat.get(*at..*at + 3)?;
        let len = head[2] as usize;
        let pts = flat.get(*at + 3..*at + 3 + 2 * len)?;
        let r = PowerResult {
            power_full: head[0],
            power_full_sims: head[1] as u32,
            curve: pts.chunks_exact(2).map(|p| PowerPoint { invoices: p[0] as u64, power: p[1] }).collect(),
        };
        *at += 3 + 2 * len;
        Some(r)
    }
}

/// What a supplier's power work depends on besides the calibrator's options: its size, its
/// amount range and (for the observed-profile model only) its counts.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct PowerKey {
    n: u64,
    amount_min: i64,
    amount_max: i64,
    profile: u64,
}

impl Calibrator {
    pub fn power_key(&self, input: &SupplierInput) -> PowerKey {
        let profile = match self.opts.deviation_model {
            DeviationModel::EvenSpread => 0,
            DeviationModel::ObservedProfile => input.first_two_counts.iter().fold(0u64, |h, &c| crate::rng::mix64(h ^ c)),
        };
        PowerKey {
            n: input.n(),
            amount_min: input.amount_min.0,
            amount_max: input.amount_max.0,
            profile,
        }
    }

    /// The power work of one supplier (cached by [`PowerKey`]; computed here when missing).
    pub fn power_of(&mut self, input: &SupplierInput) -> PowerResult {
        let key = self.power_key(input);
        if let Some(r) = self.powers.get(&key) {
            return r.clone();
        }
        let n = key.n;
        let (amin, amax) = (input.amount_min, input.amount_max);
        let full = even_spread(amin, amax, 1.0);
        let (power_full, power_full_sims) = self.power_sequential(&full, n, TAG_FULL, self.opts.power);
        // the curve depends on the model only (not on n): suppliers with the same amount range
        // (and, for the observed profile, the same counts) share it
        let ckey = (key.amount_min, key.amount_max, key.profile);
        let curve = match self.curves.get(&ckey) {
            Some(c) => c.clone(),
            None => {
                let c = match (self.opts.deviation_model, even_spread_uniform(amin, amax)) {
                    (DeviationModel::EvenSpread, Some(u)) => self.power_curve_mixture(&u, self.opts.power),
                    _ => {
                        let model = self.deviation_probs(&input.first_two_counts, amin, amax);
                        self.power_curve(&model, self.opts.power)
                    }
                };
                self.curves.insert(ckey, c.clone());
                c
            }
        };
        let r = PowerResult { power_full, power_full_sims, curve };
        self.powers.insert(key, r.clone());
        r
    }

    /// Put a supplier's power work done elsewhere (another Worker, with the same options and
    /// tables) in the cache.
    pub fn insert_power(&mut self, input: &SupplierInput, r: PowerResult) {
        let key = self.power_key(input);
        self.powers.insert(key, r);
    }

    /// The power work of every input (in order), split over up to `threads` threads natively
    /// (each on a copy of this calibrator: every result depends only on the options, the null
    /// tables and the supplier, so any split gives the same numbers), cached here.
    pub fn powers(&mut self, inputs: &[SupplierInput], threads: usize) -> Vec<PowerResult> {
        let threads = if cfg!(target_arch = "wasm32") { 1 } else { threads.max(1) };
        let todo: Vec<usize> = (0..inputs.len()).filter(|&i| !self.powers.contains_key(&self.power_key(&inputs[i]))).collect();
        if threads > 1 && todo.len() >= 2 * threads {
            // shares by size (the costliest first, dealt in turn) so that they take about as long
            let order = costliest_first(inputs, todo.clone());
            let shares: Vec<Vec<usize>> = (0..threads).map(|t| order.iter().copied().skip(t).step_by(threads).collect()).collect();
            // the shared honest paths are simulated once, before the copies
            if self.opts.deviation_model == DeviationModel::EvenSpread {
                self.ensure_honest();
            }
            let done: Vec<Vec<(usize, PowerResult)>> = std::thread::scope(|sc| {
                let hs: Vec<_> = shares[1..]
                    .iter()
                    .map(|share| {
                        let mut c = self.clone_for_power();
                        sc.spawn(move || share.iter().map(|&i| (i, c.power_of(&inputs[i]))).collect::<Vec<_>>())
                    })
                    .collect();
                let mut out = vec![shares[0].iter().map(|&i| (i, self.power_of(&inputs[i]))).collect::<Vec<_>>()];
                out.extend(hs.into_iter().map(|h| h.join().expect("power thread")));
                out
            });
            for (i, r) in done.into_iter().flatten() {
                self.insert_power(&inputs[i], r);
            }
        }
        inputs.iter().map(|inp| self.power_of(inp)).collect()
    }

    /// Power work shared between threads: each takes the next supplier of `order` (indices
    /// into `inputs`, e.g. the costliest first) from `next` until none is left, and returns
    /// what it did as (index, result); the results are also cached here. Every result depends
    /// only on the options, the null tables and the supplier, so any sharing gives the same
    /// numbers.
    pub fn powers_shared(&mut self, inputs: &[SupplierInput], order: &[usize], next: &std::sync::atomic::AtomicUsize) -> Vec<(usize, PowerResult)> {
        let mut done = Vec::new();
        loop {
            let k = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
            let Some(&i) = order.get(k) else { break };
            done.push((i, self.power_of(&inputs[i])));
        }
        done
    }

    /// A calibrator for another thread's share of the power work ([`Calibrator::powers_shared`]):
    /// the options, the null tables and the honest paths of this one.
    pub fn for_power_thread(&mut self) -> Calibrator {
        if self.opts.deviation_model == DeviationModel::EvenSpread {
            self.ensure_honest();
        }
        self.clone_for_power()
    }

    /// The honest paths for this calibrator's options, created if missing (not extended).
    pub(super) fn ensure_honest(&mut self) -> &mut HonestPaths {
        let sims = self.opts.power_sims.max(1) as usize;
        let share = self.opts.fabricated_share.clamp(0.0, 1.0);
        if self.honest.as_ref().is_none_or(|h| h.sims != sims || h.share != share) {
            self.honest = Some(HonestPaths::new(self.opts.seed, sims, share));
        }
        self.honest.as_mut().expect("honest paths")
    }

    /// A copy for a power thread: options, tables and honest paths (the power cache and the
    /// sequential bounds are rebuilt as needed).
    fn clone_for_power(&self) -> Calibrator {
        Calibrator {
            opts: self.opts.clone(),
            benford: self.benford.clone(),
            tables: self.tables.clone(),
            threads: 1,
            honest: self.honest.clone(),
            seq_bounds: self.seq_bounds.clone(),
            powers: HashMap::new(),
            curves: HashMap::new(),
        }
    }
}
