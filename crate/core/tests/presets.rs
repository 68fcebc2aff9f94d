//! Every preset in `web/presets` keeps the promise its `expect` field makes.
//!
//! A preset's `expect` is a list of checkable claims about its own run:
//! `{"higher": B, "than": A}` (B's mean of the scored measure is above A's
//! and the comparison's Holm-adjusted Welch p is below 0.05), `{"variant":
//! V, "reaches": x}` (V's mean scored final value is at least x) and, for
//! the pendulum, `{"variant": V, "holds_upright": k}` (at least k of the
//! seeds' learned policies hold the pendulum upright, below). Each test runs
//! the preset as the CLI does (`experiment::run_all`) and checks every claim.
//!
//! Upright criterion, after Doya (2000), Neural Computation 12(1), §5
//! (from memory): an evaluation episode holds the pendulum when |θ| < π/4
//! for at least half of the steps of its second half; a seed holds it when
//! every one of its final evaluation rollouts does.

use critbox_core::experiment::{inspect, parse, run_all, Plan};
use serde_json::Value;

fn preset_text(name: &str) -> String {
    let path = format!("{}/../../web/presets/{name}", env!("CARGO_MANIFEST_DIR"));
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"))
}

/// Fraction of the second half of an episode's steps with |θ| < π/4.
fn upright_share(steps: &[inspect::RolloutStep]) -> f64 {
    let half = &steps[steps.len() / 2..];
    let up = half.iter().filter(|s| s.obs[0].abs() < std::f64::consts::FRAC_PI_4).count();
    up as f64 / half.len().max(1) as f64
}

/// How many seeds of `variant` hold the pendulum upright in every one of
/// `episodes` rollouts of the learned policy after the whole budget.
fn upright_seeds(plan: &Plan, variant: usize, episodes: u64) -> usize {
    let max = plan.spec.max_steps;
    (0..plan.config.seeds as usize)
        .filter(|&seed| {
            let mut job = inspect::train(plan, variant, seed, plan.config.steps).unwrap();
            (0..episodes).all(|e| {
                let mut task = plan.make_task();
                let r = inspect::rollout(job.learner_mut(), task.as_mut(), max, 9000 + e, true);
                let share = upright_share(&r.steps);
                r.steps.len() as u32 == max && share >= 0.5
            })
        })
        .count()
}

/// Checks every claim of a preset's `expect` against a run of `text`.
fn check(name: &str, text: &str) {
    let plan = parse(text).unwrap_or_else(|e| panic!("{name}: {e}"));
    let raw: Value = serde_json::from_str(text).unwrap();
    let claims = raw["expect"]["claims"].as_array().unwrap_or_else(|| panic!("{name}: no expect.claims"));
    assert!(!claims.is_empty(), "{name}: expect.claims is empty");
    let s = run_all(&plan).summary();
    let idx = |label: &Value| {
        s["variants"]
            .as_array()
            .unwrap()
            .iter()
            .position(|v| &v["label"] == label)
            .unwrap_or_else(|| panic!("{name}: no variant {label}"))
    };
    let mean = |v: usize| {
        let key = if s["score_on"] == "evaluation" { "eval_return" } else { "final_return" };
        s["variants"][v][key]["mean"].as_f64().unwrap()
    };
    for c in claims {
        if let Some(b) = c.get("higher") {
            let a = &c["than"];
            let cmp = s["comparisons"]
                .as_array()
                .unwrap()
                .iter()
                .find(|x| (&x["a"] == a && &x["b"] == b) || (&x["a"] == b && &x["b"] == a))
                .unwrap_or_else(|| panic!("{name}: no comparison of {a} and {b}"));
            let p = cmp["welch"]["p_holm"].as_f64().unwrap();
            assert!(
                mean(idx(b)) > mean(idx(a)) && p < 0.05,
                "{name}: {b} > {a} with Holm p < 0.05 fails: {} vs {}, p_holm {p}",
                mean(idx(b)),
                mean(idx(a))
            );
        } else if let Some(x) = c.get("reaches") {
            let v = idx(&c["variant"]);
            let x = x.as_f64().unwrap();
            assert!(mean(v) >= x, "{name}: {} reaches {x} fails: mean {}", c["variant"], mean(v));
        } else if let Some(k) = c.get("holds_upright") {
            let v = idx(&c["variant"]);
            let got = upright_seeds(&plan, v, 5);
            assert!(
                got as u64 >= k.as_u64().unwrap(),
                "{name}: {} holds upright on {got} seeds",
                c["variant"]
            );
        } else {
            panic!("{name}: unknown claim {c}");
        }
    }
}

macro_rules! preset_tests {
    ($($name:ident => $file:literal,)*) => {
        $(
            #[test]
            fn $name() {
                check($file, &preset_text($file));
            }
        )*

        #[test]
        fn every_preset_has_a_test_and_an_expect() {
            let listed = [$($file),*];
            let dir = format!("{}/../../web/presets", env!("CARGO_MANIFEST_DIR"));
            for e in std::fs::read_dir(&dir).unwrap() {
                let name = e.unwrap().file_name().into_string().unwrap();
                if name.ends_with(".json") && name != "index.json" {
                    assert!(listed.contains(&name.as_str()), "{name} has no test here");
                    let v: Value = serde_json::from_str(&preset_text(&name)).unwrap();
                    assert!(v["expect"]["text"].as_str().is_some_and(|t| !t.is_empty()), "{name}: no expect.text");
                }
            }
        }
    };
}

// Every preset at its full size: the whole set runs in about a minute with
// the test profile's optimisation, so no shortened twins are needed.
preset_tests! {
    cartpole_a2c_tiles => "cartpole-a2c-tiles.json",
    cartpole_dense_reward => "cartpole-dense-reward.json",
    cartpole_nstep_gae => "cartpole-nstep-gae.json",
    corridor_baselines => "corridor-baselines.json",
    corridor_tuned_baselines => "corridor-tuned-baselines.json",
    dpg_lqr => "dpg-lqr.json",
    greenhouse_night_heater => "greenhouse-night-heater.json",
    machine_wear_table => "machine-wear-table.json",
    mountain_car_energy => "mountain-car-energy.json",
    offpolicy_random_behaviour => "offpolicy-random-behaviour.json",
    pendulum_dac => "pendulum-dac.json",
    rover_a2c_vs_qac => "rover-a2c-vs-qac.json",
    rover_loop_bonus => "rover-loop-bonus.json",
    rover_off_policy => "rover-off-policy.json",
    rover_potential_twin => "rover-potential-twin.json",
    rover_tuned_a2c_vs_qac => "rover-tuned-a2c-vs-qac.json",
    server_average_reward => "server-average-reward.json",
}

/// The summary's diagnostic warnings of a config.
fn warnings_of(config: &str) -> Vec<String> {
    let plan = parse(config).unwrap();
    let s = run_all(&plan).summary();
    s["warnings"].as_array().unwrap().iter().map(|w| w.as_str().unwrap().to_string()).collect()
}

// The three diagnostic warnings (thresholds: common practice, no source), each
// on a config made to trigger it, and none on healthy presets.

#[test]
fn a_huge_actor_step_collapses_the_entropy_and_is_warned() {
    let w = warnings_of(
        r#"{"schema":1,"task":{"kind":"grid","layout":"rover"},"base":{"family":"a2c","actor_step":10,"features":{"kind":"tabular"}},
            "variants":[{"label":"huge actor step"}],"seeds":3,"steps":20000,"master_seed":1}"#,
    );
    assert!(
        w.len() == 1
            && w[0].starts_with("huge actor step: policy entropy fell to ")
            && w[0].contains("% of its first-bin value"),
        "{w:?}"
    );
}

#[test]
fn uniform_behaviour_over_21_torques_starves_the_effective_sample_and_is_warned() {
    // A near-deterministic target against a uniform behaviour over 21 actions:
    // ρ is 21 on the one action it takes and 0 elsewhere, so the ESS fraction
    // tends to 1/21 (Kish's formula).
    let w = warnings_of(
        r#"{"schema":1,"task":{"kind":"pendulum","torque_levels":21,"max_steps":200},
            "base":{"family":"off_policy","actor_step":0.5,"features":{"kind":"rbf","centers":5,"width":1}},
            "variants":[{"label":"uniform over 21 torques"}],"seeds":3,"steps":20000,"master_seed":1}"#,
    );
    let ess: Vec<_> =
        w.iter().filter(|x| x.contains("effective sample size fraction stayed under 0.1")).collect();
    assert_eq!(ess.len(), 1, "{w:?}");
    assert!(ess[0].starts_with("uniform over 21 torques: ") && ess[0].contains("(mean 0.0"), "{w:?}");
}

#[test]
fn a_critic_step_past_two_diverges_and_the_norm_growth_is_warned() {
    // Tabular TD(0) with a step above 2 overshoots by |1 − α| > 1 per update
    // (Sutton & Barto 2018, §9.3 on step sizes; from memory): slow geometric growth.
    let w = warnings_of(
        r#"{"schema":1,"task":{"kind":"grid","layout":"rover"},"base":{"family":"a2c","critic_step":2.01,"actor_step":0.001,"features":{"kind":"tabular"}},
            "variants":[{"label":"critic step 2.01"}],"seeds":3,"steps":20000,"master_seed":1}"#,
    );
    assert!(
        w.iter()
            .any(|x| x.starts_with("critic step 2.01: the critic update norm's mean over the final share")),
        "{w:?}"
    );
}

#[test]
fn healthy_presets_raise_no_diagnostic_warning() {
    for name in ["rover-a2c-vs-qac.json", "rover-off-policy.json", "cartpole-a2c-tiles.json"] {
        let w = warnings_of(&preset_text(name));
        assert!(w.is_empty(), "{name}: {w:?}");
    }
}
