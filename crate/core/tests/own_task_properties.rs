//! Seeded property runs over the user's own task definitions (formula and
//! table tasks): random valid definitions and the same ones broken in the
//! ways users break them (unknown names, a missing update, probabilities that
//! do not sum to 1, an unreachable terminal state, an update that produces
//! NaN, wrong types). Nothing panics; every refused definition names the
//! field it is about; every accepted one runs 500 steps of a learner and
//! either completes or fails with a reason. The coverage-guided fuzz target
//! `fuzz/fuzz_targets/task.rs` checks the same properties on any text.
//! Properties: common practice, no source.

use critbox_core::experiment::config::{check_task, validate_value};
use critbox_core::experiment::{Job, JobStatus};
use critbox_core::rng::Stream;
use serde_json::{json, Value};

/// Cases per kind and per seed (valid and mutated each).
const CASES: usize = 170;
const SEEDS: [u64; 3] = [1, 2, 3];

fn pick<'a, T>(rng: &mut Stream, xs: &'a [T]) -> &'a T {
    &xs[rng.below(xs.len())]
}

/// A number with at most three decimals, in `[lo, hi]`.
fn number(rng: &mut Stream, lo: f64, hi: f64) -> f64 {
    (rng.uniform_in(lo, hi) * 1000.0).round() / 1000.0
}

/// A random formula over `names` (every name in it is visible there).
fn expr(rng: &mut Stream, names: &[String], depth: u32) -> String {
    if depth == 0 || rng.below(3) == 0 {
        return if names.is_empty() || rng.below(3) == 0 {
            format!("{}", number(rng, -3.0, 3.0))
        } else {
            pick(rng, names).clone()
        };
    }
    let mut sub = || expr(rng, names, depth - 1);
    let (a, b, c) = (sub(), sub(), sub());
    match rng.below(12) {
        0 => format!("({a} + {b})"),
        1 => format!("({a} - {b})"),
        2 => format!("({a} * {b})"),
        3 => format!("({a} / (1 + abs({b})))"),
        4 => format!("sin({a})"),
        5 => format!("tanh({a})"),
        6 => format!("clamp({a}, -5, 5)"),
        7 => format!("mod({a}, 2)"),
        8 => format!("wrap({a}, -1, 1)"),
        9 => format!("(if {a} > {b} then {b} else {c})"),
        10 => format!("max({a}, {b})"),
        _ => format!("min({a}, {b}) * 0.5"),
    }
}

/// A random formula task that must be accepted: its state variables,
/// whether it is discrete, and the definition.
fn formula_task(rng: &mut Stream) -> (Vec<String>, Value) {
    let n = 1 + rng.below(3);
    let vars: Vec<String> = (0..n).map(|i| format!("v{i}")).collect();
    let state: Vec<Value> = vars
        .iter()
        .map(|v| {
            let low = number(rng, -5.0, 0.0);
            let high = low + number(rng, 0.5, 5.0);
            let start = if rng.below(2) == 0 { json!(low) } else { json!([low, high]) };
            json!({"name": v, "start": start, "low": low, "high": high, "clip": rng.below(2) == 0})
        })
        .collect();
    let mut task = json!({"kind": "formula", "state": state});
    let mut names = vars.clone();
    if rng.below(2) == 0 {
        let k = 2 + rng.below(3);
        let actions: Vec<Value> =
            (0..k).map(|i| json!({"name": format!("act{i}"), "set": {"push": i as f64 - 1.0}})).collect();
        task["actions"] = json!(actions);
        names.extend(["push".to_string(), "action".to_string(), "act0".to_string()]);
    } else {
        let m = 1 + rng.below(2);
        let controls: Vec<Value> =
            (0..m).map(|i| json!({"name": format!("u{i}"), "low": -1, "high": 1})).collect();
        task["controls"] = json!(controls);
        names.extend((0..m).map(|i| format!("u{i}")));
    }
    if rng.below(2) == 0 {
        task["constants"] = json!({"gain": number(rng, -2.0, 2.0)});
        names.push("gain".into());
    }
    names.extend(["dt".to_string(), "pi".to_string()]);
    let mut lets = Vec::new();
    for i in 0..rng.below(3) {
        lets.push(json!({"name": format!("l{i}"), "formula": expr(rng, &names, 2)}));
        names.push(format!("l{i}"));
    }
    if !lets.is_empty() {
        task["let"] = json!(lets);
    }
    let update: serde_json::Map<String, Value> =
        vars.iter().map(|v| (v.clone(), json!(format!("{v} + dt * {}", expr(rng, &names, 2))))).collect();
    task["update"] = Value::Object(update);
    if rng.below(2) == 0 {
        task["terminal"] = json!(format!("abs({}) > 4", pick(rng, &vars)));
    }
    let mut reward_names = names.clone();
    reward_names.extend(vars.iter().map(|v| format!("{v}'")));
    reward_names.push("terminal".into());
    task["reward"] = json!(expr(rng, &reward_names, 3));
    task["dt"] = json!(pick(rng, &[0.05, 0.1, 1.0]));
    task["substeps"] = json!(1 + rng.below(3));
    task["max_steps"] = json!(20 + rng.below(100));
    (vars, task)
}

/// A random table task that must be accepted: a chain of states whose
/// action 0 always may move on, so the last (terminal) state is reached.
fn table_task(rng: &mut Stream) -> Value {
    let n = 2 + rng.below(5);
    let k = 1 + rng.below(3);
    let states: Vec<String> = (0..n).map(|i| format!("s{i}")).collect();
    let actions: Vec<String> = (0..k).map(|i| format!("a{i}")).collect();
    let continuing = rng.below(4) == 0;
    let last = if continuing { n } else { n - 1 };
    let mut rows = Vec::new();
    for s in 0..last {
        for (a, action) in actions.iter().enumerate() {
            let onward = if a == 0 { (s + 1) % n } else { rng.below(n) };
            let stay = number(rng, 0.0, 0.9);
            for (to, p) in [(s, stay), (onward, 1.0 - stay)] {
                let reward = number(rng, -10.0, 10.0);
                rows.push(json!({"from": states[s], "action": action, "to": states[to], "probability": p, "reward": reward}));
            }
        }
    }
    let mut task = json!({
        "kind": "table", "states": states, "actions": actions, "rows": rows,
        "start": {"s0": 1}, "discount": number(rng, 0.5, 1.0), "max_steps": 10 + rng.below(100)
    });
    if continuing {
        task["continuing"] = json!(true);
    } else {
        task["terminal_states"] = json!([states[n - 1]]);
    }
    if rng.below(3) == 0 {
        let observe: serde_json::Map<String, Value> =
            states.iter().enumerate().map(|(i, s)| (s.clone(), json!([(i % 2) as f64, 1.0]))).collect();
        task["observe"] = Value::Object(observe);
    }
    task
}

fn config(task: &Value) -> Value {
    json!({
        "schema": 1, "task": task, "steps": 500, "seeds": 1,
        "base": {"family": "a2c"}, "variants": [{"label": "A"}]
    })
}

/// What a mutation is expected to give: refused with a problem whose path
/// (relative to the task) starts with `path`, or accepted but its job fails
/// with a reason containing `reason`.
enum Expect {
    Refused(String),
    Fails(String),
}

fn refused(path: impl Into<String>) -> Option<Expect> {
    Some(Expect::Refused(path.into()))
}

/// Breaks a valid formula task one way; `None` when the way does not apply.
fn mutate_formula(rng: &mut Stream, vars: &[String], task: &mut Value) -> Option<Expect> {
    let v = pick(rng, vars).clone();
    match rng.below(10) {
        0 => {
            // A misspelt name in an update.
            task["update"][&v] = json!(format!("{v} + {v}x"));
            refused(format!("update.{v}"))
        }
        1 => {
            task["update"].as_object_mut().unwrap().remove(&v);
            refused(format!("update.{v}"))
        }
        2 => {
            task["update"]["speed"] = json!("1");
            refused("update.speed")
        }
        3 => {
            // Both kinds of action, or neither.
            if task.get("actions").is_some() {
                task["controls"] = json!([{"name": "u9", "low": -1, "high": 1}]);
            } else {
                task.as_object_mut().unwrap().remove("controls");
            }
            refused("actions")
        }
        4 => {
            // An update that is NaN at the first step.
            task["update"][&v] = json!(format!("{v} + sqrt(-1 - abs({v}))"));
            task["terminal"] = json!("");
            Some(Expect::Fails(format!("state variable `{v}` became NaN")))
        }
        5 => {
            task["reward"] = json!(format!("log(-1 - abs({v}))"));
            Some(Expect::Fails("task.reward gave NaN".into()))
        }
        6 => {
            // Wrong types.
            let (field, value, path) = match rng.below(5) {
                0 => ("dt", json!("0.1"), "dt"),
                1 => ("substeps", json!(-1), "substeps"),
                2 => ("reward", json!(1), "reward"),
                3 => ("update", json!([]), "update"),
                _ => ("state", json!({"name": "v0"}), "state"),
            };
            task[field] = value;
            refused(path)
        }
        7 => {
            // A primed name where only the reward may use one.
            task["update"][&v] = json!(format!("{v}'"));
            refused(format!("update.{v}"))
        }
        8 => {
            let i = vars.iter().position(|x| *x == v).unwrap();
            match rng.below(3) {
                0 => task["state"][i]["name"] = json!("dt"),
                1 => task["state"][i]["start"] = json!([2, 1]),
                _ => task["state"][i]["high"] = task["state"][i]["low"].clone(),
            }
            refused(format!("state[{i}]"))
        }
        _ => {
            let (field, value) =
                *pick(rng, &[("substeps", 0.0), ("dt", 0.0), ("max_steps", 0.0), ("discount", 2.0)]);
            task[field] = json!(value);
            refused(field)
        }
    }
}

/// Breaks a valid table task one way.
fn mutate_table(rng: &mut Stream, task: &mut Value) -> Option<Expect> {
    let rows = task["rows"].as_array().unwrap().len();
    let r = rng.below(rows);
    let continuing = task.get("continuing").is_some();
    match rng.below(9) {
        0 => {
            // An unknown state or action name.
            let (field, name) = *pick(rng, &[("from", "nowhere"), ("to", "s99"), ("action", "jump")]);
            task["rows"][r][field] = json!(name);
            refused(format!("rows[{r}].{field}"))
        }
        1 => {
            // Probabilities that do not sum to 1.
            let p = task["rows"][r]["probability"].as_f64().unwrap();
            task["rows"][r]["probability"] = json!(if p > 0.5 { p - 0.25 } else { p + 0.25 });
            refused("rows")
        }
        2 => {
            // A (state, action) pair with no rows (both rows of the pair).
            let r = r - r % 2;
            let list = task["rows"].as_array_mut().unwrap();
            list.remove(r);
            list.remove(r);
            refused("rows")
        }
        3 if !continuing => {
            // The terminal state cut off: no row with probability above 0 leads there.
            let terminal = task["terminal_states"][0].clone();
            for row in task["rows"].as_array_mut().unwrap() {
                if row["to"] == terminal {
                    row["to"] = row["from"].clone();
                }
            }
            refused("terminal_states[0]")
        }
        4 => {
            task["start"] = json!({"s0": 0.5, "s1": 0.4});
            refused("start")
        }
        5 => {
            let (field, value) = match rng.below(4) {
                0 => ("rows", json!({"from": "s0"})),
                1 => ("states", json!("s0")),
                2 => ("discount", json!("high")),
                _ => ("max_steps", json!(-3)),
            };
            task[field] = value;
            refused(field)
        }
        6 => {
            task["rows"][r]["probability"] = json!("1");
            refused(format!("rows[{r}].probability"))
        }
        7 => {
            let dup = task["states"][0].clone();
            task["states"].as_array_mut().unwrap().push(dup);
            refused("states[")
        }
        8 if !continuing => {
            // A terminal state nobody listed.
            task["terminal_states"].as_array_mut().unwrap().push(json!("s42"));
            refused("terminal_states[1]")
        }
        _ => None,
    }
}

/// Checks one definition against its expectation (`None`: it must be
/// accepted and its job completes or fails with a reason). True when a job
/// ran all its steps.
fn check_one(task: &Value, expect: Option<&Expect>, what: &str) -> bool {
    let check = check_task(task);
    assert_eq!(check.ok, check.problems.is_empty(), "{what}: {task}");
    for p in &check.problems {
        assert!(!p.message.trim().is_empty() && !p.path.is_empty(), "{what}: {p:?} for {task}");
    }
    let validated = validate_value(&config(task));
    assert_eq!(check.ok, validated.is_ok(), "{what}: the check and the config disagree on {task}");
    match (expect, validated) {
        (Some(Expect::Refused(path)), Ok(_)) => panic!("{what}: accepted, expected {path}: {task}"),
        (Some(Expect::Refused(path)), Err(e)) => {
            for p in &e.problems {
                assert!(p.path.starts_with("task"), "{what}: {p} does not name a task field");
                assert!(!p.message.trim().is_empty(), "{what}: {p:?}");
            }
            assert!(
                check.problems.iter().any(|p| p.path.starts_with(path.as_str())),
                "{what}: expected a problem at {path}, got {:?} for {task}",
                check.problems
            );
            false
        }
        (_, Err(e)) => panic!("{what}: a valid task is refused: {e}\n{task}"),
        (expect, Ok(plan)) => {
            let mut job = Job::new(&plan, 0);
            job.advance(500);
            match (job.status(), expect) {
                (JobStatus::Failed(reason), Some(Expect::Fails(want))) => {
                    assert!(reason.contains(want.as_str()), "{what}: `{reason}`, expected `{want}`: {task}");
                    false
                }
                (JobStatus::Failed(reason), None) => {
                    assert!(!reason.trim().is_empty(), "{what}: a failure with no reason: {task}");
                    false
                }
                (JobStatus::Done, None) => true,
                (other, _) => panic!("{what}: after 500 of 500 steps the job is {other:?}: {task}"),
            }
        }
    }
}

#[test]
fn random_and_broken_task_definitions_are_run_or_named() {
    let mut cases = 0;
    // Valid ones that ran all their steps, refused, accepted to fail in the
    // run, mutations that did not apply.
    let mut counts = [0usize; 4];
    let mut done = 0;
    let mut tally = |expect: &Option<Expect>| match expect {
        None => counts[3] += 1,
        Some(Expect::Refused(_)) => counts[1] += 1,
        Some(Expect::Fails(_)) => counts[2] += 1,
    };
    for seed in SEEDS {
        let mut rng = Stream::from_seed(seed);
        for i in 0..CASES {
            let (vars, task) = formula_task(&mut rng);
            done += usize::from(check_one(&task, None, &format!("seed {seed} formula {i}")));
            let mut broken = task.clone();
            let expect = mutate_formula(&mut rng, &vars, &mut broken);
            check_one(&broken, expect.as_ref(), &format!("seed {seed} formula {i} broken"));
            tally(&expect);
            let table = table_task(&mut rng);
            done += usize::from(check_one(&table, None, &format!("seed {seed} table {i}")));
            let mut broken = table.clone();
            let expect = mutate_table(&mut rng, &mut broken);
            if expect.is_some() {
                check_one(&broken, expect.as_ref(), &format!("seed {seed} table {i} broken"));
            }
            tally(&expect);
            cases += 4;
        }
    }
    counts[0] = done;
    eprintln!("{cases} cases (valid and completed, refused, failing in the run, not mutated): {counts:?}");
    assert!(cases >= 2000, "{cases} cases");
    assert!(
        counts[0] > cases / 4 && counts[1] > cases / 4 && counts[2] > cases / 40 && counts[3] < cases / 20,
        "{counts:?}"
    );
}

#[test]
fn a_start_range_too_wide_to_draw_from_is_refused() {
    // Found by fuzzing: [−1e308, 1e308] has finite ends but an infinite
    // width, so the uniform start draw gave inf, blamed on the update.
    let task = json!({
        "kind": "formula",
        "state": [{"name": "x", "start": [-1e308, 1e308], "low": 0, "high": 1}],
        "actions": [{"name": "a"}, {"name": "b"}],
        "update": {"x": "x"}, "reward": "1"
    });
    let check = check_task(&task);
    assert!(!check.ok);
    assert_eq!(check.problems[0].path, "state[0].start");
    assert!(check.problems[0].message.contains("finite width"), "{:?}", check.problems);
}
