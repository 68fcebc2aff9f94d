//! Experiments: the config, its validation into a plan, the deterministic
//! job runner and the aggregation of results.
//!
//! One JSON schema ([`config::Config`]) serves the page, the share link and
//! the CLI. [`config::parse`] turns text into a [`config::Plan`] or into
//! problems that name the field. A plan is a list of jobs, one per
//! (variant, seed); [`runner::Job`] advances one of them in chunks of any
//! size with identical results, and evaluates its frozen learned policy at
//! checkpoints when the plan asks. [`results::Results`] bins training
//! returns on environment steps, collects the evaluation returns, and
//! summarises both across seeds; [`compare`] makes the scores and the
//! comparisons, [`hacking`] the reward-hacking signal, [`export`] the CSV
//! and results files, [`inspect`] reads what a job has learned, [`audit`]
//! the shaping audit of every reward in the plan.

pub mod audit;
pub mod compare;
pub mod config;
pub mod export;
pub mod hacking;
pub mod inspect;
pub mod probe;
pub mod results;
pub mod runner;

pub use config::{parse, Config, ConfigError, Measure, Plan, Problem, VariantPlan, SCHEMA};
pub use results::{CurvePoint, Results};
pub use runner::{EpisodeRecord, EvalRecord, Job, JobStatus};

/// Runs every job of a plan to the end and collects the results (the CLI's
/// path; the page spreads the same jobs over workers).
pub fn run_all(plan: &Plan) -> Results {
    let mut results = Results::new(plan);
    for id in 0..plan.job_count() {
        let mut job = Job::new(plan, id);
        job.advance(u64::MAX);
        for rec in job.take_new_episodes() {
            results.add_episode(id, *rec);
        }
        for rec in job.take_new_evaluations() {
            results.add_evaluation(id, *rec);
        }
        results.set_steps(id, job.steps_done());
        if let JobStatus::Failed(reason) = job.status() {
            results.mark_failed(id, reason.clone());
        }
    }
    results
}
