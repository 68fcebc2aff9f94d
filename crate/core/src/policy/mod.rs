//! Policies.
//!
//! [`StochasticPolicy`] is what the stochastic learners act with: a softmax
//! over action preferences for discrete actions, `π(a|s) ∝ exp h(s, a)`
//! with the preferences the outputs of an approximator, or a tanh-squashed
//! Gaussian for continuous actions ([`gaussian`]). It samples actions, gives
//! log-probabilities (corrected for the squash), entropies, and the score
//! `∇ log π(a|s)`, and climbs `signal · ∇ log π(a|s) + β ∇H(π(·|s))`. For the
//! softmax the score with respect to preference `b` is `1[a = b] − π(b|s)`
//! and the entropy gradient is `−π(b|s) (log π(b|s) + H)`; both are chained
//! through the approximator. [`deterministic`] holds the deterministic
//! policy of the deterministic actor-critic.

pub mod deterministic;
pub mod gaussian;

use crate::approx::Grad;
use crate::approx::Obs;
use crate::optim::{Optimizer, OptimizerConfig, Trainable};
use crate::rng::Stream;
use crate::task::Action;
use crate::task::ActionBuf;
use gaussian::{normal_log_density, PolicyConfig, Squash, LOG_STD_MAX, LOG_STD_MIN};

/// Writes the softmax of `prefs` into `probs` (shifted by the largest
/// preference, so it never overflows).
pub fn softmax(prefs: &[f64], probs: &mut [f64]) {
    let mut max = f64::NEG_INFINITY;
    for (p, &h) in probs.iter_mut().zip(prefs) {
        *p = h;
        if h > max {
            max = h;
        }
    }
    let mut total = 0.0;
    for p in probs.iter_mut() {
        *p = libm::exp(*p - max);
        total += *p;
    }
    for p in probs.iter_mut() {
        *p /= total;
    }
}

/// Entropy (nats) of a discrete distribution.
pub fn entropy(probs: &[f64]) -> f64 {
    -probs.iter().filter(|&&p| p > 0.0).map(|&p| p * libm::log(p)).sum::<f64>()
}

/// The Gaussian's own weights: the log-standard deviations.
struct GaussianPart {
    squash: Squash,
    log_std: Vec<f64>,
    learn: bool,
    opt: Optimizer,
    grad: Grad,
    step: f64,
    /// The last two (pre-squash, action) pairs sampled, to recover `u` exactly.
    recent: [(Vec<f64>, Vec<f64>); 2],
    newest: usize,
    u: Vec<f64>,
}

impl GaussianPart {
    /// Fills `self.u` with the pre-squash value of `a`.
    fn recover(&mut self, a: &[f64]) {
        for k in 0..2 {
            let (u, act) = &self.recent[k];
            if act.len() == a.len() && act.iter().zip(a).all(|(x, y)| x.to_bits() == y.to_bits()) {
                self.u.copy_from_slice(u);
                return;
            }
        }
        for j in 0..a.len() {
            self.u[j] = self.squash.unsquash(j, a[j]);
        }
    }
}

enum Kind {
    Softmax,
    Gaussian(Box<GaussianPart>),
}

/// A learner's actor weights, for inspection (`Learner::actor_params`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ActorParams<'a> {
    /// The actor approximator's weights; a linear actor's are output-major
    /// (`w[k * dim + i]`, feature `i` of output `k`).
    pub weights: &'a [f64],
    /// A Gaussian policy's log-standard deviations, one per action component
    /// (learned or fixed); empty for a softmax or a deterministic actor.
    pub log_std: &'a [f64],
}

/// A stochastic policy over an approximator: softmax (discrete) or squashed
/// Gaussian (continuous).
pub struct StochasticPolicy {
    /// The approximator of the preferences (softmax) or the means (Gaussian).
    pub net: Trainable,
    kind: Kind,
    probs: Vec<f64>,
    coef: Vec<f64>,
}

fn vector(a: Action<'_>) -> &[f64] {
    match a {
        Action::Vector(v) => v,
        Action::Index(_) => panic!("a continuous policy was given a discrete action"),
    }
}

fn index(a: Action<'_>) -> usize {
    match a {
        Action::Index(i) => i,
        Action::Vector(_) => panic!("a discrete policy was given a continuous action"),
    }
}

impl StochasticPolicy {
    /// A softmax policy over `net` (one output per action).
    pub fn softmax(net: Trainable) -> Self {
        let n = net.net.outputs();
        StochasticPolicy { net, kind: Kind::Softmax, probs: vec![0.0; n], coef: vec![0.0; n] }
    }

    /// A squashed Gaussian over `net` (one mean per action component) for the
    /// bounds `low`, `high`; the log-standard deviation learns with `opt` and
    /// the actor step `step`.
    pub fn gaussian(
        net: Trainable,
        cfg: &PolicyConfig,
        low: &[f64],
        high: &[f64],
        opt: &OptimizerConfig,
        step: f64,
    ) -> Self {
        let d = net.net.outputs();
        let part = GaussianPart {
            squash: Squash::new(low, high),
            log_std: vec![cfg.log_std; d],
            learn: cfg.sd_trainable,
            opt: Optimizer::new(opt, d),
            grad: Grad::new(d),
            step,
            recent: [(vec![0.0; d], vec![f64::NAN; d]), (vec![0.0; d], vec![f64::NAN; d])],
            newest: 0,
            u: vec![0.0; d],
        };
        StochasticPolicy { net, kind: Kind::Gaussian(Box::new(part)), probs: Vec::new(), coef: vec![0.0; d] }
    }

    /// Whether actions are discrete.
    pub fn is_discrete(&self) -> bool {
        matches!(self.kind, Kind::Softmax)
    }

    /// Number of weights of the score: the approximator's, plus one
    /// log-standard deviation per component when learned.
    pub fn n_params(&self) -> usize {
        let extra = match &self.kind {
            Kind::Gaussian(g) if g.learn => g.log_std.len(),
            _ => 0,
        };
        self.net.net.params().len() + extra
    }

    /// All weights: the approximator's, then the learned log-standard deviations.
    pub fn copy_params_into(&self, out: &mut Vec<f64>) {
        out.clear();
        out.extend_from_slice(self.net.net.params());
        if let Kind::Gaussian(g) = &self.kind {
            if g.learn {
                out.extend_from_slice(&g.log_std);
            }
        }
    }

    /// Sets the weights from [`StochasticPolicy::copy_params_into`]'s layout
    /// of a policy of the same shape.
    pub fn set_params(&mut self, from: &[f64]) {
        let n = self.net.net.params().len();
        self.net.net.params_mut().copy_from_slice(&from[..n]);
        if let Kind::Gaussian(g) = &mut self.kind {
            if g.learn {
                let d = g.log_std.len();
                g.log_std.copy_from_slice(&from[n..n + d]);
            }
        }
    }

    /// The weights and log-standard deviations, for [`crate::learn::Learner::actor_params`].
    pub fn actor_params(&self) -> ActorParams<'_> {
        ActorParams { weights: self.net.net.params(), log_std: self.log_std() }
    }

    /// The current log-standard deviations (empty for a softmax).
    pub fn log_std(&self) -> &[f64] {
        match &self.kind {
            Kind::Gaussian(g) => &g.log_std,
            Kind::Softmax => &[],
        }
    }

    /// π(·|s) of a softmax policy (empty for a Gaussian).
    pub fn probabilities(&mut self, obs: Obs<'_>) -> &[f64] {
        if let Kind::Softmax = self.kind {
            let prefs = self.net.eval(obs);
            softmax(prefs, &mut self.probs);
        }
        &self.probs
    }

    /// Writes π(·|s) into `out` for a softmax policy and returns true; false
    /// (and `out` untouched) for a Gaussian. The body of every learner's
    /// `Learner::probabilities`.
    pub fn write_probabilities(&mut self, obs: Obs<'_>, out: &mut [f64]) -> bool {
        if !self.is_discrete() {
            return false;
        }
        out.copy_from_slice(self.probabilities(obs));
        true
    }

    /// The probabilities computed by the last call to [`StochasticPolicy::probabilities`].
    pub fn last_probabilities(&self) -> &[f64] {
        &self.probs
    }

    /// Samples an action at `obs` into `out`.
    pub fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        match &mut self.kind {
            Kind::Softmax => {
                let prefs = self.net.eval(obs);
                softmax(prefs, &mut self.probs);
                *out = ActionBuf::Index(rng.categorical(&self.probs));
            }
            Kind::Gaussian(g) => {
                let mu = self.net.net.eval(obs);
                let ActionBuf::Vector(a) = out else {
                    panic!("a Gaussian policy needs a continuous action buffer");
                };
                let slot = 1 - g.newest;
                for j in 0..a.len() {
                    let u = mu[j] + libm::exp(g.log_std[j]) * rng.normal();
                    a[j] = g.squash.squash(j, u);
                    g.recent[slot].0[j] = u;
                    g.recent[slot].1[j] = a[j];
                }
                g.newest = slot;
            }
        }
    }

    /// Samples an action at `obs` into `out` like [`StochasticPolicy::act`],
    /// but remembers nothing: the Gaussian's record of recent samples (which
    /// lets a learner recover the pre-squash value of the action it is about
    /// to learn from) is left alone. Evaluation episodes use it, so they
    /// cannot change what the learner does next.
    pub fn sample(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        match &mut self.kind {
            Kind::Softmax => {
                let prefs = self.net.eval(obs);
                softmax(prefs, &mut self.probs);
                *out = ActionBuf::Index(rng.categorical(&self.probs));
            }
            Kind::Gaussian(g) => {
                let mu = self.net.net.eval(obs);
                let ActionBuf::Vector(a) = out else {
                    panic!("a Gaussian policy needs a continuous action buffer");
                };
                for j in 0..a.len() {
                    let u = mu[j] + libm::exp(g.log_std[j]) * rng.normal();
                    a[j] = g.squash.squash(j, u);
                }
            }
        }
    }

    /// The most likely action: the first of the largest preferences, or the
    /// squashed mean.
    pub fn best_action(&mut self, obs: Obs<'_>, out: &mut ActionBuf) {
        let out_net = self.net.eval(obs);
        match (&self.kind, out) {
            (Kind::Softmax, out) => {
                let mut best = 0;
                for (k, &h) in out_net.iter().enumerate() {
                    if h > out_net[best] {
                        best = k;
                    }
                }
                *out = ActionBuf::Index(best);
            }
            (Kind::Gaussian(g), ActionBuf::Vector(a)) => {
                for j in 0..a.len() {
                    a[j] = g.squash.squash(j, out_net[j]);
                }
            }
            (Kind::Gaussian(_), ActionBuf::Index(_)) => {
                panic!("a Gaussian policy needs a continuous action buffer")
            }
        }
    }

    /// `log π(a|s)` (for a Gaussian, the density of the squashed action).
    pub fn log_prob(&mut self, obs: Obs<'_>, action: Action<'_>) -> f64 {
        match &mut self.kind {
            Kind::Softmax => {
                let prefs = self.net.eval(obs);
                softmax(prefs, &mut self.probs);
                libm::log(self.probs[index(action)])
            }
            Kind::Gaussian(g) => {
                let a = vector(action);
                g.recover(a);
                let mu = self.net.net.eval(obs);
                (0..a.len())
                    .map(|j| {
                        normal_log_density(g.u[j], mu[j], g.log_std[j]) - g.squash.log_jacobian(j, g.u[j])
                    })
                    .sum()
            }
        }
    }

    /// Entropy of π(·|s) (for a Gaussian, of the pre-squash Gaussian, which
    /// does not depend on the state).
    pub fn entropy(&mut self, obs: Obs<'_>) -> f64 {
        match &self.kind {
            Kind::Softmax => {
                let prefs = self.net.eval(obs);
                softmax(prefs, &mut self.probs);
                entropy(&self.probs)
            }
            Kind::Gaussian(g) => g
                .log_std
                .iter()
                .map(|ls| 0.5 * libm::log(2.0 * core::f64::consts::PI * core::f64::consts::E) + ls)
                .sum(),
        }
    }

    /// Fills `self.coef` with the coefficients of the approximator's outputs
    /// in `signal · ∇ log π(a|s) + beta · ∇H`, and (Gaussian) the
    /// log-standard-deviation direction through `std_dir(j, value)`.
    fn coefficients(
        &mut self,
        obs: Obs<'_>,
        action: Action<'_>,
        signal: f64,
        beta: f64,
        mut std_dir: impl FnMut(usize, f64),
    ) {
        match &mut self.kind {
            Kind::Softmax => {
                let a = index(action);
                let prefs = self.net.eval(obs);
                softmax(prefs, &mut self.probs);
                let h = if beta != 0.0 { entropy(&self.probs) } else { 0.0 };
                for b in 0..self.probs.len() {
                    let p = self.probs[b];
                    let score = if a == b { 1.0 } else { 0.0 } - p;
                    let ent = if beta != 0.0 && p > 0.0 { -p * (libm::log(p) + h) } else { 0.0 };
                    self.coef[b] = signal * score + beta * ent;
                }
            }
            Kind::Gaussian(g) => {
                let a = vector(action);
                g.recover(a);
                let mu = self.net.net.eval(obs);
                for j in 0..a.len() {
                    let inv_var = libm::exp(-2.0 * g.log_std[j]);
                    let diff = g.u[j] - mu[j];
                    self.coef[j] = signal * diff * inv_var;
                    if g.learn {
                        std_dir(j, signal * (diff * diff * inv_var - 1.0) + beta);
                    }
                }
            }
        }
    }

    /// One update along `signal · ∇ log π(a|s) + beta · ∇H(π(·|s))`; returns
    /// the norm of that direction (over the approximator's weights and the
    /// learned log-standard deviations).
    pub fn ascend(&mut self, obs: Obs<'_>, action: Action<'_>, signal: f64, beta: f64) -> f64 {
        if let (Kind::Softmax, true) = (&self.kind, beta == 0.0) {
            // Same arithmetic as a plain SGD step on the score.
            let a = index(action);
            let prefs = self.net.eval(obs);
            softmax(prefs, &mut self.probs);
            for b in 0..self.probs.len() {
                self.coef[b] = if a == b { 1.0 } else { 0.0 } - self.probs[b];
            }
            return self.net.ascend(obs, &self.coef, signal);
        }
        self.accumulate(obs, action, signal, beta);
        self.apply()
    }

    /// Adds `signal · ∇ log π(a|s) + beta · ∇H` to the pending direction.
    pub fn accumulate(&mut self, obs: Obs<'_>, action: Action<'_>, signal: f64, beta: f64) {
        let mut std_grad = match &mut self.kind {
            Kind::Gaussian(g) => Some(std::mem::replace(&mut g.grad, Grad::new(0))),
            Kind::Softmax => None,
        };
        self.coefficients(obs, action, signal, beta, |j, v| {
            if let Some(g) = std_grad.as_mut() {
                g.add(j, v);
            }
        });
        if let (Kind::Gaussian(g), Some(sg)) = (&mut self.kind, std_grad) {
            g.grad = sg;
        }
        self.net.accumulate(obs, &self.coef, 1.0);
    }

    /// Applies the pending direction; returns its norm.
    pub fn apply(&mut self) -> f64 {
        let n = self.net.apply();
        match &mut self.kind {
            Kind::Gaussian(g) if g.learn => {
                let m = g.opt.apply(&mut g.log_std, &mut g.grad, g.step);
                for v in g.log_std.iter_mut() {
                    *v = v.clamp(LOG_STD_MIN, LOG_STD_MAX);
                }
                f64::sqrt(n * n + m * m)
            }
            _ => n,
        }
    }

    /// Adds `signal · ∇ log π(a|s)` over all [`StochasticPolicy::n_params`]
    /// weights to an outside buffer `out` (the approximator's weights first,
    /// then the learned log-standard deviations).
    pub fn accumulate_score(&mut self, obs: Obs<'_>, action: Action<'_>, signal: f64, out: &mut Grad) {
        let n = self.net.net.params().len();
        self.coefficients(obs, action, signal, 0.0, |j, v| out.add(n + j, v));
        let coef = std::mem::take(&mut self.coef);
        self.net.net.accumulate(obs, &coef, 1.0, out);
        self.coef = coef;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::approx::{FeatureConfig, LinearFn};
    use crate::task::StateVar;

    fn vars() -> Vec<StateVar> {
        vec![StateVar { name: "x".into(), low: -1.0, high: 1.0 }]
    }

    fn poly_net(outputs: usize) -> Trainable {
        let f = crate::approx::build_features_over(&FeatureConfig::Poly { degree: 2 }, &vars(), None, "t")
            .unwrap();
        Trainable::new(Box::new(LinearFn::new(f, outputs)), &OptimizerConfig::default(), 1.0)
    }

    fn randomise(p: &mut StochasticPolicy) {
        for (i, w) in p.net.net.params_mut().iter_mut().enumerate() {
            *w = libm::sin(i as f64 * 0.37 + 0.1);
        }
    }

    fn score_vs_fd(p: &mut StochasticPolicy, obs: Obs<'_>, a: Action<'_>) {
        let n = p.n_params();
        let mut g = Grad::new(n);
        p.accumulate_score(obs, a, 1.0, &mut g);
        let mut w = Vec::new();
        p.copy_params_into(&mut w);
        let h = 1e-6;
        for i in 0..n {
            let mut up = w.clone();
            up[i] += h;
            p.set_params(&up);
            let lp = p.log_prob(obs, a);
            let mut down = w.clone();
            down[i] -= h;
            p.set_params(&down);
            let lm = p.log_prob(obs, a);
            p.set_params(&w);
            let fd = (lp - lm) / (2.0 * h);
            assert!((fd - g.values()[i]).abs() < 1e-6, "weight {i}: {fd} vs {}", g.values()[i]);
        }
    }

    #[test]
    fn softmax_score_matches_finite_differences() {
        // Common practice, no source: the analytic score of a softmax over
        // linear preferences equals the central difference of log π.
        let mut p = StochasticPolicy::softmax(poly_net(3));
        randomise(&mut p);
        let obs = Obs { values: &[0.3], id: None };
        score_vs_fd(&mut p, obs, Action::Index(1));
        let probs = p.probabilities(obs).to_vec();
        assert!((probs.iter().sum::<f64>() - 1.0).abs() < 1e-15);
    }

    #[test]
    fn gaussian_score_matches_finite_differences() {
        // Common practice, no source: the score in u (mean and log-std) equals the
        // central difference of the corrected log-density of the squashed action.
        let cfg = PolicyConfig { log_std: -0.3, ..PolicyConfig::default() };
        let mut p = StochasticPolicy::gaussian(
            poly_net(2),
            &cfg,
            &[-1.0, 0.0],
            &[1.0, 4.0],
            &OptimizerConfig::default(),
            0.1,
        );
        randomise(&mut p);
        let obs = Obs { values: &[-0.4], id: None };
        let mut out = ActionBuf::Vector(vec![0.0; 2]);
        p.act(obs, &mut Stream::from_seed(3), &mut out);
        let ActionBuf::Vector(a) = &out else { unreachable!() };
        assert!(a[0] > -1.0 && a[0] < 1.0 && a[1] > 0.0 && a[1] < 4.0);
        score_vs_fd(&mut p, obs, Action::Vector(a));
    }

    #[test]
    fn entropy_gradient_matches_finite_differences() {
        // Common practice, no source: ∂H/∂h_b = −π_b (log π_b + H).
        let mut p = StochasticPolicy::softmax(poly_net(3));
        randomise(&mut p);
        let obs = Obs { values: &[0.6], id: None };
        let w0 = p.net.net.params().to_vec();
        p.accumulate(obs, Action::Index(0), 0.0, 1.0);
        let g = p.net.pending().values().to_vec();
        let h = 1e-6;
        for i in 0..w0.len() {
            let mut w = w0.clone();
            w[i] += h;
            p.net.net.params_mut().copy_from_slice(&w);
            let up = p.entropy(obs);
            w[i] -= 2.0 * h;
            p.net.net.params_mut().copy_from_slice(&w);
            let down = p.entropy(obs);
            let fd = (up - down) / (2.0 * h);
            assert!((fd - g[i]).abs() < 1e-7, "weight {i}: {fd} vs {}", g[i]);
        }
    }
}
