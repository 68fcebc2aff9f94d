//! The `Results` handle: an experiment's results, fed with records from
//! the trainers, read as curves, summaries and exports, and packed into
//! bytes for keeping.
//!
//! Packing is the core's results file (`experiment::export::save`, read
//! back with `export::load`) compressed with zlib (RFC 1950) by
//! `miniz_oxide`, so whatever the core adds to results files is kept too.
//! [`unpack`] also reads uncompressed results-file text (its first byte is
//! `{`, which no zlib stream starts with) and stops inflating past
//! [`MAX_UNPACKED`] bytes, so a corrupt entry cannot exhaust memory.

use wasm_bindgen::prelude::*;

use critbox_core::experiment::{self, export, Plan};

use crate::{plan_of, records};

/// zlib level for packing: 6 is zlib's default balance of size and time.
const PACK_LEVEL: u8 = 6;

/// Most bytes a packed entry may inflate to (1 GiB).
pub const MAX_UNPACKED: usize = 1 << 30;

/// The results file of `results` as zlib-compressed JSON.
pub fn pack(plan: &Plan, results: &experiment::Results) -> Vec<u8> {
    let text = export::save(plan, results).to_string();
    miniz_oxide::deflate::compress_to_vec_zlib(text.as_bytes(), PACK_LEVEL)
}

/// Rebuilds plan and results from [`pack`]'s bytes (or a results file's
/// text); the error says what is wrong.
pub fn unpack(bytes: &[u8]) -> Result<(Plan, experiment::Results), String> {
    let text = match bytes.first() {
        None => return Err("the kept results are empty".into()),
        Some(b'{') => {
            std::str::from_utf8(bytes).map_err(|e| format!("the kept results are not UTF-8: {e}"))?
        }
        Some(_) => {
            let raw = miniz_oxide::inflate::decompress_to_vec_zlib_with_limit(bytes, MAX_UNPACKED).map_err(
                |e| format!("the kept results cannot be unpacked ({:?}); they may be damaged", e.status),
            )?;
            return load_text(
                &String::from_utf8(raw).map_err(|e| format!("the kept results are not UTF-8: {e}"))?,
            );
        }
    };
    load_text(text)
}

fn load_text(text: &str) -> Result<(Plan, experiment::Results), String> {
    export::load(text).map_err(|e| e.to_string())
}

/// A copy of `results` holding only the jobs that are finished (done or
/// failed); the others look as if they had not started. Made through the
/// results file itself (each unfinished job's entry replaced by an empty
/// job's), so whatever the core records per job is carried, or dropped,
/// without a list of fields here.
pub fn finished_only(plan: &Plan, results: &experiment::Results) -> Result<experiment::Results, String> {
    let mut file = export::save(plan, results);
    let empty = export::save(plan, &experiment::Results::new(plan));
    let table = job_table(plan, results);
    if let (Some(jobs), Some(blank)) = (file["jobs"].as_array_mut(), empty["jobs"].as_array()) {
        for (i, job) in jobs.iter_mut().enumerate() {
            if table[i * 2 + 1] == 0.0 {
                *job = blank[i].clone();
            }
        }
    }
    load_text(&file.to_string()).map(|(_, r)| r)
}

/// Per job, stride 2: steps done, status (0 not finished, 1 done, 2 failed).
pub fn job_table(plan: &Plan, results: &experiment::Results) -> Vec<f64> {
    let mut out = Vec::with_capacity(results.job_count() * 2);
    for id in 0..results.job_count() {
        let (_, _, steps_done, failed) = results.job_record(id);
        let status = if failed.is_some() {
            2.0
        } else if steps_done >= plan.config.steps {
            1.0
        } else {
            0.0
        };
        out.extend_from_slice(&[steps_done as f64, status]);
    }
    out
}

/// The results of a whole experiment, fed with records from the trainers.
#[wasm_bindgen]
pub struct Results {
    inner: experiment::Results,
    plan: Plan,
}

impl Results {
    fn variant(&self, variant: u32) -> Result<usize, JsError> {
        let n = self.plan.variants.len();
        if (variant as usize) < n {
            Ok(variant as usize)
        } else {
            Err(JsError::new(&format!("variant {variant} is out of range ({n} variants)")))
        }
    }
}

#[wasm_bindgen]
impl Results {
    /// Empty results for a config.
    #[wasm_bindgen(constructor)]
    pub fn new(json: &str) -> Result<Results, JsError> {
        let plan = plan_of(json)?;
        Ok(Results { inner: experiment::Results::new(&plan), plan })
    }

    /// Rebuilds results from a saved results file (see `saveJson`) without
    /// re-running; throws with the field that is wrong.
    #[wasm_bindgen(js_name = fromSaved)]
    pub fn from_saved(text: &str) -> Result<Results, JsError> {
        let (plan, inner) = load_text(text).map_err(|e| JsError::new(&e))?;
        Ok(Results { inner, plan })
    }

    /// The results as bytes for keeping: the results file, zlib-compressed.
    pub fn pack(&self) -> Vec<u8> {
        pack(&self.plan, &self.inner)
    }

    /// Results from `pack`'s bytes (or a results file's UTF-8 text); throws
    /// saying what is wrong with them.
    pub fn restore(bytes: &[u8]) -> Result<Results, JsError> {
        let (plan, inner) = unpack(bytes).map_err(|e| JsError::new(&e))?;
        Ok(Results { inner, plan })
    }

    /// A new handle holding only the finished jobs (done or failed), for
    /// keeping a run that is still going: unfinished jobs are trained again
    /// from their start when the run is finished later.
    #[wasm_bindgen(js_name = finishedOnly)]
    pub fn finished_only(&self) -> Result<Results, JsError> {
        let inner = finished_only(&self.plan, &self.inner).map_err(|e| JsError::new(&e))?;
        Ok(Results { inner, plan: self.plan.clone() })
    }

    /// Per job (in id order), stride 2: steps done, status (0 not finished,
    /// 1 done, 2 failed). The one record of how far each job got.
    #[wasm_bindgen(js_name = jobTable)]
    pub fn job_table(&self) -> Vec<f64> {
        job_table(&self.plan, &self.inner)
    }

    /// The config (defaults filled in) as JSON text.
    #[wasm_bindgen(js_name = configJson)]
    pub fn config_json(&self) -> String {
        serde_json::to_string(&self.plan.config).unwrap_or_default()
    }

    /// The results file (config, every episode record, summary) as JSON text.
    #[wasm_bindgen(js_name = saveJson)]
    pub fn save_json(&self) -> String {
        export::save(&self.plan, &self.inner).to_string()
    }

    /// The tidy CSV: `variant,label,seed,step,metric,value,settings`.
    #[wasm_bindgen(js_name = tidyCsv)]
    pub fn tidy_csv(&self) -> String {
        export::tidy_csv(&self.inner)
    }

    /// Adds records of kind `kind` (see `recordLayouts()`), as
    /// `Run.takeRecords(kind)` gives them; throws naming the first bad record.
    #[wasm_bindgen(js_name = addRecords)]
    pub fn add_records(&mut self, kind: &str, data: &[f64]) -> Result<(), JsError> {
        records::kind(kind).and_then(|k| k.add_all(&mut self.inner, data)).map_err(|e| JsError::new(&e))
    }

    /// Records a job's progress (so curves carry values only as far as it got).
    #[wasm_bindgen(js_name = setSteps)]
    pub fn set_steps(&mut self, job: u32, steps_done: f64) {
        if steps_done.is_finite() && steps_done >= 0.0 {
            self.inner.set_steps(job as usize, steps_done as u64);
        }
    }

    /// Marks a job as failed.
    #[wasm_bindgen(js_name = markFailed)]
    pub fn mark_failed(&mut self, job: u32, reason: &str) {
        self.inner.mark_failed(job as usize, reason.to_string());
    }

    /// A variant's curve, stride 5 per bin: upper step edge, mean, lower and
    /// upper 95% bounds (NaN where undefined), seeds with data.
    pub fn curve(&self, variant: u32) -> Result<Vec<f64>, JsError> {
        let v = self.variant(variant)?;
        Ok(self.inner.curve(v).iter().flat_map(|p| [p.step as f64, p.mean, p.lo, p.hi, p.n as f64]).collect())
    }

    /// A variant's curve of the shaped return (what the learner was trained
    /// on), stride 5 per bin as [`Results::curve`] (Student-t bounds).
    #[wasm_bindgen(js_name = curveShaped)]
    pub fn curve_shaped(&self, variant: u32) -> Result<Vec<f64>, JsError> {
        let v = self.variant(variant)?;
        Ok(self
            .inner
            .shaped_curve(v)
            .iter()
            .flat_map(|p| [p.step as f64, p.mean, p.lo, p.hi, p.n as f64])
            .collect())
    }

    /// Each variant's chosen grid point (a study's tuning choice, see the
    /// core's `Results::choice`); empty outside a study. Ask once the tuning
    /// jobs have finished.
    pub fn choice(&self) -> Vec<u32> {
        self.inner.choice().map_or_else(Vec::new, |c| c.into_iter().map(|p| p as u32).collect())
    }

    /// Whether every tuning job of a study has finished (true outside a study).
    #[wasm_bindgen(js_name = tuningFinished)]
    pub fn tuning_finished(&self) -> bool {
        self.inner.tuning_finished()
    }

    /// The evaluation checkpoints' steps (empty when the plan does not evaluate).
    pub fn checkpoints(&self) -> Vec<f64> {
        self.inner.checkpoints().iter().map(|&c| c as f64).collect()
    }

    /// A variant's evaluation curve, stride 5 per checkpoint: step, mean,
    /// lower and upper pointwise 95% bounds (NaN under 3 seeds), seeds with
    /// data; empty when the plan does not evaluate.
    #[wasm_bindgen(js_name = curveEval)]
    pub fn curve_eval(&self, variant: u32) -> Result<Vec<f64>, JsError> {
        let v = self.variant(variant)?;
        Ok(self
            .inner
            .eval_curve(v)
            .iter()
            .flat_map(|p| [p.step as f64, p.mean, p.lo, p.hi, p.n as f64])
            .collect())
    }

    /// A variant's robust evaluation curve, stride 2 per checkpoint: IQM and
    /// median over seeds (empty when the plan does not evaluate).
    #[wasm_bindgen(js_name = curveEvalRobust)]
    pub fn curve_eval_robust(&self, variant: u32) -> Result<Vec<f64>, JsError> {
        let v = self.variant(variant)?;
        Ok(self.inner.eval_curve(v).iter().flat_map(|p| [p.iqm, p.median]).collect())
    }

    /// One seed's evaluation returns per checkpoint (NaN where it has none).
    #[wasm_bindgen(js_name = seedEvalCurve)]
    pub fn seed_eval_curve(&self, variant: u32, seed: u32) -> Result<Vec<f64>, JsError> {
        if variant as usize >= self.plan.variants.len() || seed as usize >= self.inner.seeds() {
            return Err(JsError::new(&format!("variant {variant} / seed {seed} is out of range")));
        }
        Ok(self.inner.seed_eval_curve(variant as usize, seed as usize))
    }

    /// A variant's robust curve, stride 2 per bin: IQM and median over seeds.
    #[wasm_bindgen(js_name = curveRobust)]
    pub fn curve_robust(&self, variant: u32) -> Result<Vec<f64>, JsError> {
        let v = self.variant(variant)?;
        Ok(self.inner.curve(v).iter().flat_map(|p| [p.iqm, p.median]).collect())
    }

    /// One seed's binned curve (NaN where it has no data yet), for thin per-seed lines.
    #[wasm_bindgen(js_name = seedCurve)]
    pub fn seed_curve(&self, variant: u32, seed: u32) -> Result<Vec<f64>, JsError> {
        if variant as usize >= self.plan.variants.len() || seed as usize >= self.inner.seeds() {
            return Err(JsError::new(&format!("variant {variant} / seed {seed} is out of range")));
        }
        Ok(self.inner.seed_curve(variant as usize, seed as usize))
    }

    /// The summary JSON, the same as `critbox run` prints.
    #[wasm_bindgen(js_name = summaryJson)]
    pub fn summary_json(&self) -> String {
        self.inner.summary().to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use critbox_core::experiment::{run_all, Job};

    fn plan() -> Plan {
        // Time limit 6 on a corridor the rover cannot cross in 6 moves: every
        // episode ends truncated until the learner finds the dock quickly.
        experiment::config::validate_value(&serde_json::json!({
            "schema": 1,
            "task": {"kind": "grid", "map": ["#########", "#S.....D#", "#########"], "max_steps": 6},
            "steps": 600, "seeds": 2, "curve_points": 5,
            "variants": [{"label": "a"}, {"label": "b", "learner": {"algo": "qac"}}]
        }))
        .unwrap()
    }

    /// Trains every job in chunks, moving records as the page does.
    fn through_records(plan: &Plan) -> experiment::Results {
        let mut results = experiment::Results::new(plan);
        let mut jobs: Vec<Job> = (0..plan.job_count()).map(|id| Job::new(plan, id)).collect();
        for _ in 0..(plan.config.steps / 97 + 1) {
            for job in &mut jobs {
                job.advance(97);
            }
            for kind in records::KINDS {
                kind.add_all(&mut results, &kind.take_all(&mut jobs)).unwrap();
            }
            for job in &jobs {
                results.set_steps(job.id(), job.steps_done());
            }
        }
        results
    }

    #[test]
    fn records_carry_every_field_so_saved_files_match_a_direct_run() {
        // Common practice, no source: the page's path gives the CLI's file.
        let plan = plan();
        let direct = run_all(&plan);
        let moved = through_records(&plan);
        assert_eq!(export::save(&plan, &moved), export::save(&plan, &direct));
        let (eps, _, _, _) = direct.job_record(0);
        assert!(eps.iter().any(|e| e.truncated), "the test needs truncated episodes");
    }

    #[test]
    fn pack_and_unpack_give_the_same_results_file() {
        let plan = plan();
        let r = run_all(&plan);
        let bytes = pack(&plan, &r);
        assert_ne!(bytes[0], b'{');
        let (plan2, r2) = unpack(&bytes).unwrap();
        assert_eq!(export::save(&plan2, &r2), export::save(&plan, &r));
        // Plain results-file text is read as well.
        let text = export::save(&plan, &r).to_string();
        assert_eq!(export::save(&plan, &unpack(text.as_bytes()).unwrap().1), export::save(&plan, &r));
        assert!(text.len() > 2 * bytes.len(), "zlib should at least halve the JSON");
    }

    #[test]
    fn damaged_packs_are_refused_with_a_reason() {
        let plan = plan();
        let mut bytes = pack(&plan, &run_all(&plan));
        assert!(unpack(&[]).unwrap_err().contains("empty"));
        bytes.truncate(bytes.len() / 2);
        assert!(unpack(&bytes).unwrap_err().contains("damaged"));
        assert!(unpack(b"{\"critbox_results\": 1}").unwrap_err().contains("config"));
    }

    #[test]
    fn finished_only_keeps_finished_jobs_and_the_job_table_says_so() {
        let plan = plan();
        let mut r = experiment::Results::new(&plan);
        let mut job = Job::new(&plan, 1);
        job.advance(plan.config.steps);
        let mut half = Job::new(&plan, 2);
        half.advance(plan.config.steps / 2);
        for j in [&mut job, &mut half] {
            for e in j.take_new_episodes().to_vec() {
                r.add_episode(j.id(), e);
            }
            r.set_steps(j.id(), j.steps_done());
        }
        r.mark_failed(3, "step 9: diverged: test".into());
        assert_eq!(job_table(&plan, &r), vec![0.0, 0.0, 600.0, 1.0, 300.0, 0.0, 0.0, 2.0]);
        let kept = finished_only(&plan, &r).unwrap();
        assert_eq!(job_table(&plan, &kept), vec![0.0, 0.0, 600.0, 1.0, 0.0, 0.0, 0.0, 2.0]);
        assert_eq!(kept.job_record(1).0, r.job_record(1).0);
        assert!(kept.job_record(2).0.is_empty());
    }

    #[test]
    fn bad_records_are_refused_naming_the_record() {
        let plan = plan();
        let mut r = experiment::Results::new(&plan);
        let k = records::kind("episode").unwrap();
        assert!(k.add_all(&mut r, &[0.0; 5]).unwrap_err().contains("groups of 6"));
        let bad = [0.0, 3.0, -1.0, -1.0, 3.0, 0.5];
        assert!(k.add_all(&mut r, &bad).unwrap_err().contains("truncated must be 0 or 1"));
        let far = [9.0, 3.0, -1.0, -1.0, 3.0, 0.0];
        assert!(k.add_all(&mut r, &far).unwrap_err().contains("job id below 4"));
        assert!(records::kind("checkpoint").unwrap_err().contains("the kinds are episode"));
    }
}
