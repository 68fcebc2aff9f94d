//! Property tests of the reward formula language (tier 4): the compiled
//! evaluator against a plain recursive Rust reference on random expression
//! trees; pretty-printing then re-parsing gives the same tree; and any input
//! text gives a value or an error, never a panic, with nesting depth and
//! length bounded. Random cases come from the project's own seeded stream,
//! so every run checks the same cases.

use std::collections::BTreeMap;

#[path = "common/formula_ref.rs"]
mod formula_ref;
use formula_ref::{reference, same, spec, Env, GAMMA, K};

use critbox_core::reward::parse::{parse, BinOp, Expr, ExprKind, UnOp, MAX_FORMULA_BYTES};
use critbox_core::reward::print::pretty;
use critbox_core::reward::{check_report, Mode, RewardConfig, Shaper, StepInput};
use critbox_core::rng::Stream;
use critbox_core::task::{Action, TaskSpec};

const NAMES: [&str; 13] =
    ["row", "col", "action", "base", "terminal", "t", "gamma", "pi", "k", "north", "east", "south", "west"];
const OPS: [BinOp; 13] = [
    BinOp::Add,
    BinOp::Sub,
    BinOp::Mul,
    BinOp::Div,
    BinOp::Pow,
    BinOp::Lt,
    BinOp::Le,
    BinOp::Gt,
    BinOp::Ge,
    BinOp::Eq,
    BinOp::Ne,
    BinOp::And,
    BinOp::Or,
];
const FUNCS: [(&str, usize); 12] = [
    ("abs", 1),
    ("sqrt", 1),
    ("exp", 1),
    ("log", 1),
    ("sin", 1),
    ("cos", 1),
    ("tanh", 1),
    ("min", 0),
    ("max", 0),
    ("clamp", 3),
    ("mod", 2),
    ("wrap", 3),
];

fn random_number(rng: &mut Stream) -> f64 {
    match rng.below(6) {
        0 => rng.below(10) as f64,
        1 => 0.5,
        2 => rng.uniform() * 10.0,
        3 => 1e-7 * (1 + rng.below(9)) as f64,
        4 => 1e20,
        _ => (rng.uniform() * 1e6).round() / 1e3,
    }
}

fn random_expr(rng: &mut Stream, depth: u32) -> Expr {
    let leaf = depth == 0 || rng.below(4) == 0;
    let kind = if leaf {
        match rng.below(3) {
            0 => ExprKind::Num(random_number(rng)),
            1 => ExprKind::Name(NAMES[rng.below(NAMES.len())].into()),
            _ => ExprKind::Next(["row", "col"][rng.below(2)].into()),
        }
    } else {
        match rng.below(10) {
            0 => ExprKind::Unary(UnOp::Neg, Box::new(random_expr(rng, depth - 1))),
            1 => ExprKind::Unary(UnOp::Not, Box::new(random_expr(rng, depth - 1))),
            2 => {
                let (name, arity) = FUNCS[rng.below(FUNCS.len())];
                let n = if arity == 0 { 2 + rng.below(3) } else { arity };
                ExprKind::Call(name.into(), (0..n).map(|_| random_expr(rng, depth - 1)).collect())
            }
            3 => ExprKind::If(
                Box::new(random_expr(rng, depth - 1)),
                Box::new(random_expr(rng, depth - 1)),
                Box::new(random_expr(rng, depth - 1)),
            ),
            _ => ExprKind::Binary(
                OPS[rng.below(OPS.len())],
                Box::new(random_expr(rng, depth - 1)),
                Box::new(random_expr(rng, depth - 1)),
            ),
        }
    };
    Expr::new(kind)
}

fn reward(mode: Mode, text: &str) -> RewardConfig {
    RewardConfig { mode, formula: text.into(), constants: BTreeMap::from([("k".to_string(), K)]) }
}

#[test]
fn compiled_formulas_agree_with_the_reference_and_print_back_to_the_same_tree() {
    let spec = spec();
    let mut rng = Stream::from_seed(99);
    let mut checked = 0;
    let mut finite = 0;
    for case in 0..3000 {
        let tree = random_expr(&mut rng, 1 + (case % 6) as u32);
        let text = pretty(&tree);
        if text.len() > MAX_FORMULA_BYTES {
            continue;
        }
        let back = parse(&text).unwrap_or_else(|e| panic!("case {case}: {text:?} does not parse: {e}"));
        assert_eq!(back, tree, "case {case}: {text}");
        assert_eq!(pretty(&back), text, "case {case}: printing is stable");
        let mut shaper = Shaper::new(&reward(Mode::Replace, &text), &spec, GAMMA)
            .unwrap_or_else(|e| panic!("case {case}: {text}: {e:?}"));
        for _ in 0..4 {
            let env = Env::random(&mut rng);
            let got = env.reward_of(&mut shaper);
            let want = reference(&tree, &env);
            assert!(same(got, want), "case {case}: {text}\n compiled {got} reference {want}");
            checked += 1;
            finite += usize::from(want.is_finite());
        }
    }
    // The cases are not all degenerate.
    assert!(checked > 10_000 && finite > checked / 2, "{checked} checked, {finite} finite");
}

#[test]
fn bonus_and_potential_modes_agree_with_their_definitions() {
    // Potential-based shaping F = γΦ(s') − Φ(s), Φ = 0 at terminal states
    // (Ng, Harada & Russell 1999); bonus = base + formula.
    let spec = spec();
    let mut rng = Stream::from_seed(5);
    for case in 0..500 {
        let mut tree = random_expr(&mut rng, 4);
        // A potential reads the current state only: replace other inputs.
        fn state_only(e: &mut Expr) {
            match &mut e.kind {
                ExprKind::Name(n) if !["row", "col", "gamma", "pi", "k", "north"].contains(&n.as_str()) => {
                    *n = "row".into()
                }
                ExprKind::Next(n) => e.kind = ExprKind::Name(n.clone()),
                ExprKind::Unary(_, a) => state_only(a),
                ExprKind::Binary(_, a, b) => {
                    state_only(a);
                    state_only(b)
                }
                ExprKind::Call(_, args) => args.iter_mut().for_each(state_only),
                ExprKind::If(c, a, b) => {
                    state_only(c);
                    state_only(a);
                    state_only(b)
                }
                _ => {}
            }
        }
        state_only(&mut tree);
        let text = pretty(&tree);
        let env = Env::random(&mut rng);
        let step = StepInput {
            obs: &[env.row, env.col],
            action: Action::Index(env.action),
            next: &[env.row2, env.col2],
            base: env.base,
            terminal: env.terminal,
            t: env.t,
        };
        let phi_s = reference(&tree, &env);
        let next_env = Env { row: env.row2, col: env.col2, ..env };
        let phi_next = if env.terminal { 0.0 } else { reference(&tree, &next_env) };
        let mut p = Shaper::new(&reward(Mode::Potential, &text), &spec, GAMMA).unwrap();
        let want = env.base + GAMMA * phi_next - phi_s;
        assert!(same(p.reward(&step), want), "case {case}: {text}");
        let mut bonus = Shaper::new(&reward(Mode::Bonus, &text), &spec, GAMMA).unwrap();
        assert!(same(bonus.reward(&step), env.base + phi_s), "case {case}: {text}");
    }
}

/// Checks one arbitrary text: the live check and the compiler return a
/// value or errors with sane spans; nothing panics.
fn check_any(text: &str, spec: &TaskSpec, rng: &mut Stream) -> bool {
    let report = check_report(text, spec, &reward(Mode::Bonus, ""));
    let utf16 = text.encode_utf16().count() as u64;
    for e in report["errors"].as_array().unwrap() {
        let (s, t) = (e["start"].as_u64().unwrap(), e["end"].as_u64().unwrap());
        assert!(s <= t && t <= utf16, "{text:?}: span {s}..{t} of {utf16}");
        assert!(!e["message"].as_str().unwrap().is_empty());
    }
    let ok = report["ok"] == true;
    match Shaper::new(&reward(Mode::Bonus, text), spec, GAMMA) {
        Ok(mut sh) => {
            assert!(ok, "{text:?}: the shaper compiled what the check refused");
            let env = Env::random(rng);
            env.reward_of(&mut sh);
        }
        Err(p) => assert!(!ok && !p.is_empty(), "{text:?}"),
    }
    ok
}

#[test]
fn any_text_gives_a_value_or_an_error() {
    // Fuzz-style property (no source): token soup, random characters, and
    // mutations of valid formulas.
    let spec = spec();
    let mut rng = Stream::from_seed(123);
    let pieces = [
        "row", "col'", "x", "(", ")", "(", ")", ",", "+", "-", "*", "/", "^", "<", "<=", "==", "!=", ">",
        "and", "or", "not", "if", "then", "else", "abs(", "min(", "clamp(", "1", "2.5", "1e3", ".", "e", "'",
        "=", "&", "θ", " ", " ", "\t", "\n", "max", "sqrt(", "t", "base", "k", "north", "1e400", "_", "9x",
    ];
    let mut valid = 0;
    for case in 0..20_000 {
        let text: String = match case % 3 {
            0 => (0..rng.below(25)).map(|_| pieces[rng.below(pieces.len())]).collect::<Vec<_>>().join(""),
            1 => (0..rng.below(40)).map(|_| char::from_u32(rng.below(0x250) as u32).unwrap_or('?')).collect(),
            _ => {
                let mut t: Vec<char> = pretty(&random_expr(&mut rng, 4)).chars().collect();
                for _ in 0..1 + rng.below(3) {
                    let i = rng.below(t.len() + 1);
                    match rng.below(3) {
                        0 if i < t.len() => {
                            t.remove(i);
                        }
                        1 => t.insert(i, pieces[rng.below(pieces.len())].chars().next().unwrap_or(' ')),
                        _ if i < t.len() => t[i] = ['(', ')', '\'', '1', ' ', 'a'][rng.below(6)],
                        _ => {}
                    }
                }
                t.into_iter().collect()
            }
        };
        valid += usize::from(check_any(&text, &spec, &mut rng));
    }
    assert!(valid > 500, "only {valid} of the random texts were valid formulas");
}

#[test]
fn nesting_and_length_are_bounded() {
    // Deeply nested or very long input fails with a message instead of
    // exhausting the stack (limits documented in reward::parse).
    let spec = spec();
    let mut rng = Stream::from_seed(1);
    let cases = [
        "(".repeat(4000),
        "(".repeat(2000) + "1" + &")".repeat(2000),
        "-".repeat(4000) + "1",
        "not ".repeat(1000) + "1",
        "abs(".repeat(1000) + "1" + &")".repeat(1000),
        "1^".repeat(2000) + "1",
        "if 1 then ".repeat(400) + "1",
        "1+".repeat(1000) + "1",
        "x".repeat(5000),
    ];
    for text in &cases {
        assert!(!check_any(text, &spec, &mut rng), "{:.40}… should be refused", text);
    }
    let report = check_report(&cases[0], &spec, &reward(Mode::Bonus, ""));
    assert!(report["errors"][0]["message"].as_str().unwrap().contains("deeper than 64"), "{report}");
    // Within the limits, nesting works.
    let ok = "(".repeat(60) + "row" + &")".repeat(60);
    assert!(check_any(&ok, &spec, &mut rng));
    let wide = "min(".to_string() + &"1,".repeat(1500) + "row)";
    assert!(check_any(&wide, &spec, &mut rng));
}

#[test]
fn live_check_reports_positions_names_and_canonical_text() {
    let spec = spec();
    let r = check_report("if colm > 3 then  k else 0", &spec, &reward(Mode::Bonus, ""));
    assert_eq!(r["ok"], false);
    assert_eq!(r["errors"][0]["start"], 3);
    assert_eq!(r["errors"][0]["end"], 7);
    assert_eq!(r["errors"][0]["hint"], "did you mean col?");
    let r = check_report("if col' > 3 then  k else 0", &spec, &reward(Mode::Bonus, ""));
    assert_eq!(r["ok"], true);
    assert_eq!(r["pretty"], "if col' > 3 then k else 0");
    assert_eq!(r["uses"]["next"], true);
    assert_eq!(r["uses"]["state"], false);
    let names: Vec<&str> =
        r["names"].as_array().unwrap().iter().map(|n| n["name"].as_str().unwrap()).collect();
    assert!(
        names.starts_with(&["row", "col", "action", "base", "terminal", "t", "gamma", "pi"]),
        "{names:?}"
    );
    assert!(names.contains(&"k") && names.contains(&"west"));
    // A potential lists only what it may read.
    let r = check_report("row", &spec, &reward(Mode::Potential, ""));
    let names: Vec<&str> =
        r["names"].as_array().unwrap().iter().map(|n| n["name"].as_str().unwrap()).collect();
    assert!(!names.contains(&"base") && !names.contains(&"action") && names.contains(&"row"), "{names:?}");
    // Positions count UTF-16 units, as JavaScript does.
    let r = check_report("θθ + rw", &spec, &reward(Mode::Bonus, ""));
    assert_eq!((r["errors"][0]["start"].as_u64(), r["errors"][0]["end"].as_u64()), (Some(0), Some(1)));
}
