//! Export and import of results.
//!
//! [`tidy_csv`] writes one row per (variant, seed, step, metric) with the
//! columns `variant,label,seed,step,metric,value`, ready for a data-frame
//! library; numbers use Rust's shortest round-trip form, so reading them back
//! gives the same `f64` bits. [`save`] writes a results file (the config with
//! defaults filled in, every job's episode and evaluation records, and the
//! summary) and [`load`] rebuilds the [`Results`] from it without re-running,
//! checking every field it reads. Files of version 1 (before evaluation
//! records) still load; a plan that evaluates then has no evaluation data.

use serde_json::{json, Value};

use crate::experiment::config::{validate_value, Plan};
use crate::experiment::results::Results;
use crate::experiment::runner::{EpisodeRecord, EvalRecord};

/// Version of the results file format this build writes (it reads 1 and 2).
pub const RESULTS_VERSION: u32 = 2;

fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn csv_num(x: f64) -> String {
    if x.is_finite() {
        format!("{x}")
    } else {
        String::new()
    }
}

/// The tidy CSV of a results set, columns
/// `variant,label,seed,step,metric,value,settings`. Metrics: `base_return`
/// (the seed's binned training curve value, one row per bin where it has
/// data), `eval_return` (one row per evaluation checkpoint, at its step),
/// `final_return` (final training return), `final_eval_return` and `auc`
/// (of the scored measure), one row per seed at the budget's last step. In a
/// study the scored seeds are the fresh ones, numbered from 0 as in the
/// summary, and `settings` holds the chosen point's settings
/// (`path=value;path=value`); every tuning seed of every grid point adds a
/// row of metric `tuning_auc` or `tuning_final` (the study's criterion),
/// seed = its tuning seed index, with that point's settings. Outside a
/// study `settings` is empty.
pub fn tidy_csv(r: &Results) -> String {
    let mut out = String::from("variant,label,seed,step,metric,value,settings\n");
    let edges = r.bin_edges();
    let checkpoints = r.checkpoints();
    let text = |m: &std::collections::BTreeMap<String, f64>| {
        csv_field(&m.iter().map(|(k, v)| format!("{k}={v}")).collect::<Vec<_>>().join(";"))
    };
    let choice = r.choice();
    for (v, label) in r.labels().iter().enumerate() {
        let label = csv_field(label);
        let finals = r.final_per_seed(v);
        let evals = r.eval_final_per_seed(v);
        let aucs = r.auc_per_seed(v);
        let points = r.point_settings(v);
        let chosen = choice.as_ref().and_then(|c| points.get(c[v])).map(text).unwrap_or_default();
        let mut row = |s: usize, step: u64, metric: &str, value: f64, settings: &str| {
            out.push_str(&format!("{v},{label},{s},{step},{metric},{},{settings}\n", csv_num(value)));
        };
        for s in 0..r.seeds() {
            for (b, value) in r.seed_curve(v, s).into_iter().enumerate() {
                if !value.is_nan() {
                    row(s, edges[b], "base_return", value, &chosen);
                }
            }
            for (k, value) in r.seed_eval_curve(v, s).into_iter().enumerate() {
                if !value.is_nan() {
                    row(s, checkpoints[k], "eval_return", value, &chosen);
                }
            }
            if let Some(f) = finals[s] {
                row(s, r.steps(), "final_return", f, &chosen);
            }
            if let Some(f) = evals[s] {
                row(s, r.steps(), "final_eval_return", f, &chosen);
            }
            if let Some(a) = aucs[s] {
                row(s, r.steps(), "auc", a, &chosen);
            }
        }
        if let Some(by) = r.choose_by() {
            let metric = format!("tuning_{}", by.name());
            for (p, vals) in r.tuning_values(v).iter().enumerate() {
                let settings = text(&points[p]);
                for (s, x) in vals.iter().enumerate() {
                    if let Some(x) = x {
                        row(s, r.steps(), &metric, *x, &settings);
                    }
                }
            }
        }
    }
    out
}

/// One job's entry of a results file (also a partial file's `records`).
pub(crate) fn job_entry(r: &Results, id: usize) -> Value {
    let (eps, evals, steps_done, failed) = r.job_record(id);
    json!({
        "id": id,
        "steps_done": steps_done,
        "failed": failed,
        "episodes": eps.iter().map(|e| json!([e.end_step, e.base_return, e.shaped_return, e.length, e.truncated])).collect::<Vec<_>>(),
        "evaluations": evals.iter().map(|e| json!([e.checkpoint, e.step, e.mean_return, e.episodes])).collect::<Vec<_>>(),
    })
}

/// The results file: config, episode records per job, summary.
pub fn save(plan: &Plan, r: &Results) -> Value {
    let jobs: Vec<Value> = (0..r.job_count()).map(|id| job_entry(r, id)).collect();
    json!({
        "critbox_results": RESULTS_VERSION,
        "config": serde_json::to_value(&plan.config).expect("a config serialises"),
        "jobs": jobs,
        "summary": r.summary(),
    })
}

/// Errors reading a results file.
#[derive(Clone, Debug, PartialEq)]
pub enum LoadError {
    /// The text is not JSON.
    Json(String),
    /// A field is missing or wrong: (path, message).
    Field(String, String),
    /// The embedded config does not validate.
    Config(String),
}

impl std::fmt::Display for LoadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LoadError::Json(m) => write!(f, "results file: not valid JSON: {m}"),
            LoadError::Field(p, m) => write!(f, "results file: {p}: {m}"),
            LoadError::Config(m) => write!(f, "results file: config: {m}"),
        }
    }
}

impl std::error::Error for LoadError {}

/// Rebuilds the plan and results from a results file's text.
pub fn load(text: &str) -> Result<(Plan, Results), LoadError> {
    let v: Value = serde_json::from_str(text).map_err(|e| LoadError::Json(e.to_string()))?;
    let field = |p: &str, m: &str| LoadError::Field(p.into(), m.into());
    if let Some(part) = v.get("critbox_part") {
        let n = |k: &str| part.get(k).and_then(Value::as_u64).map_or("?".into(), |x| x.to_string());
        return Err(field(
            "critbox_part",
            &format!(
                "this is shard {}/{} of a run, not a whole results file: join the parts with `critbox merge`",
                n("shard"),
                n("of")
            ),
        ));
    }
    match v.get("critbox_results").and_then(Value::as_u64) {
        Some(1 | 2) => {}
        Some(n) => {
            return Err(field(
                "critbox_results",
                &format!("version {n} is not one this build reads (1 or 2); open it with a newer critbox"),
            ))
        }
        None => return Err(field("critbox_results", "missing: this is not a critbox results file")),
    }
    let config = v.get("config").ok_or_else(|| field("config", "missing"))?;
    let plan = validate_value(config).map_err(|e| LoadError::Config(e.to_string()))?;
    let mut r = Results::new(&plan);
    let jobs =
        v.get("jobs").and_then(Value::as_array).ok_or_else(|| field("jobs", "missing or not a list"))?;
    if jobs.len() != plan.job_count() {
        return Err(field(
            "jobs",
            &format!("has {} entries; the config makes {}", jobs.len(), plan.job_count()),
        ));
    }
    for (i, j) in jobs.iter().enumerate() {
        read_job(j, &format!("jobs[{i}]"), i, &plan, &mut r)?;
    }
    Ok((plan, r))
}

/// Reads one job entry (at `path` in the file) into `r` as job `id`,
/// checking every field against the plan.
pub(crate) fn read_job(
    j: &Value,
    path: &str,
    i: usize,
    plan: &Plan,
    r: &mut Results,
) -> Result<(), LoadError> {
    let field = |p: &str, m: &str| LoadError::Field(p.into(), m.into());
    let at = |k: &str| format!("{path}.{k}");
    let steps_done = j
        .get("steps_done")
        .and_then(Value::as_u64)
        .ok_or_else(|| field(&at("steps_done"), "missing or not a whole number"))?;
    if steps_done > plan.config.steps {
        return Err(field(&at("steps_done"), "exceeds the config's step budget"));
    }
    let eps = j
        .get("episodes")
        .and_then(Value::as_array)
        .ok_or_else(|| field(&at("episodes"), "missing or not a list"))?;
    for (k, e) in eps.iter().enumerate() {
        let bad = || {
            field(
                &format!("{path}.episodes[{k}]"),
                "must be [end_step, base_return, shaped_return, length, truncated]",
            )
        };
        let a = e.as_array().filter(|a| a.len() == 5).ok_or_else(bad)?;
        let end_step = a[0].as_u64().filter(|&s| s >= 1 && s <= steps_done).ok_or_else(bad)?;
        let (base, shaped) = (a[1].as_f64().ok_or_else(bad)?, a[2].as_f64().ok_or_else(bad)?);
        let length = a[3].as_u64().filter(|&l| l <= u64::from(u32::MAX)).ok_or_else(bad)? as u32;
        let truncated = a[4].as_bool().ok_or_else(bad)?;
        r.add_episode(
            i,
            EpisodeRecord { end_step, base_return: base, shaped_return: shaped, length, truncated },
        );
    }
    let checkpoints = r.checkpoints().to_vec();
    let evals = match j.get("evaluations") {
        None | Some(Value::Null) => &[][..],
        Some(Value::Array(a)) => &a[..],
        Some(_) => return Err(field(&at("evaluations"), "must be a list")),
    };
    for (k, e) in evals.iter().enumerate() {
        let bad = || {
            field(
                &format!("{path}.evaluations[{k}]"),
                "must be [checkpoint, step, mean_return, episodes] with the step of one of the plan's \
                 checkpoints, reached by the job",
            )
        };
        let a = e.as_array().filter(|a| a.len() == 4).ok_or_else(bad)?;
        let checkpoint = a[0].as_u64().filter(|&c| (c as usize) < checkpoints.len()).ok_or_else(bad)?;
        let step = a[1]
            .as_u64()
            .filter(|&s| s == checkpoints[checkpoint as usize] && s <= steps_done)
            .ok_or_else(bad)?;
        let mean_return = a[2].as_f64().ok_or_else(bad)?;
        let episodes = a[3].as_u64().filter(|&n| (1..=1000).contains(&n)).ok_or_else(bad)? as u32;
        r.add_evaluation(i, EvalRecord { checkpoint: checkpoint as u32, step, mean_return, episodes });
    }
    r.set_steps(i, steps_done);
    match j.get("failed") {
        None | Some(Value::Null) => {}
        Some(Value::String(reason)) => r.mark_failed(i, reason.clone()),
        Some(_) => return Err(field(&at("failed"), "must be null or a text")),
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::experiment::run_all;

    fn small() -> Plan {
        crate::experiment::config::validate_value(&json!({
            "schema": 1,
            "task": {"kind": "grid", "map": ["#######", "#S.~.D#", "#.....#", "#######"]},
            "steps": 3000, "seeds": 3, "curve_points": 10,
            "variants": [{"label": "a2c, tabular"}, {"label": "qac \"plain\"", "learner": {"family": "qac"}}]
        }))
        .unwrap()
    }

    #[test]
    fn csv_round_trip_gives_the_same_numbers() {
        // Common practice, no source: shortest round-trip formatting of f64.
        let plan = small();
        let r = run_all(&plan);
        let csv = tidy_csv(&r);
        let mut lines = csv.lines();
        assert_eq!(lines.next(), Some("variant,label,seed,step,metric,value,settings"));
        let mut n_final = 0;
        for line in lines {
            // Labels here hold a comma or quotes, so split from the right
            // (the settings column is empty outside a study).
            let parts: Vec<&str> = line.rsplitn(6, ',').collect();
            assert_eq!(parts[0], "");
            let (value, metric, step, seed) = (parts[1], parts[2], parts[3], parts[4]);
            let v: usize = line.split(',').next().unwrap().parse().unwrap();
            let seed: usize = seed.parse().unwrap();
            let value: f64 = value.parse().unwrap();
            let step: u64 = step.parse().unwrap();
            match metric {
                "final_return" => {
                    assert_eq!(value.to_bits(), r.final_per_seed(v)[seed].unwrap().to_bits());
                    n_final += 1;
                }
                "auc" => assert_eq!(value.to_bits(), r.auc_per_seed(v)[seed].unwrap().to_bits()),
                "eval_return" | "final_eval_return" => panic!("evaluation is off in this plan"),
                "base_return" => {
                    let curve = r.seed_curve(v, seed);
                    let b = r.curve(v).iter().position(|p| p.step == step).unwrap();
                    assert_eq!(value.to_bits(), curve[b].to_bits());
                }
                other => panic!("unknown metric {other}"),
            }
        }
        assert_eq!(n_final, 6);
        assert!(csv.contains(",\"a2c, tabular\",") && csv.contains(",\"qac \"\"plain\"\"\","));
    }

    #[test]
    fn saved_results_reopen_with_the_same_summary() {
        let plan = small();
        let r = run_all(&plan);
        let text = save(&plan, &r).to_string();
        let (plan2, r2) = load(&text).unwrap();
        assert_eq!(plan2.config, plan.config);
        assert_eq!(r2.summary(), r.summary());
        assert!(load("{}").unwrap_err().to_string().contains("not a critbox results file"));
        let mut v: Value = serde_json::from_str(&text).unwrap();
        v["jobs"][1]["episodes"][0] = json!([0, 1, 1, 1, false]);
        assert!(load(&v.to_string()).unwrap_err().to_string().contains("jobs[1].episodes[0]"));
    }
}
