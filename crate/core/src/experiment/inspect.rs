//! What a trained job has learned: its policy and critic read at given
//! states, the exact value of its policy where the task has an exact model,
//! episodes played with it, and one report of all that for a (variant,
//! seed, step) of a plan.
//!
//! The readings work on any [`Learner`] and [`Task`], so the page (through
//! the WebAssembly handles), the `critbox inspect` command and the tests share
//! them:
//! - [`read_at`]: per observation, the critic's value and the policy
//!   (π(a|s) per action, or the preferred continuous action);
//! - [`policy_table`] and [`policy_values`]: the learned policy on every
//!   state of the exact model and its values `(I − γ P_π) V = r_π`
//!   ([`crate::exact::evaluate`]);
//! - [`rollout`]: one episode of the policy on a fresh copy of the task, with
//!   streams of its own so the job is not disturbed;
//! - [`train`] and [`report`]: re-train a job to a step (jobs are
//!   deterministic, so this is the run's learner at that step) and describe
//!   it as an [`InspectReport`]: a state table on tasks with an exact model,
//!   on continuous ones the actor's weights and a slice over one or two state
//!   variables, and on the regulator the learned gain beside the Riccati gain.

use serde::Serialize;

use super::config::TaskConfig;
use super::{Job, JobStatus, Plan};
use crate::approx::{ApproxConfig, FeatureConfig, Obs};
use crate::exact;
use crate::learn::{Family, Learner};
use crate::rng::{Purpose, Stream};
use crate::task::corridor::ShortCorridor;
use crate::task::ActionBuf;
use crate::task::{lqr, FiniteModel, Task, TaskSpec};

/// Points per variable of a [`Slice`] over one state variable.
pub const SLICE_POINTS_1D: usize = 11;
/// Points per variable of a [`Slice`] over two state variables.
pub const SLICE_POINTS_2D: usize = 7;

/// Why an inspection cannot be made.
#[derive(Clone, Debug, PartialEq)]
pub enum InspectError {
    /// The variant index is not in the plan.
    Variant {
        /// The index asked for.
        given: usize,
        /// How many variants the plan has.
        variants: usize,
    },
    /// The seed index is not in the plan.
    Seed {
        /// The index asked for.
        given: usize,
        /// How many seeds the plan has.
        seeds: usize,
    },
    /// The step lies past the budget.
    Step {
        /// The step asked for.
        given: u64,
        /// The plan's steps per job.
        budget: u64,
    },
    /// Observations are not finite numbers in groups of one per state variable.
    Observations {
        /// State variables per observation.
        width: usize,
        /// How many numbers were given.
        got: usize,
    },
    /// An observation that is not a state of the finite task.
    NotAState(Vec<f64>),
}

impl std::fmt::Display for InspectError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            InspectError::Variant { given, variants } => write!(
                f,
                "variant: {given} is out of range: the config has {variants} variant(s), numbered from 0 to {}",
                variants.saturating_sub(1)
            ),
            InspectError::Seed { given, seeds } => write!(
                f,
                "seed: {given} is out of range: the config has {seeds} seed(s), numbered from 0 to {}",
                seeds.saturating_sub(1)
            ),
            InspectError::Step { given, budget } => {
                write!(f, "step: {given} is past the config's budget of {budget} steps per job")
            }
            InspectError::Observations { width, got } => write!(
                f,
                "observations must be finite numbers in groups of {width} (one per state variable), got {got}"
            ),
            InspectError::NotAState(values) => write!(f, "observation {values:?} is not a state of this task"),
        }
    }
}

impl std::error::Error for InspectError {}

/// Numbers per policy reading: the number of actions on a discrete task, of
/// action components on a continuous one.
pub fn policy_width(spec: &TaskSpec) -> usize {
    spec.actions.names().len()
}

/// The observation of every discrete state in state order, stride = number
/// of state variables; empty for a task without discrete states (or one that
/// cannot give their variables).
pub fn state_observations(task: &dyn Task) -> Vec<f64> {
    let Some(n) = task.spec().n_states else { return Vec::new() };
    let k = task.spec().state_vars.len();
    let mut out = vec![0.0; n * k];
    for s in 0..n {
        if !task.state_obs(s, &mut out[s * k..(s + 1) * k]) {
            return Vec::new();
        }
    }
    out
}

/// Writes what the learner prefers at `obs` into `policy` (length
/// [`policy_width`]): π(a|s) per action on a discrete task (a learner that
/// gives no probabilities puts 1 on its preferred action), the preferred
/// action (the mean, without exploration) on a continuous one. Returns the
/// critic's value estimate, if the learner keeps one.
pub fn read_one(learner: &mut dyn Learner, spec: &TaskSpec, obs: Obs<'_>, policy: &mut [f64]) -> Option<f64> {
    let value = learner.state_value(obs);
    let discrete = spec.actions.discrete_count().is_some();
    if !(discrete && learner.probabilities(obs, policy)) {
        let mut buf = ActionBuf::for_spec(spec);
        learner.best_action(obs, &mut buf);
        match &buf {
            ActionBuf::Index(a) => {
                for (i, p) in policy.iter_mut().enumerate() {
                    *p = if i == *a { 1.0 } else { 0.0 };
                }
            }
            ActionBuf::Vector(v) => policy.copy_from_slice(v),
        }
    }
    value
}

/// What the learner has learned at each observation (`observations` holds
/// them one after another, one number per state variable). Per observation,
/// stride `1 + policy_width`: the critic's value (NaN when the learner keeps
/// none), then the policy as [`read_one`] gives it. On a finite task every
/// observation must be one of its states.
pub fn read_at(
    learner: &mut dyn Learner,
    task: &dyn Task,
    observations: &[f64],
) -> Result<Vec<f64>, InspectError> {
    let spec = task.spec();
    let k = spec.state_vars.len();
    if k == 0 || !observations.len().is_multiple_of(k) || observations.iter().any(|v| !v.is_finite()) {
        return Err(InspectError::Observations { width: k, got: observations.len() });
    }
    let width = policy_width(spec);
    let finite = spec.n_states.is_some();
    let mut policy = vec![0.0; width];
    let mut out = Vec::with_capacity(observations.len() / k * (1 + width));
    for values in observations.chunks_exact(k) {
        let id = task.id_of(values);
        if finite && id.is_none() {
            return Err(InspectError::NotAState(values.to_vec()));
        }
        let value = read_one(learner, spec, Obs { values, id }, &mut policy);
        out.push(value.unwrap_or(f64::NAN));
        out.extend_from_slice(&policy);
    }
    Ok(out)
}

/// The learner's policy on every state of the task's exact model,
/// `pi[s * n_actions + a]`, read at each state's variables (with the state id
/// when the task declares discrete states). Terminal states, and states whose
/// variables the task cannot give, get action 0 (their row does not change
/// any value). `None` without discrete actions.
pub fn policy_table(learner: &mut dyn Learner, task: &dyn Task, m: &FiniteModel) -> Option<Vec<f64>> {
    let na = task.spec().actions.discrete_count()?;
    let ids = task.spec().n_states.is_some();
    let mut values = vec![0.0; task.spec().state_vars.len()];
    let mut pi = vec![0.0; m.n_states * na];
    for s in 0..m.n_states {
        let row = &mut pi[s * na..(s + 1) * na];
        if m.terminal[s]
            || !task.state_obs(s, &mut values)
            || !learner.probabilities(Obs { values: &values, id: ids.then_some(s) }, row)
        {
            row.fill(0.0);
            row[0] = 1.0;
        }
    }
    Some(pi)
}

/// The exact value of the learner's current policy at every state of the
/// task's model (in state order) under the task's own reward and discount
/// `gamma`: the solution of `(I − γ P_π) V = r_π` ([`exact::evaluate`]).
/// Empty for a task without an exact model or discrete actions; NaN
/// everywhere when the system cannot be solved (γ = 1 and a policy that may
/// never end an episode).
pub fn policy_values(learner: &mut dyn Learner, task: &dyn Task, gamma: f64) -> Vec<f64> {
    let Some(m) = task.model() else { return Vec::new() };
    let Some(pi) = policy_table(learner, task, &m) else { return Vec::new() };
    exact::evaluate(&m, &pi, gamma).unwrap_or_else(|_| vec![f64::NAN; m.n_states])
}

/// How a [`Rollout`] ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RolloutEnd {
    /// The last step reached a terminal state.
    Terminal,
    /// The step limit came first.
    StepLimit,
}

/// One step of a [`Rollout`].
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RolloutStep {
    /// The state variables before the step.
    pub obs: Vec<f64>,
    /// The action taken: `[index]` on a discrete task, the components on a
    /// continuous one.
    pub action: Vec<f64>,
    /// The task's own (base) reward for it.
    pub reward: f64,
    /// Whether the step ended the episode in a terminal state.
    pub terminated: bool,
}

/// One episode of a learner's policy.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Rollout {
    /// The steps, in order.
    pub steps: Vec<RolloutStep>,
    /// The state variables after the last step.
    pub last_obs: Vec<f64>,
    /// Why it stopped.
    pub end: RolloutEnd,
}

impl Rollout {
    /// The frames as one flat list, stride `k + width + 2` (k state
    /// variables, `width` = [`policy_width`]): the observation, the action
    /// (on a discrete task the index, then NaNs), the base reward, a flag (0
    /// going on, 1 the step ended the episode in a terminal state); then a
    /// last frame with the final observation, NaN action and reward, and flag
    /// 2 (terminal) or 3 (step limit).
    pub fn frames(&self, width: usize) -> Vec<f64> {
        let k = self.last_obs.len();
        let mut out = Vec::with_capacity((self.steps.len() + 1) * (k + width + 2));
        for s in &self.steps {
            out.extend_from_slice(&s.obs);
            out.extend_from_slice(&s.action);
            out.extend(std::iter::repeat_n(f64::NAN, width.saturating_sub(s.action.len())));
            out.push(s.reward);
            out.push(if s.terminated { 1.0 } else { 0.0 });
        }
        out.extend_from_slice(&self.last_obs);
        out.extend(std::iter::repeat_n(f64::NAN, width + 1));
        out.push(match self.end {
            RolloutEnd::Terminal => 2.0,
            RolloutEnd::StepLimit => 3.0,
        });
        out
    }

    /// The sum of the base rewards.
    pub fn base_return(&self) -> f64 {
        self.steps.iter().map(|s| s.reward).sum()
    }
}

/// Plays one episode of the learner's learned policy on `task` (reset
/// first), for at most `max_steps` steps. Task noise comes from
/// `Stream::from_seed(seed)`; `greedy` takes the action the policy prefers,
/// otherwise actions are drawn from the learned policy
/// ([`Learner::act_learned`]: an off-policy learner's target policy, the
/// deterministic actor without its exploration noise) with a stream of
/// their own (`Stream::derive(seed, Agent, u64::MAX, u64::MAX)`). Either way
/// the learner is left exactly as it was, so a job can be trained on after
/// a rollout with the same numbers.
pub fn rollout(
    learner: &mut dyn Learner,
    task: &mut dyn Task,
    max_steps: u32,
    seed: u64,
    greedy: bool,
) -> Rollout {
    let spec = task.spec().clone();
    let k = spec.state_vars.len();
    let mut task_rng = Stream::from_seed(seed);
    let mut agent_rng = Stream::derive(seed, Purpose::Agent, u64::MAX, u64::MAX);
    let mut obs = vec![0.0; k];
    let mut next = vec![0.0; k];
    let mut buf = ActionBuf::for_spec(&spec);
    let mut steps = Vec::new();
    task.reset(&mut task_rng, &mut obs);
    let mut end = RolloutEnd::StepLimit;
    for _ in 0..max_steps {
        let o = Obs { values: &obs, id: task.state_id() };
        if greedy {
            learner.best_action(o, &mut buf);
        } else {
            learner.act_learned(o, &mut agent_rng, &mut buf);
        }
        let step = task.step(buf.as_action(), &mut task_rng, &mut next);
        steps.push(RolloutStep {
            obs: obs.clone(),
            action: buf.to_vec(),
            reward: step.reward,
            terminated: step.terminated,
        });
        std::mem::swap(&mut obs, &mut next);
        if step.terminated {
            end = RolloutEnd::Terminal;
            break;
        }
    }
    Rollout { steps, last_obs: obs, end }
}

/// The learner setup a variant's scored jobs run: its own, or in a study
/// with a choice the chosen grid point's.
pub fn setup_of(plan: &Plan, variant: usize) -> &crate::learn::LearnerSetup {
    match plan.study.as_ref().and_then(|s| s.chosen.as_ref()) {
        Some(chosen) => plan.setup_of(variant, chosen[variant]),
        None => &plan.variants[variant].setup,
    }
}

/// The discount a variant's learner uses: its own, or the task's default.
pub fn discount(plan: &Plan, variant: usize) -> f64 {
    setup_of(plan, variant).discount.unwrap_or(plan.spec.default_discount)
}

/// Job (`variant`, `seed`) of the plan trained for `at` steps (fewer if it
/// fails first): the same learner as in the run at that step, since jobs are
/// deterministic. Names the index or step that is out of range.
pub fn train(plan: &Plan, variant: usize, seed: usize, at: u64) -> Result<Job, InspectError> {
    let (variants, seeds) = (plan.variants.len(), plan.config.seeds as usize);
    if variant >= variants {
        return Err(InspectError::Variant { given: variant, variants });
    }
    if seed >= seeds {
        return Err(InspectError::Seed { given: seed, seeds });
    }
    if at > plan.config.steps {
        return Err(InspectError::Step { given: at, budget: plan.config.steps });
    }
    // A study's scored job runs the variant's chosen point: choose first
    // when the plan holds no choice yet.
    let scored = crate::experiment::scored_plan(plan);
    let mut job = Job::new(&scored, scored.fresh_job_id(variant, seed));
    job.advance(at);
    Ok(job)
}

/// `Some(x)` for a finite number, `None` (JSON null) otherwise.
fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// One state of a task with an exact model, in an [`InspectReport`].
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct StateRow {
    /// The state's index in the model.
    pub state: usize,
    /// Its state variables (in the order of [`InspectReport::state_names`]).
    pub values: Vec<f64>,
    /// Whether it is terminal.
    pub terminal: bool,
    /// π(a|s) per action (in the order of [`InspectReport::action_names`]).
    pub policy: Vec<f64>,
    /// The most probable action's name (the first of equals).
    pub preferred: String,
    /// The critic's estimate of the state's value, if it keeps one.
    pub critic: Option<f64>,
    /// The exact value of the policy at the state (null when it cannot be solved).
    pub exact: Option<f64>,
}

/// The exact quantities of the learned policy on a task with a model.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ExactReport {
    /// `Σ_s start(s) V^π(s)`: the exact expected return from the start.
    pub start_value: Option<f64>,
    /// The same for an optimal policy, for comparison: by value iteration
    /// when the agent sees the states apart; on the short corridor, whose
    /// states all look alike, the best single `P(right)` (Sutton & Barto
    /// 2018, Example 13.1; discount 1 only). Null on a continuing task, on
    /// other tasks whose states look alike, or when value iteration does not
    /// settle.
    pub optimal_start_value: Option<f64>,
    /// On a continuing task, the exact average reward per step of the policy.
    pub average_reward: Option<f64>,
}

/// An actor's weights and what they are weights of.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ActorReport {
    /// The actor's approximator (`{"kind": "linear"}` or an MLP's settings).
    pub approximator: ApproxConfig,
    /// The features a linear actor is linear in (null for an MLP).
    pub features: Option<FeatureConfig>,
    /// The weights (a linear actor's output-major: `w[k * dim + i]`).
    pub weights: Vec<Option<f64>>,
    /// A Gaussian policy's log-standard deviations (empty otherwise).
    pub log_std: Vec<Option<f64>>,
}

/// A state variable held fixed in a [`Slice`].
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct HeldVar {
    /// Its name.
    pub name: String,
    /// Its value: the middle of its typical range.
    pub value: f64,
}

/// One point of a [`Slice`].
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SlicePoint {
    /// The values of the varied state variables.
    pub at: Vec<f64>,
    /// π(a|s) per action on a discrete task, the preferred action's
    /// components on a continuous one.
    pub policy: Vec<Option<f64>>,
    /// On a discrete task the most probable action's name.
    pub preferred: Option<String>,
    /// The critic's value estimate.
    pub value: Option<f64>,
}

/// The learned policy and value on a small grid over the first one or two
/// state variables, the others held at the middle of their typical range.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Slice {
    /// The varied variables' names.
    pub vars: Vec<String>,
    /// The variables held fixed.
    pub held: Vec<HeldVar>,
    /// The points, the last variable varying fastest; each variable takes
    /// [`SLICE_POINTS_1D`] (one variable) or [`SLICE_POINTS_2D`] (two) evenly
    /// spaced values from the low to the high end of its typical range.
    pub points: Vec<SlicePoint>,
}

/// The regulator's learned gain beside the optimal one.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct RegulatorReport {
    /// `dμ/dx` at `x = 0` of the preferred action (central difference over
    /// ±`step`).
    pub slope: Option<f64>,
    /// The half-width of the difference: 0.001 of the state's half-range.
    pub step: f64,
    /// The learned gain `K = −dμ/dx` (the policy `u ≈ −K x` near 0).
    pub gain: Option<f64>,
    /// For the deterministic learner with a linear actor over polynomial
    /// features of degree 1, the gain its weights give exactly:
    /// `−2 w_x / (high − low)` (the features scale x to [−1, 1]).
    pub weights_gain: Option<f64>,
    /// The optimal gain `K*` from the discounted Riccati equation
    /// ([`lqr::riccati`]) with the variant's discount.
    pub riccati_gain: f64,
    /// The optimal value's coefficient `P` (`V*(x) = −P x²`).
    pub riccati_p: f64,
}

/// What job (`variant`, `seed`) has learned after `steps` steps.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct InspectReport {
    /// The variant's index.
    pub variant: usize,
    /// Its label.
    pub label: String,
    /// The seed index.
    pub seed: usize,
    /// Steps trained.
    pub steps: u64,
    /// `"ok"`, or `"failed: …"` with the reason when the job stopped early.
    pub status: String,
    /// The task's kind.
    pub task: &'static str,
    /// The discount of the variant (the exact values use it).
    pub discount: f64,
    /// The state variables' names.
    pub state_names: Vec<String>,
    /// The actions' names (or the action components').
    pub action_names: Vec<String>,
    /// Whether actions are continuous.
    pub continuous: bool,
    /// On a task with an exact model, every state of it (else empty).
    pub states: Vec<StateRow>,
    /// On a task with an exact model, the policy's exact start value.
    pub exact: Option<ExactReport>,
    /// On a task without an exact model, the actor's weights.
    pub actor: Option<ActorReport>,
    /// On a task without an exact model, the policy and value on a slice.
    pub slice: Option<Slice>,
    /// On the regulator, the learned and the optimal gains.
    pub regulator: Option<RegulatorReport>,
}

fn most_probable(policy: &[f64], names: &[String]) -> String {
    let mut best = 0;
    for (i, &p) in policy.iter().enumerate() {
        if p > policy[best] {
            best = i;
        }
    }
    names.get(best).cloned().unwrap_or_default()
}

fn states_and_exact(
    learner: &mut dyn Learner,
    task: &dyn Task,
    m: &FiniteModel,
    gamma: f64,
) -> (Vec<StateRow>, Option<ExactReport>) {
    let spec = task.spec();
    let k = spec.state_vars.len();
    let names = spec.actions.names();
    let mut values = vec![0.0; k];
    if (0..m.n_states).any(|s| !task.state_obs(s, &mut values)) {
        return (Vec::new(), None);
    }
    let Some(pi) = policy_table(learner, task, m) else { return (Vec::new(), None) };
    let exact_v = exact::evaluate(m, &pi, gamma).unwrap_or_else(|_| vec![f64::NAN; m.n_states]);
    let ids = spec.n_states.is_some();
    let mut policy = vec![0.0; policy_width(spec)];
    let rows = (0..m.n_states)
        .map(|s| {
            task.state_obs(s, &mut values);
            let critic = read_one(learner, spec, Obs { values: &values, id: ids.then_some(s) }, &mut policy);
            StateRow {
                state: s,
                values: values.clone(),
                terminal: m.terminal[s],
                preferred: most_probable(&policy, names),
                policy: policy.clone(),
                critic: critic.and_then(finite),
                exact: finite(exact_v[s]),
            }
        })
        .collect();
    let start_value = finite(m.start.iter().zip(&exact_v).map(|(p, v)| p * v).sum());
    let optimal_start_value = if spec.continuing {
        None
    } else if spec.n_states.is_none() {
        // The agent cannot tell the model's states apart: value iteration's
        // optimum is out of its reach. The corridor has its closed form.
        (spec.kind == "corridor" && gamma == 1.0).then(|| ShortCorridor::objective(ShortCorridor::best_p()))
    } else {
        exact::value_iteration(m, gamma, 1e-10)
            .ok()
            .and_then(|o| finite(m.start.iter().zip(&o.values).map(|(p, v)| p * v).sum()))
    };
    let average_reward =
        if spec.continuing { exact::average_reward(m, &pi).ok().and_then(finite) } else { None };
    (rows, Some(ExactReport { start_value, optimal_start_value, average_reward }))
}

/// The features a variant's actor is linear in (`None` for an MLP actor).
fn actor_features(plan: &Plan, variant: usize) -> Option<FeatureConfig> {
    let setup = setup_of(plan, variant);
    match setup.actor_or_default() {
        ApproxConfig::Linear { features } => {
            Some(features.unwrap_or_else(|| setup.features_or_default(&plan.spec)))
        }
        ApproxConfig::Mlp { .. } => None,
    }
}

fn actor_report(plan: &Plan, variant: usize, learner: &dyn Learner) -> Option<ActorReport> {
    let params = learner.actor_params()?;
    Some(ActorReport {
        approximator: setup_of(plan, variant).actor_or_default(),
        features: actor_features(plan, variant),
        weights: params.weights.iter().copied().map(finite).collect(),
        log_std: params.log_std.iter().copied().map(finite).collect(),
    })
}

fn slice(learner: &mut dyn Learner, spec: &TaskSpec) -> Option<Slice> {
    let vars = &spec.state_vars;
    let (varied, n) = match vars.len() {
        0 => return None,
        1 => (1, SLICE_POINTS_1D),
        _ => (2, SLICE_POINTS_2D),
    };
    let mid = |i: usize| (vars[i].low + vars[i].high) / 2.0;
    let at = |i: usize, j: usize| vars[i].low + (vars[i].high - vars[i].low) * j as f64 / (n - 1) as f64;
    let mut values: Vec<f64> = (0..vars.len()).map(mid).collect();
    let discrete = spec.actions.discrete_count().is_some();
    let mut policy = vec![0.0; policy_width(spec)];
    let mut points = Vec::new();
    for j in 0..n.pow(varied as u32) {
        if varied == 1 {
            values[0] = at(0, j);
        } else {
            values[0] = at(0, j / n);
            values[1] = at(1, j % n);
        }
        let value = read_one(learner, spec, Obs { values: &values, id: None }, &mut policy);
        points.push(SlicePoint {
            at: values[..varied].to_vec(),
            preferred: discrete.then(|| most_probable(&policy, spec.actions.names())),
            policy: policy.iter().copied().map(finite).collect(),
            value: value.and_then(finite),
        });
    }
    Some(Slice {
        vars: vars[..varied].iter().map(|v| v.name.clone()).collect(),
        held: (varied..vars.len()).map(|i| HeldVar { name: vars[i].name.clone(), value: mid(i) }).collect(),
        points,
    })
}

fn regulator(plan: &Plan, variant: usize, learner: &mut dyn Learner) -> Option<RegulatorReport> {
    let TaskConfig::Lqr(cfg) = &plan.config.task else { return None };
    let gamma = discount(plan, variant);
    let (riccati_p, riccati_gain) = lqr::riccati(cfg.a, cfg.b, cfg.q, cfg.r, gamma);
    let var = &plan.spec.state_vars[0];
    let step = 1e-3 * (var.high - var.low) / 2.0;
    let mut buf = ActionBuf::for_spec(&plan.spec);
    let mut mu = |x: f64| {
        learner.best_action(Obs { values: &[x], id: None }, &mut buf);
        buf.to_vec()[0]
    };
    let slope = finite((mu(step) - mu(-step)) / (2.0 * step));
    let linear_poly1 = matches!(actor_features(plan, variant), Some(FeatureConfig::Poly { degree: 1 }));
    let weights_gain = if setup_of(plan, variant).family == Family::Deterministic && linear_poly1 {
        learner.actor_params().and_then(|p| finite(-2.0 * p.weights[1] / (var.high - var.low)))
    } else {
        None
    };
    Some(RegulatorReport { slope, step, gain: slope.map(|s| -s), weights_gain, riccati_gain, riccati_p })
}

/// Describes what `job` (of variant `variant`, seed index `seed`) has
/// learned: see [`InspectReport`].
pub fn report(plan: &Plan, variant: usize, seed: usize, job: &mut Job) -> InspectReport {
    let task = plan.make_task();
    let spec = task.spec().clone();
    let gamma = discount(plan, variant);
    let status = match job.status() {
        JobStatus::Failed(why) => format!("failed: {why}"),
        JobStatus::Running | JobStatus::Done => "ok".to_string(),
    };
    let steps = job.steps_done();
    let learner = job.learner_mut();
    let (states, exact) = match task.model() {
        Some(m) => states_and_exact(learner, task.as_ref(), &m, gamma),
        None => (Vec::new(), None),
    };
    let no_model = exact.is_none();
    let actor = if no_model { actor_report(plan, variant, learner) } else { None };
    let slice = if no_model { slice(learner, &spec) } else { None };
    let regulator = regulator(plan, variant, learner);
    InspectReport {
        variant,
        label: plan.variants[variant].label.clone(),
        seed,
        steps,
        status,
        task: spec.kind,
        discount: gamma,
        state_names: spec.state_vars.iter().map(|v| v.name.clone()).collect(),
        action_names: spec.actions.names().to_vec(),
        continuous: spec.actions.discrete_count().is_none(),
        states,
        exact,
        actor,
        slice,
        regulator,
    }
}

/// Re-trains job (`variant`, `seed`) to step `at` ([`train`]) and reports
/// what it has learned ([`report`]).
pub fn inspect(plan: &Plan, variant: usize, seed: usize, at: u64) -> Result<InspectReport, InspectError> {
    let scored = crate::experiment::scored_plan(plan);
    let mut job = train(&scored, variant, seed, at)?;
    Ok(report(&scored, variant, seed, &mut job))
}
