//! The reward lab: reward formulas, shaping modes and the shaping audit.
//!
//! A config's `reward` object ([`RewardConfig`]) says what the learners are
//! trained on: the task's own reward (`"base"`), a formula that replaces it
//! (`"replace"`), a formula added to it as a bonus (`"bonus"`), or
//! potential-based shaping (`"potential"`), where the formula is a potential
//! Φ(s) and the learner gets `base + γΦ(s') − Φ(s)` with Φ = 0 at terminal
//! states (Ng, Harada & Russell 1999). The base reward is always recorded
//! beside the shaped one.
//!
//! The formula language is our own small expression language:
//! [`lex`] splits the text into tokens, [`parse`] builds a tree,
//! [`print`](mod@print) writes it back in canonical form, [`compile`] resolves names
//! against a task, folds constants and emits a compact stack program that
//! evaluates with no allocation. Errors carry the byte span, the column and
//! a hint (an unknown name lists the closest known names). A [`Shaper`] is
//! what the runner calls once per step. [`audit`] compares optimal policies
//! under the base and the shaped reward on finite tasks, and computes the
//! reward-hacking signal of a run.

pub mod audit;
pub mod compile;
pub mod lex;
pub mod parse;
pub mod print;

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::task::{Action, TaskSpec};
use compile::{Program, Scope, Uses};
use lex::Span;

/// Most user constants in one reward.
pub const MAX_CONSTANTS: usize = 32;

/// A problem in a formula: where (byte span and 1-based character column),
/// what, and a hint.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct FormulaError {
    /// First byte of the offending text.
    pub start: usize,
    /// One past its last byte.
    pub end: usize,
    /// 1-based column (in characters) of `start`.
    pub column: usize,
    /// What is wrong.
    pub message: String,
    /// What to do about it (may be empty).
    pub hint: String,
}

impl FormulaError {
    /// An error at `span` of `text`.
    pub fn new(text: &str, span: Span, message: String, hint: &str) -> Self {
        let start = span.start.min(text.len());
        let column = text.get(..start).map_or(start, |s| s.chars().count()) + 1;
        FormulaError { start, end: span.end.max(start), column, message, hint: hint.to_string() }
    }

    /// The span in UTF-16 code units (how JavaScript strings count), for
    /// marking the text in an editor.
    pub fn utf16_span(&self, text: &str) -> (usize, usize) {
        let count = |b: usize| text.get(..b.min(text.len())).map_or(0, |s| s.encode_utf16().count());
        (count(self.start), count(self.end))
    }
}

impl std::fmt::Display for FormulaError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "column {}: {}", self.column, self.message)?;
        if !self.hint.is_empty() {
            write!(f, " ({})", self.hint)?;
        }
        Ok(())
    }
}

impl std::error::Error for FormulaError {}

/// How the formula changes the reward.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Mode {
    /// The task's own reward; no formula.
    #[default]
    Base,
    /// The formula's value is the reward.
    Replace,
    /// The reward is `base + formula`.
    Bonus,
    /// The formula is a potential Φ(s) of the current state only; the reward
    /// is `base + γΦ(s') − Φ(s)`, with Φ(s') = 0 when s' is terminal.
    Potential,
}

impl Mode {
    /// The mode's name in configs.
    pub fn name(self) -> &'static str {
        match self {
            Mode::Base => "base",
            Mode::Replace => "replace",
            Mode::Bonus => "bonus",
            Mode::Potential => "potential",
        }
    }
}

/// The `reward` object of a config (and of a variant, which replaces it whole).
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RewardConfig {
    /// `"base"`, `"replace"`, `"bonus"` or `"potential"`. Default `"base"`.
    #[serde(default)]
    pub mode: Mode,
    /// The formula (at most 4096 bytes); empty in mode `"base"`, required otherwise.
    #[serde(default)]
    pub formula: String,
    /// Named numbers the formula may use (at most 32; names of letters,
    /// digits and `_` that do not clash with the task's names; finite values).
    /// Default none.
    #[serde(default)]
    pub constants: BTreeMap<String, f64>,
}

/// A problem in a reward config: the path (relative to the `reward`
/// object: `mode`, `formula`, `constants.k`) and what is wrong.
pub type RewardProblem = crate::problem::Problem;

/// Why a potential may only read the current state.
const POTENTIAL_ONLY_STATE: &str =
    "a potential Φ(s) reads the current state only (critbox evaluates it at s and at s' for you)";

impl RewardConfig {
    /// The reward of the task itself.
    pub fn base() -> Self {
        RewardConfig::default()
    }

    fn constant_list(&self) -> Vec<(String, f64)> {
        self.constants.iter().map(|(k, v)| (k.clone(), *v)).collect()
    }

    /// The names the formula may use on a task, with the learner's discount.
    pub fn scope(&self, spec: &TaskSpec, gamma: f64) -> Scope {
        let s = Scope::new(spec, gamma, &self.constant_list());
        if self.mode == Mode::Potential {
            s.state_only(POTENTIAL_ONLY_STATE)
        } else {
            s
        }
    }

    /// Problems with the constants (names and values).
    pub fn constant_problems(&self, spec: &TaskSpec) -> Vec<RewardProblem> {
        let mut out = Vec::new();
        if self.constants.len() > MAX_CONSTANTS {
            out.push(RewardProblem {
                path: "constants".into(),
                message: format!("has {} entries; at most {MAX_CONSTANTS} are allowed", self.constants.len()),
            });
        }
        for (name, v) in &self.constants {
            let field = format!("constants.{name}");
            if !compile::is_identifier(name) || name.len() > 40 {
                out.push(RewardProblem {
                    path: field,
                    message: "a constant's name needs 1 to 40 letters, digits or `_`, must not start with a \
                              digit and must not be a keyword (if then else and or not)"
                        .into(),
                });
            } else if let Some(what) = Scope::clash(spec, name) {
                out.push(RewardProblem {
                    path: field,
                    message: format!("the name is already taken by {what}; choose another"),
                });
            } else if !v.is_finite() {
                out.push(RewardProblem { path: field, message: format!("must be a finite number, got {v}") });
            }
        }
        out
    }

    /// Errors in the formula alone (for live checking in an editor);
    /// empty when it compiles. In mode `"base"` any text is an error.
    pub fn formula_errors(&self, spec: &TaskSpec, gamma: f64) -> Vec<FormulaError> {
        match self.compile(spec, gamma) {
            Ok(_) => Vec::new(),
            Err(e) => e,
        }
    }

    /// Compiles the formula (`None` in mode `"base"`).
    pub fn compile(&self, spec: &TaskSpec, gamma: f64) -> Result<Option<Program>, Vec<FormulaError>> {
        let text = self.formula.as_str();
        if self.mode == Mode::Base {
            if text.trim().is_empty() {
                return Ok(None);
            }
            return Err(vec![FormulaError::new(
                text,
                Span::new(0, text.len()),
                "mode \"base\" uses the task's own reward, so the formula would be ignored".into(),
                "set mode to \"replace\", \"bonus\" or \"potential\", or clear the formula",
            )]);
        }
        let tree = parse::parse(text).map_err(|e| vec![e])?;
        compile::compile(text, &tree, &self.scope(spec, gamma)).map(Some)
    }

    /// Every problem, each naming its field.
    pub fn check(&self, spec: &TaskSpec, gamma: f64) -> Vec<RewardProblem> {
        let mut out = self.constant_problems(spec);
        if !out.is_empty() {
            return out;
        }
        for e in self.formula_errors(spec, gamma) {
            out.push(RewardProblem { path: "formula".into(), message: e.to_string() });
        }
        out
    }

    /// The formula in canonical form (empty in mode `"base"` or when it does not parse).
    pub fn pretty(&self) -> String {
        if self.mode == Mode::Base {
            return String::new();
        }
        parse::parse(&self.formula).map(|e| print::pretty(&e)).unwrap_or_default()
    }

    /// Whether the shaping keeps the optimal policies by construction
    /// (the base reward itself, or potential-based shaping).
    pub fn potential_based(&self) -> bool {
        matches!(self.mode, Mode::Base | Mode::Potential)
    }
}

/// The live check of a formula for an editor, as [`check_report`] returns it.
#[derive(Clone, Debug, Serialize)]
pub struct FormulaCheck {
    /// Whether the formula compiles with the reward's constants.
    pub ok: bool,
    /// Every problem found, in order.
    pub errors: Vec<ErrorReport>,
    /// The canonical text (`null` unless ok, and in mode `base`).
    pub pretty: Option<String>,
    /// Which inputs the formula reads (`null` unless ok).
    pub uses: Option<UsesReport>,
    /// The names the formula may use.
    pub names: Vec<NameReport>,
}

/// One problem of a checked formula; `start`/`end` count UTF-16 code units.
#[derive(Clone, Debug, Serialize)]
pub struct ErrorReport {
    /// First code unit of the problem.
    pub start: usize,
    /// One past its last code unit.
    pub end: usize,
    /// Its column (1-based).
    pub column: usize,
    /// What is wrong.
    pub message: String,
    /// How to fix it (may be empty).
    pub hint: String,
}

/// Which inputs a formula reads, as printed (`t` is the step index).
#[derive(Clone, Copy, Debug, Serialize)]
pub struct UsesReport {
    /// A current-state variable.
    pub state: bool,
    /// A next-state variable.
    pub next: bool,
    /// The action.
    pub action: bool,
    /// The base reward.
    pub base: bool,
    /// The termination flag.
    pub terminal: bool,
    /// The step index.
    pub t: bool,
}

/// One name a formula may use: its kind and one line of help.
#[derive(Clone, Debug, Serialize)]
pub struct NameReport {
    /// The name.
    pub name: String,
    /// Its kind (see `compile::NameInfo::kind`).
    pub kind: &'static str,
    /// One line of help.
    pub doc: String,
}

/// The live check of a formula for an editor: `text` is checked as the
/// formula of `reward` (whose own `formula` is ignored) on a task. Returns
/// JSON `{ok, errors: [{start, end, column, message, hint}], pretty, uses,
/// names: [{name, kind, doc}]}` ([`FormulaCheck`]) where `start`/`end` count
/// UTF-16 code units (JavaScript string positions), `pretty` is the
/// canonical text (null unless ok) and `uses` says which inputs the formula
/// reads. Problems with the constants are errors at position 0 whose message
/// starts with `constants.NAME:`.
pub fn check_report(text: &str, spec: &TaskSpec, reward: &RewardConfig) -> serde_json::Value {
    crate::report::to_value(&check_formula(text, spec, reward))
}

/// [`check_report`] as its typed report.
pub fn check_formula(text: &str, spec: &TaskSpec, reward: &RewardConfig) -> FormulaCheck {
    let cfg = RewardConfig { formula: text.to_string(), ..reward.clone() };
    let mut errors = Vec::new();
    for p in cfg.constant_problems(spec) {
        errors.push(ErrorReport { start: 0, end: 0, column: 1, message: p.to_string(), hint: String::new() });
    }
    let mut pretty = None;
    let mut uses = None;
    if errors.is_empty() {
        match cfg.compile(spec, spec.default_discount) {
            Ok(program) => {
                if cfg.mode != Mode::Base {
                    pretty = Some(cfg.pretty());
                }
                let u = program.as_ref().map(Program::uses).unwrap_or_default();
                uses = Some(UsesReport {
                    state: u.state,
                    next: u.next,
                    action: u.action,
                    base: u.base,
                    terminal: u.terminal,
                    t: u.step,
                });
            }
            Err(errs) => {
                for e in errs {
                    let (start, end) = e.utf16_span(text);
                    errors.push(ErrorReport {
                        start,
                        end,
                        column: e.column,
                        message: e.message,
                        hint: e.hint,
                    });
                }
            }
        }
    }
    let names = cfg
        .scope(spec, spec.default_discount)
        .names()
        .iter()
        .filter(|n| {
            cfg.mode != Mode::Potential
                || !matches!(n.binding, compile::Binding::Input(_) | compile::Binding::PerAction(_))
        })
        .map(|n| NameReport { name: n.name.clone(), kind: n.kind, doc: n.doc.clone() })
        .collect();
    FormulaCheck { ok: errors.is_empty(), errors, pretty, uses, names }
}

/// What a shaper needs to know about one step.
#[derive(Clone, Copy, Debug)]
pub struct StepInput<'a> {
    /// The state's variables.
    pub obs: &'a [f64],
    /// The action taken.
    pub action: Action<'a>,
    /// The next state's variables.
    pub next: &'a [f64],
    /// The task's own reward.
    pub base: f64,
    /// Whether the next state is terminal.
    pub terminal: bool,
    /// Index of the step in the episode (in a continuing task, since the
    /// start of the run), from 0.
    pub t: u64,
}

/// A compiled reward, ready to be called once per step without allocating.
#[derive(Clone, Debug)]
pub struct Shaper {
    mode: Mode,
    program: Option<Program>,
    gamma: f64,
    n_state: usize,
    n_action: usize,
    inputs: Vec<f64>,
    stack: Vec<f64>,
}

impl Shaper {
    /// Compiles a reward for a task and a learner's discount γ; the problems
    /// name their field as [`RewardConfig::check`] does.
    pub fn new(cfg: &RewardConfig, spec: &TaskSpec, gamma: f64) -> Result<Shaper, Vec<RewardProblem>> {
        let problems = cfg.check(spec, gamma);
        if !problems.is_empty() {
            return Err(problems);
        }
        let program = cfg.compile(spec, gamma).map_err(|errs| {
            errs.into_iter()
                .map(|e| RewardProblem { path: "formula".into(), message: e.to_string() })
                .collect::<Vec<_>>()
        })?;
        let scope = cfg.scope(spec, gamma);
        let stack = vec![0.0; program.as_ref().map_or(0, Program::stack_len)];
        Ok(Shaper {
            mode: cfg.mode,
            program,
            gamma,
            n_state: scope.n_state(),
            n_action: scope.n_action(),
            inputs: vec![0.0; scope.input_len()],
            stack,
        })
    }

    /// The mode.
    pub fn mode(&self) -> Mode {
        self.mode
    }

    /// Which inputs the formula reads (nothing in mode `"base"`).
    pub fn uses(&self) -> Uses {
        self.program.as_ref().map(Program::uses).unwrap_or_default()
    }

    /// The potential Φ at a state (0 unless the mode is `"potential"`).
    pub fn potential(&mut self, obs: &[f64]) -> f64 {
        let Some(p) = self.program.as_ref().filter(|_| self.mode == Mode::Potential) else {
            return 0.0;
        };
        self.inputs[..self.n_state].copy_from_slice(&obs[..self.n_state]);
        p.eval(&self.inputs, &mut self.stack)
    }

    /// The reward the learner is trained on for one step.
    pub fn reward(&mut self, s: &StepInput<'_>) -> f64 {
        let n = self.n_state;
        match self.mode {
            Mode::Base => s.base,
            Mode::Potential => {
                let after = if s.terminal { 0.0 } else { self.potential(s.next) };
                let before = self.potential(s.obs);
                s.base + self.gamma * after - before
            }
            Mode::Replace | Mode::Bonus => {
                let Some(p) = self.program.as_ref() else { return s.base };
                let inp = &mut self.inputs;
                inp[..n].copy_from_slice(&s.obs[..n]);
                inp[n..2 * n].copy_from_slice(&s.next[..n]);
                let k = self.n_action;
                match s.action {
                    Action::Index(i) => inp[2 * n] = i as f64,
                    Action::Vector(v) => {
                        let m = v.len().min(k);
                        inp[2 * n..2 * n + m].copy_from_slice(&v[..m]);
                    }
                }
                inp[2 * n + k] = s.base;
                inp[2 * n + k + 1] = if s.terminal { 1.0 } else { 0.0 };
                inp[2 * n + k + 2] = s.t as f64;
                let v = p.eval(inp, &mut self.stack);
                if self.mode == Mode::Bonus {
                    s.base + v
                } else {
                    v
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::task::{ActionSpace, StateVar};

    /// A small grid-like spec shared by the reward module's tests.
    pub(super) fn spec() -> TaskSpec {
        TaskSpec {
            kind: "grid",
            state_vars: vec![
                StateVar { name: "row".into(), low: 0.0, high: 5.0 },
                StateVar { name: "col".into(), low: 0.0, high: 9.0 },
            ],
            actions: ActionSpace::Discrete(vec![
                "north".into(),
                "east".into(),
                "south".into(),
                "west".into(),
            ]),
            n_states: Some(60),
            default_discount: 0.9,
            max_steps: 100,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        }
    }

    fn cfg(mode: Mode, formula: &str) -> RewardConfig {
        RewardConfig { mode, formula: formula.into(), constants: BTreeMap::from([("k".into(), 0.5)]) }
    }

    #[test]
    fn modes_combine_base_and_formula() {
        let step = StepInput {
            obs: &[1.0, 2.0],
            action: Action::Index(1),
            next: &[1.0, 3.0],
            base: -1.0,
            terminal: false,
            t: 4,
        };
        let spec = spec();
        let mut s = Shaper::new(&cfg(Mode::Bonus, "k * (col' - col)"), &spec, 0.9).unwrap();
        assert_eq!(s.reward(&step), -1.0 + 0.5);
        let mut s = Shaper::new(&cfg(Mode::Replace, "t + action"), &spec, 0.9).unwrap();
        assert_eq!(s.reward(&step), 5.0);
        // Potential-based shaping, F = γΦ(s') − Φ(s) (Ng, Harada & Russell 1999).
        let mut s = Shaper::new(&cfg(Mode::Potential, "-k * col"), &spec, 0.9).unwrap();
        assert_eq!(s.reward(&step), -1.0 + 0.9 * (-1.5) - (-1.0));
        // Φ = 0 at a terminal next state.
        assert_eq!(s.reward(&StepInput { terminal: true, ..step }), -1.0 - (-1.0));
        let mut s = Shaper::new(&RewardConfig::base(), &spec, 0.9).unwrap();
        assert_eq!(s.reward(&step), -1.0);
    }

    #[test]
    fn problems_name_the_field() {
        let spec = spec();
        let p = cfg(Mode::Potential, "row' - row").check(&spec, 0.9);
        assert_eq!(p.len(), 1);
        assert_eq!(p[0].path, "formula");
        assert!(p[0].message.starts_with("column 1: `row'` cannot be used here"), "{}", p[0].message);
        let p = cfg(Mode::Bonus, "").check(&spec, 0.9);
        assert!(p[0].message.contains("empty"));
        let p = cfg(Mode::Base, "row").check(&spec, 0.9);
        assert!(p[0].message.contains("would be ignored"));
        let mut c = cfg(Mode::Bonus, "1");
        c.constants.insert("row".into(), 1.0);
        c.constants.insert("2x".into(), 1.0);
        c.constants.insert("big".into(), f64::INFINITY);
        let p = c.check(&spec, 0.9);
        let fields: Vec<&str> = p.iter().map(|x| x.path.as_str()).collect();
        assert_eq!(fields, ["constants.2x", "constants.big", "constants.row"]);
        assert!(p[2].message.contains("the state variable `row`"));
    }

    #[test]
    fn utf16_spans_count_like_javascript() {
        let text = "θ + rwo";
        let e = cfg(Mode::Bonus, text).formula_errors(&spec(), 0.9);
        assert_eq!(e.len(), 1);
        assert_eq!(e[0].column, 1);
        assert_eq!(e[0].utf16_span(text), (0, 1));
        let text = "row + rwo";
        let e = cfg(Mode::Bonus, text).formula_errors(&spec(), 0.9);
        assert_eq!((e.len(), e[0].column, e[0].utf16_span(text)), (1, 7, (6, 9)));
    }
}
