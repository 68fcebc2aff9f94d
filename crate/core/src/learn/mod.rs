//! Learners: agents that choose actions and learn from transitions.
//!
//! A [`Learner`] is driven one step at a time: [`Learner::act`] samples an
//! action at a state, [`Learner::learn`] updates from one transition. The
//! runner calls `act` at the next state *before* `learn`, so Sarsa-style
//! critics get their next action; a terminal transition carries no next
//! action and is never bootstrapped, a truncated one is. One file per learner
//! family: [`a2c`] (TD(0) state-value critic, TD error as the advantage) and
//! [`qac`] (Sarsa action-value critic). [`LearnerSetup`] is the config object
//! that selects and tunes them.

pub mod a2c;
pub mod qac;

use serde::{Deserialize, Serialize};

use crate::approx::{build_features, default_features, FeatureConfig, Features, Obs, Sparse};
use crate::rng::Stream;
use crate::task::{Action, TaskSpec};

/// An action chosen by a learner, in a buffer owned by the caller.
#[derive(Clone, Debug, PartialEq)]
pub enum ActionBuf {
    /// A discrete action.
    Index(usize),
    /// A continuous action (sized once).
    Vector(Vec<f64>),
}

impl ActionBuf {
    /// A buffer fit for the task's action space.
    pub fn for_spec(spec: &TaskSpec) -> Self {
        match &spec.actions {
            crate::task::ActionSpace::Discrete(_) => ActionBuf::Index(0),
            crate::task::ActionSpace::Continuous { low, .. } => ActionBuf::Vector(vec![0.0; low.len()]),
        }
    }

    /// The action as the task takes it.
    pub fn as_action(&self) -> Action<'_> {
        match self {
            ActionBuf::Index(i) => Action::Index(*i),
            ActionBuf::Vector(v) => Action::Vector(v),
        }
    }

    /// The discrete index; panics for a continuous action (a programming error).
    pub fn index(&self) -> usize {
        match self {
            ActionBuf::Index(i) => *i,
            ActionBuf::Vector(_) => panic!("a discrete learner was given a continuous action"),
        }
    }
}

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
    /// The TD error δ of the critic.
    pub td_error: f64,
    /// Entropy of the policy at the updated state (nats).
    pub entropy: f64,
    /// Norm of the actor's update direction (before the step size).
    pub actor_grad_norm: f64,
    /// Norm of the critic's update direction (before the step size).
    pub critic_grad_norm: f64,
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
pub trait Learner: Send {
    /// Samples an action at `obs` into `out`.
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf);
    /// Learns from one transition.
    fn learn(&mut self, t: &Transition<'_>, rng: &mut Stream) -> Result<StepDiag, LearnError>;
}

/// The learner families.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Algo {
    /// Advantage actor-critic: TD(0) state-value critic, TD error as the advantage.
    #[default]
    A2c,
    /// Q actor-critic: Sarsa action-value critic, Q(s, a) scales the score.
    Qac,
}

/// A learner setup (the `base` object of a config, and each variant's
/// `learner` overrides).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LearnerSetup {
    /// Which learner. Default `"a2c"`.
    #[serde(default)]
    pub algo: Algo,
    /// Discount γ in [0, 1]. Default: the task's (0.99 for the built-in tasks).
    #[serde(default)]
    pub discount: Option<f64>,
    /// Actor step size in (0, 10]. Default 0.1.
    #[serde(default = "default_actor_step")]
    pub actor_step: f64,
    /// Critic step size in (0, 10]. Default 0.2.
    #[serde(default = "default_critic_step")]
    pub critic_step: f64,
    /// Features for actor and critic. Default: tabular on finite tasks, tile
    /// coding otherwise.
    #[serde(default)]
    pub features: Option<FeatureConfig>,
}

fn default_actor_step() -> f64 {
    0.1
}
fn default_critic_step() -> f64 {
    0.2
}

impl Default for LearnerSetup {
    fn default() -> Self {
        LearnerSetup {
            algo: Algo::default(),
            discount: None,
            actor_step: default_actor_step(),
            critic_step: default_critic_step(),
            features: None,
        }
    }
}

/// A setting of a learner setup that is out of range: (field path within
/// the setup, message).
#[derive(Clone, Debug, PartialEq)]
pub struct SetupError {
    /// Field path within the setup, e.g. `features.tilings`.
    pub field: String,
    /// What is wrong.
    pub message: String,
}

impl std::fmt::Display for SetupError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.field, self.message)
    }
}

impl std::error::Error for SetupError {}

/// Resolved hyper-parameters shared by the learners.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Resolved {
    /// Discount γ.
    pub discount: f64,
    /// Actor step size, already scaled by the features' step scale.
    pub actor_step: f64,
    /// Critic step size, already scaled by the features' step scale.
    pub critic_step: f64,
}

impl LearnerSetup {
    /// Checks ranges and fit to the task; returns every problem found.
    pub fn check(&self, spec: &TaskSpec) -> Vec<SetupError> {
        let mut errs = Vec::new();
        let mut bad = |field: &str, message: String| errs.push(SetupError { field: field.into(), message });
        if let Some(g) = self.discount {
            if !(0.0..=1.0).contains(&g) {
                bad("discount", format!("must be in [0, 1], got {g}"));
            }
        }
        for (name, v) in [("actor_step", self.actor_step), ("critic_step", self.critic_step)] {
            if !(v > 0.0 && v <= 10.0) {
                bad(name, format!("must be in (0, 10], got {v}"));
            }
        }
        if spec.actions.discrete_count().is_none() {
            bad(
                "algo",
                format!("{:?} needs discrete actions; {} has continuous actions", self.algo, spec.kind),
            );
        }
        if let Err(e) = build_features(&self.features_or_default(spec), spec) {
            let crate::approx::FeatureError::Invalid(field, message) = e;
            bad(&format!("features.{field}"), message);
        }
        errs
    }

    /// The features this setup uses on `spec`.
    pub fn features_or_default(&self, spec: &TaskSpec) -> FeatureConfig {
        self.features.clone().unwrap_or_else(|| default_features(spec))
    }
}

/// Builds the learner a setup describes (call [`LearnerSetup::check`] first;
/// this returns its first error otherwise).
pub fn build_learner(setup: &LearnerSetup, spec: &TaskSpec) -> Result<Box<dyn Learner>, SetupError> {
    if let Some(e) = setup.check(spec).into_iter().next() {
        return Err(e);
    }
    let features = build_features(&setup.features_or_default(spec), spec)
        .map_err(|e| SetupError { field: "features".into(), message: e.to_string() })?;
    let scale = features.step_scale();
    let resolved = Resolved {
        discount: setup.discount.unwrap_or(spec.default_discount),
        actor_step: setup.actor_step * scale,
        critic_step: setup.critic_step * scale,
    };
    let actions = spec.actions.discrete_count().unwrap_or(0);
    Ok(match setup.algo {
        Algo::A2c => Box::new(a2c::A2c::new(features, actions, resolved)),
        Algo::Qac => Box::new(qac::Qac::new(features, actions, resolved)),
    })
}

/// A two-slot cache of feature vectors keyed by observation, so that the
/// features of a state are computed once although the state is seen by
/// `act`, then by `learn` as the next state, then by `learn` as the state.
pub struct FeatureCache {
    features: Box<dyn Features>,
    keys: [Vec<f64>; 2],
    ids: [Option<usize>; 2],
    valid: [bool; 2],
    slots: [Sparse; 2],
    newest: usize,
}

impl FeatureCache {
    /// A cache over a feature map; buffers are sized once here.
    pub fn new(features: Box<dyn Features>) -> Self {
        let cap = features.max_active();
        FeatureCache {
            features,
            keys: [Vec::new(), Vec::new()],
            ids: [None; 2],
            valid: [false; 2],
            slots: [Sparse::with_capacity(cap), Sparse::with_capacity(cap)],
            newest: 0,
        }
    }

    /// Length of the feature vectors.
    pub fn dim(&self) -> usize {
        self.features.dim()
    }

    fn find(&self, obs: Obs<'_>) -> Option<usize> {
        (0..2).find(|&i| {
            self.valid[i]
                && self.ids[i] == obs.id
                && self.keys[i].len() == obs.values.len()
                && self.keys[i].iter().zip(obs.values).all(|(a, b)| a.to_bits() == b.to_bits())
        })
    }

    /// The slot holding `obs`'s features, computing them if needed without
    /// evicting slot `keep`.
    fn ensure(&mut self, obs: Obs<'_>, keep: Option<usize>) -> usize {
        if let Some(i) = self.find(obs) {
            self.newest = i;
            return i;
        }
        let slot = match keep {
            Some(k) => 1 - k,
            None => 1 - self.newest,
        };
        // Sized on first use only (observation lengths never change in a job).
        self.keys[slot].clear();
        self.keys[slot].extend_from_slice(obs.values);
        self.ids[slot] = obs.id;
        self.valid[slot] = true;
        self.features.compute(obs, &mut self.slots[slot]);
        self.newest = slot;
        slot
    }

    /// Features of one state.
    pub fn get(&mut self, obs: Obs<'_>) -> &Sparse {
        let i = self.ensure(obs, None);
        &self.slots[i]
    }

    /// Features of a state and of the next state.
    pub fn pair(&mut self, obs: Obs<'_>, next: Obs<'_>) -> (&Sparse, &Sparse) {
        let i = self.ensure(obs, None);
        let j = self.ensure(next, Some(i));
        (&self.slots[i], &self.slots[j])
    }
}

/// Checks that a learner's numbers stay finite.
pub(crate) fn finite(what: &str, v: f64) -> Result<f64, LearnError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(LearnError::Diverged(what.into()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::approx::Tabular;

    #[test]
    fn cache_computes_each_state_once_in_runner_order() {
        struct Counting(std::sync::Arc<std::sync::atomic::AtomicUsize>);
        impl Features for Counting {
            fn dim(&self) -> usize {
                10
            }
            fn max_active(&self) -> usize {
                1
            }
            fn compute(&self, obs: Obs<'_>, out: &mut Sparse) {
                self.0.fetch_add(1, std::sync::atomic::Ordering::SeqCst);
                Tabular::one_hot(obs.id.unwrap(), out);
            }
        }
        let n = std::sync::Arc::new(std::sync::atomic::AtomicUsize::new(0));
        let mut c = FeatureCache::new(Box::new(Counting(n.clone())));
        fn o(i: usize, v: &[f64; 1]) -> Obs<'_> {
            Obs { values: &v[..], id: Some(i) }
        }
        let vals: Vec<[f64; 1]> = (0..6).map(|i| [i as f64]).collect();
        c.get(o(0, &vals[0]));
        for s in 0..5 {
            c.get(o(s + 1, &vals[s + 1])); // act at the next state
            let (a, b) = c.pair(o(s, &vals[s]), o(s + 1, &vals[s + 1]));
            assert_eq!((a.idx[0], b.idx[0]), (s as u32, s as u32 + 1));
        }
        assert_eq!(n.load(std::sync::atomic::Ordering::SeqCst), 6);
    }
}
