//! Aggregation of episode and evaluation records into curves and summaries.
//!
//! Two measures per variant. The **training return** is what the learner
//! earned while learning (for an off-policy learner, its behaviour's
//! episodes; for the deterministic learner, the noisy actor's). Its curve is
//! binned on environment steps (never on episodes: variants differ in
//! episode length): a seed's value in a bin is the mean base return of the
//! episodes that ended in it; a bin where no episode ended carries the last
//! value forward (up to the seed's progress), and is empty before the first
//! episode. The **evaluation return** is the mean base return of the frozen
//! learned policy's evaluation episodes at each checkpoint (see
//! [`crate::experiment::runner`]); its curve has one point per checkpoint.
//! Across seeds each point gives the mean with a pointwise Student-t 95%
//! interval (none under 3 seeds), the IQM, the median and the number of
//! seeds it averages.
//!
//! A seed's final training return is the mean base return of the episodes
//! that ended in the last `final_fraction` of the budget (missing, and
//! flagged, if none did); its final evaluation return is the mean over the
//! checkpoints in that share (which always holds the last one). The plan's
//! `score_on` measure feeds the scores, the area under the curve, steps to
//! the threshold, the comparisons and the seeds advice. One rule for a
//! failed (diverged) seed everywhere: left out of means and tests, counted
//! as never reaching the threshold, its curve stopped where it failed, and
//! named in every verdict about its variant. [`Results::summary`] is the
//! report the CLI prints and the page shows, so both give the same numbers.

use std::collections::BTreeMap;

use serde::Serialize;

use crate::experiment::compare::{compare_all, pairs, score, Comparison, Entry, Score};
use crate::experiment::config::{Measure, Plan, SCHEMA};
use crate::experiment::diagnostics::{self, DiagCurve, Diagnostics, Metric};
use crate::experiment::hacking::{trend, Hacking};
use crate::experiment::runner::{bin_edges, bin_of, DiagSums, EpisodeRecord, EvalRecord};
use crate::experiment::study::{self, Axis, ChooseBy, PointScores};
use crate::learn::Family;
use crate::report::{nums, pair, Num, Pair};
use crate::rng::{Purpose, Stream};
use crate::stats;

/// One point of a curve.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurvePoint {
    /// Upper step edge of the bin (or the checkpoint's step).
    pub step: u64,
    /// Mean over the seeds with data (NaN when none).
    pub mean: f64,
    /// Lower end of the pointwise Student-t 95% interval of the mean (NaN
    /// with fewer than [`BAND_MIN_SEEDS`] seeds).
    pub lo: f64,
    /// Upper end of that interval.
    pub hi: f64,
    /// Seeds with data at this point.
    pub n: usize,
    /// Interquartile mean over seeds (NaN when none).
    pub iqm: f64,
    /// Median over seeds (NaN when none).
    pub median: f64,
}

/// Fewest seeds for which a curve point gets an interval: with 2 seeds a
/// Student-t interval has 1 degree of freedom and says almost nothing.
pub const BAND_MIN_SEEDS: usize = 3;

/// A point of a curve over the per-seed values `xs` (finite).
fn point(step: u64, xs: &[f64]) -> CurvePoint {
    let (lo, hi) = if xs.len() >= BAND_MIN_SEEDS {
        stats::mean_ci_t(xs, 0.95).unwrap_or((f64::NAN, f64::NAN))
    } else {
        (f64::NAN, f64::NAN)
    };
    CurvePoint {
        step,
        mean: if xs.is_empty() { f64::NAN } else { stats::mean(xs) },
        lo,
        hi,
        n: xs.len(),
        iqm: stats::iqm(xs),
        median: stats::median(xs),
    }
}

#[derive(Clone, Debug, Default)]
struct JobResults {
    episodes: Vec<EpisodeRecord>,
    evals: Vec<EvalRecord>,
    /// Diagnostic sums per curve bin (empty until the first is set).
    diag: Vec<DiagSums>,
    steps_done: u64,
    failed: Option<String>,
}

/// The evaluation settings a summary reports.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct EvaluationInfo {
    /// Steps between checkpoints.
    pub every: u64,
    /// Episodes per checkpoint.
    pub episodes: u32,
    /// `"sampled"` or `"greedy"`.
    pub policy: &'static str,
    /// The checkpoints' steps.
    pub checkpoints: Vec<u64>,
    /// What an evaluation episode is on this task.
    pub episode: &'static str,
}

/// Results of an experiment, possibly still running.
#[derive(Clone, Debug)]
pub struct Results {
    title: String,
    task: &'static str,
    labels: Vec<String>,
    families: Vec<Family>,
    action_dims: usize,
    seeds: usize,
    steps: u64,
    master_seed: u64,
    final_fraction: f64,
    threshold: Option<f64>,
    detect: Option<f64>,
    edges: Vec<u64>,
    evaluation: Option<EvaluationInfo>,
    score_on: Measure,
    reference: Option<usize>,
    study: Option<StudyInfo>,
    fresh_base: usize,
    jobs: Vec<JobResults>,
}

/// What the results need to know of a study: the grids' axes and points,
/// where each variant's tuning jobs are, and how points are chosen.
#[derive(Clone, Debug)]
struct StudyInfo {
    tuning_seeds: usize,
    choose_by: ChooseBy,
    axes: Vec<Vec<Axis>>,
    points: Vec<Vec<Vec<usize>>>,
    /// First tuning job id of each variant.
    bases: Vec<usize>,
}

/// A curve as the summary reports it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct CurveReport {
    /// Step of each point.
    pub step: Vec<u64>,
    /// Mean over seeds.
    pub mean: Vec<Num>,
    /// Lower end of the pointwise 95% interval (null under 3 seeds).
    pub lo: Vec<Num>,
    /// Upper end of the pointwise 95% interval.
    pub hi: Vec<Num>,
    /// Interquartile mean.
    pub iqm: Vec<Num>,
    /// Median.
    pub median: Vec<Num>,
    /// Seeds averaged at each point.
    pub n: Vec<usize>,
}

impl CurveReport {
    fn of(points: &[CurvePoint]) -> Self {
        let col = |f: fn(&CurvePoint) -> f64| -> Vec<Num> { points.iter().map(|p| Num(f(p))).collect() };
        CurveReport {
            step: points.iter().map(|p| p.step).collect(),
            mean: col(|p| p.mean),
            lo: col(|p| p.lo),
            hi: col(|p| p.hi),
            iqm: col(|p| p.iqm),
            median: col(|p| p.median),
            n: points.iter().map(|p| p.n).collect(),
        }
    }
}

/// The shaped-return curve of the summary (no step column: the training
/// curve's bins).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ShapedCurveReport {
    /// Mean over seeds.
    pub mean: Vec<Num>,
    /// Lower end of the pointwise 95% interval.
    pub lo: Vec<Num>,
    /// Upper end.
    pub hi: Vec<Num>,
    /// Seeds averaged.
    pub n: Vec<usize>,
}

/// The area under the scored measure's curve.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct AucReport {
    /// The score of the seeds' areas.
    #[serde(flatten)]
    pub score: Score,
    /// First step of the common range every seed is averaged over.
    pub from_step: u64,
    /// Last step of that range.
    pub to_step: u64,
}

/// Steps to reach the threshold on the scored measure.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ThresholdReport {
    /// The threshold.
    pub threshold: f64,
    /// Seeds that reached it.
    pub reached: usize,
    /// Seeds that never did (failed seeds included).
    pub never: usize,
    /// Mean steps, only when every seed reached it (otherwise null: the
    /// mean of the seeds that did would be biased low).
    pub mean: Num,
    /// Median steps, the seeds that never reached it counted as above the
    /// budget; null when half or more never did.
    pub median: Num,
    /// Half or more of the seeds never reached it: the median is above the budget.
    pub median_above_budget: bool,
    /// Steps per seed (null: never).
    pub per_seed: Vec<Option<u64>>,
}

/// A failed seed.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FailedSeed {
    /// Seed index.
    pub seed: usize,
    /// Why (step and quantity).
    pub reason: String,
}

/// One variant of the summary.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct VariantReport {
    /// Its label.
    pub label: String,
    /// The learner family.
    pub family: &'static str,
    /// Final training return.
    pub final_return: Score,
    /// Final evaluation return (null when evaluation is off).
    pub eval_return: Option<Score>,
    /// Each seed's final training return (null: failed or missing).
    pub per_seed_final: Vec<Num>,
    /// Each seed's final evaluation return (null: failed, missing, or evaluation off).
    pub per_seed_eval: Vec<Num>,
    /// Area under the scored measure's curve.
    pub auc: AucReport,
    /// Steps to the threshold (null without a threshold).
    pub steps_to_threshold: Option<ThresholdReport>,
    /// Training episodes finished.
    pub episodes: usize,
    /// Failed seeds.
    pub failed: Vec<FailedSeed>,
    /// The reward-hacking signal (training returns).
    pub hacking: Hacking,
    /// The shaped training return's curve.
    pub curve_shaped: ShapedCurveReport,
    /// The base training return's curve.
    pub curve: CurveReport,
    /// The evaluation return's curve (null when evaluation is off).
    pub eval_curve: Option<CurveReport>,
    /// The variant's part of the study (null outside a study).
    pub study: Option<VariantStudy>,
    /// The learner's step diagnostics per bin over seeds.
    pub diagnostics: Diagnostics,
}

/// One swept setting, as the summary reports it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct AxisReport {
    /// The setting's path.
    pub path: String,
    /// The values tried.
    pub values: Vec<f64>,
    /// The values were a log2 range (plot on a log axis).
    pub log: bool,
}

/// One grid point of a variant's study.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct PointReport {
    /// The point's settings, `{PATH: value}`.
    pub settings: BTreeMap<String, f64>,
    /// Mean of the criterion over the tuning seeds that have one.
    pub mean: Num,
    /// Its Student-t 95% interval.
    pub ci95: Pair,
    /// Tuning seeds with a value.
    pub n: usize,
    /// Tuning seeds that failed or have no value yet.
    pub lost: usize,
}

/// The bootstrap of the maximum over a variant's grid.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct MaxBootstrap {
    /// Mean of the resampled maxima.
    pub mean: Num,
    /// Their 2.5% and 97.5% quantiles.
    pub ci95: Pair,
}

/// A variant's part of a study (`variants[].study`).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct VariantStudy {
    /// The swept settings (empty for a variant without a sweep).
    pub axes: Vec<AxisReport>,
    /// Every grid point, the first axis varying slowest.
    pub points: Vec<PointReport>,
    /// The chosen point's settings (empty without a sweep; null before the
    /// tuning stage has chosen).
    pub chosen: Option<BTreeMap<String, f64>>,
    /// The chosen point's index in `points`.
    pub chosen_point: Option<usize>,
    /// The criterion's mean over the chosen point's tuning seeds.
    pub tuning_score: Num,
    /// The criterion's mean over the fresh seeds (the variant's scored runs).
    pub fresh_score: Num,
    /// The bootstrap of the maximum from the tuning runs.
    pub max_bootstrap: MaxBootstrap,
    /// The edge warning, when the chosen point is at the edge of the grid.
    pub warnings: Vec<String>,
}

/// The study as a whole (`study` at the top of the summary).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct StudySummary {
    /// Seeds every grid point ran on to choose.
    pub tuning_seeds: usize,
    /// Fresh seeds the chosen points are reported on.
    pub fresh_seeds: usize,
    /// `"auc"` or `"final"`.
    pub choose_by: &'static str,
    /// The measure the criterion reads (`score_on`).
    pub measure: &'static str,
    /// The two stages in words.
    pub text: String,
    /// Warnings about the study as a whole (unequal tuning budgets).
    pub warnings: Vec<String>,
}

/// The summary (what `critbox run` prints).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Summary {
    /// Config schema.
    pub schema: u32,
    /// Title.
    pub title: String,
    /// Task kind.
    pub task: &'static str,
    /// Steps per job.
    pub steps: u64,
    /// Seeds per variant.
    pub seeds: usize,
    /// Master seed.
    pub master_seed: u64,
    /// Final share of the budget.
    pub final_fraction: f64,
    /// The measure scores and comparisons use.
    pub score_on: &'static str,
    /// Evaluation settings (null when off).
    pub evaluation: Option<EvaluationInfo>,
    /// How the comparisons' p values are corrected.
    pub correction: &'static str,
    /// The reference variant's label, when comparisons are made against one.
    pub reference: Option<String>,
    /// The variants.
    pub variants: Vec<VariantReport>,
    /// The study (null outside a study).
    pub study: Option<StudySummary>,
    /// The comparisons.
    pub comparisons: Vec<Comparison>,
    /// Warnings from the learners' diagnostics, each naming its variant
    /// with the numbers.
    pub warnings: Vec<String>,
}

impl Results {
    /// Empty results for a plan.
    pub fn new(plan: &Plan) -> Self {
        let c = &plan.config;
        let evaluation = plan.evaluation.as_ref().map(|e| EvaluationInfo {
            every: e.every,
            episodes: e.episodes,
            policy: if e.greedy { "greedy" } else { "sampled" },
            checkpoints: e.checkpoints.clone(),
            episode: if plan.spec.continuing {
                "one window of the task's max_steps steps from a fresh start, scored as mean reward per step"
            } else {
                "from a fresh start to a terminal state or the task's max_steps"
            },
        });
        Results {
            title: c.title.clone(),
            task: plan.spec.kind,
            labels: plan.variants.iter().map(|v| v.label.clone()).collect(),
            families: plan.variants.iter().map(|v| v.setup.family).collect(),
            action_dims: match &plan.spec.actions {
                crate::task::ActionSpace::Discrete(_) => 0,
                crate::task::ActionSpace::Continuous { names, .. } => names.len(),
            },
            seeds: c.seeds as usize,
            steps: c.steps,
            master_seed: c.master_seed,
            final_fraction: c.final_fraction,
            threshold: c.threshold,
            detect: c.detect_difference,
            edges: bin_edges(c.steps, c.curve_points),
            evaluation,
            score_on: plan.score_on,
            reference: plan.reference,
            study: plan.study.as_ref().map(|st| StudyInfo {
                tuning_seeds: st.tuning_seeds as usize,
                choose_by: st.choose_by,
                axes: st.grids.iter().map(|g| g.axes.clone()).collect(),
                points: st.grids.iter().map(|g| g.points.iter().map(|p| p.index.clone()).collect()).collect(),
                bases: (0..st.grids.len()).map(|v| plan.tuning_job_ids(v, 0).start).collect(),
            }),
            fresh_base: plan.tuning_jobs(),
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

    /// Adds an evaluation checkpoint of a job (ignored for an unknown job
    /// id, or when evaluation is off).
    pub fn add_evaluation(&mut self, job: usize, rec: EvalRecord) {
        if self.evaluation.is_none() {
            return;
        }
        if let Some(j) = self.jobs.get_mut(job) {
            j.steps_done = j.steps_done.max(rec.step);
            j.evals.push(rec);
        }
    }

    /// Sets a job's diagnostic sums of curve bin `bin` (the sums so far:
    /// a later call for the same bin replaces them). Ignored for an unknown
    /// job or bin.
    pub fn set_diagnostics(&mut self, job: usize, bin: usize, sums: DiagSums) {
        let n = self.edges.len();
        if let Some(j) = self.jobs.get_mut(job) {
            if bin < n {
                if j.diag.is_empty() {
                    j.diag = vec![DiagSums::default(); n];
                }
                j.diag[bin] = sums;
            }
        }
    }

    /// A job's diagnostic sums per curve bin (empty when none were set).
    pub fn job_diagnostics(&self, id: usize) -> &[DiagSums] {
        &self.jobs[id].diag
    }

    /// The diagnostics a variant has (see [`Metric::applies`]).
    pub fn diagnostic_metrics(&self, variant: usize) -> Vec<Metric> {
        let critic = (0..self.seeds).any(|s| self.job(variant, s).diag.iter().any(|d| d.critic_norm != 0.0));
        Metric::ALL
            .into_iter()
            .filter(|m| m.applies(self.families[variant], self.action_dims, critic))
            .collect()
    }

    /// One seed's values of a diagnostic per curve bin (NaN where it has none).
    pub fn seed_diagnostic(&self, variant: usize, seed: usize, m: Metric) -> Vec<f64> {
        let j = self.job(variant, seed);
        (0..self.edges.len())
            .map(|b| j.diag.get(b).map_or(f64::NAN, |d| m.value(d, self.action_dims)))
            .collect()
    }

    /// A diagnostic's curve over the seeds of a variant.
    pub fn diagnostic_curve(&self, variant: usize, m: Metric) -> Vec<CurvePoint> {
        let per_seed: Vec<Vec<f64>> = (0..self.seeds).map(|s| self.seed_diagnostic(variant, s, m)).collect();
        self.across_seeds(&per_seed, &self.edges)
    }

    fn diagnostics_of(&self, v: usize) -> (Diagnostics, Vec<(Metric, Vec<f64>)>) {
        let mut d = Diagnostics::default();
        let mut means = Vec::new();
        for m in self.diagnostic_metrics(v) {
            let c = self.diagnostic_curve(v, m);
            means.push((m, c.iter().map(|p| p.mean).collect()));
            let col = |f: fn(&CurvePoint) -> f64| c.iter().map(f).collect::<Vec<f64>>();
            d.set(
                m,
                DiagCurve::of(
                    c.iter().map(|p| p.step).collect(),
                    &col(|p| p.mean),
                    &col(|p| p.lo),
                    &col(|p| p.hi),
                ),
            );
        }
        (d, means)
    }

    /// The diagnostics' warnings of every variant (see
    /// [`diagnostics::warnings`]).
    pub fn diagnostic_warnings(&self) -> Vec<String> {
        (0..self.labels.len())
            .flat_map(|v| {
                let (_, means) = self.diagnostics_of(v);
                diagnostics::warnings(&self.labels[v], &means, &self.edges, self.steps, self.final_fraction)
            })
            .collect()
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

    /// The evaluation checkpoints' steps (empty when evaluation is off).
    pub fn checkpoints(&self) -> &[u64] {
        self.evaluation.as_ref().map_or(&[], |e| &e.checkpoints)
    }

    /// The measure that scores and comparisons use.
    pub fn score_on(&self) -> Measure {
        self.score_on
    }

    /// A job's episodes, evaluations, progress and failure reason.
    pub fn job_record(&self, id: usize) -> (&[EpisodeRecord], &[EvalRecord], u64, Option<&str>) {
        let j = &self.jobs[id];
        (&j.episodes, &j.evals, j.steps_done, j.failed.as_deref())
    }

    /// The scored (fresh) job of a variant's seed.
    fn job(&self, variant: usize, seed: usize) -> &JobResults {
        &self.jobs[self.fresh_base + variant * self.seeds + seed]
    }

    fn failed(&self, variant: usize, seed: usize) -> bool {
        self.job(variant, seed).failed.is_some()
    }

    /// Per-bin training values of one seed (NaN where it has no data yet).
    pub fn seed_curve(&self, variant: usize, seed: usize) -> Vec<f64> {
        self.seed_curve_of(variant, seed, false)
    }

    /// Per-bin base (or, with `shaped`, shaped) training returns of one seed.
    pub fn seed_curve_of(&self, variant: usize, seed: usize, shaped: bool) -> Vec<f64> {
        self.job_curve(self.job(variant, seed), shaped)
    }

    fn job_curve(&self, j: &JobResults, shaped: bool) -> Vec<f64> {
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

    /// Per-checkpoint evaluation returns of one seed (NaN where it has none;
    /// empty when evaluation is off).
    pub fn seed_eval_curve(&self, variant: usize, seed: usize) -> Vec<f64> {
        self.job_eval_curve(self.job(variant, seed))
    }

    fn job_eval_curve(&self, j: &JobResults) -> Vec<f64> {
        let mut out = vec![f64::NAN; self.checkpoints().len()];
        for r in &j.evals {
            if let Some(slot) = out.get_mut(r.checkpoint as usize) {
                *slot = r.mean_return;
            }
        }
        out
    }

    /// The scored measure's curve of a job, and the steps of its points.
    fn job_scored_curve(&self, j: &JobResults) -> (Vec<f64>, &[u64]) {
        match self.score_on {
            Measure::Training => (self.job_curve(j, false), &self.edges[..]),
            Measure::Evaluation => (self.job_eval_curve(j), self.checkpoints()),
        }
    }

    fn across_seeds(&self, per_seed: &[Vec<f64>], steps: &[u64]) -> Vec<CurvePoint> {
        let mut xs = Vec::with_capacity(per_seed.len());
        steps
            .iter()
            .enumerate()
            .map(|(b, &step)| {
                xs.clear();
                xs.extend(per_seed.iter().map(|c| c[b]).filter(|v| v.is_finite()));
                point(step, &xs)
            })
            .collect()
    }

    /// The training curve of a variant: per bin, the mean over seeds with a
    /// pointwise Student-t 95% interval, the IQM and the median.
    pub fn curve(&self, variant: usize) -> Vec<CurvePoint> {
        let per_seed: Vec<Vec<f64>> = (0..self.seeds).map(|s| self.seed_curve(variant, s)).collect();
        self.across_seeds(&per_seed, &self.edges)
    }

    /// The curve of the shaped training return (what the learner was trained on).
    pub fn shaped_curve(&self, variant: usize) -> Vec<CurvePoint> {
        let per_seed: Vec<Vec<f64>> = (0..self.seeds).map(|s| self.seed_curve_of(variant, s, true)).collect();
        self.across_seeds(&per_seed, &self.edges)
    }

    /// The evaluation curve of a variant: one point per checkpoint (empty
    /// when evaluation is off).
    pub fn eval_curve(&self, variant: usize) -> Vec<CurvePoint> {
        let per_seed: Vec<Vec<f64>> = (0..self.seeds).map(|s| self.seed_eval_curve(variant, s)).collect();
        self.across_seeds(&per_seed, self.checkpoints())
    }

    /// The reward-hacking signal of a variant (see [`crate::experiment::hacking`]).
    pub fn hacking(&self, variant: usize) -> Hacking {
        let trends: Vec<_> = (0..self.seeds)
            .filter(|&s| !self.failed(variant, s))
            .map(|s| trend(&self.job(variant, s).episodes, self.steps, self.final_fraction))
            .collect();
        Hacking::of(&trends)
    }

    /// Each seed's final training return: the mean base return of the
    /// episodes that ended in the last `final_fraction` of the budget. None
    /// for a failed seed, or when no episode ended there.
    pub fn final_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        (0..self.seeds).map(|s| self.job_final(self.job(variant, s))).collect()
    }

    fn job_final(&self, job: &JobResults) -> Option<f64> {
        if job.failed.is_some() {
            return None;
        }
        let from = self.steps as f64 * (1.0 - self.final_fraction);
        let tail: Vec<f64> =
            job.episodes.iter().filter(|e| e.end_step as f64 > from).map(|e| e.base_return).collect();
        (!tail.is_empty()).then(|| tail.iter().sum::<f64>() / tail.len() as f64)
    }

    /// Each seed's final evaluation return: the mean over the checkpoints in
    /// the last `final_fraction` of the budget (always at least the last
    /// checkpoint). None for a failed seed, one that has not reached the
    /// last checkpoint, or when evaluation is off.
    pub fn eval_final_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        (0..self.seeds).map(|s| self.job_eval_final(self.job(variant, s))).collect()
    }

    fn job_eval_final(&self, job: &JobResults) -> Option<f64> {
        let cps = self.checkpoints();
        if cps.is_empty() || job.failed.is_some() {
            return None;
        }
        let from = self.steps as f64 * (1.0 - self.final_fraction);
        let c = self.job_eval_curve(job);
        let tail: Vec<f64> = cps
            .iter()
            .zip(&c)
            .filter(|(&step, _)| step as f64 > from || step == self.steps)
            .map(|(_, &v)| v)
            .collect();
        tail.iter().all(|v| v.is_finite()).then(|| tail.iter().sum::<f64>() / tail.len() as f64)
    }

    fn job_scored(&self, job: &JobResults) -> Option<f64> {
        match self.score_on {
            Measure::Training => self.job_final(job),
            Measure::Evaluation => self.job_eval_final(job),
        }
    }

    /// Each seed's final value on the scored measure.
    pub fn scored_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        (0..self.seeds).map(|s| self.job_scored(self.job(variant, s))).collect()
    }

    /// The common range of the scored measure's curve points that every
    /// seed is averaged over for the area under the curve: on the training
    /// curve from the first bin by which every job that has not failed (of
    /// every variant, and in a study of both stages) has finished an
    /// episode, to the last bin; on the evaluation curve every checkpoint.
    /// `(first, last)` indices.
    fn auc_range(&self) -> (usize, usize) {
        match self.score_on {
            Measure::Evaluation => (0, self.checkpoints().len().saturating_sub(1)),
            Measure::Training => {
                let mut first = 0;
                for j in self.jobs.iter().filter(|j| j.failed.is_none()) {
                    if let Some(b) = self.job_curve(j, false).iter().position(|x| x.is_finite()) {
                        first = first.max(b);
                    }
                }
                (first, self.edges.len() - 1)
            }
        }
    }

    fn job_auc(&self, job: &JobResults, (first, last): (usize, usize)) -> Option<f64> {
        if job.failed.is_some() {
            return None;
        }
        let (c, _) = self.job_scored_curve(job);
        let part = c.get(first..=last)?;
        part.iter().all(|v| v.is_finite()).then(|| part.iter().sum::<f64>() / part.len() as f64)
    }

    /// Each seed's area under its scored curve: the mean of its values over
    /// the common range (equal-width bins, so this is the normalised area).
    /// None for a failed seed or one without data over the whole range.
    pub fn auc_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        let range = self.auc_range();
        (0..self.seeds).map(|s| self.job_auc(self.job(variant, s), range)).collect()
    }

    /// Each seed's steps to reach `threshold` on the scored measure: the
    /// step of the first curve point at or above it (None if never reached,
    /// and for a failed seed).
    pub fn steps_to_threshold(&self, variant: usize, threshold: f64) -> Vec<Option<u64>> {
        (0..self.seeds)
            .map(|s| {
                let j = self.job(variant, s);
                if j.failed.is_some() {
                    return None;
                }
                let (c, steps) = self.job_scored_curve(j);
                c.iter().position(|&v| v >= threshold).map(|b| steps[b])
            })
            .collect()
    }

    fn threshold_report(&self, variant: usize, t: f64) -> ThresholdReport {
        let per_seed = self.steps_to_threshold(variant, t);
        let reached = per_seed.iter().flatten().count();
        let never = per_seed.len() - reached;
        let mut sorted: Vec<f64> =
            per_seed.iter().map(|s| s.map_or(f64::INFINITY, |s| s as f64)).collect::<Vec<_>>();
        sorted.sort_by(f64::total_cmp);
        let above = 2 * never >= per_seed.len() && never > 0;
        let median = if above || sorted.is_empty() { f64::NAN } else { stats::quantile_sorted(&sorted, 0.5) };
        let mean = if never == 0 && !sorted.is_empty() { stats::mean(&sorted) } else { f64::NAN };
        ThresholdReport {
            threshold: t,
            reached,
            never,
            mean: Num(mean),
            median: Num(median),
            median_above_budget: above,
            per_seed,
        }
    }

    fn missing(&self, variant: usize, values: &[Option<f64>]) -> Vec<usize> {
        (0..self.seeds).filter(|&s| values[s].is_none() && !self.failed(variant, s)).collect()
    }

    fn failed_seeds(&self, variant: usize) -> Vec<FailedSeed> {
        (0..self.seeds)
            .filter_map(|s| {
                self.job(variant, s).failed.as_ref().map(|r| FailedSeed { seed: s, reason: r.clone() })
            })
            .collect()
    }

    /// The criterion of each tuning seed at every grid point of a variant's
    /// study (`[point][seed]`, None for a failed seed or one without a value;
    /// empty outside a study).
    pub fn tuning_values(&self, variant: usize) -> Vec<Vec<Option<f64>>> {
        let Some(st) = &self.study else { return Vec::new() };
        let range = self.auc_range();
        (0..st.points[variant].len())
            .map(|p| {
                let base = st.bases[variant] + p * st.tuning_seeds;
                (0..st.tuning_seeds)
                    .map(|s| {
                        let j = &self.jobs[base + s];
                        match st.choose_by {
                            ChooseBy::Auc => self.job_auc(j, range),
                            ChooseBy::Final => self.job_scored(j),
                        }
                    })
                    .collect()
            })
            .collect()
    }

    /// The criterion of every grid point of a variant's study over its
    /// tuning seeds (empty outside a study).
    pub fn tuning_scores(&self, variant: usize) -> Vec<PointScores> {
        self.tuning_values(variant)
            .into_iter()
            .map(|vals| {
                let values: Vec<f64> = vals.iter().flatten().copied().collect();
                PointScores { lost: vals.len() - values.len(), values }
            })
            .collect()
    }

    /// The settings of a variant's grid points, `{PATH: value}` each (empty
    /// outside a study).
    pub fn point_settings(&self, variant: usize) -> Vec<BTreeMap<String, f64>> {
        let Some(st) = &self.study else { return Vec::new() };
        (0..st.points[variant].len()).map(|p| self.settings_of(variant, p)).collect()
    }

    /// The study's criterion name (`"auc"` or `"final"`), outside a study `None`.
    pub fn choose_by(&self) -> Option<ChooseBy> {
        self.study.as_ref().map(|s| s.choose_by)
    }

    /// Each variant's chosen grid point from the tuning runs
    /// ([`study::choose`]); a variant none of whose tuning seeds has a value
    /// (every one failed) runs its first point, and its study says so by
    /// having no `chosen`. `None` outside a study. Call it once the tuning
    /// jobs have finished ([`Results::tuning_finished`]).
    pub fn choice(&self) -> Option<Vec<usize>> {
        self.study.as_ref()?;
        Some((0..self.labels.len()).map(|v| study::choose(&self.tuning_scores(v)).unwrap_or(0)).collect())
    }

    /// Whether every tuning job has finished (done or failed).
    pub fn tuning_finished(&self) -> bool {
        self.jobs[..self.fresh_base].iter().all(|j| j.failed.is_some() || j.steps_done >= self.steps)
    }

    fn settings_of(&self, variant: usize, point: usize) -> BTreeMap<String, f64> {
        let st = self.study.as_ref().expect("a study");
        st.axes[variant]
            .iter()
            .zip(&st.points[variant][point])
            .map(|(a, &k)| (a.path.clone(), a.values[k]))
            .collect()
    }

    fn variant_study(&self, v: usize) -> VariantStudy {
        let st = self.study.as_ref().expect("a study");
        let scores = self.tuning_scores(v);
        let chosen = study::choose(&scores);
        let points = scores
            .iter()
            .enumerate()
            .map(|(p, sc)| {
                let sum = stats::summarize(&sc.values);
                PointReport {
                    settings: self.settings_of(v, p),
                    mean: Num(if sc.values.is_empty() { f64::NAN } else { sum.mean }),
                    ci95: pair(sum.ci95),
                    n: sc.values.len(),
                    lost: sc.lost,
                }
            })
            .collect();
        let fresh: Vec<f64> = match st.choose_by {
            ChooseBy::Auc => self.auc_per_seed(v),
            ChooseBy::Final => self.scored_per_seed(v),
        }
        .into_iter()
        .flatten()
        .collect();
        let mut rng = Stream::derive(self.master_seed, Purpose::Stats, 400 + v as u64, 0);
        let values: Vec<Vec<f64>> = scores.iter().map(|s| s.values.clone()).collect();
        let boot = study::max_bootstrap(&values, study::MAX_RESAMPLES, &mut rng);
        let mut warnings = Vec::new();
        if let Some(c) = chosen {
            if let Some(w) = study::edge_warning(&st.axes[v], &st.points[v][c]) {
                warnings.push(w);
            }
        }
        VariantStudy {
            axes: st.axes[v]
                .iter()
                .map(|a| AxisReport { path: a.path.clone(), values: a.values.clone(), log: a.log })
                .collect(),
            points,
            chosen: chosen.map(|c| self.settings_of(v, c)),
            chosen_point: chosen,
            tuning_score: Num(chosen.map_or(f64::NAN, |c| {
                if scores[c].values.is_empty() {
                    f64::NAN
                } else {
                    stats::mean(&scores[c].values)
                }
            })),
            fresh_score: Num(if fresh.is_empty() { f64::NAN } else { stats::mean(&fresh) }),
            max_bootstrap: MaxBootstrap {
                mean: Num(boot.map_or(f64::NAN, |b| b.0)),
                ci95: pair(boot.map(|b| b.1)),
            },
            warnings,
        }
    }

    fn study_summary(&self) -> Option<StudySummary> {
        let st = self.study.as_ref()?;
        let sizes: Vec<usize> = st.points.iter().map(Vec::len).collect();
        let mut warnings = Vec::new();
        if sizes.iter().any(|&n| n != sizes[0]) {
            let each: Vec<String> = self
                .labels
                .iter()
                .zip(&sizes)
                .map(|(l, n)| format!("{l}: {n} point{}", if *n == 1 { "" } else { "s" }))
                .collect();
            warnings.push(format!(
                "the variants got grids of different sizes ({}): unequal tuning budgets favour the variant with more points",
                each.join(", ")
            ));
        }
        let criterion = match st.choose_by {
            ChooseBy::Auc => "area under the curve",
            ChooseBy::Final => "final value",
        };
        Some(StudySummary {
            tuning_seeds: st.tuning_seeds,
            fresh_seeds: self.seeds,
            choose_by: st.choose_by.name(),
            measure: self.score_on.name(),
            text: format!(
                "each variant's point chosen by its {criterion} ({} measure) on {} tuning seed{}, reported on {} fresh seed{}",
                self.score_on.name(),
                st.tuning_seeds,
                if st.tuning_seeds == 1 { "" } else { "s" },
                self.seeds,
                if self.seeds == 1 { "" } else { "s" }
            ),
            warnings,
        })
    }

    /// The comparisons of the scored measure's final values.
    pub fn comparisons(&self) -> Vec<Comparison> {
        let entries: Vec<Entry<'_>> = (0..self.labels.len())
            .map(|v| Entry {
                label: &self.labels[v],
                values: self.scored_per_seed(v).into_iter().flatten().collect(),
                seeds: self.seeds,
                failed: self.failed_seeds(v).into_iter().map(|f| (f.seed, f.reason)).collect(),
                explores: matches!(self.families[v], Family::OffPolicy | Family::Deterministic),
            })
            .collect();
        let pairs = pairs(self.labels.len(), self.reference);
        compare_all(&entries, &pairs, self.score_on.name(), self.detect)
    }

    fn variant_report(&self, v: usize) -> VariantReport {
        let finals = self.final_per_seed(v);
        let fin = score(
            &finals.iter().flatten().copied().collect::<Vec<_>>(),
            self.missing(v, &finals),
            self.master_seed,
            100 + v as u64,
            0,
        );
        let evals = self.eval_final_per_seed(v);
        let eval_return = self.evaluation.as_ref().map(|_| {
            score(
                &evals.iter().flatten().copied().collect::<Vec<_>>(),
                self.missing(v, &evals),
                self.master_seed,
                300 + v as u64,
                0,
            )
        });
        let aucs = self.auc_per_seed(v);
        let (first, last) = self.auc_range();
        let steps_of = |i: usize| match self.score_on {
            Measure::Training => (if i == 0 { 0 } else { self.edges[i - 1] }, self.edges[last]),
            Measure::Evaluation => {
                let c = self.checkpoints();
                (c.get(i).copied().unwrap_or(0), c.get(last).copied().unwrap_or(0))
            }
        };
        let (from_step, to_step) = steps_of(first);
        let auc = AucReport {
            score: score(
                &aucs.iter().flatten().copied().collect::<Vec<_>>(),
                self.missing(v, &aucs),
                self.master_seed,
                200 + v as u64,
                0,
            ),
            from_step,
            to_step,
        };
        let shaped = self.shaped_curve(v);
        VariantReport {
            label: self.labels[v].clone(),
            family: self.families[v].name(),
            final_return: fin,
            eval_return,
            per_seed_final: finals.iter().map(|f| Num(f.unwrap_or(f64::NAN))).collect(),
            per_seed_eval: evals.iter().map(|f| Num(f.unwrap_or(f64::NAN))).collect(),
            auc,
            steps_to_threshold: self.threshold.map(|t| self.threshold_report(v, t)),
            episodes: (0..self.seeds).map(|s| self.job(v, s).episodes.len()).sum(),
            failed: self.failed_seeds(v),
            hacking: self.hacking(v),
            curve_shaped: ShapedCurveReport {
                mean: nums(&shaped.iter().map(|p| p.mean).collect::<Vec<_>>()),
                lo: nums(&shaped.iter().map(|p| p.lo).collect::<Vec<_>>()),
                hi: nums(&shaped.iter().map(|p| p.hi).collect::<Vec<_>>()),
                n: shaped.iter().map(|p| p.n).collect(),
            },
            curve: CurveReport::of(&self.curve(v)),
            eval_curve: self.evaluation.as_ref().map(|_| CurveReport::of(&self.eval_curve(v))),
            study: self.study.as_ref().map(|_| self.variant_study(v)),
            diagnostics: self.diagnostics_of(v).0,
        }
    }

    /// The summary report (what `critbox run` prints).
    pub fn report(&self) -> Summary {
        Summary {
            schema: SCHEMA,
            title: self.title.clone(),
            task: self.task,
            steps: self.steps,
            seeds: self.seeds,
            master_seed: self.master_seed,
            final_fraction: self.final_fraction,
            score_on: self.score_on.name(),
            evaluation: self.evaluation.clone(),
            correction: "holm",
            reference: self.reference.map(|r| self.labels[r].clone()),
            variants: (0..self.labels.len()).map(|v| self.variant_report(v)).collect(),
            study: self.study_summary(),
            comparisons: self.comparisons(),
            warnings: self.diagnostic_warnings(),
        }
    }

    /// The summary as JSON.
    pub fn summary(&self) -> serde_json::Value {
        crate::report::to_value(&self.report())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::experiment::config::validate_value;
    use serde_json::json;

    /// A plan of `variants` variants × `seeds` seeds on the rover floor,
    /// 1000 steps, 10 bins; results are filled by hand below.
    fn plan(variants: usize, seeds: u32, extra: serde_json::Value) -> Plan {
        let mut v = json!({
            "schema": 1, "task": {"kind": "grid", "layout": "rover"},
            "variants": (0..variants).map(|i| json!({"label": format!("v{i}")})).collect::<Vec<_>>(),
            "seeds": seeds, "steps": 1000, "curve_points": 10, "final_fraction": 0.1,
        });
        for (k, x) in extra.as_object().unwrap() {
            v[k] = x.clone();
        }
        validate_value(&v).unwrap()
    }

    fn ep(end_step: u64, ret: f64) -> EpisodeRecord {
        EpisodeRecord { end_step, base_return: ret, shaped_return: ret, length: 1, truncated: false }
    }

    #[test]
    fn curve_bands_are_student_t_and_absent_under_three_seeds() {
        // R: t.test(sleep$extra[sleep$group == 1]) (Student 1908 data): mean 0.75,
        // 95% CI −0.5297804 to 2.0297804. Each seed's one episode is one value.
        let g1 = [0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0];
        let p = plan(1, 10, json!({}));
        let mut r = Results::new(&p);
        for (s, &x) in g1.iter().enumerate() {
            r.add_episode(s, ep(50, x));
            r.set_steps(s, 1000);
        }
        let c = r.curve(0);
        assert!((c[0].mean - 0.75).abs() < 1e-12);
        assert!((c[0].lo + 0.5297804).abs() < 1e-7 && (c[0].hi - 2.0297804).abs() < 1e-7, "{:?}", c[0]);
        assert_eq!(c[9].n, 10, "the value carries forward to the seed's progress");
        let p = plan(1, 2, json!({}));
        let mut r = Results::new(&p);
        for s in 0..2 {
            r.add_episode(s, ep(50, s as f64));
            r.set_steps(s, 1000);
        }
        let c = r.curve(0);
        assert!(c[0].mean == 0.5 && c[0].lo.is_nan() && c[0].hi.is_nan(), "no band from 2 seeds");
    }

    #[test]
    fn a_failed_seed_is_left_out_named_and_never_reaches_the_threshold() {
        // The one rule for failed seeds (issue text; common practice, no source).
        let p = plan(2, 3, json!({"threshold": -20.0}));
        let mut r = Results::new(&p);
        // Seed 1 of v1 (job 4) reached the threshold early, then diverged at step 600.
        let failed = 4;
        for s in 0..3 {
            r.add_episode(s, ep(100, -30.0));
            r.add_episode(s, ep(950, -18.0 - s as f64 * 0.5));
            r.set_steps(s, 1000);
            if 3 + s != failed {
                r.add_episode(3 + s, ep(100, -25.0));
                r.add_episode(3 + s, ep(990, -17.0 - s as f64 * 0.25));
                r.set_steps(3 + s, 1000);
            }
        }
        r.add_episode(failed, ep(100, -10.0));
        r.set_steps(failed, 600);
        r.mark_failed(failed, "step 600: diverged: TD error is not finite".into());
        let s = r.report();
        let v1 = &s.variants[1];
        assert_eq!(v1.final_return.n, 2);
        assert!(v1.per_seed_final[1].0.is_nan());
        assert_eq!(v1.failed.len(), 1);
        let t = v1.steps_to_threshold.as_ref().unwrap();
        assert_eq!(t.per_seed[1], None, "a failed seed counts as never, even after an early success");
        assert_eq!((t.reached, t.never), (2, 1));
        assert!(t.mean.0.is_nan(), "no mean while a seed never reached it");
        let c = &s.comparisons[0];
        assert!(
            c.verdict.starts_with("1 of 3 seeds of v1 failed and are left out: step 600"),
            "{}",
            c.verdict
        );
        // Its curve stops where it failed.
        let curve = r.seed_curve(1, 1);
        assert!(curve[5].is_finite() && curve[6].is_nan(), "{curve:?}");
    }

    #[test]
    fn the_threshold_median_is_censored_at_the_budget() {
        // Censored data (common practice, no source): a seed that never reaches
        // the threshold is above the budget, so with half or more of them the
        // median is only known to be above it.
        let p = plan(1, 4, json!({"threshold": 0.0}));
        let mut r = Results::new(&p);
        for s in 0..4 {
            r.add_episode(s, ep(50, if s < 2 { 1.0 } else { -1.0 }));
            r.set_steps(s, 1000);
        }
        let t = r.threshold_report(0, 0.0);
        assert!(t.median.0.is_nan() && t.median_above_budget && t.never == 2);
        r.jobs[2].episodes[0].base_return = 1.0;
        let t = r.threshold_report(0, 0.0);
        // Sorted: 100, 100, 100, ∞: the median is 100.
        assert_eq!((t.median.0, t.median_above_budget), (100.0, false));
    }

    #[test]
    fn final_returns_need_an_episode_in_the_final_share_and_the_area_a_common_range() {
        let p = plan(1, 2, json!({}));
        let mut r = Results::new(&p);
        // Seed 0 finishes episodes throughout; seed 1's first ends at step 450 and
        // its last at 700, before the final share (901–1000).
        for k in 1..=10 {
            r.add_episode(0, ep(k * 100, -(k as f64)));
        }
        r.add_episode(1, ep(450, -50.0));
        r.add_episode(1, ep(700, -40.0));
        r.set_steps(0, 1000);
        r.set_steps(1, 1000);
        let f = r.final_per_seed(0);
        assert_eq!(f, vec![Some(-10.0), None]);
        let s = r.report();
        assert_eq!(s.variants[0].final_return.missing, vec![1]);
        // Common range: from the bin where seed 1 first has data (bin 4, steps
        // 401–500) to the last; seed 0 averages −5 … −10 there.
        let auc = r.auc_per_seed(0);
        assert_eq!(auc[0], Some(-7.5));
        assert_eq!(auc[1], Some((2.0 * -50.0 + 4.0 * -40.0) / 6.0));
        assert_eq!((s.variants[0].auc.from_step, s.variants[0].auc.to_step), (400, 1000));
    }
}
