//! Unit ids of spikes.csv looked up fast: shared by the standard reader and the fast path.

use super::tables::natural_cmp;
use super::Spikes;
use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};

/// Unit ids in first-seen order, looked up fast: ids of up to 7 bytes (nearly all) as one
/// integer, rows of one unit often in runs, so the previous unit is tried first.
#[derive(Default)]
pub(super) struct UnitIndex {
    short: ShortTable,
    long: HashMap<Box<[u8]>, usize, BuildHasherDefault<Fnv1a>>,
    /// Ids as bytes while reading (rows were checked to be UTF-8), text at the end.
    names: Vec<Box<[u8]>>,
    cached: Option<(Option<u64>, usize)>,
}

impl UnitIndex {
    /// The index of `unit`; a new id gets the next index (`== len` before the call).
    #[inline]
    pub(super) fn index(&mut self, unit: &[u8]) -> usize {
        let key = short_key(unit);
        let names = &self.names;
        if let Some((_, u)) = self
            .cached
            .filter(|&(k, u)| k == key && (key.is_some() || *names[u] == *unit))
        {
            return u;
        }
        let found = match key {
            Some(k) => self.short.get(k),
            None => self.long.get(unit).copied(),
        };
        let u = found.unwrap_or_else(|| {
            let u = self.names.len();
            match key {
                Some(k) => self.short.insert(k, u),
                None => {
                    self.long.insert(unit.into(), u);
                }
            };
            self.names.push(unit.into());
            u
        });
        self.cached = Some((key, u));
        u
    }

    /// The spike trains (`times[i]` of unit `i`) with the units in natural name order, each
    /// train shrunk to its length.
    pub(super) fn into_spikes(self, times: Vec<Vec<f64>>) -> Spikes {
        let mut order: Vec<usize> = (0..self.names.len()).collect();
        let names: Vec<String> = self
            .names
            .iter()
            .map(|b| String::from_utf8_lossy(b).into_owned())
            .collect();
        order.sort_by(|&a, &b| natural_cmp(&names[a], &names[b]));
        let mut slots: Vec<Option<Vec<f64>>> = times
            .into_iter()
            .map(|mut v| {
                v.shrink_to_fit();
                Some(v)
            })
            .collect();
        Spikes {
            units: order.iter().map(|&i| names[i].clone()).collect(),
            times: order.iter().filter_map(|&i| slots[i].take()).collect(),
        }
    }
}

/// Open addressing over packed short ids (never 0: the top byte holds the length, at least 1),
/// linear probing from the top bits of one multiply; kept at most half full. A few dozen to a
/// few hundred units per file: the lookup is one multiply and, nearly always, one compare.
#[derive(Default)]
struct ShortTable {
    slots: Vec<(u64, usize)>,
    len: usize,
}

impl ShortTable {
    fn slot(&self, k: u64) -> usize {
        let bits = self.slots.len().trailing_zeros();
        (k.wrapping_mul(0x9e37_79b9_7f4a_7c15) >> (64 - bits)) as usize
    }

    fn get(&self, k: u64) -> Option<usize> {
        if self.slots.is_empty() {
            return None;
        }
        let mask = self.slots.len() - 1;
        let mut i = self.slot(k);
        loop {
            match self.slots[i] {
                (0, _) => return None,
                (x, u) if x == k => return Some(u),
                _ => i = (i + 1) & mask,
            }
        }
    }

    fn insert(&mut self, k: u64, u: usize) {
        if 2 * (self.len + 1) > self.slots.len() {
            let grown = vec![(0, 0); (self.slots.len() * 2).max(64)];
            let old = std::mem::replace(&mut self.slots, grown);
            self.len = 0;
            for (x, v) in old.into_iter().filter(|&(x, _)| x != 0) {
                self.insert(x, v);
            }
        }
        let mask = self.slots.len() - 1;
        let mut i = self.slot(k);
        while self.slots[i].0 != 0 {
            i = (i + 1) & mask;
        }
        self.slots[i] = (k, u);
        self.len += 1;
    }
}

/// An id of at most 7 bytes packed with its length into one integer (`None` if longer).
fn short_key(id: &[u8]) -> Option<u64> {
    if id.len() > 7 {
        return None;
    }
    // Byte by byte: a variable-length copy into a buffer costs a call per row.
    let mut k = (id.len() as u64) << 56;
    for (i, &b) in id.iter().enumerate() {
        k |= u64::from(b) << (8 * i);
    }
    Some(k)
}

/// FNV-1a: unit ids are a few bytes long and trusted enough; SipHash's DoS resistance costs
/// more than the rest of the row on 2 million spikes.
#[derive(Default)]
struct Fnv1a(u64);

impl Hasher for Fnv1a {
    fn write(&mut self, bytes: &[u8]) {
        let mut h = if self.0 == 0 {
            0xcbf2_9ce4_8422_2325
        } else {
            self.0
        };
        for &b in bytes {
            h = (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3);
        }
        self.0 = h;
    }
    fn write_u64(&mut self, x: u64) {
        // The table picks a bucket by the low bits and tags entries with the high ones. A
        // multiply alone leaves the low bits of the product a function of the low bits of
        // the id — its first byte, the same `u` for every unit — so every id landed in one
        // probe group. Folding the high half back (the finaliser of splitmix64) mixes every
        // byte into both ends.
        let mut h = (x ^ self.0).wrapping_mul(0x9e37_79b9_7f4a_7c15);
        h ^= h >> 30;
        h = h.wrapping_mul(0xbf58_476d_1ce4_e5b9);
        h ^= h >> 27;
        self.0 = h;
    }
    fn finish(&self) -> u64 {
        self.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_table_finds_every_id_through_growth() {
        let mut t = ShortTable::default();
        let keys: Vec<u64> = (1..=300)
            .map(|u| short_key(format!("u{u}").as_bytes()).unwrap())
            .collect();
        for (u, &k) in keys.iter().enumerate() {
            assert_eq!(t.get(k), None);
            t.insert(k, u);
        }
        for (u, &k) in keys.iter().enumerate() {
            assert_eq!(t.get(k), Some(u));
        }
        assert_eq!(t.get(short_key(b"u301").unwrap()), None);
    }

    /// Ids that share their first bytes (`u1` … `u64`) spread over the table's buckets: the
    /// low bits of the hash (the bucket) take many values, not one.
    #[test]
    fn short_id_hashes_spread_over_the_low_bits() {
        use std::hash::{BuildHasher, BuildHasherDefault};
        let build = BuildHasherDefault::<Fnv1a>::default();
        let buckets: std::collections::HashSet<u64> = (1..=64)
            .map(|u| build.hash_one(short_key(format!("u{u}").as_bytes()).unwrap()) & 63)
            .collect();
        assert!(
            buckets.len() > 32,
            "{} distinct buckets of 64",
            buckets.len()
        );
    }
}
