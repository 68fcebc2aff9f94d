//! The job server: a continuing task of our own design for average-reward learners.
//!
//! A server has `slots` identical slots. Each step, the job waiting at the
//! door (if any) has a priority class; the agent admits it or rejects it.
//! Admitting pays the class's `payments` entry and takes a free slot;
//! rejecting pays 0, and so does admitting when every slot is busy (the job
//! is turned away). Then each busy slot, including one just filled,
//! finishes its job with probability `finish_prob`, independently; then a
//! new job arrives with probability `arrival`, its class drawn from `mix`.
//! The task never ends (`continuing`): the run reports the mean reward per
//! step over windows of `max_steps` steps. With few slots and a steady
//! stream of cheap jobs, admitting everything fills the server with cheap
//! work, so the best policy keeps slots free for dearer jobs.
//!
//! State: `busy` (busy slots, 0 to `slots`) and `job` (class of the waiting
//! job, 1 to the number of classes, or 0 for none). The task is finite and
//! gives its exact model.

use serde::{Deserialize, Serialize};

use super::{Action, ActionSpace, FiniteModel, Outcome, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// Most slots.
pub const MAX_SLOTS: u32 = 10;
/// Most priority classes.
pub const MAX_CLASSES: usize = 4;

/// Settings of the job server (the `task` object of a config with `"kind": "server"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ServerConfig {
    /// Number of slots, in [1, 10]. Default 3.
    #[serde(default = "default_slots")]
    pub slots: u32,
    /// Payment for admitting a job of each class, lowest class first; 1 to 4
    /// classes, each in [-1000, 1000]. Default [1, 2, 4].
    #[serde(default = "default_payments")]
    pub payments: Vec<f64>,
    /// Probability that a job arrives in a step, in [0, 1]. Default 0.9.
    #[serde(default = "default_arrival")]
    pub arrival: f64,
    /// Share of each class among arriving jobs (one entry per class, each in
    /// [0, 1], summing to 1 within 1e-9). Default [0.5, 0.3, 0.2].
    #[serde(default = "default_mix")]
    pub mix: Vec<f64>,
    /// Probability that a busy slot finishes its job in a step, in (0, 1].
    /// Default 0.2.
    #[serde(default = "default_finish_prob")]
    pub finish_prob: f64,
    /// Steps per reported window (the task never ends), in [1, 100000].
    /// Default 1000.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

fn default_slots() -> u32 {
    3
}
fn default_payments() -> Vec<f64> {
    vec![1.0, 2.0, 4.0]
}
fn default_arrival() -> f64 {
    0.9
}
fn default_mix() -> Vec<f64> {
    vec![0.5, 0.3, 0.2]
}
fn default_finish_prob() -> f64 {
    0.2
}
fn default_max_steps() -> u32 {
    1000
}

impl Default for ServerConfig {
    fn default() -> Self {
        ServerConfig {
            slots: default_slots(),
            payments: default_payments(),
            arrival: default_arrival(),
            mix: default_mix(),
            finish_prob: default_finish_prob(),
            max_steps: default_max_steps(),
        }
    }
}

/// The job server task.
#[derive(Clone, Debug)]
pub struct Server {
    cfg: ServerConfig,
    spec: TaskSpec,
    busy: u32,
    job: usize,
}

fn binomial_pmf(n: u32, k: u32, p: f64) -> f64 {
    let mut c = 1.0;
    for i in 0..k {
        c = c * f64::from(n - i) / f64::from(i + 1);
    }
    c * libm::pow(p, f64::from(k)) * libm::pow(1.0 - p, f64::from(n - k))
}

impl Server {
    /// Builds the task, or names the bad setting.
    pub fn new(cfg: ServerConfig) -> Result<Self, TaskError> {
        let bad = |f: String, m: String| Err(TaskError::Invalid(f, m));
        if let Some(m) = crate::settings::check_int("task.server.slots", u64::from(cfg.slots)) {
            return bad("slots".into(), m);
        }
        let n = cfg.payments.len();
        if n == 0 || n > MAX_CLASSES {
            return bad("payments".into(), format!("needs 1 to {MAX_CLASSES} classes, got {n}"));
        }
        for (i, p) in cfg.payments.iter().enumerate() {
            if !(p.is_finite() && (-1000.0..=1000.0).contains(p)) {
                return bad(format!("payments[{i}]"), format!("must be a number in [-1000, 1000], got {p}"));
            }
        }
        if cfg.mix.len() != n {
            return bad(
                "mix".into(),
                format!("has {} entries but payments has {n}; give one share per class", cfg.mix.len()),
            );
        }
        for (i, p) in cfg.mix.iter().enumerate() {
            if !(0.0..=1.0).contains(p) {
                return bad(format!("mix[{i}]"), format!("must be in [0, 1], got {p}"));
            }
        }
        let total: f64 = cfg.mix.iter().sum();
        if (total - 1.0).abs() > 1e-9 {
            return bad("mix".into(), format!("shares must sum to 1, they sum to {total}"));
        }
        if let Some(m) = crate::settings::check("task.server.arrival", cfg.arrival) {
            return bad("arrival".into(), m);
        }
        if let Some(m) = crate::settings::check("task.server.finish_prob", cfg.finish_prob) {
            return bad("finish_prob".into(), m);
        }
        if let Some(m) = crate::settings::check_int("task.server.max_steps", u64::from(cfg.max_steps)) {
            return Err(TaskError::Invalid("max_steps".into(), m));
        }
        let spec = TaskSpec {
            kind: "server",
            state_vars: vec![
                StateVar { name: "busy".into(), low: 0.0, high: f64::from(cfg.slots) },
                StateVar { name: "job".into(), low: 0.0, high: n as f64 },
            ],
            actions: ActionSpace::Discrete(vec!["reject".into(), "admit".into()]),
            n_states: Some((cfg.slots as usize + 1) * (n + 1)),
            default_discount: 0.99,
            max_steps: cfg.max_steps,
            continuing: true,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(Server { cfg, spec, busy: 0, job: 0 })
    }

    fn classes(&self) -> usize {
        self.cfg.payments.len()
    }

    fn id(&self, busy: u32, job: usize) -> usize {
        busy as usize * (self.classes() + 1) + job
    }

    /// Reward and busy slots right after the decision (before jobs finish).
    fn decide(&self, busy: u32, job: usize, admit: bool) -> (f64, u32) {
        if admit && job > 0 && busy < self.cfg.slots {
            (self.cfg.payments[job - 1], busy + 1)
        } else {
            (0.0, busy)
        }
    }

    /// The current (busy, job).
    pub fn state(&self) -> (u32, usize) {
        (self.busy, self.job)
    }

    /// Sets the state (for tests and the rollout view); out-of-range values are clipped.
    pub fn set_state(&mut self, busy: u32, job: usize) {
        self.busy = busy.min(self.cfg.slots);
        self.job = job.min(self.classes());
    }

    fn draw_job(&self, rng: &mut Stream) -> usize {
        if rng.uniform() < self.cfg.arrival {
            rng.categorical(&self.cfg.mix) + 1
        } else {
            0
        }
    }

    fn write_obs(&self, obs: &mut [f64]) {
        obs[0] = f64::from(self.busy);
        obs[1] = self.job as f64;
    }
}

impl Task for Server {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, rng: &mut Stream, obs: &mut [f64]) {
        self.busy = 0;
        self.job = self.draw_job(rng);
        self.write_obs(obs);
    }

    fn step(&mut self, action: Action<'_>, rng: &mut Stream, obs: &mut [f64]) -> Step {
        let admit = match action {
            Action::Index(0) => false,
            Action::Index(1) => true,
            other => panic!("server given an invalid action {other:?}"),
        };
        let (reward, busy) = self.decide(self.busy, self.job, admit);
        let finished = (0..busy).filter(|_| rng.uniform() < self.cfg.finish_prob).count() as u32;
        self.busy = busy - finished;
        self.job = self.draw_job(rng);
        self.write_obs(obs);
        Step { reward, terminated: false }
    }

    fn state_id(&self) -> Option<usize> {
        Some(self.id(self.busy, self.job))
    }

    fn id_of(&self, obs: &[f64]) -> Option<usize> {
        let (b, j) = (*obs.first()?, *obs.get(1)?);
        let ok = b >= 0.0
            && j >= 0.0
            && b.fract() == 0.0
            && j.fract() == 0.0
            && b <= f64::from(self.cfg.slots)
            && j <= self.classes() as f64;
        ok.then(|| self.id(b as u32, j as usize))
    }

    fn state_obs(&self, s: usize, obs: &mut [f64]) -> bool {
        let k = self.classes() + 1;
        if s >= self.spec.n_states.unwrap_or(0) || obs.len() < 2 {
            return false;
        }
        obs[0] = (s / k) as f64;
        obs[1] = (s % k) as f64;
        true
    }

    fn model(&self) -> Option<FiniteModel> {
        let k = self.classes() + 1;
        let n = (self.cfg.slots as usize + 1) * k;
        let mut arrive = vec![1.0 - self.cfg.arrival];
        arrive.extend(self.cfg.mix.iter().map(|p| p * self.cfg.arrival));
        let mut outcomes = Vec::with_capacity(n);
        for s in 0..n {
            let (busy, job) = ((s / k) as u32, s % k);
            let mut per_action = Vec::with_capacity(2);
            for admit in [false, true] {
                let (reward, b) = self.decide(busy, job, admit);
                let mut list = Vec::new();
                for done in 0..=b {
                    let p_done = binomial_pmf(b, done, self.cfg.finish_prob);
                    for (c, &pc) in arrive.iter().enumerate() {
                        let prob = p_done * pc;
                        if prob > 0.0 {
                            list.push(Outcome { next: self.id(b - done, c), prob, reward, terminal: false });
                        }
                    }
                }
                per_action.push(list);
            }
            outcomes.push(per_action);
        }
        let mut start = vec![0.0; n];
        for (c, p) in arrive.iter().enumerate() {
            start[self.id(0, c)] = *p;
        }
        Some(FiniteModel { n_states: n, n_actions: 2, start, terminal: vec![false; n], outcomes })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bad_settings_are_named() {
        let e = |c: ServerConfig| Server::new(c).unwrap_err().to_string();
        assert!(e(ServerConfig { slots: 0, ..Default::default() }).starts_with("slots:"));
        assert!(
            e(ServerConfig { mix: vec![0.5, 0.5], ..Default::default() }).starts_with("mix: has 2 entries")
        );
        assert!(e(ServerConfig { mix: vec![0.5, 0.3, 0.3], ..Default::default() }).contains("sum to 1"));
        assert!(e(ServerConfig { finish_prob: 0.0, ..Default::default() }).starts_with("finish_prob:"));
        assert!(
            e(ServerConfig { payments: vec![], mix: vec![], ..Default::default() }).starts_with("payments:")
        );
    }

    #[test]
    fn admitting_fills_a_slot_and_pays() {
        // Rules of this module (our own task, no source).
        let t = Server::new(ServerConfig::default()).unwrap();
        assert_eq!(t.decide(0, 3, true), (4.0, 1));
        assert_eq!(t.decide(3, 3, true), (0.0, 3));
        assert_eq!(t.decide(1, 0, true), (0.0, 1));
        assert_eq!(t.decide(1, 2, false), (0.0, 1));
        assert!((binomial_pmf(3, 1, 0.2) - 3.0 * 0.2 * 0.64).abs() < 1e-15);
    }
}
