//! Pendulum swing-up with limited torque, in the formulation of Doya (2000).
//!
//! Doya (2000), Neural Computation 12(1), Section 5 (parameters from memory,
//! no stored copy read): a pendulum of mass m = 1 kg and length l = 1 m,
//! g = 9.8 m/s², friction μ = 0.01, driven by a torque |u| ≤ 5 N·m:
//!
//! ```text
//! m l² ω̇ = −μ ω + m g l sin θ + u,     θ̇ = ω,     θ = 0 upright
//! ```
//!
//! Since m g l = 9.8 > 5, the pendulum cannot be lifted directly: it must
//! swing. **Reward: cos θ of the angle after each step** (the paper's
//! reward r = cos θ, one sample per step, not scaled by the time step), so
//! it is +1 upright and −1 hanging down. Trials start at θ uniform in
//! [−π, π) with ω = 0 and last 20 s by default.
//!
//! **Integration (our choice; the paper's simulator is not reproduced):**
//! one semi-implicit Euler step per control step of `dt` seconds (default
//! 0.02 s): ω' = ω + dt · (−μω + mgl sin θ + u)/(ml²), then θ' = θ + dt · ω',
//! and θ' is wrapped to [−π, π). The torque is held for the step and
//! clipped to [−5, 5]. Actions are continuous (one component, `torque`) or,
//! with `torque_levels` = n ≥ 2, n evenly spaced torques from −5 to 5.

use serde::{Deserialize, Serialize};

use super::{Action, ActionSpace, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// Pendulum mass (kg).
pub const MASS: f64 = 1.0;
/// Pendulum length (m).
pub const LENGTH: f64 = 1.0;
/// Gravity (m/s²).
pub const GRAVITY: f64 = 9.8;
/// Friction coefficient.
pub const FRICTION: f64 = 0.01;
/// Largest torque magnitude (N·m).
pub const MAX_TORQUE: f64 = 5.0;

/// Settings of the pendulum (the `task` object of a config with `"kind": "pendulum"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PendulumConfig {
    /// Episode length limit in steps (truncation), in [1, 100000]. Default
    /// 1000 (20 s at the default step).
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
    /// Control and integration step in seconds, in [0.001, 0.1]. Default 0.02.
    #[serde(default = "default_dt")]
    pub dt: f64,
    /// 0 for a continuous torque (default), or n in [2, 21] for n evenly
    /// spaced torque levels from −5 to 5 (a discrete action set).
    #[serde(default)]
    pub torque_levels: u32,
}

fn default_max_steps() -> u32 {
    1000
}
fn default_dt() -> f64 {
    0.02
}

impl Default for PendulumConfig {
    fn default() -> Self {
        PendulumConfig { max_steps: default_max_steps(), dt: default_dt(), torque_levels: 0 }
    }
}

/// Wraps an angle to [−π, π).
pub fn wrap(theta: f64) -> f64 {
    let two_pi = 2.0 * std::f64::consts::PI;
    let t = (theta + std::f64::consts::PI) % two_pi;
    let t = if t < 0.0 { t + two_pi } else { t };
    t - std::f64::consts::PI
}

/// One semi-implicit Euler step of `dt` seconds from (θ, ω) under torque `u`
/// (clipped to ±5); returns (θ', ω') with θ' wrapped to [−π, π).
pub fn dynamics(theta: f64, omega: f64, u: f64, dt: f64) -> (f64, f64) {
    let u = u.clamp(-MAX_TORQUE, MAX_TORQUE);
    let acc = (-FRICTION * omega + MASS * GRAVITY * LENGTH * libm::sin(theta) + u) / (MASS * LENGTH * LENGTH);
    let omega2 = omega + dt * acc;
    (wrap(theta + dt * omega2), omega2)
}

/// The pendulum task. State: `theta` (0 upright), `omega`.
#[derive(Clone, Debug)]
pub struct Pendulum {
    spec: TaskSpec,
    dt: f64,
    levels: u32,
    theta: f64,
    omega: f64,
}

impl Pendulum {
    /// Builds the task, or names the bad setting.
    pub fn new(cfg: PendulumConfig) -> Result<Self, TaskError> {
        let bad = |f: &str, m: String| Err(TaskError::Invalid(f.into(), m));
        if let Some(m) = crate::settings::check_int("task.pendulum.max_steps", u64::from(cfg.max_steps)) {
            return Err(TaskError::Invalid("max_steps".into(), m));
        }
        if !crate::settings::range("task.pendulum.dt").contains(cfg.dt) {
            return bad("dt", format!("must be in [0.001, 0.1] seconds, got {}", cfg.dt));
        }
        if !crate::settings::range("task.pendulum.torque_levels").contains(f64::from(cfg.torque_levels)) {
            return bad(
                "torque_levels",
                format!("must be 0 (continuous torque) or in [2, 21], got {}", cfg.torque_levels),
            );
        }
        let actions = if cfg.torque_levels == 0 {
            ActionSpace::Continuous {
                names: vec!["torque".into()],
                low: vec![-MAX_TORQUE],
                high: vec![MAX_TORQUE],
            }
        } else {
            ActionSpace::Discrete(
                (0..cfg.torque_levels)
                    .map(|i| format!("torque_{}", level_name(level(i, cfg.torque_levels))))
                    .collect(),
            )
        };
        let pi = std::f64::consts::PI;
        let spec = TaskSpec {
            kind: "pendulum",
            state_vars: vec![
                StateVar { name: "theta".into(), low: -pi, high: pi },
                StateVar { name: "omega".into(), low: -8.0, high: 8.0 },
            ],
            actions,
            n_states: None,
            default_discount: 0.99,
            max_steps: cfg.max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(Pendulum { spec, dt: cfg.dt, levels: cfg.torque_levels, theta: pi, omega: 0.0 })
    }

    /// The current (θ, ω).
    pub fn state(&self) -> (f64, f64) {
        (self.theta, self.omega)
    }

    /// Places the pendulum (for tests and the rollout view).
    pub fn set_state(&mut self, theta: f64, omega: f64) {
        self.theta = theta;
        self.omega = omega;
    }
}

/// Torque of level `i` of `n`.
fn level(i: u32, n: u32) -> f64 {
    -MAX_TORQUE + 2.0 * MAX_TORQUE * f64::from(i) / f64::from(n - 1)
}

/// A name-safe rendering of a torque level (`m5`, `0`, `2p5`).
fn level_name(u: f64) -> String {
    let s = format!("{}", (u * 1000.0).round() / 1000.0);
    s.replace('-', "m").replace('.', "p")
}

impl Task for Pendulum {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]) {
        let pi = std::f64::consts::PI;
        self.theta = rng.uniform_in(-pi, pi);
        self.omega = 0.0;
        obs[0] = self.theta;
        obs[1] = self.omega;
    }

    fn step(&mut self, action: Action<'_>, _rng: &mut Stream, obs: &mut [f64]) -> Step {
        let u = match action {
            Action::Index(i) if self.levels > 0 && (i as u32) < self.levels => level(i as u32, self.levels),
            Action::Vector([u]) if self.levels == 0 => *u,
            other => panic!("pendulum given an invalid action {other:?}"),
        };
        (self.theta, self.omega) = dynamics(self.theta, self.omega, u, self.dt);
        obs[0] = self.theta;
        obs[1] = self.omega;
        Step { reward: libm::cos(self.theta), terminated: false }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrap_and_levels() {
        let pi = std::f64::consts::PI;
        assert_eq!(wrap(pi), -pi);
        assert!((wrap(3.0 * pi + 0.5) - (-pi + 0.5)).abs() < 1e-12);
        assert!((wrap(-0.25) + 0.25).abs() < 1e-15);
        let p = Pendulum::new(PendulumConfig { torque_levels: 5, ..PendulumConfig::default() }).unwrap();
        assert_eq!(
            p.spec().actions.names(),
            ["torque_m5", "torque_m2p5", "torque_0", "torque_2p5", "torque_5"]
        );
        assert!(Pendulum::new(PendulumConfig { torque_levels: 1, ..PendulumConfig::default() }).is_err());
        assert!(Pendulum::new(PendulumConfig { dt: 0.5, ..PendulumConfig::default() }).is_err());
    }
}
