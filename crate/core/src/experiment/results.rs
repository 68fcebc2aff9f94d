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

use serde::Serialize;

use crate::experiment::compare::{compare_all, pairs, score, Comparison, Entry, Score};
use crate::experiment::config::{Measure, Plan, SCHEMA};
use crate::experiment::hacking::{trend, Hacking};
use crate::experiment::runner::{bin_edges, bin_of, EpisodeRecord, EvalRecord};
use crate::learn::Family;
use crate::report::{nums, Num};
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
    jobs: Vec<JobResults>,
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
    /// The comparisons.
    pub comparisons: Vec<Comparison>,
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

    fn job(&self, variant: usize, seed: usize) -> &JobResults {
        &self.jobs[variant * self.seeds + seed]
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

    /// Per-checkpoint evaluation returns of one seed (NaN where it has none;
    /// empty when evaluation is off).
    pub fn seed_eval_curve(&self, variant: usize, seed: usize) -> Vec<f64> {
        let mut out = vec![f64::NAN; self.checkpoints().len()];
        for r in &self.job(variant, seed).evals {
            if let Some(slot) = out.get_mut(r.checkpoint as usize) {
                *slot = r.mean_return;
            }
        }
        out
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
        let from = self.steps as f64 * (1.0 - self.final_fraction);
        (0..self.seeds)
            .map(|s| {
                let job = self.job(variant, s);
                if job.failed.is_some() {
                    return None;
                }
                let tail: Vec<f64> =
                    job.episodes.iter().filter(|e| e.end_step as f64 > from).map(|e| e.base_return).collect();
                (!tail.is_empty()).then(|| tail.iter().sum::<f64>() / tail.len() as f64)
            })
            .collect()
    }

    /// Each seed's final evaluation return: the mean over the checkpoints in
    /// the last `final_fraction` of the budget (always at least the last
    /// checkpoint). None for a failed seed, one that has not reached the
    /// last checkpoint, or when evaluation is off.
    pub fn eval_final_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        let cps = self.checkpoints();
        let from = self.steps as f64 * (1.0 - self.final_fraction);
        (0..self.seeds)
            .map(|s| {
                if cps.is_empty() || self.failed(variant, s) {
                    return None;
                }
                let c = self.seed_eval_curve(variant, s);
                let tail: Vec<f64> = cps
                    .iter()
                    .zip(&c)
                    .filter(|(&step, _)| step as f64 > from || step == self.steps)
                    .map(|(_, &v)| v)
                    .collect();
                tail.iter().all(|v| v.is_finite()).then(|| tail.iter().sum::<f64>() / tail.len() as f64)
            })
            .collect()
    }

    /// Each seed's final value on the scored measure.
    pub fn scored_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        match self.score_on {
            Measure::Training => self.final_per_seed(variant),
            Measure::Evaluation => self.eval_final_per_seed(variant),
        }
    }

    /// The common range of the scored measure's curve points that every
    /// seed is averaged over for the area under the curve: on the training
    /// curve from the first bin by which every seed of every variant that
    /// has not failed has finished an episode, to the last bin; on the
    /// evaluation curve every checkpoint. `(first, last)` indices.
    fn auc_range(&self) -> (usize, usize) {
        match self.score_on {
            Measure::Evaluation => (0, self.checkpoints().len().saturating_sub(1)),
            Measure::Training => {
                let mut first = 0;
                for v in 0..self.labels.len() {
                    for s in (0..self.seeds).filter(|&s| !self.failed(v, s)) {
                        let c = self.seed_curve(v, s);
                        if let Some(b) = c.iter().position(|x| x.is_finite()) {
                            first = first.max(b);
                        }
                    }
                }
                (first, self.edges.len() - 1)
            }
        }
    }

    /// Each seed's area under its scored curve: the mean of its values over
    /// the common range (equal-width bins, so this is the normalised area).
    /// None for a failed seed or one without data over the whole range.
    pub fn auc_per_seed(&self, variant: usize) -> Vec<Option<f64>> {
        let (first, last) = self.auc_range();
        (0..self.seeds)
            .map(|s| {
                if self.failed(variant, s) {
                    return None;
                }
                let c = match self.score_on {
                    Measure::Training => self.seed_curve(variant, s),
                    Measure::Evaluation => self.seed_eval_curve(variant, s),
                };
                let part = c.get(first..=last)?;
                part.iter().all(|v| v.is_finite()).then(|| part.iter().sum::<f64>() / part.len() as f64)
            })
            .collect()
    }

    /// Each seed's steps to reach `threshold` on the scored measure: the
    /// step of the first curve point at or above it (None if never reached,
    /// and for a failed seed).
    pub fn steps_to_threshold(&self, variant: usize, threshold: f64) -> Vec<Option<u64>> {
        (0..self.seeds)
            .map(|s| {
                if self.failed(variant, s) {
                    return None;
                }
                let (c, steps) = match self.score_on {
                    Measure::Training => (self.seed_curve(variant, s), &self.edges[..]),
                    Measure::Evaluation => (self.seed_eval_curve(variant, s), self.checkpoints()),
                };
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
            comparisons: self.comparisons(),
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
