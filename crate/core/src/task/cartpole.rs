//! Cart-pole balancing with the published dynamics.
//!
//! Parameters and the Euler integration (positions updated before velocities)
//! follow Barto, Sutton & Anderson (1983), in the frictionless form written out
//! by Florian (2007, eqs. 23–24): g = 9.8, cart 1.0 kg, pole 0.1 kg, half-length
//! 0.5 m, force ±10 N, τ = 0.02 s; the episode terminates when |θ| > 12° or
//! |x| > 2.4 m. Start states are drawn uniformly from [−0.05, 0.05] in every
//! variable. The base reward is +1 for every step taken (so the return is the
//! episode length).

use serde::{Deserialize, Serialize};

use super::{Action, ActionSpace, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// Gravity (m/s²).
pub const GRAVITY: f64 = 9.8;
/// Cart mass (kg).
pub const CART_MASS: f64 = 1.0;
/// Pole mass (kg).
pub const POLE_MASS: f64 = 0.1;
/// Half the pole's length (m).
pub const HALF_LENGTH: f64 = 0.5;
/// Magnitude of the push (N).
pub const FORCE: f64 = 10.0;
/// Integration step (s).
pub const TAU: f64 = 0.02;
/// Angle beyond which the episode terminates (rad): 12 degrees.
pub const THETA_LIMIT: f64 = 12.0 * 2.0 * std::f64::consts::PI / 360.0;
/// Cart position beyond which the episode terminates (m).
pub const X_LIMIT: f64 = 2.4;

/// Settings of cart-pole (the `task` object of a config with `"kind": "cartpole"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CartPoleConfig {
    /// Episode length limit (truncation), in [1, 100000]. Default 500.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

fn default_max_steps() -> u32 {
    500
}

impl Default for CartPoleConfig {
    fn default() -> Self {
        CartPoleConfig { max_steps: default_max_steps() }
    }
}

/// The cart-pole task. State: x, ẋ, θ, θ̇ (θ = 0 upright).
#[derive(Clone, Debug)]
pub struct CartPole {
    spec: TaskSpec,
    state: [f64; 4],
}

/// One Euler step of the frictionless dynamics from `s` under `force`.
pub fn dynamics(s: [f64; 4], force: f64) -> [f64; 4] {
    let [x, x_dot, theta, theta_dot] = s;
    let total = CART_MASS + POLE_MASS;
    let pml = POLE_MASS * HALF_LENGTH;
    let (sin, cos) = (libm::sin(theta), libm::cos(theta));
    let temp = (force + pml * theta_dot * theta_dot * sin) / total;
    let theta_acc =
        (GRAVITY * sin - cos * temp) / (HALF_LENGTH * (4.0 / 3.0 - POLE_MASS * cos * cos / total));
    let x_acc = temp - pml * theta_acc * cos / total;
    [x + TAU * x_dot, x_dot + TAU * x_acc, theta + TAU * theta_dot, theta_dot + TAU * theta_acc]
}

impl CartPole {
    /// Builds the task, or names the bad setting.
    pub fn new(cfg: CartPoleConfig) -> Result<Self, TaskError> {
        if let Some(m) = crate::settings::check_int("task.cartpole.max_steps", u64::from(cfg.max_steps)) {
            return Err(TaskError::Invalid("max_steps".into(), m));
        }
        let var = |name: &str, lim: f64| StateVar { name: name.into(), low: -lim, high: lim };
        let spec = TaskSpec {
            kind: "cartpole",
            state_vars: vec![
                var("x", X_LIMIT),
                var("x_dot", 3.0),
                var("theta", THETA_LIMIT),
                var("theta_dot", 3.5),
            ],
            actions: ActionSpace::Discrete(vec!["push_left".into(), "push_right".into()]),
            n_states: None,
            default_discount: 0.99,
            max_steps: cfg.max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(CartPole { spec, state: [0.0; 4] })
    }

    /// The current physical state (x, ẋ, θ, θ̇).
    pub fn state(&self) -> [f64; 4] {
        self.state
    }

    /// Places the system in a given state (for tests and the rollout view).
    pub fn set_state(&mut self, s: [f64; 4]) {
        self.state = s;
    }
}

impl Task for CartPole {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]) {
        for v in self.state.iter_mut() {
            *v = rng.uniform_in(-0.05, 0.05);
        }
        obs.copy_from_slice(&self.state);
    }

    fn step(&mut self, action: Action<'_>, _rng: &mut Stream, obs: &mut [f64]) -> Step {
        let force = match action {
            Action::Index(0) => -FORCE,
            Action::Index(1) => FORCE,
            other => panic!("cart-pole given an invalid action {other:?}"),
        };
        self.state = dynamics(self.state, force);
        obs.copy_from_slice(&self.state);
        let [x, _, theta, _] = self.state;
        let terminated = x.abs() > X_LIMIT || theta.abs() > THETA_LIMIT;
        Step { reward: 1.0, terminated }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_step_from_rest_matches_published_equations() {
        // Barto, Sutton & Anderson (1983) parameters; equations of Florian (2007),
        // eqs. 23–24. From the zero state with F = +10: θ̈ = −600/41, ẍ = 400/41, so
        // after one Euler step ẋ = 8/41, θ̇ = −12/41 and x = θ = 0.
        let s = dynamics([0.0; 4], FORCE);
        assert_eq!(s[0], 0.0);
        assert_eq!(s[2], 0.0);
        assert!((s[1] - 8.0 / 41.0).abs() < 1e-15, "x_dot {}", s[1]);
        assert!((s[3] + 12.0 / 41.0).abs() < 1e-15, "theta_dot {}", s[3]);
        // Positions move with the old velocities on the next step.
        let s2 = dynamics(s, FORCE);
        assert!((s2[0] - TAU * 8.0 / 41.0).abs() < 1e-15);
        assert!((s2[2] + TAU * 12.0 / 41.0).abs() < 1e-15);
    }

    #[test]
    fn mirror_symmetry_and_failure() {
        // Common practice, no source: the dynamics are odd under x, θ → −x, −θ, F → −F.
        let s = [0.1, -0.2, 0.05, 0.3];
        let a = dynamics(s, FORCE);
        let b = dynamics(s.map(|v| -v), -FORCE);
        for i in 0..4 {
            assert!((a[i] + b[i]).abs() < 1e-15);
        }
        let mut t = CartPole::new(CartPoleConfig::default()).unwrap();
        t.set_state([0.0, 0.0, THETA_LIMIT - 1e-4, 2.0]);
        let mut obs = [0.0; 4];
        let st = t.step(Action::Index(1), &mut Stream::from_seed(0), &mut obs);
        assert!(st.terminated);
        assert_eq!(st.reward, 1.0);
    }
}
