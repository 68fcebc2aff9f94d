//! Robustness of the config decoder and the results-file loader (tier 4,
//! property runs): `experiment::parse` and `experiment::export::load` are fed
//! hostile variants of real inputs — every preset, the bench configs and a
//! saved results file — mutated at random (values swapped for huge, negative,
//! non-finite-looking, fractional or wrongly typed ones, keys removed or
//! added, long strings, deep nesting, truncated or corrupted text). Each call
//! must return `Ok` or an error with a non-empty message, never panic; a
//! config that passes is then built into its first and last jobs, which take
//! a few steps (a hostile but valid setting must fail its job, not the
//! process). Cases come from the project's seeded `Stream`, so every run
//! checks the same inputs. `CRITBOX_FUZZ_CASES` (default 200) sets how many
//! mutated cases per seed input: a long manual run is e.g.
//! `CRITBOX_FUZZ_CASES=20000 cargo test --release -p critbox-core --test robustness`.
//! No timings: inputs are bounded in size (at most the decoder's own limits
//! plus a little), so each case is bounded in time and memory by construction.

use std::path::PathBuf;

use critbox_core::experiment::{export, parse, run_all, Job};
use critbox_core::rng::Stream;
use serde_json::{json, Map, Value};

fn cases() -> usize {
    match std::env::var("CRITBOX_FUZZ_CASES") {
        Ok(v) => v
            .trim()
            .parse()
            .unwrap_or_else(|_| panic!("CRITBOX_FUZZ_CASES must be a whole number, got {v:?}")),
        Err(_) => 200,
    }
}

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..")
}

/// Every preset the page offers, and the bench workloads.
fn seed_configs() -> Vec<(String, String)> {
    let mut out = Vec::new();
    for dir in ["web/presets", "bench"] {
        let Ok(entries) = std::fs::read_dir(repo().join(dir)) else { continue };
        let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
        paths.sort();
        for p in paths {
            let name = p.file_name().unwrap().to_string_lossy().to_string();
            if p.extension().is_some_and(|x| x == "json") && name != "index.json" && name != "results.json" {
                let text = std::fs::read_to_string(&p).unwrap();
                // Seeds are only useful if they are valid to begin with.
                assert!(parse(&text).is_ok(), "{dir}/{name} should be a valid config");
                out.push((format!("{dir}/{name}"), text));
            }
        }
    }
    assert!(out.len() >= 5, "expected the presets under web/presets, found {}", out.len());
    out
}

/// A saved results file of a small run (2 variants × 2 seeds × 600 steps).
fn seed_results() -> String {
    let plan = parse(
        &json!({
            "schema": 1,
            "title": "rover, small",
            "task": {"kind": "grid", "map": ["#####", "#S.D#", "#####"], "max_steps": 20},
            "base": {"family": "a2c", "features": {"kind": "tabular"}},
            "variants": [{"label": "a"}, {"label": "b", "learner": {"family": "qac"}}],
            "seeds": 2, "steps": 600, "master_seed": 3
        })
        .to_string(),
    )
    .unwrap();
    let results = run_all(&plan);
    let text = export::save(&plan, &results).to_string();
    assert!(export::load(&text).is_ok(), "a freshly saved results file should load");
    text
}

/// A hostile scalar or structure.
fn hostile(rng: &mut Stream) -> Value {
    match rng.below(22) {
        0 => json!(1e308),
        1 => json!(-1e308),
        2 => json!(f64::MAX),
        3 => json!(f64::MIN_POSITIVE),
        4 => json!(u64::MAX),
        5 => json!(i64::MIN),
        6 => json!(-1),
        7 => json!(0),
        8 => json!(0.5),
        9 => json!(-0.0),
        10 => json!(4_294_967_296u64),
        11 => Value::Null,
        12 => json!(true),
        13 => json!("NaN"),
        14 => json!("Infinity"),
        15 => Value::String("x".repeat(1 + rng.below(100_000))),
        16 => Value::String("<img src=x onerror=alert(1)>\u{0}\u{202e}é🙂".into()),
        17 => json!([]),
        18 => json!({}),
        19 => {
            let mut v = json!(1);
            for _ in 0..rng.below(200) {
                v = json!([v]);
            }
            v
        }
        20 => json!(rng.next_u64() as f64 * if rng.below(2) == 0 { 1.0 } else { -1e-10 }),
        _ => json!(rng.below(1_000_000_000) as u64),
    }
}

/// Pointers to every node of a JSON tree (paths of keys and indices).
fn paths(v: &Value, at: &mut Vec<Vec<Value>>, here: &mut Vec<Value>) {
    at.push(here.clone());
    match v {
        Value::Object(m) => {
            for (k, c) in m {
                here.push(Value::String(k.clone()));
                paths(c, at, here);
                here.pop();
            }
        }
        Value::Array(a) => {
            for (i, c) in a.iter().enumerate() {
                here.push(json!(i));
                paths(c, at, here);
                here.pop();
            }
        }
        _ => {}
    }
}

fn node<'a>(v: &'a mut Value, path: &[Value]) -> &'a mut Value {
    path.iter().fold(v, |v, k| match k {
        Value::String(s) => v.get_mut(s.as_str()).unwrap(),
        _ => v.get_mut(k.as_u64().unwrap() as usize).unwrap(),
    })
}

const KEYS: &[&str] = &[
    "schema",
    "task",
    "kind",
    "base",
    "variants",
    "learner",
    "label",
    "seeds",
    "steps",
    "master_seed",
    "features",
    "tilings",
    "hash",
    "hidden",
    "map",
    "reward",
    "formula",
    "max_steps",
    "actor_step",
    "segment",
    "__proto__",
];

/// One to four structural mutations of a JSON value.
fn mutate_value(v: &mut Value, rng: &mut Stream) {
    for _ in 0..1 + rng.below(4) {
        let mut all = Vec::new();
        paths(v, &mut all, &mut Vec::new());
        let path = all[rng.below(all.len())].clone();
        let target = node(v, &path);
        match rng.below(6) {
            0 | 1 => *target = hostile(rng),
            2 => {
                if let Value::Object(m) = target {
                    if !m.is_empty() {
                        let k = m.keys().nth(rng.below(m.len())).unwrap().clone();
                        m.remove(&k);
                    }
                }
            }
            3 => {
                if let Value::Object(m) = target {
                    m.insert(KEYS[rng.below(KEYS.len())].to_string(), hostile(rng));
                } else {
                    *target = hostile(rng);
                }
            }
            4 => {
                if let Value::Array(a) = target {
                    let n = rng.below(4);
                    if n == 0 {
                        a.clear();
                    } else if !a.is_empty() {
                        let first = a[0].clone();
                        for _ in 0..n * 20 {
                            a.push(first.clone());
                        }
                    }
                } else {
                    *target = Value::Object(Map::new());
                }
            }
            _ => {
                // Move a subtree somewhere else (right shapes in wrong places).
                let other = all[rng.below(all.len())].clone();
                let copy = node(v, &other).clone();
                *node(v, &path) = copy;
            }
        }
    }
}

/// Text-level corruption: truncation, byte flips, inserted junk, deep nesting.
fn mutate_text(text: &str, rng: &mut Stream) -> String {
    let mut b = text.as_bytes().to_vec();
    match rng.below(5) {
        0 => b.truncate(rng.below(b.len() + 1)),
        1 => {
            for _ in 0..1 + rng.below(8) {
                let i = rng.below(b.len().max(1));
                if i < b.len() {
                    b[i] = rng.below(256) as u8;
                }
            }
        }
        2 => {
            let i = rng.below(b.len() + 1);
            let junk: &[&[u8]] = &[
                b"1e99999",
                b"-",
                b"\"\\ud800\"",
                b",",
                b"}",
                b"]]",
                b"NaN",
                b"Infinity",
                b"\x00",
                b"\xff\xfe",
            ];
            b.splice(i..i, junk[rng.below(junk.len())].iter().copied());
        }
        3 => {
            let depth = 1 + rng.below(200_000);
            let mut s = "[".repeat(depth);
            s.push_str(&"]".repeat(rng.below(depth + 1)));
            return s;
        }
        _ => {
            let depth = 1 + rng.below(5_000);
            return format!("{}{}{}", "{\"a\":".repeat(depth), "1", "}".repeat(depth));
        }
    }
    String::from_utf8_lossy(&b).into_owned()
}

/// parse must answer; a valid plan's first and last jobs must survive a few
/// steps. Returns whether the config was accepted.
fn check_config(text: &str, case: &str) -> bool {
    match parse(text) {
        Ok(plan) => {
            let n = plan.job_count();
            assert!(n >= 1, "{case}: a valid plan with no jobs");
            // A study's fresh jobs exist once its tuning stage has chosen;
            // choose each variant's last grid point (the farthest from the
            // first job's).
            let plan = match &plan.study {
                Some(s) => {
                    let last: Vec<usize> = s.grids.iter().map(|g| g.points.len() - 1).collect();
                    plan.with_choice(&last).unwrap_or_else(|e| panic!("{case}: {e}"))
                }
                None => plan,
            };
            for id in [0, n - 1] {
                let mut job = Job::new(&plan, id);
                job.advance(150);
            }
            true
        }
        Err(e) => {
            assert!(!e.problems.is_empty(), "{case}: an error with no problems");
            assert!(!e.to_string().trim().is_empty(), "{case}: an empty error message");
            false
        }
    }
}

fn check_results(text: &str, case: &str) {
    if let Err(e) = export::load(text) {
        assert!(!e.to_string().trim().is_empty(), "{case}: an empty error message");
    }
}

#[test]
fn mutated_configs_give_a_plan_or_a_message() {
    // Property test, common practice, no source: a decoder of untrusted text
    // returns a value or an error for every input.
    let n = cases();
    let (mut accepted, mut refused) = (0usize, 0usize);
    for (name, text) in seed_configs() {
        let base: Value = serde_json::from_str(&text).unwrap();
        let mut rng = Stream::from_seed(0xC0F1 ^ name.len() as u64 ^ text.len() as u64);
        for k in 0..n {
            let case_text = if k % 3 == 2 {
                mutate_text(&text, &mut rng)
            } else {
                let mut v = base.clone();
                mutate_value(&mut v, &mut rng);
                v.to_string()
            };
            let case = format!("{name} case {k}");
            match std::panic::catch_unwind(|| check_config(&case_text, &case)) {
                Ok(true) => accepted += 1,
                Ok(false) => refused += 1,
                Err(_) => {
                    let show: String = case_text.chars().take(2000).collect();
                    panic!("{case} panicked on this input:\n{show}");
                }
            }
        }
    }
    // The mutations must reach both sides of the decoder, or the run tests
    // little (checked when there are enough cases for it to mean something).
    assert!(
        n < 50 || (accepted * 20 >= n && refused * 2 >= n),
        "accepted {accepted}, refused {refused} of the mutated configs"
    );
    eprintln!(
        "mutated configs: {accepted} accepted (jobs built and stepped), {refused} refused with a message"
    );
}

#[test]
fn mutated_results_files_give_results_or_a_message() {
    // Property test, common practice, no source.
    let text = seed_results();
    let base: Value = serde_json::from_str(&text).unwrap();
    let mut rng = Stream::from_seed(0x5E5E);
    for k in 0..cases() * 2 {
        let case_text = if k % 3 == 2 {
            mutate_text(&text, &mut rng)
        } else {
            let mut v = base.clone();
            mutate_value(&mut v, &mut rng);
            v.to_string()
        };
        let case = format!("results case {k}");
        if std::panic::catch_unwind(|| check_results(&case_text, &case)).is_err() {
            let show: String = case_text.chars().take(2000).collect();
            panic!("{case} panicked on this input:\n{show}");
        }
    }
}

#[test]
fn oversized_and_deep_inputs_are_refused_with_a_message() {
    // Limits named in experiment::config (MAX_CONFIG_BYTES) and serde_json's
    // recursion limit (128 levels, from memory): both must answer with an error.
    let big = format!("{{\"schema\": 1, \"title\": \"{}\"}}", "x".repeat(2 << 20));
    let e = parse(&big).unwrap_err().to_string();
    assert!(e.contains("bytes"), "an oversized config should say how big it is: {e}");
    let deep = format!("{}{}", "[".repeat(1 << 20), "]".repeat(1 << 20));
    assert!(parse(&deep).is_err());
    assert!(export::load(&deep).is_err());
    let e = export::load("{\"critbox_results\": 99}").unwrap_err().to_string();
    assert!(e.contains("critbox_results"), "an unknown results version should be named: {e}");
}
