//! The shaping audit: does a reward change alter what the agent ends up optimising?
//!
//! On a finite task ([`audit_reward`]) the exact model is solved twice with
//! value iteration (Sutton & Barto 2018, Section 4.4): under the base reward
//! and under the shaped reward (the formula evaluated on every transition
//! of the model). The audit lists the states whose set of optimal actions
//! differs, and the loss in base-reward value, from the start distribution,
//! of following the shaped-optimal policy (uniform over its optimal actions)
//! instead of a base-optimal one. Potential-based shaping leaves the optimal
//! policies unchanged (Ng, Harada & Russell 1999, Theorem 1), so its audit
//! must come out clean; any other bonus may or may not change them, and
//! the audit says which.
//!
//! When a value does not exist as an infinite-horizon value (discount 1 with
//! a loop that earns reward forever, or a shaped-optimal policy that never
//! ends), the audit switches to the episode horizon of the task
//! (`max_steps`, at most [`MAX_HORIZON`]): optimal first actions with that
//! many steps to go, and the policy's expected base return over that many
//! steps. The report says which method it used.
//!
//! The run's reward-hacking signal, which applies on every task, is the
//! experiment's ([`crate::experiment::hacking`]).

use serde::Serialize;
use serde_json::Value;

use super::{Mode, RewardConfig, Shaper, StepInput};
use crate::exact;
use crate::report::{nums, to_value, Num};
use crate::task::{Action, FiniteModel, Task};

/// Longest horizon of the finite-horizon fallback.
pub const MAX_HORIZON: u32 = 10_000;
/// Actions whose optimal value is within this share of the best (at least
/// this much in absolute terms) count as optimal too.
pub const TIE: f64 = 1e-6;

/// A state where the optimal actions differ.
#[derive(Clone, Debug, PartialEq)]
pub struct DifferingState {
    /// The state's index in the model.
    pub state: usize,
    /// Its state variables (for a grid: row and column).
    pub obs: Vec<f64>,
    /// Optimal actions under the base reward.
    pub base_actions: Vec<usize>,
    /// Optimal actions under the shaped reward.
    pub shaped_actions: Vec<usize>,
    /// Whether the shaped-optimal policy can reach this state from a start state.
    pub reachable: bool,
}

/// How the optimal policies were compared.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Method {
    /// Infinite-horizon values with the learner's discount.
    ValueIteration,
    /// Values over the given number of steps.
    FiniteHorizon(u32),
    /// Average reward per step and bias (relative values), for a learner
    /// that optimises the average reward; the values are gains.
    RelativeValueIteration,
}

/// The exact comparison of two models with the same states and transitions.
#[derive(Clone, Debug, PartialEq)]
pub struct Comparison {
    /// The method used.
    pub method: Method,
    /// Optimal actions per state under the base reward (empty for terminal states).
    pub base_greedy: Vec<Vec<usize>>,
    /// Optimal actions per state under the shaped reward.
    pub shaped_greedy: Vec<Vec<usize>>,
    /// States whose optimal action sets differ.
    pub differing: Vec<usize>,
    /// Whether each state is reachable from a start state under the shaped-optimal policy.
    pub reachable: Vec<bool>,
    /// Optimal base value from the start distribution.
    pub base_optimal_value: f64,
    /// Base value of the shaped-optimal policy from the start distribution.
    pub shaped_policy_base_value: f64,
    /// `base_optimal_value − shaped_policy_base_value` (0 when within rounding).
    pub base_value_loss: f64,
    /// Whether the shaped optimal values are unbounded (a loop earns reward forever).
    pub shaped_unbounded: bool,
}

fn reward_scale(m: &FiniteModel) -> f64 {
    m.outcomes.iter().flatten().flatten().map(|o| o.reward.abs()).fold(1.0, f64::max)
}

fn work_per_sweep(m: &FiniteModel) -> usize {
    m.outcomes.iter().flatten().map(|l| l.len().max(1)).sum::<usize>().max(1)
}

/// Value iteration to a residual below `tol`, as [`exact::value_iteration`]
/// does, but within a work budget (about 3·10⁸ outcome updates) so that an
/// unbounded problem on a large map gives up quickly, in the page too;
/// `None` when it does not settle (unbounded values, or too slow to settle).
fn solve(m: &FiniteModel, gamma: f64, tol: f64) -> Option<Vec<f64>> {
    let sweeps = (300_000_000 / work_per_sweep(m)).clamp(2_000, 200_000);
    exact::optimal_values(m, gamma, tol, sweeps, 1e13).ok()
}

/// The optimal action sets from action values `q[s * n_actions + a]`.
pub fn greedy_sets(m: &FiniteModel, q: &[f64]) -> Vec<Vec<usize>> {
    let na = m.n_actions;
    (0..m.n_states)
        .map(|s| {
            if m.terminal[s] {
                return Vec::new();
            }
            let row = &q[s * na..(s + 1) * na];
            let best = row.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let tie = TIE * best.abs().max(1.0);
            (0..na).filter(|&a| row[a] >= best - tie).collect()
        })
        .collect()
}

/// The policy uniform over each state's action set (first action at terminal states).
fn uniform_policy(m: &FiniteModel, sets: &[Vec<usize>]) -> Vec<f64> {
    let na = m.n_actions;
    let mut pi = vec![0.0; m.n_states * na];
    for (s, set) in sets.iter().enumerate() {
        if set.is_empty() {
            pi[s * na] = 1.0;
        } else {
            for &a in set {
                pi[s * na + a] = 1.0 / set.len() as f64;
            }
        }
    }
    pi
}

/// Exact value of a policy, or `None` when it has none (γ = 1 and the policy
/// never ends): [`exact::evaluate`]'s dense solve up to 600 states, beyond
/// that (where an O(n³) solve is too slow) iterative evaluation with the
/// same work budget as [`solve`].
fn policy_value(m: &FiniteModel, pi: &[f64], gamma: f64, tol: f64) -> Option<Vec<f64>> {
    if m.n_states <= 600 {
        return exact::evaluate(m, pi, gamma).ok().filter(|v| v.iter().all(|x| x.is_finite()));
    }
    let na = m.n_actions;
    let sweeps = (300_000_000 / work_per_sweep(m)).clamp(2_000, 200_000);
    let mut v = vec![0.0; m.n_states];
    for _ in 0..sweeps {
        let mut residual: f64 = 0.0;
        for s in 0..m.n_states {
            if m.terminal[s] {
                continue;
            }
            let mut x = 0.0;
            for a in 0..na {
                let p = pi[s * na + a];
                if p > 0.0 {
                    x += p * m.outcomes[s][a]
                        .iter()
                        .map(|o| o.prob * (o.reward + if o.terminal { 0.0 } else { gamma * v[o.next] }))
                        .sum::<f64>();
                }
            }
            residual = residual.max((x - v[s]).abs());
            v[s] = x;
        }
        if !residual.is_finite() || v.iter().any(|x| x.abs() > 1e13) {
            return None;
        }
        if residual < tol {
            return Some(v);
        }
    }
    None
}

/// Optimal action values and state values with `h` steps to go (backward induction).
fn horizon_q(m: &FiniteModel, gamma: f64, h: u32) -> (Vec<f64>, Vec<f64>) {
    let na = m.n_actions;
    let mut v = vec![0.0; m.n_states];
    let mut q = exact::q_values(m, &v, gamma);
    for _ in 0..h {
        q = exact::q_values(m, &v, gamma);
        for s in 0..m.n_states {
            if !m.terminal[s] {
                v[s] = q[s * na..(s + 1) * na].iter().copied().fold(f64::NEG_INFINITY, f64::max);
            }
        }
    }
    (q, v)
}

/// Expected return of a stationary policy over `h` steps.
fn horizon_value(m: &FiniteModel, pi: &[f64], gamma: f64, h: u32) -> Vec<f64> {
    let na = m.n_actions;
    let mut v = vec![0.0; m.n_states];
    for _ in 0..h {
        let q = exact::q_values(m, &v, gamma);
        for s in 0..m.n_states {
            if !m.terminal[s] {
                v[s] = (0..na).map(|a| pi[s * na + a] * q[s * na + a]).sum();
            }
        }
    }
    v
}

fn start_value(m: &FiniteModel, v: &[f64]) -> f64 {
    m.start.iter().zip(v).map(|(p, x)| p * x).sum()
}

fn reachable(m: &FiniteModel, sets: &[Vec<usize>]) -> Vec<bool> {
    let mut seen = vec![false; m.n_states];
    let mut todo: Vec<usize> = (0..m.n_states).filter(|&s| m.start[s] > 0.0).collect();
    for &s in &todo {
        seen[s] = true;
    }
    while let Some(s) = todo.pop() {
        for &a in &sets[s] {
            for o in &m.outcomes[s][a] {
                if o.prob > 0.0 && !seen[o.next] {
                    seen[o.next] = true;
                    todo.push(o.next);
                }
            }
        }
    }
    seen
}

/// Compares the optimal policies of a model under its base rewards and
/// under shaped rewards (`shaped` has the same states, actions and
/// transitions, other rewards). `horizon` is the episode length used when
/// infinite-horizon values do not exist.
pub fn compare(base: &FiniteModel, shaped: &FiniteModel, gamma: f64, horizon: u32) -> Comparison {
    let scale = reward_scale(base).max(reward_scale(shaped));
    let tol = 1e-11 * scale;
    let vb = solve(base, gamma, tol);
    let vs = solve(shaped, gamma, tol);
    let shaped_unbounded = vs.is_none() && gamma >= 1.0;
    if let (Some(vb), Some(vs)) = (&vb, &vs) {
        let base_greedy = greedy_sets(base, &exact::q_values(base, vb, gamma));
        let shaped_greedy = greedy_sets(shaped, &exact::q_values(shaped, vs, gamma));
        let pi = uniform_policy(base, &shaped_greedy);
        if let Some(v_pi) = policy_value(base, &pi, gamma, tol) {
            return finish(
                base,
                Method::ValueIteration,
                base_greedy,
                shaped_greedy,
                start_value(base, vb),
                start_value(base, &v_pi),
                false,
                scale,
            );
        }
    }
    let h = horizon.clamp(1, MAX_HORIZON);
    let (qb, v_opt) = horizon_q(base, gamma, h);
    let base_greedy = greedy_sets(base, &qb);
    let shaped_greedy = greedy_sets(shaped, &horizon_q(shaped, gamma, h).0);
    // The optimal h-step value is the reference (no stationary policy beats it).
    let opt = start_value(base, &v_opt);
    let pi = uniform_policy(base, &shaped_greedy);
    let v_pi = horizon_value(base, &pi, gamma, h);
    finish(
        base,
        Method::FiniteHorizon(h),
        base_greedy,
        shaped_greedy,
        opt,
        start_value(base, &v_pi),
        shaped_unbounded,
        scale,
    )
}

/// Compares the average-reward-optimal policies of a continuing model under
/// its base and its shaped rewards ([`exact::relative_value_iteration`]): the
/// states whose greedy action sets (with respect to the bias) differ, and the
/// base average reward lost by following the shaped-optimal policy (uniform
/// over its greedy actions), [`exact::average_reward`]. Potential-based
/// shaping with γ = 1, `Φ(s') − Φ(s)`, sums to zero around every loop, so
/// it changes no policy's average reward and keeps the optimal policies.
/// `Err` when relative value iteration does not settle (say, a model that is
/// not unichain).
pub fn compare_average(base: &FiniteModel, shaped: &FiniteModel) -> Result<Comparison, String> {
    let scale = reward_scale(base).max(reward_scale(shaped));
    let tol = 1e-11 * scale;
    let sweeps = (300_000_000 / work_per_sweep(base)).clamp(2_000, 200_000);
    let solve = |m: &FiniteModel| {
        exact::relative_value_iteration(m, tol, sweeps)
            .map_err(|e| format!("the average-reward audit found no solution ({e}); is the model unichain?"))
    };
    let (ob, os) = (solve(base)?, solve(shaped)?);
    let base_greedy = greedy_sets(base, &exact::q_values(base, &ob.bias, 1.0));
    let shaped_greedy = greedy_sets(shaped, &exact::q_values(shaped, &os.bias, 1.0));
    let pi = uniform_policy(base, &shaped_greedy);
    let g_pi = exact::average_reward(base, &pi).map_err(|e| format!("the shaped-optimal policy: {e}"))?;
    Ok(finish(base, Method::RelativeValueIteration, base_greedy, shaped_greedy, ob.gain, g_pi, false, scale))
}

#[allow(clippy::too_many_arguments)]
fn finish(
    m: &FiniteModel,
    method: Method,
    base_greedy: Vec<Vec<usize>>,
    shaped_greedy: Vec<Vec<usize>>,
    base_optimal_value: f64,
    shaped_policy_base_value: f64,
    shaped_unbounded: bool,
    scale: f64,
) -> Comparison {
    let differing: Vec<usize> = (0..m.n_states).filter(|&s| base_greedy[s] != shaped_greedy[s]).collect();
    let mut loss = base_optimal_value - shaped_policy_base_value;
    if loss.abs() <= 1e-7 * scale.max(base_optimal_value.abs()) {
        loss = 0.0;
    }
    let reachable = reachable(m, &shaped_greedy);
    Comparison {
        method,
        base_greedy,
        shaped_greedy,
        differing,
        reachable,
        base_optimal_value,
        shaped_policy_base_value,
        base_value_loss: loss,
        shaped_unbounded,
    }
}

/// The task's model with every reward replaced by the shaped reward.
pub fn shaped_model(task: &dyn Task, m: &FiniteModel, shaper: &mut Shaper) -> Result<FiniteModel, String> {
    let n_obs = task.spec().state_vars.len();
    let uses = shaper.uses();
    if uses.step {
        return Err("the formula reads the step index `t`, so the shaped reward is not a function of the \
                    transition alone and the exact audit does not apply; the run's hacking flag still does"
            .into());
    }
    let mut obs = vec![0.0; n_obs * m.n_states];
    let needs_obs = uses.state || uses.next || shaper.mode() == Mode::Potential;
    for s in 0..m.n_states {
        if !task.state_obs(s, &mut obs[s * n_obs..(s + 1) * n_obs]) && needs_obs {
            return Err(format!(
                "the task `{}` does not give its states' variables, so a formula that reads them cannot be audited",
                task.spec().kind
            ));
        }
    }
    let mut out = m.clone();
    for s in 0..m.n_states {
        if m.terminal[s] {
            continue;
        }
        for a in 0..m.n_actions {
            let Some(list) = out.outcomes.get_mut(s).and_then(|l| l.get_mut(a)) else {
                return Err(format!("the task's model has no outcomes for state {s}, action {a}"));
            };
            for o in list.iter_mut() {
                let r = shaper.reward(&StepInput {
                    obs: &obs[s * n_obs..(s + 1) * n_obs],
                    action: Action::Index(a),
                    next: &obs[o.next * n_obs..(o.next + 1) * n_obs],
                    base: o.reward,
                    terminal: o.terminal,
                    t: 0,
                });
                if !r.is_finite() {
                    return Err(format!(
                        "the shaped reward is {r} in state {s} ({:?}) for action {a}: the formula must give a \
                         finite number on every transition",
                        &obs[s * n_obs..(s + 1) * n_obs]
                    ));
                }
                o.reward = r;
            }
        }
    }
    Ok(out)
}

/// The audit of one reward on one task.
#[derive(Clone, Debug, PartialEq)]
pub struct RewardAudit {
    /// The reward's mode.
    pub mode: Mode,
    /// The formula in canonical form.
    pub formula: String,
    /// The discount the audit used (the learner's; 1 for the average reward).
    pub discount: f64,
    /// Whether the reward keeps the optimal policies by construction.
    pub potential_based: bool,
    /// The exact comparison, or why there is none.
    pub exact: Result<Comparison, String>,
}

/// What a learner optimises, for the audit.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Objective {
    /// The discounted return with this discount.
    Discounted(f64),
    /// The average reward per step (shaping then uses γ = 1).
    AverageReward,
}

impl Objective {
    /// The discount that potential shaping and the `gamma` of formulas use
    /// (as `LearnerSetup::shaping_discount`).
    pub fn shaping_discount(self) -> f64 {
        match self {
            Objective::Discounted(g) => g,
            Objective::AverageReward => 1.0,
        }
    }
}

/// Audits a reward on a task for a learner's objective.
pub fn audit_reward(task: &dyn Task, reward: &RewardConfig, objective: Objective) -> RewardAudit {
    let gamma = objective.shaping_discount();
    let spec = task.spec();
    let exact = (|| {
        let Some(m) = task.model() else {
            return Err(format!(
                "`{}` has no exact model (its states are continuous); the run's hacking flag is the check that \
                 applies",
                spec.kind
            ));
        };
        if m.n_actions == 0 || spec.actions.discrete_count().is_none() {
            return Err("the exact audit needs discrete actions".into());
        }
        let mut shaper = Shaper::new(reward, spec, gamma)
            .map_err(|p| p.iter().map(|x| x.to_string()).collect::<Vec<_>>().join("; "))?;
        let shaped = shaped_model(task, &m, &mut shaper)?;
        match objective {
            Objective::Discounted(_) => Ok(compare(&m, &shaped, gamma, spec.max_steps)),
            Objective::AverageReward if spec.continuing => compare_average(&m, &shaped),
            Objective::AverageReward => {
                Err("the average-reward learner runs on continuing tasks; this one ends episodes".into())
            }
        }
    })();
    RewardAudit {
        mode: reward.mode,
        formula: reward.pretty(),
        discount: gamma,
        potential_based: reward.potential_based(),
        exact,
    }
}

/// The audit of one reward as it is printed (see [`RewardAudit::to_json`]);
/// numbers are finite or `null`. The fields after `base_value_loss` are there
/// only when the audit is exact, `note` only when it is not.
#[derive(Clone, Debug, Serialize)]
pub struct AuditReport {
    /// The reward's mode by name.
    pub mode: &'static str,
    /// The formula in canonical form.
    pub formula: String,
    /// The discount the audit used.
    pub discount: Num,
    /// Whether the reward keeps the optimal policies by construction.
    pub potential_based: bool,
    /// Whether there is an exact comparison.
    pub exact: bool,
    /// Whether an optimal policy changes (`null` without an exact audit).
    pub policy_changed: Option<bool>,
    /// The states whose optimal actions differ.
    pub differing_states: Vec<DifferingReport>,
    /// Base value lost by following the shaped-optimal policy.
    pub base_value_loss: Num,
    /// Why there is no exact audit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// Optimal base value from the start distribution.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub base_optimal_value: Option<Num>,
    /// Base value of the shaped-optimal policy.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub shaped_policy_base_value: Option<Num>,
    /// `value_iteration`, `finite_horizon` or `relative_value_iteration`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub method: Option<&'static str>,
    /// The horizon of a finite-horizon comparison (`null` otherwise).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub horizon: Option<Option<u32>>,
    /// Whether the shaped optimal values are unbounded.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub shaped_unbounded: Option<bool>,
    /// The number of states of the model.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub states: Option<usize>,
}

/// One state whose optimal actions differ, as printed.
#[derive(Clone, Debug, Serialize)]
pub struct DifferingReport {
    /// The state's index in the model.
    pub state: usize,
    /// Its state variables, `null` when the task gives none.
    pub values: Option<Vec<Num>>,
    /// Optimal actions under the base reward, by name.
    pub base_actions: Vec<String>,
    /// Optimal actions under the shaped reward, by name.
    pub shaped_actions: Vec<String>,
    /// Whether the shaped-optimal policy can reach the state.
    pub reachable: bool,
    /// The grid row, on a task whose first two variables are `row`, `col`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub row: Option<usize>,
    /// The grid column (as `row`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub col: Option<usize>,
}

impl RewardAudit {
    /// The audit as JSON: `potential_based`, `policy_changed`,
    /// `differing_states` (each with `state`, `values`, `row`/`col` on a grid,
    /// `base_actions`, `shaped_actions` by name, `reachable`), `base_value_loss`,
    /// `base_optimal_value`, `shaped_policy_base_value`, `method`, `horizon`,
    /// `shaped_unbounded`, and `note` when there is no exact audit (then the
    /// policy fields are null). See [`AuditReport`].
    pub fn to_json(&self, task: &dyn Task) -> Value {
        to_value(&self.report(task))
    }

    /// The audit as its printed report.
    pub fn report(&self, task: &dyn Task) -> AuditReport {
        let spec = task.spec();
        let mut out = AuditReport {
            mode: self.mode.name(),
            formula: self.formula.clone(),
            discount: Num(self.discount),
            potential_based: self.potential_based,
            exact: false,
            policy_changed: None,
            differing_states: Vec::new(),
            base_value_loss: Num(f64::NAN),
            note: None,
            base_optimal_value: None,
            shaped_policy_base_value: None,
            method: None,
            horizon: None,
            shaped_unbounded: None,
            states: None,
        };
        match &self.exact {
            Err(note) => out.note = Some(note.clone()),
            Ok(c) => {
                let names = spec.actions.names();
                let name_of = |set: &[usize]| -> Vec<String> {
                    set.iter().map(|&a| names.get(a).cloned().unwrap_or_else(|| a.to_string())).collect()
                };
                let var_names: Vec<&str> = spec.state_vars.iter().map(|v| v.name.as_str()).collect();
                let grid = var_names.first() == Some(&"row") && var_names.get(1) == Some(&"col");
                let mut obs = vec![0.0; var_names.len()];
                out.differing_states = c
                    .differing
                    .iter()
                    .map(|&s| {
                        let has = task.state_obs(s, &mut obs);
                        DifferingReport {
                            state: s,
                            values: has.then(|| nums(&obs)),
                            base_actions: name_of(&c.base_greedy[s]),
                            shaped_actions: name_of(&c.shaped_greedy[s]),
                            reachable: c.reachable[s],
                            row: (has && grid).then(|| obs[0] as usize),
                            col: (has && grid).then(|| obs[1] as usize),
                        }
                    })
                    .collect();
                let (method, horizon) = match c.method {
                    Method::ValueIteration => ("value_iteration", None),
                    Method::FiniteHorizon(h) => ("finite_horizon", Some(h)),
                    Method::RelativeValueIteration => ("relative_value_iteration", None),
                };
                out.exact = true;
                out.policy_changed = Some(!c.differing.is_empty());
                out.base_value_loss = Num(c.base_value_loss);
                out.base_optimal_value = Some(Num(c.base_optimal_value));
                out.shaped_policy_base_value = Some(Num(c.shaped_policy_base_value));
                out.method = Some(method);
                out.horizon = Some(horizon);
                out.shaped_unbounded = Some(c.shaped_unbounded);
                out.states = Some(c.base_greedy.len());
            }
        }
        out
    }
}
