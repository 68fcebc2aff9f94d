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
//! Each job's `diagnostics` (the step diagnostics' sums per curve bin, one
//! list per bin that has steps: `[bin, count, Σδ, Σ|δ|, Σ entropy, Σ actor
//! norm, Σ critic norm, weighted steps, Σρ, Σρ², largest ρ, capped]`) is an
//! optional field: a file without it loads with no diagnostics.

use serde_json::{json, Value};

use crate::experiment::config::{validate_value, Plan};
use crate::experiment::results::Results;
use crate::experiment::runner::{DiagSums, EpisodeRecord, EvalRecord};

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
/// study `settings` is empty. The step diagnostics a variant has
/// (`td_abs`, `entropy` or `sd`, `actor_norm`, `critic_norm`,
/// `ess_fraction`, `capped_share`; see [`crate::experiment::diagnostics`])
/// add one row per seed and bin with a value, at the bin's upper step.
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
        let metrics = r.diagnostic_metrics(v);
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
            for m in &metrics {
                for (b, value) in r.seed_diagnostic(v, s, *m).into_iter().enumerate() {
                    if value.is_finite() {
                        row(s, edges[b], m.name(), value, &chosen);
                    }
                }
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
    let diag: Vec<Value> = r
        .job_diagnostics(id)
        .iter()
        .enumerate()
        .filter(|(_, d)| d.count > 0)
        .map(|(b, d)| {
            json!([
                b,
                d.count,
                d.td,
                d.abs_td,
                d.entropy,
                d.actor_norm,
                d.critic_norm,
                d.weights,
                d.weight_sum,
                d.weight_sq,
                d.weight_max,
                d.weight_cut
            ])
        })
        .collect();
    json!({
        "id": id,
        "steps_done": steps_done,
        "failed": failed,
        "episodes": eps.iter().map(|e| json!([e.end_step, e.base_return, e.shaped_return, e.length, e.truncated])).collect::<Vec<_>>(),
        "evaluations": evals.iter().map(|e| json!([e.checkpoint, e.step, e.mean_return, e.episodes])).collect::<Vec<_>>(),
        "diagnostics": diag,
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
    let v = crate::experiment::config::parse_json(text).map_err(|e| LoadError::Json(e.to_string()))?;
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
    let diags = match j.get("diagnostics") {
        None | Some(Value::Null) => &[][..],
        Some(Value::Array(a)) => &a[..],
        Some(_) => return Err(field(&at("diagnostics"), "must be a list")),
    };
    let bins = r.bin_edges().len();
    for (k, e) in diags.iter().enumerate() {
        let bad = || {
            field(
                &format!("{path}.diagnostics[{k}]"),
                &format!(
                    "must be [bin, count, td, abs_td, entropy, actor_norm, critic_norm, weights, \
                     weight_sum, weight_sq, weight_max, capped] with a bin below {bins}, whole counts \
                     and numbers elsewhere"
                ),
            )
        };
        let a = e.as_array().filter(|a| a.len() == 12).ok_or_else(bad)?;
        let whole = |x: &Value| x.as_u64().ok_or_else(bad);
        // A sum that overflowed on the way to a divergence is saved as
        // null (JSON has no NaN or infinity) and reads back as NaN.
        let num = |x: &Value| if x.is_null() { Ok(f64::NAN) } else { x.as_f64().ok_or_else(bad) };
        let bin = whole(&a[0])? as usize;
        if bin >= bins {
            return Err(bad());
        }
        let sums = DiagSums {
            count: whole(&a[1])?,
            td: num(&a[2])?,
            abs_td: num(&a[3])?,
            entropy: num(&a[4])?,
            actor_norm: num(&a[5])?,
            critic_norm: num(&a[6])?,
            weights: whole(&a[7])?,
            weight_sum: num(&a[8])?,
            weight_sq: num(&a[9])?,
            weight_max: num(&a[10])?,
            weight_cut: whole(&a[11])?,
        };
        r.set_diagnostics(i, bin, sums);
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
    use crate::experiment::diagnostics::Metric;
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
    fn diagnostics_that_overflowed_save_and_load_again() {
        // Common practice, no source: JSON has no NaN or infinity, so a sum
        // that overflowed before a divergence was caught is written as null;
        // the file must still load, with the same summary.
        let plan = small();
        let mut r = run_all(&plan);
        let mut sums = r.job_diagnostics(0)[2];
        sums.abs_td = f64::INFINITY;
        sums.critic_norm = f64::NAN;
        r.set_diagnostics(0, 2, sums);
        let text = save(&plan, &r).to_string();
        assert!(text.contains("null"), "the overflowed sums are written as null");
        let (_, back) = load(&text).unwrap_or_else(|e| panic!("{e}"));
        assert!(
            back.job_diagnostics(0)[2].abs_td.is_nan() && back.job_diagnostics(0)[2].critic_norm.is_nan()
        );
        assert_eq!(back.summary(), r.summary(), "non-finite numbers are null in both summaries");
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
        let mut n_diag = 0;
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
                m @ ("td_abs" | "entropy" | "actor_norm" | "critic_norm") => {
                    let m = *Metric::ALL.iter().find(|x| x.name() == m).unwrap();
                    let b = r.curve(v).iter().position(|p| p.step == step).unwrap();
                    assert_eq!(value.to_bits(), r.seed_diagnostic(v, seed, m)[b].to_bits());
                    n_diag += 1;
                }
                "base_return" => {
                    let curve = r.seed_curve(v, seed);
                    let b = r.curve(v).iter().position(|p| p.step == step).unwrap();
                    assert_eq!(value.to_bits(), curve[b].to_bits());
                }
                other => panic!("unknown metric {other}"),
            }
        }
        assert_eq!(n_final, 6);
        // 2 variants × 3 seeds × 10 bins × 4 diagnostics (softmax: entropy, no weights).
        assert_eq!(n_diag, 240);
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
        assert!(r.summary()["variants"][0]["diagnostics"]["td_abs"]["mean"][0].as_f64().unwrap() > 0.0);
        // A file written before diagnostics were kept still loads, without them.
        let mut old: Value = serde_json::from_str(&text).unwrap();
        for j in old["jobs"].as_array_mut().unwrap() {
            j.as_object_mut().unwrap().remove("diagnostics");
        }
        let (_, r3) = load(&old.to_string()).unwrap();
        assert!(r3.summary()["variants"][0]["diagnostics"]["td_abs"]["mean"][0].is_null());
        let mut v: Value = serde_json::from_str(&text).unwrap();
        v["jobs"][2]["diagnostics"][0][0] = json!(10);
        assert!(load(&v.to_string()).unwrap_err().to_string().contains("jobs[2].diagnostics[0]: must be"));
        assert!(load("{}").unwrap_err().to_string().contains("not a critbox results file"));
        let mut v: Value = serde_json::from_str(&text).unwrap();
        v["jobs"][1]["episodes"][0] = json!([0, 1, 1, 1, false]);
        assert!(load(&v.to_string()).unwrap_err().to_string().contains("jobs[1].episodes[0]"));
    }
}
