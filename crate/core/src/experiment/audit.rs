//! The shaping audit of a whole plan, as `critbox audit` prints it.
//!
//! [`audit_plan`] audits the experiment's own reward for the `base`
//! learner and each variant's reward for its own learner with
//! [`crate::reward::audit`]: under the learner's discount, or, for the
//! average-reward learner, comparing average-reward-optimal policies with
//! shaping at γ = 1 ([`objective`]).

use serde_json::{json, Value};

use crate::experiment::Plan;
use crate::learn::{Family, LearnerSetup};
use crate::reward::audit::{self, Objective};
use crate::task::TaskSpec;

/// What a learner setup optimises on a task.
pub fn objective(setup: &LearnerSetup, spec: &TaskSpec) -> Objective {
    if setup.family == Family::Differential {
        Objective::AverageReward
    } else {
        Objective::Discounted(setup.discount_on(spec))
    }
}

/// The audit of a whole config, as `critbox audit` prints it: the
/// experiment's own `reward` with the `base` learner's discount at the top
/// level, and each variant's reward with its own discount under `variants`.
pub fn audit_plan(plan: &Plan) -> Value {
    let task = plan.make_task();
    let spec = task.spec();
    let base_setup: LearnerSetup = serde_json::from_value(plan.config.base.clone()).unwrap_or_default();
    let base = objective(&base_setup, spec);
    let mut top = audit::audit_reward(task.as_ref(), &plan.config.reward, base).to_json(task.as_ref());
    let variants: Vec<Value> = plan
        .variants
        .iter()
        .map(|v| {
            let o = objective(&v.setup, spec);
            let mut a = audit::audit_reward(task.as_ref(), &v.reward, o).to_json(task.as_ref());
            a["label"] = json!(v.label);
            a
        })
        .collect();
    let o = top.as_object_mut().expect("an object");
    o.insert("task".into(), json!(spec.kind));
    o.insert("finite".into(), json!(task.model().is_some()));
    o.insert("variants".into(), Value::Array(variants));
    top
}
