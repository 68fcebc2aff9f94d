//! Average-reward (differential) actor-critic for continuing tasks.
//!
//! Sutton & Barto (2018), Section 13.6 (one-step actor-critic for continuing
//! problems, without eligibility traces): with `R̄` the running estimate of
//! the average reward per step,
//! `δ = r − R̄ + V(s') − V(s)`, `R̄ ← R̄ + α_R̄ δ`, `w ← w + α_w δ ∇V(s)`,
//! `θ ← θ + α_θ δ ∇ log π(a|s)` (plus an optional entropy bonus). There is
//! no discount; `V` is the differential value. The runner never truncates a
//! continuing task, so every transition bootstraps.

use super::ActorParams;
use super::{
    entropy_and_ascend, finite, stochastic_actor, value_critic, LearnError, Learner, LearnerSetup, StepDiag,
    Transition,
};
use crate::approx::FeaturePool;
use crate::approx::Obs;
use crate::optim::Trainable;
use crate::policy::StochasticPolicy;
use crate::rng::Stream;
use crate::task::ActionBuf;
use crate::task::TaskSpec;

/// The differential actor-critic.
pub struct Differential {
    actor: StochasticPolicy,
    critic: Trainable,
    average: f64,
    eta: f64,
    beta: f64,
}

impl Differential {
    /// A learner for a checked setup (`R̄` starts at 0).
    pub fn new(setup: &LearnerSetup, spec: &TaskSpec, rng: &mut Stream) -> Self {
        let mut pool = FeaturePool::default();
        let actor = stochastic_actor(&mut pool, setup, spec, rng);
        let critic = value_critic(&mut pool, setup, spec, rng);
        Differential { actor, critic, average: 0.0, eta: setup.average_step, beta: setup.entropy }
    }

    /// The current estimate of the average reward per step.
    pub fn average_reward(&self) -> f64 {
        self.average
    }
}

impl Learner for Differential {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.actor.act(obs, rng, out);
    }

    fn learn(&mut self, t: &Transition<'_>, _rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let v = self.critic.eval(t.obs)[0];
        let vn = if t.terminated { 0.0 } else { self.critic.eval(t.next)[0] };
        let delta = finite("TD error", t.reward - self.average + vn - v)?;
        self.average = finite("average reward", self.average + self.eta * delta)?;
        let critic_norm = self.critic.ascend(t.obs, &[1.0], delta);
        let (entropy, actor_norm) = entropy_and_ascend(&mut self.actor, t.obs, t.action, delta, self.beta)?;
        Ok(StepDiag::on_policy(delta, entropy, actor_norm, critic_norm))
    }

    fn act_learned(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.actor.sample(obs, rng, out);
    }

    fn best_action(&mut self, obs: Obs<'_>, out: &mut ActionBuf) {
        self.actor.best_action(obs, out);
    }

    fn state_value(&mut self, obs: Obs<'_>) -> Option<f64> {
        Some(self.critic.eval(obs)[0])
    }

    fn actor_params(&self) -> Option<ActorParams<'_>> {
        Some(self.actor.actor_params())
    }

    fn probabilities(&mut self, obs: Obs<'_>, out: &mut [f64]) -> bool {
        self.actor.write_probabilities(obs, out)
    }
}
