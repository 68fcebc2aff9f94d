//! The records that cross from a trainer's [`crate::Run`] to the results'
//! [`crate::Results`]: one table, [`KINDS`], with one entry per kind of
//! record. An entry names the kind, lists its fields (the layout: every
//! record is that many `f64`s, in that order, the job id first), and holds
//! the two functions that move it: `take` appends a job's new records to a
//! flat buffer (`Run.takeRecords(kind)`), `add` checks one record and puts it
//! into the results (`Results.addRecords(kind, data)`).
//!
//! Layouts:
//! - `episode`, stride 6: job id, end step (1-based job step of the
//!   episode's last step), base return, shaped return, length, truncated
//!   (1 when the time limit cut it, 0 when it ended in a terminal state).
//! - `evaluation`, stride 5: job id, checkpoint (index in the plan's list),
//!   step (job steps done when it was taken), mean return of its
//!   evaluation episodes, episodes run. None when the plan does not evaluate.
//! - `diagnostic`, stride 13: job id, curve bin, then that bin's step
//!   diagnostic sums so far (steps counted, Σ TD error, Σ |TD error|,
//!   Σ entropy, Σ actor update norm, Σ critic update norm, weighted steps,
//!   Σ ρ, Σ ρ², largest ρ, capped weights). A bin is sent again while it
//!   fills; the later record replaces the earlier.
//!
//! The page's `web/js/protocol.js` lists the same kinds and fields;
//! `recordLayouts()` gives this table to JavaScript so a test can check that
//! the two agree. A new kind is one entry here (its fields, take, add) and
//! one in protocol.js.

use wasm_bindgen::prelude::*;

use critbox_core::experiment::{DiagSums, EpisodeRecord, EvalRecord, Job, Results};

/// One kind of record.
#[derive(Debug)]
pub struct Kind {
    /// The name JavaScript uses.
    pub name: &'static str,
    /// Field names, in record order; the first is always `job`.
    pub fields: &'static [&'static str],
    /// Appends the job's records not taken before (and forgets them in the job).
    take: fn(&mut Job, &mut Vec<f64>),
    /// Checks one record (`fields.len()` numbers, the job id already checked)
    /// and adds it to the results; the error says what is wrong with it.
    add: fn(&mut Results, usize, &[f64]) -> Result<(), String>,
}

/// Every kind of record, in the order `recordLayouts()` lists them.
pub const KINDS: &[Kind] = &[
    Kind {
        name: "episode",
        fields: &["job", "end_step", "base_return", "shaped_return", "length", "truncated"],
        take: take_episodes,
        add: add_episode,
    },
    Kind {
        name: "evaluation",
        fields: &["job", "checkpoint", "step", "mean_return", "episodes"],
        take: take_evaluations,
        add: add_evaluation,
    },
    Kind {
        name: "diagnostic",
        fields: &[
            "job",
            "bin",
            "count",
            "td",
            "abs_td",
            "entropy",
            "actor_norm",
            "critic_norm",
            "weights",
            "weight_sum",
            "weight_sq",
            "weight_max",
            "capped",
        ],
        take: take_diagnostics,
        add: add_diagnostic,
    },
];

/// One diagnostic record: job id, bin, then the bin's sums in the order of
/// the `diagnostic` record kind's fields.
pub fn push_diagnostic(out: &mut Vec<f64>, id: f64, bin: usize, d: &DiagSums) {
    out.extend_from_slice(&[
        id,
        bin as f64,
        d.count as f64,
        d.td,
        d.abs_td,
        d.entropy,
        d.actor_norm,
        d.critic_norm,
        d.weights as f64,
        d.weight_sum,
        d.weight_sq,
        d.weight_max,
        d.weight_cut as f64,
    ]);
}

fn take_diagnostics(job: &mut Job, out: &mut Vec<f64>) {
    let id = job.id() as f64;
    let (from, bins) = job.take_new_diagnostics();
    for (k, d) in bins.iter().enumerate() {
        push_diagnostic(out, id, from + k, d);
    }
}

fn add_diagnostic(results: &mut Results, job: usize, r: &[f64]) -> Result<(), String> {
    let bins = results.bin_edges().len();
    if !(whole(r[1]) && (r[1] as usize) < bins) {
        return Err(format!("bin must be a whole number below {bins}"));
    }
    for (i, name) in [(2, "count"), (8, "weights"), (12, "capped")] {
        if !whole(r[i]) {
            return Err(format!("{name} must be a whole number"));
        }
    }
    results.set_diagnostics(
        job,
        r[1] as usize,
        DiagSums {
            count: r[2] as u64,
            td: r[3],
            abs_td: r[4],
            entropy: r[5],
            actor_norm: r[6],
            critic_norm: r[7],
            weights: r[8] as u64,
            weight_sum: r[9],
            weight_sq: r[10],
            weight_max: r[11],
            weight_cut: r[12] as u64,
        },
    );
    Ok(())
}

fn take_evaluations(job: &mut Job, out: &mut Vec<f64>) {
    let id = job.id() as f64;
    for e in job.take_new_evaluations() {
        out.extend_from_slice(&[
            id,
            f64::from(e.checkpoint),
            e.step as f64,
            e.mean_return,
            f64::from(e.episodes),
        ]);
    }
}

fn add_evaluation(results: &mut Results, job: usize, r: &[f64]) -> Result<(), String> {
    let checkpoints = results.checkpoints();
    if checkpoints.is_empty() {
        return Err("the plan does not evaluate".into());
    }
    if !(whole(r[1]) && (r[1] as usize) < checkpoints.len()) {
        return Err(format!("checkpoint must be a whole number below {}", checkpoints.len()));
    }
    if !(whole(r[2]) && r[2] as u64 == checkpoints[r[1] as usize]) {
        return Err(format!("step must be checkpoint {}'s step, {}", r[1], checkpoints[r[1] as usize]));
    }
    if !(whole(r[4]) && (1.0..=1000.0).contains(&r[4])) {
        return Err("episodes must be a whole number in [1, 1000]".into());
    }
    results.add_evaluation(
        job,
        EvalRecord { checkpoint: r[1] as u32, step: r[2] as u64, mean_return: r[3], episodes: r[4] as u32 },
    );
    Ok(())
}

fn take_episodes(job: &mut Job, out: &mut Vec<f64>) {
    let id = job.id() as f64;
    for e in job.take_new_episodes() {
        out.extend_from_slice(&[
            id,
            e.end_step as f64,
            e.base_return,
            e.shaped_return,
            f64::from(e.length),
            if e.truncated { 1.0 } else { 0.0 },
        ]);
    }
}

fn whole(x: f64) -> bool {
    x >= 0.0 && x.fract() == 0.0 && x <= 9_007_199_254_740_992.0
}

fn add_episode(results: &mut Results, job: usize, r: &[f64]) -> Result<(), String> {
    if !(whole(r[1]) && r[1] >= 1.0) {
        return Err("end_step must be a whole number ≥ 1".into());
    }
    if !(whole(r[4]) && r[4] <= f64::from(u32::MAX)) {
        return Err("length must be a whole number".into());
    }
    if r[5] != 0.0 && r[5] != 1.0 {
        return Err("truncated must be 0 or 1".into());
    }
    results.add_episode(
        job,
        EpisodeRecord {
            end_step: r[1] as u64,
            base_return: r[2],
            shaped_return: r[3],
            length: r[4] as u32,
            truncated: r[5] == 1.0,
        },
    );
    Ok(())
}

/// The kind called `name`, or an error listing the kinds there are.
pub fn kind(name: &str) -> Result<&'static Kind, String> {
    KINDS.iter().find(|k| k.name == name).ok_or_else(|| {
        let names: Vec<&str> = KINDS.iter().map(|k| k.name).collect();
        format!("unknown record kind {name:?}; the kinds are {}", names.join(", "))
    })
}

impl Kind {
    /// Every owned job's records of this kind not taken before, one after another.
    pub fn take_all(&self, jobs: &mut [Job]) -> Vec<f64> {
        let mut out = Vec::new();
        for job in jobs {
            (self.take)(job, &mut out);
        }
        out
    }

    /// Adds every record in `data` (a whole number of records); on the
    /// first bad one, stops and says which record and why.
    pub fn add_all(&self, results: &mut Results, data: &[f64]) -> Result<(), String> {
        let stride = self.fields.len();
        if !data.len().is_multiple_of(stride) {
            return Err(format!(
                "{} records come in groups of {stride}; got {} numbers",
                self.name,
                data.len()
            ));
        }
        let jobs = results.job_count();
        for (i, r) in data.chunks_exact(stride).enumerate() {
            let problem = if r.iter().any(|v| !v.is_finite()) {
                Err("every field must be a finite number".to_string())
            } else if !(whole(r[0]) && (r[0] as usize) < jobs) {
                Err(format!("job must be a job id below {jobs}"))
            } else {
                (self.add)(results, r[0] as usize, r)
            };
            if let Err(why) = problem {
                return Err(format!("{} record {i} {r:?}: {why}", self.name));
            }
        }
        Ok(())
    }
}

/// The record layouts as JSON: `{"episode": ["job", "end_step", …], …}`.
#[wasm_bindgen(js_name = recordLayouts)]
pub fn record_layouts() -> String {
    let map: serde_json::Map<String, serde_json::Value> =
        KINDS.iter().map(|k| (k.name.to_string(), serde_json::json!(k.fields))).collect();
    serde_json::Value::Object(map).to_string()
}
