//! Tile coding.
//!
//! Each state variable is scaled to `[0, intervals]` over its declared range
//! (values outside are clamped). Tiling `k` shifts variable `i` by
//! `((k * (2i + 1)) mod n) / n` of a tile width, `n` being the number of
//! tilings: the asymmetric displacements recommended by Sutton & Barto (2018,
//! Section 9.5.4). A tiling has `(intervals + 1)^d` tiles; when the total
//! exceeds `hash` (and `hash > 0`), tile coordinates are hashed into `hash`
//! weights with a fixed integer hash, so the code is the same everywhere.

use super::{FeatureError, Features, Obs, Sparse};
use crate::task::StateVar;

/// Largest table accepted without hashing.
pub const MAX_UNHASHED: u64 = 1 << 22;

/// A tile coder over the task's state variables.
#[derive(Clone, Debug)]
pub struct TileCoder {
    low: Vec<f64>,
    scale: Vec<f64>,
    tilings: u32,
    intervals: u32,
    per_tiling: u64,
    hash: u32,
    dim: usize,
    /// `shift[k * d + i]`: tiling `k`'s displacement of variable `i`, in tiles.
    shift: Vec<f64>,
}

/// Most state variables whose scaled values [`TileCoder::compute`] keeps on
/// the stack (more are recomputed per tiling, with the same result).
const STACK_VARS: usize = 16;

fn hash_coords(tiling: u32, coords: impl Iterator<Item = u32>) -> u64 {
    // FNV-1a over 32-bit words followed by a SplitMix64 finish (common practice, no source).
    let mut h: u64 = 0xcbf2_9ce4_8422_2325 ^ u64::from(tiling);
    for c in coords {
        h ^= u64::from(c);
        h = h.wrapping_mul(0x0000_0100_0000_01B3);
    }
    h ^= h >> 33;
    h = h.wrapping_mul(0xff51_afd7_ed55_8ccd);
    h ^= h >> 33;
    h
}

impl TileCoder {
    /// A hash `h` folded into `[0, hash)`: h mod 2^m is h's low m bits, the
    /// same index without a 64-bit division.
    #[inline(always)]
    fn fold(&self, h: u64, pow2: bool) -> u32 {
        (if pow2 { h & u64::from(self.hash - 1) } else { h % u64::from(self.hash) }) as u32
    }

    /// The hashed indices of `D` variables (scaled values in `u`), one per
    /// tiling: what the general loop of [`Features::compute`] gives.
    #[inline(always)]
    fn hashed<const D: usize>(&self, u: &[f64; STACK_VARS], pow2: bool, out: &mut Sparse) {
        let u: &[f64; D] = u[..D].try_into().expect("D <= STACK_VARS");
        out.extend_ones((0u32..).zip(self.shift.chunks_exact(D)).map(|(k, shifts)| {
            let shifts: &[f64; D] = shifts.try_into().expect("chunks of D");
            // No `.min(intervals)` here: u lies in [0, intervals] and a shift in
            // [0, 1 - 1/tilings], and with intervals and tilings at most 64
            // (settings.rs) the sum stays below intervals + 1 after rounding,
            // so truncating never passes intervals.
            let coords = (0..D).map(|i| {
                let x = u[i] + shifts[i];
                debug_assert!((0.0..65.0).contains(&x));
                // SAFETY: x is finite and in [0, intervals + 1) (above; `compute`
                // clamps u and maps NaN to 0), so its truncation fits a u32.
                // The same value as `x as u32` without the saturating
                // conversion's range checks (about four instructions a
                // coordinate natively; a plain trunc in WebAssembly).
                let c: u32 = unsafe { x.to_int_unchecked() };
                debug_assert!(c <= self.intervals);
                c
            });
            self.fold(hash_coords(k, coords), pow2)
        }));
    }

    /// Builds a tile coder, or names the setting that is out of range.
    pub fn new(vars: &[StateVar], tilings: u32, intervals: u32, hash: u32) -> Result<Self, FeatureError> {
        let bad = |f: &str, m: String| Err(FeatureError::Invalid(f.into(), m));
        if let Some(m) = crate::settings::check_int("learner.features.tilings", u64::from(tilings)) {
            return bad("tilings", m);
        }
        if let Some(m) = crate::settings::check_int("learner.features.intervals", u64::from(intervals)) {
            return bad("intervals", m);
        }
        if !crate::settings::range("learner.features.hash").contains(f64::from(hash)) {
            return bad("hash", format!("must be 0 (no hashing) or in [16, 4194304], got {hash}"));
        }
        let d = vars.len() as u32;
        let per_tiling = u64::from(intervals + 1).checked_pow(d).unwrap_or(u64::MAX);
        let total = per_tiling.saturating_mul(u64::from(tilings));
        let hashed = hash > 0 && total > u64::from(hash);
        let dim = if hashed {
            hash as usize
        } else if total <= MAX_UNHASHED {
            total as usize
        } else {
            return bad(
                "hash",
                format!(
                    "is 0 but {tilings} tilings of {intervals} intervals over {d} variables make {total} tiles; set hash to at most 4194304"
                ),
            );
        };
        let shift = (0..tilings)
            .flat_map(|k| (0..d).map(move |i| f64::from((k * (2 * i + 1)) % tilings) / f64::from(tilings)))
            .collect();
        Ok(TileCoder {
            shift,
            low: vars.iter().map(|v| v.low).collect(),
            scale: vars.iter().map(|v| f64::from(intervals) / (v.high - v.low)).collect(),
            tilings,
            intervals,
            per_tiling,
            hash: if hashed { hash } else { 0 },
            dim,
        })
    }
}

impl Features for TileCoder {
    fn dim(&self) -> usize {
        self.dim
    }

    fn max_active(&self) -> usize {
        self.tilings as usize
    }

    fn compute(&self, obs: Obs<'_>, out: &mut Sparse) {
        out.clear();
        let n = self.tilings;
        let d = self.low.len();
        let top = f64::from(self.intervals);
        // Clamped to [0, intervals], NaN to 0 (comparisons rather than
        // clamp(): WebAssembly's min/max carry NaN and signed-zero rules
        // that cost a long instruction sequence).
        let scaled = |i: usize| -> f64 {
            let u = (obs.values[i] - self.low[i]) * self.scale[i];
            if u > top {
                top
            } else if u >= 0.0 {
                u
            } else {
                0.0
            }
        };
        let mut stack = [0.0f64; STACK_VARS];
        for (i, slot) in stack.iter_mut().enumerate().take(d) {
            *slot = scaled(i);
        }
        let coord = |k: u32, i: usize| -> u32 {
            let u = if i < STACK_VARS { stack[i] } else { scaled(i) };
            // u + shift lies in [0, intervals + 1), so truncating is flooring:
            // the same tile as floor() without a libm call on baseline x86-64.
            ((u + self.shift[k as usize * d + i]) as u32).min(self.intervals)
        };
        // h mod 2^m is h's low m bits: the same index without a 64-bit division.
        let pow2 = self.hash.is_power_of_two();
        if self.hash > 0 && (1..=STACK_VARS).contains(&d) {
            // The common case without per-coordinate bounds checks: the same
            // coordinates as `coord` below, zipped over the tiling's shifts;
            // up to four variables with the count known at compile time.
            match d {
                1 => self.hashed::<1>(&stack, pow2, out),
                2 => self.hashed::<2>(&stack, pow2, out),
                3 => self.hashed::<3>(&stack, pow2, out),
                4 => self.hashed::<4>(&stack, pow2, out),
                _ => {
                    let u = &stack[..d];
                    out.extend_ones((0u32..).zip(self.shift.chunks_exact(d)).map(|(k, shifts)| {
                        let coords =
                            u.iter().zip(shifts).map(|(&ui, &si)| ((ui + si) as u32).min(self.intervals));
                        self.fold(hash_coords(k, coords), pow2)
                    }));
                }
            }
            return;
        }
        for k in 0..n {
            let index = if self.hash > 0 {
                let h = hash_coords(k, (0..d).map(|i| coord(k, i)));
                if pow2 {
                    h & u64::from(self.hash - 1)
                } else {
                    h % u64::from(self.hash)
                }
            } else {
                let mut flat = 0u64;
                for i in 0..d {
                    flat = flat * u64::from(self.intervals + 1) + u64::from(coord(k, i));
                }
                u64::from(k) * self.per_tiling + flat
            };
            out.push(index as u32, 1.0);
        }
    }

    fn step_scale(&self) -> f64 {
        1.0 / f64::from(self.tilings)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn vars(d: usize) -> Vec<StateVar> {
        crate::approx::test_vars(d, -1.0, 1.0)
    }

    #[test]
    fn one_tile_per_tiling_and_generalisation() {
        // Sutton & Barto (2018), Section 9.5.4: nearby points share most tiles,
        // distant points share none.
        let t = TileCoder::new(&vars(2), 8, 8, 0).unwrap();
        assert_eq!(t.dim(), 8 * 81);
        let mut a = Sparse::default();
        let mut b = Sparse::default();
        let mut c = Sparse::default();
        t.compute(Obs { values: &[0.10, 0.20], id: None }, &mut a);
        t.compute(Obs { values: &[0.11, 0.21], id: None }, &mut b);
        t.compute(Obs { values: &[-0.9, 0.9], id: None }, &mut c);
        assert_eq!(a.idx.len(), 8);
        let shared = |x: &Sparse, y: &Sparse| x.idx.iter().filter(|i| y.idx.contains(i)).count();
        assert!(shared(&a, &b) >= 6);
        assert_eq!(shared(&a, &c), 0);
        // Each tiling's index lies in its own block.
        for (k, &i) in a.idx.iter().enumerate() {
            assert_eq!(i as usize / 81, k);
        }
    }

    #[test]
    fn hashing_stays_in_range_and_clamps() {
        let t = TileCoder::new(&vars(4), 8, 8, 4096).unwrap();
        assert_eq!(t.dim(), 4096);
        let mut a = Sparse::default();
        t.compute(Obs { values: &[5.0, -7.0, f64::NAN, 0.3], id: None }, &mut a);
        assert!(a.idx.iter().all(|&i| (i as usize) < 4096));
        assert!(TileCoder::new(&vars(4), 8, 64, 0).is_err());
        assert!(TileCoder::new(&vars(2), 0, 8, 0).is_err());
    }

    #[test]
    fn the_unclamped_fast_path_gives_the_clamped_tiles_at_the_extremes() {
        // The hashed fast path truncates without `.min(intervals)`; its indices
        // must equal hashing the clamped coordinates (the definition) for the
        // largest tilings and intervals the settings allow, at and just inside
        // the range's ends. Common practice, no source.
        let values = [-1.0, -1.0 + 1e-15, -0.5, 0.0, 1.0 - 1e-15, 1.0 - f64::EPSILON, 1.0, 3.0];
        for (tilings, intervals) in [(64, 64), (64, 1), (1, 64), (7, 63), (8, 8)] {
            for d in 1..=4 {
                let t = TileCoder::new(&vars(d), tilings, intervals, 16).unwrap();
                assert_eq!(t.dim(), 16, "hashed");
                for &x in &values {
                    let obs: Vec<f64> = (0..d).map(|i| if i % 2 == 0 { x } else { -x }).collect();
                    let mut got = Sparse::default();
                    t.compute(Obs { values: &obs, id: None }, &mut got);
                    let want: Vec<u32> = (0..tilings)
                        .map(|k| {
                            let coords = (0..d).map(|i| {
                                let u = ((obs[i] + 1.0) * f64::from(intervals) / 2.0)
                                    .clamp(0.0, f64::from(intervals));
                                ((u + t.shift[k as usize * d + i]).floor() as u32).min(intervals)
                            });
                            (hash_coords(k, coords) % 16) as u32
                        })
                        .collect();
                    assert_eq!(got.idx, want, "tilings {tilings}, intervals {intervals}, d {d}, x {x}");
                }
            }
        }
    }
}
