//! The `critbox` command as a user calls it.

use std::process::Command;

fn critbox() -> Command {
    Command::new(env!("CARGO_BIN_EXE_critbox"))
}

fn preset(name: &str) -> String {
    format!("{}/../../web/presets/{name}", env!("CARGO_MANIFEST_DIR"))
}

fn small_rover(dir: &std::path::Path) -> std::path::PathBuf {
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(preset("rover-a2c-vs-qac.json")).unwrap()).unwrap();
    v["seeds"] = 3.into();
    v["steps"] = 4000.into();
    let p = dir.join("small.json");
    std::fs::write(&p, v.to_string()).unwrap();
    p
}

#[test]
fn run_prints_the_summary_json() {
    let dir = std::env::temp_dir().join(format!("critbox-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let out = critbox().arg("run").arg(small_rover(&dir)).output().unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let variants = v["variants"].as_array().unwrap();
    assert_eq!(variants.len(), 3, "the rover preset compares three variants");
    for var in variants {
        assert!(var["label"].is_string());
        assert!(var["final_return"]["mean"].is_f64());
        let ci = var["final_return"]["ci95"].as_array().unwrap();
        assert_eq!(ci.len(), 2);
        let (lo, hi, m) =
            (ci[0].as_f64().unwrap(), ci[1].as_f64().unwrap(), var["final_return"]["mean"].as_f64().unwrap());
        assert!(lo <= m && m <= hi);
        assert_eq!(var["per_seed_final"].as_array().unwrap().len(), 3);
    }
    // The same config twice prints the same bytes.
    let again = critbox().arg("run").arg(small_rover(&dir)).output().unwrap();
    assert_eq!(out.stdout, again.stdout);
}

#[test]
fn every_preset_runs_validate() {
    let dir = format!("{}/../../web/presets", env!("CARGO_MANIFEST_DIR"));
    let mut n = 0;
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.file_name().unwrap() == "index.json" || p.extension().is_none_or(|e| e != "json") {
            continue;
        }
        let out = critbox().arg("validate").arg(&p).output().unwrap();
        assert!(out.status.success(), "{}: {}", p.display(), String::from_utf8_lossy(&out.stderr));
        n += 1;
    }
    assert!(n >= 2);
}

#[test]
fn bad_config_names_the_field_and_exits_2() {
    let dir = std::env::temp_dir().join(format!("critbox-cli-bad-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("bad.json");
    std::fs::write(
        &p,
        r#"{"schema": 1, "task": {"kind": "cartpole"}, "steps": 100,
            "variants": [{"label": "a", "learner": {"critic_step": -2}}]}"#,
    )
    .unwrap();
    let out = critbox().arg("run").arg(&p).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("variants[0].learner.critic_step: must be in (0, 10], got -2"), "{err}");
    let out = critbox().arg("run").arg(dir.join("missing.json")).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = critbox().arg("frobnicate").output().unwrap();
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn csv_and_saved_results_round_trip() {
    let dir = std::env::temp_dir().join(format!("critbox-cli-save-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let (csv, saved) = (dir.join("out.csv"), dir.join("results.json"));
    let out = critbox()
        .arg("run")
        .arg(small_rover(&dir))
        .arg("--csv")
        .arg(&csv)
        .arg("--save")
        .arg(&saved)
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let text = std::fs::read_to_string(&csv).unwrap();
    assert!(text.starts_with("variant,label,seed,step,metric,value,settings\n"));
    assert!(text.lines().any(|l| l.ends_with(&format!(",final_return,{},", {
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        v["variants"][0]["per_seed_final"][0].as_f64().unwrap()
    }))));
    let reopened = critbox().arg("open").arg(&saved).output().unwrap();
    assert!(reopened.status.success());
    assert_eq!(reopened.stdout, out.stdout);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let c = &v["comparisons"][0];
    assert!(c["prob_improvement"]["value"].is_f64() && c["welch"]["p"].is_f64() && c["verdict"].is_string());
    std::fs::write(dir.join("junk.json"), "{\"critbox_results\": 9}").unwrap();
    let bad = critbox().arg("open").arg(dir.join("junk.json")).output().unwrap();
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("version 9"));
}

#[test]
fn audit_prints_the_shaping_audit_and_refuses_bad_configs() {
    // The loop bonus changes the optimal policy next to the dock (see
    // crate/core/tests/reward.rs for the derived values); its potential twin
    // does not (Ng, Harada & Russell 1999, Theorem 1).
    let out = critbox().arg("audit").arg(preset("rover-loop-bonus.json")).output().unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["potential_based"], false);
    assert_eq!(v["policy_changed"], true);
    assert!(!v["differing_states"].as_array().unwrap().is_empty());
    assert!(v["base_value_loss"].as_f64().unwrap() > 80.0);
    let out = critbox().arg("audit").arg(preset("rover-potential-twin.json")).output().unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!((v["potential_based"].as_bool(), v["policy_changed"].as_bool()), (Some(true), Some(false)));
    assert_eq!(v["base_value_loss"], 0.0);
    let dir = std::env::temp_dir().join(format!("critbox-cli-audit-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("bad.json");
    std::fs::write(
        &p,
        r#"{"schema": 1, "task": {"kind": "grid", "layout": "ledge"}, "steps": 100,
            "reward": {"mode": "bonus", "formula": "rwo'"}, "variants": [{"label": "a"}]}"#,
    )
    .unwrap();
    let out = critbox().arg("audit").arg(&p).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("reward.formula: column 1: unknown state variable `rwo`"), "{err}");
}

#[test]
fn probe_prints_variances_per_baseline_option() {
    let out = critbox()
        .arg("probe")
        .arg(preset("rover-a2c-vs-qac.json"))
        .args(["--checkpoints", "0,2000", "--estimates", "5", "--episodes", "2"])
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let cps = v["checkpoints"].as_array().unwrap();
    assert_eq!(cps.len(), 2);
    for cp in cps {
        for o in cp["options"].as_array().unwrap() {
            assert!(o["trace_cov"].as_f64().unwrap() >= 0.0);
        }
    }
    let bad =
        critbox().arg("probe").arg(preset("rover-a2c-vs-qac.json")).args(["--seed", "99"]).output().unwrap();
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("seed: 99 is out of range"));
}

/// Runs the command; returns (exit code, stdout, stderr).
fn call(args: &[&str]) -> (Option<i32>, String, String) {
    let out = critbox().args(args).output().unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn each_command_refuses_unknown_options_missing_values_and_bad_numbers() {
    // Every refusal exits 2, names the option and shows the usage text.
    let p = preset("rover-a2c-vs-qac.json");
    let p = p.as_str();
    let cases: &[(&[&str], &str)] = &[
        (&["run", p, "--bogus"], "run: unknown option \"--bogus\""),
        (&["run", p, "-v"], "run: unknown option \"-v\""),
        (&["run", p, "--csv"], "--csv needs a value (FILE)"),
        (&["run", p, p], "`critbox run` takes exactly one CONFIG argument"),
        (&["probe", p, "--baseline", "x"], "probe: unknown option \"--baseline\""),
        (&["probe", p, "--episodes"], "--episodes needs a value (M)"),
        (&["probe", p, "--estimates", "many"], "--estimates: \"many\" is not a whole number"),
        (&["probe", p, "--estimates", "5000000000"], "--estimates: 5000000000 is too large"),
        (
            &["probe", p, "--checkpoints", "0,x"],
            "--checkpoints: \"0,x\" is not a comma-separated list of whole numbers",
        ),
        (&["inspect", p, "--steps", "3"], "inspect: unknown option \"--steps\""),
        (&["inspect", p, "--seed"], "--seed needs a value (S)"),
        (&["inspect", p, "--at", "soon"], "--at: \"soon\" is not a whole number"),
        (&["inspect", p, "--variant", "-1"], "--variant: \"-1\" is not a whole number"),
        (&["inspect", p, "--table=yes"], "--table takes no value"),
        (&["inspect"], "`critbox inspect` needs a CONFIG argument"),
        (&["open", "--all", "x"], "open: unknown option \"--all\""),
        (&["open"], "`critbox open` needs a RESULTS argument"),
        (&["validate", p, "--quiet"], "validate: unknown option \"--quiet\""),
        (&["audit", p, p], "`critbox audit` takes exactly one CONFIG argument"),
        (&["serve", "--host", "0.0.0.0"], "serve: unknown option \"--host\""),
        (&["serve", "--root"], "--root needs a value (DIR)"),
        (&["serve", "--port", "http"], "--port: \"http\" is not a port number (0 to 65535)"),
        (&["serve", "web"], "`critbox serve` takes no argument"),
        (&["settings", "--html"], "settings: unknown option \"--html\""),
        (&["settings", p], "`critbox settings` takes no argument"),
        (&["bench", p, "--jobs", "2"], "bench: unknown option \"--jobs\""),
        (&["bench", p, "--job"], "--job needs a value (J)"),
        (&["bench", p, "--steps", "1e6"], "--steps: \"1e6\" is not a whole number"),
        (
            &["bench", p, "--rss-at", "1,b"],
            "--rss-at: \"1,b\" is not a comma-separated list of whole numbers",
        ),
        (&["frobnicate"], "unknown command \"frobnicate\""),
        (&[], "no command given"),
    ];
    for (args, want) in cases {
        let (code, out, err) = call(args);
        assert_eq!(code, Some(2), "{args:?}: {err}");
        assert!(err.starts_with(&format!("critbox: {want}")), "{args:?}: {err}");
        assert!(err.contains("\nusage:\n"), "{args:?} shows the usage");
        assert!(out.is_empty(), "{args:?}");
    }
    // Options take `--name=value` too, and `--help` anywhere prints the usage.
    let (code, out, _) = call(&["inspect", p, "--at=0", "--variant=1"]);
    assert_eq!(code, Some(0));
    assert!(out.contains("\"variant\": 1"));
    let (code, out, _) = call(&["probe", p, "--help"]);
    assert_eq!(code, Some(0));
    assert!(out.starts_with("usage:\n") && out.contains("critbox inspect CONFIG.json [--variant I]"));
}

#[test]
fn inspect_gives_the_exact_values_of_the_small_gridworld() {
    // Sutton & Barto (2018), Example 4.1 / Figure 4.1 (k = ∞): before any
    // step the tabular softmax actor is the equiprobable random policy, whose
    // values on the 4 × 4 gridworld are −14, −18, −20, −22.
    let dir = std::env::temp_dir().join(format!("critbox-cli-inspect-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("small-grid.json");
    std::fs::write(
        &p,
        r#"{"schema": 1, "task": {"kind": "grid", "map": ["D...", "....", "..S.", "...D"]},
            "base": {"discount": 1}, "variants": [{"label": "uniform"}], "seeds": 1, "steps": 500}"#,
    )
    .unwrap();
    let p = p.to_str().unwrap();
    let (code, out, err) = call(&["inspect", p, "--at", "0"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let want = [
        [0.0, -14.0, -20.0, -22.0],
        [-14.0, -18.0, -20.0, -20.0],
        [-20.0, -20.0, -18.0, -14.0],
        [-22.0, -20.0, -14.0, 0.0],
    ];
    for s in v["states"].as_array().unwrap() {
        let (i, j) = (s["values"][0].as_f64().unwrap() as usize, s["values"][1].as_f64().unwrap() as usize);
        assert!((s["exact"].as_f64().unwrap() - want[i][j]).abs() < 1e-9, "{s}");
    }
    assert!((v["exact"]["start_value"].as_f64().unwrap() + 18.0).abs() < 1e-9);
    assert_eq!(v["steps"], 0);
    // After training (the budget by default) the table shows the moves.
    let (code, table, err) = call(&["inspect", p, "--table"]);
    assert_eq!(code, Some(0), "{err}");
    assert!(table.starts_with("variant 0 (uniform), seed 0, after 500 steps: ok\n"), "{table}");
    assert!(
        table.contains("preferred moves") && table.contains("exact start value of the policy"),
        "{table}"
    );
}

#[test]
fn inspect_a_grid_preset_is_deterministic_and_names_bad_choices() {
    let p = preset("rover-a2c-vs-qac.json");
    let args = ["inspect", p.as_str(), "--variant", "1", "--seed", "2", "--at", "3000"];
    let (code, out, err) = call(&args);
    assert_eq!(code, Some(0), "{err}");
    assert_eq!(call(&args).1, out, "the same job re-trained gives the same bytes");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(
        (v["variant"].as_u64(), v["seed"].as_u64(), v["steps"].as_u64()),
        (Some(1), Some(2), Some(3000))
    );
    assert_eq!(v["state_names"], serde_json::json!(["row", "col"]));
    let states = v["states"].as_array().unwrap();
    assert!(states.len() > 10);
    for s in states.iter().filter(|s| s["terminal"] == false) {
        let sum: f64 = s["policy"].as_array().unwrap().iter().map(|p| p.as_f64().unwrap()).sum();
        assert!((sum - 1.0).abs() < 1e-9, "{s}");
        assert!(s["exact"].is_f64() && s["critic"].is_f64());
    }
    for (args, want) in [
        (
            vec!["--variant", "3"],
            "variant: 3 is out of range: the config has 3 variant(s), numbered from 0 to 2",
        ),
        (vec!["--seed", "10"], "seed: 10 is out of range: the config has 10 seed(s), numbered from 0 to 9"),
        (vec!["--at", "30001"], "step: 30001 is past the config's budget of 30000 steps per job"),
    ] {
        let mut all = vec!["inspect", p.as_str()];
        all.extend(args);
        let (code, _, err) = call(&all);
        assert_eq!(code, Some(2), "{err}");
        assert_eq!(err.trim_end(), format!("critbox: {p}: {want}"));
    }
}

#[test]
fn inspect_the_corridor_cart_pole_and_regulator() {
    // Short corridor: the exact start value is J(p) = (2p − 4) / (p (1 − p))
    // at the learned P(right) (Sutton & Barto 2018, Example 13.1).
    let (code, out, err) =
        call(&["inspect", &preset("corridor-baselines.json"), "--variant", "2", "--at", "4000"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let p = v["states"][0]["policy"][1].as_f64().unwrap();
    let j = v["exact"]["start_value"].as_f64().unwrap();
    assert!((j - (2.0 * p - 4.0) / (p * (1.0 - p))).abs() < 1e-9, "p = {p}, J = {j}");
    // Cart-pole: no exact model; the actor's weights and a 7 × 7 slice.
    let (code, out, err) = call(&["inspect", &preset("cartpole-a2c-tiles.json"), "--at", "1000"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["slice"]["points"].as_array().unwrap().len(), 49);
    assert_eq!(v["slice"]["vars"], serde_json::json!(["x", "x_dot"]));
    assert!(v["states"].as_array().unwrap().is_empty() && v["exact"].is_null());
    assert!(v["actor"]["weights"].as_array().unwrap().len() > 100);
    // The regulator: the deterministic learner's gain within 0.01 of the
    // Riccati gain after 20 000 steps (Silver et al. 2014, Theorem 1;
    // Bertsekas, Vol. I, Section 4.1, from memory; the level is the one
    // crate/core/tests/learners.rs states for every seed).
    let (code, out, err) = call(&["inspect", &preset("dpg-lqr.json"), "--seed", "4"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let g = &v["regulator"];
    let (k, k_star) = (g["gain"].as_f64().unwrap(), g["riccati_gain"].as_f64().unwrap());
    assert!((k - k_star).abs() < 0.01 && (k_star - 0.5884).abs() < 1e-4, "{g}");
    assert!((g["weights_gain"].as_f64().unwrap() - k).abs() < 1e-9);
    let (code, table, _) = call(&["inspect", &preset("dpg-lqr.json"), "--seed", "4", "--table"]);
    assert_eq!(code, Some(0));
    assert!(
        table.contains("regulator: learned gain K = ") && table.contains("Riccati: K* = 0.5884"),
        "{table}"
    );
}

/// A folder of its own for one test.
fn scratch(name: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("critbox-cli-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Runs critbox in `dir`; (exit code, stdout, stderr).
fn in_dir(dir: &std::path::Path, args: &[&str]) -> (i32, Vec<u8>, String) {
    let out = critbox().current_dir(dir).args(args).output().unwrap();
    (out.status.code().unwrap_or(-1), out.stdout, String::from_utf8_lossy(&out.stderr).into_owned())
}

fn ok(dir: &std::path::Path, args: &[&str]) -> Vec<u8> {
    let (code, out, err) = in_dir(dir, args);
    assert_eq!(code, 0, "critbox {args:?}: {err}");
    out
}

/// The tuned rover study, small: 2 variants × 3 points × 2 tuning seeds, then 3 fresh seeds.
fn small_study(dir: &std::path::Path) {
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(preset("rover-tuned-a2c-vs-qac.json")).unwrap())
            .unwrap();
    for var in v["variants"].as_array_mut().unwrap() {
        var["sweep"]["actor_step"] = serde_json::json!({"log2": [-6, -2], "count": 3});
    }
    v["seeds"] = 3.into();
    v["tuning_seeds"] = 2.into();
    v["steps"] = 3000.into();
    std::fs::write(dir.join("study.json"), v.to_string()).unwrap();
}

#[test]
fn shards_merged_equal_one_run_of_a_plain_config() {
    // Jobs are deterministic and independent, so the merge of shards must be
    // the single run bit for bit (common practice, no source).
    let dir = scratch("shard-plain");
    small_rover(&dir);
    let single = ok(&dir, &["run", "small.json", "--save", "single.json"]);
    let mut parts = Vec::new();
    for k in 0..4 {
        let name = format!("part-{k}.json");
        ok(&dir, &["run", "small.json", "--shard", &format!("{k}/4"), "--save", &name]);
        parts.push(name);
    }
    let part0: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("part-0.json")).unwrap()).unwrap();
    // 3 variants × 3 seeds = 9 jobs; shard 0/4 holds ids 0, 4, 8.
    assert_eq!(part0["jobs"], serde_json::json!([0, 4, 8]));
    assert_eq!(part0["config_sha256"].as_str().unwrap().len(), 64);
    let mut args = vec!["merge"];
    args.extend(parts.iter().rev().map(String::as_str));
    args.extend(["--save", "all.json"]);
    assert_eq!(ok(&dir, &args), single);
    assert_eq!(ok(&dir, &["open", "all.json"]), single);
    assert_eq!(std::fs::read(dir.join("all.json")).unwrap(), std::fs::read(dir.join("single.json")).unwrap());
}

#[test]
fn a_study_in_two_sharded_stages_equals_one_run() {
    let dir = scratch("shard-study");
    small_study(&dir);
    let single = ok(&dir, &["run", "study.json"]);
    for k in 0..4 {
        ok(&dir, &["run", "study.json", "--shard", &format!("{k}/4"), "--save", &format!("t{k}.json")]);
    }
    let tuning: serde_json::Value = serde_json::from_slice(&ok(
        &dir,
        &["merge", "t0.json", "t1.json", "t2.json", "t3.json", "--save", "tuning.json"],
    ))
    .unwrap();
    assert_eq!(tuning["stage"], "tuning");
    assert_eq!(tuning["jobs"], 12);
    for k in 0..3 {
        let shard = format!("{k}/3");
        ok(
            &dir,
            &[
                "run",
                "study.json",
                "--stage",
                "fresh",
                "--from",
                "tuning.json",
                "--shard",
                &shard,
                "--save",
                &format!("f{k}.json"),
            ],
        );
    }
    let merged = ok(&dir, &["merge", "tuning.json", "f0.json", "f1.json", "f2.json", "--save", "all.json"]);
    assert_eq!(merged, single);
    assert_eq!(ok(&dir, &["open", "all.json"]), single);
    // The chosen points in the merged summary are the single run's.
    let v: serde_json::Value = serde_json::from_slice(&merged).unwrap();
    assert!(v["study"].is_object());
}

#[test]
fn wrong_parts_exit_2_naming_the_problem() {
    let dir = scratch("shard-wrong");
    small_rover(&dir);
    for k in 0..3 {
        ok(&dir, &["run", "small.json", "--shard", &format!("{k}/3"), "--save", &format!("p{k}.json")]);
    }
    // Another config: one more step.
    let mut other: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("small.json")).unwrap()).unwrap();
    other["steps"] = 4001.into();
    std::fs::write(dir.join("other.json"), other.to_string()).unwrap();
    ok(&dir, &["run", "other.json", "--shard", "2/3", "--save", "q2.json"]);
    let text = std::fs::read_to_string(dir.join("p1.json")).unwrap();
    std::fs::write(dir.join("cut.json"), &text[..text.len() / 2]).unwrap();
    let mut edited: serde_json::Value = serde_json::from_str(&text).unwrap();
    edited["config"]["steps"] = 4001.into();
    std::fs::write(dir.join("edited.json"), edited.to_string()).unwrap();
    let cases: &[(&[&str], &str)] = &[
        (&["merge", "p0.json", "p1.json", "q2.json"], "q2.json comes from a different config"),
        (&["merge", "p0.json", "p2.json"], "ids 1, 4, 7; shard 1/3 should have produced them"),
        (
            &["merge", "p0.json", "p1.json", "p1.json", "p2.json"],
            "job 1 is in both p1.json (shard 1/3) and p1.json (shard 1/3): a doubled shard",
        ),
        (&["merge", "p0.json", "cut.json", "p2.json"], "cut.json: results file: not valid JSON"),
        (&["merge", "p0.json", "cut.json", "p2.json"], "truncated"),
        (
            &["merge", "p0.json", "edited.json", "p2.json"],
            "edited.json: results file: config_sha256: does not match",
        ),
        (
            &["run", "small.json", "--shard", "3/3", "--save", "x.json"],
            "--shard: \"3/3\" is not a shard K/N with N ≥ 1 and K < N",
        ),
        (&["run", "small.json", "--stage", "fresh", "--save", "x.json"], "this config is not a study"),
        (&["open", "p0.json"], "this is shard 0/3 of a run, not a whole results file"),
    ];
    for (args, says) in cases {
        let (code, _, err) = in_dir(&dir, args);
        assert_eq!(code, 2, "critbox {args:?}: {err}");
        assert!(err.contains(says), "critbox {args:?} should say {says:?}, said: {err}");
    }
}

#[test]
fn a_fresh_stage_needs_a_whole_tuning_stage_of_its_config() {
    let dir = scratch("shard-fresh");
    small_study(&dir);
    ok(&dir, &["run", "study.json", "--shard", "0/2", "--save", "t0.json"]);
    ok(&dir, &["run", "study.json", "--shard", "1/2", "--save", "t1.json"]);
    let (code, _, err) = in_dir(
        &dir,
        &["run", "study.json", "--stage", "fresh", "--from", "t0.json", "--shard", "0/2", "--save", "f.json"],
    );
    assert_eq!(code, 2);
    assert!(err.contains("the tuning file is shard 0/2, missing tuning jobs 1, 3, 5, 7, 9, 11"), "{err}");
    ok(&dir, &["merge", "t0.json", "t1.json", "--save", "tuning.json"]);
    ok(
        &dir,
        &[
            "run",
            "study.json",
            "--stage",
            "fresh",
            "--from",
            "tuning.json",
            "--shard",
            "0/2",
            "--save",
            "f0.json",
        ],
    );
    let (code, _, err) = in_dir(&dir, &["merge", "tuning.json", "f0.json"]);
    assert_eq!(code, 2);
    assert!(
        err.contains("missing 3 job(s) of stage fresh: ids 13, 15, 17; shard 1/2 should have produced them"),
        "{err}"
    );
    let (code, _, err) = in_dir(&dir, &["merge", "f0.json"]);
    assert_eq!(code, 2);
    assert!(err.contains("the tuning stage is missing (jobs 0–11)"), "{err}");
}
