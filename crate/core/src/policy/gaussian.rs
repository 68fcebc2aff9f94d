//! The Gaussian policy for continuous actions, squashed into the bounds.
//!
//! A pre-squash sample `u = μ(s) + σ ε` with `ε ~ N(0, I)` is mapped into
//! the task's action box by `a = mid + half · tanh(u)` (`mid` and `half` the
//! centre and half-width of each bound): actions are *tanh-squashed*, never
//! clipped, so every action the policy takes lies strictly inside the box
//! and its density is known exactly. The log-probability is corrected by
//! the change of variables (Haarnoja et al. 2018, Appendix C):
//! `log π(a|s) = Σ_j [log N(u_j; μ_j, σ_j) − log(half_j (1 − tanh² u_j))]`,
//! with `log(1 − tanh² u) = 2 (log 2 − u − softplus(−2u))` for stability.
//! The correction does not depend on the weights (given `u`), so the score is
//! the Gaussian one in `u`: `∂/∂μ_j = (u_j − μ_j)/σ_j²` and
//! `∂/∂log σ_j = ((u_j − μ_j)/σ_j)² − 1`. The reported entropy is that of
//! the pre-squash Gaussian, `Σ_j (½ log(2πe) + log σ_j)` (the squashed
//! entropy has no closed form). The log-standard deviation is one weight per
//! action component, independent of the state; fixed or learned, and kept
//! in [−10, 2] while learning.

use serde::{Deserialize, Serialize};

/// Smallest learned log-standard deviation.
pub const LOG_STD_MIN: f64 = -10.0;
/// Largest learned log-standard deviation.
pub const LOG_STD_MAX: f64 = 2.0;
/// Squashed ratios are kept this far inside ±1 when a pre-squash value must
/// be recovered from an action.
const EDGE: f64 = 1e-12;

/// The continuous policy family (only the Gaussian for now).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PolicyKind {
    /// Gaussian in the pre-squash space, tanh-squashed into the bounds.
    #[default]
    Gaussian,
}

/// Settings of the continuous-action policy (the `policy` object of a
/// learner setup; ignored on tasks with discrete actions, which use a
/// softmax).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PolicyConfig {
    /// `"gaussian"`. Default `"gaussian"`.
    #[serde(default)]
    pub kind: PolicyKind,
    /// Initial log-standard deviation of the pre-squash Gaussian, in
    /// [−10, 2]. Default −0.5.
    #[serde(default = "default_log_std")]
    pub log_std: f64,
    /// Whether the log-standard deviation is learned (true) or fixed. Default true.
    #[serde(default = "default_sd_trainable")]
    pub sd_trainable: bool,
}

fn default_log_std() -> f64 {
    -0.5
}
fn default_sd_trainable() -> bool {
    true
}

impl Default for PolicyConfig {
    fn default() -> Self {
        PolicyConfig {
            kind: PolicyKind::Gaussian,
            log_std: default_log_std(),
            sd_trainable: default_sd_trainable(),
        }
    }
}

impl PolicyConfig {
    /// Every out-of-range setting as `(field, message)`.
    pub fn check(&self) -> Vec<(String, String)> {
        let mut errs = Vec::new();
        if let Some(m) = crate::settings::check("learner.policy.log_std", self.log_std) {
            errs.push(("log_std".into(), m));
        }
        errs
    }
}

/// `log(1 + e^x)` without overflow.
#[inline]
pub fn softplus(x: f64) -> f64 {
    x.max(0.0) + libm::log1p(libm::exp(-x.abs()))
}

/// `log(1 − tanh² u)`, stable for large |u|.
#[inline]
pub fn log_one_minus_tanh_sq(u: f64) -> f64 {
    2.0 * (core::f64::consts::LN_2 - u - softplus(-2.0 * u))
}

/// Log-density of `N(u; mu, exp(log_std)²)`.
#[inline]
pub fn normal_log_density(u: f64, mu: f64, log_std: f64) -> f64 {
    let z = (u - mu) * libm::exp(-log_std);
    -0.5 * z * z - log_std - 0.5 * libm::log(2.0 * core::f64::consts::PI)
}

/// The box an action is squashed into.
#[derive(Clone, Debug, PartialEq)]
pub struct Squash {
    /// Centres of the bounds.
    pub mid: Vec<f64>,
    /// Half-widths of the bounds.
    pub half: Vec<f64>,
}

impl Squash {
    /// The squash into `[low, high]` per component.
    pub fn new(low: &[f64], high: &[f64]) -> Self {
        Squash {
            mid: low.iter().zip(high).map(|(l, h)| 0.5 * (l + h)).collect(),
            half: low.iter().zip(high).map(|(l, h)| 0.5 * (h - l)).collect(),
        }
    }

    /// The action of pre-squash value `u` in component `j`.
    #[inline]
    pub fn squash(&self, j: usize, u: f64) -> f64 {
        self.mid[j] + self.half[j] * libm::tanh(u)
    }

    /// The pre-squash value of action `a` in component `j` (inverse of
    /// [`Squash::squash`], kept finite at the bounds).
    #[inline]
    pub fn unsquash(&self, j: usize, a: f64) -> f64 {
        let y = ((a - self.mid[j]) / self.half[j]).clamp(-1.0 + EDGE, 1.0 - EDGE);
        libm::atanh(y)
    }

    /// `log |da/du|` in component `j` at pre-squash value `u`.
    #[inline]
    pub fn log_jacobian(&self, j: usize, u: f64) -> f64 {
        libm::log(self.half[j]) + log_one_minus_tanh_sq(u)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn squashed_density_integrates_to_one() {
        // Change of variables (Haarnoja et al. 2018, Appendix C): the corrected
        // density of a = mid + half·tanh(u) integrates to 1 over the bounds.
        let sq = Squash::new(&[-2.0], &[3.0]);
        let (mu, ls) = (0.7, 0.3);
        let n = 200_000;
        let (lo, hi) = (-2.0, 3.0);
        let h = (hi - lo) / n as f64;
        let mut total = 0.0;
        for i in 0..n {
            let a = lo + (i as f64 + 0.5) * h;
            let u = sq.unsquash(0, a);
            total += libm::exp(normal_log_density(u, mu, ls) - sq.log_jacobian(0, u)) * h;
        }
        assert!((total - 1.0).abs() < 1e-4, "{total}");
    }

    #[test]
    fn stable_log_jacobian_matches_the_direct_formula() {
        // Common practice, no source: 2(log 2 − u − softplus(−2u)) = log(1 − tanh² u).
        for u in [-3.0, -0.5, 0.0, 0.2, 1.7] {
            let t = libm::tanh(u);
            assert!((log_one_minus_tanh_sq(u) - libm::log(1.0 - t * t)).abs() < 1e-12);
        }
        assert!(log_one_minus_tanh_sq(400.0).is_finite());
        let sq = Squash::new(&[-1.0], &[1.0]);
        assert!((sq.unsquash(0, sq.squash(0, 0.8)) - 0.8).abs() < 1e-12);
        assert!(sq.unsquash(0, 1.0).is_finite());
    }
}
