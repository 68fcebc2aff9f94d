//! Every numeric and on/off setting of an experiment, defined once: its
//! config path, default, accepted range and a one-line explanation.
//!
//! The range checks of the learner setup, the tasks and the experiment read
//! their bounds from [`SETTINGS`] (through [`check`] and [`check_int`]), so a
//! range cannot say one thing in the validation and another in the page or
//! the README: the page receives the table through the wasm binding
//! (`settingsTable`), `critbox settings --markdown` prints the README's table
//! from it, and tests check that each default is what the config parser
//! fills in and each range is what validation enforces.
//!
//! Paths: `learner.KEY` (a learner setup, as in `base` or a variant's
//! `learner`; nested ones dotted, `optimizer.beta1`), `task.KIND.KEY` (a
//! field of the task of that kind) and `experiment.KEY` (top level of the
//! config). Choices, maps and formulas are not numbers and are described in
//! the README's prose.

use serde::Serialize;

/// A setting's default.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
#[serde(untagged)]
pub enum Default {
    /// A number.
    Num(f64),
    /// A whole number.
    Int(u64),
    /// On or off.
    Bool(bool),
    /// No value: the text says what is used instead (serialised as `null`).
    #[serde(serialize_with = "unit_null")]
    Absent(&'static str),
}

fn unit_null<S: serde::Serializer>(_: &&'static str, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_none()
}

/// One end of a range.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Bound {
    /// The value.
    pub value: f64,
    /// Whether the value itself is excluded.
    pub open: bool,
}

/// The accepted values of a numeric setting.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Range {
    /// Lower end.
    pub low: Bound,
    /// Upper end.
    pub high: Bound,
    /// Whole numbers only.
    pub integer: bool,
    /// 0 is accepted too, with its own meaning (given in the help).
    pub or_zero: bool,
}

impl Range {
    /// Whether `v` is accepted.
    pub fn contains(&self, v: f64) -> bool {
        if self.or_zero && v == 0.0 {
            return true;
        }
        let lo = if self.low.open { v > self.low.value } else { v >= self.low.value };
        let hi = if self.high.open { v < self.high.value } else { v <= self.high.value };
        lo && hi
    }

    /// The interval as text, e.g. `(0, 10]` (without the "0 or").
    pub fn interval(&self) -> String {
        format!(
            "{}{}, {}{}",
            if self.low.open { "(" } else { "[" },
            self.low.value,
            self.high.value,
            if self.high.open { ")" } else { "]" }
        )
    }

    /// The range as shown to people, e.g. `0 or [16, 4194304]`.
    pub fn text(&self) -> String {
        if self.or_zero {
            format!("0 or {}", self.interval())
        } else {
            self.interval()
        }
    }
}

/// One setting. It serialises with two more fields for people:
/// `default_text` and `range_text` (`null` without a range).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Setting {
    /// Its path (see the module text).
    pub path: &'static str,
    /// The default.
    pub default: Default,
    /// The accepted range (`None` for on/off settings).
    pub range: Option<Range>,
    /// One sentence on what it does.
    pub help: &'static str,
}

impl Setting {
    /// The default as people read it (`0.1`, `true`, `the task's`).
    pub fn default_text(&self) -> String {
        match self.default {
            Default::Num(x) => format!("{x}"),
            Default::Int(x) => format!("{x}"),
            Default::Bool(b) => if b { "true" } else { "false" }.to_string(),
            Default::Absent(t) => t.to_string(),
        }
    }
}

impl Serialize for Setting {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeStruct;
        let mut st = s.serialize_struct("Setting", 6)?;
        st.serialize_field("path", self.path)?;
        st.serialize_field("default", &self.default)?;
        st.serialize_field("default_text", &self.default_text())?;
        st.serialize_field("range", &self.range)?;
        st.serialize_field("range_text", &self.range.map(|r| r.text()))?;
        st.serialize_field("help", self.help)?;
        st.end()
    }
}

const fn closed(lo: f64, hi: f64) -> Option<Range> {
    Some(Range {
        low: Bound { value: lo, open: false },
        high: Bound { value: hi, open: false },
        integer: false,
        or_zero: false,
    })
}
const fn open_closed(lo: f64, hi: f64) -> Option<Range> {
    Some(Range {
        low: Bound { value: lo, open: true },
        high: Bound { value: hi, open: false },
        integer: false,
        or_zero: false,
    })
}
const fn closed_open(lo: f64, hi: f64) -> Option<Range> {
    Some(Range {
        low: Bound { value: lo, open: false },
        high: Bound { value: hi, open: true },
        integer: false,
        or_zero: false,
    })
}
const fn whole(lo: f64, hi: f64) -> Option<Range> {
    Some(Range {
        low: Bound { value: lo, open: false },
        high: Bound { value: hi, open: false },
        integer: true,
        or_zero: false,
    })
}
const fn whole_or_zero(lo: f64, hi: f64) -> Option<Range> {
    Some(Range {
        low: Bound { value: lo, open: false },
        high: Bound { value: hi, open: false },
        integer: true,
        or_zero: true,
    })
}

const fn num(path: &'static str, d: f64, range: Option<Range>, help: &'static str) -> Setting {
    Setting { path, default: Default::Num(d), range, help }
}
const fn int(path: &'static str, d: u64, range: Option<Range>, help: &'static str) -> Setting {
    Setting { path, default: Default::Int(d), range, help }
}
const fn flag(path: &'static str, d: bool, help: &'static str) -> Setting {
    Setting { path, default: Default::Bool(d), range: None, help }
}
const fn absent(
    path: &'static str,
    instead: &'static str,
    range: Option<Range>,
    help: &'static str,
) -> Setting {
    Setting { path, default: Default::Absent(instead), range, help }
}

/// Largest master seed and random-model seed (2^53 − 1).
const MAX_SEED: f64 = 9_007_199_254_740_991.0;
const STEP_LIMIT: &str = "An episode is cut (and bootstrapped) after this many steps.";

/// The table.
pub const SETTINGS: &[Setting] = &[
    // ------------------------------------------------------------ learner
    absent("learner.discount", "the task's", closed(0.0, 1.0), "Weight of a reward one step later (γ)."),
    num(
        "learner.actor_step",
        0.1,
        open_closed(0.0, 10.0),
        "Policy learning rate (per tiling with tile coding).",
    ),
    num(
        "learner.critic_step",
        0.2,
        open_closed(0.0, 10.0),
        "Value learning rate (per tiling with tile coding).",
    ),
    num("learner.entropy", 0.0, closed(0.0, 10.0), "Entropy bonus β: pushes the policy to keep exploring."),
    num(
        "learner.baseline_rate",
        0.05,
        open_closed(0.0, 1.0),
        "Rate of the running averages behind the average and optimal baselines (one update per episode).",
    ),
    int("learner.segment", 1, whole(1.0, 1000.0), "A2C updates every n steps from n-step returns."),
    num(
        "learner.lambda",
        1.0,
        closed(0.0, 1.0),
        "GAE λ within a segment: 1 gives n-step returns, 0 the one-step TD error.",
    ),
    num(
        "learner.behaviour.epsilon",
        0.1,
        closed(0.0, 1.0),
        "Share of uniform actions in the ε-mix behaviour policy.",
    ),
    int(
        "learner.behaviour.snapshot_every",
        1000,
        whole(1.0, 10_000_000.0),
        "Steps between copies of the target policy for the snapshot behaviour policy.",
    ),
    absent("learner.rho_cap", "no cap", open_closed(0.0, 1e6), "Largest importance weight ρ = π/b."),
    num(
        "learner.noise_std",
        0.1,
        closed(0.0, 10.0),
        "SD of the deterministic learner's Gaussian action noise, as a share of the action half-range.",
    ),
    int(
        "learner.replay.capacity",
        0,
        whole_or_zero(1.0, 100_000.0),
        "Transitions kept for replay; 0 learns from each transition once.",
    ),
    int(
        "learner.replay.batch",
        32,
        whole(1.0, 1024.0),
        "Transitions replayed per step (at most the capacity).",
    ),
    num(
        "learner.target_tau",
        1.0,
        open_closed(0.0, 1.0),
        "Soft update of target copies; 1 means no target copies.",
    ),
    num("learner.average_step", 0.01, open_closed(0.0, 1.0), "Step size of the average-reward estimate."),
    absent(
        "learner.optimizer.clip",
        "none",
        open_closed(0.0, 1e6),
        "Longer update directions are scaled down to this norm.",
    ),
    num("learner.optimizer.beta1", 0.9, closed_open(0.0, 1.0), "Adam's first-moment decay."),
    num("learner.optimizer.beta2", 0.999, closed_open(0.0, 1.0), "Adam's second-moment decay."),
    num("learner.optimizer.epsilon", 1e-8, open_closed(0.0, 1.0), "Adam's denominator offset."),
    num(
        "learner.policy.log_std",
        -0.5,
        closed(-10.0, 2.0),
        "Initial log standard deviation of the Gaussian policy before squashing.",
    ),
    flag(
        "learner.policy.sd_trainable",
        true,
        "The Gaussian policy learns its SD (otherwise it stays fixed).",
    ),
    int(
        "learner.features.tilings",
        8,
        whole(1.0, 64.0),
        "Offset tilings of tile coding; step sizes are divided by this.",
    ),
    int("learner.features.intervals", 8, whole(1.0, 64.0), "Intervals per state variable in each tiling."),
    int(
        "learner.features.hash",
        4096,
        whole_or_zero(16.0, 4_194_304.0),
        "Tiles are hashed into this many weights (0: no hashing).",
    ),
    int(
        "learner.features.order",
        3,
        whole(0.0, 20.0),
        "Highest Fourier frequency per variable; (order + 1)^d features.",
    ),
    int(
        "learner.features.centers",
        5,
        whole(2.0, 32.0),
        "Gaussian RBF centres per variable (centres^d features).",
    ),
    num("learner.features.width", 1.0, closed(0.1, 10.0), "RBF width σ as a multiple of the centre spacing."),
    int("learner.features.degree", 2, whole(1.0, 8.0), "Highest total degree of the polynomial features."),
    // ------------------------------------------------------------ tasks
    num("task.grid.slip", 0.0, closed(0.0, 0.5), "Chance that a move goes sideways instead."),
    num("task.grid.step_reward", -1.0, closed(-1000.0, 1000.0), "Reward for every move."),
    num("task.grid.hazard_reward", -10.0, closed(-1000.0, 1000.0), "Extra reward for entering a spill."),
    num("task.grid.goal_reward", 0.0, closed(-1000.0, 1000.0), "Extra reward for reaching the dock."),
    flag("task.grid.hazard_restart", false, "A spill sends the rover back to the start."),
    int("task.grid.max_steps", 200, whole(1.0, 100_000.0), STEP_LIMIT),
    int("task.cartpole.max_steps", 500, whole(1.0, 100_000.0), STEP_LIMIT),
    int("task.mountain_car.max_steps", 1000, whole(1.0, 100_000.0), STEP_LIMIT),
    int(
        "task.pendulum.max_steps",
        1000,
        whole(1.0, 100_000.0),
        "Steps per episode (at the default step of 0.02 s, 1000 steps are 20 s).",
    ),
    num("task.pendulum.dt", 0.02, closed(0.001, 0.1), "Control and integration step, seconds."),
    int(
        "task.pendulum.torque_levels",
        0,
        whole_or_zero(2.0, 21.0),
        "0: a continuous torque in [−5, 5]; n: n evenly spaced torques (discrete actions).",
    ),
    int("task.server.slots", 3, whole(1.0, 10.0), "Jobs that can run at once."),
    num("task.server.arrival", 0.9, closed(0.0, 1.0), "Chance a job arrives in a step."),
    num(
        "task.server.finish_prob",
        0.2,
        open_closed(0.0, 1.0),
        "Chance a busy slot finishes its job in a step.",
    ),
    int(
        "task.server.max_steps",
        1000,
        whole(1.0, 100_000.0),
        "The task never ends; every this many steps one point of mean reward is recorded.",
    ),
    int("task.corridor.max_steps", 1000, whole(1.0, 100_000.0), STEP_LIMIT),
    num("task.lqr.a", 1.0, closed(-10.0, 10.0), "State coefficient: x′ = a x + b u + noise."),
    num("task.lqr.b", 1.0, closed(-10.0, 10.0), "Action coefficient (not 0)."),
    num("task.lqr.q", 1.0, closed(0.0, 100.0), "Cost per unit of x²."),
    num("task.lqr.r", 1.0, open_closed(0.0, 100.0), "Cost per unit of u²."),
    num("task.lqr.noise", 0.0, closed(0.0, 10.0), "Standard deviation of the process noise."),
    num("task.lqr.u_max", 3.0, open_closed(0.0, 100.0), "Largest |u| (actions are clipped)."),
    num("task.lqr.x_max", 4.0, open_closed(0.0, 1000.0), "A wall at ±this."),
    num("task.lqr.discount", 0.9, closed(0.0, 1.0), "Task discount, used when the learner sets none."),
    int("task.lqr.max_steps", 30, whole(1.0, 100_000.0), STEP_LIMIT),
    int("task.random_mdp.states", 5, whole(2.0, 50.0), "Non-terminal states."),
    int("task.random_mdp.actions", 3, whole(2.0, 10.0), "Actions per state."),
    int("task.random_mdp.seed", 1, whole(0.0, MAX_SEED), "Draws the model (not the runs)."),
    flag("task.random_mdp.continuing", false, "No terminal state; curves show the mean reward per step."),
    num("task.random_mdp.discount", 0.9, closed(0.0, 1.0), "Task discount, used when the learner sets none."),
    int(
        "task.random_mdp.max_steps",
        100,
        whole(1.0, 100_000.0),
        "Episode limit, or the report window of a continuing model.",
    ),
    num("task.formula.dt", 1.0, open_closed(0.0, 3600.0), "Control step; `dt` in the formulas."),
    int(
        "task.formula.substeps",
        1,
        whole(1.0, 100.0),
        "Integration steps per control step (dt / substeps each).",
    ),
    num("task.formula.discount", 0.99, closed(0.0, 1.0), "Task discount, used when the learner sets none."),
    int("task.formula.max_steps", 500, whole(1.0, 100_000.0), STEP_LIMIT),
    num("task.table.discount", 0.9, closed(0.0, 1.0), "Task discount, used when the learner sets none."),
    flag("task.table.continuing", false, "No terminal state; curves show the mean reward per step."),
    int(
        "task.table.max_steps",
        100,
        whole(1.0, 100_000.0),
        "Episode limit, or the report window of a continuing model.",
    ),
    // ------------------------------------------------------------ experiment
    int("experiment.seeds", 10, whole(1.0, 100.0), "Seeds per variant."),
    absent(
        "experiment.steps",
        "required",
        whole(1.0, 10_000_000.0),
        "Environment steps per (variant, seed) job.",
    ),
    int("experiment.master_seed", 1, whole(0.0, MAX_SEED), "All randomness derives from it."),
    int("experiment.curve_points", 40, whole(2.0, 1000.0), "Step bins of the learning curves."),
    num(
        "experiment.final_fraction",
        0.1,
        open_closed(0.0, 1.0),
        "End share of the budget over which the final return is averaged.",
    ),
    int(
        "experiment.evaluation.episodes",
        10,
        whole(1.0, 1000.0),
        "Evaluation episodes of the learned policy at each checkpoint.",
    ),
];

/// The setting at `path`. Panics on an unknown path: a programming error.
pub fn get(path: &str) -> &'static Setting {
    SETTINGS.iter().find(|s| s.path == path).unwrap_or_else(|| panic!("no setting {path} in the table"))
}

/// The range of the setting at `path` (panics if it has none).
pub fn range(path: &str) -> Range {
    get(path).range.unwrap_or_else(|| panic!("setting {path} has no range"))
}

/// `Some("must be in RANGE, got V")` when `v` is outside the range of the
/// setting at `path`.
pub fn check(path: &str, v: f64) -> Option<String> {
    let r = range(path);
    (!r.contains(v)).then(|| format!("must be in {}, got {v}", r.interval()))
}

/// [`check`] for a whole-number setting (the value is printed exactly).
pub fn check_int(path: &str, v: u64) -> Option<String> {
    let r = range(path);
    (!r.contains(v as f64) || v as f64 > r.high.value)
        .then(|| format!("must be in {}, got {v}", r.interval()))
}

/// The settings as a Markdown table (the one in the README).
pub fn markdown() -> String {
    let mut out = String::from("| setting | default | range | what it does |\n| --- | --- | --- | --- |\n");
    for s in SETTINGS {
        let default = s.default_text();
        let range = s.range.map(|r| r.text()).unwrap_or_else(|| "true or false".into());
        out.push_str(&format!("| `{}` | {} | {} | {} |\n", s.path, default, range, s.help));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_are_unique_and_ranges_well_formed() {
        for (i, s) in SETTINGS.iter().enumerate() {
            assert!(SETTINGS[..i].iter().all(|t| t.path != s.path), "{} twice", s.path);
            if let Some(r) = s.range {
                assert!(r.low.value < r.high.value, "{}", s.path);
            }
        }
    }

    #[test]
    fn messages_keep_their_wording() {
        // The wording users already see (common practice, no source).
        assert_eq!(check("learner.actor_step", -1.0).unwrap(), "must be in (0, 10], got -1");
        assert_eq!(check("learner.optimizer.beta2", 1.0).unwrap(), "must be in [0, 1), got 1");
        assert_eq!(check_int("experiment.seeds", 1000).unwrap(), "must be in [1, 100], got 1000");
        assert_eq!(check("learner.actor_step", 10.0), None);
        assert_eq!(range("learner.features.hash").text(), "0 or [16, 4194304]");
    }
}
