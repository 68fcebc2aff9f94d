//! The reward lab end to end: potential-based shaping against random finite
//! MDPs, a non-potential bonus that changes the optimal policy, the rover
//! presets under the shaping audit, the reward-hacking flag of a run, and
//! shaped rewards in the runner.

use critbox_core::experiment::{self, Job, JobStatus, Plan};
use critbox_core::reward::audit::{self, Method};
use critbox_core::reward::{Mode, RewardConfig};
use critbox_core::rng::Stream;
use critbox_core::task::{Action, ActionSpace, FiniteModel, Outcome, StateVar, Step, Task, TaskSpec};

fn preset_text(name: &str) -> String {
    let path = format!("{}/../../web/presets/{name}", env!("CARGO_MANIFEST_DIR"));
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn plan_with(name: &str, edit: impl FnOnce(&mut serde_json::Value)) -> Plan {
    let mut v: serde_json::Value = serde_json::from_str(&preset_text(name)).unwrap();
    edit(&mut v);
    experiment::config::validate_value(&v).unwrap()
}

/// A finite task given by its model; state `s` is observed as
/// `[s, feature[s]]` (variables `s` and `f`).
struct ModelTask {
    spec: TaskSpec,
    model: FiniteModel,
    feature: Vec<f64>,
}

impl ModelTask {
    fn new(model: FiniteModel, feature: Vec<f64>, action_names: &[&str], max_steps: u32) -> Self {
        let n = model.n_states;
        let spec = TaskSpec {
            kind: "grid",
            state_vars: vec![
                StateVar { name: "s".into(), low: 0.0, high: n as f64 },
                StateVar { name: "f".into(), low: -1.0, high: 1.0 },
            ],
            actions: ActionSpace::Discrete(action_names.iter().map(|a| a.to_string()).collect()),
            n_states: Some(n),
            default_discount: 0.9,
            max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        ModelTask { spec, model, feature }
    }
}

impl Task for ModelTask {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }
    fn reset(&mut self, _rng: &mut Stream, obs: &mut [f64]) {
        obs[0] = 0.0;
        obs[1] = self.feature[0];
    }
    fn step(&mut self, _a: Action<'_>, _rng: &mut Stream, _obs: &mut [f64]) -> Step {
        unreachable!("the audit reads the model only")
    }
    fn model(&self) -> Option<FiniteModel> {
        Some(self.model.clone())
    }
    fn state_obs(&self, s: usize, obs: &mut [f64]) -> bool {
        obs[0] = s as f64;
        obs[1] = self.feature[s];
        true
    }
}

/// A random finite MDP: 2 to 12 states (the last one or two terminal), 2 to
/// 4 actions, 1 to 3 outcomes per pair, rewards in [−5, 5]. With `proper`,
/// every pair reaches a terminal state with probability at least 0.1.
fn random_mdp(rng: &mut Stream, proper: bool) -> FiniteModel {
    let n = 2 + rng.below(11);
    let na = 2 + rng.below(3);
    let n_term = 1 + rng.below(2).min(n - 1);
    let terminal: Vec<bool> = (0..n).map(|s| s >= n - n_term).collect();
    let mut outcomes = Vec::new();
    for s in 0..n {
        let mut per_action = Vec::new();
        for _ in 0..na {
            let mut list = Vec::new();
            if !terminal[s] {
                let k = 1 + rng.below(3);
                let mut weights: Vec<f64> = (0..k).map(|_| 0.05 + rng.uniform()).collect();
                let total: f64 = weights.iter().sum();
                weights.iter_mut().for_each(|w| *w /= total);
                if proper {
                    weights.iter_mut().for_each(|w| *w *= 0.9);
                    let t = n - 1;
                    list.push(Outcome {
                        next: t,
                        prob: 0.1,
                        reward: rng.uniform_in(-5.0, 5.0),
                        terminal: true,
                    });
                }
                for w in weights {
                    let next = rng.below(n);
                    let reward = rng.uniform_in(-5.0, 5.0);
                    list.push(Outcome { next, prob: w, reward, terminal: terminal[next] });
                }
            }
            per_action.push(list);
        }
        outcomes.push(per_action);
    }
    let mut start = vec![0.0; n];
    start[0] = 1.0;
    FiniteModel { n_states: n, n_actions: na, start, terminal, outcomes }
}

#[test]
fn potential_shaping_keeps_optimal_policies_on_random_mdps() {
    // Ng, Harada & Russell (1999), Theorem 1: with F = γΦ(s') − Φ(s) (Φ = 0 at
    // terminal states) the optimal policies are unchanged and V*' = V* − Φ.
    // Property over 300 random MDPs, random potentials and discounts; a third
    // with discount 1 on models where every policy ends.
    let mut rng = Stream::from_seed(2024);
    let mut changed_by_random_bonus = 0;
    for case in 0..300 {
        let proper = case % 3 == 0;
        let m = random_mdp(&mut rng, proper);
        let gamma = if proper { 1.0 } else { rng.uniform_in(0.5, 0.99) };
        let phi: Vec<f64> =
            (0..m.n_states).map(|s| if m.terminal[s] { 0.0 } else { rng.uniform_in(-10.0, 10.0) }).collect();
        let mut shaped = m.clone();
        let mut bonus = m.clone();
        for s in 0..m.n_states {
            for a in 0..m.n_actions {
                let b = rng.uniform_in(-3.0, 3.0);
                for (o, ob) in shaped.outcomes[s][a].iter_mut().zip(bonus.outcomes[s][a].iter_mut()) {
                    let after = if o.terminal { 0.0 } else { phi[o.next] };
                    o.reward += gamma * after - phi[s];
                    ob.reward += b;
                }
            }
        }
        let c = audit::compare(&m, &shaped, gamma, 500);
        assert_eq!(c.method, Method::ValueIteration, "case {case}");
        assert!(c.differing.is_empty(), "case {case}: differing states {:?}", c.differing);
        assert_eq!(c.base_value_loss, 0.0, "case {case}");
        // V*' = V* − Φ, checked through the exact values.
        let vb = critbox_core::exact::value_iteration(&m, gamma, 1e-12).unwrap().values;
        let vs = critbox_core::exact::value_iteration(&shaped, gamma, 1e-12).unwrap().values;
        for s in 0..m.n_states {
            assert!(
                (vs[s] - (vb[s] - phi[s])).abs() < 1e-6,
                "case {case} state {s}: {} vs {}",
                vs[s],
                vb[s] - phi[s]
            );
        }
        // A random per-action bonus is no potential: it changes the policy in
        // some of these MDPs (so the check above can tell the difference).
        let cb = audit::compare(&m, &bonus, gamma, 500);
        if !cb.differing.is_empty() {
            changed_by_random_bonus += 1;
            assert!(cb.base_value_loss >= 0.0);
        }
    }
    assert!(changed_by_random_bonus > 50, "random bonuses changed {changed_by_random_bonus} policies");
}

#[test]
fn potential_from_a_formula_keeps_the_policy() {
    // Same theorem, through the formula language and the task's variables:
    // Φ(s) = 3 sin(2s) + f²/4 on random MDPs.
    let mut rng = Stream::from_seed(7);
    for case in 0..60 {
        let m = random_mdp(&mut rng, false);
        let feature: Vec<f64> = (0..m.n_states).map(|_| rng.uniform_in(-1.0, 1.0)).collect();
        let names = ["a0", "a1", "a2", "a3"];
        let na = m.n_actions;
        let task = ModelTask::new(m, feature, &names[..na], 100);
        let reward = RewardConfig {
            mode: Mode::Potential,
            formula: "3 * sin(2 * s) + f^2 / 4".into(),
            ..Default::default()
        };
        let a = audit::audit_reward(&task, &reward, audit::Objective::Discounted(0.95));
        assert!(a.potential_based);
        let c = a.exact.unwrap();
        assert!(c.differing.is_empty() && c.base_value_loss == 0.0, "case {case}: {:?}", c.differing);
    }
}

/// Two states and a terminal one: `advance` moves on (−1), `stay` stays (−1).
fn chain() -> ModelTask {
    let o = |next: usize, terminal: bool| vec![Outcome { next, prob: 1.0, reward: -1.0, terminal }];
    let m = FiniteModel {
        n_states: 3,
        n_actions: 2,
        start: vec![1.0, 0.0, 0.0],
        terminal: vec![false, false, true],
        outcomes: vec![vec![o(1, false), o(0, false)], vec![o(2, true), o(1, false)], vec![vec![], vec![]]],
    };
    ModelTask::new(m, vec![0.0; 3], &["advance", "stay"], 50)
}

#[test]
fn a_non_potential_bonus_changes_the_policy_and_the_audit_says_so() {
    // Ng, Harada & Russell (1999): a shaping term that is not a potential
    // difference can change the optimal policy. Here a bonus of 2 for `stay`
    // makes staying worth +1 a step forever. Values derived by hand: with
    // γ = 0.9 the base optimum from the start is −1 − 0.9 = −1.9 and staying
    // forever is worth −1/(1 − 0.9) = −10 under the base reward: loss 8.1.
    let task = chain();
    let reward = RewardConfig {
        mode: Mode::Bonus,
        formula: "if action == stay then 2 else 0".into(),
        ..Default::default()
    };
    let a = audit::audit_reward(&task, &reward, audit::Objective::Discounted(0.9));
    assert!(!a.potential_based);
    let c = a.exact.clone().unwrap();
    assert_eq!(c.method, Method::ValueIteration);
    assert_eq!(c.differing, vec![0, 1]);
    assert_eq!(c.base_greedy[0], vec![0]);
    assert_eq!(c.shaped_greedy[0], vec![1]);
    assert!((c.base_optimal_value + 1.9).abs() < 1e-9);
    assert!((c.shaped_policy_base_value + 10.0).abs() < 1e-9);
    assert!((c.base_value_loss - 8.1).abs() < 1e-9);
    let j = a.to_json(&task);
    assert_eq!(j["policy_changed"], true);
    assert_eq!(j["differing_states"][0]["base_actions"], serde_json::json!(["advance"]));
    assert_eq!(j["differing_states"][0]["shaped_actions"], serde_json::json!(["stay"]));
    // With γ = 1 the shaped values are unbounded: the audit works over the
    // 50-step horizon instead: optimum −2, staying 50 steps −50, loss 48.
    let a = audit::audit_reward(&task, &reward, audit::Objective::Discounted(1.0));
    let c = a.exact.unwrap();
    assert_eq!(c.method, Method::FiniteHorizon(50));
    assert!(c.shaped_unbounded);
    assert_eq!(c.differing, vec![0, 1]);
    assert!((c.base_value_loss - 48.0).abs() < 1e-9, "{}", c.base_value_loss);
    // The same bonus as a potential difference would keep the policy.
    let pot = RewardConfig { mode: Mode::Potential, formula: "2 * s".into(), ..Default::default() };
    let c = audit::audit_reward(&task, &pot, audit::Objective::Discounted(1.0)).exact.unwrap();
    assert!(c.differing.is_empty());
}

#[test]
fn rover_loop_bonus_is_caught_and_its_potential_twin_is_not() {
    // The progress bonus with no penalty for moving away (the pitfall
    // reported by Randløv & Alstrøm 1998, as retold by Ng, Harada & Russell
    // 1999): next to the dock the rover does better stepping away and back
    // for ever than docking. Derived by hand with γ = 0.99: the base optimum
    // is 17 moves, −(1 − 0.99^17)/0.01; the looping policy never docks and is
    // worth −1/(1 − 0.99) = −100 under the base reward.
    let plan = plan_with("rover-loop-bonus.json", |_| {});
    let a = critbox_core::experiment::audit::audit_plan(&plan);
    assert_eq!(a["task"], "grid");
    assert_eq!(a["potential_based"], false);
    assert_eq!(a["policy_changed"], true);
    let best = -(1.0 - 0.99f64.powi(17)) / 0.01;
    assert!((a["base_optimal_value"].as_f64().unwrap() - best).abs() < 1e-8);
    assert!(
        (a["base_value_loss"].as_f64().unwrap() - (best + 100.0)).abs() < 1e-6,
        "{}",
        a["base_value_loss"]
    );
    let cells: Vec<(u64, u64)> = a["differing_states"]
        .as_array()
        .unwrap()
        .iter()
        .map(|d| (d["row"].as_u64().unwrap(), d["col"].as_u64().unwrap()))
        .collect();
    assert!(cells.contains(&(5, 9)), "the cell next to the dock: {cells:?}");
    assert_eq!(a["variants"][0]["policy_changed"], false, "the base-reward variant");
    assert_eq!(a["variants"][1]["policy_changed"], true);

    let twin = critbox_core::experiment::audit::audit_plan(&plan_with("rover-potential-twin.json", |_| {}));
    assert_eq!(twin["potential_based"], true);
    assert_eq!(twin["policy_changed"], false);
    assert_eq!(twin["differing_states"], serde_json::json!([]));
    assert_eq!(twin["base_value_loss"], 0.0);
}

#[test]
fn every_finite_preset_audits_and_continuous_ones_say_why_not() {
    let dir = format!("{}/../../web/presets", env!("CARGO_MANIFEST_DIR"));
    let mut finite = 0;
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.file_name().unwrap() == "index.json" || p.extension().is_none_or(|e| e != "json") {
            continue;
        }
        let plan = experiment::parse(&std::fs::read_to_string(&p).unwrap()).unwrap();
        let a = critbox_core::experiment::audit::audit_plan(&plan);
        if a["finite"] == true {
            finite += 1;
            assert_eq!(a["exact"], true, "{}: {}", p.display(), a["note"]);
            assert!(a["policy_changed"].is_boolean() && a["base_value_loss"].is_number());
        } else {
            assert!(a["policy_changed"].is_null() && a["note"].as_str().unwrap().contains("no exact model"));
        }
    }
    assert!(finite >= 2);
}

#[test]
fn hacking_flag_catches_the_loop_bonus_run() {
    // Statistical check with a fixed master seed (measured, no source): on
    // the loop-bonus preset the learner learns to circle next to the dock
    // (base return stuck at the −200 time limit) while the shaped return
    // climbs, in every one of 4 seeds; the base-reward variant and the
    // potential twin are not flagged.
    let plan = plan_with("rover-loop-bonus.json", |v| {
        v["seeds"] = 4.into();
        v["steps"] = 12_000.into();
    });
    let s = experiment::run_all(&plan).summary();
    assert_eq!(s["variants"][0]["hacking"]["flag"], false);
    assert_eq!(s["variants"][1]["hacking"]["flag"], true, "{}", s["variants"][1]["hacking"]);
    assert_eq!(s["variants"][1]["hacking"]["seeds_flagged"], 4);
    assert!(s["variants"][1]["final_return"]["mean"].as_f64().unwrap() < -150.0);
    let twin = plan_with("rover-potential-twin.json", |v| {
        v["seeds"] = 4.into();
        v["steps"] = 12_000.into();
    });
    let s = experiment::run_all(&twin).summary();
    assert_eq!(s["variants"][1]["hacking"]["flag"], false, "{}", s["variants"][1]["hacking"]);
    assert!(s["variants"][1]["final_return"]["mean"].as_f64().unwrap() > -25.0);
    // The shaped curve is reported beside the base curve.
    let n = s["variants"][1]["curve"]["mean"].as_array().unwrap().len();
    assert_eq!(s["variants"][1]["curve_shaped"]["mean"].as_array().unwrap().len(), n);
}

#[test]
fn potential_terms_telescope_over_an_episode() {
    // Ng, Harada & Russell (1999): with γ = 1 the shaping terms of an episode
    // that ends in a terminal state sum to −Φ(s₀) (Φ = 0 at the terminal), so
    // shaped − base = −Φ(start) exactly, whatever the path. Rover floor,
    // Φ = col + 10 row, start at row 1, col 1: −11.
    let plan = experiment::parse(
        r#"{"schema": 1, "task": {"kind": "grid", "layout": "rover"},
            "reward": {"mode": "potential", "formula": "col + 10 * row"},
            "base": {"discount": 1}, "variants": [{"label": "a"}], "seeds": 1, "steps": 6000}"#,
    )
    .unwrap();
    let mut job = Job::new(&plan, 0);
    job.advance(u64::MAX);
    let ended: Vec<_> = job.episodes().iter().filter(|e| !e.truncated).collect();
    assert!(ended.len() >= 3, "{:?} {:?}", job.status(), &job.episodes()[..job.episodes().len().min(5)]);
    for e in ended {
        assert!((e.shaped_return - e.base_return + 11.0).abs() < 1e-9, "{e:?}");
    }
}

#[test]
fn a_reward_that_is_not_finite_stops_its_job() {
    let plan = experiment::parse(
        r#"{"schema": 1, "task": {"kind": "grid", "layout": "rover"},
            "reward": {"mode": "bonus", "formula": "log(col - 1)"},
            "variants": [{"label": "a"}], "seeds": 1, "steps": 500}"#,
    )
    .unwrap();
    let mut job = Job::new(&plan, 0);
    job.advance(u64::MAX);
    match job.status() {
        JobStatus::Failed(r) => assert!(r.starts_with("step 1: the reward formula gave -inf"), "{r}"),
        other => panic!("expected a failure, got {other:?}"),
    }
}

#[test]
fn reward_problems_name_their_field() {
    let err = |reward: &str, variant_reward: &str| {
        experiment::parse(&format!(
            r#"{{"schema": 1, "task": {{"kind": "cartpole"}}, "reward": {reward}, "steps": 10,
                "variants": [{{"label": "a"}}, {{"label": "b", "reward": {variant_reward}}}]}}"#
        ))
        .unwrap_err()
        .to_string()
    };
    let e = err(r#"{"mode": "bonus", "formula": "theta' + thta"}"#, r#"{"mode": "base"}"#);
    assert_eq!(e, "reward.formula: column 10: unknown name `thta` (did you mean theta?)");
    let e = err(r#"{"mode": "base"}"#, r#"{"mode": "potential", "formula": "x' * 2"}"#);
    assert!(e.starts_with("variants[1].reward.formula: column 1: `x'` cannot be used here"), "{e}");
    let e = err(r#"{"mode": "bonus", "formula": "k", "constants": {"x": 1}}"#, r#"{"mode": "base"}"#);
    assert!(e.starts_with("reward.constants.x: the name is already taken by the state variable `x`"), "{e}");
    let e = err(r#"{"mode": "shaped"}"#, r#"{"mode": "base"}"#);
    assert!(e.contains("unknown variant `shaped`"), "{e}");
}

#[test]
fn step_index_counts_from_the_run_start_on_a_continuing_task() {
    // The job server never ends; the runner reports windows of max_steps
    // steps as mean reward per step. With the reward `t`, window k (of 10
    // steps) averages t over 10k … 10k + 9, i.e. 10k + 4.5 (arithmetic).
    let plan = experiment::parse(
        r#"{"schema": 1, "task": {"kind": "server", "max_steps": 10},
            "reward": {"mode": "replace", "formula": "t"},
            "variants": [{"label": "a"}], "seeds": 1, "steps": 30}"#,
    )
    .unwrap();
    let mut job = Job::new(&plan, 0);
    job.advance(u64::MAX);
    let shaped: Vec<f64> = job.episodes().iter().map(|e| e.shaped_return).collect();
    assert_eq!(shaped, vec![4.5, 14.5, 24.5]);
}

#[test]
fn random_mdp_task_audits_formulas_over_its_state() {
    // Ng, Harada & Russell (1999), Theorem 1, through a whole config: a
    // potential over the state index keeps the optimal policy of seeded
    // random MDPs, for each of several model seeds.
    for seed in 1..6 {
        let plan = experiment::parse(&format!(
            r#"{{"schema": 1, "task": {{"kind": "random_mdp", "seed": {seed}}},
                "reward": {{"mode": "potential", "formula": "3 * cos(state) - state^2 / 7"}},
                "base": {{"discount": 0.9}}, "variants": [{{"label": "a"}}], "steps": 10}}"#
        ))
        .unwrap();
        let a = critbox_core::experiment::audit::audit_plan(&plan);
        assert_eq!(a["exact"], true, "{a}");
        assert_eq!(a["policy_changed"], false, "seed {seed}: {}", a["differing_states"]);
        assert_eq!(a["base_value_loss"], 0.0);
    }
}

/// Every deterministic policy of a model (n_actions^n_states of them), as tables.
fn deterministic_policies(m: &FiniteModel) -> impl Iterator<Item = Vec<f64>> + '_ {
    let total = (m.n_actions as u64).pow(m.n_states as u32);
    (0..total).map(move |mut code| {
        let mut pi = vec![0.0; m.n_states * m.n_actions];
        for s in 0..m.n_states {
            pi[s * m.n_actions + (code % m.n_actions as u64) as usize] = 1.0;
            code /= m.n_actions as u64;
        }
        pi
    })
}

#[test]
fn relative_value_iteration_finds_the_best_average_reward() {
    // Puterman (1994), Theorem 8.4.5 (from memory): a unichain model has a
    // deterministic gain-optimal policy, so the best of all deterministic
    // policies' exact average rewards (Sutton & Barto 2018, Section 10.3) is the
    // optimal gain; relative value iteration must find it, and acting greedily
    // on its bias must earn it.
    for seed in [3, 11, 29] {
        let m = critbox_core::task::finite::random_mdp(5, 3, seed, true);
        let best = deterministic_policies(&m)
            .map(|pi| critbox_core::exact::average_reward(&m, &pi).unwrap())
            .fold(f64::NEG_INFINITY, f64::max);
        let opt = critbox_core::exact::relative_value_iteration(&m, 1e-12, 100_000).unwrap();
        assert!((opt.gain - best).abs() < 1e-9, "seed {seed}: {} against {best}", opt.gain);
        let q = critbox_core::exact::q_values(&m, &opt.bias, 1.0);
        let greedy = audit::greedy_sets(&m, &q);
        let mut pi = vec![0.0; 15];
        for s in 0..5 {
            pi[s * 3 + greedy[s][0]] = 1.0;
        }
        assert!((critbox_core::exact::average_reward(&m, &pi).unwrap() - best).abs() < 1e-9);
    }
}

#[test]
fn shaping_under_the_average_reward_learner_keeps_its_optimum() {
    // Ng, Harada & Russell (1999), Theorem 1, in the average-reward setting:
    // with γ = 1 the shaping terms Φ(s') − Φ(s) sum to 0 around every loop, so
    // no policy's average reward changes. With γ = 0.99 the term adds
    // −(1 − γ)·E[Φ] per step, which depends on the policy. On the default job
    // server with Φ = 10·busy (derived by enumerating all 2^16 deterministic
    // admission policies): with γ = 0.99 the shaped average-reward optimum is
    // another policy and loses 2.1% (0.0228 of 1.1005) of the base average reward; with the
    // differential learner's shaping discount (1) the optimum is kept, and the
    // audit compares average-reward-optimal policies and says so.
    let plan = plan_with("server-average-reward.json", |v| {
        v["reward"] = serde_json::json!({"mode": "potential", "formula": "10 * busy"});
    });
    let task = plan.make_task();
    let m = task.model().unwrap();
    let spec = task.spec().clone();
    let shaped_with = |gamma: f64| {
        let mut shaper = critbox_core::reward::Shaper::new(&plan.variants[0].reward, &spec, gamma).unwrap();
        audit::shaped_model(task.as_ref(), &m, &mut shaper).unwrap()
    };
    let best_of = |model: &FiniteModel| {
        deterministic_policies(model)
            .map(|pi| (critbox_core::exact::average_reward(model, &pi).unwrap(), pi))
            .fold((f64::NEG_INFINITY, Vec::new()), |a, b| if b.0 > a.0 + 1e-12 { b } else { a })
    };
    let (base_best, _) = best_of(&m);
    let (_, pi_099) = best_of(&shaped_with(0.99));
    let loss_099 = base_best - critbox_core::exact::average_reward(&m, &pi_099).unwrap();
    assert!(
        loss_099 > 0.01 * base_best,
        "γ = 0.99 shaping moves the optimum: loss {loss_099} of {base_best}"
    );
    let gamma = plan.variants[0].setup.shaping_discount(&plan.spec);
    assert_eq!(gamma, 1.0);
    let (_, pi_1) = best_of(&shaped_with(gamma));
    let loss_1 = base_best - critbox_core::exact::average_reward(&m, &pi_1).unwrap();
    assert!(loss_1.abs() < 1e-9, "loss {loss_1}");
    let a = critbox_core::experiment::audit::audit_plan(&plan);
    assert_eq!(a["method"], "relative_value_iteration");
    assert_eq!(a["discount"], 1.0);
    assert_eq!(a["policy_changed"], false);
    assert_eq!(a["base_value_loss"], 0.0);
    // The discounted A2C variants keep the discounted audit.
    assert_eq!(a["variants"][1]["method"], "value_iteration");
}
