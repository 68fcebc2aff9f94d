//! Fuzz target: task definitions (the `task` object of a config, above all
//! the user's own `formula` and `table` tasks). Any text that is JSON goes
//! to the task editor's check, which must not panic, must say `ok` exactly
//! when the task builds, and must name every problem: a non-empty message
//! and a path (relative to the task; only a problem with the task object as
//! a whole, such as a missing field the message names, may leave the path
//! empty). An accepted task written as JSON and read again is the same
//! task. A built formula or table task is reset and stepped about 200 steps
//! with valid actions (discrete: every index in turn; continuous: values
//! inside, at and outside the bounds): every observation is finite unless
//! that step's reward is not, and then `Task::fault` names the reason.
//! Properties: common practice for a decoder of untrusted text, no source.
//! Bounds (set by scripts/fuzz): 2 GB of memory and 10 s per input.

#![no_main]

use critbox_core::experiment::config::{check_task, TaskConfig};
use critbox_core::rng::Stream;
use critbox_core::task::{Action, ActionSpace, Task};
use libfuzzer_sys::fuzz_target;
use serde_json::Value;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let Ok(value) = serde_json::from_str::<Value>(text) else { return };
    let check = check_task(&value);
    assert_eq!(check.ok, check.problems.is_empty(), "ok disagrees with the problems: {:?}", check.problems);
    for p in &check.problems {
        assert!(!p.message.trim().is_empty(), "a problem with no message: {p:?}");
        // A problem with the task object as a whole: not an object, no
        // kind, or a field of its own the message names (a missing one, or
        // an unknown one whose name is empty or only dots, which the
        // task-relative path trims away).
        let dots_only = p
            .message
            .strip_prefix("unknown field `")
            .and_then(|m| m.split_once('`'))
            .is_some_and(|(key, _)| key.chars().all(|c| c == '.'));
        let whole = ["missing field `", "duplicate field `"].iter().any(|m| p.message.starts_with(m))
            || dots_only
            || !value.is_object()
            || !value.get("kind").is_some_and(Value::is_string);
        assert!(!p.path.is_empty() || whole, "a problem that names no field: {p:?}\n{text}");
    }
    for f in &check.fields {
        assert!(!f.path.is_empty(), "a formula field with no path");
    }
    let cfg = match serde_json::from_value::<TaskConfig>(value.clone()) {
        Ok(cfg) => cfg,
        Err(e) => {
            assert!(!check.ok, "the check accepts a task that does not read: {e}\n{text}");
            return;
        }
    };
    let built = cfg.build();
    assert_eq!(
        check.ok,
        built.is_ok(),
        "the check says ok = {} but building gives {:?}\n{text}",
        check.ok,
        built.as_ref().err()
    );
    let Ok(mut task) = built else { return };
    let canonical = serde_json::to_string(&cfg).expect("a task config serialises");
    let again: TaskConfig = serde_json::from_str(&canonical)
        .unwrap_or_else(|e| panic!("an accepted task's JSON does not read back: {e}\n{canonical}"));
    assert!(again == cfg, "the task changed through its JSON:\n{canonical}");
    let back = check_task(&serde_json::from_str(&canonical).expect("canonical JSON parses"));
    assert!(back.ok, "an accepted task's JSON is refused: {:?}\n{canonical}", back.problems);
    let substeps = match &cfg {
        TaskConfig::Formula(f) => f.substeps.max(1) as usize,
        TaskConfig::Table(_) => 1,
        _ => return, // the built-in tasks are stepped by the config target
    };
    // Fewer steps for long texts with many substeps (bounded work per input).
    let steps = (20_000_000 / (substeps * data.len().max(1))).clamp(10, 200);
    let seed =
        data.iter().fold(0xcbf2_9ce4_8422_2325u64, |h, &b| (h ^ b as u64).wrapping_mul(0x100_0000_01b3));
    run(task.as_mut(), steps, &mut Stream::from_seed(seed), text);
});

/// Values for one control component with bounds `[lo, hi]`: inside, at and
/// outside the bounds (all finite).
fn control_value(lo: f64, hi: f64, i: usize, rng: &mut Stream) -> f64 {
    match i % 8 {
        0 => lo,
        1 => hi,
        2 => lo / 2.0 + hi / 2.0,
        3 => lo + (hi - lo) * rng.uniform(),
        4 => lo - 1.0 - lo.abs(),
        5 => hi + 1.0 + hi.abs(),
        6 => -f64::MAX,
        _ => f64::MAX,
    }
}

fn run(task: &mut dyn Task, steps: usize, rng: &mut Stream, text: &str) {
    let spec = task.spec().clone();
    let n = spec.state_vars.len();
    assert!(n >= 1, "a task with no state variables");
    let mut obs = vec![0.0; n];
    let mut control = vec![0.0; spec.actions.names().len()];
    task.reset(rng, &mut obs);
    assert!(obs.iter().all(|x| x.is_finite()), "a start observation is not finite: {obs:?}\n{text}");
    let mut since = 0u32;
    for i in 0..steps {
        let step = match &spec.actions {
            ActionSpace::Discrete(names) => task.step(Action::Index(i % names.len()), rng, &mut obs),
            ActionSpace::Continuous { low, high, .. } => {
                for (j, c) in control.iter_mut().enumerate() {
                    *c = control_value(low[j], high[j], i + j, rng);
                }
                task.step(Action::Vector(&control), rng, &mut obs)
            }
        };
        if !step.reward.is_finite() {
            let fault = task.fault();
            assert!(
                fault.as_deref().is_some_and(|f| !f.trim().is_empty()),
                "step {i}: the reward is {} and the task names no reason\n{text}",
                step.reward
            );
            return; // the runner stops the job here, with the reason
        }
        assert!(
            obs.iter().all(|x| x.is_finite()),
            "step {i}: an observation is not finite ({obs:?}) but the reward is {}\n{text}",
            step.reward
        );
        assert!(task.fault().is_none(), "step {i}: a fault with a finite reward: {:?}", task.fault());
        since += 1;
        // As the runner: a continuing task is never reset.
        if !spec.continuing && (step.terminated || since >= spec.max_steps) {
            since = 0;
            task.reset(rng, &mut obs);
            assert!(obs.iter().all(|x| x.is_finite()), "a start observation is not finite: {obs:?}\n{text}");
        }
    }
}
