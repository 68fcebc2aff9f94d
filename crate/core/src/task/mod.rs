//! Tasks: the environments an agent learns in.
//!
//! A [`Task`] exposes named state variables (later used by reward formulas and
//! plots), a discrete or continuous action set, and steps that may end the
//! episode by *termination*. Time-limit *truncation* is not the task's
//! business: the runner cuts episodes at the configured length and tells the
//! learner, which bootstraps across a truncation but never across a
//! termination. Finite tasks also expose their exact model ([`FiniteModel`]).

pub mod cartpole;
pub mod corridor;
pub mod finite;
pub mod grid;
pub mod layouts;
pub mod lqr;
pub mod mountain_car;
pub mod pendulum;
pub mod server;

use crate::rng::Stream;

/// One named state variable with the range used to normalise it for features.
#[derive(Clone, Debug, PartialEq)]
pub struct StateVar {
    /// Name usable in formulas and plots (snake case).
    pub name: String,
    /// Lower end of the typical range (features clamp below it).
    pub low: f64,
    /// Upper end of the typical range (features clamp above it).
    pub high: f64,
}

/// The set of actions of a task.
#[derive(Clone, Debug, PartialEq)]
pub enum ActionSpace {
    /// Finitely many actions, named.
    Discrete(Vec<String>),
    /// A box of real-valued actions.
    Continuous {
        /// Names of the action components.
        names: Vec<String>,
        /// Lower bounds, one per component.
        low: Vec<f64>,
        /// Upper bounds, one per component.
        high: Vec<f64>,
    },
}

impl ActionSpace {
    /// Number of discrete actions, or `None` for a continuous space.
    pub fn discrete_count(&self) -> Option<usize> {
        match self {
            ActionSpace::Discrete(n) => Some(n.len()),
            ActionSpace::Continuous { .. } => None,
        }
    }

    /// Names of the actions (discrete) or action components (continuous).
    pub fn names(&self) -> &[String] {
        match self {
            ActionSpace::Discrete(n) => n,
            ActionSpace::Continuous { names, .. } => names,
        }
    }
}

/// What a task declares about itself.
#[derive(Clone, Debug, PartialEq)]
pub struct TaskSpec {
    /// Short kind name, as in configs (`"grid"`, `"cartpole"`).
    pub kind: &'static str,
    /// The observation: one entry per state variable.
    pub state_vars: Vec<StateVar>,
    /// The actions.
    pub actions: ActionSpace,
    /// Number of discrete states, for finite tasks (enables tabular features).
    pub n_states: Option<usize>,
    /// The discount used when a learner does not set one.
    pub default_discount: f64,
    /// Episode length after which the runner truncates; for a continuing
    /// task, the length of the reporting window instead.
    pub max_steps: u32,
    /// The task never ends (no terminal state, no truncation): the runner
    /// resets it once and reports the mean reward per step over windows of
    /// `max_steps` steps. False for episodic tasks.
    pub continuing: bool,
    /// Names of the discrete states, for a task that has them (a table
    /// task): reward formulas may use them as numbers (the state's index).
    /// Empty for other tasks.
    pub state_names: Vec<String>,
    /// Named numbers each discrete action sets (a formula task's `set`):
    /// (name, value per action index). Reward formulas may use the names;
    /// they stand for the value of the action taken. Empty for other tasks.
    pub action_numbers: Vec<(String, Vec<f64>)>,
}

/// An action handed to a task.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Action<'a> {
    /// Index into a discrete action set.
    Index(usize),
    /// A point of a continuous action box.
    Vector(&'a [f64]),
}

/// The outcome of one step.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Step {
    /// The task's own (base) reward for the transition.
    pub reward: f64,
    /// The episode ended in a terminal state (no bootstrapping past it).
    pub terminated: bool,
}

/// An environment.
pub trait Task: Send {
    /// What the task declares about itself.
    fn spec(&self) -> &TaskSpec;
    /// Starts an episode: draws a start state and writes its observation.
    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]);
    /// Applies an action, writes the next observation, returns reward and termination.
    fn step(&mut self, action: Action<'_>, rng: &mut Stream, obs: &mut [f64]) -> Step;
    /// The current discrete state, for finite tasks.
    fn state_id(&self) -> Option<usize> {
        None
    }
    /// The discrete state an observation stands for, for finite tasks
    /// (`None` for continuous tasks or an observation that is no state).
    fn id_of(&self, _obs: &[f64]) -> Option<usize> {
        None
    }
    /// The exact model, for finite tasks.
    fn model(&self) -> Option<FiniteModel> {
        None
    }
    /// Writes the observation (state variables) of discrete state `s` into
    /// `obs`, for finite tasks; returns false when the task cannot (the
    /// shaping audit needs it to evaluate formulas on the exact model).
    fn state_obs(&self, _s: usize, _obs: &mut [f64]) -> bool {
        false
    }
    /// Why the last step failed, when it returned a reward that is not
    /// finite because the task itself went wrong (a user-written model
    /// whose state became NaN): the runner puts it in the job's reason.
    fn fault(&self) -> Option<String> {
        None
    }
}

/// One possible outcome of a state-action pair in a finite model.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Outcome {
    /// Next state.
    pub next: usize,
    /// Probability of this outcome.
    pub prob: f64,
    /// Reward received.
    pub reward: f64,
    /// Whether the next state is terminal (the episode ends).
    pub terminal: bool,
}

/// The exact model of a finite task: `outcomes[s][a]` lists what can happen.
#[derive(Clone, Debug, PartialEq)]
pub struct FiniteModel {
    /// Number of states.
    pub n_states: usize,
    /// Number of actions.
    pub n_actions: usize,
    /// Start-state distribution.
    pub start: Vec<f64>,
    /// Whether each state is terminal (absorbing, value 0).
    pub terminal: Vec<bool>,
    /// Outcomes per state and action (empty lists for terminal states).
    pub outcomes: Vec<Vec<Vec<Outcome>>>,
}

/// Errors in a task's settings.
#[derive(Clone, Debug, PartialEq)]
pub enum TaskError {
    /// A setting is invalid: (field path relative to the task, message).
    Invalid(String, String),
}

impl std::fmt::Display for TaskError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            TaskError::Invalid(field, msg) => write!(f, "{field}: {msg}"),
        }
    }
}

impl std::error::Error for TaskError {}

/// An action chosen by a learner or a policy, in a buffer owned by the caller
/// (sized once for the task's action space).
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
            ActionSpace::Discrete(_) => ActionBuf::Index(0),
            ActionSpace::Continuous { low, .. } => ActionBuf::Vector(vec![0.0; low.len()]),
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

    /// The action as numbers: `[index]` for a discrete action, the
    /// components for a continuous one.
    pub fn to_vec(&self) -> Vec<f64> {
        match self {
            ActionBuf::Index(i) => vec![*i as f64],
            ActionBuf::Vector(v) => v.clone(),
        }
    }
}
