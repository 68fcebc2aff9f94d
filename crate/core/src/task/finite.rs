//! A task backed by any finite model, and small random models for checks.
//!
//! [`FiniteTask`] runs a [`FiniteModel`]: the start state is drawn from the
//! model's start distribution, each step draws one outcome of the state and
//! action, and the observation is the state index (one variable, `state`).
//! [`random_mdp`] generates a small model from a seed ([`RandomMdpConfig`],
//! task kind `"random_mdp"`): episodic models end with probability at least
//! 0.1 from every state and action, so every policy terminates and discount
//! 1 is allowed; continuing models reach state 0 with probability at least
//! 0.1 from every state and action, so every policy has one recurrent class
//! (containing 0, with a self-loop there) and a unique stationary
//! distribution. Our own construction, for tests and demonstrations.

use serde::{Deserialize, Serialize};

use super::{Action, ActionSpace, FiniteModel, Outcome, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// A task that runs a finite model.
#[derive(Clone, Debug)]
pub struct FiniteTask {
    model: FiniteModel,
    spec: TaskSpec,
    state: usize,
    /// Each state's observation, when states may look alike (`None`: the
    /// observation is the state index and the learner may tell states apart).
    observe: Option<Vec<Vec<f64>>>,
}

impl FiniteTask {
    /// Runs `model` as a task of kind `kind`; checks the model is well formed.
    pub fn new(
        model: FiniteModel,
        kind: &'static str,
        discount: f64,
        max_steps: u32,
        continuing: bool,
    ) -> Result<Self, TaskError> {
        let bad = |m: String| Err(TaskError::Invalid("model".into(), m));
        let n = model.n_states;
        if n == 0 || model.n_actions == 0 {
            return bad("needs at least one state and one action".into());
        }
        if model.start.len() != n || model.terminal.len() != n || model.outcomes.len() != n {
            return bad("start, terminal and outcomes need one entry per state".into());
        }
        if (model.start.iter().sum::<f64>() - 1.0).abs() > 1e-9 || model.start.iter().any(|&p| p < 0.0) {
            return bad("the start distribution must sum to 1".into());
        }
        for s in 0..n {
            if model.terminal[s] {
                continue;
            }
            if model.outcomes[s].len() != model.n_actions {
                return bad(format!("state {s} needs outcomes for each of {} actions", model.n_actions));
            }
            for (a, list) in model.outcomes[s].iter().enumerate() {
                let total: f64 = list.iter().map(|o| o.prob).sum();
                if (total - 1.0).abs() > 1e-9 || list.iter().any(|o| o.next >= n || o.prob < 0.0) {
                    return bad(format!("state {s}, action {a}: outcome probabilities must sum to 1"));
                }
            }
        }
        let spec = TaskSpec {
            kind,
            state_vars: vec![StateVar { name: "state".into(), low: 0.0, high: (n - 1).max(1) as f64 }],
            actions: ActionSpace::Discrete((0..model.n_actions).map(|a| format!("a{a}")).collect()),
            n_states: Some(n),
            default_discount: discount,
            max_steps,
            continuing,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(FiniteTask { model, spec, state: 0, observe: None })
    }

    /// A task of an already checked model with the caller's description.
    /// With `observe` (one vector per state, of the spec's state variables)
    /// the observation is the state's vector and the task declares no state
    /// ids (states with equal vectors look the same to a learner); without
    /// it the observation is the state index, as for [`FiniteTask::new`].
    pub fn with_spec(model: FiniteModel, spec: TaskSpec, observe: Option<Vec<Vec<f64>>>) -> Self {
        FiniteTask { model, spec, state: 0, observe }
    }

    fn write_obs(&self, obs: &mut [f64]) {
        match &self.observe {
            Some(table) => obs.copy_from_slice(&table[self.state]),
            None => obs[0] = self.state as f64,
        }
    }

    /// The model this task runs.
    pub fn finite_model(&self) -> &FiniteModel {
        &self.model
    }
}

impl Task for FiniteTask {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]) {
        self.state = rng.categorical(&self.model.start);
        self.write_obs(obs);
    }

    fn step(&mut self, action: Action<'_>, rng: &mut Stream, obs: &mut [f64]) -> Step {
        let a = match action {
            Action::Index(a) if a < self.model.n_actions => a,
            _ => 0,
        };
        if self.model.terminal[self.state] {
            self.write_obs(obs);
            return Step { reward: 0.0, terminated: true };
        }
        let list = &self.model.outcomes[self.state][a];
        let u = rng.uniform();
        let mut acc = 0.0;
        let mut pick = list[list.len() - 1];
        for o in list {
            acc += o.prob;
            if u < acc {
                pick = *o;
                break;
            }
        }
        self.state = pick.next;
        self.write_obs(obs);
        Step { reward: pick.reward, terminated: pick.terminal }
    }

    fn state_id(&self) -> Option<usize> {
        self.observe.is_none().then_some(self.state)
    }

    fn id_of(&self, obs: &[f64]) -> Option<usize> {
        if self.observe.is_some() {
            return None;
        }
        let v = *obs.first()?;
        (v >= 0.0 && v.fract() == 0.0 && (v as usize) < self.model.n_states).then_some(v as usize)
    }

    fn model(&self) -> Option<FiniteModel> {
        Some(self.model.clone())
    }

    fn state_obs(&self, s: usize, obs: &mut [f64]) -> bool {
        if s >= self.model.n_states || obs.len() < self.spec.state_vars.len() || obs.is_empty() {
            return false;
        }
        match &self.observe {
            Some(table) => obs[..table[s].len()].copy_from_slice(&table[s]),
            None => obs[0] = s as f64,
        }
        true
    }
}

/// Settings of a random finite task (the `task` object of a config with
/// `"kind": "random_mdp"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RandomMdpConfig {
    /// Non-terminal states, in [2, 50]. Default 5.
    #[serde(default = "default_states")]
    pub states: u32,
    /// Actions, in [2, 10]. Default 3.
    #[serde(default = "default_actions")]
    pub actions: u32,
    /// Seed of the model (not of the runs), in [0, 2^53 − 1]. Default 1.
    #[serde(default = "default_seed")]
    pub seed: u64,
    /// A continuing model (no terminal state) instead of an episodic one. Default false.
    #[serde(default)]
    pub continuing: bool,
    /// Discount used when a learner sets none, in [0, 1]. Default 0.9.
    #[serde(default = "default_discount")]
    pub discount: f64,
    /// Episode length limit (or, continuing, the reporting window), in [1, 100000]. Default 100.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

fn default_states() -> u32 {
    5
}
fn default_actions() -> u32 {
    3
}
fn default_seed() -> u64 {
    1
}
fn default_discount() -> f64 {
    0.9
}
fn default_max_steps() -> u32 {
    100
}

impl Default for RandomMdpConfig {
    fn default() -> Self {
        RandomMdpConfig {
            states: default_states(),
            actions: default_actions(),
            seed: default_seed(),
            continuing: false,
            discount: default_discount(),
            max_steps: default_max_steps(),
        }
    }
}

/// A random model with `states` non-terminal states (plus one terminal
/// state, last, when episodic) and `actions` actions, drawn from `seed`.
/// Every state-action pair has three outcomes with rewards uniform in
/// [−1, 1]; see the module documentation for the guarantees.
pub fn random_mdp(states: usize, actions: usize, seed: u64, continuing: bool) -> FiniteModel {
    let mut rng = Stream::from_seed(seed);
    let n = if continuing { states } else { states + 1 };
    let mut outcomes = Vec::with_capacity(n);
    for _ in 0..states {
        let mut per_action = Vec::with_capacity(actions);
        for _ in 0..actions {
            // A guaranteed outcome (termination, or state 0) of probability in
            // [0.1, 0.3], and two random next states sharing the rest.
            let fixed = rng.uniform_in(0.1, 0.3);
            let split = rng.uniform();
            let rest = 1.0 - fixed;
            let mut list = vec![Outcome {
                next: if continuing { 0 } else { states },
                prob: fixed,
                reward: rng.uniform_in(-1.0, 1.0),
                terminal: !continuing,
            }];
            for share in [split, 1.0 - split] {
                list.push(Outcome {
                    next: rng.below(states),
                    prob: rest * share,
                    reward: rng.uniform_in(-1.0, 1.0),
                    terminal: false,
                });
            }
            per_action.push(list);
        }
        outcomes.push(per_action);
    }
    if !continuing {
        outcomes.push(Vec::new());
    }
    let mut start = vec![0.0; n];
    let starts = states.min(2);
    for p in start.iter_mut().take(starts) {
        *p = 1.0 / starts as f64;
    }
    let mut terminal = vec![false; n];
    if !continuing {
        terminal[states] = true;
    }
    FiniteModel { n_states: n, n_actions: actions, start, terminal, outcomes }
}

/// Builds the task a [`RandomMdpConfig`] describes, or names the bad setting.
pub fn build_random_mdp(cfg: &RandomMdpConfig) -> Result<FiniteTask, TaskError> {
    let bad = |f: &str, m: String| Err(TaskError::Invalid(f.into(), m));
    if let Some(m) = crate::settings::check_int("task.random_mdp.states", u64::from(cfg.states)) {
        return bad("states", m);
    }
    if let Some(m) = crate::settings::check_int("task.random_mdp.actions", u64::from(cfg.actions)) {
        return bad("actions", m);
    }
    if !crate::settings::range("task.random_mdp.seed").contains(cfg.seed as f64) || cfg.seed > (1 << 53) - 1 {
        return bad("seed", format!("must be in [0, 2^53 - 1], got {}", cfg.seed));
    }
    if let Some(m) = crate::settings::check("task.random_mdp.discount", cfg.discount) {
        return bad("discount", m);
    }
    if let Some(m) = crate::settings::check_int("task.random_mdp.max_steps", u64::from(cfg.max_steps)) {
        return Err(TaskError::Invalid("max_steps".into(), m));
    }
    let m = random_mdp(cfg.states as usize, cfg.actions as usize, cfg.seed, cfg.continuing);
    FiniteTask::new(m, "random_mdp", cfg.discount, cfg.max_steps, cfg.continuing)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sampled_outcomes_follow_the_model() {
        // Common practice, no source: empirical outcome frequencies of one
        // state-action pair match the model's probabilities.
        let m = random_mdp(4, 2, 7, false);
        let mut task = FiniteTask::new(m.clone(), "t", 0.9, 100, false).unwrap();
        let mut rng = Stream::from_seed(1);
        let mut obs = [0.0];
        let mut counts = vec![0usize; m.n_states];
        let n = 100_000;
        for _ in 0..n {
            task.state = 1;
            task.step(Action::Index(1), &mut rng, &mut obs);
            counts[task.state] += 1;
        }
        let mut want = vec![0.0; m.n_states];
        for o in &m.outcomes[1][1] {
            want[o.next] += o.prob;
        }
        for s in 0..m.n_states {
            assert!((counts[s] as f64 / n as f64 - want[s]).abs() < 0.01, "state {s}");
        }
    }

    #[test]
    fn bad_settings_are_named() {
        let e = build_random_mdp(&RandomMdpConfig { states: 1, ..RandomMdpConfig::default() }).unwrap_err();
        assert_eq!(e.to_string(), "states: must be in [2, 50], got 1");
        assert!(build_random_mdp(&RandomMdpConfig { continuing: true, ..RandomMdpConfig::default() }).is_ok());
    }
}
