//! The reward formula language's reference semantics, evaluated directly on
//! the expression tree (common practice for checking a compiler, no source),
//! with the grid task's names and one step's inputs. Shared by the property
//! tests (`tests/reward_formula.rs`) and the coverage-guided fuzz target
//! (`fuzz/fuzz_targets/formula.rs`), so both check the compiler against the
//! same definition.

use critbox_core::reward::parse::{BinOp, Expr, ExprKind, UnOp};
use critbox_core::reward::{Shaper, StepInput};
use critbox_core::rng::Stream;
use critbox_core::task::Action;
use critbox_core::task::{ActionSpace, StateVar, TaskSpec};

/// The grid task's description: two state variables and four actions.
pub fn spec() -> TaskSpec {
    TaskSpec {
        kind: "grid",
        state_vars: vec![
            StateVar { name: "row".into(), low: 0.0, high: 6.0 },
            StateVar { name: "col".into(), low: 0.0, high: 11.0 },
        ],
        actions: ActionSpace::Discrete(vec!["north".into(), "east".into(), "south".into(), "west".into()]),
        n_states: Some(40),
        default_discount: 0.99,
        max_steps: 200,
        continuing: false,
        state_names: Vec::new(),
        action_numbers: Vec::new(),
    }
}

pub const GAMMA: f64 = 0.9;
pub const K: f64 = 2.5;

/// The inputs of one step, by name, for the reference.
pub struct Env {
    pub row: f64,
    pub col: f64,
    pub row2: f64,
    pub col2: f64,
    pub action: usize,
    pub base: f64,
    pub terminal: bool,
    pub t: u64,
}

impl Env {
    pub fn random(rng: &mut Stream) -> Env {
        let pick = |rng: &mut Stream| match rng.below(4) {
            0 => 0.0,
            1 => rng.below(7) as f64,
            2 => rng.uniform_in(-3.0, 3.0),
            _ => rng.uniform_in(-1e3, 1e3),
        };
        Env {
            row: pick(rng),
            col: pick(rng),
            row2: pick(rng),
            col2: pick(rng),
            action: rng.below(4),
            base: pick(rng),
            terminal: rng.below(2) == 1,
            t: rng.below(300) as u64,
        }
    }

    /// The reward `shaper` gives for this step.
    pub fn reward_of(&self, shaper: &mut Shaper) -> f64 {
        shaper.reward(&StepInput {
            obs: &[self.row, self.col],
            action: Action::Index(self.action),
            next: &[self.row2, self.col2],
            base: self.base,
            terminal: self.terminal,
            t: self.t,
        })
    }

    fn name(&self, n: &str) -> f64 {
        match n {
            "row" => self.row,
            "col" => self.col,
            "action" => self.action as f64,
            "base" => self.base,
            "terminal" => f64::from(u8::from(self.terminal)),
            "t" => self.t as f64,
            "gamma" => GAMMA,
            "pi" => std::f64::consts::PI,
            "k" => K,
            "north" => 0.0,
            "east" => 1.0,
            "south" => 2.0,
            "west" => 3.0,
            other => panic!("no name {other}"),
        }
    }
}

fn truthy(x: f64) -> bool {
    !(x == 0.0 || x.is_nan())
}

fn b(x: bool) -> f64 {
    if x {
        1.0
    } else {
        0.0
    }
}

/// The reference: the documented semantics, evaluated directly on the tree
/// (common practice for checking a compiler, no source).
pub fn reference(e: &Expr, env: &Env) -> f64 {
    match &e.kind {
        ExprKind::Num(v) => *v,
        ExprKind::Name(n) => env.name(n),
        ExprKind::Next(n) => match n.as_str() {
            "row" => env.row2,
            "col" => env.col2,
            other => panic!("no next {other}"),
        },
        ExprKind::Unary(UnOp::Neg, a) => -reference(a, env),
        ExprKind::Unary(UnOp::Not, a) => b(!truthy(reference(a, env))),
        ExprKind::Binary(op, l, r) => {
            let (x, y) = (reference(l, env), reference(r, env));
            match op {
                BinOp::Add => x + y,
                BinOp::Sub => x - y,
                BinOp::Mul => x * y,
                BinOp::Div => x / y,
                BinOp::Pow => libm::pow(x, y),
                BinOp::Lt => b(x < y),
                BinOp::Le => b(x <= y),
                BinOp::Gt => b(x > y),
                BinOp::Ge => b(x >= y),
                BinOp::Eq => b(x == y),
                BinOp::Ne => b(x != y),
                BinOp::And => b(truthy(x) && truthy(y)),
                BinOp::Or => b(truthy(x) || truthy(y)),
            }
        }
        ExprKind::Call(f, args) => {
            let xs: Vec<f64> = args.iter().map(|a| reference(a, env)).collect();
            match f.as_str() {
                "abs" => xs[0].abs(),
                "sqrt" => xs[0].sqrt(),
                "exp" => libm::exp(xs[0]),
                "log" => libm::log(xs[0]),
                "sin" => libm::sin(xs[0]),
                "cos" => libm::cos(xs[0]),
                "tanh" => libm::tanh(xs[0]),
                "min" => xs[1..].iter().fold(xs[0], |m, &x| m.min(x)),
                "max" => xs[1..].iter().fold(xs[0], |m, &x| m.max(x)),
                "clamp" => xs[0].max(xs[1]).min(xs[2]),
                // As documented: `a % b`, plus `b` when the signs differ.
                "mod" => rem_signed(xs[0], xs[1]),
                "wrap" => xs[1] + rem_signed(xs[0] - xs[1], xs[2] - xs[1]),
                other => panic!("no function {other}"),
            }
        }
        ExprKind::If(c, y, n) => {
            if truthy(reference(c, env)) {
                reference(y, env)
            } else {
                reference(n, env)
            }
        }
    }
}

fn rem_signed(a: f64, b: f64) -> f64 {
    let r = a % b;
    if r == 0.0 || r.is_sign_negative() == b.is_sign_negative() || r.is_nan() {
        r
    } else {
        r + b
    }
}

/// Equal as bits, or both NaN.
pub fn same(a: f64, b: f64) -> bool {
    a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan())
}
