//! Learners: agents that choose actions and learn from transitions.
//!
//! A [`Learner`] is driven one step at a time: [`Learner::act`] samples an
//! action at a state, [`Learner::learn`] updates from one transition. The
//! runner calls `act` at the next state *before* `learn`, so Sarsa-style
//! critics get their next action; a terminal transition carries no next
//! action and is never bootstrapped, a truncated one is. One file per learner
//! family: [`reinforce`] (Monte Carlo policy gradient with baselines),
//! [`qac`] (Sarsa action-value critic), [`a2c`] (state-value critic; TD(0),
//! n-step and GAE(λ) advantages; entropy bonus), [`offpolicy`] (importance
//! weighted, Degris, White & Sutton 2012), [`deterministic`] (off-policy
//! deterministic policy gradient, Silver et al. 2014) and [`differential`]
//! (average reward). [`LearnerSetup`] ([`setup`]) is the config object that
//! selects and tunes them; [`build_learner_with`] builds one.

pub mod a2c;
pub mod deterministic;
pub mod differential;
pub mod offpolicy;
pub mod qac;
pub mod reinforce;
pub mod setup;

pub use crate::approx::FeatureCache;
pub use setup::{
    joint_vars, Baseline, BehaviourConfig, BehaviourKind, Family, LearnerSetup, ReplayConfig, SetupError,
};

use crate::approx::{build_approx, ApproxConfig, FeaturePool, Obs};
use crate::optim::Trainable;
pub use crate::policy::ActorParams;
use crate::policy::StochasticPolicy;
use crate::rng::Stream;
pub use crate::task::ActionBuf;
use crate::task::{Action, ActionSpace, TaskSpec};

/// One transition as a learner sees it.
#[derive(Clone, Copy, Debug)]
pub struct Transition<'a> {
    /// State before the action.
    pub obs: Obs<'a>,
    /// The action taken.
    pub action: Action<'a>,
    /// The reward the learner is trained on (base or shaped).
    pub reward: f64,
    /// State after the action.
    pub next: Obs<'a>,
    /// The action the learner chose at `next` (`None` after a termination).
    pub next_action: Option<Action<'a>>,
    /// `next` is terminal: its value is zero, no bootstrapping.
    pub terminated: bool,
    /// The episode was cut by the time limit at `next`: bootstrap from it.
    pub truncated: bool,
}

/// Per-step diagnostics of a learning update.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct StepDiag {
    /// The TD error δ of the critic (REINFORCE: the mean of `G_t − b_t`
    /// over the episode, at its last step; 0 on other steps).
    pub td_error: f64,
    /// Entropy of the policy at the updated state (nats; for a Gaussian the
    /// pre-squash entropy; for the deterministic learner the entropy of the
    /// exploration noise, in action units).
    pub entropy: f64,
    /// Norm of the actor's update direction (before the step size; 0 on a
    /// step without an actor update).
    pub actor_grad_norm: f64,
    /// Norm of the critic's update direction (before the step size).
    pub critic_grad_norm: f64,
    /// The importance weight `π(a|s) / b(a|s)` before any cap (off-policy
    /// learner only).
    pub weight: Option<f64>,
    /// Whether the weight was cut at `rho_cap`.
    pub weight_truncated: bool,
}

impl StepDiag {
    /// The diagnostics of an on-policy step: TD error, entropy and the two
    /// update norms (no importance weight).
    pub fn on_policy(td_error: f64, entropy: f64, actor_grad_norm: f64, critic_grad_norm: f64) -> Self {
        StepDiag { td_error, entropy, actor_grad_norm, critic_grad_norm, ..StepDiag::default() }
    }
}

/// Why a learner stopped.
#[derive(Clone, Debug, PartialEq)]
pub enum LearnError {
    /// A value or weight became NaN or infinite.
    Diverged(String),
}

impl std::fmt::Display for LearnError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LearnError::Diverged(what) => {
                write!(f, "diverged: {what} is not finite (try smaller step sizes)")
            }
        }
    }
}

impl std::error::Error for LearnError {}

/// An agent that acts and learns one transition at a time.
pub trait Learner {
    /// Samples an action at `obs` into `out` (off-policy learners: from the
    /// behaviour policy; the deterministic learner: with exploration noise).
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf);
    /// Learns from one transition.
    fn learn(&mut self, t: &Transition<'_>, rng: &mut Stream) -> Result<StepDiag, LearnError>;
    /// Samples an action of the learned policy at `obs` into `out`, for
    /// evaluation episodes: the target policy of an off-policy learner, the
    /// actor without exploration noise for the deterministic learner, the
    /// policy itself for the others. It changes nothing the learner's own
    /// steps depend on (no stored samples, no learning state), so evaluating
    /// between two training steps leaves training exactly as it was.
    fn act_learned(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf);
    /// The action the learned (target) policy prefers at `obs`, without
    /// exploration: the most probable action, the squashed Gaussian mean, or
    /// the clipped deterministic action.
    fn best_action(&mut self, obs: Obs<'_>, out: &mut ActionBuf);
    /// The learned (target) policy's probabilities `π(·|s)` on a task with
    /// discrete actions, written into `out`; false for continuous actions.
    fn probabilities(&mut self, _obs: Obs<'_>, _out: &mut [f64]) -> bool {
        false
    }
    /// The critic's estimate of the state value `V(s)` at `obs`, for the
    /// page's inspection views (the deterministic learner: `Q(s, μ(s))`; QAC:
    /// `Σ_a π(a|s) Q(s, a)`); `None` when the learner keeps no such estimate
    /// (REINFORCE without a value baseline).
    fn state_value(&mut self, _obs: Obs<'_>) -> Option<f64> {
        None
    }
    /// The actor's weights (the off-policy learner: its target policy's),
    /// for inspection; `None` for a learner without an actor of its own.
    fn actor_params(&self) -> Option<ActorParams<'_>> {
        None
    }
}

/// Builds the learner a setup describes, drawing any random initial weights
/// (MLPs only) from `rng` (call [`LearnerSetup::check`] first; this returns
/// its first error otherwise).
pub fn build_learner_with(
    setup: &LearnerSetup,
    spec: &TaskSpec,
    rng: &mut Stream,
) -> Result<Box<dyn Learner>, SetupError> {
    if let Some(e) = setup.check(spec).into_iter().next() {
        return Err(e);
    }
    Ok(match setup.family {
        Family::A2c => Box::new(a2c::A2c::new(setup, spec, rng)),
        Family::Qac => Box::new(qac::Qac::new(setup, spec, rng)),
        Family::Reinforce => Box::new(reinforce::Reinforce::new(setup, spec, rng)),
        Family::OffPolicy => Box::new(offpolicy::OffPolicy::new(setup, spec, rng)),
        Family::Deterministic => Box::new(deterministic::Deterministic::new(setup, spec, rng)),
        Family::Differential => Box::new(differential::Differential::new(setup, spec, rng)),
    })
}

/// Builds a learner with MLP weights (if any) drawn from a fixed stream.
pub fn build_learner(setup: &LearnerSetup, spec: &TaskSpec) -> Result<Box<dyn Learner>, SetupError> {
    build_learner_with(setup, spec, &mut Stream::from_seed(0))
}

/// An approximator over the task's state with `outputs` outputs and its
/// optimizer, for a checked setup.
pub(crate) fn state_net(
    pool: &mut FeaturePool,
    setup: &LearnerSetup,
    spec: &TaskSpec,
    cfg: &ApproxConfig,
    outputs: usize,
    step: f64,
    rng: &mut Stream,
) -> Trainable {
    let net = build_approx(
        pool,
        cfg,
        &setup.features_or_default(spec),
        &spec.state_vars,
        spec.n_states,
        spec.kind,
        outputs,
        rng,
    )
    .expect("a checked setup's approximator builds");
    Trainable::new(net, &setup.optimizer, step)
}

/// The stochastic actor of a checked setup: softmax on discrete actions,
/// squashed Gaussian on continuous ones.
pub(crate) fn stochastic_actor(
    pool: &mut FeaturePool,
    setup: &LearnerSetup,
    spec: &TaskSpec,
    rng: &mut Stream,
) -> StochasticPolicy {
    let actor = setup.actor_or_default();
    match &spec.actions {
        ActionSpace::Discrete(names) => StochasticPolicy::softmax(state_net(
            pool,
            setup,
            spec,
            &actor,
            names.len(),
            setup.actor_step,
            rng,
        )),
        ActionSpace::Continuous { low, high, .. } => {
            let net = state_net(pool, setup, spec, &actor, low.len(), setup.actor_step, rng);
            StochasticPolicy::gaussian(net, &setup.policy, low, high, &setup.optimizer, setup.actor_step)
        }
    }
}

/// The state-value critic of a checked setup.
pub(crate) fn value_critic(
    pool: &mut FeaturePool,
    setup: &LearnerSetup,
    spec: &TaskSpec,
    rng: &mut Stream,
) -> Trainable {
    state_net(pool, setup, spec, &setup.critic_or_default(), 1, setup.critic_step, rng)
}

/// Checks that a learner's numbers stay finite.
pub(crate) fn finite(what: &str, v: f64) -> Result<f64, LearnError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(LearnError::Diverged(what.into()))
    }
}

/// The entropy `H(π(·|s))` a step's diagnostics record and one actor step
/// along `signal · ∇ log π(a|s) + beta · ∇H` at `obs`: returns (entropy, the
/// step's norm), the same numbers as [`StochasticPolicy::entropy`] followed
/// by [`StochasticPolicy::ascend`]. A softmax's step computes π(·|s) with the
/// weights from before the step, which is the distribution whose entropy is
/// recorded, so the entropy is read from it afterwards
/// ([`StochasticPolicy::last_probabilities`]): one evaluation of the actor
/// and one softmax fewer per step. A Gaussian's entropy depends on its
/// log-standard deviations, which the step may change, so it is taken first.
/// A non-finite entropy is an error either way (the job stops).
pub(crate) fn entropy_and_ascend(
    actor: &mut StochasticPolicy,
    obs: Obs<'_>,
    action: Action<'_>,
    signal: f64,
    beta: f64,
) -> Result<(f64, f64), LearnError> {
    if actor.is_discrete() {
        let norm = actor.ascend(obs, action, signal, beta);
        let entropy = finite("policy entropy", crate::policy::entropy(actor.last_probabilities()))?;
        Ok((entropy, norm))
    } else {
        let entropy = finite("policy entropy", actor.entropy(obs))?;
        Ok((entropy, actor.ascend(obs, action, signal, beta)))
    }
}

/// A stored stretch of transitions (an episode for REINFORCE, a segment for
/// n-step A2C), sized once: observations, state ids, actions, rewards and
/// two spare numbers per step.
pub(crate) struct Trajectory {
    n_obs: usize,
    dims: usize,
    cap: usize,
    len: usize,
    obs: Vec<f64>,
    ids: Vec<Option<usize>>,
    index: Vec<usize>,
    vector: Vec<f64>,
    /// Rewards.
    pub reward: Vec<f64>,
    /// A spare number per step (e.g. the TD error).
    pub x: Vec<f64>,
    /// Another spare number per step (e.g. the return).
    pub y: Vec<f64>,
}

impl Trajectory {
    /// Room for `cap` steps of a task with `n_obs` state variables and
    /// `dims` continuous action components (0 for discrete actions).
    pub fn new(cap: usize, n_obs: usize, dims: usize) -> Self {
        Trajectory {
            n_obs,
            dims,
            cap,
            len: 0,
            obs: vec![0.0; cap * n_obs],
            ids: vec![None; cap],
            index: vec![0; cap],
            vector: vec![0.0; cap * dims],
            reward: vec![0.0; cap],
            x: vec![0.0; cap],
            y: vec![0.0; cap],
        }
    }

    /// Steps stored.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Whether no more steps fit.
    pub fn is_full(&self) -> bool {
        self.len == self.cap
    }

    /// Stores a transition's state, action and reward (the caller checks
    /// [`Trajectory::is_full`] first); returns its position.
    pub fn push(&mut self, t: &Transition<'_>) -> usize {
        let i = self.len;
        self.obs[i * self.n_obs..(i + 1) * self.n_obs].copy_from_slice(t.obs.values);
        self.ids[i] = t.obs.id;
        match t.action {
            Action::Index(a) => self.index[i] = a,
            Action::Vector(v) => self.vector[i * self.dims..(i + 1) * self.dims].copy_from_slice(v),
        }
        self.reward[i] = t.reward;
        self.len += 1;
        i
    }

    /// The state of step `i`.
    pub fn obs(&self, i: usize) -> Obs<'_> {
        Obs { values: &self.obs[i * self.n_obs..(i + 1) * self.n_obs], id: self.ids[i] }
    }

    /// The action of step `i`.
    pub fn action(&self, i: usize) -> Action<'_> {
        if self.dims == 0 {
            Action::Index(self.index[i])
        } else {
            Action::Vector(&self.vector[i * self.dims..(i + 1) * self.dims])
        }
    }

    /// Forgets every step.
    pub fn clear(&mut self) {
        self.len = 0;
    }
}

/// Number of continuous action components (0 for discrete actions).
pub(crate) fn action_dims(spec: &TaskSpec) -> usize {
    match &spec.actions {
        ActionSpace::Discrete(_) => 0,
        ActionSpace::Continuous { low, .. } => low.len(),
    }
}
