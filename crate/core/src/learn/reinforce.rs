//! REINFORCE: the Monte Carlo policy gradient, with a choice of baseline.
//!
//! Williams (1992); Sutton & Barto (2018), Sections 13.3 and 13.4. The
//! learner stores the episode (the buffer holds the task's `max_steps`
//! steps; a longer episode driven from outside is cut there and treated as
//! truncated). At the episode's end it computes the returns
//! `G_t = r_t + γ G_{t+1}` (with `G_T = 0` after a termination, or the
//! critic's `V(s_T)` after a truncation when a learned value exists) and
//! takes one actor step along `Σ_t (G_t − b_t) ∇ log π(a_t|s_t)`, plus an
//! optional entropy bonus. As in the other learners the `γ^t` factor is
//! left out. Baselines ([`Baseline`]):
//! - `none`: `b_t = 0`;
//! - `average`: an exponentially weighted average of past returns `G_t`;
//! - `value`: a learned `V(s_t)`, fitted to the returns by one critic step
//!   along `Σ_t (G_t − V(s_t)) ∇V(s_t)` per episode;
//! - `optimal`: the constant that minimises the variance of the episode's
//!   gradient estimate, `b* = E[S·A] / E[‖S‖²]` with `S = Σ_t ∇ log π_t`
//!   and `A = Σ_t G_t ∇ log π_t` (Greensmith, Bartlett & Baxter 2004,
//!   Section 3: for a one-step episode this is `E[‖g‖² R] / E[‖g‖²]`),
//!   both expectations estimated by exponentially weighted averages over
//!   *past* episodes so the baseline never depends on the current one.
//!
//! [`EpisodeEstimate`] computes the gradient estimate of one episode for any
//! baseline; the variance checks use it on a fixed policy.

use super::{
    action_dims, finite, stochastic_actor, value_critic, Baseline, LearnError, Learner, LearnerSetup,
    StepDiag, Trajectory, Transition,
};
use crate::approx::Obs;
use crate::learn::ActionBuf;
use crate::optim::{Grad, Trainable};
use crate::policy::StochasticPolicy;
use crate::rng::Stream;
use crate::task::TaskSpec;

/// The score sums of one episode, `S = Σ_t ∇ log π_t` and
/// `A = Σ_t G_t ∇ log π_t`, from which the REINFORCE estimate with any
/// constant baseline is `A − b S`.
pub struct EpisodeEstimate {
    /// `S`.
    pub s: Grad,
    /// `A`.
    pub a: Grad,
}

impl EpisodeEstimate {
    /// Buffers for a policy with `n` weights.
    pub fn new(n: usize) -> Self {
        EpisodeEstimate { s: Grad::new(n), a: Grad::new(n) }
    }

    /// Adds one step with return `g`.
    pub fn add(&mut self, policy: &mut StochasticPolicy, obs: Obs<'_>, action: crate::task::Action<'_>, g: f64) {
        policy.accumulate_score(obs, action, 1.0, &mut self.s);
        policy.accumulate_score(obs, action, g, &mut self.a);
    }

    /// Writes `A − b S` into `out` (cleared first).
    pub fn with_baseline(&self, b: f64, out: &mut Grad) {
        out.clear();
        out.add_scaled(1.0, &self.a);
        out.add_scaled(-b, &self.s);
    }

    /// Forgets the episode.
    pub fn clear(&mut self) {
        self.s.clear();
        self.a.clear();
    }
}

/// REINFORCE with a baseline.
pub struct Reinforce {
    actor: StochasticPolicy,
    critic: Option<Trainable>,
    baseline: Baseline,
    rate: f64,
    gamma: f64,
    beta: f64,
    episode: Trajectory,
    average: f64,
    mean_sa: f64,
    mean_ss: f64,
    estimate: Option<EpisodeEstimate>,
}

impl Reinforce {
    /// A learner for a checked setup.
    pub fn new(setup: &LearnerSetup, spec: &TaskSpec, rng: &mut Stream) -> Self {
        let actor = stochastic_actor(setup, spec, rng);
        let critic = (setup.baseline == Baseline::Value).then(|| value_critic(setup, spec, rng));
        let estimate = (setup.baseline == Baseline::Optimal).then(|| EpisodeEstimate::new(actor.n_params()));
        Reinforce {
            actor,
            critic,
            baseline: setup.baseline,
            rate: setup.baseline_rate,
            gamma: setup.discount_on(spec),
            beta: setup.entropy,
            episode: Trajectory::new(spec.max_steps.max(1) as usize, spec.state_vars.len(), action_dims(spec)),
            average: 0.0,
            mean_sa: 0.0,
            mean_ss: 0.0,
            estimate,
        }
    }

    /// The baseline the next episode will use under `"average"` or `"optimal"`.
    pub fn constant_baseline(&self) -> f64 {
        match self.baseline {
            Baseline::Average => self.average,
            Baseline::Optimal if self.mean_ss > 0.0 => self.mean_sa / self.mean_ss,
            _ => 0.0,
        }
    }

    /// The update at an episode's end; returns (mean of G − b, actor norm, critic norm).
    fn finish(&mut self, bootstrap: f64) -> Result<(f64, f64, f64), LearnError> {
        let len = self.episode.len();
        let mut g = bootstrap;
        for t in (0..len).rev() {
            g = self.episode.reward[t] + self.gamma * g;
            self.episode.y[t] = g;
        }
        finite("return", g)?;
        // Baselines b_t into x.
        let constant = self.constant_baseline();
        for t in 0..len {
            self.episode.x[t] = match (&mut self.critic, self.baseline) {
                (Some(c), Baseline::Value) => c.eval(self.episode.obs(t))[0],
                _ => constant,
            };
        }
        if let Some(est) = &mut self.estimate {
            est.clear();
            for t in 0..len {
                est.add(&mut self.actor, self.episode.obs(t), self.episode.action(t), self.episode.y[t]);
            }
            let (sa, ss) = (est.s.dot(&est.a), est.s.dot(&est.s));
            self.mean_sa += self.rate * (sa - self.mean_sa);
            self.mean_ss += self.rate * (ss - self.mean_ss);
        }
        let mut critic_norm = 0.0;
        let mut adv_sum = 0.0;
        for t in 0..len {
            let adv = self.episode.y[t] - self.episode.x[t];
            adv_sum += adv;
            self.actor.accumulate(self.episode.obs(t), self.episode.action(t), adv, self.beta);
            if let Some(c) = &mut self.critic {
                c.accumulate(self.episode.obs(t), &[1.0], adv);
            }
        }
        if let Some(c) = &mut self.critic {
            critic_norm = c.apply();
        }
        let actor_norm = self.actor.apply();
        if self.baseline == Baseline::Average {
            for t in 0..len {
                self.average += self.rate * (self.episode.y[t] - self.average);
            }
        }
        self.episode.clear();
        Ok((adv_sum / len.max(1) as f64, actor_norm, critic_norm))
    }
}

impl Learner for Reinforce {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.actor.act(obs, rng, out);
    }

    fn learn(&mut self, t: &Transition<'_>, _rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let entropy = finite("policy entropy", self.actor.entropy(t.obs))?;
        self.episode.push(t);
        if !(t.terminated || t.truncated || self.episode.is_full()) {
            return Ok(StepDiag { entropy, ..StepDiag::default() });
        }
        let bootstrap = match (&mut self.critic, t.terminated) {
            (Some(c), false) => c.eval(t.next)[0],
            _ => 0.0,
        };
        let (adv, actor_norm, critic_norm) = self.finish(bootstrap)?;
        Ok(StepDiag {
            td_error: finite("advantage", adv)?,
            entropy,
            actor_grad_norm: finite("actor update", actor_norm)?,
            critic_grad_norm: critic_norm,
            ..StepDiag::default()
        })
    }

    fn best_action(&mut self, obs: Obs<'_>, out: &mut ActionBuf) {
        self.actor.best_action(obs, out);
    }

    fn probabilities(&mut self, obs: Obs<'_>, out: &mut [f64]) -> bool {
        if !self.actor.is_discrete() {
            return false;
        }
        out.copy_from_slice(self.actor.probabilities(obs));
        true
    }
}
