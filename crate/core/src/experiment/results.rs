//! Aggregation of episode records into curves and summaries.
//!
//! Curves are binned on environment steps (never on episodes: variants
//! differ in episode length). A seed's value in a bin is the mean base return
//! of the episodes that ended in it; a bin where no episode ended carries the
//! last value forward (up to the seed's progress), and is empty before the
//! first episode. Across seeds each bin gives the mean with a
//! percentile-bootstrap 95% interval over seeds, the IQM and the median; the
//! bootstrap draws come from a stream keyed by (master seed, variant, bin),
//! and a bin's numbers are cached until its per-seed values change, so live
//! redraws stay cheap. A seed's final return is the mean base return of episodes that
//! ended in the last `final_fraction` of the budget (or, if none did, of its
//! last episode); a failed (diverged) seed has none and is listed apart. [`Results::summary`] is the JSON the CLI prints and the page
//! shows, so both give the same numbers.

use std::cell::RefCell;

use serde_json::{json, Value};

use crate::experiment::compare::{compare, score};
use crate::experiment::config::{Plan, SCHEMA};
use crate::experiment::runner::{bin_edges, bin_of, EpisodeRecord};
use crate::rng::{Purpose, Stream};
use crate::stats;

/// One point of a curve.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurvePoint {
    /// Upper step edge of the bin.
    pub step: u64,
    /// Mean over the seeds with data (NaN when none).
    pub mean: f64,
    /// Lower end of the bootstrap 95% interval of the mean (NaN with fewer than two seeds).
    pub lo: f64,
    /// Upper end of the bootstrap 95% interval of the mean (NaN with fewer than two seeds).
    pub hi: f64,
    /// Seeds with data in this bin.
    pub n: usize,
    /// Interquartile mean over seeds (NaN when none).
    pub iqm: f64,
    /// Median over seeds (NaN when none).
    pub median: f64,
}

/// Resamples of the per-bin bootstrap interval of the curves.
pub const CURVE_RESAMPLES: usize = 1000;

/// A cached curve bin: the per-seed values it was computed from, and the point.
#[derive(Clone, Debug)]
struct CachedBin {
    values: Vec<f64>,
    point: CurvePoint,
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
    threshold: Option<f64>,
    detect: Option<f64>,
    edges: Vec<u64>,
    jobs: Vec<JobResults>,
    cache: RefCell<Vec<Vec<Option<CachedBin>>>>,
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
            threshold: c.threshold,
            detect: c.detect_difference,
            edges: bin_edges(c.steps, c.curve_points),
            jobs: vec![JobResults::default(); plan.job_count()],
            cache: RefCell::new(vec![vec![None; c.curve_points as usize]; plan.variants.len()]),
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

    /// Variant labels.
    pub fn labels(&self) -> &[String] {
        &self.labels
    }

    /// Seeds per variant.
    pub fn seeds(&self) -> usize {
        self.seeds
    }

    /// Step budget per job.
    pub fn steps(&self) -> u64 {
        self.steps
    }

    /// Upper step edges of the curve bins.
    pub fn bin_edges(&self) -> &[u64] {
        &self.edges
    }

    /// A job's episodes, progress and failure reason.
    pub fn job_record(&self, id: usize) -> (&[EpisodeRecord], u64, Option<&str>) {
        let j = &self.jobs[id];
        (&j.episodes, j.steps_done, j.failed.as_deref())
    }

    fn job(&self, variant: usize, seed: usize) -> &JobResults {
        &self.jobs[variant * self.seeds + seed]
    }

    /// Per-bin values of one seed (NaN where it has no data yet).
    pub fn seed_curve(&self, variant: usize, seed: usize) -> Vec<f64> {
        self.seed_curve_of(variant, seed, false)
    }

    /// Per-bin base (or, with `shaped`, shaped) returns of one seed.
    pub fn seed_curve_of(&self, variant: usize, seed: usize, shaped: bool) -> Vec<f64> {
        let j = self.job(variant, seed);
        let mut sums = vec![0.0; self.edges.len()];
        let mut counts = vec![0u32; self.edges.len()];
        for e in &j.episodes {
            let b = bin_of(&self.edges, e.end_step);
            sums[b] += if shaped { e.shaped_return } else { e.base_return };
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

    /// The learning curve of a variant: per bin, the mean over seeds with a
    /// percentile-bootstrap 95% interval, the IQM and the median.
    pub fn curve(&self, variant: usize) -> Vec<CurvePoint> {
        let per_seed: Vec<Vec<f64>> = (0..self.seeds).map(|s| self.seed_curve(variant, s)).collect();
        let mut cache = self.cache.borrow_mut();
        let mut xs = Vec::with_capacity(self.seeds);
        self.edges
            .iter()
            .enumerate()
            .map(|(b, &step)| {
                xs.clear();
                xs.extend(per_seed.iter().map(|c| c[b]).filter(|v| !v.is_nan()));
                if let Some(hit) = &cache[variant][b] {
                    if hit.values.len() == xs.len()
                        && hit.values.iter().zip(&xs).all(|(a, b)| a.to_bits() == b.to_bits())
                    {
                        return hit.point;
                    }
                }
                let mut rng = Stream::derive(self.master_seed, Purpose::Stats, variant as u64, b as u64);
                let (lo, hi) = if xs.len() >= 2 {
                    stats::bootstrap_mean_ci(&xs, 0.95, CURVE_RESAMPLES, &mut rng)
                        .unwrap_or((f64::NAN, f64::NAN))
                } else {
                    (f64::NAN, f64::NAN)
                };
                let point = CurvePoint {
                    step,
                    mean: if xs.is_empty() { f64::NAN } else { stats::mean(&xs) },
                    lo,
                    hi,
                    n: xs.len(),
                    iqm: stats::iqm(&xs),
                    median: stats::median(&xs),
                };
                cache[variant][b] = Some(CachedBin { values: xs.clone(), point });
                point
            })
            .collect()
    }

    /// The curve of the shaped return (what the learner was trained on):
    /// per bin the mean over seeds with a Student-t 95% interval (cheaper
    /// than the bootstrap of [`Results::curve`]), the IQM and the median.
    pub fn shaped_curve(&self, variant: usize) -> Vec<CurvePoint> {
        let per_seed: Vec<Vec<f64>> = (0..self.seeds).map(|s| self.seed_curve_of(variant, s, true)).collect();
        let mut xs = Vec::with_capacity(self.seeds);
        self.edges
            .iter()
            .enumerate()
            .map(|(b, &step)| {
                xs.clear();
                xs.extend(per_seed.iter().map(|c| c[b]).filter(|v| !v.is_nan()));
                let s = stats::summarize(&xs);
                let (lo, hi) = s.ci95.unwrap_or((f64::NAN, f64::NAN));
                CurvePoint {
                    step,
                    mean: s.mean,
                    lo,
                    hi,
                    n: xs.len(),
                    iqm: stats::iqm(&xs),
                    median: stats::median(&xs),
                }
            })
            .collect()
    }

    /// The reward-hacking signal of a variant (see
    /// [`crate::reward::audit::trend`]): per seed, whether the shaped return
    /// rose while the base return fell (or rose by less than half as much)
    /// between the start and the end of the run; `flag` when more than half
    /// of the seeds say so.
    pub fn hacking(&self, variant: usize) -> Value {
        let trends: Vec<_> = (0..self.seeds)
            .map(|s| {
                crate::reward::audit::trend(&self.job(variant, s).episodes, self.steps, self.final_fraction)
            })
            .collect();
        crate::reward::audit::hacking_json(&trends)
    }

    /// Each seed's area under its curve, as the mean of its binned values
    /// over the bins it has data for (equal-width bins, so this is the
    /// normalised area); None without data or for a failed seed.
    pub fn auc_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        (0..self.seeds)
            .map(|s| {
                if self.job(variant, s).failed.is_some() {
                    return None;
                }
                let c: Vec<f64> = self.seed_curve(variant, s).into_iter().filter(|v| !v.is_nan()).collect();
                (!c.is_empty()).then(|| c.iter().sum::<f64>() / c.len() as f64)
            })
            .collect()
    }

    /// Each seed's steps to reach `threshold`: the upper edge of the first
    /// bin whose value is at least the threshold (None if never reached).
    pub fn steps_to_threshold(&self, variant: usize, threshold: f64) -> Vec<Option<u64>> {
        (0..self.seeds)
            .map(|s| {
                let c = self.seed_curve(variant, s);
                c.iter().position(|&v| v >= threshold).map(|b| self.edges[b])
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
        let num = |x: f64| if x.is_finite() { json!(x) } else { Value::Null };
        let finals: Vec<Vec<f64>> =
            (0..self.labels.len()).map(|v| self.final_per_seed(v).into_iter().flatten().collect()).collect();
        let variants: Vec<Value> = (0..self.labels.len())
            .map(|v| {
                let per_seed = self.final_per_seed(v);
                let fin = score(&finals[v], self.master_seed, 100 + v as u64, 0);
                let auc: Vec<f64> = self.auc_per_seed(v).into_iter().flatten().collect();
                let auc = score(&auc, self.master_seed, 200 + v as u64, 0);
                let curve = self.curve(v);
                let shaped = self.shaped_curve(v);
                let failed: Vec<Value> = (0..self.seeds)
                    .filter_map(|s| self.job(v, s).failed.as_ref().map(|r| json!({"seed": s, "reason": r})))
                    .collect();
                let episodes: usize = (0..self.seeds).map(|s| self.job(v, s).episodes.len()).sum();
                let reach = self.threshold.map_or(Value::Null, |t| {
                    let steps = self.steps_to_threshold(v, t);
                    let got: Vec<f64> = steps.iter().flatten().map(|&s| s as f64).collect();
                    json!({
                        "threshold": t,
                        "reached": got.len(),
                        "never": steps.len() - got.len(),
                        "mean_steps": if got.is_empty() { Value::Null } else { num(stats::mean(&got)) },
                        "median_steps": if got.is_empty() { Value::Null } else { num(stats::median(&got)) },
                        "per_seed": steps,
                    })
                });
                json!({
                    "label": self.labels[v],
                    "final_return": fin.to_json(),
                    "per_seed_final": per_seed.iter().map(|f| f.map_or(Value::Null, num)).collect::<Vec<_>>(),
                    "auc": auc.to_json(),
                    "steps_to_threshold": reach,
                    "episodes": episodes,
                    "failed": failed,
                    "hacking": self.hacking(v),
                    "curve_shaped": {
                        "mean": shaped.iter().map(|p| num(p.mean)).collect::<Vec<_>>(),
                        "lo": shaped.iter().map(|p| num(p.lo)).collect::<Vec<_>>(),
                        "hi": shaped.iter().map(|p| num(p.hi)).collect::<Vec<_>>(),
                        "n": shaped.iter().map(|p| p.n).collect::<Vec<_>>(),
                    },
                    "curve": {
                        "step": curve.iter().map(|p| p.step).collect::<Vec<_>>(),
                        "mean": curve.iter().map(|p| num(p.mean)).collect::<Vec<_>>(),
                        "lo": curve.iter().map(|p| num(p.lo)).collect::<Vec<_>>(),
                        "hi": curve.iter().map(|p| num(p.hi)).collect::<Vec<_>>(),
                        "iqm": curve.iter().map(|p| num(p.iqm)).collect::<Vec<_>>(),
                        "median": curve.iter().map(|p| num(p.median)).collect::<Vec<_>>(),
                        "n": curve.iter().map(|p| p.n).collect::<Vec<_>>(),
                    },
                })
            })
            .collect();
        let mut comparisons = Vec::new();
        for a in 0..self.labels.len() {
            for b in a + 1..self.labels.len() {
                let (la, lb) = (&self.labels[a], &self.labels[b]);
                let c = compare(a, b, la, lb, &finals[a], &finals[b], self.master_seed, self.detect);
                comparisons.push(c.to_json(la, lb));
            }
        }
        json!({
            "schema": SCHEMA,
            "title": self.title,
            "task": self.task,
            "steps": self.steps,
            "seeds": self.seeds,
            "master_seed": self.master_seed,
            "final_fraction": self.final_fraction,
            "variants": variants,
            "comparisons": comparisons,
        })
    }
}
