//! `--shard K/N`: a deterministic share of the objects, so that N machines (a cluster array job,
//! GNU parallel) can split one night or an archive and their outputs together equal one unsharded run.
//!
//! The unit is the object, not the file: every shard reads all inputs (cheap next to fitting) and
//! fits only the objects whose id falls in its share, so an object whose nights sit in different
//! files is always fitted whole, by exactly one shard.

use std::str::FromStr;

/// Share K of N (1 ≤ K ≤ N), numbered from 1.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    pub index: u64,
    pub count: u64,
}

impl FromStr for Shard {
    type Err = String;

    fn from_str(s: &str) -> Result<Shard, String> {
        let (k, n) = s
            .split_once('/')
            .ok_or_else(|| format!("'{s}' is not K/N (for example 3/16)"))?;
        let k: u64 = k
            .trim()
            .parse()
            .map_err(|_| format!("'{k}' is not a whole number"))?;
        let n: u64 = n
            .trim()
            .parse()
            .map_err(|_| format!("'{n}' is not a whole number"))?;
        if n == 0 {
            return Err("N must be at least 1".into());
        }
        if k == 0 || k > n {
            return Err(format!(
                "K must be between 1 and {n} (shards are numbered from 1)"
            ));
        }
        Ok(Shard { index: k, count: n })
    }
}

impl Shard {
    /// Whether `object` belongs to this share: FNV-1a (64-bit) of the id's UTF-8 bytes, modulo N,
    /// equals K − 1. The hash is fixed here, not taken from the standard library, so the split is
    /// the same on every machine, platform and version.
    pub fn holds(&self, object: &str) -> bool {
        fnv1a(object.as_bytes()) % self.count == self.index - 1
    }
}

fn fnv1a(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in bytes {
        h ^= u64::from(*b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fnv1a_matches_the_published_test_vectors() {
        // Test vectors of the FNV-1a 64-bit hash as published with the algorithm (from memory:
        // the empty string gives the offset basis; "a" gives 0xaf63dc4c8601ec8c).
        assert_eq!(fnv1a(b""), 0xcbf2_9ce4_8422_2325);
        assert_eq!(fnv1a(b"a"), 0xaf63_dc4c_8601_ec8c);
        assert_eq!(fnv1a(b"foobar"), 0x8594_4171_f739_67e8);
    }

    #[test]
    fn every_object_falls_in_exactly_one_share() {
        let shards: Vec<Shard> = (1..=7).map(|k| format!("{k}/7").parse().unwrap()).collect();
        for i in 0..2000 {
            let id = format!("obj{i:05}");
            assert_eq!(shards.iter().filter(|s| s.holds(&id)).count(), 1, "{id}");
        }
    }

    #[test]
    fn shares_are_roughly_even() {
        let s: Vec<Shard> = (1..=4).map(|k| Shard { index: k, count: 4 }).collect();
        let counts: Vec<usize> = s
            .iter()
            .map(|s| (0..4000).filter(|i| s.holds(&format!("T{i}"))).count())
            .collect();
        // Binomial(4000, 1/4): sd ≈ 27; 150 is more than 5 sd.
        assert!(
            counts.iter().all(|&c| (850..=1150).contains(&c)),
            "{counts:?}"
        );
    }

    #[test]
    fn malformed_shards_are_refused_with_a_reason() {
        for bad in ["0/4", "5/4", "1/0", "x/4", "3", "1/-2", ""] {
            let e = bad.parse::<Shard>().unwrap_err();
            assert!(!e.is_empty(), "{bad}");
        }
        assert_eq!("2/5".parse::<Shard>(), Ok(Shard { index: 2, count: 5 }));
    }
}
