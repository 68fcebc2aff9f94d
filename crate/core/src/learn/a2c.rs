//! Advantage actor-critic: one-step, n-step and GAE(λ) advantages.
//!
//! Critic: state value `V(s)`, any approximator. Each step gives the TD
//! error `δ_t = r_t + γ V(s_{t+1}) − V(s_t)` (`V = 0` after a termination;
//! bootstrapped after a truncation). With `segment = 1` the critic climbs
//! `δ ∇V(s)` and the actor `δ ∇ log π(a|s)` at once: the TD error is an
//! unbiased sample of the advantage when `V` is exact (Sutton & Barto 2018,
//! Section 13.5). With `segment = n > 1` transitions are gathered in
//! segments of `n` steps (cut short at an episode's end), the weights stay
//! fixed within a segment, and at its end every step gets the generalised
//! advantage `Â_t = Σ_l (γλ)^l δ_{t+l}` up to the segment's end (Schulman
//! et al. 2016, Section 3, eq. 16; with λ = 1 this is the n-step return
//! minus `V`, as in Mnih et al. 2016, Algorithm S3). The critic then climbs
//! `Σ_t Â_t ∇V(s_t)` (towards the λ-return) and the actor
//! `Σ_t Â_t ∇ log π(a_t|s_t)`, one optimizer step each per segment. An
//! entropy bonus β adds `β ∇H(π(·|s_t))` to the actor's direction (Williams
//! & Peng 1991; Mnih et al. 2016). As is usual in practice, the `γ^t` factor
//! of the episodic theorem is left out of the actor step.

use super::ActorParams;
use super::{
    action_dims, entropy_and_ascend, finite, stochastic_actor, value_critic, LearnError, Learner,
    LearnerSetup, StepDiag, Trajectory, Transition,
};
use crate::approx::FeaturePool;
use crate::approx::Obs;
use crate::optim::Trainable;
use crate::policy::StochasticPolicy;
use crate::rng::Stream;
use crate::task::ActionBuf;
use crate::task::TaskSpec;

/// Writes the generalised advantages `Â_t = δ_t + γλ Â_{t+1}` of a segment's
/// TD errors `delta` into `out` (the last step's advantage is its TD error).
/// Schulman et al. (2016), Section 3.
pub fn gae(delta: &[f64], gamma_lambda: f64, out: &mut [f64]) {
    let mut next = 0.0;
    for t in (0..delta.len()).rev() {
        next = delta[t] + gamma_lambda * next;
        out[t] = next;
    }
}

/// The advantage actor-critic.
pub struct A2c {
    actor: StochasticPolicy,
    critic: Trainable,
    gamma: f64,
    gamma_lambda: f64,
    n: usize,
    beta: f64,
    seg: Trajectory,
}

impl A2c {
    /// A learner for a checked setup (uniform policy, zero values; MLP
    /// weights drawn from `rng`).
    pub fn new(setup: &LearnerSetup, spec: &TaskSpec, rng: &mut Stream) -> Self {
        let mut pool = FeaturePool::default();
        let actor = stochastic_actor(&mut pool, setup, spec, rng);
        let critic = value_critic(&mut pool, setup, spec, rng);
        let gamma = setup.discount_on(spec);
        let n = setup.segment as usize;
        A2c {
            actor,
            critic,
            gamma,
            gamma_lambda: gamma * setup.lambda,
            n,
            beta: setup.entropy,
            seg: Trajectory::new(if n > 1 { n } else { 0 }, spec.state_vars.len(), action_dims(spec)),
        }
    }

    /// The critic's value estimate at a state.
    pub fn value(&mut self, obs: Obs<'_>) -> f64 {
        self.critic.eval(obs)[0]
    }

    /// The update at the end of a segment; returns the actor's and the
    /// critic's direction norms.
    fn flush(&mut self) -> (f64, f64) {
        let len = self.seg.len();
        let (delta, adv) = (&self.seg.x[..len], &mut self.seg.y[..len]);
        gae(delta, self.gamma_lambda, adv);
        for t in 0..len {
            let a = self.seg.y[t];
            self.critic.accumulate(self.seg.obs(t), &[1.0], a);
            self.actor.accumulate(self.seg.obs(t), self.seg.action(t), a, self.beta);
        }
        self.seg.clear();
        (self.actor.apply(), self.critic.apply())
    }
}

impl Learner for A2c {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.actor.act(obs, rng, out);
    }

    fn state_value(&mut self, obs: Obs<'_>) -> Option<f64> {
        Some(self.value(obs))
    }

    fn actor_params(&self) -> Option<ActorParams<'_>> {
        Some(self.actor.actor_params())
    }

    fn learn(&mut self, t: &Transition<'_>, _rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let v = self.critic.eval(t.obs)[0];
        let vn = if t.terminated { 0.0 } else { self.critic.eval(t.next)[0] };
        let delta = finite("TD error", t.reward + self.gamma * vn - v)?;
        if self.n == 1 {
            let critic_norm = self.critic.ascend(t.obs, &[1.0], delta);
            let (entropy, actor_norm) =
                entropy_and_ascend(&mut self.actor, t.obs, t.action, delta, self.beta)?;
            return Ok(StepDiag::on_policy(delta, entropy, actor_norm, critic_norm));
        }
        let entropy = finite("policy entropy", self.actor.entropy(t.obs))?;
        let i = self.seg.push(t);
        self.seg.x[i] = delta;
        let (mut actor_norm, mut critic_norm) = (0.0, 0.0);
        if t.terminated || t.truncated || self.seg.is_full() {
            (actor_norm, critic_norm) = self.flush();
            finite("actor update", actor_norm)?;
            finite("critic update", critic_norm)?;
        }
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gae_matches_the_derived_values() {
        // Schulman et al. (2016), Section 3 (eq. 16 and its λ = 0, λ = 1 cases);
        // derived by hand: r = (1, 0, 2), V = (0.5, 0.2, 0.4, 0) with the last
        // state terminal, γ = 0.9 gives δ = (0.68, 0.16, 1.6).
        let (r, v, g) = ([1.0, 0.0, 2.0], [0.5, 0.2, 0.4, 0.0], 0.9);
        let delta: Vec<f64> = (0..3).map(|t| r[t] + g * v[t + 1] - v[t]).collect();
        for (d, want) in delta.iter().zip([0.68, 0.16, 1.6]) {
            assert!((d - want).abs() < 1e-12);
        }
        let mut out = [0.0; 3];
        gae(&delta, g * 0.0, &mut out);
        assert_eq!(out.to_vec(), delta);
        gae(&delta, g * 0.8, &mut out);
        for (a, want) in out.iter().zip([1.62464, 1.312, 1.6]) {
            assert!((a - want).abs() < 1e-12, "{out:?}");
        }
        gae(&delta, g * 1.0, &mut out);
        for (a, want) in out.iter().zip([2.12, 1.6, 1.6]) {
            assert!((a - want).abs() < 1e-12, "{out:?}");
        }
        // λ = 1 equals the discounted return minus V (the same reference).
        let ret0 = r[0] + g * r[1] + g * g * r[2];
        assert!((out[0] - (ret0 - v[0])).abs() < 1e-12);
    }
}
