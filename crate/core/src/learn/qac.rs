//! Q actor-critic: the simplest actor-critic with an action-value critic.
//!
//! Critic: linear action values `Q(s, a) = w_a · x(s)` trained by Sarsa,
//! `δ = r + γ Q(s', a') − Q(s, a)` with `a'` the action the policy chose at
//! `s'` (`Q(s', a') = 0` after a termination; after a truncation the runner
//! still samples `a'` and the update bootstraps). Actor: softmax policy,
//! `θ ← θ + α_a Q(s, a) ∇ log π(a|s)` with the critic's estimate before its
//! update (policy gradient theorem with Q in place of the return; Sutton &
//! Barto 2018, Section 13.2). No baseline: the variance is the point of
//! comparison with A2C.

use super::{finite, FeatureCache, LearnError, Learner, Resolved, StepDiag, Transition};
use crate::approx::{Features, Linear, Obs};
use crate::learn::ActionBuf;
use crate::policy::Softmax;
use crate::rng::Stream;
use crate::task::Action;

/// The Q actor-critic.
pub struct Qac {
    cache: FeatureCache,
    critic: Linear,
    actor: Softmax,
    hp: Resolved,
}

impl Qac {
    /// A learner with zero weights (uniform policy, zero values).
    pub fn new(features: Box<dyn Features>, actions: usize, hp: Resolved) -> Self {
        let dim = features.dim();
        Qac {
            cache: FeatureCache::new(features),
            critic: Linear::zeros(dim, actions),
            actor: Softmax::new(dim, actions),
            hp,
        }
    }

    /// The critic's action-value estimate.
    pub fn q(&mut self, obs: Obs<'_>, a: usize) -> f64 {
        let x = self.cache.get(obs);
        self.critic.value(a, x)
    }
}

impl Learner for Qac {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        let x = self.cache.get(obs);
        self.actor.probabilities(x);
        *out = ActionBuf::Index(self.actor.sample(rng));
    }

    fn learn(&mut self, t: &Transition<'_>, _rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let Action::Index(a) = t.action else {
            panic!("Qac given a continuous action");
        };
        let (x, xn) = self.cache.pair(t.obs, t.next);
        let q = self.critic.value(a, x);
        let qn = match (t.terminated, t.next_action) {
            (true, _) => 0.0,
            (false, Some(Action::Index(b))) => self.critic.value(b, xn),
            (false, _) => panic!("Qac needs the next action of a non-terminal transition"),
        };
        let delta = finite("TD error", t.reward + self.hp.discount * qn - q)?;
        self.critic.add(a, self.hp.critic_step * delta, x);
        self.actor.probabilities(x);
        let entropy = finite("policy entropy", self.actor.entropy())?;
        let score_norm = self.actor.ascend_log_prob(x, a, self.hp.actor_step * q);
        Ok(StepDiag {
            td_error: delta,
            entropy,
            actor_grad_norm: q.abs() * score_norm,
            critic_grad_norm: delta.abs() * libm::sqrt(x.norm_sq()),
        })
    }
}
