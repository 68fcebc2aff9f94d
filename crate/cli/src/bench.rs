//! `critbox bench`: times one job of a config natively (environment steps per
//! second) and, with `--rss-at`, reads the process's resident memory after
//! given step counts. Used by `scripts/bench`; a measurement, never a test.

use std::time::Instant;

use critbox_core::experiment::{Job, JobStatus, Plan};

/// Resident set size in KiB from /proc/self/status (Linux); None elsewhere.
fn rss_kib() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = text.lines().find(|l| l.starts_with("VmRSS:"))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

/// Runs job `job` of `plan` for `steps` steps in chunks of 10 000 (the way
/// the page's workers advance: after each chunk the new episode records are
/// taken, as a worker posts them to the page) and reports steps per second;
/// at each step count in `rss_at` (ascending) it records the resident memory.
pub fn bench(plan: &Plan, job: usize, steps: u64, rss_at: &[u64]) -> Result<serde_json::Value, String> {
    if job >= plan.job_count() {
        return Err(format!("--job {job} is out of range: the plan has {} jobs", plan.job_count()));
    }
    let mut j = Job::new(plan, job);
    let mut marks: Vec<u64> = rss_at.iter().copied().filter(|&m| m <= steps).collect();
    marks.sort_unstable();
    let mut rss = Vec::new();
    let rss_start = rss_kib();
    let t0 = Instant::now();
    let mut next_mark = 0;
    let mut episodes = 0usize;
    while j.steps_done() < steps && *j.status() == JobStatus::Running {
        let mut chunk = (steps - j.steps_done()).min(10_000);
        if let Some(&m) = marks.get(next_mark) {
            chunk = chunk.min(m - j.steps_done()).max(1);
        }
        j.advance(chunk);
        episodes += j.take_new_episodes().len();
        while let Some(&m) = marks.get(next_mark) {
            if j.steps_done() < m {
                break;
            }
            // What the results keep for these episodes (32 bytes each), held
            // by whoever took them (the page), not by this process.
            let log_kib =
                (episodes * std::mem::size_of::<critbox_core::experiment::EpisodeRecord>()) as f64 / 1024.0;
            rss.push(serde_json::json!({
                "steps": m, "rss_kib": rss_kib(), "episodes": episodes, "episode_log_kib": log_kib
            }));
            next_mark += 1;
        }
    }
    let secs = t0.elapsed().as_secs_f64();
    let done = j.steps_done();
    let status = match j.status() {
        JobStatus::Running | JobStatus::Done => "ok".to_string(),
        JobStatus::Failed(why) => format!("failed: {why}"),
    };
    Ok(serde_json::json!({
        "job": job,
        "steps": done,
        "seconds": secs,
        "steps_per_sec": if secs > 0.0 { done as f64 / secs } else { 0.0 },
        "episodes": episodes,
        "status": status,
        "rss_start_kib": rss_start,
        "rss": rss,
    }))
}
