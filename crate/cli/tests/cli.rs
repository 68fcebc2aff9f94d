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
    assert!(text.starts_with("variant,label,seed,step,metric,value\n"));
    assert!(text.lines().any(|l| l.ends_with(&format!(",final_return,{}", {
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
