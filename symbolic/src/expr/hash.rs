//! A fast hasher for the engine's internal tables (interning, memos, value numbering).

use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};

/// Hasher for the engine's internal tables (interning, memos, value numbering): one rotate,
/// xor and multiply per word (multiplicative hashing, common practice). The keys are the
/// engine's own nodes, never adversarial input, and these tables are only looked up, never
/// iterated into an output, so a fast hash changes nothing but the time taken.
#[derive(Clone, Copy, Default, Debug)]
pub(crate) struct FastHasher(u64);

impl FastHasher {
    fn add(&mut self, word: u64) {
        self.0 = (self.0.rotate_left(5) ^ word).wrapping_mul(0x51_7c_c1_b7_27_22_0a_95);
    }
}

impl Hasher for FastHasher {
    fn write(&mut self, bytes: &[u8]) {
        for chunk in bytes.chunks(8) {
            let mut word = [0u8; 8];
            word[..chunk.len()].copy_from_slice(chunk);
            self.add(u64::from_le_bytes(word));
        }
    }

    fn write_u8(&mut self, n: u8) {
        self.add(n.into());
    }

    fn write_u16(&mut self, n: u16) {
        self.add(n.into());
    }

    fn write_u32(&mut self, n: u32) {
        self.add(n.into());
    }

    fn write_u64(&mut self, n: u64) {
        self.add(n);
    }

    fn write_usize(&mut self, n: usize) {
        self.add(n as u64);
    }

    fn finish(&self) -> u64 {
        self.0
    }
}

/// A hash map over [`FastHasher`].
pub(crate) type FastMap<K, V> = HashMap<K, V, BuildHasherDefault<FastHasher>>;
