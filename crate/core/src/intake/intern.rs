//! Exact raw spelling of a supplier cell -> supplier id, looked up once per row.
//!
//! Open addressing with linear probing in a power-of-two table kept at most half full; each
//! slot holds the spelling's 64-bit hash, its id and where its bytes are in one arena, so a
//! lookup is one hash of the cell, usually one slot, and one byte comparison (no allocation
//! per row, one per new spelling at most). The hash is the multiply-rotate "FxHash" used by
//! rustc, eight bytes at a time (not DoS-resistant; fine for one user's own file).

const K: u64 = 0x51_7c_c1_b7_27_22_0a_95;

#[inline(always)]
pub fn hash(b: &[u8]) -> u64 {
    let mut h = (b.len() as u64).wrapping_mul(K);
    let mut c = b.chunks_exact(8);
    for w in &mut c {
        h = (h.rotate_left(5) ^ u64::from_le_bytes(w.try_into().unwrap())).wrapping_mul(K);
    }
    let r = c.remainder();
    if !r.is_empty() {
        let mut t = [0u8; 8];
        t[..r.len()].copy_from_slice(r);
        h = (h.rotate_left(5) ^ u64::from_le_bytes(t)).wrapping_mul(K);
    }
    h
}

/// Byte equality of two slices of the same length, eight bytes at a time, inlined (the
/// cells are short; a library call per row costs more than the comparison).
#[inline(always)]
fn same(a: &[u8], b: &[u8]) -> bool {
    debug_assert_eq!(a.len(), b.len());
    let mut ca = a.chunks_exact(8);
    let mut cb = b.chunks_exact(8);
    for (x, y) in (&mut ca).zip(&mut cb) {
        if u64::from_le_bytes(x.try_into().unwrap()) != u64::from_le_bytes(y.try_into().unwrap()) {
            return false;
        }
    }
    ca.remainder() == cb.remainder()
}

#[derive(Clone, Copy, Default)]
struct Slot {
    hash: u64,
    /// Start of the spelling in the arena; `u32::MAX` for an empty slot.
    start: u32,
    len: u32,
    id: u32,
}

const EMPTY: Slot = Slot { hash: 0, start: u32::MAX, len: 0, id: 0 };

pub struct Interner {
    slots: Vec<Slot>,
    arena: Vec<u8>,
    count: usize,
}

impl Default for Interner {
    fn default() -> Self {
        Interner { slots: vec![EMPTY; 1024], arena: Vec::new(), count: 0 }
    }
}

impl Interner {
    /// The id stored for exactly these bytes, if any.
    #[inline]
    pub fn get(&self, name: &[u8]) -> Option<u32> {
        let h = hash(name);
        let mask = self.slots.len() - 1;
        let mut i = (h >> 20) as usize & mask;
        loop {
            let s = &self.slots[i];
            if s.start == u32::MAX {
                return None;
            }
            if s.hash == h && s.len as usize == name.len() {
                let st = s.start as usize;
                if same(&self.arena[st..st + name.len()], name) {
                    return Some(s.id);
                }
            }
            i = (i + 1) & mask;
        }
    }

    /// Store `id` for `name` (which must not be stored yet).
    pub fn insert(&mut self, name: &[u8], id: u32) {
        if (self.count + 1) * 2 > self.slots.len() {
            let n = self.slots.len() * 2;
            let old = std::mem::replace(&mut self.slots, vec![EMPTY; n]);
            for s in old.into_iter().filter(|s| s.start != u32::MAX) {
                self.place(s);
            }
        }
        let start = u32::try_from(self.arena.len()).expect("supplier spellings over 4 GiB");
        self.arena.extend_from_slice(name);
        self.place(Slot { hash: hash(name), start, len: name.len() as u32, id });
        self.count += 1;
    }

    fn place(&mut self, s: Slot) {
        let mask = self.slots.len() - 1;
        let mut i = (s.hash >> 20) as usize & mask;
        while self.slots[i].start != u32::MAX {
            i = (i + 1) & mask;
        }
        self.slots[i] = s;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Against std's HashMap as the reference: every spelling (lengths 0..40, bytes that differ
    /// only in the last position or only in the tail word) maps to the id it was given, and
    /// spellings never inserted are not found, across several table growths.
    #[test]
    fn agrees_with_std_hashmap() {
        let mut reference = std::collections::HashMap::new();
        let mut it = Interner::default();
        let mut next = 0u32;
        for len in 0..40usize {
            for last in [b'a', b'b', 0xC3, b' '] {
                for stem in 0..60u32 {
                    let mut v: Vec<u8> = format!("Supplier {stem:03} Ltd").bytes().cycle().take(len).collect();
                    if let Some(b) = v.last_mut() {
                        *b = last;
                    }
                    if reference.contains_key(&v) {
                        continue;
                    }
                    assert_eq!(it.get(&v), None, "{v:?}");
                    it.insert(&v, next);
                    reference.insert(v, next);
                    next += 1;
                }
            }
        }
        assert!(it.slots.len() > 1024);
        for (k, &id) in &reference {
            assert_eq!(it.get(k), Some(id), "{k:?}");
            let mut longer = k.clone();
            longer.push(b'x');
            assert_eq!(it.get(&longer), reference.get(&longer).copied());
        }
    }
}
