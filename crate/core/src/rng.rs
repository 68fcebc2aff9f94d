//! Portable random streams.
//!
//! Every random draw in the core goes through a [`Stream`]: a PCG generator
//! (`Pcg64Mcg`, O'Neill 2014) whose output is the same on every platform, so a
//! native run and a WebAssembly run with the same seeds give bit-identical
//! numbers. Streams are derived from a master seed and a small tuple of
//! integers (variant index, seed index, purpose) by [`Stream::derive`], so that
//! each job owns independent streams and results never depend on how jobs are
//! scheduled.

use rand::{Rng, SeedableRng};
use rand_pcg::Pcg64Mcg;

/// What a derived stream is used for; part of the derivation key.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Purpose {
    /// Start states and transition noise of the task.
    Task = 1,
    /// Action sampling and initialisation of the agent.
    Agent = 2,
    /// Resampling in statistics (bootstrap).
    Stats = 3,
    /// Anything else a caller needs (tests, probes).
    Other = 4,
    /// Start states and transition noise of evaluation episodes.
    EvalTask = 5,
    /// Action sampling of the learned policy in evaluation episodes.
    EvalAgent = 6,
}

/// A deterministic, portable source of random numbers.
#[derive(Clone, Debug)]
pub struct Stream {
    gen: Pcg64Mcg,
}

/// SplitMix64 finaliser (Steele, Lea & Flood 2014): a bijective mixer used to
/// turn structured keys into well-spread generator seeds.
fn mix64(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

impl Stream {
    /// A stream seeded directly from one integer.
    pub fn from_seed(seed: u64) -> Self {
        let hi = mix64(seed);
        let lo = mix64(hi ^ 0x5851_F42D_4C95_7F2D);
        let state = ((hi as u128) << 64) | (lo as u128);
        let mut bytes = [0u8; 16];
        bytes.copy_from_slice(&state.to_le_bytes());
        Stream { gen: Pcg64Mcg::from_seed(bytes) }
    }

    /// The stream for `(master, purpose, a, b)`: for jobs, `a` is the variant
    /// index (or `u64::MAX` for streams shared by all variants) and `b` the
    /// seed index.
    pub fn derive(master: u64, purpose: Purpose, a: u64, b: u64) -> Self {
        let mut k = mix64(master);
        k = mix64(k ^ (purpose as u64));
        k = mix64(k ^ a);
        k = mix64(k ^ b);
        Stream::from_seed(k)
    }

    /// The next raw 64-bit output.
    #[inline]
    pub fn next_u64(&mut self) -> u64 {
        self.gen.next_u64()
    }

    /// A uniform draw from [0, 1) with 53 bits of precision.
    #[inline]
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// A uniform draw from [lo, hi).
    #[inline]
    pub fn uniform_in(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }

    /// A uniform integer in `0..n` (Lemire's nearly-divisionless method,
    /// unbiased). Panics if `n == 0`, which is a programming error.
    #[inline]
    pub fn below(&mut self, n: usize) -> usize {
        assert!(n > 0, "Stream::below called with n = 0");
        let n = n as u64;
        let mut m = (self.next_u64() as u128) * (n as u128);
        let mut low = m as u64;
        if low < n {
            let threshold = n.wrapping_neg() % n;
            while low < threshold {
                m = (self.next_u64() as u128) * (n as u128);
                low = m as u64;
            }
        }
        (m >> 64) as usize
    }

    /// A standard normal draw (Box–Muller with `libm`, so it is portable).
    pub fn normal(&mut self) -> f64 {
        // 1 - u lies in (0, 1], so the logarithm is finite.
        let u1 = 1.0 - self.uniform();
        let u2 = self.uniform();
        f64::sqrt(-2.0 * libm::log(u1)) * libm::cos(2.0 * core::f64::consts::PI * u2)
    }

    /// Index drawn from a discrete distribution given by `probs` (which
    /// should sum to 1; the last index absorbs rounding).
    pub fn categorical(&mut self, probs: &[f64]) -> usize {
        let u = self.uniform();
        let mut acc = 0.0;
        for (i, p) in probs.iter().enumerate() {
            acc += p;
            if u < acc {
                return i;
            }
        }
        probs.len() - 1
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_key_same_numbers_and_keys_differ() {
        let mut a = Stream::derive(7, Purpose::Task, 0, 3);
        let mut b = Stream::derive(7, Purpose::Task, 0, 3);
        let mut c = Stream::derive(7, Purpose::Agent, 0, 3);
        let xa: Vec<u64> = (0..5).map(|_| a.next_u64()).collect();
        let xb: Vec<u64> = (0..5).map(|_| b.next_u64()).collect();
        let xc: Vec<u64> = (0..5).map(|_| c.next_u64()).collect();
        assert_eq!(xa, xb);
        assert_ne!(xa, xc);
    }

    #[test]
    fn uniform_and_below_moments() {
        // Common practice, no source: sample moments of U[0,1) and of a fair die.
        let mut s = Stream::from_seed(42);
        let n = 200_000;
        let mut sum = 0.0;
        let mut counts = [0usize; 6];
        for _ in 0..n {
            let u = s.uniform();
            assert!((0.0..1.0).contains(&u));
            sum += u;
            counts[s.below(6)] += 1;
        }
        assert!((sum / n as f64 - 0.5).abs() < 0.005);
        for c in counts {
            assert!((c as f64 / n as f64 - 1.0 / 6.0).abs() < 0.005);
        }
    }

    #[test]
    fn normal_moments() {
        // Common practice, no source: mean 0 and variance 1 of N(0,1).
        let mut s = Stream::from_seed(9);
        let n = 200_000;
        let xs: Vec<f64> = (0..n).map(|_| s.normal()).collect();
        let m = xs.iter().sum::<f64>() / n as f64;
        let v = xs.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n as f64 - 1.0);
        assert!(m.abs() < 0.01, "mean {m}");
        assert!((v - 1.0).abs() < 0.02, "variance {v}");
    }
}
