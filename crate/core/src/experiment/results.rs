//! Aggregation of episode records into curves and summaries.
//!
//! Curves are binned on environment steps (never on episodes: variants
//! differ in episode length). A seed's value in a bin is the mean base return
//! of the episodes that ended in it; a bin where no episode ended carries the
//! last value forward (up to the seed's progress), and is empty before the
//! first episode. Across seeds each bin gives the mean and a Student-t 95%
//! interval. A seed's final return is the mean base return of episodes that
//! ended in the last `final_fraction` of the budget (or, if none did, of its
//! last episode); a failed (diverged) seed has none and is listed apart. [`Results::summary`] is the JSON the CLI prints and the page
//! shows, so both give the same numbers.

use serde_json::{json, Value};

use crate::experiment::config::{Plan, SCHEMA};
use crate::experiment::runner::{bin_edges, bin_of, EpisodeRecord};
use crate::stats;

/// One point of a curve.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurvePoint {
    /// Upper step edge of the bin.
    pub step: u64,
    /// Mean over the seeds with data (NaN when none).
    pub mean: f64,
    /// Lower end of the 95% interval (NaN with fewer than two seeds).
    pub lo: f64,
    /// Upper end of the 95% interval (NaN with fewer than two seeds).
    pub hi: f64,
    /// Seeds with data in this bin.
    pub n: usize,
}

#[derive(Clone, Debug, Default)]
struct JobResults {
    episodes: Vec<EpisodeRecord>,
    steps_done: u64,
    failed: Option<String>,
}

/// Results of an experiment, possibly still running.
#[derive(Clone, Debug)]
pub struct Results {
    title: String,
    task: &'static str,
    labels: Vec<String>,
    seeds: usize,
    steps: u64,
    master_seed: u64,
    final_fraction: f64,
    edges: Vec<u64>,
    jobs: Vec<JobResults>,
}

impl Results {
    /// Empty results for a plan.
    pub fn new(plan: &Plan) -> Self {
        let c = &plan.config;
        Results {
            title: c.title.clone(),
            task: plan.spec.kind,
            labels: plan.variants.iter().map(|v| v.label.clone()).collect(),
            seeds: c.seeds as usize,
            steps: c.steps,
            master_seed: c.master_seed,
            final_fraction: c.final_fraction,
            edges: bin_edges(c.steps, c.curve_points),
            jobs: vec![JobResults::default(); plan.job_count()],
        }
    }

    /// Number of jobs.
    pub fn job_count(&self) -> usize {
        self.jobs.len()
    }

    /// Adds a finished episode of a job (ignored for an unknown job id).
    pub fn add_episode(&mut self, job: usize, rec: EpisodeRecord) {
        if let Some(j) = self.jobs.get_mut(job) {
            j.steps_done = j.steps_done.max(rec.end_step);
            j.episodes.push(rec);
        }
    }

    /// Records how far a job has got.
    pub fn set_steps(&mut self, job: usize, steps_done: u64) {
        if let Some(j) = self.jobs.get_mut(job) {
            j.steps_done = j.steps_done.max(steps_done.min(self.steps));
        }
    }

    /// Marks a job as failed with its reason.
    pub fn mark_failed(&mut self, job: usize, reason: String) {
        if let Some(j) = self.jobs.get_mut(job) {
            j.failed = Some(reason);
        }
    }

    fn job(&self, variant: usize, seed: usize) -> &JobResults {
        &self.jobs[variant * self.seeds + seed]
    }

    /// Per-bin values of one seed (NaN where it has no data yet).
    pub fn seed_curve(&self, variant: usize, seed: usize) -> Vec<f64> {
        let j = self.job(variant, seed);
        let mut sums = vec![0.0; self.edges.len()];
        let mut counts = vec![0u32; self.edges.len()];
        for e in &j.episodes {
            let b = bin_of(&self.edges, e.end_step);
            sums[b] += e.base_return;
            counts[b] += 1;
        }
        let reached = if j.steps_done == 0 { None } else { Some(bin_of(&self.edges, j.steps_done)) };
        let mut out = vec![f64::NAN; self.edges.len()];
        let mut last = f64::NAN;
        for b in 0..self.edges.len() {
            if counts[b] > 0 {
                last = sums[b] / f64::from(counts[b]);
            }
            if reached.is_some_and(|r| b <= r) {
                out[b] = last;
            }
        }
        out
    }

    /// The learning curve of a variant: mean over seeds with a 95% interval.
    pub fn curve(&self, variant: usize) -> Vec<CurvePoint> {
        let per_seed: Vec<Vec<f64>> = (0..self.seeds).map(|s| self.seed_curve(variant, s)).collect();
        let mut xs = Vec::with_capacity(self.seeds);
        self.edges
            .iter()
            .enumerate()
            .map(|(b, &step)| {
                xs.clear();
                xs.extend(per_seed.iter().map(|c| c[b]).filter(|v| !v.is_nan()));
                let s = stats::summarize(&xs);
                let (lo, hi) = s.ci95.unwrap_or((f64::NAN, f64::NAN));
                CurvePoint { step, mean: if xs.is_empty() { f64::NAN } else { s.mean }, lo, hi, n: xs.len() }
            })
            .collect()
    }

    /// Each seed's final return (None when the seed finished no episode, or
    /// failed: a diverged run has no final performance to report).
    pub fn final_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        let from = self.steps as f64 * (1.0 - self.final_fraction);
        (0..self.seeds)
            .map(|s| {
                let job = self.job(variant, s);
                if job.failed.is_some() {
                    return None;
                }
                let eps = &job.episodes;
                let tail: Vec<f64> =
                    eps.iter().filter(|e| e.end_step as f64 > from).map(|e| e.base_return).collect();
                if tail.is_empty() {
                    eps.last().map(|e| e.base_return)
                } else {
                    Some(tail.iter().sum::<f64>() / tail.len() as f64)
                }
            })
            .collect()
    }

    /// The summary JSON (what `critbox run` prints).
    pub fn summary(&self) -> Value {
        let variants: Vec<Value> = (0..self.labels.len())
            .map(|v| {
                let finals = self.final_per_seed(v);
                let xs: Vec<f64> = finals.iter().flatten().copied().collect();
                let s = stats::summarize(&xs);
                let curve = self.curve(v);
                let failed: Vec<Value> = (0..self.seeds)
                    .filter_map(|s| self.job(v, s).failed.as_ref().map(|r| json!({"seed": s, "reason": r})))
                    .collect();
                let episodes: usize = (0..self.seeds).map(|s| self.job(v, s).episodes.len()).sum();
                let num = |x: f64| if x.is_finite() { json!(x) } else { Value::Null };
                json!({
                    "label": self.labels[v],
                    "final_return": {
                        "mean": if xs.is_empty() { Value::Null } else { num(s.mean) },
                        "ci95": s.ci95.map_or(Value::Null, |(lo, hi)| json!([num(lo), num(hi)])),
                        "n": xs.len(),
                    },
                    "per_seed_final": finals.iter().map(|f| f.map_or(Value::Null, num)).collect::<Vec<_>>(),
                    "episodes": episodes,
                    "failed": failed,
                    "curve": {
                        "step": curve.iter().map(|p| p.step).collect::<Vec<_>>(),
                        "mean": curve.iter().map(|p| num(p.mean)).collect::<Vec<_>>(),
                        "lo": curve.iter().map(|p| num(p.lo)).collect::<Vec<_>>(),
                        "hi": curve.iter().map(|p| num(p.hi)).collect::<Vec<_>>(),
                    },
                })
            })
            .collect();
        json!({
            "schema": SCHEMA,
            "title": self.title,
            "task": self.task,
            "steps": self.steps,
            "seeds": self.seeds,
            "master_seed": self.master_seed,
            "variants": variants,
        })
    }
}
