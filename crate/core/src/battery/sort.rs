//! LSD radix sort of (key, index) pairs by key, 11 bits per pass; passes in which every key has
//! the same digit are skipped (amount keys rarely use their high bits). Stable, so equal keys
//! stay in index order.

#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Keyed {
    pub key: u64,
    pub idx: u32,
}

const BITS: u32 = 11;
const BUCKETS: usize = 1 << BITS;
const PASSES: usize = 6; // 6 * 11 = 66 >= 64

pub fn radix_sort(v: &mut Vec<Keyed>) {
    let n = v.len();
    if n < 256 {
        v.sort_by_key(|k| k.key); // stable
        return;
    }
    let mut hist = vec![[0u32; BUCKETS]; PASSES];
    for k in v.iter() {
        let mut x = k.key;
        for h in hist.iter_mut() {
            h[(x as usize) & (BUCKETS - 1)] += 1;
            x >>= BITS;
        }
    }
    let mut buf = vec![Keyed::default(); n];
    for (pass, h) in hist.iter().enumerate() {
        if h.iter().any(|&c| c as usize == n) {
            continue; // every key has the same digit here
        }
        let mut offs = [0u32; BUCKETS];
        let mut acc = 0u32;
        for (o, &c) in offs.iter_mut().zip(h.iter()) {
            *o = acc;
            acc += c;
        }
        let shift = pass as u32 * BITS;
        for k in v.iter() {
            let b = ((k.key >> shift) as usize) & (BUCKETS - 1);
            buf[offs[b] as usize] = *k;
            offs[b] += 1;
        }
        std::mem::swap(v, &mut buf);
    }
}

/// Sort (key, index) pairs by key, given in index order. When key and index fit together in
/// 64 bits (the usual case: amounts below 2^40 units) they are packed into one word, halving
/// the memory traffic; otherwise the pairs are sorted as they are. Stable either way.
pub fn sort_pairs(v: Vec<Keyed>) -> Vec<Keyed> {
    let n = v.len();
    let max_key = v.iter().map(|k| k.key).max().unwrap_or(0);
    let idx_bits = 64 - (n.max(1) as u64).leading_zeros();
    let key_bits = 64 - max_key.leading_zeros();
    if n < 256 || key_bits + idx_bits > 64 {
        let mut v = v;
        radix_sort(&mut v);
        return v;
    }
    let mut w: Vec<u64> = v.iter().map(|k| (k.key << idx_bits) | k.idx as u64).collect();
    drop(v);
    radix_sort_u64_from(&mut w, idx_bits);
    let mask = (1u64 << idx_bits) - 1;
    w.iter().map(|&x| Keyed { key: x >> idx_bits, idx: (x & mask) as u32 }).collect()
}

/// Stable LSD radix sort of words by their bits [lo, 64) only (lower bits keep input order).
pub fn radix_sort_u64_from(v: &mut Vec<u64>, lo: u32) {
    let n = v.len();
    let passes = (64 - lo).div_ceil(BITS) as usize;
    let mut hist = vec![[0u32; BUCKETS]; passes];
    for &x in v.iter() {
        let mut y = x >> lo;
        for h in hist.iter_mut() {
            h[(y as usize) & (BUCKETS - 1)] += 1;
            y >>= BITS;
        }
    }
    let mut buf = vec![0u64; n];
    for (pass, h) in hist.iter().enumerate() {
        if h.iter().any(|&c| c as usize == n) {
            continue;
        }
        let mut offs = [0u32; BUCKETS];
        let mut acc = 0u32;
        for (o, &c) in offs.iter_mut().zip(h.iter()) {
            *o = acc;
            acc += c;
        }
        let shift = lo + pass as u32 * BITS;
        for &x in v.iter() {
            let b = ((x >> shift) as usize) & (BUCKETS - 1);
            buf[offs[b] as usize] = x;
            offs[b] += 1;
        }
        std::mem::swap(v, &mut buf);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn sorts_like_std() {
        let mut s: u64 = 0x9e3779b97f4a7c15;
        let mut v: Vec<Keyed> = (0..5000u32)
            .map(|i| {
                s ^= s << 13;
                s ^= s >> 7;
                s ^= s << 17;
                Keyed { key: if i % 3 == 0 { s } else { s % 1000 }, idx: i }
            })
            .collect();
        let mut w = v.clone();
        let small: Vec<Keyed> = v.iter().map(|k| Keyed { key: k.key % 100_000, idx: k.idx }).collect();
        let packed = sort_pairs(small.clone());
        radix_sort(&mut v);
        w.sort_by_key(|k| k.key);
        assert_eq!(v, w);
        let mut s2 = small;
        s2.sort_by_key(|k| k.key);
        assert_eq!(packed, s2);
    }
}
