//! Deterministic actor-critic: off-policy deterministic policy gradient.
//!
//! Silver et al. (2014), "Deterministic policy gradient algorithms", ICML,
//! Section 4.2 (off-policy deterministic actor-critic, OPDAC): the agent
//! behaves with `a = clip(μ(s) + ξ)`, `ξ ~ N(0, (σ · half-range)²)`, and
//! learns
//! - a critic `Q(s, a)` over the joint input (state variables, then action
//!   components) by Q-learning towards `r + γ Q'(s', μ'(s'))` (no bootstrap
//!   after a termination); the critic must be differentiable in the action:
//!   linear over Fourier, RBF or polynomial features (default: polynomials of
//!   degree 2), or an MLP;
//! - the actor by the deterministic policy gradient (Theorem 1),
//!   `θ ← θ + α_a ∇_θ μ(s) ∇_a Q(s, a)|_{a = clip(μ(s))}`.
//!
//! Options after Lillicrap et al. (2016, DDPG): a replay buffer of the last
//! `replay.capacity` transitions, from which `replay.batch` are drawn
//! uniformly at every step once the buffer holds a batch (one optimizer
//! step per batch for the critic, then for the actor, each along the mean
//! of the batch's directions); and target copies
//! `Q'`, `μ'` soft-updated by `θ' ← τ θ + (1 − τ) θ'` after each step
//! (`target_tau = 1` means no copies: `Q' = Q`, `μ' = μ`). Without replay
//! each transition is learned from once, as it comes.

use super::ActorParams;
use super::{finite, joint_vars, state_net, LearnError, Learner, LearnerSetup, StepDiag, Transition};
use crate::approx::FeaturePool;
use crate::approx::{build_approx, Approx, Obs};
use crate::optim::Trainable;
use crate::policy::deterministic::DeterministicPolicy;
use crate::rng::Stream;
use crate::task::ActionBuf;
use crate::task::{Action, ActionSpace, TaskSpec};

/// A ring buffer of transitions, sized once.
struct Replay {
    cap: usize,
    len: usize,
    head: usize,
    n_obs: usize,
    dims: usize,
    obs: Vec<f64>,
    ids: Vec<Option<usize>>,
    next: Vec<f64>,
    next_ids: Vec<Option<usize>>,
    act: Vec<f64>,
    reward: Vec<f64>,
    terminal: Vec<bool>,
}

impl Replay {
    fn new(cap: usize, n_obs: usize, dims: usize) -> Self {
        Replay {
            cap,
            len: 0,
            head: 0,
            n_obs,
            dims,
            obs: vec![0.0; cap * n_obs],
            ids: vec![None; cap],
            next: vec![0.0; cap * n_obs],
            next_ids: vec![None; cap],
            act: vec![0.0; cap * dims],
            reward: vec![0.0; cap],
            terminal: vec![false; cap],
        }
    }

    fn push(&mut self, t: &Transition<'_>, a: &[f64]) {
        let i = self.head;
        let (n, d) = (self.n_obs, self.dims);
        self.obs[i * n..(i + 1) * n].copy_from_slice(t.obs.values);
        self.ids[i] = t.obs.id;
        self.next[i * n..(i + 1) * n].copy_from_slice(t.next.values);
        self.next_ids[i] = t.next.id;
        self.act[i * d..(i + 1) * d].copy_from_slice(a);
        self.reward[i] = t.reward;
        self.terminal[i] = t.terminated;
        self.head = (self.head + 1) % self.cap;
        self.len = (self.len + 1).min(self.cap);
    }

    fn obs(&self, i: usize) -> Obs<'_> {
        Obs { values: &self.obs[i * self.n_obs..(i + 1) * self.n_obs], id: self.ids[i] }
    }

    fn next(&self, i: usize) -> Obs<'_> {
        Obs { values: &self.next[i * self.n_obs..(i + 1) * self.n_obs], id: self.next_ids[i] }
    }

    fn action(&self, i: usize) -> &[f64] {
        &self.act[i * self.dims..(i + 1) * self.dims]
    }
}

/// The deterministic actor-critic.
pub struct Deterministic {
    actor: DeterministicPolicy,
    critic: Trainable,
    actor_target: Option<Box<dyn Approx>>,
    critic_target: Option<Box<dyn Approx>>,
    tau: f64,
    gamma: f64,
    noise: f64,
    low: Vec<f64>,
    high: Vec<f64>,
    n_obs: usize,
    replay: Option<Replay>,
    batch: usize,
    picks: Vec<usize>,
    joint: Vec<f64>,
    dq: Vec<f64>,
    mu: Vec<f64>,
    entropy: f64,
    current: Replay,
}

impl Deterministic {
    /// A learner for a checked setup.
    pub fn new(setup: &LearnerSetup, spec: &TaskSpec, rng: &mut Stream) -> Self {
        let ActionSpace::Continuous { low, high, .. } = &spec.actions else {
            panic!("a checked deterministic setup has continuous actions");
        };
        let dims = low.len();
        let n_obs = spec.state_vars.len();
        let actor_cfg = setup.actor_or_default();
        let critic_cfg = setup.critic_or_default();
        let shared = setup.features_or_default(spec);
        let joint = joint_vars(spec);
        let make_critic = |rng: &mut Stream| {
            build_approx(&mut FeaturePool::default(), &critic_cfg, &shared, &joint, None, spec.kind, 1, rng)
                .expect("a checked setup's critic builds")
        };
        let actor_net =
            state_net(&mut FeaturePool::default(), setup, spec, &actor_cfg, dims, setup.actor_step, rng);
        let critic_net = make_critic(rng);
        let use_targets = setup.target_tau < 1.0;
        let actor_target = use_targets.then(|| {
            let mut a = build_approx(
                &mut FeaturePool::default(),
                &actor_cfg,
                &shared,
                &spec.state_vars,
                spec.n_states,
                spec.kind,
                dims,
                rng,
            )
            .expect("a checked setup's actor builds");
            a.params_mut().copy_from_slice(actor_net.net.params());
            a
        });
        let critic_target = use_targets.then(|| {
            let mut c = make_critic(rng);
            c.params_mut().copy_from_slice(critic_net.params());
            c
        });
        let cap = setup.replay.capacity as usize;
        let batch = if cap > 0 { setup.replay.batch as usize } else { 1 };
        let noise = setup.noise_std;
        let entropy = if noise > 0.0 {
            low.iter()
                .zip(high)
                .map(|(l, h)| {
                    let s = noise * 0.5 * (h - l);
                    0.5 * libm::log(2.0 * core::f64::consts::PI * core::f64::consts::E * s * s)
                })
                .sum()
        } else {
            0.0
        };
        Deterministic {
            actor: DeterministicPolicy::new(actor_net, low, high),
            critic: Trainable::new(critic_net, &setup.optimizer, setup.critic_step),
            actor_target,
            critic_target,
            tau: setup.target_tau,
            gamma: setup.discount_on(spec),
            noise,
            low: low.clone(),
            high: high.clone(),
            n_obs,
            replay: (cap > 0).then(|| Replay::new(cap, n_obs, dims)),
            batch,
            picks: vec![0; batch],
            joint: vec![0.0; n_obs + dims],
            dq: vec![0.0; n_obs + dims],
            mu: vec![0.0; dims],
            entropy,
            current: Replay::new(1, n_obs, dims),
        }
    }

    /// `clip(μ(s))`, the action the learned policy takes at `obs`.
    pub fn policy_action(&mut self, obs: Obs<'_>, out: &mut [f64]) {
        self.actor.mean_into(obs, out);
    }

    /// The critic's `Q(s, a)`.
    pub fn q(&mut self, obs: Obs<'_>, a: &[f64]) -> f64 {
        self.joint[..self.n_obs].copy_from_slice(obs.values);
        self.joint[self.n_obs..].copy_from_slice(a);
        self.critic.eval(Obs { values: &self.joint, id: None })[0]
    }

    /// One critic step and one actor step over the transitions `picks` of
    /// `buf`, each along the *mean* of the batch's directions (as in
    /// minibatch DPG, Lillicrap et al. 2016, Algorithm 1), so the step
    /// sizes mean the same whatever the batch size.
    fn update(&mut self, from_replay: bool) -> Result<(f64, f64, f64), LearnError> {
        let buf = if from_replay { self.replay.as_ref().expect("replay") } else { &self.current };
        let n = self.n_obs;
        let inv = 1.0 / self.picks.len() as f64;
        let mut td_sum = 0.0;
        for k in 0..self.picks.len() {
            let i = self.picks[k];
            // Target: r + γ Q'(s', μ'(s')).
            let target = if buf.terminal[i] {
                buf.reward[i]
            } else {
                let s2 = buf.next(i);
                let mu2 = match &mut self.actor_target {
                    Some(a) => a.eval(s2),
                    None => self.actor.net.eval(s2),
                };
                for j in 0..self.mu.len() {
                    self.mu[j] = mu2[j].clamp(self.low[j], self.high[j]);
                }
                self.joint[..n].copy_from_slice(s2.values);
                self.joint[n..].copy_from_slice(&self.mu);
                let q2 = match &mut self.critic_target {
                    Some(c) => c.eval(Obs { values: &self.joint, id: None })[0],
                    None => self.critic.eval(Obs { values: &self.joint, id: None })[0],
                };
                buf.reward[i] + self.gamma * q2
            };
            self.joint[..n].copy_from_slice(buf.obs(i).values);
            self.joint[n..].copy_from_slice(buf.action(i));
            let joint = Obs { values: &self.joint, id: None };
            let delta = finite("TD error", target - self.critic.eval(joint)[0])?;
            td_sum += delta;
            self.critic.accumulate(joint, &[1.0], delta * inv);
        }
        let critic_norm = finite("critic update", self.critic.apply())?;
        for k in 0..self.picks.len() {
            let i = self.picks[k];
            let s = buf.obs(i);
            self.actor.mean_into(s, &mut self.mu);
            self.joint[..n].copy_from_slice(s.values);
            self.joint[n..].copy_from_slice(&self.mu);
            self.critic.net.input_grad(Obs { values: &self.joint, id: None }, &[1.0], &mut self.dq);
            for d in &mut self.dq[n..] {
                *d *= inv;
            }
            self.actor.accumulate(s, &self.dq[n..]);
        }
        let actor_norm = finite("actor update", self.actor.net.apply())?;
        let tau = self.tau;
        if let Some(a) = &mut self.actor_target {
            for (t, &w) in a.params_mut().iter_mut().zip(self.actor.net.net.params()) {
                *t = tau * w + (1.0 - tau) * *t;
            }
        }
        if let Some(c) = &mut self.critic_target {
            for (t, &w) in c.params_mut().iter_mut().zip(self.critic.net.params()) {
                *t = tau * w + (1.0 - tau) * *t;
            }
        }
        Ok((td_sum / self.picks.len() as f64, actor_norm, critic_norm))
    }
}

impl Learner for Deterministic {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        let ActionBuf::Vector(a) = out else {
            panic!("the deterministic learner needs a continuous action buffer");
        };
        self.actor.act_into(obs, self.noise, rng, a);
    }

    fn learn(&mut self, t: &Transition<'_>, rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let Action::Vector(a) = t.action else {
            panic!("the deterministic learner was given a discrete action");
        };
        let (td, actor_norm, critic_norm) = match &mut self.replay {
            None => {
                self.current.len = 0;
                self.current.head = 0;
                self.current.push(t, a);
                self.picks[0] = 0;
                self.update(false)?
            }
            Some(r) => {
                r.push(t, a);
                if r.len < self.batch {
                    return Ok(StepDiag { entropy: self.entropy, ..StepDiag::default() });
                }
                for k in 0..self.batch {
                    self.picks[k] = rng.below(r.len);
                }
                self.update(true)?
            }
        };
        Ok(StepDiag {
            td_error: td,
            entropy: self.entropy,
            actor_grad_norm: actor_norm,
            critic_grad_norm: critic_norm,
            ..StepDiag::default()
        })
    }

    /// The actor's action `clip(μ(s))`, without exploration noise.
    fn act_learned(&mut self, obs: Obs<'_>, _rng: &mut Stream, out: &mut ActionBuf) {
        self.best_action(obs, out);
    }

    fn best_action(&mut self, obs: Obs<'_>, out: &mut ActionBuf) {
        if let ActionBuf::Vector(a) = out {
            self.actor.mean_into(obs, a);
        }
    }

    /// `Q(s, μ(s))` with `μ(s)` clipped to the bounds.
    fn state_value(&mut self, obs: Obs<'_>) -> Option<f64> {
        self.actor.mean_into(obs, &mut self.mu);
        let mu = std::mem::take(&mut self.mu);
        let q = self.q(obs, &mu);
        self.mu = mu;
        Some(q)
    }

    fn actor_params(&self) -> Option<ActorParams<'_>> {
        Some(ActorParams { weights: self.actor.net.net.params(), log_std: &[] })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::learn::ReplayConfig;
    use crate::task::lqr::{Lqr, LqrConfig};
    use crate::task::Task;

    fn learner(capacity: u32, batch: u32) -> Deterministic {
        let task = Lqr::new(LqrConfig::default()).unwrap();
        let setup = LearnerSetup {
            family: crate::learn::Family::Deterministic,
            replay: ReplayConfig { capacity, batch },
            ..LearnerSetup::default()
        };
        Deterministic::new(&setup, task.spec(), &mut Stream::from_seed(3))
    }

    #[test]
    fn a_batch_of_copies_moves_the_weights_as_one_transition_does() {
        // Minibatch DPG (Lillicrap et al. 2016, Algorithm 1) follows the mean of
        // the batch's gradients: a batch of 16 copies of one transition must give
        // the same step as that transition alone (summing would give 16 times it).
        let (obs, next, a) = ([1.5], [0.7], [0.4]);
        let t = Transition {
            obs: Obs { values: &obs, id: None },
            action: Action::Vector(&a),
            reward: -2.41,
            next: Obs { values: &next, id: None },
            next_action: None,
            terminated: false,
            truncated: false,
        };
        let mut one = learner(1, 1);
        let mut many = learner(16, 16);
        let mut rng = Stream::from_seed(9);
        one.learn(&t, &mut rng).unwrap();
        for _ in 0..16 {
            many.learn(&t, &mut rng).unwrap();
        }
        let close =
            |x: &[f64], y: &[f64]| x.iter().zip(y).all(|(p, q)| (p - q).abs() <= 1e-12 * (1.0 + p.abs()));
        assert!(close(one.actor.net.net.params(), many.actor.net.net.params()));
        assert!(close(one.critic.net.params(), many.critic.net.params()));
        assert!(one.critic.net.params().iter().any(|&w| w != 0.0), "the step moved the critic");
    }
}
