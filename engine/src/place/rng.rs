//! The one random generator of the engine.
//!
//! A named algorithm (PCG-64, `Lcg128Xsl64` from rand_pcg) seeded from a `u64`, so the
//! stream is fixed by the algorithm, not by whatever a crate's default generator happens
//! to be in a given release. The two conversions we need (an integer below `n`, a float in
//! [0, 1)) are written here rather than taken from a distribution crate so that their
//! output, and therefore every placement, cannot change when a dependency is upgraded.

use rand_core::{Rng as _, SeedableRng};
use rand_pcg::Pcg64;

/// Seeded PCG-64 generator with stable integer and float conversions.
#[derive(Clone, Debug)]
pub struct Rng(Pcg64);

impl Rng {
    pub fn new(seed: u64) -> Rng {
        Rng(Pcg64::seed_from_u64(seed))
    }

    #[inline]
    pub fn next_u64(&mut self) -> u64 {
        self.0.next_u64()
    }

    /// Uniform integer in `0..n` (Lemire's multiply-shift with rejection; `n > 0`).
    #[inline]
    pub fn below(&mut self, n: u32) -> u32 {
        debug_assert!(n > 0);
        let n64 = u64::from(n);
        loop {
            let x = self.next_u64() >> 32;
            let m = x * n64;
            let low = m as u32;
            if low >= n || low >= (u32::MAX - n + 1) % n {
                return (m >> 32) as u32;
            }
        }
    }

    /// Uniform integer in `-r..=r`.
    #[inline]
    pub fn symmetric(&mut self, r: u32) -> i64 {
        i64::from(self.below(2 * r + 1)) - i64::from(r)
    }

    /// Uniform float in [0, 1) with 53 random bits.
    #[inline]
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_seed_same_stream() {
        let mut a = Rng::new(7);
        let mut b = Rng::new(7);
        for _ in 0..100 {
            assert_eq!(a.next_u64(), b.next_u64());
        }
    }

    #[test]
    fn below_is_in_range_and_covers_it() {
        let mut r = Rng::new(1);
        let mut seen = [0u32; 7];
        for _ in 0..7000 {
            seen[r.below(7) as usize] += 1;
        }
        assert!(seen.iter().all(|&c| c > 800 && c < 1200), "{seen:?}");
    }

    #[test]
    fn unit_is_in_half_open_interval() {
        let mut r = Rng::new(3);
        for _ in 0..10000 {
            let u = r.unit();
            assert!((0.0..1.0).contains(&u));
        }
    }
}
