//! Shards and merging: a plan's jobs split over machines, and the pieces
//! joined into the very results one machine gives.
//!
//! Jobs are independent and deterministic, so shard `K/N` runs the jobs
//! whose plan id satisfies `id mod N = K` ([`shard_ids`]) and writes a
//! *partial results file* ([`save_part`]): the config, `config_sha256` (the
//! SHA-256 of the config's canonical JSON, [`config_sha256`]), `jobs` (the
//! ids it holds), and `records` (each job's entry as in a results file). A
//! study runs in two stages: the tuning jobs ([`Stage::Tuning`]), whose merge
//! fixes each variant's chosen point, then the fresh jobs of the chosen
//! points ([`Stage::Fresh`]). [`merge`] checks the parts (one config, no job
//! missing or doubled, the same choice everywhere) and rebuilds the
//! [`Results`], or, when only the tuning stage is there, a tuning file that
//! is itself a part (shard 0/1 of the tuning stage) for the fresh stage and
//! the final merge.

use serde_json::{json, Value};
use sha2::{Digest, Sha256};

use crate::experiment::config::{validate_value, Config, Plan};
use crate::experiment::export::{job_entry, read_job, LoadError, RESULTS_VERSION};
use crate::experiment::results::Results;

/// The SHA-256 (lowercase hex) of the config's canonical JSON: the config
/// with its defaults filled in, serialised compactly in the schema's field
/// order (object keys of free-form parts sorted), so two texts of the same
/// config give the same digest.
pub fn config_sha256(config: &Config) -> String {
    let text = serde_json::to_string(config).expect("a config serialises");
    Sha256::digest(text.as_bytes()).iter().map(|b| format!("{b:02x}")).collect()
}

/// Which jobs of a plan a shard draws from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Stage {
    /// Every job (a plan without a study).
    All,
    /// A study's tuning jobs.
    Tuning,
    /// A study's fresh jobs, run at the chosen points.
    Fresh,
}

impl Stage {
    /// The name written in part files (`all`, `tuning`, `fresh`).
    pub fn name(self) -> &'static str {
        match self {
            Stage::All => "all",
            Stage::Tuning => "tuning",
            Stage::Fresh => "fresh",
        }
    }

    fn from_name(s: &str) -> Option<Stage> {
        match s {
            "all" => Some(Stage::All),
            "tuning" => Some(Stage::Tuning),
            "fresh" => Some(Stage::Fresh),
            _ => None,
        }
    }

    /// The job ids of this stage in a plan.
    pub fn ids(self, plan: &Plan) -> std::ops::Range<usize> {
        match self {
            Stage::All => 0..plan.job_count(),
            Stage::Tuning => 0..plan.tuning_jobs(),
            Stage::Fresh => plan.tuning_jobs()..plan.job_count(),
        }
    }
}

/// The job ids shard `k` of `n` runs in a stage: those with `id mod n = k`.
pub fn shard_ids(plan: &Plan, stage: Stage, k: usize, n: usize) -> Vec<usize> {
    stage.ids(plan).filter(|id| id % n.max(1) == k).collect()
}

/// A partial results file: `critbox_part` (stage and shard), the config,
/// `config_sha256`, `jobs` (the ids held), `records` (their entries) and,
/// for the fresh stage, `chosen` (each variant's grid point it ran).
pub fn save_part(
    plan: &Plan,
    r: &Results,
    stage: Stage,
    shard: (usize, usize),
    ids: &[usize],
    chosen: Option<&[usize]>,
) -> Value {
    json!({
        "critbox_results": RESULTS_VERSION,
        "critbox_part": {"stage": stage.name(), "shard": shard.0, "of": shard.1},
        "config_sha256": config_sha256(&plan.config),
        "config": serde_json::to_value(&plan.config).expect("a config serialises"),
        "jobs": ids,
        "chosen": chosen,
        "records": ids.iter().map(|&id| job_entry(r, id)).collect::<Vec<_>>(),
    })
}

/// A partial results file, read and checked.
#[derive(Clone, Debug)]
pub struct Part {
    /// The stage its jobs are of.
    pub stage: Stage,
    /// Shard index and count.
    pub shard: (usize, usize),
    /// `config_sha256` as written (checked against the embedded config).
    pub config_sha256: String,
    /// The plan of the embedded config.
    pub plan: Plan,
    /// The job ids it holds, in file order.
    pub jobs: Vec<usize>,
    /// The chosen points a fresh part ran.
    pub chosen: Option<Vec<usize>>,
    /// The held jobs' records (other jobs empty).
    pub results: Results,
}

/// Reads a partial results file, checking every field.
pub fn read_part(text: &str) -> Result<Part, LoadError> {
    let v = crate::experiment::config::parse_json(text).map_err(|e| {
        LoadError::Json(if e.is_eof() {
            format!("{e} (the file is cut short: truncated?)")
        } else {
            e.to_string()
        })
    })?;
    let field = |p: &str, m: &str| LoadError::Field(p.into(), m.into());
    let part = v.get("critbox_part").ok_or_else(|| {
        field(
            "critbox_part",
            if v.get("critbox_results").is_some() {
                "missing: this is a whole results file, not a shard's part (open it with `critbox open`)"
            } else {
                "missing: this is not a critbox partial results file"
            },
        )
    })?;
    let stage = part
        .get("stage")
        .and_then(Value::as_str)
        .and_then(Stage::from_name)
        .ok_or_else(|| field("critbox_part.stage", "must be \"all\", \"tuning\" or \"fresh\""))?;
    let of = part
        .get("of")
        .and_then(Value::as_u64)
        .filter(|&n| n >= 1)
        .ok_or_else(|| field("critbox_part.of", "must be a whole number ≥ 1"))? as usize;
    let k = part
        .get("shard")
        .and_then(Value::as_u64)
        .filter(|&k| (k as usize) < of)
        .ok_or_else(|| field("critbox_part.shard", &format!("must be a whole number below {of}")))?
        as usize;
    let sha = v
        .get("config_sha256")
        .and_then(Value::as_str)
        .ok_or_else(|| field("config_sha256", "missing or not a text"))?
        .to_string();
    let config = v.get("config").ok_or_else(|| field("config", "missing"))?;
    let plan = validate_value(config).map_err(|e| LoadError::Config(e.to_string()))?;
    if config_sha256(&plan.config) != sha {
        return Err(field("config_sha256", "does not match the embedded config (the file was edited?)"));
    }
    if (stage == Stage::All) != plan.study.is_none() {
        let m = if plan.study.is_some() {
            "a study's part must be of stage tuning or fresh"
        } else {
            "a plan without a study has only stage all"
        };
        return Err(field("critbox_part.stage", m));
    }
    let jobs: Vec<usize> = v
        .get("jobs")
        .and_then(Value::as_array)
        .and_then(|a| a.iter().map(|x| x.as_u64().map(|n| n as usize)).collect::<Option<Vec<_>>>())
        .ok_or_else(|| field("jobs", "missing or not a list of job ids"))?;
    let range = stage.ids(&plan);
    for (i, &id) in jobs.iter().enumerate() {
        if !range.contains(&id) || id % of != k {
            return Err(field(
                &format!("jobs[{i}]"),
                &format!("job {id} does not belong to shard {k}/{of} of stage {}", stage.name()),
            ));
        }
    }
    let chosen = match v.get("chosen") {
        None | Some(Value::Null) => None,
        Some(c) => Some(
            c.as_array()
                .and_then(|a| a.iter().map(|x| x.as_u64().map(|n| n as usize)).collect::<Option<Vec<_>>>())
                .ok_or_else(|| field("chosen", "must be null or a list of grid point indices"))?,
        ),
    };
    if stage == Stage::Fresh {
        let c = chosen
            .as_ref()
            .ok_or_else(|| field("chosen", "missing: a fresh part names its chosen points"))?;
        plan.with_choice(c).map_err(|m| field("chosen", &m))?;
    }
    let records = v
        .get("records")
        .and_then(Value::as_array)
        .ok_or_else(|| field("records", "missing or not a list"))?;
    if records.len() != jobs.len() {
        return Err(field("records", &format!("has {} entries; `jobs` lists {}", records.len(), jobs.len())));
    }
    let mut results = Results::new(&plan);
    for (i, (rec, &id)) in records.iter().zip(&jobs).enumerate() {
        if rec.get("id").and_then(Value::as_u64) != Some(id as u64) {
            return Err(field(&format!("records[{i}].id"), &format!("must be {id}, as jobs[{i}]")));
        }
        read_job(rec, &format!("records[{i}]"), id, &plan, &mut results)?;
    }
    Ok(Part { stage, shard: (k, of), config_sha256: sha, plan, jobs, chosen, results })
}

/// What a merge gives.
#[derive(Debug)]
pub enum Merged {
    /// Every job of the plan: the results file's plan and results.
    Whole(Box<(Plan, Results)>),
    /// Only a study's tuning stage: a tuning file (a part holding every
    /// tuning job) and each variant's chosen point.
    Tuning(Value, Vec<usize>),
}

fn ranges(ids: &[usize]) -> String {
    let mut out: Vec<String> = Vec::new();
    let mut i = 0;
    while i < ids.len() {
        let mut j = i;
        while j + 1 < ids.len() && ids[j + 1] == ids[j] + 1 {
            j += 1;
        }
        out.push(if j == i { ids[i].to_string() } else { format!("{}–{}", ids[i], ids[j]) });
        i = j + 1;
    }
    out.join(", ")
}

/// Joins parts (each with the name to report it by). Every problem is named:
/// a part of another config, a doubled job, a missing one (with the shard
/// that should have produced it), a fresh stage run at other points than
/// its tuning stage chooses.
pub fn merge(parts: &[(String, Part)]) -> Result<Merged, String> {
    let Some((first_name, first)) = parts.first() else {
        return Err("no parts given".into());
    };
    for (name, p) in &parts[1..] {
        if p.config_sha256 != first.config_sha256 {
            return Err(format!(
                "{name} comes from a different config (config_sha256 {}…) than {first_name} ({}…); \
                 every part must come from the same config",
                &p.config_sha256[..12],
                &first.config_sha256[..12]
            ));
        }
    }
    let plan = &first.plan;
    let mut owner: Vec<Option<usize>> = vec![None; plan.job_count()];
    for (pi, (name, p)) in parts.iter().enumerate() {
        for &id in &p.jobs {
            if let Some(other) = owner[id] {
                let (oname, op) = &parts[other];
                return Err(format!(
                    "job {id} is in both {oname} (shard {}/{}) and {name} (shard {}/{}): a doubled shard",
                    op.shard.0, op.shard.1, p.shard.0, p.shard.1
                ));
            }
            owner[id] = Some(pi);
        }
    }
    let stages: &[Stage] = if plan.study.is_some() { &[Stage::Tuning, Stage::Fresh] } else { &[Stage::All] };
    let mut present = Vec::new();
    for &stage in stages {
        let of_stage: Vec<&(String, Part)> = parts.iter().filter(|(_, p)| p.stage == stage).collect();
        if of_stage.is_empty() {
            if stage == Stage::Tuning {
                return Err(format!(
                    "the tuning stage is missing (jobs {}): give the tuning merge file (or the tuning parts) \
                     together with the fresh parts",
                    ranges(&Stage::Tuning.ids(plan).collect::<Vec<_>>())
                ));
            }
            present.push(false);
            continue;
        }
        let n = of_stage[0].1.shard.1;
        if let Some((name, p)) = of_stage.iter().find(|(_, p)| p.shard.1 != n) {
            return Err(format!(
                "{name} is shard {}/{} but {} is shard {}/{n}: the {} parts must split the jobs the same way",
                p.shard.0,
                p.shard.1,
                of_stage[0].0,
                of_stage[0].1.shard.0,
                stage.name()
            ));
        }
        let missing: Vec<usize> = stage.ids(plan).filter(|&id| owner[id].is_none()).collect();
        if !missing.is_empty() {
            let mut shards: Vec<usize> = missing.iter().map(|id| id % n).collect();
            shards.sort_unstable();
            shards.dedup();
            let which: Vec<String> = shards.iter().map(|k| format!("{k}/{n}")).collect();
            return Err(format!(
                "missing {} job(s) of stage {}: ids {}; shard {} should have produced them",
                missing.len(),
                stage.name(),
                ranges(&missing),
                which.join(", ")
            ));
        }
        present.push(true);
    }
    let mut results = Results::new(plan);
    for (pi, (_, p)) in parts.iter().enumerate() {
        for &id in &p.jobs {
            debug_assert_eq!(owner[id], Some(pi));
            let (eps, evals, steps_done, failed) = p.results.job_record(id);
            for e in eps {
                results.add_episode(id, *e);
            }
            for e in evals {
                results.add_evaluation(id, *e);
            }
            for (bin, d) in p.results.job_diagnostics(id).iter().enumerate() {
                if d.count > 0 {
                    results.set_diagnostics(id, bin, *d);
                }
            }
            results.set_steps(id, steps_done);
            if let Some(f) = failed {
                results.mark_failed(id, f.to_string());
            }
        }
    }
    if plan.study.is_none() {
        return Ok(Merged::Whole(Box::new((plan.clone(), results))));
    }
    let chosen = results.choice().expect("a study has a choice");
    for (name, p) in parts.iter().filter(|(_, p)| p.stage == Stage::Fresh) {
        if p.chosen.as_deref() != Some(&chosen[..]) {
            return Err(format!(
                "{name} ran the grid points {:?} but the tuning stage chooses {chosen:?}: \
                 it was run --from another tuning file",
                p.chosen.as_deref().unwrap_or_default()
            ));
        }
    }
    if present[1] {
        Ok(Merged::Whole(Box::new((plan.clone(), results))))
    } else {
        let ids: Vec<usize> = Stage::Tuning.ids(plan).collect();
        let file = save_part(plan, &results, Stage::Tuning, (0, 1), &ids, None);
        Ok(Merged::Tuning(file, chosen))
    }
}

/// Runs one shard: the plan's jobs of `stage` with `id mod n = k`. For the
/// fresh stage `tuning` must be the study's tuning file (a merged tuning
/// part of the same config); it gives the chosen points. Returns the part
/// file.
pub fn run_shard(
    plan: &Plan,
    stage: Stage,
    k: usize,
    n: usize,
    tuning: Option<&Part>,
) -> Result<Value, String> {
    let ids = shard_ids(plan, stage, k, n);
    let (run_plan, chosen) = match stage {
        Stage::Fresh => {
            let t = tuning.ok_or("the fresh stage needs the tuning merge file (--from)")?;
            if t.config_sha256 != config_sha256(&plan.config) {
                return Err(
                    "the tuning file comes from a different config (its config_sha256 differs)".into()
                );
            }
            if t.stage != Stage::Tuning {
                return Err(format!("the tuning file holds stage {} jobs, not tuning ones", t.stage.name()));
            }
            let missing: Vec<usize> = Stage::Tuning.ids(plan).filter(|id| !t.jobs.contains(id)).collect();
            if !missing.is_empty() {
                return Err(format!(
                    "the tuning file is shard {}/{}, missing tuning jobs {}: merge every tuning part first",
                    t.shard.0,
                    t.shard.1,
                    ranges(&missing)
                ));
            }
            let chosen = t.results.choice().expect("a study has a choice");
            (plan.with_choice(&chosen)?, Some(chosen))
        }
        _ => (plan.clone(), None),
    };
    let mut results = Results::new(plan);
    for &id in &ids {
        crate::experiment::run_jobs(&run_plan, id..id + 1, &mut results);
    }
    Ok(save_part(plan, &results, stage, (k, n), &ids, chosen.as_deref()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_known_text() {
        // FIPS 180-2, appendix B.1: SHA-256("abc").
        let d: String = Sha256::digest(b"abc").iter().map(|b| format!("{b:02x}")).collect();
        assert_eq!(d, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    }

    #[test]
    fn id_ranges_are_written_compactly() {
        assert_eq!(ranges(&[1, 2, 3, 7, 9, 10]), "1–3, 7, 9–10");
    }
}
