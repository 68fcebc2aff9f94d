//! The shaping audit of a whole plan, as `critbox audit` prints it.
//!
//! [`audit_plan`] audits the experiment's own reward for the `base`
//! learner and each variant's reward for its own learner with
//! [`crate::reward::audit`]: under the learner's discount, or, for the
//! average-reward learner, comparing average-reward-optimal policies with
//! shaping at γ = 1 ([`objective`]).

use serde::Serialize;
use serde_json::Value;

use crate::experiment::config::read_json;
use crate::experiment::Plan;
use crate::learn::{Family, LearnerSetup};
use crate::report::to_value;
use crate::reward::audit::{self, AuditReport, Objective};
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
    to_value(&plan_audit(plan))
}

/// The printed audit of a whole config: the base reward's [`AuditReport`]
/// with the task's kind, whether it is finite, and each variant's audit.
#[derive(Clone, Debug, Serialize)]
pub struct PlanAudit {
    /// The audit of the experiment's own reward for the `base` learner.
    #[serde(flatten)]
    pub base: AuditReport,
    /// The task's kind.
    pub task: &'static str,
    /// Whether the task has an exact model.
    pub finite: bool,
    /// Each variant's audit, in order.
    pub variants: Vec<VariantAudit>,
}

/// One variant's audit: its label beside its [`AuditReport`].
#[derive(Clone, Debug, Serialize)]
pub struct VariantAudit {
    /// The audit of the variant's reward for its own learner.
    #[serde(flatten)]
    pub audit: AuditReport,
    /// The variant's label.
    pub label: String,
}

/// [`audit_plan`] as its typed report.
pub fn plan_audit(plan: &Plan) -> PlanAudit {
    let task = plan.make_task();
    let spec = task.spec();
    let base_setup: LearnerSetup = read_json(&plan.config.base, "").unwrap_or_default();
    let base = objective(&base_setup, spec);
    let variants = plan
        .variants
        .iter()
        .map(|v| {
            let o = objective(&v.setup, spec);
            VariantAudit {
                audit: audit::audit_reward(task.as_ref(), &v.reward, o).report(task.as_ref()),
                label: v.label.clone(),
            }
        })
        .collect();
    PlanAudit {
        base: audit::audit_reward(task.as_ref(), &plan.config.reward, base).report(task.as_ref()),
        task: spec.kind,
        finite: task.model().is_some(),
        variants,
    }
}
