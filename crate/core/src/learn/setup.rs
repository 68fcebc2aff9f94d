//! The learner setup: the config object that selects and tunes a learner.
//!
//! [`LearnerSetup`] is the `base` object of a config and what each variant's
//! `learner` object overrides. Every field has a serde default, so configs
//! written before a field existed stay valid and mean the same. A field a
//! learner does not use is accepted and ignored (a base setup is shared by
//! variants of different learners). [`LearnerSetup::check`] reports every
//! out-of-range value and every mismatch with the task as `field: message`;
//! nothing is clamped.

use serde::{Deserialize, Serialize};

use crate::approx::{
    build_approx, build_features, default_features, ApproxConfig, FeatureConfig, FeatureError, FeaturePool,
    Obs,
};
use crate::optim::OptimizerConfig;
use crate::policy::gaussian::PolicyConfig;
use crate::rng::Stream;
use crate::task::{ActionSpace, StateVar, TaskSpec};

/// The learner families.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Family {
    /// Advantage actor-critic: state-value critic, TD(0), n-step or GAE(λ) advantages.
    #[default]
    A2c,
    /// Q actor-critic: Sarsa action-value critic, Q(s, a) scales the score.
    Qac,
    /// REINFORCE (Monte Carlo policy gradient) with a choice of baseline.
    Reinforce,
    /// Off-policy actor-critic with importance weights (Degris, White & Sutton 2012).
    OffPolicy,
    /// Deterministic actor-critic, off-policy DPG (Silver et al. 2014).
    Deterministic,
    /// Average-reward (differential) actor-critic for continuing tasks.
    Differential,
}

impl Family {
    /// The config name.
    pub fn name(self) -> &'static str {
        match self {
            Family::A2c => "a2c",
            Family::Qac => "qac",
            Family::Reinforce => "reinforce",
            Family::OffPolicy => "off_policy",
            Family::Deterministic => "deterministic",
            Family::Differential => "differential",
        }
    }
}

/// REINFORCE's baseline.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Baseline {
    /// No baseline.
    #[default]
    None,
    /// A constant: the exponentially weighted average, over past episodes,
    /// of each episode's mean return-to-go (one update per episode).
    Average,
    /// A learned state value (the critic), fitted to the returns.
    Value,
    /// The variance-minimising constant `E[S·A] / E[‖S‖²]` over episodes,
    /// with `S = Σ_t ∇ log π_t` and `A = Σ_t ∇ log π_t G_t`, estimated from
    /// past episodes (Greensmith, Bartlett & Baxter 2004, Theorem 8 in
    /// trajectory form).
    Optimal,
}

/// Which policy the off-policy learner behaves with.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BehaviourKind {
    /// Uniform over the actions (or over the action box).
    #[default]
    Uniform,
    /// `(1 − ε) π + ε · uniform`.
    EpsilonMix,
    /// A frozen copy of the target policy, refreshed every `snapshot_every` steps.
    Snapshot,
}

/// The behaviour policy of the off-policy learner (the `behaviour` object).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BehaviourConfig {
    /// `"uniform"`, `"epsilon_mix"` or `"snapshot"`. Default `"uniform"`.
    #[serde(default)]
    pub kind: BehaviourKind,
    /// Share of uniform actions in the `"epsilon_mix"` behaviour, in [0, 1]. Default 0.1.
    #[serde(default = "default_epsilon")]
    pub epsilon: f64,
    /// Steps between refreshes of the `"snapshot"` behaviour, in [1, 10 000 000]. Default 1000.
    #[serde(default = "default_snapshot_every")]
    pub snapshot_every: u64,
}

fn default_epsilon() -> f64 {
    0.1
}
fn default_snapshot_every() -> u64 {
    1000
}

impl Default for BehaviourConfig {
    fn default() -> Self {
        BehaviourConfig {
            kind: BehaviourKind::Uniform,
            epsilon: default_epsilon(),
            snapshot_every: default_snapshot_every(),
        }
    }
}

/// The replay buffer of the deterministic learner (the `replay` object).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ReplayConfig {
    /// Transitions kept (oldest dropped first): 0 for no replay (learn from
    /// each transition once), or in [1, 100 000]. Default 0.
    #[serde(default)]
    pub capacity: u32,
    /// Transitions drawn (uniformly, with replacement) per step, in [1, 1024],
    /// at most `capacity`. Default 32.
    #[serde(default = "default_batch")]
    pub batch: u32,
}

fn default_batch() -> u32 {
    32
}

impl Default for ReplayConfig {
    fn default() -> Self {
        ReplayConfig { capacity: 0, batch: default_batch() }
    }
}

/// Largest replay buffer.
pub const MAX_REPLAY: u32 = 100_000;

/// A learner setup (the `base` object of a config, and each variant's
/// `learner` overrides).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LearnerSetup {
    /// Which learner: `"a2c"`, `"qac"`, `"reinforce"`, `"off_policy"`,
    /// `"deterministic"` or `"differential"`. Default `"a2c"`.
    #[serde(default)]
    pub family: Family,
    /// Discount γ in [0, 1]. Default: the task's. Not used by `"differential"`.
    #[serde(default)]
    pub discount: Option<f64>,
    /// Actor step size in (0, 10]. Default 0.1.
    #[serde(default = "default_actor_step")]
    pub actor_step: f64,
    /// Critic step size in (0, 10]. Default 0.2.
    #[serde(default = "default_critic_step")]
    pub critic_step: f64,
    /// Features for linear actors and critics. Default: tabular on finite
    /// tasks, tile coding otherwise.
    #[serde(default)]
    pub features: Option<FeatureConfig>,
    /// The actor's approximator. Default `{"kind": "linear"}` (over `features`).
    #[serde(default)]
    pub actor: Option<ApproxConfig>,
    /// The critic's approximator. Default `{"kind": "linear"}` over
    /// `features`; for `"deterministic"`, whose critic takes the state and
    /// the action, linear over `{"kind": "poly", "degree": 2}`.
    #[serde(default)]
    pub critic: Option<ApproxConfig>,
    /// How updates are applied (SGD or Adam, optional clipping). Default SGD.
    #[serde(default)]
    pub optimizer: OptimizerConfig,
    /// The Gaussian policy on continuous-action tasks.
    #[serde(default)]
    pub policy: PolicyConfig,
    /// Entropy bonus β in [0, 10] added to the actor's direction (`"a2c"`,
    /// `"qac"`, `"reinforce"`, `"off_policy"`, `"differential"`). Default 0.
    #[serde(default)]
    pub entropy: f64,
    /// REINFORCE's baseline: `"none"`, `"average"`, `"value"` or `"optimal"`. Default `"none"`.
    #[serde(default)]
    pub baseline: Baseline,
    /// Rate in (0, 1] of the running averages behind the `"average"` and
    /// `"optimal"` baselines. Default 0.05.
    #[serde(default = "default_baseline_rate")]
    pub baseline_rate: f64,
    /// A2C's segment length n in [1, 1000]: the critic and actor update
    /// every n steps (or at the episode's end) from n-step returns. Default 1.
    #[serde(default = "default_n_steps")]
    pub segment: u32,
    /// A2C's GAE λ in [0, 1] within a segment: 1 gives n-step returns, 0 the
    /// one-step TD error. Default 1.
    #[serde(default = "default_lambda")]
    pub lambda: f64,
    /// The off-policy learner's behaviour policy.
    #[serde(default)]
    pub behaviour: BehaviourConfig,
    /// Cap on the off-policy importance weight: `null` (the default) for
    /// none, otherwise in (0, 1e6].
    #[serde(default)]
    pub rho_cap: Option<f64>,
    /// Standard deviation of the deterministic learner's Gaussian
    /// exploration noise, as a fraction of the action half-range, in [0, 10].
    /// Default 0.1.
    #[serde(default = "default_noise_std")]
    pub noise_std: f64,
    /// The deterministic learner's replay buffer. Default: none.
    #[serde(default)]
    pub replay: ReplayConfig,
    /// Soft-update rate τ in (0, 1] of the deterministic learner's target
    /// copies, `θ' ← τ θ + (1 − τ) θ'`; 1 means no target copies. Default 1.
    #[serde(default = "default_target_tau")]
    pub target_tau: f64,
    /// Step size in (0, 1] of the differential learner's average-reward
    /// estimate. Default 0.01.
    #[serde(default = "default_average_step")]
    pub average_step: f64,
}

fn default_actor_step() -> f64 {
    0.1
}
fn default_critic_step() -> f64 {
    0.2
}
fn default_baseline_rate() -> f64 {
    0.05
}
fn default_n_steps() -> u32 {
    1
}
fn default_lambda() -> f64 {
    1.0
}
fn default_noise_std() -> f64 {
    0.1
}
fn default_target_tau() -> f64 {
    1.0
}
fn default_average_step() -> f64 {
    0.01
}

impl Default for LearnerSetup {
    fn default() -> Self {
        LearnerSetup {
            family: Family::default(),
            discount: None,
            actor_step: default_actor_step(),
            critic_step: default_critic_step(),
            features: None,
            actor: None,
            critic: None,
            optimizer: OptimizerConfig::default(),
            policy: PolicyConfig::default(),
            entropy: 0.0,
            baseline: Baseline::None,
            baseline_rate: default_baseline_rate(),
            segment: default_n_steps(),
            lambda: default_lambda(),
            behaviour: BehaviourConfig::default(),
            rho_cap: None,
            noise_std: default_noise_std(),
            replay: ReplayConfig::default(),
            target_tau: default_target_tau(),
            average_step: default_average_step(),
        }
    }
}

/// A setting of a learner setup that is out of range (path within the
/// setup, e.g. `features.tilings`, and message).
pub type SetupError = crate::problem::Problem;

/// The state variables followed by the action components (the input of the
/// deterministic learner's critic), each with its range.
pub fn joint_vars(spec: &TaskSpec) -> Vec<StateVar> {
    let mut vars = spec.state_vars.clone();
    if let ActionSpace::Continuous { names, low, high } = &spec.actions {
        for j in 0..names.len() {
            vars.push(StateVar { name: names[j].clone(), low: low[j], high: high[j] });
        }
    }
    vars
}

/// Checks `v` against the settings table's range of `learner.FIELD`.
fn in_range(errs: &mut Vec<SetupError>, field: &str, v: f64) {
    if let Some(message) = crate::settings::check(&format!("learner.{field}"), v) {
        errs.push(SetupError { path: field.into(), message });
    }
}

/// [`in_range`] for a whole-number setting.
fn in_range_int(errs: &mut Vec<SetupError>, field: &str, v: u64) {
    if let Some(message) = crate::settings::check_int(&format!("learner.{field}"), v) {
        errs.push(SetupError { path: field.into(), message });
    }
}

impl LearnerSetup {
    /// The features this setup uses on `spec`.
    pub fn features_or_default(&self, spec: &TaskSpec) -> FeatureConfig {
        self.features.clone().unwrap_or_else(|| default_features(spec))
    }

    /// The actor's approximator.
    pub fn actor_or_default(&self) -> ApproxConfig {
        self.actor.clone().unwrap_or_default()
    }

    /// The critic's approximator (see [`LearnerSetup::critic`] for the default).
    pub fn critic_or_default(&self) -> ApproxConfig {
        match (&self.critic, self.family) {
            (Some(c), _) => c.clone(),
            (None, Family::Deterministic) => {
                ApproxConfig::Linear { features: Some(FeatureConfig::Poly { degree: 2 }) }
            }
            (None, _) => ApproxConfig::default(),
        }
    }

    /// The discount on `spec`.
    pub fn discount_on(&self, spec: &TaskSpec) -> f64 {
        self.discount.unwrap_or(spec.default_discount)
    }

    /// The discount of potential shaping `γΦ(s') − Φ(s)` and of `gamma` in
    /// reward formulas: the learner's own, except 1 for `"differential"`,
    /// which optimises the average reward (with γ < 1 the shaping term would
    /// add `−(1 − γ)·E[Φ]` per step, which depends on the policy).
    pub fn shaping_discount(&self, spec: &TaskSpec) -> f64 {
        if self.family == Family::Differential {
            1.0
        } else {
            self.discount_on(spec)
        }
    }

    /// Checks ranges and fit to the task; returns every problem found.
    pub fn check(&self, spec: &TaskSpec) -> Vec<SetupError> {
        let mut errs = Vec::new();
        let bad = |errs: &mut Vec<SetupError>, field: &str, message: String| {
            errs.push(SetupError { path: field.into(), message })
        };
        if let Some(g) = self.discount {
            in_range(&mut errs, "discount", g);
        }
        in_range(&mut errs, "actor_step", self.actor_step);
        in_range(&mut errs, "critic_step", self.critic_step);
        in_range(&mut errs, "entropy", self.entropy);
        in_range(&mut errs, "baseline_rate", self.baseline_rate);
        in_range_int(&mut errs, "segment", u64::from(self.segment));
        in_range(&mut errs, "lambda", self.lambda);
        in_range(&mut errs, "behaviour.epsilon", self.behaviour.epsilon);
        in_range_int(&mut errs, "behaviour.snapshot_every", self.behaviour.snapshot_every);
        if let Some(c) = self.rho_cap {
            if !crate::settings::range("learner.rho_cap").contains(c) {
                bad(&mut errs, "rho_cap", format!("must be null (no cap) or in (0, 1e6], got {c}"));
            }
        }
        in_range(&mut errs, "noise_std", self.noise_std);
        if !crate::settings::range("learner.replay.capacity").contains(self.replay.capacity as f64) {
            bad(
                &mut errs,
                "replay.capacity",
                format!("must be 0 (no replay) or in [1, {MAX_REPLAY}], got {}", self.replay.capacity),
            );
        }
        if let Some(m) = crate::settings::check_int("learner.replay.batch", u64::from(self.replay.batch)) {
            bad(&mut errs, "replay.batch", m);
        } else if self.replay.capacity > 0 && self.replay.batch > self.replay.capacity {
            bad(
                &mut errs,
                "replay.batch",
                format!(
                    "must be at most replay.capacity ({}), got {}",
                    self.replay.capacity, self.replay.batch
                ),
            );
        }
        in_range(&mut errs, "target_tau", self.target_tau);
        in_range(&mut errs, "average_step", self.average_step);
        for (f, m) in self.optimizer.check() {
            bad(&mut errs, &format!("optimizer.{f}"), m);
        }
        for (f, m) in self.policy.check() {
            bad(&mut errs, &format!("policy.{f}"), m);
        }

        let discrete = spec.actions.discrete_count().is_some();
        let family = self.family.name();
        match self.family {
            Family::Qac if !discrete => bad(
                &mut errs,
                "family",
                format!("\"{family}\" needs discrete actions; {} has continuous actions", spec.kind),
            ),
            Family::Deterministic if discrete => bad(
                &mut errs,
                "family",
                format!("\"{family}\" needs continuous actions; {} has discrete actions", spec.kind),
            ),
            Family::Reinforce if spec.continuing => bad(
                &mut errs,
                "family",
                format!("\"{family}\" learns from whole episodes; {} is a continuing task", spec.kind),
            ),
            Family::Differential if !spec.continuing => bad(
                &mut errs,
                "family",
                format!(
                    "\"{family}\" maximises the average reward of a continuing task; {} is episodic: use \"a2c\"",
                    spec.kind
                ),
            ),
            _ => {}
        }

        let shared_ok = match build_features(&self.features_or_default(spec), spec) {
            Ok(_) => true,
            Err(FeatureError::Invalid(field, message)) => {
                bad(&mut errs, &format!("features.{field}"), message);
                false
            }
        };
        let mut rng = Stream::from_seed(0);
        let shared = self.features_or_default(spec);
        let uses_shared = |c: &ApproxConfig| matches!(c, ApproxConfig::Linear { features: None });
        let actor = self.actor_or_default();
        if shared_ok || !uses_shared(&actor) {
            if let Err(FeatureError::Invalid(field, message)) = build_approx(
                &mut FeaturePool::default(),
                &actor,
                &shared,
                &spec.state_vars,
                spec.n_states,
                spec.kind,
                1,
                &mut rng,
            ) {
                let path = if uses_shared(&actor) { field } else { format!("actor.{field}") };
                bad(&mut errs, &path, message);
            }
        }
        let critic = self.critic_or_default();
        let critic_uses_shared = uses_shared(&critic);
        if shared_ok || !critic_uses_shared {
            let joint = joint_vars(spec);
            let (vars, n_states) = if self.family == Family::Deterministic {
                (&joint[..], None)
            } else {
                (&spec.state_vars[..], spec.n_states)
            };
            match build_approx(
                &mut FeaturePool::default(),
                &critic,
                &shared,
                vars,
                n_states,
                spec.kind,
                1,
                &mut rng,
            ) {
                Err(FeatureError::Invalid(field, message)) => {
                    let path = if critic_uses_shared { field } else { format!("critic.{field}") };
                    bad(&mut errs, &path, message);
                }
                Ok(mut net) if self.family == Family::Deterministic => {
                    let mid: Vec<f64> = vars.iter().map(|v| 0.5 * (v.low + v.high)).collect();
                    let mut g = vec![0.0; vars.len()];
                    if !net.input_grad(Obs { values: &mid, id: None }, &[1.0], &mut g) {
                        bad(
                            &mut errs,
                            "critic",
                            "the deterministic learner needs ∂Q/∂a: use features \"fourier\", \"rbf\" or \"poly\", or an \"mlp\" critic".into(),
                        );
                    }
                }
                Ok(_) => {}
            }
        }
        errs
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::task::grid::{GridConfig, GridWorld};
    use crate::task::Task;

    fn grid_spec() -> TaskSpec {
        GridWorld::new(GridConfig::default()).unwrap().spec().clone()
    }

    fn check(json: &str) -> Vec<String> {
        let s: LearnerSetup = serde_json::from_str(json).unwrap();
        s.check(&grid_spec()).iter().map(|e| e.to_string()).collect()
    }

    #[test]
    fn defaults_are_valid_and_old_setups_parse() {
        assert!(check("{}").is_empty());
        assert!(check(r#"{"family": "qac", "actor_step": 0.05, "features": {"kind": "tabular"}}"#).is_empty());
    }

    #[test]
    fn every_new_field_is_range_checked_with_its_name() {
        let cases = [
            (r#"{"entropy": -1}"#, "entropy: must be in [0, 10], got -1"),
            (r#"{"baseline_rate": 0}"#, "baseline_rate: must be in (0, 1], got 0"),
            (r#"{"segment": 0}"#, "segment: must be in [1, 1000], got 0"),
            (r#"{"lambda": 1.5}"#, "lambda: must be in [0, 1], got 1.5"),
            (r#"{"behaviour": {"epsilon": 2}}"#, "behaviour.epsilon: must be in [0, 1], got 2"),
            (r#"{"behaviour": {"snapshot_every": 0}}"#, "behaviour.snapshot_every: must be in [1, 10000000], got 0"),
            (r#"{"rho_cap": 0}"#, "rho_cap: must be null (no cap) or in (0, 1e6], got 0"),
            (r#"{"noise_std": 11}"#, "noise_std: must be in [0, 10], got 11"),
            (r#"{"replay": {"capacity": 200000}}"#, "replay.capacity: must be 0 (no replay) or in [1, 100000], got 200000"),
            (r#"{"replay": {"capacity": 10, "batch": 20}}"#, "replay.batch: must be at most replay.capacity (10), got 20"),
            (r#"{"target_tau": 0}"#, "target_tau: must be in (0, 1], got 0"),
            (r#"{"average_step": 2}"#, "average_step: must be in (0, 1], got 2"),
            (r#"{"optimizer": {"kind": "adam", "beta2": 1}}"#, "optimizer.beta2: must be in [0, 1), got 1"),
            (r#"{"policy": {"log_std": 5}}"#, "policy.log_std: must be in [-10, 2], got 5"),
            (r#"{"actor": {"kind": "mlp", "hidden": []}}"#, "actor.hidden: needs 1 to 4 layer sizes, got 0"),
            (r#"{"critic": {"kind": "linear", "features": {"kind": "fourier", "order": 30}}}"#, "critic.features.order: must be in [0, 20], got 30"),
            (r#"{"features": {"kind": "rbf", "centers": 1}}"#, "features.centers: must be in [2, 32], got 1"),
            (r#"{"family": "deterministic"}"#, "family: \"deterministic\" needs continuous actions; grid has discrete actions"),
            (r#"{"family": "differential"}"#, "family: \"differential\" maximises the average reward of a continuing task; grid is episodic: use \"a2c\""),
        ];
        for (json, want) in cases {
            let got = check(json);
            assert_eq!(got, vec![want.to_string()], "{json}");
        }
    }
}
