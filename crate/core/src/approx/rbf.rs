//! Gaussian radial basis functions on a grid.
//!
//! Each state variable is scaled to `z ∈ [0, 1]` over its declared range
//! (clamped); `centers` centres per variable sit at `k / (centers − 1)`, and
//! feature `i` is `exp(−‖z − c_i‖² / (2σ²))` with `σ = width / (centers − 1)`
//! (Sutton & Barto 2018, Section 9.5.5). The features are smooth, so
//! [`Rbf`] also gives their derivatives.

use super::{unit, FeatureError, Features, Obs, Sparse, MAX_DENSE_FEATURES};
use crate::task::StateVar;

/// Room for the per-variable factors: at most 65536 features means
/// `d · centers ≤ 96` for 2 ≤ centers ≤ 32.
const MAX_FACTORS: usize = 128;

/// Gaussian radial basis functions on a regular grid of centres.
#[derive(Clone, Debug)]
pub struct Rbf {
    low: Vec<f64>,
    high: Vec<f64>,
    m: usize,
    sigma: f64,
    n: usize,
    scale: f64,
}

impl Rbf {
    /// The grid of `centers` per variable with relative `width`, or names the
    /// setting that is out of range.
    pub fn new(vars: &[StateVar], centers: u32, width: f64) -> Result<Self, FeatureError> {
        if crate::settings::check_int("learner.features.centers", u64::from(centers)).is_some() {
            return Err(FeatureError::Invalid(
                "centers".into(),
                format!("must be in [2, 32], got {centers}"),
            ));
        }
        if let Some(m) = crate::settings::check("learner.features.width", width) {
            return Err(FeatureError::Invalid("width".into(), m));
        }
        let d = vars.len() as u32;
        let n = u64::from(centers).checked_pow(d).unwrap_or(u64::MAX);
        if n > MAX_DENSE_FEATURES {
            return Err(FeatureError::Invalid(
                "centers".into(),
                format!("centers^{d} = {n} features is more than {MAX_DENSE_FEATURES}; use fewer centres or tiles"),
            ));
        }
        let m = centers as usize;
        let sigma = width / (m - 1) as f64;
        // E‖x‖² for z uniform on the box factorises over variables:
        // Σ_k ∫₀¹ exp(−(z − c_k)²/σ²) dz = Σ_k (σ√π/2)(erf((1 − c_k)/σ) + erf(c_k/σ)).
        let per_var: f64 = (0..m)
            .map(|k| {
                let c = k as f64 / (m - 1) as f64;
                sigma * f64::sqrt(core::f64::consts::PI) / 2.0
                    * (libm::erf((1.0 - c) / sigma) + libm::erf(c / sigma))
            })
            .sum();
        let expected_sq = (0..d).fold(1.0, |acc, _| acc * per_var);
        Ok(Rbf {
            low: vars.iter().map(|v| v.low).collect(),
            high: vars.iter().map(|v| v.high).collect(),
            m,
            sigma,
            n: n as usize,
            scale: 1.0 / expected_sq,
        })
    }

    /// Per-variable factors `e[j * m + k] = exp(−(z_j − c_k)²/(2σ²))`, and
    /// the scaled positions and their derivatives.
    fn factors(&self, values: &[f64], e: &mut [f64], z: &mut [f64], dz: &mut [f64]) {
        let m = self.m;
        for j in 0..self.low.len() {
            (z[j], dz[j]) = unit(values[j], self.low[j], self.high[j]);
            for k in 0..m {
                let c = k as f64 / (m - 1) as f64;
                let t = (z[j] - c) / self.sigma;
                e[j * m + k] = libm::exp(-0.5 * t * t);
            }
        }
    }
}

impl Features for Rbf {
    fn dim(&self) -> usize {
        self.n
    }

    fn max_active(&self) -> usize {
        self.n
    }

    fn compute(&self, obs: Obs<'_>, out: &mut Sparse) {
        out.clear();
        let d = self.low.len();
        let mut e = [0.0; MAX_FACTORS];
        let (mut z, mut dz) = ([0.0; MAX_FACTORS], [0.0; MAX_FACTORS]);
        self.factors(obs.values, &mut e, &mut z, &mut dz);
        for i in 0..self.n {
            let mut rest = i;
            let mut v = 1.0;
            for j in (0..d).rev() {
                v *= e[j * self.m + rest % self.m];
                rest /= self.m;
            }
            out.push(i as u32, v);
        }
    }

    /// 1 / E‖x‖² for states uniform over the box (computed exactly with erf).
    fn step_scale(&self) -> f64 {
        self.scale
    }

    fn input_grad(&self, values: &[f64], w: &[f64], out: &mut [f64]) -> bool {
        let d = self.low.len();
        let m = self.m;
        let mut e = [0.0; MAX_FACTORS];
        let (mut z, mut dz) = ([0.0; MAX_FACTORS], [0.0; MAX_FACTORS]);
        self.factors(values, &mut e, &mut z, &mut dz);
        out[..d].iter_mut().for_each(|o| *o = 0.0);
        let s2 = self.sigma * self.sigma;
        let mut ks = [0usize; MAX_FACTORS];
        for i in 0..self.n {
            let mut rest = i;
            let mut v = 1.0;
            for j in (0..d).rev() {
                ks[j] = rest % m;
                v *= e[j * m + ks[j]];
                rest /= m;
            }
            for j in 0..d {
                let c = ks[j] as f64 / (m - 1) as f64;
                out[j] += w[i] * v * (-(z[j] - c) / s2) * dz[j];
            }
        }
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn vars(d: usize) -> Vec<StateVar> {
        crate::approx::test_vars(d, 0.0, 4.0)
    }

    #[test]
    fn peak_at_a_centre_and_count() {
        // Sutton & Barto (2018), Section 9.5.5: a feature is 1 at its centre and
        // falls off as a Gaussian of the distance.
        let f = Rbf::new(&vars(2), 3, 1.0).unwrap();
        assert_eq!(f.dim(), 9);
        let mut x = Sparse::default();
        f.compute(Obs { values: &[2.0, 4.0], id: None }, &mut x); // z = (0.5, 1.0): centre (1, 2)
        assert!((x.val[5] - 1.0).abs() < 1e-15);
        // Neighbour centre (0.5, 0.5) is 0.5 away in z with σ = 0.5: exp(−0.5).
        assert!((x.val[4] - libm::exp(-0.5)).abs() < 1e-15);
        assert!(Rbf::new(&vars(2), 1, 1.0).is_err());
        assert!(Rbf::new(&vars(9), 8, 1.0).is_err());
    }

    #[test]
    fn input_gradient_matches_finite_differences() {
        // Common practice, no source.
        let f = Rbf::new(&vars(2), 4, 0.8).unwrap();
        let w: Vec<f64> = (0..f.dim()).map(|i| libm::cos(i as f64 * 0.7)).collect();
        let value = |s: &[f64]| {
            let mut x = Sparse::default();
            f.compute(Obs { values: s, id: None }, &mut x);
            x.val.iter().zip(&w).map(|(a, b)| a * b).sum::<f64>()
        };
        let s = [1.1, 2.9];
        let mut g = [0.0; 2];
        assert!(f.input_grad(&s, &w, &mut g));
        for j in 0..2 {
            let h = 1e-6;
            let (mut p, mut q) = (s, s);
            p[j] += h;
            q[j] -= h;
            let fd = (value(&p) - value(&q)) / (2.0 * h);
            assert!((fd - g[j]).abs() < 1e-7, "{j}: {fd} vs {}", g[j]);
        }
    }
}
