//! A task written as formulas: the user's own small model of a system.
//!
//! A [`FormulaTaskConfig`] (task kind `"formula"`) lists state variables
//! (each with a start value or a uniform start range, a typical range for
//! feature scaling and an optional clip), either discrete `actions` (each
//! setting named numbers the formulas see) or continuous `controls`, ordered
//! `let` values, one `update` formula per state variable, a `terminal`
//! condition and a base `reward`. [`FormulaTask::new`] compiles every
//! formula once (with the reward language of [`crate::reward`]); a step
//! then evaluates the compiled programs over one input vector sized at
//! construction, so stepping allocates nothing.
//!
//! One control step runs `substeps` integration steps, each evaluating the
//! `let` values in order and then every `update` formula over the *current*
//! values (a simultaneous update: no update sees another's new value; a
//! `let` is how a model computes a new velocity once and uses it in the
//! position update), then clipping where asked. In `let` and `update`, `dt`
//! is the integration step `dt / substeps`. `terminal` is checked on the
//! state the step arrives in (its names mean the new values there); the
//! reward sees the state before the step (plain names), after it (primed
//! names), the action, the last `let` values and `terminal`. Controls are
//! clipped into their bounds before the formulas see them. `noise()` and
//! `uniform()` draw from the task's own stream (common random numbers across
//! variants), in the order the formulas are written: lets, updates,
//! terminal, reward. A state variable that becomes NaN or infinite stops the
//! job; [`Task::fault`] names the variable.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::problem::Problem;
use crate::reward::compile::{self, truth, Binding, NameInfo, Program, Scope, KEYWORDS};
use crate::reward::{parse, ErrorReport, NameReport};
use crate::rng::Stream;
use crate::task::{Action, ActionSpace, StateVar, Step, Task, TaskError, TaskSpec};

/// Most state variables of a formula task.
pub const MAX_VARS: usize = 32;
/// Most discrete actions.
pub const MAX_ACTIONS: usize = 32;
/// Most control components.
pub const MAX_CONTROLS: usize = 8;
/// Most `let` values.
pub const MAX_LETS: usize = 64;
/// Most constants.
pub const MAX_CONSTANTS: usize = 64;
/// Longest formula (bytes).
pub const MAX_FORMULA: usize = 4096;
/// Names the task's own names must not take: they mean something in task
/// or reward formulas already.
pub const RESERVED: [&str; 8] = ["action", "terminal", "dt", "pi", "base", "t", "gamma", "state"];

/// A start value: a number, or `[low, high]` for a uniform draw.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(untagged)]
pub enum Start {
    /// Always this value.
    Fixed(f64),
    /// Uniform on `[low, high)`.
    Range([f64; 2]),
}

impl<'de> Deserialize<'de> for Start {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = serde_json::Value::deserialize(d)?;
        let pair = v.as_array().filter(|a| a.len() == 2).and_then(|a| Some([a[0].as_f64()?, a[1].as_f64()?]));
        match (v.as_f64(), pair) {
            (Some(x), _) => Ok(Start::Fixed(x)),
            (None, Some(r)) => Ok(Start::Range(r)),
            _ => Err(serde::de::Error::custom(format!(
                "must be a number, or [low, high] for a uniform start; got {v}"
            ))),
        }
    }
}

/// One state variable of a formula task.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VarConfig {
    /// Name used in formulas and plots.
    pub name: String,
    /// Start value or uniform start range.
    pub start: Start,
    /// Lower end of the typical range (feature scaling; the clip bound).
    pub low: f64,
    /// Upper end of the typical range.
    pub high: f64,
    /// Clip the next value into `[low, high]`. Default false.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub clip: bool,
}

/// One discrete action: its name and the numbers the formulas see when it is taken.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ActionConfig {
    /// Name of the action.
    pub name: String,
    /// Named numbers; a name another action sets and this one does not is 0 here.
    #[serde(default)]
    pub set: BTreeMap<String, f64>,
}

/// One component of a continuous action.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ControlConfig {
    /// Name used in formulas.
    pub name: String,
    /// Lower bound (the action is clipped into the bounds).
    pub low: f64,
    /// Upper bound.
    pub high: f64,
}

/// One intermediate value.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LetConfig {
    /// Its name.
    pub name: String,
    /// Its formula.
    pub formula: String,
}

/// Settings of a formula task (the `task` object with `"kind": "formula"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FormulaTaskConfig {
    /// The state variables, 1 to 32.
    pub state: Vec<VarConfig>,
    /// Discrete actions (2 to 32); exactly one of `actions` and `controls`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub actions: Option<Vec<ActionConfig>>,
    /// Continuous action components (1 to 8).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub controls: Option<Vec<ControlConfig>>,
    /// Intermediate values, in order (at most 64).
    #[serde(default, rename = "let", skip_serializing_if = "Vec::is_empty")]
    pub lets: Vec<LetConfig>,
    /// One formula per state variable: its next value.
    pub update: BTreeMap<String, String>,
    /// Condition on the state a step arrives in that ends the episode
    /// (no bootstrap). Default empty: never.
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub terminal: String,
    /// The task's own reward for a step.
    pub reward: String,
    /// The control step, in (0, 3600]. Default 1.
    #[serde(default = "default_dt")]
    pub dt: f64,
    /// Integration steps per control step, in [1, 100]. Default 1.
    #[serde(default = "default_substeps")]
    pub substeps: u32,
    /// Named numbers every formula may use (at most 64).
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub constants: BTreeMap<String, f64>,
    /// Episode length limit (truncation: bootstraps), in [1, 100000]. Default 500.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
    /// The discount learners use unless they set one, in [0, 1]. Default 0.99.
    #[serde(default = "default_discount")]
    pub discount: f64,
}

fn default_dt() -> f64 {
    1.0
}
fn default_substeps() -> u32 {
    1
}
fn default_max_steps() -> u32 {
    500
}
fn default_discount() -> f64 {
    0.99
}

/// One formula field of a formula task, checked for an editor: its path
/// (relative to the task), its problems (spans in UTF-16 code units) and
/// the names it may use.
#[derive(Clone, Debug, Serialize)]
pub struct FieldCheck {
    /// The field, as `update.velocity`, `let[0].formula`, `terminal`, `reward`.
    pub path: String,
    /// Problems in the formula.
    pub errors: Vec<ErrorReport>,
    /// Names the formula may use.
    pub names: Vec<NameReport>,
}

/// Everything wrong with a task definition, for an editor: problems not
/// tied to one formula, and a check of each formula field.
#[derive(Clone, Debug, Serialize)]
pub struct TaskCheck {
    /// Whether the task builds.
    pub ok: bool,
    /// Every problem, each naming its field (formula problems included).
    pub problems: Vec<Problem>,
    /// Each formula field's check (empty when the names themselves are wrong).
    pub fields: Vec<FieldCheck>,
}

/// Slot layout of the input vector (see the module documentation).
#[derive(Clone, Copy, Debug)]
struct Layout {
    n: usize,
    numbers: usize,
    lets: usize,
}

impl Layout {
    fn action_numbers(&self) -> usize {
        2 * self.n
    }
    fn action_index(&self) -> usize {
        2 * self.n + self.numbers
    }
    fn first_let(&self) -> usize {
        self.action_index() + 1
    }
    fn terminal(&self) -> usize {
        self.first_let() + self.lets
    }
    fn len(&self) -> usize {
        self.terminal() + 1
    }
}

/// Which formula a scope is for.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Role {
    Let(usize),
    Update,
    Terminal,
    Reward,
}

const NO_NEXT_DYNAMICS: &str =
    "`let` and `update` formulas see the state before the step; primed names belong in the reward";
const NO_NEXT_TERMINAL: &str =
    "`terminal` is checked on the state the step arrives in: write the plain name, which means the new value here";

/// The names and numbers of a formula task, resolved once.
struct Names {
    layout: Layout,
    /// Names of the action numbers (discrete) or controls (continuous).
    numbers: Vec<String>,
    /// Per discrete action, its numbers in the order of `numbers`.
    action_values: Vec<Vec<f64>>,
    discrete: bool,
}

fn bad(problems: &mut Vec<Problem>, path: impl Into<String>, message: impl Into<String>) {
    problems.push(Problem::new(path, message));
}

fn name_problem(name: &str) -> Option<String> {
    if !compile::is_identifier(name) || name.len() > 40 {
        return Some(format!(
            "`{name}` is no valid name: use 1 to 40 letters, digits or `_`, not starting with a digit \
             and not a keyword ({})",
            KEYWORDS.join(" ")
        ));
    }
    if RESERVED.contains(&name) {
        return Some(format!(
            "`{name}` is reserved (it already means something in formulas); choose another"
        ));
    }
    if compile::FUNCTIONS.iter().any(|f| f.0 == name) {
        return Some(format!("`{name}` is the name of a function; choose another"));
    }
    None
}

fn finite_range(problems: &mut Vec<Problem>, path: &str, low: f64, high: f64) {
    if !low.is_finite() || !high.is_finite() || low >= high {
        bad(problems, path, format!("needs finite low < high, got low = {low}, high = {high}"));
    }
}

impl FormulaTaskConfig {
    /// Checks everything but the formulas; returns the resolved names when
    /// they are sound.
    fn check_names(&self, problems: &mut Vec<Problem>) -> Option<Names> {
        let before = problems.len();
        let mut taken: BTreeMap<String, String> = BTreeMap::new();
        let mut take = |problems: &mut Vec<Problem>, name: &str, path: String| {
            if let Some(m) = name_problem(name) {
                bad(problems, path, m);
            } else if let Some(other) = taken.get(name) {
                bad(problems, path, format!("`{name}` is already the name of {other}; names must differ"));
            } else {
                taken.insert(name.to_string(), path);
            }
        };
        if self.state.is_empty() || self.state.len() > MAX_VARS {
            bad(problems, "state", format!("needs 1 to {MAX_VARS} variables, got {}", self.state.len()));
        }
        for (i, v) in self.state.iter().enumerate() {
            let path = format!("state[{i}]");
            take(problems, &v.name, format!("{path}.name"));
            finite_range(problems, &path, v.low, v.high);
            match v.start {
                Start::Fixed(x) if !x.is_finite() => {
                    bad(problems, format!("{path}.start"), format!("must be finite, got {x}"))
                }
                // The draw is low + (high − low)·u: the width must be finite too.
                Start::Range([a, b]) if !(a <= b && (b - a).is_finite()) => bad(
                    problems,
                    format!("{path}.start"),
                    format!(
                        "a start range [low, high] needs finite low ≤ high with a finite width high − low, \
                         got [{a}, {b}]"
                    ),
                ),
                _ => {}
            }
        }
        let mut numbers: Vec<String> = Vec::new();
        let mut action_values = Vec::new();
        let discrete = match (&self.actions, &self.controls) {
            (Some(_), Some(_)) | (None, None) => {
                bad(
                    problems,
                    "actions",
                    "give exactly one of `actions` (discrete) and `controls` (continuous)",
                );
                true
            }
            (Some(actions), None) => {
                if actions.len() < 2 || actions.len() > MAX_ACTIONS {
                    bad(
                        problems,
                        "actions",
                        format!("needs 2 to {MAX_ACTIONS} actions, got {}", actions.len()),
                    );
                }
                for (i, a) in actions.iter().enumerate() {
                    take(problems, &a.name, format!("actions[{i}].name"));
                    for (k, v) in &a.set {
                        if !numbers.contains(k) {
                            numbers.push(k.clone());
                        }
                        if !v.is_finite() {
                            bad(
                                problems,
                                format!("actions[{i}].set.{k}"),
                                format!("must be finite, got {v}"),
                            );
                        }
                    }
                }
                numbers.sort();
                for k in &numbers {
                    let i = actions.iter().position(|a| a.set.contains_key(k)).unwrap_or(0);
                    take(problems, k, format!("actions[{i}].set.{k}"));
                }
                for a in actions {
                    action_values
                        .push(numbers.iter().map(|k| a.set.get(k).copied().unwrap_or(0.0)).collect());
                }
                true
            }
            (None, Some(controls)) => {
                if controls.is_empty() || controls.len() > MAX_CONTROLS {
                    bad(
                        problems,
                        "controls",
                        format!("needs 1 to {MAX_CONTROLS} components, got {}", controls.len()),
                    );
                }
                for (i, c) in controls.iter().enumerate() {
                    take(problems, &c.name, format!("controls[{i}].name"));
                    finite_range(problems, &format!("controls[{i}]"), c.low, c.high);
                    numbers.push(c.name.clone());
                }
                false
            }
        };
        if self.lets.len() > MAX_LETS {
            bad(problems, "let", format!("has {} entries; at most {MAX_LETS}", self.lets.len()));
        }
        for (i, l) in self.lets.iter().enumerate() {
            take(problems, &l.name, format!("let[{i}].name"));
        }
        if self.constants.len() > MAX_CONSTANTS {
            bad(
                problems,
                "constants",
                format!("has {} entries; at most {MAX_CONSTANTS}", self.constants.len()),
            );
        }
        for (k, v) in &self.constants {
            take(problems, k, format!("constants.{k}"));
            if !v.is_finite() {
                bad(problems, format!("constants.{k}"), format!("must be finite, got {v}"));
            }
        }
        let state_names: Vec<&str> = self.state.iter().map(|v| v.name.as_str()).collect();
        for v in &self.state {
            if !self.update.contains_key(&v.name) {
                bad(
                    problems,
                    format!("update.{}", v.name),
                    format!("missing: every state variable needs an update formula (to keep `{0}` as it is, write `{0}`)", v.name),
                );
            }
        }
        for k in self.update.keys() {
            if !state_names.contains(&k.as_str()) {
                let near = compile::closest(k, state_names.iter().copied());
                let hint = if near.is_empty() {
                    String::new()
                } else {
                    format!(" (did you mean {}?)", near.join(", "))
                };
                bad(
                    problems,
                    format!("update.{k}"),
                    format!("`{k}` is no state variable{hint}; state variables: {}", state_names.join(", ")),
                );
            }
        }
        if let Some(m) = crate::settings::check("task.formula.dt", self.dt) {
            bad(problems, "dt", m);
        }
        if let Some(m) = crate::settings::check_int("task.formula.substeps", u64::from(self.substeps)) {
            bad(problems, "substeps", m);
        }
        if let Some(m) = crate::settings::check_int("task.formula.max_steps", u64::from(self.max_steps)) {
            bad(problems, "max_steps", m);
        }
        if let Some(m) = crate::settings::check("task.formula.discount", self.discount) {
            bad(problems, "discount", m);
        }
        let n = self.state.len();
        (problems.len() == before).then_some(Names {
            layout: Layout { n, numbers: numbers.len(), lets: self.lets.len() },
            numbers,
            action_values,
            discrete,
        })
    }

    /// The names a formula of `role` may use.
    fn scope(&self, names: &Names, role: Role) -> Scope {
        let lay = names.layout;
        let mut out: Vec<NameInfo> = Vec::new();
        let mut add = |name: &str, binding: Binding, kind: &'static str, doc: String| {
            out.push(NameInfo { name: name.to_string(), binding, kind, doc });
        };
        for (i, v) in self.state.iter().enumerate() {
            let (binding, doc) = match role {
                Role::Terminal => (
                    Binding::Slot { now: lay.n + i, next: None },
                    "state variable: its value in the state the step arrives in".to_string(),
                ),
                Role::Reward => (
                    Binding::Slot { now: i, next: Some(lay.n + i) },
                    format!("state variable before the step; {}' after it", v.name),
                ),
                _ => (Binding::Slot { now: i, next: None }, "state variable (before the step)".to_string()),
            };
            add(&v.name, binding, "state", doc);
        }
        let dt = if matches!(role, Role::Let(_) | Role::Update) {
            self.dt / f64::from(self.substeps.max(1))
        } else {
            self.dt
        };
        if role != Role::Terminal {
            for (j, k) in names.numbers.iter().enumerate() {
                let slot = Binding::Slot { now: lay.action_numbers() + j, next: None };
                if names.discrete {
                    add(k, slot, "action", "a number the action taken sets (0 if it does not)".into());
                } else {
                    let c = &self.controls.as_ref().expect("continuous task has controls")[j];
                    add(k, slot, "action", format!("control, clipped into [{}, {}]", c.low, c.high));
                }
            }
            if let (true, Some(actions)) = (names.discrete, &self.actions) {
                add(
                    "action",
                    Binding::Slot { now: lay.action_index(), next: None },
                    "action",
                    format!("index of the action taken, 0 to {}", actions.len() - 1),
                );
                for (i, a) in actions.iter().enumerate() {
                    add(
                        &a.name,
                        Binding::Const(i as f64),
                        "action_name",
                        format!("{i}, the index of action {}", a.name),
                    );
                }
            }
            let visible = match role {
                Role::Let(i) => i,
                _ => self.lets.len(),
            };
            for (i, l) in self.lets.iter().enumerate().take(visible) {
                add(
                    &l.name,
                    Binding::Slot { now: lay.first_let() + i, next: None },
                    "let",
                    format!("let value {}", i + 1),
                );
            }
        }
        if role == Role::Reward {
            add(
                "terminal",
                Binding::Slot { now: lay.terminal(), next: None },
                "terminal",
                "1 if this step ended the episode in a terminal state, else 0".into(),
            );
        }
        let dt_doc = if matches!(role, Role::Let(_) | Role::Update) && self.substeps > 1 {
            format!("the integration step, dt / substeps = {dt}")
        } else {
            format!("the control step ({dt})")
        };
        add("dt", Binding::Const(dt), "number", dt_doc);
        add("pi", Binding::Const(std::f64::consts::PI), "number", "3.14159…".into());
        for (k, v) in &self.constants {
            add(k, Binding::Const(*v), "constant", format!("task constant ({v})"));
        }
        let no_next = if role == Role::Terminal { NO_NEXT_TERMINAL } else { NO_NEXT_DYNAMICS };
        Scope::custom(out, lay.len(), true, no_next)
    }

    /// Every formula field with its role.
    fn fields(&self) -> Vec<(String, &str, Role)> {
        let mut out = Vec::new();
        for (i, l) in self.lets.iter().enumerate() {
            out.push((format!("let[{i}].formula"), l.formula.as_str(), Role::Let(i)));
        }
        for v in &self.state {
            if let Some(f) = self.update.get(&v.name) {
                out.push((format!("update.{}", v.name), f.as_str(), Role::Update));
            }
        }
        if !self.terminal.trim().is_empty() {
            out.push(("terminal".into(), self.terminal.as_str(), Role::Terminal));
        }
        out.push(("reward".into(), self.reward.as_str(), Role::Reward));
        out
    }

    /// Checks the whole definition: every problem (each naming its field;
    /// a formula's message starts with its column), and each formula's
    /// check for an editor.
    pub fn check(&self) -> TaskCheck {
        let mut problems = Vec::new();
        let mut fields = Vec::new();
        if let Some(names) = self.check_names(&mut problems) {
            for (path, text, role) in self.fields() {
                let scope = self.scope(&names, role);
                let errors = compile_field(text, &scope).err().unwrap_or_default();
                for e in &errors {
                    problems.push(Problem::new(path.clone(), e.to_string()));
                }
                let reports = errors
                    .iter()
                    .map(|e| {
                        let (start, end) = e.utf16_span(text);
                        ErrorReport {
                            start,
                            end,
                            column: e.column,
                            message: e.message.clone(),
                            hint: e.hint.clone(),
                        }
                    })
                    .collect();
                let names = scope
                    .names()
                    .iter()
                    .map(|n| NameReport { name: n.name.clone(), kind: n.kind, doc: n.doc.clone() })
                    .collect();
                fields.push(FieldCheck { path, errors: reports, names });
            }
        }
        TaskCheck { ok: problems.is_empty(), problems, fields }
    }
}

fn compile_field(text: &str, scope: &Scope) -> Result<Program, Vec<crate::reward::FormulaError>> {
    if text.len() > MAX_FORMULA {
        return Err(vec![crate::reward::FormulaError::new(
            text,
            crate::reward::lex::Span::new(0, 0),
            format!("is {} bytes long; at most {MAX_FORMULA}", text.len()),
            "",
        )]);
    }
    let tree = parse::parse(text).map_err(|e| vec![e])?;
    compile::compile(text, &tree, scope)
}

/// A formula task, compiled.
#[derive(Clone, Debug)]
pub struct FormulaTask {
    spec: TaskSpec,
    layout: Layout,
    lets: Vec<Program>,
    updates: Vec<Program>,
    terminal: Option<Program>,
    reward: Program,
    start: Vec<Start>,
    clip: Vec<Option<(f64, f64)>>,
    action_values: Vec<Vec<f64>>,
    control_bounds: Vec<(f64, f64)>,
    substeps: u32,
    state: Vec<f64>,
    next: Vec<f64>,
    inputs: Vec<f64>,
    stack: Vec<f64>,
    fault: Option<String>,
}

impl FormulaTask {
    /// Compiles the task, or names the first bad setting (see
    /// [`FormulaTaskConfig::check`] for all of them).
    pub fn new(cfg: FormulaTaskConfig) -> Result<Self, TaskError> {
        let first = |p: Problem| TaskError::Invalid(p.path, p.message);
        let mut problems = Vec::new();
        let Some(names) = cfg.check_names(&mut problems) else {
            return Err(first(problems.swap_remove(0)));
        };
        let mut programs = Vec::new();
        for (path, text, role) in cfg.fields() {
            match compile_field(text, &cfg.scope(&names, role)) {
                Ok(p) => programs.push((role, p)),
                Err(e) => return Err(TaskError::Invalid(path, e[0].to_string())),
            }
        }
        let mut lets = Vec::new();
        let mut updates = Vec::new();
        let mut terminal = None;
        let mut reward = None;
        for (role, p) in programs {
            match role {
                Role::Let(_) => lets.push(p),
                Role::Update => updates.push(p),
                Role::Terminal => terminal = Some(p),
                Role::Reward => reward = Some(p),
            }
        }
        let stack = lets.iter().chain(&updates).chain(&terminal).chain(&reward).map(Program::stack_len).max();
        let actions = match (&cfg.actions, &cfg.controls) {
            (Some(a), _) => ActionSpace::Discrete(a.iter().map(|a| a.name.clone()).collect()),
            (None, Some(c)) => ActionSpace::Continuous {
                names: c.iter().map(|c| c.name.clone()).collect(),
                low: c.iter().map(|c| c.low).collect(),
                high: c.iter().map(|c| c.high).collect(),
            },
            (None, None) => unreachable!("checked: one of actions and controls"),
        };
        let spec = TaskSpec {
            kind: "formula",
            state_vars: cfg
                .state
                .iter()
                .map(|v| StateVar { name: v.name.clone(), low: v.low, high: v.high })
                .collect(),
            actions,
            n_states: None,
            default_discount: cfg.discount,
            max_steps: cfg.max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: names
                .numbers
                .iter()
                .enumerate()
                .filter(|_| names.discrete)
                .map(|(j, k)| (k.clone(), names.action_values.iter().map(|v| v[j]).collect()))
                .collect(),
        };
        let n = cfg.state.len();
        Ok(FormulaTask {
            spec,
            layout: names.layout,
            lets,
            updates,
            terminal,
            reward: reward.expect("the reward is always compiled"),
            start: cfg.state.iter().map(|v| v.start.clone()).collect(),
            clip: cfg.state.iter().map(|v| v.clip.then_some((v.low, v.high))).collect(),
            action_values: names.action_values,
            control_bounds: cfg.controls.iter().flatten().map(|c| (c.low, c.high)).collect(),
            substeps: cfg.substeps,
            state: vec![0.0; n],
            next: vec![0.0; n],
            inputs: vec![0.0; names.layout.len()],
            stack: vec![0.0; stack.unwrap_or(1)],
            fault: None,
        })
    }

    /// The current state.
    pub fn state(&self) -> &[f64] {
        &self.state
    }

    /// Places the system in a given state (for tests and rollouts).
    pub fn set_state(&mut self, s: &[f64]) {
        self.state.copy_from_slice(s);
    }

    fn fail(&mut self, message: String, obs: &mut [f64]) -> Step {
        self.fault = Some(message);
        obs.copy_from_slice(&self.state);
        Step { reward: f64::NAN, terminated: true }
    }
}

impl Task for FormulaTask {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]) {
        for (v, s) in self.state.iter_mut().zip(&self.start) {
            *v = match *s {
                Start::Fixed(x) => x,
                Start::Range([lo, hi]) => rng.uniform_in(lo, hi),
            };
        }
        obs.copy_from_slice(&self.state);
    }

    fn step(&mut self, action: Action<'_>, rng: &mut Stream, obs: &mut [f64]) -> Step {
        let lay = self.layout;
        let n = lay.n;
        match action {
            Action::Index(a) => {
                let values = &self.action_values[a.min(self.action_values.len() - 1)];
                self.inputs[lay.action_numbers()..lay.action_index()].copy_from_slice(values);
                self.inputs[lay.action_index()] = a as f64;
            }
            Action::Vector(v) => {
                for (j, &(lo, hi)) in self.control_bounds.iter().enumerate() {
                    self.inputs[lay.action_numbers() + j] =
                        compile::clamp(v.get(j).copied().unwrap_or(0.0), lo, hi);
                }
            }
        }
        self.inputs[..n].copy_from_slice(&self.state);
        for sub in 0..self.substeps {
            for (i, p) in self.lets.iter().enumerate() {
                self.inputs[lay.first_let() + i] = p.eval_with(&self.inputs, &mut self.stack, rng);
            }
            for (j, p) in self.updates.iter().enumerate() {
                self.next[j] = p.eval_with(&self.inputs, &mut self.stack, rng);
            }
            for j in 0..n {
                let x = self.next[j];
                if !x.is_finite() {
                    let name = &self.spec.state_vars[j].name;
                    let message = format!(
                        "state variable `{name}` became {x} (task.update.{name} gave a number that is not finite)"
                    );
                    return self.fail(message, obs);
                }
                if let Some((lo, hi)) = self.clip[j] {
                    self.next[j] = compile::clamp(x, lo, hi);
                }
            }
            // The next substep starts from here; after the last one the
            // reward reads the state before the step in these slots.
            if sub + 1 < self.substeps {
                self.inputs[..n].copy_from_slice(&self.next);
            }
        }
        self.inputs[..n].copy_from_slice(&self.state);
        self.inputs[n..2 * n].copy_from_slice(&self.next);
        let terminated = match &self.terminal {
            Some(p) => truth(p.eval_with(&self.inputs, &mut self.stack, rng)),
            None => false,
        };
        self.inputs[lay.terminal()] = if terminated { 1.0 } else { 0.0 };
        let reward = self.reward.eval_with(&self.inputs, &mut self.stack, rng);
        std::mem::swap(&mut self.state, &mut self.next);
        obs.copy_from_slice(&self.state);
        if !reward.is_finite() {
            self.fault =
                Some(format!("task.reward gave {reward}; check divisions, logarithms and square roots"));
        }
        Step { reward, terminated }
    }

    fn fault(&self) -> Option<String> {
        self.fault.clone()
    }
}
