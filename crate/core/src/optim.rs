//! Optimizers: how an update direction becomes a change of the weights.
//!
//! Learners express every update as an *ascent direction* `d` in weight
//! space (for a critic, `δ ∇V`; for an actor, `A ∇ log π`), gathered in a
//! [`Grad`] (`approx::grad`: a dense buffer that remembers which entries were
//! touched, so a sparse feature vector costs only its own entries). An [`Optimizer`] turns
//! it into a change of the weights: plain stochastic gradient steps
//! `w ← w + α d`, or Adam (Kingma & Ba 2015, Algorithm 1), optionally after
//! scaling `d` down to a largest Euclidean norm (gradient-norm clipping,
//! Pascanu, Mikolov & Bengio 2013). [`Trainable`] bundles an approximator with
//! its optimizer state and step size; the actor and the critic each own one,
//! so their step sizes are separate. Nothing here allocates after
//! construction.

use serde::{Deserialize, Serialize};

use crate::approx::{Approx, Grad, Obs};

/// The optimizer kinds.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OptimKind {
    /// Stochastic gradient steps `w ← w + α d`.
    #[default]
    Sgd,
    /// Adam (Kingma & Ba 2015) with bias correction.
    Adam,
}

/// Optimizer settings (the `optimizer` object of a learner setup).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct OptimizerConfig {
    /// `"sgd"` or `"adam"`. Default `"sgd"`.
    #[serde(default)]
    pub kind: OptimKind,
    /// Largest Euclidean norm of an update direction; longer ones are scaled
    /// down to it. `null` (the default) means no clipping; otherwise in
    /// (0, 1e6].
    #[serde(default)]
    pub clip: Option<f64>,
    /// Adam's first-moment decay, in [0, 1). Default 0.9.
    #[serde(default = "default_beta1")]
    pub beta1: f64,
    /// Adam's second-moment decay, in [0, 1). Default 0.999.
    #[serde(default = "default_beta2")]
    pub beta2: f64,
    /// Adam's denominator offset, in (0, 1]. Default 1e-8.
    #[serde(default = "default_epsilon")]
    pub epsilon: f64,
}

fn default_beta1() -> f64 {
    0.9
}
fn default_beta2() -> f64 {
    0.999
}
fn default_epsilon() -> f64 {
    1e-8
}

impl Default for OptimizerConfig {
    fn default() -> Self {
        OptimizerConfig {
            kind: OptimKind::Sgd,
            clip: None,
            beta1: default_beta1(),
            beta2: default_beta2(),
            epsilon: default_epsilon(),
        }
    }
}

impl OptimizerConfig {
    /// Every out-of-range setting as `(field, message)`, fields relative to
    /// the `optimizer` object.
    pub fn check(&self) -> Vec<(String, String)> {
        let mut errs = Vec::new();
        if let Some(c) = self.clip {
            if !crate::settings::range("learner.optimizer.clip").contains(c) {
                errs.push(("clip".into(), format!("must be null (no clipping) or in (0, 1e6], got {c}")));
            }
        }
        for (name, v) in [("beta1", self.beta1), ("beta2", self.beta2), ("epsilon", self.epsilon)] {
            if let Some(m) = crate::settings::check(&format!("learner.optimizer.{name}"), v) {
                errs.push((name.into(), m));
            }
        }
        errs
    }
}

/// Optimizer state for one set of weights.
#[derive(Clone, Debug)]
pub struct Optimizer {
    kind: OptimKind,
    clip: Option<f64>,
    beta1: f64,
    beta2: f64,
    epsilon: f64,
    m: Vec<f64>,
    v: Vec<f64>,
    beta1_t: f64,
    beta2_t: f64,
}

impl Optimizer {
    /// State for `n` weights.
    pub fn new(cfg: &OptimizerConfig, n: usize) -> Self {
        let adam = cfg.kind == OptimKind::Adam;
        Optimizer {
            kind: cfg.kind,
            clip: cfg.clip,
            beta1: cfg.beta1,
            beta2: cfg.beta2,
            epsilon: cfg.epsilon,
            m: if adam { vec![0.0; n] } else { Vec::new() },
            v: if adam { vec![0.0; n] } else { Vec::new() },
            beta1_t: 1.0,
            beta2_t: 1.0,
        }
    }

    /// Plain SGD without clipping: the update can be applied directly,
    /// without gathering a [`Grad`].
    pub fn is_plain_sgd(&self) -> bool {
        self.kind == OptimKind::Sgd && self.clip.is_none()
    }

    /// Applies `step · clip(d)` (SGD) or an Adam step along `d` to `w`, then
    /// clears `d`. Returns the norm of `d` before clipping.
    pub fn apply(&mut self, w: &mut [f64], d: &mut Grad, step: f64) -> f64 {
        let norm = d.norm();
        let factor = match self.clip {
            Some(c) if norm > c => c / norm,
            _ => 1.0,
        };
        match self.kind {
            OptimKind::Sgd => {
                let s = step * factor;
                d.for_each_touched(|i| w[i] += s * d.g[i]);
            }
            OptimKind::Adam => {
                self.beta1_t *= self.beta1;
                self.beta2_t *= self.beta2;
                let (b1, b2) = (self.beta1, self.beta2);
                let c1 = 1.0 - self.beta1_t;
                let c2 = 1.0 - self.beta2_t;
                for i in 0..w.len() {
                    let g = d.g[i] * factor;
                    self.m[i] = b1 * self.m[i] + (1.0 - b1) * g;
                    self.v[i] = b2 * self.v[i] + (1.0 - b2) * g * g;
                    let mh = self.m[i] / c1;
                    let vh = self.v[i] / c2;
                    w[i] += step * mh / (f64::sqrt(vh) + self.epsilon);
                }
            }
        }
        d.clear();
        norm
    }
}

/// An approximator with its optimizer state, its gradient buffer and its
/// step size: one per actor or critic.
pub struct Trainable {
    /// The function being learned.
    pub net: Box<dyn Approx>,
    opt: Optimizer,
    grad: Grad,
    step: f64,
}

impl Trainable {
    /// Wraps `net`; the step size is `step` times the approximator's step
    /// scale (1 / number of active tiles for tile coding), for SGD and Adam
    /// alike.
    pub fn new(net: Box<dyn Approx>, cfg: &OptimizerConfig, step: f64) -> Self {
        let n = net.params().len();
        let step = step * net.step_scale();
        Trainable { opt: Optimizer::new(cfg, n), grad: Grad::new(n), step, net }
    }

    /// The effective step size.
    pub fn step(&self) -> f64 {
        self.step
    }

    /// The outputs at `obs`.
    pub fn eval(&mut self, obs: Obs<'_>) -> &[f64] {
        self.net.eval(obs)
    }

    /// One update along `signal · Σ_k coef[k] ∇ out_k(obs)`; returns the norm
    /// of that direction.
    pub fn ascend(&mut self, obs: Obs<'_>, coef: &[f64], signal: f64) -> f64 {
        if self.opt.is_plain_sgd() {
            if let Some(n) = self.net.sgd_step(obs, coef, self.step * signal) {
                return n * signal.abs();
            }
        }
        self.net.accumulate(obs, coef, signal, &mut self.grad);
        self.opt.apply(self.net.params_mut(), &mut self.grad, self.step)
    }

    /// Adds `signal · Σ_k coef[k] ∇ out_k(obs)` to the pending direction
    /// (for updates over a batch of states; see [`Trainable::apply`]).
    pub fn accumulate(&mut self, obs: Obs<'_>, coef: &[f64], signal: f64) {
        self.net.accumulate(obs, coef, signal, &mut self.grad);
    }

    /// The pending direction.
    pub fn pending(&self) -> &Grad {
        &self.grad
    }

    /// Mutable access to the pending direction.
    pub fn pending_mut(&mut self) -> &mut Grad {
        &mut self.grad
    }

    /// Applies the pending direction as one optimizer step and clears it;
    /// returns its norm.
    pub fn apply(&mut self) -> f64 {
        self.opt.apply(self.net.params_mut(), &mut self.grad, self.step)
    }

    /// Whether every weight is finite.
    pub fn is_finite(&self) -> bool {
        self.net.params().iter().all(|v| v.is_finite())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grad_tracks_touched_entries() {
        let mut g = Grad::new(10);
        g.add(3, 1.0);
        g.add(7, 2.0);
        g.add(3, 2.0);
        assert_eq!(g.norm(), f64::sqrt(9.0 + 4.0));
        let mut h = Grad::new(10);
        h.add_scaled(2.0, &g);
        assert_eq!(h.values()[3], 6.0);
        assert_eq!(g.dot(&h), 3.0 * 6.0 + 2.0 * 4.0);
        g.clear();
        assert!(g.values().iter().all(|&v| v == 0.0));
        assert_eq!(g.norm(), 0.0);
    }

    #[test]
    fn clipping_limits_the_step_length() {
        // Pascanu, Mikolov & Bengio (2013), Algorithm 1: a direction longer than
        // the threshold is rescaled to the threshold.
        let cfg = OptimizerConfig { clip: Some(1.0), ..OptimizerConfig::default() };
        let mut opt = Optimizer::new(&cfg, 2);
        let mut w = [0.0, 0.0];
        let mut g = Grad::new(2);
        g.add(0, 3.0);
        g.add(1, 4.0);
        let n = opt.apply(&mut w, &mut g, 1.0);
        assert_eq!(n, 5.0);
        assert!((w[0] - 0.6).abs() < 1e-15 && (w[1] - 0.8).abs() < 1e-15);
    }

    #[test]
    fn adam_first_step_has_the_step_size_as_length_per_weight() {
        // Kingma & Ba (2015), Section 2.1: with bias correction the first
        // effective step is ±α per weight (up to ε), whatever the gradient scale.
        let cfg = OptimizerConfig { kind: OptimKind::Adam, ..OptimizerConfig::default() };
        let mut opt = Optimizer::new(&cfg, 3);
        let mut w = [0.0; 3];
        let mut g = Grad::new(3);
        g.add(0, 1e-3);
        g.add(1, -250.0);
        opt.apply(&mut w, &mut g, 0.01);
        assert!((w[0] - 0.01).abs() < 1e-7, "{w:?}");
        assert!((w[1] + 0.01).abs() < 1e-9, "{w:?}");
        assert_eq!(w[2], 0.0);
    }

    #[test]
    fn adam_minimises_a_quadratic() {
        // Common practice, no source: Adam descends f(w) = (w0 − 3)² + 10 (w1 + 1)²
        // to its minimum.
        let cfg = OptimizerConfig { kind: OptimKind::Adam, ..OptimizerConfig::default() };
        let mut opt = Optimizer::new(&cfg, 2);
        let mut w = [0.0; 2];
        let mut g = Grad::new(2);
        for _ in 0..5000 {
            g.add(0, -2.0 * (w[0] - 3.0));
            g.add(1, -20.0 * (w[1] + 1.0));
            opt.apply(&mut w, &mut g, 0.01);
        }
        assert!((w[0] - 3.0).abs() < 1e-3 && (w[1] + 1.0).abs() < 1e-3, "{w:?}");
    }

    #[test]
    fn config_ranges_are_checked() {
        let cfg = OptimizerConfig { clip: Some(0.0), beta1: 1.0, epsilon: 0.0, ..OptimizerConfig::default() };
        let errs = cfg.check();
        assert_eq!(errs.len(), 3, "{errs:?}");
        assert_eq!(errs[0].0, "clip");
    }
}
