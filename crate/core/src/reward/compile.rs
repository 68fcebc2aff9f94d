//! Name resolution, constant folding and the compact evaluator of reward formulas.
//!
//! A [`Scope`] lists the names a formula may use on a task (state variables,
//! their next-state values, the action, the base reward, `terminal`, the step
//! index `t`, `gamma`, `pi`, the names of discrete actions and the user's
//! constants) and maps each to a slot of a flat input vector. [`compile`]
//! resolves a parsed tree in a scope, folds every sub-expression that uses no
//! input into a number, and emits a [`Program`]: a short list of stack
//! operations. [`Program::eval`] runs it over the input slots with a stack
//! buffer sized once by the caller ([`Program::stack_len`]), so evaluating
//! allocates nothing.
//!
//! Semantics: arithmetic is IEEE `f64` (a division by zero gives ±∞ or NaN;
//! the runner stops a job whose reward is not finite). Comparisons, `and`,
//! `or` and `not` give 1 or 0; a condition is true when it is neither 0 nor
//! NaN. `min` and `max` take two or more arguments and skip NaN;
//! `clamp(x, lo, hi)` is `min(max(x, lo), hi)`. `log` is the natural
//! logarithm; `exp`, `log`, `sin`, `cos`, `tanh` and `^` come from `libm`, so
//! native and WebAssembly builds agree bit for bit. `mod(a, b)` is the
//! remainder with the sign of `b` (`a % b`, plus `b` when the two signs
//! differ; exact, as IEEE `fmod` is); `wrap(x, low, high)` is
//! `low + mod(x − low, high − low)`. `noise()` and `uniform()` draw a
//! standard normal and a uniform [0, 1) number from the caller's stream:
//! only scopes that allow draws (a task's own formulas) accept them, and
//! [`Program::eval_with`] runs such a program.

use super::lex::Span;
use super::parse::{BinOp, Expr, ExprKind, UnOp};
use super::FormulaError;
use crate::task::{ActionSpace, TaskSpec};

/// The built-in functions.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Func {
    /// `abs(x)`
    Abs,
    /// `sqrt(x)`
    Sqrt,
    /// `exp(x)`
    Exp,
    /// `log(x)`, natural logarithm
    Log,
    /// `sin(x)`
    Sin,
    /// `cos(x)`
    Cos,
    /// `tanh(x)`
    Tanh,
    /// `min(a, b, …)`
    Min,
    /// `max(a, b, …)`
    Max,
    /// `clamp(x, lo, hi)`
    Clamp,
    /// `mod(a, b)`, the remainder with the sign of `b`
    Mod,
    /// `wrap(x, low, high)`, `x` wrapped into `[low, high)`
    Wrap,
    /// `noise()`, a standard normal draw
    Noise,
    /// `uniform()`, a uniform draw from [0, 1)
    Uniform,
}

/// Every function with its name and what it takes.
pub const FUNCTIONS: [(&str, Func, &str); 14] = [
    ("abs", Func::Abs, "abs(x)"),
    ("sqrt", Func::Sqrt, "sqrt(x)"),
    ("exp", Func::Exp, "exp(x)"),
    ("log", Func::Log, "log(x), the natural logarithm"),
    ("sin", Func::Sin, "sin(x)"),
    ("cos", Func::Cos, "cos(x)"),
    ("tanh", Func::Tanh, "tanh(x)"),
    ("min", Func::Min, "min(a, b, ...), two or more arguments"),
    ("max", Func::Max, "max(a, b, ...), two or more arguments"),
    ("clamp", Func::Clamp, "clamp(x, low, high)"),
    ("mod", Func::Mod, "mod(a, b), the remainder with the sign of b"),
    ("wrap", Func::Wrap, "wrap(x, low, high), x wrapped into [low, high)"),
    ("noise", Func::Noise, "noise(), a standard normal draw (task formulas only)"),
    ("uniform", Func::Uniform, "uniform(), a uniform draw from [0, 1) (task formulas only)"),
];

impl Func {
    /// How many arguments it takes: exactly `(n, n)`, or `(2, usize::MAX)`.
    pub fn arity(self) -> (usize, usize) {
        match self {
            Func::Min | Func::Max => (2, usize::MAX),
            Func::Mod => (2, 2),
            Func::Clamp | Func::Wrap => (3, 3),
            Func::Noise | Func::Uniform => (0, 0),
            _ => (1, 1),
        }
    }

    /// Whether it draws a random number.
    pub fn draws(self) -> bool {
        matches!(self, Func::Noise | Func::Uniform)
    }
}

/// `mod(a, b)`: the remainder of `a / b` with the sign of `b` (NaN for `b = 0`).
pub fn modulo(a: f64, b: f64) -> f64 {
    let r = a % b;
    if r != 0.0 && (r < 0.0) != (b < 0.0) {
        r + b
    } else {
        r
    }
}

/// `wrap(x, low, high) = low + mod(x − low, high − low)`.
pub fn wrap(x: f64, low: f64, high: f64) -> f64 {
    low + modulo(x - low, high - low)
}

impl Func {
    /// Applies a one-argument function.
    #[inline]
    pub fn apply1(self, x: f64) -> f64 {
        match self {
            Func::Abs => x.abs(),
            Func::Sqrt => x.sqrt(),
            Func::Exp => libm::exp(x),
            Func::Log => libm::log(x),
            Func::Sin => libm::sin(x),
            Func::Cos => libm::cos(x),
            Func::Tanh => libm::tanh(x),
            _ => unreachable!("{self:?} does not take one argument"),
        }
    }
}

/// `clamp(x, lo, hi) = min(max(x, lo), hi)` (never panics, unlike `f64::clamp`).
pub fn clamp(x: f64, lo: f64, hi: f64) -> f64 {
    x.max(lo).min(hi)
}

/// Whether a value counts as true: neither 0 nor NaN.
pub fn truth(x: f64) -> bool {
    x != 0.0 && !x.is_nan()
}

fn bool_num(b: bool) -> f64 {
    if b {
        1.0
    } else {
        0.0
    }
}

/// Applies a binary operator.
pub fn apply_bin(op: BinOp, a: f64, b: f64) -> f64 {
    match op {
        BinOp::Add => a + b,
        BinOp::Sub => a - b,
        BinOp::Mul => a * b,
        BinOp::Div => a / b,
        BinOp::Pow => libm::pow(a, b),
        BinOp::Lt => bool_num(a < b),
        BinOp::Le => bool_num(a <= b),
        BinOp::Gt => bool_num(a > b),
        BinOp::Ge => bool_num(a >= b),
        BinOp::Eq => bool_num(a == b),
        BinOp::Ne => bool_num(a != b),
        BinOp::And => bool_num(truth(a) && truth(b)),
        BinOp::Or => bool_num(truth(a) || truth(b)),
    }
}

/// Applies a unary operator.
pub fn apply_un(op: UnOp, a: f64) -> f64 {
    match op {
        UnOp::Neg => -a,
        UnOp::Not => bool_num(!truth(a)),
    }
}

/// What a name in a scope stands for.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Binding {
    /// State variable `i` (current state at slot `i`, next state at slot `n + i`).
    State(usize),
    /// An input slot that is not a state variable (action, base, terminal, t).
    Input(usize),
    /// A fixed number (gamma, pi, an action's index, a user constant).
    Const(f64),
    /// A number a discrete action sets (entry `k` of the scope's table of
    /// per-action values): the value of the action taken.
    PerAction(usize),
    /// A variable of a custom scope ([`Scope::custom`]): its slot, and the
    /// slot of its next-state value when the scope has one.
    Slot {
        /// Slot of the plain name.
        now: usize,
        /// Slot of the primed name, if the scope offers it.
        next: Option<usize>,
    },
}

/// One name of a scope.
#[derive(Clone, Debug, PartialEq)]
pub struct NameInfo {
    /// The name.
    pub name: String,
    /// What it stands for.
    pub binding: Binding,
    /// Its kind, for listings: `state`, `action`, `base`, `terminal`, `step`,
    /// `discount`, `number`, `action_name`, `constant`.
    pub kind: &'static str,
    /// One line of help.
    pub doc: String,
}

/// The names a formula may use, and the layout of the input slots.
///
/// Slots: `[0, n)` the state variables, `[n, 2n)` their next-state values,
/// `[2n, 2n + k)` the action (its index, or its `k` components),
/// then the base reward, `terminal` (1 or 0) and the step index `t`.
#[derive(Clone, Debug, PartialEq)]
pub struct Scope {
    names: Vec<NameInfo>,
    n_state: usize,
    n_action: usize,
    /// Only state variables (a potential Φ(s)): inputs other than the
    /// current state are refused with this message.
    state_only: Option<&'static str>,
    /// A custom scope's number of input slots (`None`: the task layout above).
    custom_inputs: Option<usize>,
    /// Whether `noise()` and `uniform()` are allowed.
    draws: bool,
    /// Why primed names are refused in a custom scope.
    no_next: String,
    /// Values per action index of the [`Binding::PerAction`] names.
    per_action: Vec<Vec<f64>>,
}

/// Names the language itself reserves.
pub const KEYWORDS: [&str; 6] = ["if", "then", "else", "and", "or", "not"];

/// Whether `s` is a valid name (letters, digits, `_`, not starting with a digit, not a keyword).
pub fn is_identifier(s: &str) -> bool {
    let mut chars = s.chars();
    matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_')
        && !KEYWORDS.contains(&s)
}

impl Scope {
    /// The names of a task. `gamma` is the learner's discount; `constants`
    /// are the user's (checked by the caller not to clash, see [`Scope::clash`]).
    pub fn new(spec: &TaskSpec, gamma: f64, constants: &[(String, f64)]) -> Self {
        let n = spec.state_vars.len();
        let mut names: Vec<NameInfo> = Vec::new();
        let add = |names: &mut Vec<NameInfo>, name: &str, binding, kind, doc: String| {
            if !names.iter().any(|x| x.name == name) && is_identifier(name) {
                names.push(NameInfo { name: name.into(), binding, kind, doc });
            }
        };
        for (i, v) in spec.state_vars.iter().enumerate() {
            add(
                &mut names,
                &v.name,
                Binding::State(i),
                "state",
                format!(
                    "state variable (typical range {} to {}); {}' is its next-state value",
                    v.low, v.high, v.name
                ),
            );
        }
        let k = match &spec.actions {
            ActionSpace::Discrete(_) => 1,
            ActionSpace::Continuous { names, .. } => names.len().max(1),
        };
        let action_doc = match &spec.actions {
            ActionSpace::Discrete(a) => {
                format!("index of the action taken, 0 to {}", a.len().saturating_sub(1))
            }
            ActionSpace::Continuous { names: c, .. } => {
                format!("the action taken (its first component, {})", c.first().map_or("", |s| s.as_str()))
            }
        };
        add(&mut names, "action", Binding::Input(2 * n), "action", action_doc);
        add(
            &mut names,
            "base",
            Binding::Input(2 * n + k),
            "base",
            "the task's own reward for this step".into(),
        );
        add(
            &mut names,
            "terminal",
            Binding::Input(2 * n + k + 1),
            "terminal",
            "1 if this step ended the episode in a terminal state, else 0".into(),
        );
        add(
            &mut names,
            "t",
            Binding::Input(2 * n + k + 2),
            "step",
            "index of this step in the episode (in a continuing task, since the run's start), from 0".into(),
        );
        add(
            &mut names,
            "gamma",
            Binding::Const(gamma),
            "discount",
            format!("the learner's discount ({gamma})"),
        );
        add(&mut names, "pi", Binding::Const(std::f64::consts::PI), "number", "3.14159…".into());
        match &spec.actions {
            ActionSpace::Discrete(a) => {
                for (i, name) in a.iter().enumerate() {
                    add(
                        &mut names,
                        name,
                        Binding::Const(i as f64),
                        "action_name",
                        format!("{i}, the index of action {name} (compare: action == {name})"),
                    );
                }
            }
            ActionSpace::Continuous { names: c, low, high } => {
                for (i, name) in c.iter().enumerate() {
                    add(
                        &mut names,
                        name,
                        Binding::Input(2 * n + i),
                        "action",
                        format!("action component, from {} to {}", low[i], high[i]),
                    );
                }
            }
        }
        let mut per_action = Vec::new();
        for (name, values) in &spec.action_numbers {
            if !names.iter().any(|x| x.name == *name) && is_identifier(name) {
                let shown: Vec<String> = values.iter().map(|v| v.to_string()).collect();
                names.push(NameInfo {
                    name: name.clone(),
                    binding: Binding::PerAction(per_action.len()),
                    kind: "action",
                    doc: format!("the number the action taken sets ({} by action index)", shown.join(", ")),
                });
                per_action.push(values.clone());
            }
        }
        for (i, name) in spec.state_names.iter().enumerate() {
            add(
                &mut names,
                name,
                Binding::Const(i as f64),
                "state_name",
                format!("{i}, the index of state {name} (compare: state == {name})"),
            );
        }
        for (name, v) in constants {
            add(&mut names, name, Binding::Const(*v), "constant", format!("your constant ({v})"));
        }
        Scope {
            names,
            n_state: n,
            n_action: k,
            state_only: None,
            custom_inputs: None,
            draws: false,
            no_next: String::new(),
            per_action,
        }
    }

    /// A scope of the caller's own names and slot layout (a task's own
    /// formulas): names bound to [`Binding::Slot`] or [`Binding::Const`];
    /// `inputs` is the length of the input vector. `no_next` says why a
    /// primed name of a variable without a next slot is refused.
    pub fn custom(names: Vec<NameInfo>, inputs: usize, draws: bool, no_next: &str) -> Self {
        Scope {
            names,
            n_state: 0,
            n_action: 0,
            state_only: None,
            custom_inputs: Some(inputs),
            draws,
            no_next: no_next.into(),
            per_action: Vec::new(),
        }
    }

    /// The same names, restricted to the current state (for a potential Φ(s)).
    pub fn state_only(mut self, why: &'static str) -> Self {
        self.state_only = Some(why);
        self
    }

    /// Which name of the task (not a user constant) `name` clashes with, if any.
    pub fn clash(spec: &TaskSpec, name: &str) -> Option<String> {
        let base = Scope::new(spec, 1.0, &[]);
        base.names.iter().find(|x| x.name == name).map(|x| format!("{} `{}`", kind_words(x.kind), x.name))
    }

    /// Every name, in a stable order.
    pub fn names(&self) -> &[NameInfo] {
        &self.names
    }

    /// Number of input slots a program of this scope reads.
    pub fn input_len(&self) -> usize {
        self.custom_inputs.unwrap_or(2 * self.n_state + self.n_action + 3)
    }

    /// Number of state variables.
    pub fn n_state(&self) -> usize {
        self.n_state
    }

    /// Number of action slots (1 for a discrete action).
    pub fn n_action(&self) -> usize {
        self.n_action
    }

    fn lookup(&self, name: &str) -> Option<&NameInfo> {
        self.names.iter().find(|x| x.name == name)
    }
}

fn kind_words(kind: &str) -> &'static str {
    match kind {
        "state" => "the state variable",
        "action" => "the action",
        "base" => "the base reward",
        "terminal" => "the termination flag",
        "step" => "the step index",
        "discount" => "the discount",
        "number" => "the number",
        "action_name" => "the action name",
        "state_name" => "the state name",
        _ => "the constant",
    }
}

/// Edit distance with adjacent transpositions (optimal string alignment).
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let (n, m) = (a.len(), b.len());
    let mut d = vec![vec![0usize; m + 1]; n + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for j in 0..=m {
        d[0][j] = j;
    }
    for i in 1..=n {
        for j in 1..=m {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            d[i][j] = (d[i - 1][j] + 1).min(d[i][j - 1] + 1).min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                d[i][j] = d[i][j].min(d[i - 2][j - 2] + 1);
            }
        }
    }
    d[n][m]
}

/// Up to three candidates closest to `name`: within an edit distance of
/// about a third of its length (at least 1), ignoring case, or one a prefix
/// of the other (two letters at least); nearest first.
pub fn closest<'a>(name: &str, candidates: impl Iterator<Item = &'a str>) -> Vec<&'a str> {
    let lower = name.to_ascii_lowercase();
    let limit = name.chars().count().div_ceil(3).max(1);
    let mut scored: Vec<(usize, &str)> = candidates
        .filter_map(|c| {
            let cl = c.to_ascii_lowercase();
            let d = edit_distance(&lower, &cl);
            let prefix = lower.len().min(cl.len()) >= 2 && (cl.starts_with(&lower) || lower.starts_with(&cl));
            (d <= limit || prefix).then_some((if prefix { d.min(1) } else { d }, c))
        })
        .collect();
    scored.sort();
    scored.dedup_by(|a, b| a.1 == b.1);
    scored.into_iter().take(3).map(|(_, c)| c).collect()
}

fn list(names: &[&str]) -> String {
    names.iter().map(|n| n.to_string()).collect::<Vec<_>>().join(", ")
}

/// Which inputs a program reads.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Uses {
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
    /// The step index `t`.
    pub step: bool,
}

/// One operation of a compiled program. The four arithmetic operators have
/// operations of their own in each of the three operand forms, so the
/// evaluator dispatches once for them (most of a physics formula); the other
/// binary operators go through [`apply_bin`].
#[derive(Clone, Copy, Debug, PartialEq)]
enum Op {
    Const(f64),
    Load(u16),
    Un(UnOp),
    Bin(BinOp),
    /// A binary operator whose right operand is an input slot (no push).
    BinLoad(BinOp, u16),
    /// A binary operator whose right operand is a number (no push).
    BinConst(BinOp, f64),
    Add,
    Sub,
    Mul,
    Div,
    AddLoad(u16),
    SubLoad(u16),
    MulLoad(u16),
    DivLoad(u16),
    AddConst(f64),
    SubConst(f64),
    MulConst(f64),
    DivConst(f64),
    F1(Func),
    Min(u16),
    Max(u16),
    Clamp,
    Mod,
    Wrap,
    Draw(bool),
    Select,
}

/// A compiled formula: stack operations over the input slots of its scope.
#[derive(Clone, Debug, PartialEq)]
pub struct Program {
    ops: Vec<Op>,
    stack: usize,
    inputs: usize,
    uses: Uses,
}

/// A resolved tree, folded.
enum R {
    Const(f64),
    Load(u16),
    Un(UnOp, Box<R>),
    Bin(BinOp, Box<R>, Box<R>),
    Call(Func, Vec<R>),
    If(Box<R>, Box<R>, Box<R>),
}

struct Resolver<'a> {
    text: &'a str,
    scope: &'a Scope,
    errors: Vec<FormulaError>,
    uses: Uses,
}

impl Resolver<'_> {
    fn err(&mut self, span: Span, msg: String, hint: String) -> R {
        if self.errors.len() < 20 {
            self.errors.push(FormulaError::new(self.text, span, msg, &hint));
        }
        R::Const(0.0)
    }

    fn unknown_hint(&self, name: &str) -> String {
        let near = closest(name, self.scope.names.iter().map(|x| x.name.as_str()));
        if !near.is_empty() {
            return format!("did you mean {}?", list(&near));
        }
        let state: Vec<&str> =
            self.scope.names.iter().filter(|x| x.kind == "state").map(|x| x.name.as_str()).collect();
        if state.is_empty() {
            return "see the list of names you can use".into();
        }
        format!("state variables here: {}; see the list of names for the rest", list(&state))
    }

    fn load(&mut self, slot: usize, span: Span, name: &str) -> R {
        if self.scope.custom_inputs.is_some() {
            return R::Load(slot as u16);
        }
        let n = self.scope.n_state;
        let k = self.scope.n_action;
        if let Some(why) = self.scope.state_only {
            if slot >= n {
                return self.err(span, format!("`{name}` cannot be used here: {why}"), String::new());
            }
        }
        if slot < n {
            self.uses.state = true;
        } else if slot < 2 * n {
            self.uses.next = true;
        } else if slot < 2 * n + k {
            self.uses.action = true;
        } else if slot == 2 * n + k {
            self.uses.base = true;
        } else if slot == 2 * n + k + 1 {
            self.uses.terminal = true;
        } else {
            self.uses.step = true;
        }
        R::Load(slot as u16)
    }

    fn resolve(&mut self, e: &Expr) -> R {
        match &e.kind {
            ExprKind::Num(v) => R::Const(*v),
            ExprKind::Name(name) => match self.scope.lookup(name).map(|x| x.binding) {
                Some(Binding::State(i)) => self.load(i, e.span, name),
                Some(Binding::Input(s)) => self.load(s, e.span, name),
                Some(Binding::Const(v)) => R::Const(v),
                Some(Binding::Slot { now, .. }) => self.load(now, e.span, name),
                Some(Binding::PerAction(k)) => {
                    // `if action == 0 then v0 else if action == 1 then v1 … else v_last`.
                    let values = self.scope.per_action[k].clone();
                    let slot = 2 * self.scope.n_state;
                    let mut tree = R::Const(values.last().copied().unwrap_or(0.0));
                    for (i, &v) in values.iter().enumerate().rev().skip(1) {
                        let test = R::Bin(
                            BinOp::Eq,
                            Box::new(self.load(slot, e.span, name)),
                            Box::new(R::Const(i as f64)),
                        );
                        tree = R::If(Box::new(test), Box::new(R::Const(v)), Box::new(tree));
                    }
                    tree
                }
                None => {
                    if FUNCTIONS.iter().any(|f| f.0 == name) {
                        return self.err(
                            e.span,
                            format!("`{name}` is a function"),
                            format!("call it with parentheses, as in {name}(x)"),
                        );
                    }
                    let hint = self.unknown_hint(name);
                    self.err(e.span, format!("unknown name `{name}`"), hint)
                }
            },
            ExprKind::Next(name) => match self.scope.lookup(name).map(|x| x.binding) {
                Some(Binding::State(i)) => {
                    let n = self.scope.n_state;
                    self.load(n + i, e.span, &format!("{name}'"))
                }
                Some(Binding::Slot { next: Some(s), .. }) => self.load(s, e.span, &format!("{name}'")),
                Some(Binding::Slot { next: None, .. }) => {
                    let why = self.scope.no_next.clone();
                    self.err(e.span, format!("`{name}'` cannot be used here"), why)
                }
                Some(_) => {
                    let state: Vec<&str> = self
                        .scope
                        .names
                        .iter()
                        .filter(|x| x.kind == "state")
                        .map(|x| x.name.as_str())
                        .collect();
                    self.err(
                        e.span,
                        format!("`{name}'`: only state variables have a next-state value"),
                        format!("state variables here: {}", list(&state)),
                    )
                }
                None => {
                    let state =
                        self.scope.names.iter().filter(|x| x.kind == "state").map(|x| x.name.as_str());
                    let near = closest(name, state.clone());
                    let hint = if near.is_empty() {
                        format!("state variables here: {}", list(&state.collect::<Vec<_>>()))
                    } else {
                        format!(
                            "did you mean {}?",
                            near.iter().map(|n| format!("{n}'")).collect::<Vec<_>>().join(", ")
                        )
                    };
                    self.err(e.span, format!("unknown state variable `{name}` in `{name}'`"), hint)
                }
            },
            ExprKind::Unary(op, a) => {
                let a = self.resolve(a);
                match a {
                    R::Const(x) => R::Const(apply_un(*op, x)),
                    a => R::Un(*op, Box::new(a)),
                }
            }
            ExprKind::Binary(op, a, b) => {
                let a = self.resolve(a);
                let b = self.resolve(b);
                match (a, b) {
                    (R::Const(x), R::Const(y)) => R::Const(apply_bin(*op, x, y)),
                    (a, b) => R::Bin(*op, Box::new(a), Box::new(b)),
                }
            }
            ExprKind::Call(name, args) => {
                let Some(&(_, f, usage)) = FUNCTIONS.iter().find(|x| x.0 == name) else {
                    let names = FUNCTIONS.iter().map(|x| x.0);
                    let near = closest(name, names.clone());
                    let hint = if near.is_empty() {
                        format!("functions: {}", list(&names.collect::<Vec<_>>()))
                    } else {
                        format!("did you mean {}?", list(&near))
                    };
                    let msg = if self.scope.lookup(name).is_some() {
                        format!("`{name}` is not a function")
                    } else {
                        format!("unknown function `{name}`")
                    };
                    return self.err(e.span, msg, hint);
                };
                let (lo, hi) = f.arity();
                if f.draws() && !self.scope.draws {
                    return self.err(
                        e.span,
                        format!("`{name}()` draws a random number: only a task's own formulas may"),
                        "a reward change is a function of the step; put randomness in the task".into(),
                    );
                }
                if args.len() < lo || args.len() > hi {
                    return self.err(
                        e.span,
                        format!(
                            "`{name}` given {} argument{}",
                            args.len(),
                            if args.len() == 1 { "" } else { "s" }
                        ),
                        format!("write {usage}"),
                    );
                }
                let rs: Vec<R> = args.iter().map(|a| self.resolve(a)).collect();
                if !f.draws() && rs.iter().all(|r| matches!(r, R::Const(_))) {
                    let xs: Vec<f64> =
                        rs.iter().map(|r| if let R::Const(x) = r { *x } else { 0.0 }).collect();
                    return R::Const(match f {
                        Func::Min => xs[1..].iter().fold(xs[0], |m, &x| m.min(x)),
                        Func::Max => xs[1..].iter().fold(xs[0], |m, &x| m.max(x)),
                        Func::Clamp => clamp(xs[0], xs[1], xs[2]),
                        Func::Mod => modulo(xs[0], xs[1]),
                        Func::Wrap => wrap(xs[0], xs[1], xs[2]),
                        f => f.apply1(xs[0]),
                    });
                }
                R::Call(f, rs)
            }
            ExprKind::If(c, a, b) => {
                let c = self.resolve(c);
                let a = self.resolve(a);
                let b = self.resolve(b);
                match c {
                    R::Const(x) => {
                        if truth(x) {
                            a
                        } else {
                            b
                        }
                    }
                    c => R::If(Box::new(c), Box::new(a), Box::new(b)),
                }
            }
        }
    }
}

fn emit(r: &R, ops: &mut Vec<Op>, depth: usize, max: &mut usize) {
    let here = depth + 1;
    *max = (*max).max(here);
    match r {
        R::Const(v) => ops.push(Op::Const(*v)),
        R::Load(s) => ops.push(Op::Load(*s)),
        R::Un(op, a) => {
            emit(a, ops, depth, max);
            ops.push(Op::Un(*op));
        }
        R::Bin(op, a, b) => {
            emit(a, ops, depth, max);
            // A leaf right operand is read in place: the same arithmetic,
            // one push and pop fewer.
            let last = match (&**b, *op) {
                (&R::Load(s), BinOp::Add) => Op::AddLoad(s),
                (&R::Load(s), BinOp::Sub) => Op::SubLoad(s),
                (&R::Load(s), BinOp::Mul) => Op::MulLoad(s),
                (&R::Load(s), BinOp::Div) => Op::DivLoad(s),
                (&R::Load(s), op) => Op::BinLoad(op, s),
                (&R::Const(v), BinOp::Add) => Op::AddConst(v),
                (&R::Const(v), BinOp::Sub) => Op::SubConst(v),
                (&R::Const(v), BinOp::Mul) => Op::MulConst(v),
                (&R::Const(v), BinOp::Div) => Op::DivConst(v),
                (&R::Const(v), op) => Op::BinConst(op, v),
                (_, op) => {
                    emit(b, ops, depth + 1, max);
                    match op {
                        BinOp::Add => Op::Add,
                        BinOp::Sub => Op::Sub,
                        BinOp::Mul => Op::Mul,
                        BinOp::Div => Op::Div,
                        op => Op::Bin(op),
                    }
                }
            };
            ops.push(last);
        }
        R::Call(f, args) => {
            for (i, a) in args.iter().enumerate() {
                emit(a, ops, depth + i, max);
            }
            ops.push(match f {
                Func::Min => Op::Min(args.len() as u16),
                Func::Max => Op::Max(args.len() as u16),
                Func::Clamp => Op::Clamp,
                Func::Mod => Op::Mod,
                Func::Wrap => Op::Wrap,
                Func::Noise => Op::Draw(true),
                Func::Uniform => Op::Draw(false),
                f => Op::F1(*f),
            });
        }
        R::If(c, a, b) => {
            emit(c, ops, depth, max);
            emit(a, ops, depth + 1, max);
            emit(b, ops, depth + 2, max);
            ops.push(Op::Select);
        }
    }
}

/// Resolves, folds and compiles a parsed formula in a scope; returns every
/// name error found (at most 20).
pub fn compile(text: &str, e: &Expr, scope: &Scope) -> Result<Program, Vec<FormulaError>> {
    let mut r = Resolver { text, scope, errors: Vec::new(), uses: Uses::default() };
    let tree = r.resolve(e);
    if !r.errors.is_empty() {
        return Err(r.errors);
    }
    let mut ops = Vec::new();
    let mut stack = 0;
    emit(&tree, &mut ops, 0, &mut stack);
    Ok(Program { ops, stack, inputs: scope.input_len(), uses: r.uses })
}

impl Program {
    /// Stack slots [`Program::eval`] needs.
    pub fn stack_len(&self) -> usize {
        self.stack
    }

    /// Input slots the program's scope defines.
    pub fn input_len(&self) -> usize {
        self.inputs
    }

    /// Which inputs it reads.
    pub fn uses(&self) -> Uses {
        self.uses
    }

    /// Number of operations (after folding).
    pub fn len(&self) -> usize {
        self.ops.len()
    }

    /// Whether the program has no operations (never true for a compiled formula).
    pub fn is_empty(&self) -> bool {
        self.ops.is_empty()
    }

    /// The value of a formula that reads no input (`None` otherwise).
    pub fn constant(&self) -> Option<f64> {
        match self.ops.as_slice() {
            [Op::Const(v)] => Some(*v),
            _ => None,
        }
    }

    /// Whether it draws random numbers (`noise()`, `uniform()`).
    pub fn draws(&self) -> bool {
        self.ops.iter().any(|op| matches!(op, Op::Draw(_)))
    }

    /// Evaluates over `inputs` (laid out as the scope says) with a stack of
    /// at least [`Program::stack_len`] slots. Allocates nothing. A program
    /// that draws ([`Program::draws`]) needs [`Program::eval_with`]; here
    /// its draws give NaN.
    ///
    /// Panics if a buffer is too short (a programming error).
    #[inline]
    pub fn eval(&self, inputs: &[f64], stack: &mut [f64]) -> f64 {
        self.run(inputs, stack, |_| f64::NAN)
    }

    /// [`Program::eval`] with `noise()` and `uniform()` drawn from `rng`, in
    /// the order they appear in the formula's text.
    #[inline]
    pub fn eval_with(&self, inputs: &[f64], stack: &mut [f64], rng: &mut crate::rng::Stream) -> f64 {
        self.run(inputs, stack, |normal| if normal { rng.normal() } else { rng.uniform() })
    }

    #[inline]
    fn run(&self, inputs: &[f64], stack: &mut [f64], mut draw: impl FnMut(bool) -> f64) -> f64 {
        assert!(
            stack.len() >= self.stack && inputs.len() >= self.inputs,
            "reward program given {} stack and {} input slots; it needs {} and {}",
            stack.len(),
            inputs.len(),
            self.stack,
            self.inputs
        );
        let mut sp = 0;
        for op in &self.ops {
            match *op {
                Op::Const(v) => {
                    stack[sp] = v;
                    sp += 1;
                }
                Op::Load(s) => {
                    stack[sp] = inputs[s as usize];
                    sp += 1;
                }
                Op::Un(u) => stack[sp - 1] = apply_un(u, stack[sp - 1]),
                Op::Bin(b) => {
                    sp -= 1;
                    stack[sp - 1] = apply_bin(b, stack[sp - 1], stack[sp]);
                }
                Op::BinLoad(b, s) => stack[sp - 1] = apply_bin(b, stack[sp - 1], inputs[s as usize]),
                Op::BinConst(b, v) => stack[sp - 1] = apply_bin(b, stack[sp - 1], v),
                // The same arithmetic as `apply_bin`'s arms, one dispatch.
                Op::Add => {
                    sp -= 1;
                    stack[sp - 1] += stack[sp];
                }
                Op::Sub => {
                    sp -= 1;
                    stack[sp - 1] -= stack[sp];
                }
                Op::Mul => {
                    sp -= 1;
                    stack[sp - 1] *= stack[sp];
                }
                Op::Div => {
                    sp -= 1;
                    stack[sp - 1] /= stack[sp];
                }
                Op::AddLoad(s) => stack[sp - 1] += inputs[s as usize],
                Op::SubLoad(s) => stack[sp - 1] -= inputs[s as usize],
                Op::MulLoad(s) => stack[sp - 1] *= inputs[s as usize],
                Op::DivLoad(s) => stack[sp - 1] /= inputs[s as usize],
                Op::AddConst(v) => stack[sp - 1] += v,
                Op::SubConst(v) => stack[sp - 1] -= v,
                Op::MulConst(v) => stack[sp - 1] *= v,
                Op::DivConst(v) => stack[sp - 1] /= v,
                Op::F1(f) => stack[sp - 1] = f.apply1(stack[sp - 1]),
                Op::Min(n) | Op::Max(n) => {
                    let from = sp - n as usize;
                    let mut m = stack[from];
                    let is_min = matches!(op, Op::Min(_));
                    for &x in &stack[from + 1..sp] {
                        m = if is_min { m.min(x) } else { m.max(x) };
                    }
                    stack[from] = m;
                    sp = from + 1;
                }
                Op::Clamp => {
                    sp -= 2;
                    stack[sp - 1] = clamp(stack[sp - 1], stack[sp], stack[sp + 1]);
                }
                Op::Mod => {
                    sp -= 1;
                    stack[sp - 1] = modulo(stack[sp - 1], stack[sp]);
                }
                Op::Wrap => {
                    sp -= 2;
                    stack[sp - 1] = wrap(stack[sp - 1], stack[sp], stack[sp + 1]);
                }
                Op::Draw(normal) => {
                    stack[sp] = draw(normal);
                    sp += 1;
                }
                Op::Select => {
                    sp -= 2;
                    stack[sp - 1] = if truth(stack[sp - 1]) { stack[sp] } else { stack[sp + 1] };
                }
            }
        }
        stack[0]
    }
}

#[cfg(test)]
mod tests {
    use super::super::parse::parse;
    use super::*;

    use super::super::tests::spec;

    fn run(src: &str, inputs: &[f64]) -> f64 {
        let scope = Scope::new(&spec(), 0.9, &[("k".into(), 2.0)]);
        let p = compile(src, &parse(src).unwrap(), &scope).unwrap();
        let mut stack = vec![0.0; p.stack_len()];
        p.eval(inputs, &mut stack)
    }

    #[test]
    fn slots_and_values() {
        // inputs: row, col, row', col', action, base, terminal, t
        let x = [1.0, 2.0, 3.0, 5.0, 1.0, -1.0, 0.0, 7.0];
        assert_eq!(run("row + col' * k", &x), 1.0 + 5.0 * 2.0);
        assert_eq!(run("if action == east then base else 0", &x), -1.0);
        assert_eq!(run("gamma * t", &x), 0.9 * 7.0);
        assert_eq!(run("clamp(col' - col, -1, 2)", &x), 2.0);
        assert_eq!(run("max(row, col, row', col') - min(row, col)", &x), 4.0);
        assert_eq!(run("not terminal and t > 3", &x), 1.0);
        assert_eq!(run("if 0/0 then 1 else 2", &x), 2.0);
        assert_eq!(run("clamp(1, 3, 2)", &x), 2.0);
    }

    #[test]
    fn each_operand_form_of_each_operator_gives_apply_bin_s_bits() {
        // The arithmetic operators have their own operations for a slot, a
        // number and a computed right operand; each must give what
        // `apply_bin` gives, bit for bit, on ordinary and special values.
        // Common practice, no source.
        let values = [1.5, -0.0, 0.0, -3.25e-300, 7.0e300, f64::INFINITY, f64::NEG_INFINITY, f64::NAN, 0.1];
        let ops =
            [("+", BinOp::Add), ("-", BinOp::Sub), ("*", BinOp::Mul), ("/", BinOp::Div), ("<", BinOp::Lt)];
        for (text, op) in ops {
            // row, col are slots 0 and 1; `abs(col)` is a computed operand
            // only where col is not negative (abs(-0) is 0, so those values
            // are checked through the slot and number forms).
            for &a in &values {
                for &b in &values {
                    let want = apply_bin(op, a, b).to_bits();
                    let x = [a, b, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0];
                    assert_eq!(
                        run(&format!("row {text} col"), &x).to_bits(),
                        want,
                        "row {text} col at {a}, {b}"
                    );
                    if b.is_sign_positive() {
                        let got = run(&format!("row {text} abs(col)"), &x).to_bits();
                        assert_eq!(got, want, "row {text} abs(col) at {a}, {b}");
                    }
                    if b.is_finite() && b != 0.0 {
                        let got = run(
                            &format!("row {text} {:e}", b.abs()),
                            &[a, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0],
                        );
                        assert_eq!(
                            got.to_bits(),
                            apply_bin(op, a, b.abs()).to_bits(),
                            "row {text} {b:e} at {a}"
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn mod_and_wrap_follow_the_floored_remainder() {
        // Python's float `%` has the same definition (The Python Language
        // Reference, §6.7 "Binary arithmetic operations": the result has the
        // sign of the second operand); values printed by CPython 3.11.
        let x = [0.0; 8];
        assert_eq!(run("mod(-7.5, 2)", &x), 0.5);
        assert_eq!(run("mod(7.5, -2)", &x), -0.5);
        assert_eq!(run("mod(7, 2.5)", &x), 2.0);
        assert_eq!(run("mod(-1e-20, 360)", &x), 360.0); // rounds up to b, as in Python
        assert!(run("mod(1, 0)", &x).is_nan());
        assert_eq!(run("wrap(190, -180, 180)", &x), -170.0);
        assert_eq!(run("wrap(-180, -180, 180)", &x), -180.0);
        assert_eq!(run("wrap(180, -180, 180)", &x), -180.0);
        // Not folded away when an input is involved: the same through the program.
        assert_eq!(run("mod(row - 8, col)", &[1.0, 2.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0]), 1.0);
    }

    #[test]
    fn draws_only_where_the_scope_allows_them() {
        let scope = Scope::new(&spec(), 0.9, &[]);
        let errs = compile("noise()", &parse("noise()").unwrap(), &scope).unwrap_err();
        assert!(errs[0].message.contains("draws a random number"), "{errs:?}");
        let errs = compile("abs()", &parse("abs()").unwrap(), &scope).unwrap_err();
        assert_eq!(errs[0].message, "`abs` given 0 arguments");
        let names = vec![NameInfo {
            name: "x".into(),
            binding: Binding::Slot { now: 0, next: None },
            kind: "state",
            doc: String::new(),
        }];
        let custom = Scope::custom(names, 1, true, "no next here");
        let text = "x + noise() * 0 + uniform()";
        let p = compile(text, &parse(text).unwrap(), &custom).unwrap();
        assert!(p.draws());
        let mut stack = vec![0.0; p.stack_len()];
        let mut a = crate::rng::Stream::from_seed(3);
        let mut b = crate::rng::Stream::from_seed(3);
        let got = p.eval_with(&[2.0], &mut stack, &mut a);
        // Draw order is the text's: the normal first, then the uniform.
        let _ = b.normal();
        assert_eq!(got, 2.0 + 0.0 + b.uniform());
        let errs = compile("x'", &parse("x'").unwrap(), &custom).unwrap_err();
        assert_eq!(
            (errs[0].message.as_str(), errs[0].hint.as_str()),
            ("`x'` cannot be used here", "no next here")
        );
    }

    #[test]
    fn folding_leaves_constants() {
        let scope = Scope::new(&spec(), 0.5, &[]);
        let p =
            compile("", &parse("2 * gamma + max(1, 3) + (if 1 then 4 else row)").unwrap(), &scope).unwrap();
        assert_eq!(p.constant(), Some(8.0));
        let p = compile("", &parse("row * (2 + 3)").unwrap(), &scope).unwrap();
        assert_eq!(p.len(), 2); // row, then × 5 read in place
        assert!(p.uses().state && !p.uses().next);
    }

    #[test]
    fn name_errors_suggest_the_closest_names() {
        let scope = Scope::new(&spec(), 0.9, &[]);
        let text = "rwo + col' + abss(1) + base' + nrth + clmp(1,2,3) + min(1) + abs";
        let errs = compile(text, &parse(text).unwrap(), &scope).unwrap_err();
        let msgs: Vec<String> = errs.iter().map(|e| format!("{} | {}", e.message, e.hint)).collect();
        assert_eq!(msgs.len(), 7, "{msgs:#?}");
        assert_eq!(msgs[0], "unknown name `rwo` | did you mean row?");
        assert_eq!(msgs[1], "unknown function `abss` | did you mean abs?");
        assert!(msgs[2].starts_with("`base'`: only state variables"));
        assert_eq!(msgs[3], "unknown name `nrth` | did you mean north?");
        assert_eq!(msgs[4], "unknown function `clmp` | did you mean clamp?");
        assert_eq!(msgs[5], "`min` given 1 argument | write min(a, b, ...), two or more arguments");
        assert_eq!(msgs[6], "`abs` is a function | call it with parentheses, as in abs(x)");
        assert_eq!((errs[0].start, errs[0].end), (0, 3));
        assert_eq!(closest("colum", ["row", "col", "action"].into_iter()), vec!["col"]);
        assert_eq!(closest("Row", ["row", "col"].into_iter()), vec!["row"]);
        assert_eq!(closest("est", ["east", "west", "north"].into_iter()), vec!["east", "west"]);
        assert!(closest("zzz", ["row", "col"].into_iter()).is_empty());
        let scope = scope.state_only("a potential depends on the state only");
        let errs = compile("row'", &parse("row'").unwrap(), &scope).unwrap_err();
        assert!(errs[0].message.contains("cannot be used here"));
    }
}
