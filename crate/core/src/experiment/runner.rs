//! The deterministic job runner.
//!
//! A [`Job`] is one (variant, grid point, seed index) of a plan. It owns its
//! task, its learner and two random streams: the task stream depends only on
//! the master seed and the seed index, so every variant's first episode of a
//! seed index starts from the same state (later episodes fall out of step as
//! their lengths differ); the agent stream depends on the variant and the
//! grid point too. [`Job::advance`]
//! can be called with any chunk size: the sequence of steps, and so every
//! number, is the same. A learner that produces a non-finite number stops its
//! own job with the reason; other jobs are unaffected. The reward the
//! learner trains on comes from the variant's compiled reward ([`Shaper`]),
//! evaluated once per step without allocating; a non-finite value stops the
//! job the same way. Both the base and the shaped return are recorded.

use crate::approx::Obs;
use crate::experiment::config::{JobSpec, Plan};
use crate::learn::{build_learner_with, Learner, StepDiag, Transition};
use crate::reward::{Shaper, StepInput};
use crate::rng::{Purpose, Stream};
use crate::task::ActionBuf;
use crate::task::Task;

/// What one finished episode looked like.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EpisodeRecord {
    /// Job step count (1-based) at the episode's last step.
    pub end_step: u64,
    /// Return under the task's own reward.
    pub base_return: f64,
    /// Return under the reward the learner was trained on.
    pub shaped_return: f64,
    /// Number of steps.
    pub length: u32,
    /// Whether the time limit cut it (rather than a terminal state).
    pub truncated: bool,
}

/// One evaluation checkpoint: the learned policy, frozen, run for the
/// plan's evaluation episodes.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EvalRecord {
    /// Index of the checkpoint in the plan's list.
    pub checkpoint: u32,
    /// Job steps done when it was taken (0 before any learning).
    pub step: u64,
    /// Mean base return of its episodes (on a continuing task, of the mean
    /// reward per step over each window).
    pub mean_return: f64,
    /// Episodes run.
    pub episodes: u32,
}

/// Where a job stands.
#[derive(Clone, Debug, PartialEq)]
pub enum JobStatus {
    /// Steps remain.
    Running,
    /// The budget is spent.
    Done,
    /// The learner diverged; the reason names the step and the quantity.
    Failed(String),
}

/// Sums of step diagnostics over one curve bin.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct DiagSums {
    /// Steps counted.
    pub count: u64,
    /// Sum of TD errors.
    pub td: f64,
    /// Sum of absolute TD errors.
    pub abs_td: f64,
    /// Sum of policy entropies.
    pub entropy: f64,
    /// Sum of actor update norms.
    pub actor_norm: f64,
    /// Sum of critic update norms.
    pub critic_norm: f64,
    /// Steps that carried an importance weight (off-policy learners).
    pub weights: u64,
    /// Sum of the importance weights ρ.
    pub weight_sum: f64,
    /// Sum of their squares.
    pub weight_sq: f64,
    /// Largest weight.
    pub weight_max: f64,
    /// Steps whose weight was cut at the cap.
    pub weight_cut: u64,
}

impl DiagSums {
    fn add(&mut self, d: &StepDiag) {
        self.count += 1;
        self.td += d.td_error;
        self.abs_td += d.td_error.abs();
        self.entropy += d.entropy;
        self.actor_norm += d.actor_grad_norm;
        self.critic_norm += d.critic_grad_norm;
        if let Some(w) = d.weight {
            self.weights += 1;
            self.weight_sum += w;
            self.weight_sq += w * w;
            self.weight_max = self.weight_max.max(w);
            self.weight_cut += u64::from(d.weight_truncated);
        }
    }

    /// The effective sample size of the bin's importance weights,
    /// `(Σρ)² / Σρ²` (Kong 1992; Kish's formula), as a fraction of the
    /// weighted steps: 1 when every weight is equal, near 0 when one weight
    /// dominates. `None` without weights.
    pub fn ess_fraction(&self) -> Option<f64> {
        (self.weights > 0 && self.weight_sq > 0.0)
            .then(|| self.weight_sum * self.weight_sum / self.weight_sq / self.weights as f64)
    }
}

/// One (variant, seed) run.
pub struct Job {
    id: usize,
    task: Box<dyn Task>,
    learner: Box<dyn Learner>,
    shaper: Shaper,
    task_rng: Stream,
    agent_rng: Stream,
    budget: u64,
    max_len: u32,
    continuing: bool,
    steps_done: u64,
    obs: Vec<f64>,
    next_obs: Vec<f64>,
    obs_id: Option<usize>,
    action: ActionBuf,
    next_action: ActionBuf,
    in_episode: bool,
    ep_len: u32,
    ep_base: f64,
    ep_shaped: f64,
    status: JobStatus,
    episodes: Vec<EpisodeRecord>,
    unread: usize,
    bin_edges: Vec<u64>,
    diag: Vec<DiagSums>,
    diag_from: usize,
    eval: Option<Evaluator>,
}

/// What a job needs to run evaluation episodes: its own copy of the task (so
/// the training episode in progress is untouched) and buffers.
struct Evaluator {
    task: Box<dyn Task>,
    checkpoints: Vec<u64>,
    next: usize,
    episodes: u32,
    greedy: bool,
    master: u64,
    seed: u64,
    obs: Vec<f64>,
    next_obs: Vec<f64>,
    action: ActionBuf,
    records: Vec<EvalRecord>,
    unread: usize,
}

/// The upper step edges of `points` equal bins over `steps` steps: bin `b`
/// holds the steps in `(edges[b-1], edges[b]]`.
pub fn bin_edges(steps: u64, points: u32) -> Vec<u64> {
    (1..=u64::from(points))
        .map(|b| ((u128::from(b) * u128::from(steps)) / u128::from(points)) as u64)
        .collect()
}

/// The bin holding a (1-based) step.
pub fn bin_of(edges: &[u64], step: u64) -> usize {
    edges.partition_point(|&e| e < step).min(edges.len() - 1)
}

impl Job {
    /// Job `id` of a plan (see [`Plan::job_spec`]: outside a study `id =
    /// variant * seeds + seed`). Panics for an id the plan cannot build.
    pub fn new(plan: &Plan, id: usize) -> Job {
        let Some(JobSpec { variant, point, seed, .. }) = plan.job_spec(id) else {
            panic!("job {id}: out of range, or a fresh job of a study built before its tuning choice (Plan::with_choice)")
        };
        let cfg = &plan.config;
        let task = plan.make_task();
        let spec = task.spec().clone();
        // Keyed by (variant, grid point, seed index); point 0 is every
        // variant's only point outside a study, so the key is then the variant.
        let key = variant as u64 | (point as u64) << 32;
        let mut agent_rng = Stream::derive(cfg.master_seed, Purpose::Agent, key, seed as u64);
        let setup = plan.setup_of(variant, point);
        let learner =
            build_learner_with(setup, &spec, &mut agent_rng).expect("a validated plan's learner builds");
        let gamma = setup.shaping_discount(&spec);
        let shaper = Shaper::new(plan.reward_of(variant, point), &spec, gamma)
            .expect("a validated plan's reward compiles");
        let n_obs = spec.state_vars.len();
        let edges = bin_edges(cfg.steps, cfg.curve_points);
        let eval = plan.evaluation.as_ref().map(|e| Evaluator {
            task: plan.make_task(),
            checkpoints: e.checkpoints.clone(),
            next: 0,
            episodes: e.episodes,
            greedy: e.greedy,
            master: cfg.master_seed,
            seed: seed as u64,
            obs: vec![0.0; n_obs],
            next_obs: vec![0.0; n_obs],
            action: ActionBuf::for_spec(&spec),
            records: Vec::new(),
            unread: 0,
        });
        Job {
            id,
            task,
            learner,
            shaper,
            task_rng: Stream::derive(cfg.master_seed, Purpose::Task, u64::MAX, seed as u64),
            agent_rng,
            budget: cfg.steps,
            max_len: spec.max_steps,
            continuing: spec.continuing,
            steps_done: 0,
            obs: vec![0.0; n_obs],
            next_obs: vec![0.0; n_obs],
            obs_id: None,
            action: ActionBuf::for_spec(&spec),
            next_action: ActionBuf::for_spec(&spec),
            in_episode: false,
            ep_len: 0,
            ep_base: 0.0,
            ep_shaped: 0.0,
            status: JobStatus::Running,
            episodes: Vec::new(),
            unread: 0,
            diag: vec![DiagSums::default(); edges.len()],
            diag_from: 0,
            bin_edges: edges,
            eval,
        }
    }

    /// The job id.
    pub fn id(&self) -> usize {
        self.id
    }

    /// Steps taken so far.
    pub fn steps_done(&self) -> u64 {
        self.steps_done
    }

    /// Where the job stands.
    pub fn status(&self) -> &JobStatus {
        &self.status
    }

    /// The finished episodes the job still holds: every one so far, unless
    /// [`Job::take_new_episodes`] has been called (it drops what it handed out).
    pub fn episodes(&self) -> &[EpisodeRecord] {
        &self.episodes
    }

    /// Episodes finished since the last call. The records the previous call
    /// returned are dropped first: whoever takes episodes keeps them (the
    /// page's results, the CLI's), so a job that is read as it runs holds
    /// only one chunk's worth and its memory stays flat however long it runs.
    pub fn take_new_episodes(&mut self) -> &[EpisodeRecord] {
        self.episodes.drain(..self.unread);
        self.unread = self.episodes.len();
        &self.episodes
    }

    /// Evaluation checkpoints taken since the last call (the records the
    /// previous call returned are dropped first, as with
    /// [`Job::take_new_episodes`]); empty when evaluation is off.
    pub fn take_new_evaluations(&mut self) -> &[EvalRecord] {
        match &mut self.eval {
            None => &[],
            Some(e) => {
                e.records.drain(..e.unread);
                e.unread = e.records.len();
                &e.records
            }
        }
    }

    /// The evaluation checkpoints the job still holds.
    pub fn evaluations(&self) -> &[EvalRecord] {
        self.eval.as_ref().map_or(&[], |e| &e.records)
    }

    /// Diagnostic sums per curve bin.
    pub fn diagnostics(&self) -> &[DiagSums] {
        &self.diag
    }

    /// The diagnostic bins that may have changed since the last call, as
    /// (first bin index, their sums so far): from the bin the previous call
    /// ended on to the last bin with a step. Sums are cumulative per bin, so
    /// whoever keeps them overwrites a bin with the newer sums; any chunking
    /// gives the same final bins.
    pub fn take_new_diagnostics(&mut self) -> (usize, &[DiagSums]) {
        let from = self.diag_from;
        let last = self.diag.iter().rposition(|d| d.count > 0).map_or(from, |l| l.max(from));
        self.diag_from = last;
        if !matches!(self.diag.get(from), Some(d) if d.count > 0) {
            return (from, &[]);
        }
        (from, &self.diag[from..=last])
    }

    /// The job's learner (to inspect what it has learned).
    pub fn learner_mut(&mut self) -> &mut dyn Learner {
        self.learner.as_mut()
    }

    /// Advances by up to `n` steps (fewer when the budget runs out or the
    /// learner fails); returns the steps taken.
    pub fn advance(&mut self, n: u64) -> u64 {
        let start = self.steps_done;
        while self.status == JobStatus::Running {
            // A checkpoint is taken as soon as its step count is reached,
            // whatever the chunk size: evaluation changes nothing the
            // training depends on, so when it runs cannot matter.
            if let Err(reason) = self.evaluate_due() {
                self.status = JobStatus::Failed(reason);
                break;
            }
            if self.steps_done >= self.budget {
                self.status = JobStatus::Done;
                break;
            }
            if self.steps_done - start >= n {
                break;
            }
            if let Err(reason) = self.step() {
                self.status = JobStatus::Failed(format!("step {}: {reason}", self.steps_done));
            }
        }
        self.steps_done - start
    }

    /// Runs the evaluation of the next checkpoint if the job has reached it.
    fn evaluate_due(&mut self) -> Result<(), String> {
        let Some(e) = &mut self.eval else { return Ok(()) };
        if e.next >= e.checkpoints.len() || e.checkpoints[e.next] != self.steps_done {
            return Ok(());
        }
        let k = e.next;
        e.next += 1;
        let mut total = 0.0;
        for ep in 0..e.episodes {
            let r = evaluation_episode(e, self.learner.as_mut(), k as u64, u64::from(ep), self.continuing);
            if !r.is_finite() {
                return Err(format!(
                    "evaluation at step {}: episode {ep} of the learned policy returned {r}",
                    self.steps_done
                ));
            }
            total += r;
        }
        e.records.push(EvalRecord {
            checkpoint: k as u32,
            step: self.steps_done,
            mean_return: total / f64::from(e.episodes),
            episodes: e.episodes,
        });
        Ok(())
    }

    fn step(&mut self) -> Result<(), String> {
        if !self.in_episode {
            self.task.reset(&mut self.task_rng, &mut self.obs);
            self.obs_id = self.task.state_id();
            self.learner.act(
                Obs { values: &self.obs, id: self.obs_id },
                &mut self.agent_rng,
                &mut self.action,
            );
            self.in_episode = true;
            self.ep_len = 0;
            self.ep_base = 0.0;
            self.ep_shaped = 0.0;
        }
        let outcome = self.task.step(self.action.as_action(), &mut self.task_rng, &mut self.next_obs);
        if !outcome.reward.is_finite() {
            return Err(self.task.fault().unwrap_or_else(|| {
                format!("the task's own reward was {} (check the task's settings)", outcome.reward)
            }));
        }
        let next_id = self.task.state_id();
        self.steps_done += 1;
        self.ep_len += 1;
        let reward = self.shaper.reward(&StepInput {
            obs: &self.obs,
            action: self.action.as_action(),
            next: &self.next_obs,
            base: outcome.reward,
            terminal: outcome.terminated,
            // A continuing task's windows are no episodes: t counts from the run's start.
            t: if self.continuing { self.steps_done - 1 } else { u64::from(self.ep_len - 1) },
        });
        if !reward.is_finite() {
            return Err(format!(
                "the reward formula gave {reward} (base reward {}); check divisions, logarithms and square roots",
                outcome.reward
            ));
        }
        self.ep_base += outcome.reward;
        self.ep_shaped += reward;
        // A continuing task is never truncated: it reports a window instead.
        let window_end = self.ep_len >= self.max_len;
        let truncated = !self.continuing && !outcome.terminated && window_end;
        let next = Obs { values: &self.next_obs, id: next_id };
        if !outcome.terminated {
            self.learner.act(next, &mut self.agent_rng, &mut self.next_action);
        }
        let tr = Transition {
            obs: Obs { values: &self.obs, id: self.obs_id },
            action: self.action.as_action(),
            reward,
            next,
            next_action: (!outcome.terminated).then(|| self.next_action.as_action()),
            terminated: outcome.terminated,
            truncated,
        };
        let d = self.learner.learn(&tr, &mut self.agent_rng).map_err(|e| e.to_string())?;
        self.diag[bin_of(&self.bin_edges, self.steps_done)].add(&d);
        if self.continuing && window_end && !outcome.terminated {
            // Mean reward per step over the window (see `TaskSpec::continuing`).
            let n = f64::from(self.ep_len);
            self.episodes.push(EpisodeRecord {
                end_step: self.steps_done,
                base_return: self.ep_base / n,
                shaped_return: self.ep_shaped / n,
                length: self.ep_len,
                truncated: false,
            });
            self.ep_len = 0;
            self.ep_base = 0.0;
            self.ep_shaped = 0.0;
            std::mem::swap(&mut self.obs, &mut self.next_obs);
            std::mem::swap(&mut self.action, &mut self.next_action);
            self.obs_id = next_id;
        } else if outcome.terminated || truncated {
            self.episodes.push(EpisodeRecord {
                end_step: self.steps_done,
                base_return: self.ep_base,
                shaped_return: self.ep_shaped,
                length: self.ep_len,
                truncated,
            });
            self.in_episode = false;
        } else {
            std::mem::swap(&mut self.obs, &mut self.next_obs);
            std::mem::swap(&mut self.action, &mut self.next_action);
            self.obs_id = next_id;
        }
        Ok(())
    }
}

/// The task and action streams of evaluation episode `episode` at
/// checkpoint `checkpoint` of seed index `seed`: the same in every variant.
pub fn evaluation_streams(master: u64, seed: u64, checkpoint: u64, episode: u64) -> (Stream, Stream) {
    let key = (checkpoint << 20) | episode;
    (
        Stream::derive(master, Purpose::EvalTask, key, seed),
        Stream::derive(master, Purpose::EvalAgent, key, seed),
    )
}

/// One evaluation episode of the frozen learned policy at checkpoint `k`;
/// returns its base return (on a continuing task, the mean reward per step
/// over one window of `max_steps` steps). The task and action streams are
/// derived from (master seed, seed index, checkpoint, episode) and not from
/// the variant, so every variant's episode `ep` at checkpoint `k` of a seed
/// index starts from the same state and draws the same task noise for as
/// long as the steps line up.
fn evaluation_episode(
    e: &mut Evaluator,
    learner: &mut dyn Learner,
    k: u64,
    ep: u64,
    continuing: bool,
) -> f64 {
    let (mut task_rng, mut agent_rng) = evaluation_streams(e.master, e.seed, k, ep);
    let max_len = e.task.spec().max_steps;
    e.task.reset(&mut task_rng, &mut e.obs);
    let mut total = 0.0;
    let mut len = 0u32;
    while len < max_len {
        let obs = Obs { values: &e.obs, id: e.task.state_id() };
        if e.greedy {
            learner.best_action(obs, &mut e.action);
        } else {
            learner.act_learned(obs, &mut agent_rng, &mut e.action);
        }
        let out = e.task.step(e.action.as_action(), &mut task_rng, &mut e.next_obs);
        total += out.reward;
        len += 1;
        if out.terminated {
            break;
        }
        std::mem::swap(&mut e.obs, &mut e.next_obs);
    }
    if continuing {
        total / f64::from(len.max(1))
    } else {
        total
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn variants_share_the_task_stream_of_a_seed_index() {
        // Common random numbers (common practice, no source): same seed index,
        // same task stream whatever the variant; the agent streams differ.
        let plan = crate::experiment::parse(
            r#"{"schema": 1, "task": {"kind": "cartpole"}, "steps": 10, "seeds": 3,
                "variants": [{"label": "A"}, {"label": "B", "learner": {"family": "qac"}}]}"#,
        )
        .unwrap();
        let mut a = Job::new(&plan, 1); // variant 0, seed 1
        let mut b = Job::new(&plan, 4); // variant 1, seed 1
        let mut c = Job::new(&plan, 2); // variant 0, seed 2
        let ta: Vec<u64> = (0..4).map(|_| a.task_rng.next_u64()).collect();
        let tb: Vec<u64> = (0..4).map(|_| b.task_rng.next_u64()).collect();
        let tc: Vec<u64> = (0..4).map(|_| c.task_rng.next_u64()).collect();
        assert_eq!(ta, tb);
        assert_ne!(ta, tc);
        assert_ne!(a.agent_rng.next_u64(), b.agent_rng.next_u64());
    }

    #[test]
    fn bins_cover_the_budget() {
        let e = bin_edges(100, 4);
        assert_eq!(e, vec![25, 50, 75, 100]);
        assert_eq!(bin_of(&e, 1), 0);
        assert_eq!(bin_of(&e, 25), 0);
        assert_eq!(bin_of(&e, 26), 1);
        assert_eq!(bin_of(&e, 100), 3);
        let e = bin_edges(10, 4);
        assert_eq!(e, vec![2, 5, 7, 10]);
    }
}
