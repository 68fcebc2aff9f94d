//! Advantage actor-critic, one-step form.
//!
//! Critic: linear state value `V(s) = w · x(s)` trained by TD(0),
//! `δ = r + γ V(s') − V(s)` (with `V(s') = 0` after a termination, and
//! bootstrapped after a truncation), `w ← w + α_c δ x(s)`. Actor: softmax
//! policy, `θ ← θ + α_a δ ∇ log π(a|s)`: the TD error is an unbiased sample of
//! the advantage `A(s, a) = Q(s, a) − V(s)` when `V` is exact (Sutton & Barto
//! 2018, Section 13.5). As is usual in practice, the `γ^t` factor of the
//! episodic theorem is left out of the actor step.

use super::{finite, FeatureCache, LearnError, Learner, Resolved, StepDiag, Transition};
use crate::approx::{Features, Linear, Obs};
use crate::learn::ActionBuf;
use crate::policy::Softmax;
use crate::rng::Stream;
use crate::task::Action;

/// The one-step advantage actor-critic.
pub struct A2c {
    cache: FeatureCache,
    critic: Linear,
    actor: Softmax,
    hp: Resolved,
}

impl A2c {
    /// A learner with zero weights (uniform policy, zero values).
    pub fn new(features: Box<dyn Features>, actions: usize, hp: Resolved) -> Self {
        let dim = features.dim();
        A2c {
            cache: FeatureCache::new(features),
            critic: Linear::zeros(dim, 1),
            actor: Softmax::new(dim, actions),
            hp,
        }
    }

    /// The critic's value estimate at a state.
    pub fn value(&mut self, obs: Obs<'_>) -> f64 {
        let x = self.cache.get(obs);
        self.critic.value(0, x)
    }
}

impl Learner for A2c {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        let x = self.cache.get(obs);
        self.actor.probabilities(x);
        *out = ActionBuf::Index(self.actor.sample(rng));
    }

    fn learn(&mut self, t: &Transition<'_>, _rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let Action::Index(a) = t.action else {
            panic!("A2c given a continuous action");
        };
        let (x, xn) = self.cache.pair(t.obs, t.next);
        let v = self.critic.value(0, x);
        let vn = if t.terminated { 0.0 } else { self.critic.value(0, xn) };
        let delta = finite("TD error", t.reward + self.hp.discount * vn - v)?;
        self.critic.add(0, self.hp.critic_step * delta, x);
        self.actor.probabilities(x);
        let entropy = finite("policy entropy", self.actor.entropy())?;
        let score_norm = self.actor.ascend_log_prob(x, a, self.hp.actor_step * delta);
        Ok(StepDiag {
            td_error: delta,
            entropy,
            actor_grad_norm: delta.abs() * score_norm,
            critic_grad_norm: delta.abs() * libm::sqrt(x.norm_sq()),
        })
    }
}
