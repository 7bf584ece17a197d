//! The compiler's hash tables: a fast hasher and the map and set types built on it.

use std::hash::{BuildHasherDefault, Hasher};

/// A fast non-cryptographic hasher (multiply-rotate, as in common practice for
/// compiler-internal tables) so hot tables (BDD
/// nodes, name lookups, interning, the Moore baseline) are not dominated by SipHash.
/// Not resistant to chosen collisions, which a compiler reading its own user's specs
/// does not need.
#[derive(Default)]
pub struct Fx(u64);

impl Hasher for Fx {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for chunk in bytes.chunks(8) {
            let mut buf = [0u8; 8];
            buf[..chunk.len()].copy_from_slice(chunk);
            self.add(u64::from_le_bytes(buf));
        }
    }
    fn write_u32(&mut self, i: u32) {
        self.add(i as u64);
    }
    fn write_u64(&mut self, i: u64) {
        self.add(i);
    }
    fn write_usize(&mut self, i: usize) {
        self.add(i as u64);
    }
}

impl Fx {
    #[inline]
    fn add(&mut self, x: u64) {
        self.0 = (self.0.rotate_left(5) ^ x).wrapping_mul(0x51_7c_c1_b7_27_22_0a_95);
    }
}

pub type FastHash = BuildHasherDefault<Fx>;

/// A `HashMap` with [`FastHash`] (`FxMap::default()` makes one).
pub type FxMap<K, V> = std::collections::HashMap<K, V, FastHash>;

/// A `HashSet` with [`FastHash`].
pub type FxSet<K> = std::collections::HashSet<K, FastHash>;
