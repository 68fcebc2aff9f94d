//! Checks of the task suite against published dynamics and exact solutions:
//! mountain car, pendulum swing-up, the ledge walk (cliff walking), the
//! one-way maze and the job server.

use critbox_core::exact;
use critbox_core::experiment;
use critbox_core::rng::Stream;
use critbox_core::task::grid::{GridConfig, GridWorld};
use critbox_core::task::mountain_car::{self, MountainCar, MountainCarConfig};
use critbox_core::task::pendulum::{self, Pendulum, PendulumConfig};
use critbox_core::task::server::{Server, ServerConfig};
use critbox_core::task::{Action, FiniteModel, Task};

#[test]
fn mountain_car_one_step_matches_the_book() {
    // Sutton & Barto (2018), Example 10.1; derived value in references.md:
    // from (−0.5, 0) with A = +1, ẋ' = 0.001 − 0.0025 cos(−1.5) = 0.000823157
    // and x' = −0.499176843 (9 significant digits as derived).
    let (x, v) = mountain_car::dynamics(-0.5, 0.0, 1.0);
    assert!((v - 0.000823157).abs() < 5e-10, "velocity {v}");
    assert!((x + 0.499176843).abs() < 5e-10, "position {x}");
    // The same through the task: action index 2 is full throttle forward.
    let mut t = MountainCar::new(MountainCarConfig::default()).unwrap();
    t.set_state(-0.5, 0.0);
    let mut obs = [0.0; 2];
    let s = t.step(Action::Index(2), &mut Stream::from_seed(1), &mut obs);
    assert_eq!((obs[0], obs[1], s.reward, s.terminated), (x, v, -1.0, false));
    // Zero throttle at the valley floor x = −π/6 (where cos 3x = 0): no force.
    let (x, v) = mountain_car::dynamics(-std::f64::consts::PI / 6.0, 0.0, 0.0);
    assert!(v.abs() < 1e-18 && (x + std::f64::consts::PI / 6.0).abs() < 1e-15);
}

#[test]
fn mountain_car_start_states_follow_the_book() {
    // Sutton & Barto (2018), Example 10.1: x ~ U[−0.6, −0.4), ẋ = 0.
    let mut t = MountainCar::new(MountainCarConfig::default()).unwrap();
    let mut rng = Stream::from_seed(3);
    let mut obs = [0.0; 2];
    let mut lo: f64 = 0.0;
    let mut hi: f64 = -1.0;
    for _ in 0..2000 {
        t.reset(&mut rng, &mut obs);
        assert_eq!(obs[1], 0.0);
        lo = lo.min(obs[0]);
        hi = hi.max(obs[0]);
    }
    assert!(lo >= -0.6 && hi < -0.4 && lo < -0.59 && hi > -0.41, "{lo} {hi}");
}

#[test]
fn pendulum_one_step_matches_the_equation_of_motion() {
    // Doya (2000), from memory: m l² ω̇ = −μω + m g l sin θ + u with m = l = 1,
    // g = 9.8, μ = 0.01; one semi-implicit Euler step of dt (our integration).
    // From θ = 0.5, ω = 1, u = 2, dt = 0.02:
    // ω̇ = −0.01 + 9.8 sin 0.5 + 2 = 6.688370278321190 (sin 0.5 = 0.479425538604203),
    // ω' = 1.1337674055664238, θ' = 0.5 + 0.02 ω' = 0.5226753481113285.
    let (th, om) = pendulum::dynamics(0.5, 1.0, 2.0, 0.02);
    assert!((om - 1.1337674055664238).abs() < 1e-14, "omega {om}");
    assert!((th - 0.5226753481113285).abs() < 1e-14, "theta {th}");
    // The reward is cos θ of the angle after the step.
    let mut p = Pendulum::new(PendulumConfig::default()).unwrap();
    p.set_state(0.5, 1.0);
    let mut obs = [0.0; 2];
    let s = p.step(Action::Vector(&[2.0]), &mut Stream::from_seed(0), &mut obs);
    assert_eq!(s.reward, libm::cos(th));
    assert!(!s.terminated);
    // Torque beyond the limit is clipped to 5.
    assert_eq!(pendulum::dynamics(0.5, 1.0, 50.0, 0.02), pendulum::dynamics(0.5, 1.0, 5.0, 0.02));
}

#[test]
fn pendulum_cannot_be_lifted_directly() {
    // Doya (2000): m g l = 9.8 > u_max = 5, so a constant full torque from
    // hanging at rest never brings the pendulum above the horizontal (energy:
    // 5φ = 9.8 (1 − cos φ) gives a largest swing φ ≈ 1.14 rad from the bottom).
    let pi = std::f64::consts::PI;
    let (mut th, mut om) = (-pi, 0.0);
    let mut highest: f64 = -1.0;
    for _ in 0..2000 {
        (th, om) = pendulum::dynamics(th, om, 5.0, 0.02);
        highest = highest.max(libm::cos(th));
    }
    assert!(highest < libm::cos(pi - 1.2), "highest cos θ {highest}");
    assert!(highest > libm::cos(pi - 1.0), "the pendulum should swing up to about 1.14 rad: {highest}");
}

fn start_of(m: &FiniteModel) -> usize {
    m.start.iter().position(|&p| p == 1.0).unwrap()
}

/// A deterministic policy from a map of arrows (one character per cell:
/// N E S W), as a table for `exact::evaluate`.
fn arrows(w: &GridWorld, rows: &[&str]) -> Vec<f64> {
    let m = w.model().unwrap();
    let mut pi = vec![0.0; m.n_states * 4];
    let mut obs = [0.0; 2];
    for s in 0..m.n_states {
        assert!(w.state_obs(s, &mut obs));
        let ch = rows[obs[0] as usize].as_bytes()[obs[1] as usize];
        let a = match ch {
            b'N' => 0,
            b'E' => 1,
            b'S' => 2,
            _ => 3,
        };
        pi[s * 4 + a] = 1.0;
    }
    pi
}

#[test]
fn ledge_walk_reproduces_cliff_walking() {
    // Sutton & Barto (2018), Example 6.6: 4 × 12, −1 per step, −100 and back
    // to the start for stepping off the cliff, γ = 1. The optimal path along
    // the edge returns −13; the path one row higher −15; along the top −17.
    let cfg: experiment::config::TaskConfig =
        serde_json::from_str(r#"{"kind": "grid", "layout": "ledge"}"#).unwrap();
    let experiment::config::TaskConfig::Grid(g) = cfg else { panic!("a grid") };
    assert_eq!((g.step_reward, g.hazard_reward, g.hazard_restart, g.slip), (-1.0, -99.0, true, 0.0));
    let w = GridWorld::new(g).unwrap();
    assert_eq!(w.size(), (4, 12));
    let m = w.model().unwrap();
    let opt = exact::value_iteration(&m, 1.0, 1e-12).unwrap();
    let s0 = start_of(&m);
    assert!((opt.values[s0] + 13.0).abs() < 1e-9, "optimal return {}", opt.values[s0]);
    let one_higher = arrows(&w, &["EEEEEEEEEEES", "EEEEEEEEEEES", "NEEEEEEEEEES", "NEEEEEEEEEEE"]);
    let v = exact::evaluate(&m, &one_higher, 1.0).unwrap();
    assert!((v[s0] + 15.0).abs() < 1e-9, "one row higher {}", v[s0]);
    let top = arrows(&w, &["EEEEEEEEEEES", "NEEEEEEEEEES", "NEEEEEEEEEES", "NEEEEEEEEEEE"]);
    let v = exact::evaluate(&m, &top, 1.0).unwrap();
    assert!((v[s0] + 17.0).abs() < 1e-9, "top row {}", v[s0]);
    // Stepping off the ledge: −100 in total and back to the start.
    let mut w2 = w.clone();
    let mut rng = Stream::from_seed(0);
    let mut obs = [0.0; 2];
    w2.reset(&mut rng, &mut obs);
    let s = w2.step(Action::Index(1), &mut rng, &mut obs);
    assert_eq!((s.reward, s.terminated, obs), (-100.0, false, [3.0, 0.0]));
}

#[test]
fn layouts_by_name_and_their_errors() {
    let parse = |t: &str| {
        experiment::parse(&format!(
            r#"{{"schema": 1, "task": {t}, "steps": 10, "variants": [{{"label": "a"}}]}}"#
        ))
    };
    let plan = parse(r#"{"kind": "grid", "layout": "ledge", "hazard_reward": -5}"#).unwrap();
    let experiment::config::TaskConfig::Grid(g) = &plan.config.task else { panic!() };
    assert_eq!((g.hazard_reward, g.hazard_restart), (-5.0, true), "explicit settings override the layout's");
    let e = parse(r#"{"kind": "grid", "layout": "moon"}"#).unwrap_err().to_string();
    assert_eq!(e, r#"task.layout: unknown layout "moon"; the layouts are rover, ledge, maze"#);
    let e = parse(r#"{"kind": "grid", "layout": "ledge", "map": ["S.D"]}"#).unwrap_err().to_string();
    assert!(e.starts_with("task.layout: the config gives both a `map` and the layout"), "{e}");
    let e = parse(r#"{"kind": "grid"}"#).unwrap_err().to_string();
    assert!(e.starts_with("task.map: is empty: give the rows of a map, or a `layout`"), "{e}");
    let e = parse(r#"{"kind": "grid", "layout": "maze", "slip": "x"}"#).unwrap_err().to_string();
    assert!(e.contains("invalid type: string \"x\", expected f64"), "{e}");
    // A layout round-trips through its JSON form.
    let again: experiment::config::TaskConfig =
        serde_json::from_value(serde_json::to_value(&plan.config.task).unwrap()).unwrap();
    assert_eq!(again, plan.config.task);
}

#[test]
fn one_way_maze_optimum_and_conveyors() {
    // Exact solution by value iteration (Sutton & Barto 2018, Section 4.4) on
    // the maze's own model: the shortest route takes 20 moves (counted by
    // hand on the map: 4 east, 2 south, onto the conveyor, 1 carried, 2 north,
    // 4 east, 6 south).
    let w = GridWorld::new(GridConfig::layout("maze").unwrap()).unwrap();
    let m = w.model().unwrap();
    let opt = exact::value_iteration(&m, 1.0, 1e-12).unwrap();
    assert!((opt.values[start_of(&m)] + 20.0).abs() < 1e-9, "{}", opt.values[start_of(&m)]);
    // Conveyor rules (this project's own, no source): `>` at row 3, col 6.
    let mut w = w;
    let mut rng = Stream::from_seed(0);
    let mut obs = [0.0; 2];
    w.reset(&mut rng, &mut obs);
    for a in [1, 1, 1, 1, 2, 2] {
        w.step(Action::Index(a), &mut rng, &mut obs);
    }
    assert_eq!(obs, [3.0, 5.0]);
    w.step(Action::Index(1), &mut rng, &mut obs);
    assert_eq!(obs, [3.0, 6.0], "entered the conveyor moving east");
    w.step(Action::Index(3), &mut rng, &mut obs);
    assert_eq!(obs, [3.0, 7.0], "on a conveyor every action moves on east");
    w.step(Action::Index(3), &mut rng, &mut obs);
    assert_eq!(obs, [3.0, 7.0], "the conveyor cannot be entered moving west");
}

#[test]
fn server_model_matches_sampling() {
    // Common practice, no source: the model's transition probabilities sum
    // to one and agree with sampled frequencies.
    let t = Server::new(ServerConfig::default()).unwrap();
    assert!(t.spec().continuing);
    let m = t.model().unwrap();
    assert_eq!(m.n_states, 4 * 4);
    for s in 0..m.n_states {
        for a in 0..2 {
            let total: f64 = m.outcomes[s][a].iter().map(|o| o.prob).sum();
            assert!((total - 1.0).abs() < 1e-12, "state {s} action {a}: {total}");
        }
    }
    let mut rng = Stream::from_seed(11);
    let mut obs = [0.0; 2];
    let n = 40_000;
    let mut counts = vec![0usize; m.n_states];
    let mut task = t.clone();
    let s = 2 * 4 + 3; // two busy slots, a class-3 job waiting
    for _ in 0..n {
        task.set_state(2, 3);
        let st = task.step(Action::Index(1), &mut rng, &mut obs);
        assert_eq!(st.reward, 4.0);
        counts[task.state_id().unwrap()] += 1;
    }
    let mut seen = 0.0;
    for o in &m.outcomes[s][1] {
        let f = counts[o.next] as f64 / n as f64;
        assert!((f - o.prob).abs() < 0.01, "next {} freq {f} prob {}", o.next, o.prob);
        seen += o.prob;
    }
    assert!((seen - 1.0).abs() < 1e-12);
    // state_obs and id_of agree.
    for s in 0..m.n_states {
        assert!(t.state_obs(s, &mut obs));
        assert_eq!(t.id_of(&obs), Some(s));
    }
}

#[test]
fn server_keeps_slots_for_dear_jobs() {
    // Exact solution (value iteration on the model, discount 0.99): with three
    // slots nearly always full of work, the best policy turns away the
    // cheapest class when only one slot is free, and admits the dearest
    // class whenever a slot is free. Measured on this model, not published.
    let t = Server::new(ServerConfig::default()).unwrap();
    let m = t.model().unwrap();
    let opt = exact::value_iteration(&m, 0.99, 1e-10).unwrap();
    let id = |busy: usize, job: usize| busy * 4 + job;
    for busy in 0..3 {
        assert_eq!(opt.greedy[id(busy, 3)], vec![1], "admit class 3 with {busy} busy");
    }
    assert_eq!(opt.greedy[id(2, 1)], vec![0], "reject class 1 with one slot left");
}

#[test]
fn new_tasks_run_in_experiments() {
    for task in [
        r#"{"kind": "mountain_car", "max_steps": 200}"#,
        r#"{"kind": "pendulum", "torque_levels": 3, "max_steps": 100}"#,
        r#"{"kind": "grid", "layout": "maze"}"#,
    ] {
        let plan = experiment::parse(&format!(
            r#"{{"schema": 1, "task": {task}, "steps": 1000, "seeds": 2, "variants": [{{"label": "a"}}]}}"#
        ))
        .unwrap();
        let r = experiment::run_all(&plan);
        assert!(r.summary()["variants"][0]["failed"].as_array().unwrap().is_empty(), "{task}");
    }
}
