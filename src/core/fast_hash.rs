//! A fast hasher for short ids, where the default SipHash (built against hostile keys
//! in long-lived servers) dominates loading a study or a file of ranked lists.

use std::collections::{HashMap, HashSet};
use std::hash::BuildHasherDefault;

/// A small multiply-rotate hasher (the FxHash scheme of the Rust compiler).
#[derive(Default, Clone, Copy)]
pub struct IdHasher(u64);

impl std::hash::Hasher for IdHasher {
    fn write(&mut self, bytes: &[u8]) {
        const K: u64 = 0x517c_c1b7_2722_0a95;
        let mut chunks = bytes.chunks_exact(8);
        for c in &mut chunks {
            let word = u64::from_le_bytes(c.try_into().expect("8 bytes"));
            self.0 = (self.0.rotate_left(5) ^ word).wrapping_mul(K);
        }
        for b in chunks.remainder() {
            self.0 = (self.0.rotate_left(5) ^ *b as u64).wrapping_mul(K);
        }
    }

    fn finish(&self) -> u64 {
        self.0
    }
}

/// A map keyed by ids, hashed with [`IdHasher`].
pub type FastMap<K, V> = HashMap<K, V, BuildHasherDefault<IdHasher>>;

/// A set of ids, hashed with [`IdHasher`].
pub type FastSet<K> = HashSet<K, BuildHasherDefault<IdHasher>>;
