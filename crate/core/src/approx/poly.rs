//! Polynomial features.
//!
//! Each state variable is scaled to `z ∈ [−1, 1]` over its declared range
//! (clamped), and the features are every monomial `Π_j z_j^{e_j}` with total
//! degree `Σ e_j ≤ degree`, the constant first (Sutton & Barto 2018, Section
//! 9.5.1). Degree 2 over (state, action) represents the action values of a
//! linear-quadratic regulator exactly, which the deterministic learner's
//! check relies on. The features are smooth, so [`Poly`] also gives their
//! derivatives.

use super::{unit, FeatureError, Features, Obs, Sparse, MAX_DENSE_FEATURES};
use crate::task::StateVar;

/// Most state variables polynomial features accept.
pub const MAX_VARS: usize = 64;

/// All monomials up to a total degree.
#[derive(Clone, Debug)]
pub struct Poly {
    low: Vec<f64>,
    high: Vec<f64>,
    /// Exponents, flat: `exps[i * d + j]`.
    exps: Vec<u32>,
    n: usize,
    scale: f64,
}

fn enumerate(d: usize, left: u32, cur: &mut Vec<u32>, out: &mut Vec<u32>) {
    if cur.len() == d {
        out.extend_from_slice(cur);
        return;
    }
    for e in 0..=left {
        cur.push(e);
        enumerate(d, left - e, cur, out);
        cur.pop();
    }
}

impl Poly {
    /// The monomials of degree at most `degree` over `vars`, or names the
    /// setting that is out of range.
    pub fn new(vars: &[StateVar], degree: u32) -> Result<Self, FeatureError> {
        if let Some(m) = crate::settings::check_int("learner.features.degree", u64::from(degree)) {
            return Err(FeatureError::Invalid("degree".into(), m));
        }
        let d = vars.len();
        if d > MAX_VARS {
            return Err(FeatureError::Invalid(
                "kind".into(),
                format!("polynomial features take at most {MAX_VARS} variables, the task has {d}"),
            ));
        }
        // C(d + degree, degree) monomials.
        let mut n: u64 = 1;
        for k in 1..=u64::from(degree) {
            n = n * (d as u64 + k) / k;
            if n > MAX_DENSE_FEATURES {
                break;
            }
        }
        if n > MAX_DENSE_FEATURES {
            return Err(FeatureError::Invalid(
                "degree".into(),
                format!("degree {degree} over {d} variables gives more than {MAX_DENSE_FEATURES} features"),
            ));
        }
        let mut exps = Vec::with_capacity(n as usize * d);
        let mut all = Vec::new();
        enumerate(d, degree, &mut Vec::new(), &mut all);
        // Order by total degree (constant first), then as enumerated.
        for deg in 0..=degree {
            for m in all.chunks(d.max(1)) {
                if d == 0 || m.iter().sum::<u32>() == deg {
                    exps.extend_from_slice(m);
                }
            }
            if d == 0 {
                break;
            }
        }
        let n = exps.len().checked_div(d).unwrap_or(1);
        // E‖x‖² for z uniform on [−1, 1]^d: E z^{2e} = 1 / (2e + 1).
        let expected_sq: f64 = (0..n)
            .map(|i| {
                exps[i * d..(i + 1) * d].iter().map(|&e| 1.0 / (2.0 * f64::from(e) + 1.0)).product::<f64>()
            })
            .sum();
        Ok(Poly {
            low: vars.iter().map(|v| v.low).collect(),
            high: vars.iter().map(|v| v.high).collect(),
            exps,
            n,
            scale: 1.0 / expected_sq,
        })
    }

    fn scaled(&self, values: &[f64], z: &mut [f64], dz: &mut [f64]) {
        for j in 0..self.low.len() {
            let (u, du) = unit(values[j], self.low[j], self.high[j]);
            z[j] = 2.0 * u - 1.0;
            dz[j] = 2.0 * du;
        }
    }
}

fn pow(z: f64, e: u32) -> f64 {
    (0..e).fold(1.0, |acc, _| acc * z)
}

impl Features for Poly {
    fn dim(&self) -> usize {
        self.n
    }

    fn max_active(&self) -> usize {
        self.n
    }

    fn compute(&self, obs: Obs<'_>, out: &mut Sparse) {
        out.clear();
        let d = self.low.len();
        let (mut z, mut dz) = ([0.0; MAX_VARS], [0.0; MAX_VARS]);
        self.scaled(obs.values, &mut z, &mut dz);
        for i in 0..self.n {
            let e = &self.exps[i * d..(i + 1) * d];
            let v = (0..d).fold(1.0, |acc, j| if e[j] == 0 { acc } else { acc * pow(z[j], e[j]) });
            out.push(i as u32, v);
        }
    }

    /// 1 / E‖x‖² for states uniform over the box.
    fn step_scale(&self) -> f64 {
        self.scale
    }

    fn input_grad(&self, values: &[f64], w: &[f64], out: &mut [f64]) -> bool {
        let d = self.low.len();
        let (mut z, mut dz) = ([0.0; MAX_VARS], [0.0; MAX_VARS]);
        self.scaled(values, &mut z, &mut dz);
        out[..d].iter_mut().for_each(|o| *o = 0.0);
        for i in 0..self.n {
            let e = &self.exps[i * d..(i + 1) * d];
            for j in 0..d {
                if e[j] == 0 {
                    continue;
                }
                let mut v = f64::from(e[j]) * pow(z[j], e[j] - 1);
                for k in 0..d {
                    if k != j && e[k] > 0 {
                        v *= pow(z[k], e[k]);
                    }
                }
                out[j] += w[i] * v * dz[j];
            }
        }
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn vars(d: usize) -> Vec<StateVar> {
        crate::approx::test_vars(d, -1.0, 1.0)
    }

    #[test]
    fn monomials_of_degree_two_in_two_variables() {
        // Sutton & Barto (2018), Section 9.5.1: with two variables and degree 2
        // the features are 1, s2, s1, s2², s1 s2, s1² (six of them).
        let p = Poly::new(&vars(2), 2).unwrap();
        assert_eq!(p.dim(), 6);
        let mut x = Sparse::default();
        p.compute(Obs { values: &[0.5, -0.25], id: None }, &mut x);
        let mut got = x.val.clone();
        got.sort_by(f64::total_cmp);
        let mut want = vec![1.0, 0.5, -0.25, 0.25, -0.125, 0.0625];
        want.sort_by(f64::total_cmp);
        assert_eq!(got, want);
        assert_eq!(x.val[0], 1.0);
        assert!(Poly::new(&vars(2), 0).is_err());
    }

    #[test]
    fn input_gradient_matches_finite_differences() {
        // Common practice, no source.
        let p = Poly::new(&vars(3), 3).unwrap();
        let w: Vec<f64> = (0..p.dim()).map(|i| libm::sin(i as f64 + 0.5)).collect();
        let value = |s: &[f64]| {
            let mut x = Sparse::default();
            p.compute(Obs { values: s, id: None }, &mut x);
            x.val.iter().zip(&w).map(|(a, b)| a * b).sum::<f64>()
        };
        let s = [0.2, -0.6, 0.45];
        let mut g = [0.0; 3];
        assert!(p.input_grad(&s, &w, &mut g));
        for j in 0..3 {
            let h = 1e-6;
            let (mut a, mut b) = (s, s);
            a[j] += h;
            b[j] -= h;
            let fd = (value(&a) - value(&b)) / (2.0 * h);
            assert!((fd - g[j]).abs() < 1e-7, "{j}: {fd} vs {}", g[j]);
        }
    }
}
