//! Every learner's per-step path (act, task step, learn) allocates nothing
//! once a job is under way (design rule: buffers are sized once). A counting
//! global allocator in this test binary only (tests/common).

mod common;

use common::allocations_so_far;

use critbox_core::approx::Obs;
use critbox_core::experiment;
use critbox_core::learn::{build_learner_with, ActionBuf, Transition};
use critbox_core::rng::Stream;
use serde_json::{json, Value};

#[global_allocator]
static GLOBAL: common::Counting = common::Counting;

/// Runs `steps` steps the way the runner does (act at the next state before
/// learning; truncation at the task's limit) and returns the allocations
/// made during the last `measured` of them.
fn allocations(task: Value, base: Value, steps: usize, measured: usize) -> usize {
    let plan = experiment::config::validate_value(&json!({"schema": 1, "task": task, "base": base,
        "variants": [{"label": "x"}], "seeds": 1, "steps": 10}))
    .unwrap_or_else(|e| panic!("{e}"));
    let mut task = plan.make_task();
    let spec = plan.spec.clone();
    let mut rng = Stream::from_seed(1);
    let mut task_rng = Stream::from_seed(2);
    let mut learner = build_learner_with(&plan.variants[0].setup, &spec, &mut rng).unwrap();
    let n = spec.state_vars.len();
    let (mut obs, mut next) = (vec![0.0; n], vec![0.0; n]);
    let (mut a, mut b) = (ActionBuf::for_spec(&spec), ActionBuf::for_spec(&spec));
    let mut fresh = true;
    let mut len = 0u32;
    let mut before = 0;
    for i in 0..steps {
        if i == steps - measured {
            before = allocations_so_far();
        }
        if fresh {
            task.reset(&mut task_rng, &mut obs);
            learner.act(Obs { values: &obs, id: task.state_id() }, &mut rng, &mut a);
            fresh = false;
            len = 0;
        }
        let id = task.state_id();
        let st = task.step(a.as_action(), &mut task_rng, &mut next);
        len += 1;
        let next_id = task.state_id();
        let truncated = !spec.continuing && !st.terminated && len >= spec.max_steps;
        if !st.terminated {
            learner.act(Obs { values: &next, id: next_id }, &mut rng, &mut b);
        }
        let t = Transition {
            obs: Obs { values: &obs, id },
            action: a.as_action(),
            reward: st.reward,
            next: Obs { values: &next, id: next_id },
            next_action: (!st.terminated).then(|| b.as_action()),
            terminated: st.terminated,
            truncated,
        };
        learner.learn(&t, &mut rng).unwrap();
        if st.terminated || truncated {
            fresh = true;
        } else {
            std::mem::swap(&mut obs, &mut next);
            std::mem::swap(&mut a, &mut b);
        }
    }
    allocations_so_far() - before
}

#[test]
fn learners_allocate_nothing_per_step() {
    let rover = json!({"kind": "grid", "layout": "rover"});
    let cartpole = json!({"kind": "cartpole"});
    let lqr = json!({"kind": "lqr", "start": 3});
    let mlp = json!({"kind": "mlp", "hidden": [16, 8]});
    let cases = [
        (rover.clone(), json!({"family": "a2c"})),
        (
            rover.clone(),
            json!({"family": "a2c", "segment": 8, "lambda": 0.9, "entropy": 0.01, "optimizer": {"kind": "adam", "clip": 1}}),
        ),
        (rover.clone(), json!({"family": "qac", "entropy": 0.01})),
        (rover.clone(), json!({"family": "reinforce", "baseline": "optimal"})),
        (rover.clone(), json!({"family": "reinforce", "baseline": "value"})),
        (rover.clone(), json!({"family": "reinforce", "baseline": "average"})),
        (
            rover.clone(),
            json!({"family": "off_policy", "behaviour": {"kind": "snapshot", "snapshot_every": 50}, "rho_cap": 2}),
        ),
        (rover.clone(), json!({"family": "off_policy", "behaviour": {"kind": "epsilon_mix"}})),
        (
            cartpole.clone(),
            json!({"family": "a2c", "actor": mlp, "critic": mlp, "optimizer": {"kind": "adam"}}),
        ),
        (cartpole.clone(), json!({"family": "a2c", "features": {"kind": "fourier", "order": 2}})),
        (cartpole, json!({"family": "a2c", "features": {"kind": "rbf", "centers": 3}})),
        (lqr.clone(), json!({"family": "deterministic", "features": {"kind": "poly", "degree": 1}})),
        (
            lqr.clone(),
            json!({"family": "deterministic", "replay": {"capacity": 500, "batch": 8}, "target_tau": 0.1,
            "critic": {"kind": "mlp", "hidden": [8]}, "optimizer": {"kind": "adam"}, "actor_step": 0.001, "critic_step": 0.001}),
        ),
        (
            lqr.clone(),
            json!({"family": "a2c", "actor_step": 0.001, "features": {"kind": "poly", "degree": 2}}),
        ),
        (
            lqr,
            json!({"family": "off_policy", "behaviour": {"kind": "epsilon_mix"}, "actor_step": 0.001, "features": {"kind": "poly", "degree": 2}}),
        ),
        (json!({"kind": "random_mdp", "continuing": true}), json!({"family": "differential"})),
        (
            json!({"kind": "corridor"}),
            json!({"family": "reinforce", "baseline": "optimal", "actor_step": 0.0005}),
        ),
    ];
    for (task, base) in cases {
        let n = allocations(task.clone(), base.clone(), 6_000, 4_000);
        assert_eq!(n, 0, "{task} {base}: {n} allocations in 4000 steps");
    }
}
