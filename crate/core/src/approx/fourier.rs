//! The Fourier cosine basis.
//!
//! Konidaris, Osentoski & Thomas (2011), "Value function approximation in
//! reinforcement learning using the Fourier basis", AAAI: each state
//! variable is scaled to `z ∈ [0, 1]` over its declared range (clamped), and
//! the features are `cos(π c · z)` for every integer vector `c` with entries
//! in `0..=order` (the "full" basis, `(order + 1)^d` features, the first one
//! constant). The features are smooth in the state, so [`Fourier`] also
//! gives their derivatives (used by the deterministic learner's critic).

use super::{unit, FeatureError, Features, Obs, Sparse, MAX_DENSE_FEATURES};
use crate::task::StateVar;

/// The full Fourier basis of a given order.
#[derive(Clone, Debug)]
pub struct Fourier {
    low: Vec<f64>,
    high: Vec<f64>,
    /// Coefficient vectors, flat: `coef[i * d + j]`.
    coef: Vec<u32>,
    n: usize,
}

impl Fourier {
    /// The basis of `order` over `vars`, or names the setting that is out of range.
    pub fn new(vars: &[StateVar], order: u32) -> Result<Self, FeatureError> {
        if let Some(m) = crate::settings::check_int("learner.features.order", u64::from(order)) {
            return Err(FeatureError::Invalid("order".into(), m));
        }
        let d = vars.len() as u32;
        let n = u64::from(order + 1).checked_pow(d).unwrap_or(u64::MAX);
        if n > MAX_DENSE_FEATURES {
            return Err(FeatureError::Invalid(
                "order".into(),
                format!(
                    "(order + 1)^{d} = {n} features is more than {MAX_DENSE_FEATURES}; lower the order or use tiles"
                ),
            ));
        }
        let n = n as usize;
        let d = d as usize;
        let mut coef = vec![0u32; n * d];
        for i in 0..n {
            // Mixed-radix digits of i, the last variable fastest.
            let mut rest = i;
            for j in (0..d).rev() {
                coef[i * d + j] = (rest % (order as usize + 1)) as u32;
                rest /= order as usize + 1;
            }
        }
        Ok(Fourier {
            low: vars.iter().map(|v| v.low).collect(),
            high: vars.iter().map(|v| v.high).collect(),
            coef,
            n,
        })
    }

    #[inline]
    fn arg(&self, i: usize, z: &[f64]) -> f64 {
        let d = self.low.len();
        let c = &self.coef[i * d..(i + 1) * d];
        core::f64::consts::PI * c.iter().zip(z).map(|(&c, &z)| f64::from(c) * z).sum::<f64>()
    }
}

/// Most state variables the stack buffers below hold; a Fourier basis over
/// more variables than this has more than 65536 features unless its order
/// is 0.
const MAX_VARS: usize = 64;

impl Features for Fourier {
    fn dim(&self) -> usize {
        self.n
    }

    fn max_active(&self) -> usize {
        self.n
    }

    fn compute(&self, obs: Obs<'_>, out: &mut Sparse) {
        out.clear();
        let d = self.low.len().min(MAX_VARS);
        let mut z = [0.0; MAX_VARS];
        for j in 0..d {
            z[j] = unit(obs.values[j], self.low[j], self.high[j]).0;
        }
        for i in 0..self.n {
            out.push(i as u32, libm::cos(self.arg(i, &z[..d])));
        }
    }

    /// 1 / E‖x‖² for states uniform over the box: the constant feature
    /// contributes 1 and every other feature 1/2.
    fn step_scale(&self) -> f64 {
        2.0 / (self.n as f64 + 1.0)
    }

    fn input_grad(&self, values: &[f64], w: &[f64], out: &mut [f64]) -> bool {
        let d = self.low.len().min(MAX_VARS);
        let mut z = [0.0; MAX_VARS];
        let mut dz = [0.0; MAX_VARS];
        for j in 0..d {
            (z[j], dz[j]) = unit(values[j], self.low[j], self.high[j]);
            out[j] = 0.0;
        }
        for i in 0..self.n {
            let s = -libm::sin(self.arg(i, &z[..d])) * core::f64::consts::PI * w[i];
            for j in 0..d {
                out[j] += s * f64::from(self.coef[i * d + j]) * dz[j];
            }
        }
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn vars(d: usize) -> Vec<StateVar> {
        crate::approx::test_vars(d, -2.0, 2.0)
    }

    #[test]
    fn basis_values_and_count() {
        // Konidaris, Osentoski & Thomas (2011), Section 3: (n + 1)^d features,
        // c = 0 gives the constant 1, and feature c at z is cos(π c·z).
        let f = Fourier::new(&vars(2), 3).unwrap();
        assert_eq!(f.dim(), 16);
        let mut x = Sparse::default();
        f.compute(Obs { values: &[0.0, 1.0], id: None }, &mut x); // z = (0.5, 0.75)
        assert_eq!(x.val[0], 1.0);
        // c = (1, 2) is index 1 * 4 + 2 = 6.
        let want = libm::cos(core::f64::consts::PI * (0.5 + 1.5));
        assert!((x.val[6] - want).abs() < 1e-15);
        assert!(Fourier::new(&vars(5), 9).is_err());
    }

    #[test]
    fn input_gradient_matches_finite_differences() {
        // Common practice, no source: analytic derivative against central
        // differences of w·x(s).
        let f = Fourier::new(&vars(2), 2).unwrap();
        let w: Vec<f64> = (0..f.dim()).map(|i| libm::sin(i as f64 * 1.3)).collect();
        let value = |s: &[f64]| {
            let mut x = Sparse::default();
            f.compute(Obs { values: s, id: None }, &mut x);
            x.val.iter().zip(&w).map(|(a, b)| a * b).sum::<f64>()
        };
        let s = [0.3, -0.7];
        let mut g = [0.0; 2];
        assert!(f.input_grad(&s, &w, &mut g));
        for j in 0..2 {
            let h = 1e-6;
            let (mut p, mut m) = (s, s);
            p[j] += h;
            m[j] -= h;
            let fd = (value(&p) - value(&m)) / (2.0 * h);
            assert!((fd - g[j]).abs() < 1e-7, "{j}: {fd} vs {}", g[j]);
        }
    }
}
