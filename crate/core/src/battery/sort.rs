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

impl Sorted {
    /// Sort `(amount, index)` for every index `0..n` whose amount (from `amount(i)`) is nonzero.
    pub fn of(n: usize, amount: impl Fn(usize) -> u64) -> Sorted {
        let (max_key, nonzero) = (0..n).fold((0u64, 0usize), |(m, c), i| {
            let a = amount(i);
            (m.max(a), c + (a != 0) as usize)
        });
        let bits = 64 - (n.max(1) as u64).leading_zeros();
        if (64 - max_key.leading_zeros()) + bits <= 64 {
            let mut w: Vec<u64> = Vec::with_capacity(nonzero);
            w.extend((0..n).filter_map(|i| {
                let a = amount(i);
                (a != 0).then_some((a << bits) | i as u64)
            }));
            sort_u64_in_place(&mut w);
            return Sorted::Packed { w, bits };
        }
        let mut v: Vec<Keyed> = Vec::with_capacity(nonzero);
        v.extend((0..n).filter_map(|i| {
            let a = amount(i);
            (a != 0).then_some(Keyed { key: a, idx: i as u32 })
        }));
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
    /// First position whose key is at least `x`.
    pub fn lower_bound(&self, x: u64) -> usize {
        let (mut lo, mut hi) = (0, self.len());
        while lo < hi {
            let mid = (lo + hi) / 2;
            if self.key(mid) < x {
                lo = mid + 1;
            } else {
                hi = mid;
            }
        }
        lo
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
        assert_eq!(got.lower_bound(500 << 54), want.partition_point(|p| p.0 < 500));
    }
}
