//! The short corridor with switched actions.
//!
//! Sutton & Barto (2018), Example 13.1 (Figure 13.1): three non-terminal
//! states in a row and a goal on the right; every step costs −1; in the
//! first and third states `left` and `right` move as named (left in the first
//! state stays put), in the second they are *switched*. The agent cannot
//! tell the states apart: its observation is one constant variable (`bias`
//! = 1) and the task declares no state ids, so every state has the same
//! features and a policy is one number, `p = P(right)`. The exact model is
//! still available ([`Task::model`]) for the exact checks, and every model
//! state's observation is that same `bias = 1` ([`Task::state_obs`]). With discount 1
//! the start value is `J(p) = (2p − 4) / (p (1 − p))` ([`ShortCorridor::objective`],
//! derived from the three Bellman equations), largest at `p* = 2 − √2`
//! where `J = −(6 + 4√2) ≈ −11.66`; an ε-greedy policy (ε = 0.1) is stuck at
//! `p = 0.95` or `p = 0.05`, with `J ≈ −44.2` or `−82.1`.

use serde::{Deserialize, Serialize};

use super::{Action, ActionSpace, FiniteModel, Outcome, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// Settings of the corridor (the `task` object of a config with `"kind": "corridor"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CorridorConfig {
    /// Episode length limit (truncation), in [1, 100000]. Default 1000.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

fn default_max_steps() -> u32 {
    1000
}

impl Default for CorridorConfig {
    fn default() -> Self {
        CorridorConfig { max_steps: default_max_steps() }
    }
}

/// The goal state's index in the model.
pub const GOAL: usize = 3;

/// The short corridor.
#[derive(Clone, Debug)]
pub struct ShortCorridor {
    spec: TaskSpec,
    state: usize,
}

impl ShortCorridor {
    /// Builds the task, or names the bad setting.
    pub fn new(cfg: CorridorConfig) -> Result<Self, TaskError> {
        if let Some(m) = crate::settings::check_int("task.corridor.max_steps", u64::from(cfg.max_steps)) {
            return Err(TaskError::Invalid("max_steps".into(), m));
        }
        let spec = TaskSpec {
            kind: "corridor",
            state_vars: vec![StateVar { name: "bias".into(), low: 0.0, high: 1.0 }],
            actions: ActionSpace::Discrete(vec!["left".into(), "right".into()]),
            n_states: None,
            default_discount: 1.0,
            max_steps: cfg.max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(ShortCorridor { spec, state: 0 })
    }

    /// Where an action leads from a non-terminal state (0 left, 1 right).
    pub fn next_state(state: usize, action: usize) -> usize {
        let right = match state {
            1 => action == 0, // switched
            _ => action == 1,
        };
        if right {
            state + 1
        } else {
            state.saturating_sub(1)
        }
    }

    /// The exact start value of the policy `P(right) = p` with discount 1
    /// (Sutton & Barto 2018, Example 13.1): `(2p − 4) / (p (1 − p))`.
    pub fn objective(p: f64) -> f64 {
        (2.0 * p - 4.0) / (p * (1.0 - p))
    }

    /// The best `P(right)`, `2 − √2`.
    pub fn best_p() -> f64 {
        2.0 - f64::sqrt(2.0)
    }
}

impl Task for ShortCorridor {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, _rng: &mut Stream, obs: &mut [f64]) {
        self.state = 0;
        obs[0] = 1.0;
    }

    fn step(&mut self, action: Action<'_>, _rng: &mut Stream, obs: &mut [f64]) -> Step {
        let a = match action {
            Action::Index(a) if a < 2 => a,
            _ => 0,
        };
        obs[0] = 1.0;
        if self.state == GOAL {
            return Step { reward: 0.0, terminated: true };
        }
        self.state = ShortCorridor::next_state(self.state, a);
        Step { reward: -1.0, terminated: self.state == GOAL }
    }

    /// Every state shows the same observation, `bias = 1`: what the agent
    /// sees there (the states cannot be told apart).
    fn state_obs(&self, s: usize, obs: &mut [f64]) -> bool {
        if s > GOAL || obs.is_empty() {
            return false;
        }
        obs[0] = 1.0;
        true
    }

    fn model(&self) -> Option<FiniteModel> {
        let outcomes = (0..4)
            .map(|s| {
                if s == GOAL {
                    return Vec::new();
                }
                (0..2)
                    .map(|a| {
                        let next = ShortCorridor::next_state(s, a);
                        vec![Outcome { next, prob: 1.0, reward: -1.0, terminal: next == GOAL }]
                    })
                    .collect()
            })
            .collect();
        Some(FiniteModel {
            n_states: 4,
            n_actions: 2,
            start: vec![1.0, 0.0, 0.0, 0.0],
            terminal: vec![false, false, false, true],
            outcomes,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_form_matches_the_linear_solve_and_the_book() {
        // Sutton & Barto (2018), Example 13.1: the closed form agrees with the
        // exact policy evaluation of the model for several p; the optimum
        // p* = 2 − √2 ≈ 0.59 has J = −(6 + 4√2) ≈ −11.6; ε-greedy's best is
        // J(0.95) ≈ −44.2 (references.md).
        let t = ShortCorridor::new(CorridorConfig::default()).unwrap();
        let m = t.model().unwrap();
        for p in [0.1, 0.3, 0.5, 2.0 - f64::sqrt(2.0), 0.8, 0.95] {
            let mut pi = vec![0.0; 8];
            for s in 0..3 {
                pi[s * 2] = 1.0 - p;
                pi[s * 2 + 1] = p;
            }
            pi[6] = 1.0;
            let v = crate::exact::evaluate(&m, &pi, 1.0).unwrap();
            assert!((v[0] - ShortCorridor::objective(p)).abs() < 1e-9, "p = {p}");
        }
        let best = ShortCorridor::best_p();
        assert!((best - 0.585786).abs() < 1e-6);
        assert!((ShortCorridor::objective(best) + 6.0 + 4.0 * f64::sqrt(2.0)).abs() < 1e-12);
        assert!((ShortCorridor::objective(0.95) + 44.21).abs() < 0.01);
        assert!((ShortCorridor::objective(0.05) + 82.11).abs() < 0.01);
        // p* is a maximum: nearby p are worse.
        for d in [-0.01, 0.01] {
            assert!(ShortCorridor::objective(best + d) < ShortCorridor::objective(best));
        }
    }

    #[test]
    fn the_second_state_switches_the_actions() {
        // Sutton & Barto (2018), Example 13.1.
        assert_eq!(ShortCorridor::next_state(0, 0), 0);
        assert_eq!(ShortCorridor::next_state(0, 1), 1);
        assert_eq!(ShortCorridor::next_state(1, 0), 2);
        assert_eq!(ShortCorridor::next_state(1, 1), 0);
        assert_eq!(ShortCorridor::next_state(2, 1), GOAL);
    }
}
