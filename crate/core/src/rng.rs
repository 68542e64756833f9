//! Seedable random numbers that are identical on every platform (native and wasm32).
//!
//! The generator is xoshiro256++ (Blackman & Vigna, "Scrambled linear pseudorandom number
//! generators", ACM TOMS 47(4), 2021) seeded through SplitMix64 from a `u64`, as provided by the
//! `rand_xoshiro` crate. Everything here is integer arithmetic or IEEE-exact float operations
//! (int -> float conversion, multiplication by a power of two), so a seed gives the same numbers
//! on every target. Functions that need `log`/`exp` use the pure-Rust `libm` crate, never the
//! platform's maths library.
//!
//! Streams: [`DetRng::stream`] derives an independent generator from a seed and a list of words
//! (e.g. a purpose tag and a sample size), so that a result depends only on (seed, purpose, n)
//! and not on the order in which results are asked for.

use rand_core::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

/// The SplitMix64 output function (Steele, Lea & Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014; constants as in Vigna's reference `splitmix64.c`).
#[inline]
pub fn mix64(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d049bb133111eb);
    z ^ (z >> 31)
}

const GOLDEN: u64 = 0x9e3779b97f4a7c15;

/// Deterministic generator (xoshiro256++).
#[derive(Clone, Debug)]
pub struct DetRng {
    inner: Xoshiro256PlusPlus,
}

impl DetRng {
    /// xoshiro256++ seeded from `seed` through SplitMix64 (`SeedableRng::seed_from_u64`).
    pub fn seed_from_u64(seed: u64) -> DetRng {
        DetRng { inner: Xoshiro256PlusPlus::seed_from_u64(seed) }
    }

    /// The seed word of a derived stream: `k = seed; for w in words { k = mix64(k ^ mix64(w + GOLDEN)) }`.
    pub fn stream_key(seed: u64, words: &[u64]) -> u64 {
        let mut k = seed;
        for &w in words {
            k = mix64(k ^ mix64(w.wrapping_add(GOLDEN)));
        }
        k
    }

    /// An independent generator for (seed, words...), e.g. `stream(seed, &[TAG, n])`.
    pub fn stream(seed: u64, words: &[u64]) -> DetRng {
        DetRng::seed_from_u64(DetRng::stream_key(seed, words))
    }

    #[inline(always)]
    pub fn next_u64(&mut self) -> u64 {
        self.inner.next_u64()
    }

    /// Upper 32 bits of the next output.
    #[inline(always)]
    pub fn next_u32(&mut self) -> u32 {
        (self.inner.next_u64() >> 32) as u32
    }

    /// Uniform on [0, 1) with 53 random bits.
    #[inline]
    pub fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / 9007199254740992.0)
    }

    /// Uniform on the open interval (0, 1): 52 random bits plus one half, never 0 or 1.
    #[inline]
    pub fn next_open01(&mut self) -> f64 {
        ((self.next_u64() >> 12) as f64 + 0.5) * (1.0 / 4503599627370496.0)
    }

    /// Uniform integer in [0, bound) without bias (Lemire, "Fast random integer generation in
    /// an interval", ACM TOMACS 29(1), 2019). `bound` must be > 0.
    pub fn below(&mut self, bound: u64) -> u64 {
        assert!(bound > 0, "below(0)");
        let mut m = (self.next_u64() as u128) * (bound as u128);
        let mut lo = m as u64;
        if lo < bound {
            let t = bound.wrapping_neg() % bound;
            while lo < t {
                m = (self.next_u64() as u128) * (bound as u128);
                lo = m as u64;
            }
        }
        (m >> 64) as u64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix_reference_start() {
        // seed_from_u64(0) must equal from_seed([0; 32]) in rand_xoshiro, and SplitMix64 from
        // state 0 first outputs 0xe220a8397b1dcdaf (Vigna's splitmix64.c with x = 0; value from
        // memory, re-derived independently in tests/reference/test_calibrate_rng.py).
        assert_eq!(mix64(GOLDEN), 0xe220a8397b1dcdaf);
    }

    #[test]
    fn below_stays_in_range() {
        let mut r = DetRng::seed_from_u64(7);
        for b in [1u64, 2, 3, 90, 1 << 40] {
            for _ in 0..1000 {
                assert!(r.below(b) < b);
            }
        }
    }

    #[test]
    fn open01_is_open() {
        let mut r = DetRng::seed_from_u64(1);
        for _ in 0..10_000 {
            let u = r.next_open01();
            assert!(u > 0.0 && u < 1.0);
        }
    }
}
