//! WebAssembly bindings of critbox-core for the page.
//!
//! Thin handles over core types; JS holds a handle and calls a few coarse
//! functions. Bulk data crosses as `Float64Array` copies whose layout
//! (stride and order) is documented on each accessor; the records a
//! trainer's `Run` hands to the results' `Results` (`results.rs`) are
//! laid out once, in `records.rs`. Every error reaches JS
//! as an exception carrying the core's message; user input never traps.
//! JS-style (camelCase) names appear only here.

use wasm_bindgen::prelude::*;

use critbox_core::experiment::config::TaskConfig;
use critbox_core::experiment::{self, inspect, Job, JobStatus, Plan};
use critbox_core::task::Task;

/// Installs the panic hook so a programming error shows its message in the console.
mod records;
mod results;

pub use records::record_layouts;
pub use results::Results;

#[wasm_bindgen(start)]
pub fn start() {
    console_error_panic_hook::set_once();
}

pub(crate) fn plan_of(json: &str) -> Result<Plan, JsError> {
    experiment::parse(json).map_err(|e| JsError::new(&e.to_string()))
}

/// Checks a config; returns a JSON description of the plan or throws with
/// every problem, each naming its field. Besides the labels and sizes:
/// `task_kind`, `state_names`, `state_low`/`state_high` (typical ranges),
/// `action_names`, `continuous` (whether actions are continuous),
/// `grid_map` (a grid's map rows, a named layout's included; null otherwise)
/// `notes` (old key names that still load, and what they are called now),
/// `evaluation` (`{every, episodes, greedy, checkpoints}`, null when off) and
/// `score_on` (`"evaluation"` or `"training"`), and for a study
/// `tuning_jobs`, `tuning_seeds` and `tuning_points` (grid points per
/// variant; tuning job ids run variant by variant, point by point, seed by
/// seed, before the fresh ones).
/// Every numeric and on/off setting (`critbox_core::settings::SETTINGS`) as
/// JSON: `path`, `default`, `default_text`, `range`, `range_text`, `help`.
/// The page's form takes its defaults, ranges and explanations from it.
#[wasm_bindgen(js_name = settingsTable)]
pub fn settings_table() -> String {
    serde_json::to_string(critbox_core::settings::SETTINGS).expect("the table serialises")
}

#[wasm_bindgen(js_name = validateConfig)]
pub fn validate_config(json: &str) -> Result<String, JsError> {
    let plan = plan_of(json)?;
    let grid_map = match &plan.config.task {
        TaskConfig::Grid(g) => serde_json::json!(g.map),
        _ => serde_json::Value::Null,
    };
    let v = serde_json::json!({
        "state_low": plan.spec.state_vars.iter().map(|v| v.low).collect::<Vec<_>>(),
        "state_high": plan.spec.state_vars.iter().map(|v| v.high).collect::<Vec<_>>(),
        "continuous": plan.spec.actions.discrete_count().is_none(),
        "grid_map": grid_map,
        "table_states": plan.spec.state_names,
        "title": plan.config.title,
        "labels": plan.variants.iter().map(|v| v.label.clone()).collect::<Vec<_>>(),
        "seeds": plan.config.seeds,
        "steps": plan.config.steps,
        "jobs": plan.job_count(),
        "task_kind": plan.spec.kind,
        "state_names": plan.spec.state_vars.iter().map(|v| v.name.clone()).collect::<Vec<_>>(),
        "action_names": plan.spec.actions.names().to_vec(),
        "notes": plan.notes,
        "evaluation": plan.evaluation.as_ref().map(|e| serde_json::json!({
            "every": e.every, "episodes": e.episodes, "greedy": e.greedy, "checkpoints": e.checkpoints,
        })),
        "score_on": plan.score_on.name(),
        "tuning_jobs": plan.tuning_jobs(),
        "tuning_seeds": plan.study.as_ref().map(|s| s.tuning_seeds),
        "tuning_points": plan.study.as_ref().map(|s| s.grids.iter().map(|g| g.points.len()).collect::<Vec<_>>()),
    });
    Ok(v.to_string())
}

/// `prefix.path`, or `prefix` alone for an empty path.
fn join_path(prefix: &str, path: &str) -> String {
    if path.is_empty() {
        prefix.to_string()
    } else {
        format!("{prefix}.{path}")
    }
}

fn task_of(v: &serde_json::Value) -> Result<Box<dyn Task>, JsError> {
    let cfg = TaskConfig::read(v)
        .map_err(|p| JsError::new(&format!("{}: {}", join_path("task", &p.path), p.message)))?;
    cfg.build().map_err(|e| JsError::new(&format!("task.{e}")))
}

/// Checks a reward formula as the user types. `text` is the formula;
/// `config_json` holds at least `task` and may hold `reward` (its `mode` and
/// `constants` are used, its `formula` ignored), e.g. a whole config, or
/// `{"task": ..., "reward": variant.reward}` to check a variant's formula.
/// Returns JSON `{ok, errors: [{start, end, column, message, hint}], pretty,
/// uses, names: [{name, kind, doc}]}`; `start`/`end` are JavaScript string
/// positions (UTF-16 code units) for marking the text. Throws only when the
/// task or the reward's mode/constants cannot be read.
#[wasm_bindgen(js_name = checkFormula)]
pub fn check_formula(text: &str, config_json: &str) -> Result<String, JsError> {
    let v = critbox_core::experiment::config::parse_json(config_json).map_err(|e| {
        JsError::new(&format!("not valid JSON at line {} column {}: {e}", e.line(), e.column()))
    })?;
    let task = task_of(v.get("task").unwrap_or(&serde_json::Value::Null))?;
    let reward: critbox_core::reward::RewardConfig = match v.get("reward") {
        None => Default::default(),
        Some(r) => critbox_core::experiment::config::read_json(r, "reward")
            .map_err(|p| JsError::new(&format!("{}: {}", p.path, p.message)))?,
    };
    Ok(critbox_core::reward::check_report(text, task.spec(), &reward).to_string())
}

/// Checks a task definition as the user edits it (the task editor).
/// `task_json` is a config's `task` object. Returns JSON `{ok, problems:
/// [{path, message}], fields: [{path, errors: [{start, end, column, message,
/// hint}], names: [{name, kind, doc}]}]}`: paths are relative to the task
/// (`update.velocity`, `rows[3].from`); `fields` lists a formula task's
/// formula fields (`let[0].formula`, `update.NAME`, `terminal`, `reward`)
/// with spans in UTF-16 code units. Throws only on text that is not JSON.
#[wasm_bindgen(js_name = checkTask)]
pub fn check_task(task_json: &str) -> Result<String, JsError> {
    let v = critbox_core::experiment::config::parse_json(task_json).map_err(|e| {
        JsError::new(&format!("task: not valid JSON at line {} column {}: {e}", e.line(), e.column()))
    })?;
    Ok(critbox_core::report::to_value(&critbox_core::experiment::config::check_task(&v)).to_string())
}

/// Reads a table task's rows from CSV text (a header naming `from`,
/// `action`, `to`, `probability`, `reward`, then one row per line). Returns
/// the JSON array of rows; throws with the line and column of a problem.
#[wasm_bindgen(js_name = tableRowsFromCsv)]
pub fn table_rows_from_csv(text: &str) -> Result<String, JsError> {
    let rows =
        critbox_core::usertask::table::rows_from_csv(text).map_err(|p| JsError::new(&p.to_string()))?;
    Ok(serde_json::to_string(&rows).expect("rows serialise"))
}

/// The shaping audit of a config, the same JSON as `critbox audit` prints:
/// `potential_based`, `policy_changed`, `differing_states` (each with
/// `row`/`col` on a grid), `base_value_loss`, … for the config's `reward`,
/// and the same per variant under `variants`. Throws on a bad config.
#[wasm_bindgen]
pub fn audit(config_json: &str) -> Result<String, JsError> {
    let plan = plan_of(config_json)?;
    Ok(critbox_core::experiment::audit::audit_plan(&plan).to_string())
}

/// The gradient-variance probe of job (`variant`, `seed`): trains it to each
/// checkpoint, then measures K = `estimates` REINFORCE gradient estimates of
/// M = `episodes` episodes under each baseline option. Returns JSON
/// `{variant, seed, estimates, episodes, checkpoints: [{step, options:
/// [{baseline, trace_cov, mean_norm, constant}]}]}`; throws with the reason
/// when the variant cannot be probed. Heavy: call it from a worker.
#[wasm_bindgen]
pub fn probe(
    json: &str,
    variant: u32,
    seed: u32,
    checkpoints: &[f64],
    estimates: u32,
    episodes: u32,
    chosen: &[u32],
) -> Result<String, JsError> {
    let mut plan = plan_of(json)?;
    if plan.study.is_some() && !chosen.is_empty() {
        let chosen: Vec<usize> = chosen.iter().map(|&c| c as usize).collect();
        plan = plan.with_choice(&chosen).map_err(|e| JsError::new(&format!("chosen: {e}")))?;
    }
    if checkpoints.iter().any(|c| !(c.is_finite() && *c >= 0.0)) {
        return Err(JsError::new("checkpoints: step counts must be finite and >= 0"));
    }
    let settings = experiment::probe::ProbeSettings {
        checkpoints: checkpoints.iter().map(|&c| c as u64).collect(),
        estimates,
        episodes,
    };
    experiment::probe::probe(&plan, variant as usize, seed as usize, &settings)
        .map(|v| v.to_string())
        .map_err(|e| JsError::new(&e.to_string()))
}

/// The built-in grid layouts as JSON: `[{name, title, map, slip,
/// step_reward, hazard_reward, hazard_restart, goal_reward, max_steps}]`. A
/// grid config names one with `"layout"`; a config that gives both `layout`
/// and a `map` is refused unless the map is the layout's own, so drop
/// `layout` when the map is edited.
#[wasm_bindgen(js_name = gridLayouts)]
pub fn grid_layouts() -> String {
    critbox_core::task::layouts::to_json().to_string()
}

/// The jobs of a plan owned by one worker.
#[wasm_bindgen]
pub struct Run {
    jobs: Vec<Job>,
    plan: Plan,
}

#[wasm_bindgen]
impl Run {
    /// Creates the jobs `job_ids` of a config (numbered as
    /// `Plan::job_spec`: outside a study `id = variant * seeds + seed`; in a
    /// study the tuning jobs come first, and the fresh ones need
    /// [`Run::with_choice`]).
    #[wasm_bindgen(constructor)]
    pub fn new(json: &str, job_ids: &[u32]) -> Result<Run, JsError> {
        Run::build(plan_of(json)?, job_ids)
    }

    /// Creates jobs of a study with each variant's chosen grid point set
    /// (`chosen`, one index per variant, as `Results.choice()` gives it), so
    /// its fresh jobs can be built; for a plan without a study `chosen` is
    /// ignored.
    #[wasm_bindgen(js_name = withChoice)]
    pub fn with_choice(json: &str, chosen: &[u32], job_ids: &[u32]) -> Result<Run, JsError> {
        let plan = plan_of(json)?;
        let plan = if plan.study.is_some() {
            let chosen: Vec<usize> = chosen.iter().map(|&c| c as usize).collect();
            plan.with_choice(&chosen).map_err(|e| JsError::new(&format!("chosen: {e}")))?
        } else {
            plan
        };
        Run::build(plan, job_ids)
    }

    fn build(plan: Plan, job_ids: &[u32]) -> Result<Run, JsError> {
        let n = plan.job_count();
        let mut jobs = Vec::with_capacity(job_ids.len());
        for &id in job_ids {
            if id as usize >= n {
                return Err(JsError::new(&format!("job id {id} is out of range: the plan has {n} jobs")));
            }
            if plan.job_spec(id as usize).is_none() {
                return Err(JsError::new(&format!(
                    "job {id} is a fresh job of a study: build it with Run.withChoice once the tuning jobs have chosen"
                )));
            }
            jobs.push(Job::new(&plan, id as usize));
        }
        Ok(Run { jobs, plan })
    }

    /// Advances every owned job by up to `steps_per_job` steps; returns true
    /// when all of them are finished (done or failed).
    pub fn advance(&mut self, steps_per_job: f64) -> bool {
        let n = if steps_per_job.is_finite() && steps_per_job > 0.0 { steps_per_job as u64 } else { 0 };
        for job in &mut self.jobs {
            job.advance(n);
        }
        self.jobs.iter().all(|j| *j.status() != JobStatus::Running)
    }

    /// Progress, stride 3 per owned job: job id, steps done, status (0
    /// running, 1 done, 2 failed).
    pub fn progress(&self) -> Vec<f64> {
        let mut out = Vec::with_capacity(self.jobs.len() * 3);
        for j in &self.jobs {
            let status = match j.status() {
                JobStatus::Running => 0.0,
                JobStatus::Done => 1.0,
                JobStatus::Failed(_) => 2.0,
            };
            out.extend_from_slice(&[j.id() as f64, j.steps_done() as f64, status]);
        }
        out
    }

    fn job_at(&mut self, index: u32) -> Result<&mut Job, JsError> {
        let n = self.jobs.len();
        self.jobs.get_mut(index as usize).ok_or_else(|| {
            JsError::new(&format!("job index {index} is out of range: this Run owns {n} jobs"))
        })
    }

    /// Length of the policy part of an [`Run::inspect`] record: the number
    /// of actions on a discrete task, of action components on a continuous one.
    #[wasm_bindgen(js_name = policyWidth)]
    pub fn policy_width(&self) -> u32 {
        inspect::policy_width(&self.plan.spec) as u32
    }

    /// The observation of every discrete state, in state order, stride =
    /// number of state variables; empty for a task without discrete states.
    #[wasm_bindgen(js_name = stateObservations)]
    pub fn state_observations(&self) -> Vec<f64> {
        inspect::state_observations(self.plan.make_task().as_ref())
    }

    /// What job `index` (its position in this Run's job ids) has learned, at
    /// each of the given observations (stride = number of state variables).
    /// Per observation, stride `1 + policyWidth()`: the critic's value
    /// estimate (NaN when the learner keeps none), then the policy: on a
    /// discrete task π(a|s) for each action, on a continuous one the action
    /// the policy prefers (the mean, without exploration).
    pub fn inspect(&mut self, index: u32, observations: &[f64]) -> Result<Vec<f64>, JsError> {
        let task = self.plan.make_task();
        let learner = self.job_at(index)?.learner_mut();
        inspect::read_at(learner, task.as_ref(), observations).map_err(|e| JsError::new(&e.to_string()))
    }

    /// The exact value of job `index`'s current policy at every state of the
    /// task's model (in state order) under the task's own reward and the
    /// variant's discount: the solution of `(I − γ P_π) V = r_π`. Empty for a
    /// task without an exact model; NaN everywhere when the system cannot be
    /// solved (say, γ = 1 and a policy that may never end an episode).
    #[wasm_bindgen(js_name = policyValues)]
    pub fn policy_values(&mut self, index: u32) -> Result<Vec<f64>, JsError> {
        let task = self.plan.make_task();
        let id = self.job_at(index)?.id();
        let variant = self.plan.job_coords(id).0;
        let gamma = inspect::discount(&self.plan, variant);
        let learner = self.job_at(index)?.learner_mut();
        Ok(inspect::policy_values(learner, task.as_ref(), gamma))
    }

    /// Plays one episode of job `index`'s current policy on a fresh copy of
    /// the task, for at most `max_steps` steps, with task noise from `seed`:
    /// `greedy` takes the action the policy prefers, otherwise actions are
    /// sampled as in training (with a stream of their own). Returns frames of
    /// stride `k + policyWidth() + 2` (k state variables; on a discrete task
    /// the action part holds the index and then NaNs): the observation, the
    /// action taken there, the task's own reward for it, and a flag (0 going
    /// on, 1 the step ended the episode in a terminal state). A last frame
    /// holds the final observation with NaN action and reward and flag 2
    /// (terminal) or 3 (step limit).
    pub fn rollout(
        &mut self,
        index: u32,
        max_steps: u32,
        seed: f64,
        greedy: bool,
    ) -> Result<Vec<f64>, JsError> {
        if !(seed.is_finite() && seed >= 0.0) {
            return Err(JsError::new(&format!("seed must be a number ≥ 0, got {seed}")));
        }
        let width = inspect::policy_width(&self.plan.spec);
        let mut task = self.plan.make_task();
        let learner = self.job_at(index)?.learner_mut();
        Ok(inspect::rollout(learner, task.as_mut(), max_steps, seed as u64, greedy).frames(width))
    }

    /// The owned jobs' records of kind `kind` not taken before, one after
    /// another (layouts: `recordLayouts()`, documented in `records.rs`);
    /// the jobs forget what they hand out, so their memory stays flat.
    #[wasm_bindgen(js_name = takeRecords)]
    pub fn take_records(&mut self, kind: &str) -> Result<Vec<f64>, JsError> {
        let kind = records::kind(kind).map_err(|e| JsError::new(&e))?;
        Ok(kind.take_all(&mut self.jobs))
    }

    /// Failed jobs as JSON: `[{"job": id, "reason": text}]`.
    pub fn failures(&self) -> String {
        let list: Vec<serde_json::Value> = self
            .jobs
            .iter()
            .filter_map(|j| match j.status() {
                JobStatus::Failed(r) => Some(serde_json::json!({"job": j.id(), "reason": r})),
                _ => None,
            })
            .collect();
        serde_json::Value::Array(list).to_string()
    }

    /// Diagnostic sums per curve bin of every owned job so far, stride 13:
    /// job id, bin, steps counted, Σ TD error, Σ |TD error|, Σ entropy,
    /// Σ actor update norm, Σ critic update norm, steps with an importance
    /// weight, Σ ρ, Σ ρ², largest ρ, steps whose ρ was capped. Means are sums
    /// over steps counted; the effective sample size fraction of a bin is
    /// `(Σρ)² / Σρ² / (steps with a weight)`.
    pub fn diagnostics(&self) -> Vec<f64> {
        let mut out = Vec::new();
        for j in &self.jobs {
            for (b, d) in j.diagnostics().iter().enumerate() {
                records::push_diagnostic(&mut out, j.id() as f64, b, d);
            }
        }
        out
    }
}
