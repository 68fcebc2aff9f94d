//! Policies.
//!
//! [`Softmax`] is the discrete policy: action preferences are linear in the
//! features, `h(s, a) = θ_a · x(s)`, and `π(a|s) ∝ exp h(s, a)`. Its score is
//! `∇_{θ_b} log π(a|s) = x(s) (1[a = b] − π(b|s))`.

use crate::approx::{Linear, Sparse};
use crate::rng::Stream;

/// A softmax policy over linear action preferences.
#[derive(Clone, Debug)]
pub struct Softmax {
    /// Preference weights, one block per action.
    pub prefs: Linear,
    probs: Vec<f64>,
}

impl Softmax {
    /// A uniform policy (all preferences zero).
    pub fn new(dim: usize, actions: usize) -> Self {
        Softmax { prefs: Linear::zeros(dim, actions), probs: vec![0.0; actions] }
    }

    /// Number of actions.
    pub fn actions(&self) -> usize {
        self.probs.len()
    }

    /// Computes π(·|s) for features `x`; returns the probabilities.
    pub fn probabilities(&mut self, x: &Sparse) -> &[f64] {
        let n = self.probs.len();
        let mut max = f64::NEG_INFINITY;
        for a in 0..n {
            let h = self.prefs.value(a, x);
            self.probs[a] = h;
            if h > max {
                max = h;
            }
        }
        let mut total = 0.0;
        for p in self.probs.iter_mut() {
            *p = libm::exp(*p - max);
            total += *p;
        }
        for p in self.probs.iter_mut() {
            *p /= total;
        }
        &self.probs
    }

    /// The probabilities computed by the last call to [`Softmax::probabilities`].
    pub fn last_probabilities(&self) -> &[f64] {
        &self.probs
    }

    /// Samples an action from the last computed probabilities.
    pub fn sample(&self, rng: &mut Stream) -> usize {
        rng.categorical(&self.probs)
    }

    /// Entropy (nats) of the last computed probabilities.
    pub fn entropy(&self) -> f64 {
        -self.probs.iter().filter(|&&p| p > 0.0).map(|&p| p * libm::log(p)).sum::<f64>()
    }

    /// Adds `step · ∇ log π(a|s)` to the preferences, using the last computed
    /// probabilities (which must be those at `x`). Returns ‖∇ log π(a|s)‖.
    pub fn ascend_log_prob(&mut self, x: &Sparse, a: usize, step: f64) -> f64 {
        let mut sq = 0.0;
        for b in 0..self.probs.len() {
            let coef = if a == b { 1.0 } else { 0.0 } - self.probs[b];
            sq += coef * coef;
            self.prefs.add(b, step * coef, x);
        }
        libm::sqrt(sq * x.norm_sq())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn score_matches_finite_difference() {
        // Common practice, no source: the analytic score of a softmax equals the
        // central finite difference of log π.
        let mut x = Sparse::default();
        x.push(0, 1.0);
        x.push(2, 0.5);
        let mut pi = Softmax::new(3, 3);
        for (i, w) in pi.prefs.w.iter_mut().enumerate() {
            *w = (i as f64 * 0.37).sin();
        }
        let a = 1;
        let base = pi.clone();
        let eps = 1e-6;
        for j in 0..base.prefs.w.len() {
            let mut plus = base.clone();
            plus.prefs.w[j] += eps;
            let mut minus = base.clone();
            minus.prefs.w[j] -= eps;
            let fd =
                (libm::log(plus.probabilities(&x)[a]) - libm::log(minus.probabilities(&x)[a])) / (2.0 * eps);
            // Analytic: coefficient of weight j = (1[a=b] − π_b) x_i.
            let (b, i) = (j / 3, j % 3);
            let mut p = base.clone();
            let probs = p.probabilities(&x).to_vec();
            let xi = x.idx.iter().zip(&x.val).find(|(&k, _)| k as usize == i).map_or(0.0, |(_, &v)| v);
            let analytic = (if a == b { 1.0 } else { 0.0 } - probs[b]) * xi;
            assert!((fd - analytic).abs() < 1e-8, "weight {j}: {fd} vs {analytic}");
        }
    }

    #[test]
    fn probabilities_sum_to_one_and_entropy_of_uniform() {
        let mut pi = Softmax::new(1, 4);
        let mut x = Sparse::default();
        x.push(0, 1.0);
        let p = pi.probabilities(&x).to_vec();
        assert!((p.iter().sum::<f64>() - 1.0).abs() < 1e-15);
        assert!((pi.entropy() - libm::log(4.0)).abs() < 1e-15);
    }
}
