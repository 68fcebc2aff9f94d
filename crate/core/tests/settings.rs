//! The settings table against what the config parser and the validation
//! actually do: every default is the value a config without that setting
//! gets, and every range is the one validation enforces, probed just inside
//! and just outside each end (common practice, no source). Also: the README's
//! table is the generated one.

use critbox_core::experiment::config::validate_value;
use critbox_core::experiment::Config;
use critbox_core::learn::LearnerSetup;
use critbox_core::settings::{self, Default, Setting, SETTINGS};
use serde_json::{json, Value};

const MAP: &str = "S.D";

/// The task object of `kind` with only what is required.
fn task(kind: &str) -> Value {
    match kind {
        "grid" => json!({"kind": "grid", "map": [MAP]}),
        // The smallest own tasks: what a user must write, no optional field.
        "formula" => json!({
            "kind": "formula",
            "state": [{"name": "x", "start": 0, "low": -1, "high": 1}],
            "actions": [{"name": "down", "set": {"u": -1}}, {"name": "up", "set": {"u": 1}}],
            "update": {"x": "x + 0.1 * u"},
            "reward": "-abs(x)"
        }),
        "table" => json!({
            "kind": "table",
            "states": ["a", "b"],
            "actions": ["go"],
            "rows": [{"from": "a", "action": "go", "to": "b", "probability": 1, "reward": 1},
                     {"from": "b", "action": "go", "to": "a", "probability": 1, "reward": 0}],
            "start": {"a": 1}
        }),
        _ => json!({"kind": kind}),
    }
}

fn config_with(task: Value) -> Value {
    json!({"schema": 1, "task": task, "variants": [{"label": "A"}], "steps": 1000})
}

/// The feature kind that owns a `features.KEY`, and the optimizer kind for
/// `optimizer.KEY`, so the nested object is one that reads the key.
fn nest(group: &str, key: &str, v: Value) -> Value {
    let kind = match (group, key) {
        ("features", "tilings" | "intervals" | "hash") => "tiles",
        ("features", "order") => "fourier",
        ("features", "centers" | "width") => "rbf",
        ("features", "degree") => "poly",
        ("optimizer", _) => "adam",
        ("behaviour", "epsilon") => "epsilon_mix",
        ("behaviour", _) => "snapshot",
        _ => "",
    };
    let mut o = serde_json::Map::new();
    if !kind.is_empty() {
        o.insert("kind".into(), json!(kind));
    }
    o.insert(key.into(), v);
    Value::Object(o)
}

/// A config (as JSON) whose setting `s` is `v`, and the path validation
/// names for it.
fn with_value(s: &Setting, v: Value) -> (Value, String) {
    let parts: Vec<&str> = s.path.split('.').collect();
    match parts[0] {
        "learner" => {
            let base = if parts.len() == 2 {
                json!({ parts[1]: v })
            } else {
                json!({ parts[1]: nest(parts[1], parts[2], v) })
            };
            // One state variable, so the feature counts stay under their cap.
            let mut c = config_with(task("lqr"));
            c["base"] = base;
            (c, format!("base.{}", parts[1..].join(".")))
        }
        "task" => {
            let mut t = task(parts[1]);
            t[parts[2]] = v;
            (config_with(t), format!("task.{}", parts[2]))
        }
        _ => {
            let mut c = config_with(task("cartpole"));
            if parts.len() == 2 {
                c[parts[1]] = v;
            } else {
                c[parts[1]] = json!({ parts[2]: v });
            }
            (c, parts[1..].join("."))
        }
    }
}

/// Whether validation finds a problem at `path`.
fn refused(config: &Value, path: &str) -> bool {
    match validate_value(config) {
        Ok(_) => false,
        Err(e) => e.problems.iter().any(|p| p.path == path),
    }
}

/// The value a config without the setting gets for it (`None` for absent).
fn filled_in(s: &Setting) -> Option<Value> {
    let parts: Vec<&str> = s.path.split('.').collect();
    let v = match parts[0] {
        "learner" => {
            let setup: LearnerSetup = if parts.len() == 3 && parts[1] == "features" {
                serde_json::from_value(json!({"features": nest("features", parts[2], json!(null))}))
                    .or_else(|_| {
                        let mut o = nest("features", parts[2], json!(0));
                        o.as_object_mut().unwrap().remove(parts[2]);
                        serde_json::from_value(json!({ "features": o }))
                    })
                    .unwrap()
            } else {
                serde_json::from_value(json!({})).unwrap()
            };
            let v = serde_json::to_value(setup).unwrap();
            v.pointer(&format!("/{}", parts[1..].join("/"))).cloned()
        }
        "task" => {
            let c: Config = serde_json::from_value(config_with(task(parts[1]))).unwrap();
            serde_json::to_value(c.task).unwrap().get(parts[2]).cloned()
        }
        _ if s.path == "experiment.evaluation.episodes" => {
            let mut c = config_with(task("cartpole"));
            c["evaluation"] = json!(true);
            Some(json!(validate_value(&c).unwrap().evaluation.unwrap().episodes))
        }
        _ => {
            let c: Config = serde_json::from_value(config_with(task("cartpole"))).unwrap();
            serde_json::to_value(c).unwrap().get(parts[1]).cloned()
        }
    };
    v.filter(|v| !v.is_null())
}

#[test]
fn every_default_is_what_the_parser_fills_in() {
    for s in SETTINGS {
        let got = filled_in(s);
        match s.default {
            Default::Num(x) => assert_eq!(got.and_then(|v| v.as_f64()), Some(x), "{}", s.path),
            Default::Int(x) => assert_eq!(got.and_then(|v| v.as_u64()), Some(x), "{}", s.path),
            Default::Bool(b) => assert_eq!(got.and_then(|v| v.as_bool()), Some(b), "{}", s.path),
            Default::Absent(_) => {
                if s.path != "experiment.steps" {
                    assert_eq!(got, None, "{}", s.path)
                }
            }
        }
    }
}

#[test]
fn every_range_is_what_validation_enforces() {
    let mut probed = 0;
    for s in SETTINGS {
        let Some(r) = s.range else { continue };
        let number = |x: f64| if r.integer { json!(x as u64) } else { json!(x) };
        let step = |x: f64| if r.integer { 1.0 } else { (x.abs() * 1e-9).max(1e-12) };
        // Each end: the value just inside is accepted, just outside refused.
        for (b, dir) in [(r.low, 1.0), (r.high, -1.0)] {
            let inside = if b.open { b.value + dir * step(b.value) } else { b.value };
            let outside = if b.open { b.value } else { b.value - dir * step(b.value) };
            let (c, path) = with_value(s, number(inside));
            assert!(!refused(&c, &path), "{} = {inside} is refused", s.path);
            if r.integer && outside < 0.0 {
                continue; // not a whole number of the config's type: refused by the parser
            }
            if r.or_zero && outside == 0.0 {
                continue;
            }
            let (c, path) = with_value(s, number(outside));
            assert!(refused(&c, &path), "{} = {outside} is accepted", s.path);
            probed += 1;
        }
        if r.or_zero {
            let (c, path) = with_value(s, json!(0));
            assert!(!refused(&c, &path), "{} = 0 is refused", s.path);
        }
    }
    assert!(probed > 60, "only {probed} bounds probed");
}

#[test]
fn the_readme_table_is_the_generated_one() {
    let readme = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/../../README.md")).unwrap();
    let start = readme.find("<!-- settings table: begin -->").expect("README has the settings table marker");
    let end = readme.find("<!-- settings table: end -->").expect("README has the end marker");
    let table = readme[start..end].split_once('\n').unwrap().1;
    assert_eq!(table, settings::markdown(), "run `critbox settings --markdown` and paste its output");
}
