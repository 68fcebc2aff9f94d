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
//! and results files, [`shard`] the shards of a plan and their merge, [`inspect`] reads what a job has learned, [`audit`]
//! the shaping audit of every reward in the plan.

pub mod audit;
pub mod compare;
pub mod config;
pub mod diagnostics;
pub mod export;
pub mod hacking;
pub mod inspect;
pub mod probe;
pub mod results;
pub mod runner;
pub mod shard;
pub mod study;

pub use config::{parse, Config, ConfigError, JobSpec, Measure, Plan, Problem, VariantPlan, SCHEMA};
pub use results::{CurvePoint, Results};
pub use runner::{DiagSums, EpisodeRecord, EvalRecord, Job, JobStatus};

/// Runs every job of a plan to the end and collects the results (the CLI's
/// path; the page spreads the same jobs over workers). A study runs its
/// tuning jobs first, chooses each variant's point from them
/// ([`Results::choice`]), then runs the fresh jobs of the chosen points.
pub fn run_all(plan: &Plan) -> Results {
    let mut results = Results::new(plan);
    let tuning = plan.tuning_jobs();
    run_jobs(plan, 0..tuning, &mut results);
    let fresh = match results.choice() {
        Some(chosen) => plan.with_choice(&chosen).expect("the choice names a point of every variant"),
        None => plan.clone(),
    };
    run_jobs(&fresh, tuning..plan.job_count(), &mut results);
    results
}

/// The plan its scored jobs are built from: a study's plan with each
/// variant's chosen point set (running its tuning jobs to choose, as
/// [`run_all`] does, unless the plan already holds a choice); any other plan
/// as it is. Inspecting or probing a scored job of a study needs it.
pub fn scored_plan(plan: &Plan) -> Plan {
    match &plan.study {
        Some(s) if s.chosen.is_none() => {
            let mut results = Results::new(plan);
            run_jobs(plan, 0..plan.tuning_jobs(), &mut results);
            let chosen = results.choice().expect("a study has a choice");
            plan.with_choice(&chosen).expect("the choice names a point of every variant")
        }
        _ => plan.clone(),
    }
}

/// Runs jobs `ids` of a plan to the end into `results`.
pub fn run_jobs(plan: &Plan, ids: std::ops::Range<usize>, results: &mut Results) {
    for id in ids {
        let mut job = Job::new(plan, id);
        job.advance(u64::MAX);
        for rec in job.take_new_episodes() {
            results.add_episode(id, *rec);
        }
        for rec in job.take_new_evaluations() {
            results.add_evaluation(id, *rec);
        }
        let (from, bins) = job.take_new_diagnostics();
        for (k, d) in bins.iter().enumerate() {
            results.set_diagnostics(id, from + k, *d);
        }
        results.set_steps(id, job.steps_done());
        if let JobStatus::Failed(reason) = job.status() {
            results.mark_failed(id, reason.clone());
        }
    }
}
