//! The user's own tasks are the real thing: built-in tasks restated as
//! formula tasks give the same transitions bit for bit, and published finite
//! problems restated as tables give their published exact values.

use critbox_core::exact::{self, gradient};
use critbox_core::experiment;
use critbox_core::rng::Stream;
use critbox_core::task::cartpole::{CartPole, CartPoleConfig};
use critbox_core::task::corridor::{CorridorConfig, ShortCorridor};
use critbox_core::task::mountain_car::{MountainCar, MountainCarConfig};
use critbox_core::task::pendulum::{Pendulum, PendulumConfig};
use critbox_core::task::{Action, Task};
use critbox_core::usertask::formula::{FormulaTask, FormulaTaskConfig};
use critbox_core::usertask::table::{rows_from_csv, TableTaskConfig};
use serde_json::json;

fn formula(v: serde_json::Value) -> FormulaTask {
    let cfg: FormulaTaskConfig = serde_json::from_value(v).expect("the restatement reads");
    FormulaTask::new(cfg).expect("the restatement compiles")
}

/// Cart-pole as Barto, Sutton & Anderson (1983) give it, in the
/// frictionless form of Florian (2007, eqs. 23–24), written as formulas in
/// the same order of operations as `task/cartpole.rs`.
fn cartpole_formulas() -> serde_json::Value {
    json!({
        "state": [
            {"name": "x", "start": [-0.05, 0.05], "low": -2.4, "high": 2.4},
            {"name": "x_dot", "start": [-0.05, 0.05], "low": -3, "high": 3},
            {"name": "theta", "start": [-0.05, 0.05], "low": -0.20943951023931953, "high": 0.20943951023931953},
            {"name": "theta_dot", "start": [-0.05, 0.05], "low": -3.5, "high": 3.5}
        ],
        "actions": [
            {"name": "push_left", "set": {"force": -10}},
            {"name": "push_right", "set": {"force": 10}}
        ],
        "constants": {"g": 9.8, "m_cart": 1.0, "m_pole": 0.1, "half": 0.5},
        "let": [
            {"name": "total", "formula": "m_cart + m_pole"},
            {"name": "pml", "formula": "m_pole * half"},
            {"name": "temp", "formula": "(force + pml * theta_dot * theta_dot * sin(theta)) / total"},
            {"name": "theta_acc",
             "formula": "(g * sin(theta) - cos(theta) * temp) / (half * (4 / 3 - m_pole * cos(theta) * cos(theta) / total))"},
            {"name": "x_acc", "formula": "temp - pml * theta_acc * cos(theta) / total"}
        ],
        "update": {
            "x": "x + dt * x_dot",
            "x_dot": "x_dot + dt * x_acc",
            "theta": "theta + dt * theta_dot",
            "theta_dot": "theta_dot + dt * theta_acc"
        },
        "terminal": "abs(x) > 2.4 or abs(theta) > 12 * 2 * pi / 360",
        "reward": "1",
        "dt": 0.02,
        "max_steps": 500
    })
}

/// Runs a built-in task and its restatement side by side on the same
/// streams and actions for `steps` steps (resetting both at termination or
/// every `episode` steps) and asserts the observations, rewards and
/// terminations are the same bits.
fn same_transitions(
    built_in: &mut dyn Task,
    restated: &mut dyn Task,
    steps: usize,
    episode: usize,
    mut action: impl FnMut(&mut Stream, &[f64]) -> Vec<f64>,
) -> usize {
    let n = built_in.spec().state_vars.len();
    assert_eq!(restated.spec().state_vars.len(), n);
    assert_eq!(built_in.spec().actions.names(), restated.spec().actions.names());
    let (mut ra, mut rb) = (Stream::from_seed(11), Stream::from_seed(11));
    let mut pick = Stream::from_seed(12);
    let (mut oa, mut ob) = (vec![0.0; n], vec![0.0; n]);
    let mut terminations = 0;
    let mut since = 0;
    built_in.reset(&mut ra, &mut oa);
    restated.reset(&mut rb, &mut ob);
    for step in 0..steps {
        assert_eq!(bits(&oa), bits(&ob), "observations differ before step {step}");
        let a = action(&mut pick, &oa);
        let act = if built_in.spec().actions.discrete_count().is_some() {
            Action::Index(a[0] as usize)
        } else {
            Action::Vector(&a)
        };
        let sa = built_in.step(act, &mut ra, &mut oa);
        let sb = restated.step(act, &mut rb, &mut ob);
        assert_eq!(bits(&oa), bits(&ob), "next observations differ at step {step}");
        assert_eq!(sa.reward.to_bits(), sb.reward.to_bits(), "rewards differ at step {step}");
        assert_eq!(sa.terminated, sb.terminated, "terminations differ at step {step}");
        since += 1;
        if sa.terminated || since == episode {
            terminations += usize::from(sa.terminated);
            since = 0;
            built_in.reset(&mut ra, &mut oa);
            restated.reset(&mut rb, &mut ob);
        }
    }
    terminations
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

#[test]
fn cartpole_as_formulas_steps_bit_for_bit_like_the_built_in_task() {
    // Same operations in the same order as task/cartpole.rs, so the same
    // bits; random pushes end many episodes (|θ| > 12° or |x| > 2.4).
    let mut a = CartPole::new(CartPoleConfig::default()).unwrap();
    let mut b = formula(cartpole_formulas());
    let ends = same_transitions(&mut a, &mut b, 20_000, 500, |r, _| vec![r.below(2) as f64]);
    assert!(ends > 100, "only {ends} terminations: the check would not see the terminal formula");
    assert_eq!(b.spec().default_discount, 0.99);
}

#[test]
fn mountain_car_as_formulas_steps_bit_for_bit_like_the_built_in_task() {
    // Sutton & Barto (2018), Example 10.1: the bounded velocity is computed
    // once in a `let` and used by the position update; at the left bound the
    // velocity is reset to 0.
    let cfg = json!({
        "state": [
            {"name": "position", "start": [-0.6, -0.4], "low": -1.2, "high": 0.5},
            {"name": "velocity", "start": 0, "low": -0.07, "high": 0.07}
        ],
        "actions": [
            {"name": "reverse", "set": {"throttle": -1}},
            {"name": "coast", "set": {"throttle": 0}},
            {"name": "forward", "set": {"throttle": 1}}
        ],
        "let": [
            {"name": "v_new", "formula": "clamp(velocity + 0.001 * throttle - 0.0025 * cos(3 * position), -0.07, 0.07)"},
            {"name": "x_new", "formula": "clamp(position + v_new, -1.2, 0.5)"}
        ],
        "update": {"position": "x_new", "velocity": "if x_new <= -1.2 then 0 else v_new"},
        "terminal": "position >= 0.5",
        "reward": "-1",
        "discount": 1,
        "max_steps": 1000
    });
    let mut a = MountainCar::new(MountainCarConfig::default()).unwrap();
    let mut b = formula(cfg.clone());
    // Pushing with the velocity (and now and then at random) reaches the
    // goal; pushing against it at random also hits the left bound.
    let ends = same_transitions(&mut a, &mut b, 50_000, 1000, |r, obs| {
        let a = if r.below(5) == 0 {
            r.below(3)
        } else if obs[1] >= 0.0 {
            2
        } else {
            0
        };
        vec![a as f64]
    });
    assert!(ends > 5, "only {ends} episodes reached the goal");
    // At the left bound the built-in resets the velocity; so does the restatement.
    let mut t = MountainCar::new(MountainCarConfig::default()).unwrap();
    let mut f = formula(cfg);
    t.set_state(-1.19, -0.05);
    f.set_state(&[-1.19, -0.05]);
    let (mut o1, mut o2) = ([0.0; 2], [0.0; 2]);
    t.step(Action::Index(0), &mut Stream::from_seed(1), &mut o1);
    f.step(Action::Index(0), &mut Stream::from_seed(1), &mut o2);
    assert_eq!((o1[0], o1[1]), (-1.2, 0.0));
    assert_eq!(bits(&o1), bits(&o2));
}

#[test]
fn pendulum_as_formulas_steps_bit_for_bit_like_the_built_in_task() {
    // Doya (2000) pendulum as task/pendulum.rs integrates it (semi-implicit
    // Euler, angle wrapped to [−π, π)): wrap(x, −π, π) = −π + mod(x + π, 2π)
    // is the built-in wrap's operations in the same order, the torque is
    // clipped into [−5, 5] by the control's bounds as the built-in clamps it.
    let cfg = json!({
        "state": [
            {"name": "theta", "start": [-std::f64::consts::PI, std::f64::consts::PI],
             "low": -std::f64::consts::PI, "high": std::f64::consts::PI},
            {"name": "omega", "start": 0, "low": -8, "high": 8}
        ],
        "controls": [{"name": "torque", "low": -5, "high": 5}],
        "constants": {"m": 1, "l": 1, "g": 9.8, "mu": 0.01},
        "let": [
            {"name": "omega_new", "formula": "omega + dt * ((-mu * omega + m * g * l * sin(theta) + torque) / (m * l * l))"}
        ],
        "update": {"theta": "wrap(theta + dt * omega_new, -pi, pi)", "omega": "omega_new"},
        "reward": "cos(theta')",
        "dt": 0.02,
        "max_steps": 1000
    });
    let mut a = Pendulum::new(PendulumConfig::default()).unwrap();
    let mut b = formula(cfg);
    // Torques beyond the bounds check the clipping; long swings check the wrap.
    same_transitions(&mut a, &mut b, 30_000, 1000, |r, _| vec![r.uniform_in(-8.0, 8.0)]);
}

#[test]
fn the_short_corridor_as_a_table_has_the_published_optimum() {
    // Sutton & Barto (2018), Example 13.1: three states that look alike
    // (`observe` gives each the same vector), the second with switched
    // actions, −1 per step. The best probability of `right` for a policy
    // that cannot tell the states apart is p* = 2 − √2 with J = −(6 + 4√2).
    let rows = "from,action,to,probability,reward\n\
                s1,left,s1,1,-1\n s1,right,s2,1,-1\n s2,left,s3,1,-1\n s2,right,s1,1,-1\n\
                s3,left,s2,1,-1\n s3,right,goal,1,-1\n";
    let cfg = json!({
        "states": ["s1", "s2", "s3", "goal"],
        "actions": ["left", "right"],
        "rows": rows_from_csv(rows).unwrap(),
        "terminal_states": ["goal"],
        "start": {"s1": 1},
        "observe": {"s1": [1], "s2": [1], "s3": [1], "goal": [1]},
        "discount": 1,
        "max_steps": 1000
    });
    let table: TableTaskConfig = serde_json::from_value(cfg).unwrap();
    let task = table.build().unwrap();
    assert_eq!(task.spec().n_states, None, "aliased states give no tabular ids");
    let model = task.model().unwrap();
    // The same model as the built-in corridor.
    assert_eq!(model, ShortCorridor::new(CorridorConfig::default()).unwrap().model().unwrap());
    // A learner's features are the observation: every state has φ = [1],
    // so a linear softmax over it is one number p = P(right).
    let mut phi = Vec::new();
    for s in 0..model.n_states {
        let mut o = [0.0];
        assert!(task.state_obs(s, &mut o));
        phi.extend_from_slice(&o);
    }
    assert!(phi.iter().all(|&x| x == 1.0));
    let p = 2.0 - 2f64.sqrt();
    // θ_left = 0, θ_right = ln(p / (1 − p)) gives π(right) = p in every state.
    let theta = [0.0, (p / (1.0 - p)).ln()];
    let pi = gradient::linear_softmax_policy(&model, &phi, 1, &theta);
    let j = gradient::objective(&model, &pi, 1.0).unwrap();
    let published = -(6.0 + 4.0 * 2f64.sqrt());
    assert!((j - published).abs() < 1e-9, "J(p*) = {j}, published {published}");
    // Nearby probabilities do worse (p* is the maximum).
    for q in [p - 0.01, p + 0.01] {
        let pi = gradient::linear_softmax_policy(&model, &phi, 1, &[0.0, (q / (1.0 - q)).ln()]);
        assert!(gradient::objective(&model, &pi, 1.0).unwrap() < j);
    }
}

/// Cliff walking (Sutton & Barto 2018, Example 6.6) as a table: a 4 × 12
/// grid, start at the bottom left, goal at the bottom right, the cells
/// between them a cliff (−100 and back to the start), −1 for every other
/// step, moves off the grid leave the agent in place.
fn cliff_table() -> TableTaskConfig {
    let name = |r: usize, c: usize| format!("r{r}c{c}");
    let mut states = Vec::new();
    for r in 0..4 {
        for c in 0..12 {
            if r == 3 && (1..11).contains(&c) {
                continue; // cliff cells are not states
            }
            states.push(name(r, c));
        }
    }
    let mut rows = Vec::new();
    for r in 0..4usize {
        for c in 0..12usize {
            if r == 3 && c >= 1 {
                continue; // the cliff, and the goal (terminal)
            }
            for (a, (dr, dc)) in
                [("up", (-1i32, 0i32)), ("down", (1, 0)), ("left", (0, -1)), ("right", (0, 1))]
            {
                let nr = (r as i32 + dr).clamp(0, 3) as usize;
                let nc = (c as i32 + dc).clamp(0, 11) as usize;
                let (to, reward) = if nr == 3 && (1..11).contains(&nc) {
                    (name(3, 0), -100.0)
                } else {
                    (name(nr, nc), -1.0)
                };
                rows.push(
                    json!({"from": name(r, c), "action": a, "to": to, "probability": 1, "reward": reward}),
                );
            }
        }
    }
    serde_json::from_value(json!({
        "states": states,
        "actions": ["up", "down", "left", "right"],
        "rows": rows,
        "terminal_states": [name(3, 11)],
        "start": {name(3, 0): 1},
        "discount": 1,
        "max_steps": 200
    }))
    .unwrap()
}

#[test]
fn cliff_walking_as_a_table_has_the_published_optimal_return() {
    // Sutton & Barto (2018), Example 6.6: the optimal path runs along the
    // cliff edge, 13 steps of −1.
    let task = cliff_table().build().unwrap();
    let model = task.model().unwrap();
    let opt = exact::value_iteration(&model, 1.0, 1e-12).unwrap();
    let start = model.start.iter().position(|&p| p == 1.0).unwrap();
    assert!((opt.values[start] + 13.0).abs() < 1e-9, "V*(start) = {}", opt.values[start]);
    // The greedy action at the start is `up` (index 0): around the cliff.
    assert_eq!(opt.greedy[start], vec![0]);
    // Reward formulas on a table task can name the states.
    assert!(task.spec().state_names.contains(&"r3c0".to_string()));
}

fn episodes(config: serde_json::Value) -> Vec<Vec<experiment::EpisodeRecord>> {
    let plan = experiment::config::validate_value(&config).unwrap_or_else(|e| panic!("{e}"));
    (0..plan.job_count())
        .map(|id| {
            let mut job = experiment::Job::new(&plan, id);
            job.advance(u64::MAX);
            assert!(matches!(job.status(), experiment::JobStatus::Done), "{:?}", job.status());
            job.take_new_episodes().to_vec()
        })
        .collect()
}

#[test]
fn a_learner_on_cartpole_as_formulas_gives_the_built_in_task_s_numbers() {
    // The whole path (config, plan, runner, learner) on the restatement
    // gives every episode of the built-in task's run, bit for bit.
    let mut task = cartpole_formulas();
    task["kind"] = json!("formula");
    let config = |task: serde_json::Value| {
        json!({
            "schema": 1, "task": task, "steps": 4000, "seeds": 2,
            "base": {"family": "a2c", "features": {"kind": "tiles", "tilings": 4, "intervals": 4}},
            "variants": [{"label": "A2C"}]
        })
    };
    let restated = episodes(config(task));
    let built_in = episodes(config(json!({"kind": "cartpole"})));
    assert!(restated[0].len() > 20);
    assert_eq!(restated, built_in);
}

fn problems(task: serde_json::Value) -> Vec<String> {
    let config = json!({
        "schema": 1, "task": task, "steps": 1000, "seeds": 1,
        "base": {"family": "a2c"}, "variants": [{"label": "A2C"}]
    });
    match experiment::config::validate_value(&config) {
        Ok(_) => Vec::new(),
        Err(e) => e.problems.iter().map(|p| p.to_string()).collect(),
    }
}

fn small_model() -> serde_json::Value {
    json!({
        "kind": "formula",
        "state": [{"name": "angle", "start": 0, "low": -1, "high": 1},
                  {"name": "velocity", "start": 0, "low": -1, "high": 1}],
        "actions": [{"name": "left", "set": {"push": -1}}, {"name": "right", "set": {"push": 1}}],
        "update": {"angle": "angle + dt * velocity", "velocity": "velocity + angel * 0.1"},
        "terminal": "abs(angle) > 1",
        "reward": "1"
    })
}

#[test]
fn bad_formula_tasks_are_named_by_field_and_column() {
    // The messages a user sees (common practice, no source).
    let p = problems(small_model());
    assert_eq!(p, vec!["task.update.velocity: column 12: unknown name `angel` (did you mean angle?)"]);
    let mut t = small_model();
    t["update"].as_object_mut().unwrap().remove("velocity");
    t["update"]["speed"] = json!("1");
    let p = problems(t);
    assert!(p.iter().any(|m| m.starts_with("task.update.velocity: missing")), "{p:?}");
    assert!(p.iter().any(|m| m.starts_with("task.update.speed: `speed` is no state variable")), "{p:?}");
    let mut t = small_model();
    t["update"]["velocity"] = json!("velocity'");
    t["terminal"] = json!("abs(angle') > 1");
    t["reward"] = json!("noise( + 1");
    let p = problems(t);
    assert!(p[0].starts_with("task.update.velocity: column 1: `velocity'` cannot be used here"), "{p:?}");
    assert!(p[1].starts_with("task.terminal: column 5: `angle'` cannot be used here"), "{p:?}");
    assert!(p[2].starts_with("task.reward: column "), "{p:?}");
    let mut t = small_model();
    t["controls"] = json!([{"name": "u", "low": -1, "high": 1}]);
    t["state"][1]["name"] = json!("dt");
    t["substeps"] = json!(0);
    let p = problems(t);
    assert!(p.iter().any(|m| m.starts_with("task.actions: give exactly one")), "{p:?}");
    assert!(p.iter().any(|m| m.starts_with("task.state[1].name: `dt` is reserved")), "{p:?}");
    assert!(p.iter().any(|m| m.starts_with("task.substeps:")), "{p:?}");
    // A start that is neither a number nor a pair.
    let mut t = small_model();
    t["state"][0]["start"] = json!("low");
    assert_eq!(
        problems(t),
        vec!["task.state[0].start: must be a number, or [low, high] for a uniform start; got \"low\""]
    );
    // Unknown fields name the field.
    let mut t = small_model();
    t["updates"] = json!({});
    let p = problems(t);
    assert!(p[0].contains("updates"), "{p:?}");
}

#[test]
fn a_state_that_becomes_non_finite_stops_the_job_naming_the_step_and_variable() {
    let mut t = small_model();
    // 0, 1, 1e200 + 1, then infinity at the third step (index 2).
    t["update"]["velocity"] = json!("velocity * 1e200 + 1");
    t["terminal"] = json!("");
    let config = json!({
        "schema": 1, "task": t, "steps": 1000, "seeds": 1,
        "base": {"family": "a2c"}, "variants": [{"label": "A2C"}]
    });
    let plan = experiment::config::validate_value(&config).unwrap();
    let mut job = experiment::Job::new(&plan, 0);
    job.advance(u64::MAX);
    match job.status() {
        experiment::JobStatus::Failed(reason) => assert_eq!(
            reason,
            "step 2: state variable `velocity` became inf (task.update.velocity gave a number that is not finite)"
        ),
        other => panic!("{other:?}"),
    }
}

#[test]
fn bad_table_tasks_are_named_by_field() {
    let base = || {
        json!({
            "kind": "table",
            "states": ["new", "worn", "broken"],
            "actions": ["run", "fix"],
            "rows": [
                {"from": "new", "action": "run", "to": "worn", "probability": 0.5, "reward": 1},
                {"from": "new", "action": "run", "to": "new", "probability": 0.5, "reward": 1},
                {"from": "new", "action": "fix", "to": "new", "probability": 1, "reward": -1},
                {"from": "worn", "action": "run", "to": "broken", "probability": 0.3, "reward": 1},
                {"from": "worn", "action": "run", "to": "worn", "probability": 0.7, "reward": 1},
                {"from": "worn", "action": "fix", "to": "new", "probability": 1, "reward": -2}
            ],
            "terminal_states": ["broken"],
            "start": {"new": 1}
        })
    };
    assert!(problems(base()).is_empty(), "{:?}", problems(base()));
    let mut t = base();
    t["rows"][4]["probability"] = json!(0.6);
    assert_eq!(
        problems(t),
        vec!["task.rows: state `worn`, action `run`: probabilities sum to 0.8999999999999999, not 1"]
    );
    let mut t = base();
    t["rows"][5]["from"] = json!("wron");
    let p = problems(t);
    assert_eq!(p[0], "task.rows[5].from: unknown state `wron` (did you mean worn?)");
    let mut t = base();
    t["rows"].as_array_mut().unwrap().remove(2);
    assert_eq!(
        problems(t),
        vec!["task.rows: state `new`, action `fix`: no rows (every action needs rows in every state that is not terminal)"]
    );
    // A terminal state no chain of rows reaches.
    let mut t = base();
    t["rows"][3]["probability"] = json!(0);
    t["rows"][4]["probability"] = json!(1);
    let p = problems(t);
    assert_eq!(p, vec!["task.terminal_states[0]: `broken` is never reached from the start: no chain of rows with probability above 0 leads there"]);
    let mut t = base();
    t["start"] = json!({"new": 0.5, "worn": 0.4});
    assert_eq!(problems(t), vec!["task.start: probabilities sum to 0.9, not 1"]);
    // CSV errors name the line.
    assert_eq!(
        rows_from_csv("from,action,to,probability\n").unwrap_err().to_string(),
        "csv line 1: no column `reward`; the header must name from, action, to, probability, reward"
    );
    assert_eq!(
        rows_from_csv("from,action,to,probability,reward\na,b,c,x,1\n").unwrap_err().to_string(),
        "csv line 2: column `probability`: `x` is not a number"
    );
}

#[test]
fn the_machine_preset_s_audit_says_what_its_text_says() {
    // The table preset's stated exact result: the service bonus changes the
    // best action in `worn` (run → service) and loses 8.1 of 140.9; the
    // potential changes nothing. Value iteration on the same table written
    // out by hand gave the same policies (common practice, no source).
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../web/presets/machine-wear-table.json"
    ))
    .unwrap();
    let plan = experiment::config::parse(&text).unwrap();
    let audit = experiment::audit::audit_plan(&plan);
    let v = &audit["variants"];
    assert_eq!(v[0]["policy_changed"], json!(false));
    assert_eq!(v[1]["policy_changed"], json!(true));
    assert_eq!(v[2]["policy_changed"], json!(false));
    let best = v[1]["base_optimal_value"].as_f64().unwrap();
    let loss = v[1]["base_value_loss"].as_f64().unwrap();
    assert!((best - 140.92).abs() < 0.01 && (loss - 8.11).abs() < 0.01, "{best} {loss}");
    let worn = &v[1]["differing_states"][0];
    assert_eq!((worn["state"].as_u64(), worn["reachable"].as_bool()), (Some(1), Some(true)));
    assert_eq!(
        (worn["base_actions"][0].as_str(), worn["shaped_actions"][0].as_str()),
        (Some("run"), Some("service"))
    );
}

#[test]
fn substeps_integrate_like_that_many_shorter_control_steps() {
    // k substeps of dt / k are k control steps of dt / k, bit for bit (the
    // documented semantics; common practice, no source): a damped spring.
    let task = |dt: f64, substeps: u32| {
        formula(json!({
            "state": [{"name": "x", "start": 1, "low": -2, "high": 2},
                      {"name": "v", "start": 0, "low": -2, "high": 2}],
            "controls": [{"name": "u", "low": -1, "high": 1}],
            "let": [{"name": "v_new", "formula": "v + dt * (u - 4 * x - 0.3 * v)"}],
            "update": {"x": "x + dt * v_new", "v": "v_new"},
            "reward": "x - x'",
            "dt": dt, "substeps": substeps
        }))
    };
    let mut fine = task(0.01, 1);
    let mut coarse = task(0.03, 3);
    let (mut a, mut b) = ([0.0; 2], [0.0; 2]);
    let mut r = Stream::from_seed(1);
    fine.reset(&mut r, &mut a);
    coarse.reset(&mut r, &mut b);
    for k in 0..200 {
        let u = [((k as f64) * 0.1).sin()];
        let start = a[0];
        let mut last = 0.0;
        for _ in 0..3 {
            last = fine.step(Action::Vector(&u), &mut r, &mut a).reward;
        }
        let s = coarse.step(Action::Vector(&u), &mut r, &mut b);
        assert_eq!(bits(&a), bits(&b), "step {k}");
        // The reward sees the state before the control step, not before the last substep.
        assert_eq!(s.reward.to_bits(), (start - a[0]).to_bits());
        assert_ne!(last.to_bits(), s.reward.to_bits());
    }
}
