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
        radix_sort(&mut v);
        w.sort_by_key(|k| k.key);
        assert_eq!(v, w);
    }
}
