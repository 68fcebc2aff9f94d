//! A scalar linear-quadratic regulator with a continuous action.
//!
//! `x' = a x + b u (+ noise · N(0, 1))` with reward `−(q x² + r u²)`, the
//! action `u` limited to `[−u_max, u_max]` (values outside are clipped) and
//! the state kept inside `[−x_max, x_max]` (a wall: `x'` is clamped there),
//! starting from `x ~ U[−start, start]`. Episodes are cut by the time limit
//! only (the runner bootstraps across the cut), so with discount γ the
//! problem approximates the infinite-horizon discounted regulator, whose
//! optimal policy is `u = −K x` with `V(x) = −P x²`, `P` the fixed point of
//! the discounted Riccati equation
//! `P = q + γ a² r P / (r + γ b² P)` and `K = γ a b P / (r + γ b² P)`
//! (Bertsekas, Dynamic Programming and Optimal Control, Vol. I, Section 4.1;
//! from memory). The default settings keep the optimal closed loop well
//! inside both limits from every start state.

use serde::{Deserialize, Serialize};

use super::{Action, ActionSpace, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// Settings of the regulator (the `task` object of a config with `"kind": "lqr"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LqrConfig {
    /// State coefficient a, in [−10, 10]. Default 1.
    #[serde(default = "one")]
    pub a: f64,
    /// Action coefficient b, in [−10, 10] and not 0. Default 1.
    #[serde(default = "one")]
    pub b: f64,
    /// State cost q, in [0, 100]. Default 1.
    #[serde(default = "one")]
    pub q: f64,
    /// Action cost r, in (0, 100]. Default 1.
    #[serde(default = "one")]
    pub r: f64,
    /// Standard deviation of the process noise, in [0, 10]. Default 0.
    #[serde(default)]
    pub noise: f64,
    /// Start states are uniform in [−start, start]; start in (0, x_max]. Default 1.
    #[serde(default = "one")]
    pub start: f64,
    /// Action limit, in (0, 100]. Default 3.
    #[serde(default = "default_u_max")]
    pub u_max: f64,
    /// State limit (a wall), in (0, 1000]. Default 4.
    #[serde(default = "default_x_max")]
    pub x_max: f64,
    /// Discount used when a learner sets none, in [0, 1]. Default 0.9.
    #[serde(default = "default_discount")]
    pub discount: f64,
    /// Episode length limit (truncation), in [1, 100000]. Default 30.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

fn one() -> f64 {
    1.0
}
fn default_u_max() -> f64 {
    3.0
}
fn default_x_max() -> f64 {
    4.0
}
fn default_discount() -> f64 {
    0.9
}
fn default_max_steps() -> u32 {
    30
}

impl Default for LqrConfig {
    fn default() -> Self {
        LqrConfig {
            a: 1.0,
            b: 1.0,
            q: 1.0,
            r: 1.0,
            noise: 0.0,
            start: 1.0,
            u_max: default_u_max(),
            x_max: default_x_max(),
            discount: default_discount(),
            max_steps: default_max_steps(),
        }
    }
}

/// The regulator.
#[derive(Clone, Debug)]
pub struct Lqr {
    cfg: LqrConfig,
    spec: TaskSpec,
    x: f64,
}

/// The discounted Riccati solution `(P, K)`: `V(x) = −P x²` and `u = −K x`
/// (see the module documentation). Iterates the Riccati map from `P = q`
/// to a fixed point.
pub fn riccati(a: f64, b: f64, q: f64, r: f64, gamma: f64) -> (f64, f64) {
    let mut p = q;
    for _ in 0..1_000_000 {
        let next = q + gamma * a * a * r * p / (r + gamma * b * b * p);
        let done = (next - p).abs() <= 1e-15 * next.abs().max(1.0);
        p = next;
        if done {
            break;
        }
    }
    (p, gamma * a * b * p / (r + gamma * b * b * p))
}

impl Lqr {
    /// Builds the task, or names the bad setting.
    pub fn new(cfg: LqrConfig) -> Result<Self, TaskError> {
        let bad = |f: &str, m: String| Err(TaskError::Invalid(f.into(), m));
        let range = |f: &str, v: f64, lo: f64, hi: f64, open: bool| -> Result<(), TaskError> {
            let ok = v.is_finite() && if open { v > lo && v <= hi } else { v >= lo && v <= hi };
            if ok {
                Ok(())
            } else {
                let l = if open { "(" } else { "[" };
                Err(TaskError::Invalid(f.into(), format!("must be in {l}{lo}, {hi}], got {v}")))
            }
        };
        let table = |f: &str, v: f64| match crate::settings::check(&format!("task.lqr.{f}"), v) {
            Some(m) => Err(TaskError::Invalid(f.into(), m)),
            None => Ok(()),
        };
        table("a", cfg.a)?;
        table("b", cfg.b)?;
        if cfg.b == 0.0 {
            return bad("b", "must not be 0: the action would have no effect".into());
        }
        table("q", cfg.q)?;
        table("r", cfg.r)?;
        table("noise", cfg.noise)?;
        table("u_max", cfg.u_max)?;
        table("x_max", cfg.x_max)?;
        range("start", cfg.start, 0.0, cfg.x_max, true)?;
        table("discount", cfg.discount)?;
        if let Some(m) = crate::settings::check_int("task.lqr.max_steps", u64::from(cfg.max_steps)) {
            return Err(TaskError::Invalid("max_steps".into(), m));
        }
        let spec = TaskSpec {
            kind: "lqr",
            state_vars: vec![StateVar { name: "x".into(), low: -cfg.x_max, high: cfg.x_max }],
            actions: ActionSpace::Continuous {
                names: vec!["u".into()],
                low: vec![-cfg.u_max],
                high: vec![cfg.u_max],
            },
            n_states: None,
            default_discount: cfg.discount,
            max_steps: cfg.max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(Lqr { cfg, spec, x: 0.0 })
    }

    /// The Riccati solution `(P, K)` of this task's settings for discount `gamma`.
    pub fn riccati(&self, gamma: f64) -> (f64, f64) {
        riccati(self.cfg.a, self.cfg.b, self.cfg.q, self.cfg.r, gamma)
    }
}

impl Task for Lqr {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]) {
        self.x = rng.uniform_in(-self.cfg.start, self.cfg.start);
        obs[0] = self.x;
    }

    fn step(&mut self, action: Action<'_>, rng: &mut Stream, obs: &mut [f64]) -> Step {
        let u = match action {
            Action::Vector(v) => v.first().copied().filter(|u| u.is_finite()).unwrap_or(0.0),
            Action::Index(_) => 0.0,
        };
        let u = u.clamp(-self.cfg.u_max, self.cfg.u_max);
        let c = &self.cfg;
        let reward = -(c.q * self.x * self.x + c.r * u * u);
        let noise = if c.noise > 0.0 { c.noise * rng.normal() } else { 0.0 };
        self.x = (c.a * self.x + c.b * u + noise).clamp(-c.x_max, c.x_max);
        obs[0] = self.x;
        Step { reward, terminated: false }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn riccati_matches_the_closed_form() {
        // Bertsekas, Vol. I, Section 4.1 (from memory; references.md): with
        // a = b = q = r = γ = 1, P = (1 + √5)/2 and K = (√5 − 1)/2.
        let (p, k) = riccati(1.0, 1.0, 1.0, 1.0, 1.0);
        let s5 = f64::sqrt(5.0);
        assert!((p - (1.0 + s5) / 2.0).abs() < 1e-12, "{p}");
        assert!((k - (s5 - 1.0) / 2.0).abs() < 1e-12, "{k}");
        // Derived by hand for the default γ = 0.9: 0.9P² − 0.8P − 1 = 0.
        let (p, k) = riccati(1.0, 1.0, 1.0, 1.0, 0.9);
        let want = (0.8 + f64::sqrt(0.64 + 3.6)) / 1.8;
        assert!((p - want).abs() < 1e-12 && (k - 0.9 * want / (1.0 + 0.9 * want)).abs() < 1e-12);
    }

    #[test]
    fn the_riccati_gain_beats_nearby_gains() {
        // Exact check by simulation: the discounted cost of u = −Kx over a long
        // horizon is P x0², and gains ±0.05 away cost more.
        let cost = |k: f64| {
            let (mut x, mut total, mut disc) = (1.0f64, 0.0, 1.0);
            for _ in 0..2000 {
                let u = -k * x;
                total += disc * (x * x + u * u);
                x += u;
                disc *= 0.9;
            }
            total
        };
        let (p, k) = riccati(1.0, 1.0, 1.0, 1.0, 0.9);
        assert!((cost(k) - p).abs() < 1e-9);
        assert!(cost(k + 0.05) > cost(k) && cost(k - 0.05) > cost(k));
    }

    #[test]
    fn one_step_and_limits() {
        let mut t = Lqr::new(LqrConfig::default()).unwrap();
        let mut rng = Stream::from_seed(1);
        let mut obs = [0.0];
        t.reset(&mut rng, &mut obs);
        let x0 = obs[0];
        let st = t.step(Action::Vector(&[0.5]), &mut rng, &mut obs);
        assert!((st.reward + x0 * x0 + 0.25).abs() < 1e-15);
        assert!((obs[0] - (x0 + 0.5)).abs() < 1e-15);
        t.x = 2.0;
        let st = t.step(Action::Vector(&[50.0]), &mut rng, &mut obs);
        assert_eq!(
            (st.reward, obs[0]),
            (-(4.0 + 9.0), 4.0),
            "action clipped to 3, state stopped at the wall"
        );
        assert_eq!(
            Lqr::new(LqrConfig { b: 0.0, ..LqrConfig::default() }).unwrap_err().to_string(),
            "b: must not be 0: the action would have no effect"
        );
    }
}
