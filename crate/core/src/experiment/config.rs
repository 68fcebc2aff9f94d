//! The experiment config and its validation.
//!
//! A config names the task, a base learner setup, the variants (each a label
//! and a `learner` object deep-merged over the base), the number of seeds,
//! the step budget per job and the master seed. [`parse`] checks everything
//! and returns a [`Plan`], or a [`ConfigError`] listing each problem with the
//! path of the field (`variants[1].learner.actor_step`) and what is wrong.
//! Every setting has a documented default and range; out-of-range values are
//! rejected, never clamped.

use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};

use crate::experiment::study::{self, Axis, ChooseBy};
use crate::learn::LearnerSetup;
use crate::reward::RewardConfig;
use crate::task::cartpole::{CartPole, CartPoleConfig};
use crate::task::corridor::{CorridorConfig, ShortCorridor};
use crate::task::finite::{build_random_mdp, RandomMdpConfig};
use crate::task::grid::{GridConfig, GridWorld};
use crate::task::lqr::{Lqr, LqrConfig};
use crate::task::mountain_car::{MountainCar, MountainCarConfig};
use crate::task::pendulum::{Pendulum, PendulumConfig};
use crate::task::server::{Server, ServerConfig};
use crate::task::{Task, TaskError, TaskSpec};
use crate::usertask::formula::{FormulaTask, FormulaTaskConfig, TaskCheck};
use crate::usertask::table::TableTaskConfig;

/// The config schema version this build writes and reads.
pub const SCHEMA: u32 = 1;
/// Most variants in one experiment.
pub const MAX_VARIANTS: usize = 8;
/// Most seeds per variant.
pub const MAX_SEEDS: u32 = 100;
/// Largest step budget per job.
pub const MAX_STEPS: u64 = 10_000_000;
/// Largest master seed (2^53 − 1, so a JavaScript number holds it exactly).
pub const MAX_MASTER_SEED: u64 = (1 << 53) - 1;
/// Longest accepted config text (bytes).
pub const MAX_CONFIG_BYTES: usize = 256 * 1024;

/// The task of an experiment. Written as an object whose `kind` names the
/// task and whose other fields are that task's settings; read by
/// [`TaskConfig::read`], which names the field of a problem.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum TaskConfig {
    /// A gridworld from a text map.
    Grid(GridConfig),
    /// Cart-pole balancing.
    Cartpole(CartPoleConfig),
    /// Mountain car (Sutton & Barto 2018, Example 10.1).
    MountainCar(MountainCarConfig),
    /// Pendulum swing-up with limited torque (Doya 2000).
    Pendulum(PendulumConfig),
    /// The job server (continuing; our own).
    Server(ServerConfig),
    /// The short corridor with switched actions (Sutton & Barto 2018, Example 13.1).
    Corridor(CorridorConfig),
    /// A scalar linear-quadratic regulator with a continuous action.
    Lqr(LqrConfig),
    /// A small random finite model drawn from a seed (episodic or continuing).
    RandomMdp(RandomMdpConfig),
    /// The user's own model written as formulas.
    Formula(FormulaTaskConfig),
    /// The user's own finite model written as a table of transitions.
    Table(TableTaskConfig),
}

/// Every task `kind`, as written in a config.
pub const TASK_KINDS: [&str; 10] = [
    "grid",
    "cartpole",
    "mountain_car",
    "pendulum",
    "server",
    "corridor",
    "lqr",
    "random_mdp",
    "formula",
    "table",
];

impl TaskConfig {
    /// Reads a `task` object: its `kind`, then its other fields as that
    /// kind's settings. A problem's path is relative to the task (`kind`,
    /// `update.velocity`, `rows[3].from`; empty for the object itself).
    ///
    /// Each kind's settings are read by one route (the field-tracking reader
    /// over a JSON value) wherever a task is read: the config, the task
    /// editor's check and the page's own calls, so the WebAssembly carries
    /// one copy of each settings reader.
    pub fn read(task: &Value) -> Result<TaskConfig, Problem> {
        let problem = |path: &str, message: String| Problem { path: path.into(), message };
        let Some(obj) = task.as_object() else {
            return Err(problem("", format!("must be an object with a `kind`, got {task}")));
        };
        let kind = match obj.get("kind") {
            None => return Err(problem("", "missing field `kind`".into())),
            Some(Value::String(k)) => k.as_str(),
            Some(other) => {
                return Err(problem("kind", format!("must be a string naming the task, got {other}")))
            }
        };
        let mut rest = obj.clone();
        rest.remove("kind");
        let rest = Value::Object(rest);
        Ok(match kind {
            "grid" => TaskConfig::Grid(read_json(&rest, "")?),
            "cartpole" => TaskConfig::Cartpole(read_json(&rest, "")?),
            "mountain_car" => TaskConfig::MountainCar(read_json(&rest, "")?),
            "pendulum" => TaskConfig::Pendulum(read_json(&rest, "")?),
            "server" => TaskConfig::Server(read_json(&rest, "")?),
            "corridor" => TaskConfig::Corridor(read_json(&rest, "")?),
            "lqr" => TaskConfig::Lqr(read_json(&rest, "")?),
            "random_mdp" => TaskConfig::RandomMdp(read_json(&rest, "")?),
            "formula" => TaskConfig::Formula(read_json(&rest, "")?),
            "table" => TaskConfig::Table(read_json(&rest, "")?),
            other => {
                let expected = TASK_KINDS.map(|k| format!("`{k}`")).join(", ");
                return Err(problem(
                    "kind",
                    format!("unknown task kind `{other}`, expected one of {expected}"),
                ));
            }
        })
    }

    /// Builds the task.
    pub fn build(&self) -> Result<Box<dyn Task>, TaskError> {
        Ok(match self {
            TaskConfig::Grid(c) => Box::new(GridWorld::new(c.clone())?),
            TaskConfig::Cartpole(c) => Box::new(CartPole::new(c.clone())?),
            TaskConfig::MountainCar(c) => Box::new(MountainCar::new(c.clone())?),
            TaskConfig::Pendulum(c) => Box::new(Pendulum::new(c.clone())?),
            TaskConfig::Server(c) => Box::new(Server::new(c.clone())?),
            TaskConfig::Corridor(c) => Box::new(ShortCorridor::new(c.clone())?),
            TaskConfig::Lqr(c) => Box::new(Lqr::new(c.clone())?),
            TaskConfig::RandomMdp(c) => Box::new(build_random_mdp(c)?),
            TaskConfig::Formula(c) => Box::new(FormulaTask::new(c.clone())?),
            TaskConfig::Table(c) => Box::new(c.build()?),
        })
    }

    /// Every problem of the task's settings (one for the built-in tasks,
    /// all of them for the user's own), each path relative to the task.
    pub fn problems(&self) -> Vec<Problem> {
        match self {
            TaskConfig::Formula(c) => c.check().problems,
            TaskConfig::Table(c) => c.check(),
            other => other.build().err().map(Problem::from).into_iter().collect(),
        }
    }
}

/// One variant: a label and overrides of the base learner setup.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VariantConfig {
    /// Name shown in plots and tables (1 to 60 characters, unique).
    pub label: String,
    /// Fields of the learner setup that differ from `base`.
    #[serde(default = "empty_object")]
    pub learner: Value,
    /// The reward this variant trains on, replacing the experiment's
    /// `reward` whole. Default: the experiment's.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reward: Option<RewardConfig>,
    /// A sweep over one or two of this variant's settings (a study; see
    /// [`crate::experiment::study`]). Default none.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sweep: Option<Value>,
}

fn empty_object() -> Value {
    Value::Object(Map::new())
}
fn default_seeds() -> u32 {
    10
}
fn default_master_seed() -> u64 {
    1
}
fn default_curve_points() -> u32 {
    40
}
fn default_final_fraction() -> f64 {
    0.1
}

/// A preset's stated outcome: the sentence the page shows and the claims
/// `crate/core/tests/presets.rs` checks (`{"higher": B, "than": A}`,
/// `{"variant": V, "reaches": x}`, `{"variant": V, "holds_upright": k}`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Expect {
    /// The outcome in words (at most 600 characters).
    pub text: String,
    /// The checkable claims.
    #[serde(default)]
    pub claims: Vec<Value>,
}

/// An experiment config, as written in JSON.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Config {
    /// Schema version (this build: [`SCHEMA`]).
    pub schema: u32,
    /// A title for the experiment (at most 200 characters). Default empty.
    #[serde(default)]
    pub title: String,
    /// What the experiment is expected to show (the presets state it): a
    /// sentence and checkable claims. The run does not use it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub expect: Option<Expect>,
    /// The task.
    pub task: TaskConfig,
    /// The base learner setup (see [`LearnerSetup`]). Default: all defaults.
    #[serde(default = "empty_object")]
    pub base: Value,
    /// The reward the learners train on (see [`RewardConfig`]). Default: the
    /// task's base reward.
    #[serde(default)]
    pub reward: RewardConfig,
    /// The variants to compare (1 to 8).
    pub variants: Vec<VariantConfig>,
    /// Seeds per variant, in [1, 100]. Default 10.
    #[serde(default = "default_seeds")]
    pub seeds: u32,
    /// Environment steps per job, in [1, 10 000 000].
    pub steps: u64,
    /// Master seed, in [0, 2^53 − 1]. Default 1.
    #[serde(default = "default_master_seed")]
    pub master_seed: u64,
    /// Number of step bins of the learning curves, in [2, 1000]. Default 40.
    #[serde(default = "default_curve_points")]
    pub curve_points: u32,
    /// Share of the budget, at its end, over which the final return is
    /// averaged, in (0, 1]. Default 0.1.
    #[serde(default = "default_final_fraction")]
    pub final_fraction: f64,
    /// Return level for the "steps to reach" score (a finite number, or
    /// absent for no such score). Default absent.
    #[serde(default)]
    pub threshold: Option<f64>,
    /// Difference of final returns the seeds advisor sizes the experiment to
    /// detect (> 0, or absent to use each pair's observed difference).
    /// Default absent.
    #[serde(default)]
    pub detect_difference: Option<f64>,
    /// Evaluation episodes of the learned policy (see [`Evaluation`]).
    /// Default: on when any variant is off-policy or deterministic.
    #[serde(default, skip_serializing_if = "Evaluation::is_auto")]
    pub evaluation: Evaluation,
    /// Which measure scores, comparisons, the threshold and the seeds advice
    /// use: `"evaluation"` (the learned policy's evaluation return) or
    /// `"training"` (the return earned while learning). Default:
    /// evaluation when evaluation episodes are on, training otherwise.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub score_on: Option<Measure>,
    /// The label of a reference variant: only the comparisons of every other
    /// variant against it are made (and corrected for multiplicity), instead
    /// of every pair. Default absent (every pair).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference: Option<String>,
    /// In a study, the seeds every grid point runs on to choose each
    /// variant's point, in [1, 100]. Default: `seeds`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tuning_seeds: Option<u32>,
    /// In a study, what each variant's point is chosen by: `"auc"` (default)
    /// or `"final"`, on the scored measure.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub choose_by: Option<ChooseBy>,
}

/// The two measures of a variant's performance.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Measure {
    /// The return of the episodes the learner ran while learning (for
    /// off-policy learners the behaviour's, for the deterministic learner
    /// the noisy actor's).
    Training,
    /// The mean return of evaluation episodes of the frozen learned policy.
    Evaluation,
}

impl Measure {
    /// The config name.
    pub fn name(self) -> &'static str {
        match self {
            Measure::Training => "training",
            Measure::Evaluation => "evaluation",
        }
    }
}

/// How evaluation episodes pick actions.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EvalPolicy {
    /// Actions drawn from the learned policy (the deterministic learner's
    /// actor is noise-free either way).
    #[default]
    Sampled,
    /// The learned policy's most probable action (a softmax's first largest
    /// preference, a Gaussian's squashed mean).
    Greedy,
}

/// The settings of evaluation episodes (the `evaluation` object).
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EvaluationConfig {
    /// Environment steps between checkpoints, in [1, steps]. Default: the
    /// budget / 20, rounded to a whole step (at least 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub every: Option<u64>,
    /// Episodes per checkpoint, in [1, 1000]. Default 10.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub episodes: Option<u32>,
    /// `"sampled"` (default) or `"greedy"`.
    #[serde(default)]
    pub policy: EvalPolicy,
}

/// Whether a run evaluates its learned policies: the `evaluation` key is
/// absent (automatic: on when any variant is off-policy or deterministic),
/// `false` (off), `true` (on, default settings) or an object of settings.
#[derive(Clone, Debug, Default, PartialEq)]
pub enum Evaluation {
    /// On when any variant is off-policy or deterministic.
    #[default]
    Auto,
    /// Off.
    Off,
    /// On with these settings.
    On(EvaluationConfig),
}

impl Evaluation {
    fn is_auto(&self) -> bool {
        *self == Evaluation::Auto
    }
}

impl Serialize for Evaluation {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match self {
            Evaluation::Auto => s.serialize_none(),
            Evaluation::Off => s.serialize_bool(false),
            Evaluation::On(c) => c.serialize(s),
        }
    }
}

impl<'de> Deserialize<'de> for TaskConfig {
    /// Through [`TaskConfig::read`]; the message names the field when it is
    /// inside the task (`update.velocity: ...`).
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        use serde::de::Error;
        TaskConfig::read(&Value::deserialize(d)?).map_err(|p| match p.path.as_str() {
            "" => D::Error::custom(p.message),
            path => D::Error::custom(format!("{path}: {}", p.message)),
        })
    }
}

impl<'de> Deserialize<'de> for Evaluation {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        use serde::de::Error;
        match Value::deserialize(d)? {
            Value::Null => Ok(Evaluation::Auto),
            Value::Bool(false) => Ok(Evaluation::Off),
            Value::Bool(true) => Ok(Evaluation::On(EvaluationConfig::default())),
            v @ Value::Object(_) => serde_json::from_value(v).map(Evaluation::On).map_err(D::Error::custom),
            other => Err(D::Error::custom(format!(
                "must be true, false or an object {{\"every\", \"episodes\", \"policy\"}}, got {other}"
            ))),
        }
    }
}

/// Evaluation episodes as a plan runs them.
#[derive(Clone, Debug, PartialEq)]
pub struct EvalPlan {
    /// Steps between checkpoints.
    pub every: u64,
    /// Episodes per checkpoint.
    pub episodes: u32,
    /// Greedy (most probable) actions instead of sampled ones.
    pub greedy: bool,
    /// The checkpoints' step counts: 0, every, 2·every, … and the budget.
    pub checkpoints: Vec<u64>,
}

impl EvalPlan {
    /// The checkpoints of a budget: step 0, every multiple of `every` below
    /// the budget, and the budget itself.
    pub fn checkpoints_of(steps: u64, every: u64) -> Vec<u64> {
        let mut c: Vec<u64> = (0..).map(|k| k * every).take_while(|&s| s < steps).collect();
        c.push(steps);
        c
    }
}

/// One problem in a config: where and what (the shape every module uses).
pub use crate::problem::Problem;

/// Everything wrong with a config.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ConfigError {
    /// The problems, in the order found.
    pub problems: Vec<Problem>,
}

impl std::fmt::Display for ConfigError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        for (i, p) in self.problems.iter().enumerate() {
            if i > 0 {
                write!(f, "; ")?;
            }
            write!(f, "{p}")?;
        }
        Ok(())
    }
}

impl std::error::Error for ConfigError {}

impl ConfigError {
    fn one(path: &str, message: impl Into<String>) -> Self {
        ConfigError { problems: vec![Problem { path: path.into(), message: message.into() }] }
    }
}

/// A resolved variant.
#[derive(Clone, Debug, PartialEq)]
pub struct VariantPlan {
    /// Its label.
    pub label: String,
    /// The full learner setup (base with the variant's overrides).
    pub setup: LearnerSetup,
    /// The reward it trains on (the variant's own, or the experiment's).
    pub reward: RewardConfig,
}

/// A validated experiment.
#[derive(Clone, Debug, PartialEq)]
pub struct Plan {
    /// The config as given (with defaults filled in).
    pub config: Config,
    /// What the task declares.
    pub spec: TaskSpec,
    /// The variants, resolved.
    pub variants: Vec<VariantPlan>,
    /// Evaluation episodes, when on.
    pub evaluation: Option<EvalPlan>,
    /// The measure that scores and comparisons use.
    pub score_on: Measure,
    /// The reference variant's index, when comparisons are made against one.
    pub reference: Option<usize>,
    /// Notes on the config that are not problems (old key names that still load).
    pub notes: Vec<String>,
    /// The study, when some variant sweeps a setting.
    pub study: Option<StudyPlan>,
}

/// One grid point of a variant: its value index on every axis and what it runs.
#[derive(Clone, Debug, PartialEq)]
pub struct GridPoint {
    /// The value index along each axis.
    pub index: Vec<usize>,
    /// The learner setup at this point.
    pub setup: LearnerSetup,
    /// The reward at this point.
    pub reward: RewardConfig,
}

/// A variant's grid: its swept settings and their combinations.
#[derive(Clone, Debug, PartialEq)]
pub struct Grid {
    /// The swept settings (none for a variant without a sweep).
    pub axes: Vec<Axis>,
    /// Every combination, the first axis varying slowest (one point without a sweep).
    pub points: Vec<GridPoint>,
}

/// A study: the grids, the tuning seeds and how points are chosen.
#[derive(Clone, Debug, PartialEq)]
pub struct StudyPlan {
    /// Seeds each grid point runs on (seed indices 0 … tuning_seeds − 1).
    pub tuning_seeds: u32,
    /// What each variant's point is chosen by.
    pub choose_by: ChooseBy,
    /// One grid per variant.
    pub grids: Vec<Grid>,
    /// Each variant's chosen point, once the tuning stage has chosen (the
    /// fresh jobs run them); see [`Plan::with_choice`].
    pub chosen: Option<Vec<usize>>,
}

/// What one job runs: a variant, at one of its grid points, on one seed index.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct JobSpec {
    /// The variant.
    pub variant: usize,
    /// The grid point (0 outside a study).
    pub point: usize,
    /// The seed index (in a study, fresh jobs' indices follow the tuning ones).
    pub seed: usize,
    /// Whether the job is of a study's tuning stage.
    pub tuning: bool,
}

impl Plan {
    /// Number of jobs: the tuning jobs of a study (every variant's grid
    /// points × tuning seeds), then variants × seeds.
    pub fn job_count(&self) -> usize {
        self.tuning_jobs() + self.variants.len() * self.config.seeds as usize
    }

    /// Jobs of a study's tuning stage (0 without a study); ids `0 … n − 1`,
    /// numbered by (variant, grid point, seed index).
    pub fn tuning_jobs(&self) -> usize {
        self.study
            .as_ref()
            .map_or(0, |s| s.grids.iter().map(|g| g.points.len()).sum::<usize>() * s.tuning_seeds as usize)
    }

    /// The id of the (fresh) job of `variant` and seed `seed` (0-based among
    /// the `seeds` that are scored).
    pub fn fresh_job_id(&self, variant: usize, seed: usize) -> usize {
        self.tuning_jobs() + variant * self.config.seeds as usize + seed
    }

    /// The (variant, seed) of a scored (fresh) job id: `id = tuning jobs +
    /// variant * seeds + seed`. Panics for a tuning job id (a programming error).
    pub fn job_coords(&self, id: usize) -> (usize, usize) {
        let seeds = self.config.seeds as usize;
        let k = id.checked_sub(self.tuning_jobs()).expect("job_coords of a tuning job");
        (k / seeds, k % seeds)
    }

    /// What job `id` runs; `None` when it is out of range, or a fresh job of
    /// a study whose tuning stage has not chosen yet.
    pub fn job_spec(&self, id: usize) -> Option<JobSpec> {
        if id >= self.job_count() {
            return None;
        }
        let Some(study) = &self.study else {
            let (variant, seed) = self.job_coords(id);
            return Some(JobSpec { variant, point: 0, seed, tuning: false });
        };
        let ts = study.tuning_seeds as usize;
        let mut base = 0;
        for (variant, g) in study.grids.iter().enumerate() {
            let n = g.points.len() * ts;
            if id < base + n {
                let k = id - base;
                return Some(JobSpec { variant, point: k / ts, seed: k % ts, tuning: true });
            }
            base += n;
        }
        let (variant, seed) = self.job_coords(id);
        let point = *study.chosen.as_ref()?.get(variant)?;
        Some(JobSpec { variant, point, seed: ts + seed, tuning: false })
    }

    /// The tuning job ids of a variant's grid point, in seed order.
    pub fn tuning_job_ids(&self, variant: usize, point: usize) -> std::ops::Range<usize> {
        let Some(study) = &self.study else { return 0..0 };
        let ts = study.tuning_seeds as usize;
        let base: usize =
            study.grids[..variant].iter().map(|g| g.points.len() * ts).sum::<usize>() + point * ts;
        base..base + ts
    }

    /// The learner setup of a variant at a grid point.
    pub fn setup_of(&self, variant: usize, point: usize) -> &LearnerSetup {
        match &self.study {
            Some(s) => &s.grids[variant].points[point].setup,
            None => &self.variants[variant].setup,
        }
    }

    /// The reward of a variant at a grid point.
    pub fn reward_of(&self, variant: usize, point: usize) -> &RewardConfig {
        match &self.study {
            Some(s) => &s.grids[variant].points[point].reward,
            None => &self.variants[variant].reward,
        }
    }

    /// This plan with each variant's chosen grid point set, so its fresh
    /// jobs can be built (no change without a study). `chosen` must name a
    /// point of every variant; a wrong one is refused with the reason.
    pub fn with_choice(&self, chosen: &[usize]) -> Result<Plan, String> {
        let mut p = self.clone();
        if let Some(s) = &mut p.study {
            if chosen.len() != s.grids.len() {
                return Err(format!(
                    "the choice names {} points; the study has {} variants",
                    chosen.len(),
                    s.grids.len()
                ));
            }
            for (v, (&c, g)) in chosen.iter().zip(&s.grids).enumerate() {
                if c >= g.points.len() {
                    return Err(format!(
                        "variant {v}: point {c} is out of range ({} points)",
                        g.points.len()
                    ));
                }
            }
            s.chosen = Some(chosen.to_vec());
        }
        Ok(p)
    }

    /// A fresh instance of the task.
    pub fn make_task(&self) -> Box<dyn Task> {
        self.config.task.build().expect("a validated plan's task builds")
    }
}

/// Deep merge: objects merge key by key, anything else replaces.
fn merge(base: &Value, over: &Value) -> Value {
    match (base, over) {
        (Value::Object(b), Value::Object(o)) => {
            let mut out = b.clone();
            for (k, v) in o {
                let merged = match out.get(k) {
                    Some(bv) => merge(bv, v),
                    None => v.clone(),
                };
                out.insert(k.clone(), merged);
            }
            Value::Object(out)
        }
        (_, o) => o.clone(),
    }
}

fn path_string(p: &serde_path_to_error::Path) -> String {
    let s = p.to_string();
    if s == "." {
        String::new()
    } else {
        s
    }
}

fn join(prefix: &str, rest: &str) -> String {
    match (prefix.is_empty(), rest.is_empty()) {
        (true, _) => rest.into(),
        (_, true) => prefix.into(),
        _ => format!("{prefix}.{rest}"),
    }
}

/// Reads a JSON value as `T`, naming the field of a problem (`prefix`,
/// then the path inside the value, as `reward.constants.k`). Callers read
/// each type through this one route, so each type's reader is compiled once.
pub fn read_json<T: for<'de> Deserialize<'de>>(v: &Value, prefix: &str) -> Result<T, Problem> {
    serde_path_to_error::deserialize(v).map_err(|e| {
        let path = join(prefix, &path_string(e.path()));
        Problem { path, message: e.into_inner().to_string() }
    })
}

/// The problem in a `task` object, with the path of its field from the
/// config's root (`task.update.velocity`).
fn task_problem(task: &Value) -> Option<Problem> {
    TaskConfig::read(task).err().map(|p| Problem { path: join("task", &p.path), message: p.message })
}

/// The live check of a `task` object for the task editor: every problem
/// (paths relative to the task, as `update.velocity` or `rows[3].from`) and,
/// for a formula task, each formula field's errors and the names it may use
/// ([`TaskCheck`]).
pub fn check_task(task: &Value) -> TaskCheck {
    let cfg = match TaskConfig::read(task) {
        Ok(c) => c,
        Err(mut p) => {
            // serde names a missing field in its message only: put it in the path.
            if let Some(field) = p.message.strip_prefix("missing field `").and_then(|m| m.split('`').next()) {
                if p.path.is_empty() {
                    p.path = field.to_string();
                }
            }
            return TaskCheck { ok: false, problems: vec![p], fields: Vec::new() };
        }
    };
    match &cfg {
        TaskConfig::Formula(c) => c.check(),
        other => {
            let problems = other.problems();
            TaskCheck { ok: problems.is_empty(), problems, fields: Vec::new() }
        }
    }
}

/// Learner setting keys that were renamed, `(old, new)`: the old names still
/// load (with a note), so links and results files already shared keep working.
pub const RENAMED_KEYS: [(&str, &str); 2] = [("algo", "family"), ("n_steps", "segment")];
/// Keys renamed inside a learner setup's `policy` object, `(old, new)`.
pub const RENAMED_POLICY_KEYS: [(&str, &str); 1] = [("learn_std", "sd_trainable")];

/// Renames old keys in one object, in place; notes each rename, or reports
/// an object that gives both names.
fn rename_keys(
    obj: &mut Map<String, Value>,
    renames: &[(&str, &str)],
    at: &str,
    notes: &mut Vec<String>,
) -> Vec<Problem> {
    let mut problems = Vec::new();
    for &(old, new) in renames {
        if let Some(v) = obj.remove(old) {
            let path = join(at, old);
            if obj.contains_key(new) {
                problems.push(Problem {
                    path,
                    message: format!("gives both `{old}` and its new name `{new}`; keep only `{new}`"),
                });
                obj.insert(old.into(), v);
            } else {
                notes.push(format!("{path}: now called `{new}`; the old name still loads"));
                obj.insert(new.into(), v);
            }
        }
    }
    problems
}

/// The config with old learner keys renamed (see [`RENAMED_KEYS`]), in
/// `base` and every variant's `learner`.
fn modernize(value: &Value, notes: &mut Vec<String>) -> Result<Value, ConfigError> {
    let mut v = value.clone();
    let mut problems = Vec::new();
    let mut fix = |learner: Option<&mut Value>, at: String, notes: &mut Vec<String>| {
        let Some(Value::Object(obj)) = learner else { return };
        problems.extend(rename_keys(obj, &RENAMED_KEYS, &at, notes));
        if let Some(Value::Object(policy)) = obj.get_mut("policy") {
            problems.extend(rename_keys(policy, &RENAMED_POLICY_KEYS, &join(&at, "policy"), notes));
        }
    };
    fix(v.get_mut("base"), "base".into(), notes);
    if let Some(Value::Array(vs)) = v.get_mut("variants") {
        for (i, variant) in vs.iter_mut().enumerate() {
            fix(variant.get_mut("learner"), format!("variants[{i}].learner"), notes);
        }
    }
    if problems.is_empty() {
        Ok(v)
    } else {
        Err(ConfigError { problems })
    }
}

/// JSON text as a [`Value`]. Every reading of JSON text into a value, in
/// this crate and in the page's glue, goes through here, so the program holds
/// one compiled copy of the JSON reader (a generic function is compiled again
/// in each crate that instantiates it, and the copies are not merged).
#[inline(never)]
pub fn parse_json(text: &str) -> Result<Value, serde_json::Error> {
    serde_json::from_str(text)
}

/// Parses and validates a config text.
pub fn parse(text: &str) -> Result<Plan, ConfigError> {
    if text.len() > MAX_CONFIG_BYTES {
        return Err(ConfigError::one(
            "",
            format!("config is {} bytes; at most {MAX_CONFIG_BYTES} are accepted", text.len()),
        ));
    }
    let value = parse_json(text).map_err(|e| {
        ConfigError::one("", format!("not valid JSON at line {} column {}: {e}", e.line(), e.column()))
    })?;
    validate_value(&value)
}

/// Validates a config already parsed as JSON.
pub fn validate_value(value: &Value) -> Result<Plan, ConfigError> {
    let Some(obj) = value.as_object() else {
        return Err(ConfigError::one("", "the config must be a JSON object"));
    };
    match obj.get("schema") {
        None => return Err(ConfigError::one("schema", format!("missing; this build reads schema {SCHEMA}"))),
        Some(Value::Number(n)) if n.as_u64() == Some(u64::from(SCHEMA)) => {}
        Some(Value::Number(n)) if n.as_u64().is_some_and(|v| v > u64::from(SCHEMA)) => {
            return Err(ConfigError::one(
                "schema",
                format!("version {n} is newer than this build understands ({SCHEMA}); open it with a newer critbox"),
            ))
        }
        Some(other) => {
            return Err(ConfigError::one("schema", format!("must be {SCHEMA}, got {other}")));
        }
    }
    let mut notes = Vec::new();
    let modern = modernize(value, &mut notes)?;
    let value = &modern;
    let config: Config = read_json(value, "").map_err(|p| {
        // The task is an internally tagged enum, whose errors lose the field
        // path: read it again as its own kind to name the field.
        let p = if p.path == "task" { task_problem(&value["task"]).unwrap_or(p) } else { p };
        ConfigError { problems: vec![p] }
    })?;
    let mut problems = Vec::new();
    let mut bad = |path: String, message: String| problems.push(Problem { path, message });

    if let Some(e) = &config.expect {
        if e.text.chars().count() > 600 {
            bad("expect.text".into(), "is longer than 600 characters".into());
        }
    }
    if config.title.chars().count() > 200 {
        bad("title".into(), "is longer than 200 characters".into());
    }
    let task_problems = config.task.problems();
    let spec = if task_problems.is_empty() {
        Some(config.task.build().expect("a task without problems builds").spec().clone())
    } else {
        for p in task_problems {
            bad(format!("task.{}", p.path), p.message);
        }
        None
    };
    if config.variants.is_empty() || config.variants.len() > MAX_VARIANTS {
        bad("variants".into(), format!("needs 1 to {MAX_VARIANTS} entries, got {}", config.variants.len()));
    }
    if let Some(m) = crate::settings::check_int("experiment.seeds", u64::from(config.seeds)) {
        bad("seeds".into(), m);
    }
    if let Some(m) = crate::settings::check_int("experiment.steps", config.steps) {
        bad("steps".into(), m);
    }
    if let Some(m) = crate::settings::check_int("experiment.master_seed", config.master_seed) {
        bad("master_seed".into(), m);
    }
    if let Some(m) = crate::settings::check_int("experiment.curve_points", u64::from(config.curve_points)) {
        bad("curve_points".into(), m);
    }
    if let Some(m) = crate::settings::check("experiment.final_fraction", config.final_fraction) {
        bad("final_fraction".into(), m);
    }
    if let Some(t) = config.threshold {
        if !t.is_finite() {
            bad("threshold".into(), format!("must be a finite number, got {t}"));
        }
    }
    if let Some(d) = config.detect_difference {
        if !(d > 0.0 && d.is_finite()) {
            bad("detect_difference".into(), format!("must be a finite number > 0, got {d}"));
        }
    }
    if !config.base.is_object() {
        bad("base".into(), "must be an object of learner settings".into());
    }
    if let Some(spec) = &spec {
        for p in config.reward.check(spec, spec.default_discount) {
            bad(format!("reward.{}", p.path), p.message);
        }
    }
    let mut variants = Vec::new();
    let mut grids: Vec<Option<Grid>> = Vec::new();
    let mut extra = Vec::new();
    for (i, v) in config.variants.iter().enumerate() {
        let n = v.label.chars().count();
        if n == 0 || n > 60 || v.label.chars().any(char::is_control) {
            bad(
                format!("variants[{i}].label"),
                "must be 1 to 60 characters with no control characters".into(),
            );
        } else if config.variants[..i].iter().any(|o| o.label == v.label) {
            bad(
                format!("variants[{i}].label"),
                format!("{:?} is used by an earlier variant; labels must differ", v.label),
            );
        }
        if !v.learner.is_object() {
            bad(format!("variants[{i}].learner"), "must be an object of learner settings".into());
            continue;
        }
        let (resolved, found) = resolve_variant(&config, spec.as_ref(), i, &v.learner, v.reward.as_ref());
        extra.extend(found);
        let Some((setup, reward)) = resolved else { continue };
        if let Some(sweep) = &v.sweep {
            match study::parse_sweep(sweep) {
                Err(ps) => {
                    for p in ps {
                        extra.push(Problem {
                            path: join(&format!("variants[{i}].sweep"), &p.path),
                            message: p.message,
                        });
                    }
                }
                Ok(axes) => {
                    let (points, found) = grid_points(&config, spec.as_ref(), i, v, &axes);
                    extra.extend(found);
                    grids.push(Some(Grid { axes, points }));
                }
            }
        } else {
            grids.push(None);
        }
        variants.push(VariantPlan { label: v.label.clone(), setup, reward });
    }
    problems.extend(extra);
    // A problem in `base` shows once, not once per variant.
    let mut seen = std::collections::HashSet::new();
    problems.retain(|p| seen.insert((p.path.clone(), p.message.clone())));
    if !problems.is_empty() {
        return Err(ConfigError { problems });
    }
    let spec = spec.expect("no problems means the task built");
    let (evaluation, score_on, reference) = resolve_scoring(&config, &variants)?;
    let study = resolve_study(&config, &variants, grids)?;
    Ok(Plan { config, spec, variants, evaluation, score_on, reference, notes, study })
}

/// Resolves one variant's learner setup (its `learner` object deep-merged
/// over `base`) and reward (its own, or the experiment's), with every
/// problem named at the field it comes from.
fn resolve_variant(
    config: &Config,
    spec: Option<&TaskSpec>,
    i: usize,
    learner: &Value,
    own_reward: Option<&RewardConfig>,
) -> (Option<(LearnerSetup, RewardConfig)>, Vec<Problem>) {
    let mut problems = Vec::new();
    let origin = |field: &str| -> String {
        let key = field.split(['.', '[']).next().unwrap_or("");
        if learner.get(key).is_some() {
            join(&format!("variants[{i}].learner"), field)
        } else {
            join("base", field)
        }
    };
    let merged = merge(&config.base, learner);
    let setup: LearnerSetup = match serde_path_to_error::deserialize(&merged) {
        Ok(s) => s,
        Err(e) => {
            problems
                .push(Problem { path: origin(&path_string(e.path())), message: e.into_inner().to_string() });
            return (None, problems);
        }
    };
    if let Some(spec) = spec {
        for e in setup.check(spec) {
            problems.push(Problem { path: origin(&e.path), message: e.message });
        }
    }
    let reward = own_reward.cloned().unwrap_or_else(|| config.reward.clone());
    if let (Some(spec), Some(_)) = (spec, own_reward) {
        for p in reward.check(spec, setup.shaping_discount(spec)) {
            problems.push(Problem { path: format!("variants[{i}].reward.{}", p.path), message: p.message });
        }
    }
    (Some((setup, reward)), problems)
}

/// Sets a dotted path in a JSON object, making the objects on the way.
fn set_path(obj: &mut Value, path: &[&str], value: Value) {
    let Some((last, head)) = path.split_last() else { return };
    let mut at = obj;
    for key in head {
        if !at.get(*key).is_some_and(Value::is_object) {
            at[*key] = Value::Object(Map::new());
        }
        at = &mut at[*key];
    }
    at[*last] = value;
}

/// The grid points of variant `i`'s sweep, each resolved like a variant;
/// a value that makes a setting invalid is named at `variants[i].sweep.PATH`.
fn grid_points(
    config: &Config,
    spec: Option<&TaskSpec>,
    i: usize,
    v: &VariantConfig,
    axes: &[Axis],
) -> (Vec<GridPoint>, Vec<Problem>) {
    let mut problems = Vec::new();
    let mut points = Vec::new();
    let base_reward = v.reward.clone().unwrap_or_else(|| config.reward.clone());
    for index in study::grid_indices(axes) {
        let mut learner = v.learner.clone();
        let mut reward = base_reward.clone();
        let mut reward_swept = false;
        let mut unknown = false;
        for (a, &k) in axes.iter().zip(&index) {
            let value = a.values[k];
            let parts: Vec<&str> = a.path.split('.').collect();
            if let ["reward", "constants", name] = parts[..] {
                if !reward.constants.contains_key(name) {
                    let names: Vec<&String> = reward.constants.keys().collect();
                    problems.push(Problem {
                        path: format!("variants[{i}].sweep.{}", a.path),
                        message: format!(
                            "the reward has no constant `{name}` to sweep (its constants: {})",
                            if names.is_empty() { "none".into() } else { format!("{names:?}") }
                        ),
                    });
                    unknown = true;
                    continue;
                }
                reward.constants.insert(name.to_string(), value);
                reward_swept = true;
            } else if parts[0] == "reward" {
                problems.push(Problem {
                    path: format!("variants[{i}].sweep.{}", a.path),
                    message: "of the reward only `reward.constants.NAME` can be swept".into(),
                });
                unknown = true;
            } else {
                set_path(&mut learner, &parts, serde_json::json!(value));
            }
        }
        if unknown {
            break;
        }
        let own = if reward_swept { Some(&reward) } else { v.reward.as_ref() };
        let (resolved, found) = resolve_variant(config, spec, i, &learner, own);
        for p in found {
            let swept = axes.iter().zip(&index).find(|(a, _)| {
                let learner_path = format!("variants[{i}].learner.{}", a.path);
                let reward_path = format!("variants[{i}].{}", a.path);
                p.path == learner_path
                    || p.path.starts_with(&format!("{learner_path}."))
                    || p.path == reward_path
                    || (p.path == format!("variants[{i}].learner")
                        && p.message.contains(&format!("`{}`", a.path.split('.').next().unwrap_or(""))))
            });
            let (path, message) = match swept {
                Some((a, &k)) => (
                    format!("variants[{i}].sweep.{}", a.path),
                    format!("value {}: {}", crate::experiment::compare::fmt(a.values[k]), p.message),
                ),
                None => {
                    (format!("variants[{i}].sweep"), format!("at this grid point, {}: {}", p.path, p.message))
                }
            };
            problems.push(Problem { path, message });
        }
        if let Some((setup, reward)) = resolved {
            points.push(GridPoint { index, setup, reward });
        }
    }
    (points, problems)
}

/// The study of a config whose variants are valid: grids for every variant
/// when any sweeps, `tuning_seeds` and `choose_by` checked.
fn resolve_study(
    config: &Config,
    variants: &[VariantPlan],
    grids: Vec<Option<Grid>>,
) -> Result<Option<StudyPlan>, ConfigError> {
    let mut problems = Vec::new();
    let any = grids.iter().any(Option::is_some);
    if !any {
        for (key, set) in
            [("tuning_seeds", config.tuning_seeds.is_some()), ("choose_by", config.choose_by.is_some())]
        {
            if set {
                problems.push(Problem {
                    path: key.into(),
                    message: "applies to studies only: give a variant a `sweep` over a setting".into(),
                });
            }
        }
        return if problems.is_empty() { Ok(None) } else { Err(ConfigError { problems }) };
    }
    let tuning_seeds = config.tuning_seeds.unwrap_or(config.seeds);
    if !(1..=MAX_SEEDS).contains(&tuning_seeds) {
        problems.push(Problem {
            path: "tuning_seeds".into(),
            message: format!("must be in [1, {MAX_SEEDS}], got {tuning_seeds}"),
        });
    }
    let grids: Vec<Grid> = grids
        .into_iter()
        .zip(variants)
        .map(|(g, v)| {
            g.unwrap_or_else(|| Grid {
                axes: Vec::new(),
                points: vec![GridPoint {
                    index: Vec::new(),
                    setup: v.setup.clone(),
                    reward: v.reward.clone(),
                }],
            })
        })
        .collect();
    let jobs = grids.iter().map(|g| g.points.len()).sum::<usize>() * tuning_seeds as usize
        + variants.len() * config.seeds as usize;
    if jobs > study::MAX_STUDY_JOBS {
        problems.push(Problem {
            path: "variants".into(),
            message: format!(
                "the study makes {jobs} jobs (grid points × tuning seeds, plus variants × seeds); at most {} are allowed",
                study::MAX_STUDY_JOBS
            ),
        });
    }
    if problems.is_empty() {
        Ok(Some(StudyPlan {
            tuning_seeds,
            choose_by: config.choose_by.unwrap_or_default(),
            grids,
            chosen: None,
        }))
    } else {
        Err(ConfigError { problems })
    }
}

/// Resolves the evaluation settings, the scored measure and the reference
/// variant of a config whose other parts are valid.
fn resolve_scoring(
    config: &Config,
    variants: &[VariantPlan],
) -> Result<(Option<EvalPlan>, Measure, Option<usize>), ConfigError> {
    use crate::learn::Family;
    let mut problems = Vec::new();
    let explores =
        variants.iter().any(|v| matches!(v.setup.family, Family::OffPolicy | Family::Deterministic));
    let settings = match &config.evaluation {
        Evaluation::Auto => explores.then(EvaluationConfig::default),
        Evaluation::Off => None,
        Evaluation::On(c) => Some(c.clone()),
    };
    let evaluation = settings.map(|c| {
        let every = c.every.unwrap_or(((config.steps as f64 / 20.0).round() as u64).max(1));
        if !(1..=config.steps).contains(&every) {
            problems.push(Problem {
                path: "evaluation.every".into(),
                message: format!("must be in [1, {}] (the step budget), got {every}", config.steps),
            });
        }
        let episodes = c.episodes.unwrap_or(10);
        if let Some(message) =
            crate::settings::check_int("experiment.evaluation.episodes", u64::from(episodes))
        {
            problems.push(Problem { path: "evaluation.episodes".into(), message });
        }
        let every = every.max(1);
        EvalPlan {
            every,
            episodes,
            greedy: c.policy == EvalPolicy::Greedy,
            checkpoints: EvalPlan::checkpoints_of(config.steps, every),
        }
    });
    if evaluation.as_ref().is_some_and(|e| e.checkpoints.len() > MAX_CHECKPOINTS) {
        problems.push(Problem {
            path: "evaluation.every".into(),
            message: format!(
                "gives {} checkpoints; at most {MAX_CHECKPOINTS} are allowed (raise `every`)",
                evaluation.as_ref().map_or(0, |e| e.checkpoints.len())
            ),
        });
    }
    let score_on = match (config.score_on, &evaluation) {
        (Some(Measure::Evaluation), None) => {
            problems.push(Problem {
                path: "score_on".into(),
                message: "\"evaluation\" needs evaluation episodes, which are off: set `evaluation` to true \
                          or an object, or score on \"training\""
                    .into(),
            });
            Measure::Training
        }
        (Some(m), _) => m,
        (None, Some(_)) => Measure::Evaluation,
        (None, None) => Measure::Training,
    };
    let reference = match &config.reference {
        None => None,
        Some(label) => {
            let at = variants.iter().position(|v| &v.label == label);
            if at.is_none() {
                let labels: Vec<String> = variants.iter().map(|v| format!("{:?}", v.label)).collect();
                problems.push(Problem {
                    path: "reference".into(),
                    message: format!(
                        "{label:?} is not a variant's label (the labels: {})",
                        labels.join(", ")
                    ),
                });
            }
            if variants.len() < 2 {
                problems.push(Problem {
                    path: "reference".into(),
                    message: "needs at least two variants to compare".into(),
                });
            }
            at
        }
    };
    if problems.is_empty() {
        Ok((evaluation, score_on, reference))
    } else {
        Err(ConfigError { problems })
    }
}

/// Most evaluation checkpoints per job.
pub const MAX_CHECKPOINTS: usize = 1001;

#[cfg(test)]
mod tests {
    use super::*;

    fn base_json() -> Value {
        serde_json::json!({
            "schema": 1,
            "task": {"kind": "grid", "map": ["#####", "#S.D#", "#####"]},
            "base": {"family": "a2c"},
            "variants": [{"label": "A"}, {"label": "B", "learner": {"family": "qac", "actor_step": 0.05}}],
            "seeds": 2, "steps": 100
        })
    }

    fn errors(v: Value) -> String {
        validate_value(&v).unwrap_err().to_string()
    }

    #[test]
    fn a_task_problem_names_its_field_on_every_route() {
        // The task's reader names the field of a problem whichever way the
        // task arrives: a whole config, the task editor's check, or the task
        // read alone (common practice, no source).
        let mut v = base_json();
        v["task"]["kind"] = "gird".into();
        let e = errors(v.clone());
        assert!(e.contains("task.kind: unknown task kind `gird`, expected one of `grid`, `cartpole`"), "{e}");
        let check = check_task(&v["task"]);
        assert_eq!((check.ok, check.problems[0].path.as_str()), (false, "kind"));
        v["task"] = serde_json::json!({"kind": "grid", "map": ["#S.D#"], "slip": "much"});
        let e = errors(v.clone());
        assert!(e.contains("task.slip: invalid type: string \"much\""), "{e}");
        let p = TaskConfig::read(&v["task"]).unwrap_err();
        assert_eq!(p.path, "slip");
        assert_eq!(TaskConfig::read(&serde_json::json!([1])).unwrap_err().path, "");
        assert_eq!(
            TaskConfig::read(&serde_json::json!({"map": []})).unwrap_err().message,
            "missing field `kind`"
        );
        // And a task that reads is the one the serialiser wrote.
        let task = TaskConfig::read(&base_json()["task"]).unwrap();
        assert_eq!(TaskConfig::read(&serde_json::to_value(&task).unwrap()).unwrap(), task);
    }

    #[test]
    fn valid_config_resolves_variants() {
        let plan = validate_value(&base_json()).unwrap();
        assert_eq!(plan.job_count(), 4);
        assert_eq!(plan.variants[1].setup.family, crate::learn::Family::Qac);
        assert_eq!(plan.variants[1].setup.actor_step, 0.05);
        assert_eq!(plan.variants[0].setup.actor_step, 0.1);
        assert_eq!(plan.job_coords(3), (1, 1));
    }

    #[test]
    fn old_key_names_still_load_with_a_note() {
        // Links and results files written before the renames must keep working
        // (common practice, no source): `algo`, `n_steps`, `policy.learn_std`.
        let v = serde_json::json!({
            "schema": 1, "task": {"kind": "lqr"}, "steps": 100, "seeds": 1,
            "base": {"algo": "a2c", "n_steps": 4, "policy": {"learn_std": false}},
            "variants": [{"label": "A"}, {"label": "B", "learner": {"algo": "deterministic"}}]
        });
        let plan = validate_value(&v).unwrap();
        assert_eq!(plan.variants[0].setup.family, crate::learn::Family::A2c);
        assert_eq!(plan.variants[0].setup.segment, 4);
        assert!(!plan.variants[0].setup.policy.sd_trainable);
        assert_eq!(plan.variants[1].setup.family, crate::learn::Family::Deterministic);
        assert_eq!(plan.config.base["family"], "a2c", "the plan keeps the new names");
        assert!(plan.config.base.get("algo").is_none());
        assert_eq!(
            plan.notes,
            [
                "base.algo: now called `family`; the old name still loads",
                "base.n_steps: now called `segment`; the old name still loads",
                "base.policy.learn_std: now called `sd_trainable`; the old name still loads",
                "variants[1].learner.algo: now called `family`; the old name still loads",
            ]
        );
        let mut both = v.clone();
        both["base"]["family"] = "qac".into();
        assert_eq!(
            errors(both),
            "base.algo: gives both `algo` and its new name `family`; keep only `family`"
        );
    }

    #[test]
    fn problems_name_their_field() {
        let mut v = base_json();
        v["variants"][1]["learner"]["actor_step"] = (-1.0).into();
        assert_eq!(errors(v), "variants[1].learner.actor_step: must be in (0, 10], got -1");
        let mut v = base_json();
        v["base"]["critic_step"] = 50.into();
        assert_eq!(errors(v), "base.critic_step: must be in (0, 10], got 50");
        let mut v = base_json();
        v["variants"][0]["learner"] = serde_json::json!({"family": "ppo"});
        assert!(errors(v).starts_with("variants[0].learner.family: unknown variant `ppo`"));
        let mut v = base_json();
        v["seeds"] = 0.into();
        v["steps"] = "many".into();
        assert!(errors(v).starts_with("steps: invalid type"));
        let mut v = base_json();
        v["seeds"] = 1000.into();
        assert_eq!(errors(v), "seeds: must be in [1, 100], got 1000");
        let mut v = base_json();
        v["task"]["map"] = serde_json::json!(["#S.#"]);
        assert_eq!(errors(v), "task.map: has no dock 'D': the episode could never end at a goal");
        let mut v = base_json();
        v["variants"][1]["label"] = "A".into();
        assert!(errors(v).starts_with("variants[1].label: \"A\" is used"));
        let mut v = base_json();
        v["surprise"] = 1.into();
        assert!(errors(v).contains("unknown field `surprise`"));
        let mut v = base_json();
        v["schema"] = 7.into();
        assert!(errors(v).contains("newer than this build"));
        let mut v = base_json();
        v["task"] = serde_json::json!({"kind": "cartpole"});
        v["base"]["features"] = serde_json::json!({"kind": "tabular"});
        assert!(errors(v).starts_with("base.features.kind: \"tabular\" needs a finite task"));
        let mut v = base_json();
        v["task"]["slip"] = "lots".into();
        assert!(errors(v).starts_with("task.slip: invalid type: string \"lots\""), "{}", errors(base_json()));
        let mut v = base_json();
        v["task"]["slipp"] = 0.1.into();
        let e = errors(v);
        assert!(
            e.starts_with("task: unknown field `slipp`") || e.starts_with("task.slipp: unknown field"),
            "{e}"
        );
        assert!(parse("{\"schema\": 1,").unwrap_err().to_string().starts_with("not valid JSON at line 1"));
    }
}
