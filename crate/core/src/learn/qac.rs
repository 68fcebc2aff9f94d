//! Q actor-critic: the simplest actor-critic with an action-value critic.
//!
//! Critic: action values `Q(s, a)`, one output per action of any
//! approximator, trained by Sarsa, `δ = r + γ Q(s', a') − Q(s, a)` with `a'`
//! the action the policy chose at `s'` (`Q(s', a') = 0` after a termination;
//! after a truncation the runner still samples `a'` and the update
//! bootstraps). Actor: softmax policy, `θ ← θ + α_a Q(s, a) ∇ log π(a|s)`
//! with the critic's estimate before its update (policy gradient theorem
//! with Q in place of the return; Sutton & Barto 2018, Section 13.2), plus an
//! optional entropy bonus. No baseline: the variance is the point of
//! comparison with A2C. Discrete actions only.

use super::ActorParams;
use super::{
    entropy_and_ascend, finite, state_net, stochastic_actor, LearnError, Learner, LearnerSetup, StepDiag,
    Transition,
};
use crate::approx::FeaturePool;
use crate::approx::Obs;
use crate::optim::Trainable;
use crate::policy::StochasticPolicy;
use crate::rng::Stream;
use crate::task::ActionBuf;
use crate::task::{Action, TaskSpec};

/// The Q actor-critic.
pub struct Qac {
    actor: StochasticPolicy,
    critic: Trainable,
    gamma: f64,
    beta: f64,
    onehot: Vec<f64>,
}

impl Qac {
    /// A learner for a checked setup (uniform policy, zero values).
    pub fn new(setup: &LearnerSetup, spec: &TaskSpec, rng: &mut Stream) -> Self {
        let n = spec.actions.discrete_count().expect("a checked QAC setup has discrete actions");
        let mut pool = FeaturePool::default();
        let actor = stochastic_actor(&mut pool, setup, spec, rng);
        let critic = state_net(&mut pool, setup, spec, &setup.critic_or_default(), n, setup.critic_step, rng);
        Qac { actor, critic, gamma: setup.discount_on(spec), beta: setup.entropy, onehot: vec![0.0; n] }
    }

    /// The critic's action-value estimate.
    pub fn q(&mut self, obs: Obs<'_>, a: usize) -> f64 {
        self.critic.eval(obs)[a]
    }
}

impl Learner for Qac {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.actor.act(obs, rng, out);
    }

    /// `V(s) = Σ_a π(a|s) Q(s, a)` from the critic and the current policy.
    fn state_value(&mut self, obs: Obs<'_>) -> Option<f64> {
        let q = self.critic.eval(obs);
        let p = self.actor.probabilities(obs);
        Some(p.iter().zip(q).map(|(p, q)| p * q).sum())
    }

    fn actor_params(&self) -> Option<ActorParams<'_>> {
        Some(self.actor.actor_params())
    }

    fn learn(&mut self, t: &Transition<'_>, _rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let Action::Index(a) = t.action else {
            panic!("Qac given a continuous action");
        };
        let q = self.critic.eval(t.obs)[a];
        let qn = match (t.terminated, t.next_action) {
            (true, _) => 0.0,
            (false, Some(Action::Index(b))) => self.critic.eval(t.next)[b],
            (false, _) => panic!("Qac needs the next action of a non-terminal transition"),
        };
        let delta = finite("TD error", t.reward + self.gamma * qn - q)?;
        self.onehot[a] = 1.0;
        let critic_norm = self.critic.ascend(t.obs, &self.onehot, delta);
        self.onehot[a] = 0.0;
        let (entropy, actor_norm) = entropy_and_ascend(&mut self.actor, t.obs, t.action, q, self.beta)?;
        Ok(StepDiag::on_policy(delta, entropy, actor_norm, critic_norm))
    }

    fn act_learned(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.actor.sample(obs, rng, out);
    }

    fn best_action(&mut self, obs: Obs<'_>, out: &mut ActionBuf) {
        self.actor.best_action(obs, out);
    }

    fn probabilities(&mut self, obs: Obs<'_>, out: &mut [f64]) -> bool {
        self.actor.write_probabilities(obs, out)
    }
}
