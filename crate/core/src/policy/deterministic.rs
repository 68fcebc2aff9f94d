//! The deterministic policy for continuous actions.
//!
//! `μ(s)` is the output of an approximator, one output per action component,
//! in action units. Actions handed to the task are *clipped* to the bounds:
//! `a = clip(μ(s) + ξ)` with exploration noise `ξ ~ N(0, (σ · half)²)`,
//! `half` the half-width of the bounds. The deterministic policy gradient
//! (Silver et al. 2014, Theorem 1) moves `μ(s)` along `∇_a Q(s, a)` at
//! `a = clip(μ(s))`; a component already at or beyond a bound is not pushed
//! further out.

use crate::approx::Obs;
use crate::optim::Trainable;
use crate::rng::Stream;

/// A deterministic policy with clipped actions.
pub struct DeterministicPolicy {
    /// The approximator of `μ(s)` with its optimizer.
    pub net: Trainable,
    low: Vec<f64>,
    high: Vec<f64>,
    mu: Vec<f64>,
    coef: Vec<f64>,
}

impl DeterministicPolicy {
    /// A policy over `net` (one output per action component) for the bounds.
    pub fn new(net: Trainable, low: &[f64], high: &[f64]) -> Self {
        let d = low.len();
        DeterministicPolicy {
            net,
            low: low.to_vec(),
            high: high.to_vec(),
            mu: vec![0.0; d],
            coef: vec![0.0; d],
        }
    }

    /// Number of action components.
    pub fn dims(&self) -> usize {
        self.low.len()
    }

    /// `μ(s)` before clipping.
    pub fn raw_mean(&mut self, obs: Obs<'_>) -> &[f64] {
        let out = self.net.eval(obs);
        self.mu.copy_from_slice(out);
        &self.mu
    }

    /// `clip(μ(s))` into `out`.
    pub fn mean_into(&mut self, obs: Obs<'_>, out: &mut [f64]) {
        let out_net = self.net.eval(obs);
        for j in 0..out.len() {
            out[j] = out_net[j].clamp(self.low[j], self.high[j]);
        }
    }

    /// `clip(μ(s) + ξ)` with noise of standard deviation `noise · half` into `out`.
    pub fn act_into(&mut self, obs: Obs<'_>, noise: f64, rng: &mut Stream, out: &mut [f64]) {
        let out_net = self.net.eval(obs);
        for j in 0..out.len() {
            let half = 0.5 * (self.high[j] - self.low[j]);
            let xi = if noise > 0.0 { noise * half * rng.normal() } else { 0.0 };
            out[j] = (out_net[j] + xi).clamp(self.low[j], self.high[j]);
        }
    }

    /// Adds `∇_θ μ(s) · dq_da` to the pending direction, with components that
    /// would push a clipped action further out set to zero.
    pub fn accumulate(&mut self, obs: Obs<'_>, dq_da: &[f64]) {
        let mu = self.net.eval(obs);
        for j in 0..self.coef.len() {
            let g = dq_da[j];
            let out_high = mu[j] >= self.high[j] && g > 0.0;
            let out_low = mu[j] <= self.low[j] && g < 0.0;
            self.coef[j] = if out_high || out_low { 0.0 } else { g };
        }
        self.net.accumulate(obs, &self.coef, 1.0);
    }
}
