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
    assert_eq!(variants.len(), 2);
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
