//! Sorting (amount, index) pairs for the battery.
//!
//! The battery sorts in place: [`Sorted::of`] packs each member's amount and its index into
//! one word (`amount << bits | index`, the usual case) and sorts the words with an in-place
//! MSD radix sort ([`sort_u64_in_place`]), so a population of m members costs 8 bytes per
//! member and no second buffer. Words are unique (the index is in them), so the order equals a
//! stable sort by amount: equal amounts stay in index order. When amount and index do not fit
//! in 64 bits together (amounts of 2^43 ten-thousandths, about 880 million units, and more in a 2M-row population), 16-byte
//! (key, index) pairs are sorted in place instead.

#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Keyed {
    pub key: u64,
    pub idx: u32,
}

/// Sort words in place, ascending, by an MSD radix sort (8 bits per level, starting at the
/// highest bit any word has; buckets of 64 or fewer words by insertion sort). No second buffer.
pub fn sort_u64_in_place(v: &mut [u64]) {
    let top = v.iter().fold(0u64, |a, &x| a | x);
    if top == 0 {
        return;
    }
    let hi = 64 - top.leading_zeros(); // bits [0, hi) are in use
    msd(v, hi.saturating_sub(8));
}

fn insertion(v: &mut [u64]) {
    for i in 1..v.len() {
        let x = v[i];
        let mut j = i;
        while j > 0 && v[j - 1] > x {
            v[j] = v[j - 1];
            j -= 1;
        }
        v[j] = x;
    }
}

/// Words of `v` agree above bit `shift + 8`; sort them by bits [0, shift + 8).
fn msd(v: &mut [u64], shift: u32) {
    if v.len() <= 64 {
        insertion(v);
        return;
    }
    let digit = |x: u64| ((x >> shift) & 0xFF) as usize;
    let mut count = [0usize; 256];
    for &x in v.iter() {
        count[digit(x)] += 1;
    }
    let mut start = [0usize; 256];
    let mut acc = 0;
    for d in 0..256 {
        start[d] = acc;
        acc += count[d];
    }
    if count.iter().any(|&c| c == v.len()) {
        // every word has the same digit here
        if shift > 0 {
            msd(v, shift.saturating_sub(8));
        }
        return;
    }
    // American flag permutation: place each word into its bucket by cycles of swaps.
    let mut next = start;
    for d in 0..256 {
        let end = start[d] + count[d];
        while next[d] < end {
            let mut x = v[next[d]];
            let mut dx = digit(x);
            while dx != d {
                std::mem::swap(&mut x, &mut v[next[dx]]);
                next[dx] += 1;
                dx = digit(x);
            }
            v[next[d]] = x;
            next[d] += 1;
        }
    }
    if shift == 0 {
        return;
    }
    for d in 0..256 {
        if count[d] > 1 {
            msd(&mut v[start[d]..start[d] + count[d]], shift.saturating_sub(8));
        }
    }
}

/// A population's nonzero amounts sorted ascending (ties in index order), with each one's index
/// in the population: see the module note for the two layouts.
pub(crate) enum Sorted {
    /// `amount << bits | index`.
    Packed { w: Vec<u64>, bits: u32 },
    Pairs(Vec<Keyed>),
}

/// Number of amount buckets of [`bucket`]: 64 binary orders of magnitude, 32 steps in each.
pub const BUCKETS: usize = 64 * 32;

/// A nondecreasing map of nonzero amounts to `0..BUCKETS`: the position of the highest set bit
/// and the five bits below it (each bucket spans 1/32 of a power of two).
#[inline]
pub fn bucket(v: u64) -> usize {
    let e = 63 - v.leading_zeros();
    let mant = if e >= 5 { (v >> (e - 5)) & 31 } else { (v << (5 - e)) & 31 };
    (e as usize) * 32 + mant as usize
}

/// Populations up to this size are sorted in one window.
pub const WINDOW_MIN: usize = 1 << 16;
/// A population is sorted in windows of about a quarter of it ([`windows`]).
pub const WINDOW_PARTS: usize = 4;

/// One window of a population's amounts: the nonzero amounts in `lo..=hi`, `count` of them
/// (`usize::MAX`: not counted, the whole population in one window).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Window {
    pub lo: u64,
    pub hi: u64,
    pub count: usize,
}

/// Split a population's nonzero amounts into windows of consecutive [`bucket`]s holding at
/// most `max(m / parts, WINDOW_MIN)` members each (a single bucket holding more is a window of
/// its own), ascending. Windows hold ascending, disjoint ranges of amounts, so sorting each in
/// turn visits the amounts in sorted order while holding about 1/parts of them at once (8 bytes
/// each: 2 bytes per member for [`WINDOW_PARTS`]; windows of an eighth ran slower in our runs,
/// twice the passes over the members). One pass over the amounts (none for a population of at
/// most `WINDOW_MIN`).
pub fn windows(m: usize, parts: usize, amount: impl Fn(usize) -> u64) -> Vec<Window> {
    let cap = (m / parts.max(1)).max(WINDOW_MIN);
    if m <= cap {
        return vec![Window { lo: 1, hi: u64::MAX, count: usize::MAX }];
    }
    // Per bucket: members, smallest and largest amount.
    let mut hist = vec![(0usize, u64::MAX, 0u64); BUCKETS];
    for i in 0..m {
        let v = amount(i);
        if v != 0 {
            let h = &mut hist[bucket(v)];
            h.0 += 1;
            h.1 = h.1.min(v);
            h.2 = h.2.max(v);
        }
    }
    let mut out: Vec<Window> = Vec::new();
    let mut cur: Option<Window> = None;
    for &(c, lo, hi) in hist.iter().filter(|h| h.0 > 0) {
        match cur.as_mut() {
            Some(w) if w.count + c <= cap => {
                w.count += c;
                w.hi = hi;
            }
            _ => {
                out.extend(cur.take());
                cur = Some(Window { lo, hi, count: c });
            }
        }
    }
    out.extend(cur);
    out
}

impl Sorted {
    /// Sort `(amount, index)` for every index `0..n` whose amount (from `amount(i)`) is nonzero
    /// (the whole population in one window: the tests' reference).
    #[cfg(test)]
    pub fn of(n: usize, amount: impl Fn(usize) -> u64) -> Sorted {
        Sorted::of_window(n, amount, Window { lo: 1, hi: u64::MAX, count: usize::MAX })
    }

    /// As [`Sorted::of`], for the amounts of one [`Window`] only.
    pub fn of_window(n: usize, amount: impl Fn(usize) -> u64, w: Window) -> Sorted {
        let (lo, hi) = (w.lo.max(1), w.hi);
        // The whole population (not counted): room for every member, packed while the amounts
        // fit beside the index, else start again as pairs.
        let count = if w.count == usize::MAX { n } else { w.count };
        let bits = 64 - (n.max(1) as u64).leading_zeros();
        let fits = |a: u64| (64 - a.leading_zeros()) + bits <= 64;
        if fits(hi) || w.count == usize::MAX {
            let mut v: Vec<u64> = Vec::with_capacity(count);
            let mut all_fit = true;
            for i in 0..n {
                let a = amount(i);
                if a >= lo && a <= hi {
                    if !fits(a) {
                        all_fit = false;
                        break;
                    }
                    v.push((a << bits) | i as u64);
                }
            }
            if all_fit {
                sort_u64_in_place(&mut v);
                return Sorted::Packed { w: v, bits };
            }
        }
        let mut v: Vec<Keyed> = Vec::with_capacity(count);
        for i in 0..n {
            let a = amount(i);
            if a >= lo && a <= hi {
                v.push(Keyed { key: a, idx: i as u32 });
            }
        }
        v.sort_unstable_by_key(|k| (k.key, k.idx));
        Sorted::Pairs(v)
    }
    pub fn len(&self) -> usize {
        match self {
            Sorted::Packed { w, .. } => w.len(),
            Sorted::Pairs(v) => v.len(),
        }
    }
    #[inline]
    pub fn key(&self, i: usize) -> u64 {
        match self {
            Sorted::Packed { w, bits } => w[i] >> bits,
            Sorted::Pairs(v) => v[i].key,
        }
    }
    #[inline]
    pub fn idx(&self, i: usize) -> u32 {
        match self {
            Sorted::Packed { w, bits } => (w[i] & ((1u64 << bits) - 1)) as u32,
            Sorted::Pairs(v) => v[i].idx,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    /// The in-place MSD sort against the standard library's sort, on words spread over all
    /// 64 bits, on narrow keys with many equal high digits, and on tiny inputs.
    #[test]
    fn in_place_sort_like_std() {
        let mut s: u64 = 0x2545F4914F6CDD1D;
        let mut next = || {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            s
        };
        for (n, mask) in [(0usize, u64::MAX), (1, u64::MAX), (63, 0xFFFF), (5000, u64::MAX), (20000, 0x3FF), (20000, 0xFFFF_0000_0000), (70000, (1 << 41) - 1)] {
            let v: Vec<u64> = (0..n).map(|_| next() & mask).collect();
            let mut a = v.clone();
            let mut b = v;
            sort_u64_in_place(&mut a);
            b.sort_unstable();
            assert_eq!(a, b, "n {n} mask {mask:#x}");
        }
    }

    /// Buckets are nondecreasing in the amount; windows cover every nonzero amount once, in
    /// ascending order, each within its size cap unless it is one bucket.
    #[test]
    fn buckets_and_windows() {
        let mut prev = 0;
        for v in (1u64..5000).chain((0..64).map(|k| 1u64 << k)).chain((1..64).map(|k| (1u64 << k) - 1)).collect::<std::collections::BTreeSet<_>>() {
            let b = bucket(v);
            assert!(b >= prev && b < BUCKETS, "v {v}");
            prev = b;
        }
        let mut x: u64 = 88172645463325252;
        let amounts: Vec<u64> = (0..600_000)
            .map(|i| {
                x ^= x << 13;
                x ^= x >> 7;
                x ^= x << 17;
                if i % 50 == 0 { 0 } else if i % 3 == 0 { 4_999_900 } else { 1000 + x % 100_000_000 }
            })
            .collect();
        let whole = Sorted::of(amounts.len(), |i| amounts[i]);
        for parts in [WINDOW_PARTS, 8] {
            let w = windows(amounts.len(), parts, |i| amounts[i]);
            assert!(w.len() >= parts, "{w:?}");
            let mut all: Vec<(u64, u32)> = Vec::new();
            let mut last_hi = 0;
            for &win in &w {
                assert!(win.lo > last_hi && win.lo <= win.hi, "{w:?}");
                last_hi = win.hi;
                assert!(win.count <= 600_000 / parts || bucket(win.lo) == bucket(win.hi), "window {win:?}");
                let s = Sorted::of_window(amounts.len(), |i| amounts[i], win);
                assert_eq!(s.len(), win.count);
                all.extend((0..s.len()).map(|i| (s.key(i), s.idx(i))));
            }
            assert_eq!(all, (0..whole.len()).map(|i| (whole.key(i), whole.idx(i))).collect::<Vec<_>>());
        }
    }

    /// `Sorted` gives the stable order by amount (ties by index) in both layouts.
    #[test]
    fn sorted_amounts_stable_by_index() {
        let amounts: Vec<u64> = (0..3000u64).map(|i| (i * 7919) % 1000).collect();
        let mut want: Vec<(u64, u32)> = amounts.iter().enumerate().filter(|(_, &a)| a != 0).map(|(i, &a)| (a, i as u32)).collect();
        want.sort_by_key(|p| p.0); // stable: ties keep index order
        let got = Sorted::of(amounts.len(), |i| amounts[i]);
        assert!(matches!(got, Sorted::Packed { .. }));
        assert_eq!((0..got.len()).map(|i| (got.key(i), got.idx(i))).collect::<Vec<_>>(), want);
        let big: Vec<u64> = amounts.iter().map(|&a| if a == 0 { 0 } else { a << 54 }).collect();
        let got = Sorted::of(big.len(), |i| big[i]);
        assert!(matches!(got, Sorted::Pairs(_)));
        assert_eq!((0..got.len()).map(|i| (got.key(i) >> 54, got.idx(i))).collect::<Vec<_>>(), want);
    }
}
