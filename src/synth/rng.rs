//! A small, fixed pseudo-random generator for the synthetic spectra.
//!
//! The demo files are committed and checked byte for byte against a fresh
//! regeneration, so the stream of numbers must never change with a dependency
//! upgrade. A general-purpose crate does not promise that for its default
//! generators; this one is xoshiro256** (Blackman & Vigna 2018, "Scrambled
//! linear pseudorandom number generators") seeded through SplitMix64, both a
//! dozen lines and fully specified by their publication.

/// Deterministic generator: the same seed always gives the same stream.
#[derive(Debug, Clone)]
pub struct Rng {
    s: [u64; 4],
}

fn splitmix64(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

impl Rng {
    /// A generator seeded with `seed` (any value, zero included).
    pub fn new(seed: u64) -> Rng {
        let mut st = seed;
        let s = [
            splitmix64(&mut st),
            splitmix64(&mut st),
            splitmix64(&mut st),
            splitmix64(&mut st),
        ];
        Rng { s }
    }

    /// An independent generator derived from this one's seed and a stream
    /// label, so that adding draws to one part of the model does not shift the
    /// numbers another part sees.
    pub fn fork(&self, label: u64) -> Rng {
        let mut st = self.s[0] ^ label.wrapping_mul(0xA076_1D64_78BD_642F);
        Rng::new(splitmix64(&mut st) ^ self.s[3])
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        let result = self.s[1].wrapping_mul(5).rotate_left(7).wrapping_mul(9);
        let t = self.s[1] << 17;
        self.s[2] ^= self.s[0];
        self.s[3] ^= self.s[1];
        self.s[1] ^= self.s[2];
        self.s[0] ^= self.s[3];
        self.s[2] ^= t;
        self.s[3] = self.s[3].rotate_left(45);
        result
    }

    /// Uniform in [0, 1), 53 random bits.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Uniform in [lo, hi).
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }

    /// Log-uniform in [lo, hi) (both positive).
    pub fn log_range(&mut self, lo: f64, hi: f64) -> f64 {
        (lo.ln() + (hi.ln() - lo.ln()) * self.uniform()).exp()
    }

    /// Uniform integer in [0, n); `n` must be positive.
    pub fn below(&mut self, n: usize) -> usize {
        ((self.uniform() * n as f64) as usize).min(n.saturating_sub(1))
    }

    /// True with probability `p`.
    pub fn chance(&mut self, p: f64) -> bool {
        self.uniform() < p
    }

    /// Standard normal deviate (Box-Muller, one of the pair used).
    pub fn normal(&mut self) -> f64 {
        let u1 = 1.0 - self.uniform(); // (0, 1]
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }

    /// One element of a non-empty slice.
    pub fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_same_seed_gives_the_same_stream() {
        let mut a = Rng::new(42);
        let mut b = Rng::new(42);
        for _ in 0..100 {
            assert_eq!(a.next_u64(), b.next_u64());
        }
    }

    #[test]
    fn splitmix_matches_its_published_reference_output() {
        // Reference: the first output of SplitMix64 seeded with 1234567 is
        // 6457827717110365317 (Vigna's splitmix64.c test value, from memory).
        let mut st = 1_234_567u64;
        assert_eq!(splitmix64(&mut st), 6_457_827_717_110_365_317);
    }

    #[test]
    fn normal_deviates_have_unit_variance() {
        let mut r = Rng::new(7);
        let n = 20_000;
        let xs: Vec<f64> = (0..n).map(|_| r.normal()).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        // Sampling error of the mean is 1/sqrt(n) = 0.007; of the variance ~0.01.
        assert!(mean.abs() < 0.03, "mean {mean}");
        assert!((var - 1.0).abs() < 0.04, "var {var}");
    }
}
