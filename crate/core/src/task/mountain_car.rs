//! Mountain car with the published dynamics.
//!
//! Sutton & Barto (2018), Example 10.1 (after Sutton 1996): an under-powered
//! car in a valley must rock back and forth to reach the goal at the top of
//! the right hill. Three actions: full throttle reverse (A = −1), zero
//! throttle (A = 0), full throttle forward (A = +1). Each step
//!
//! ```text
//! ẋ' = bound(ẋ + 0.001 A − 0.0025 cos(3x)),   ẋ ∈ [−0.07, 0.07]
//! x' = bound(x + ẋ'),                          x ∈ [−1.2, 0.5]
//! ```
//!
//! and when x' reaches the left bound −1.2 the velocity is reset to 0. The
//! episode terminates when x' reaches 0.5. Start: x uniform in [−0.6, −0.4),
//! ẋ = 0. Base reward −1 per step; the book uses no discount (γ = 1), which is
//! this task's default.

use serde::{Deserialize, Serialize};

use super::{Action, ActionSpace, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// Left end of the track.
pub const X_MIN: f64 = -1.2;
/// Right end of the track: the goal.
pub const X_GOAL: f64 = 0.5;
/// Speed limit (both directions).
pub const V_MAX: f64 = 0.07;
/// Throttle gain.
pub const POWER: f64 = 0.001;
/// Gravity gain on the slope `cos(3x)`.
pub const GRAVITY: f64 = 0.0025;

/// Settings of mountain car (the `task` object of a config with `"kind": "mountain_car"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MountainCarConfig {
    /// Episode length limit (truncation), in [1, 100000]. Default 1000.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

fn default_max_steps() -> u32 {
    1000
}

impl Default for MountainCarConfig {
    fn default() -> Self {
        MountainCarConfig { max_steps: default_max_steps() }
    }
}

/// One step of the dynamics from (x, ẋ) with throttle `a` ∈ {−1, 0, 1};
/// returns (x', ẋ').
pub fn dynamics(x: f64, v: f64, a: f64) -> (f64, f64) {
    let mut v2 = (v + POWER * a - GRAVITY * libm::cos(3.0 * x)).clamp(-V_MAX, V_MAX);
    let x2 = (x + v2).clamp(X_MIN, X_GOAL);
    if x2 <= X_MIN {
        v2 = 0.0;
    }
    (x2, v2)
}

/// The mountain car task. State: `position` x, `velocity` ẋ.
#[derive(Clone, Debug)]
pub struct MountainCar {
    spec: TaskSpec,
    x: f64,
    v: f64,
}

impl MountainCar {
    /// Builds the task, or names the bad setting.
    pub fn new(cfg: MountainCarConfig) -> Result<Self, TaskError> {
        if let Some(m) = crate::settings::check_int("task.mountain_car.max_steps", u64::from(cfg.max_steps)) {
            return Err(TaskError::Invalid("max_steps".into(), m));
        }
        let spec = TaskSpec {
            kind: "mountain_car",
            state_vars: vec![
                StateVar { name: "position".into(), low: X_MIN, high: X_GOAL },
                StateVar { name: "velocity".into(), low: -V_MAX, high: V_MAX },
            ],
            actions: ActionSpace::Discrete(vec!["reverse".into(), "coast".into(), "forward".into()]),
            n_states: None,
            default_discount: 1.0,
            max_steps: cfg.max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(MountainCar { spec, x: -0.5, v: 0.0 })
    }

    /// The current (position, velocity).
    pub fn state(&self) -> (f64, f64) {
        (self.x, self.v)
    }

    /// Places the car (for tests and the rollout view).
    pub fn set_state(&mut self, x: f64, v: f64) {
        self.x = x;
        self.v = v;
    }
}

impl Task for MountainCar {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]) {
        self.x = rng.uniform_in(-0.6, -0.4);
        self.v = 0.0;
        obs[0] = self.x;
        obs[1] = self.v;
    }

    fn step(&mut self, action: Action<'_>, _rng: &mut Stream, obs: &mut [f64]) -> Step {
        let a = match action {
            Action::Index(i) if i < 3 => i as f64 - 1.0,
            other => panic!("mountain car given an invalid action {other:?}"),
        };
        (self.x, self.v) = dynamics(self.x, self.v, a);
        obs[0] = self.x;
        obs[1] = self.v;
        Step { reward: -1.0, terminated: self.x >= X_GOAL }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bounds_and_goal() {
        // Sutton & Barto (2018), Example 10.1: the velocity is reset at the
        // left wall, and reaching x = 0.5 ends the episode.
        let (x, v) = dynamics(-1.19, -0.05, -1.0);
        assert_eq!((x, v), (X_MIN, 0.0));
        let (_, v) = dynamics(0.0, 0.0699, 1.0);
        assert!(v <= V_MAX);
        let mut t = MountainCar::new(MountainCarConfig::default()).unwrap();
        t.set_state(0.45, 0.07);
        let mut obs = [0.0; 2];
        let s = t.step(Action::Index(2), &mut Stream::from_seed(0), &mut obs);
        assert_eq!((s.reward, s.terminated, obs[0]), (-1.0, true, X_GOAL));
        assert!(MountainCar::new(MountainCarConfig { max_steps: 0 }).is_err());
    }
}
