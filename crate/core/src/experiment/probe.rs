//! The gradient-variance probe: what a baseline buys.
//!
//! At chosen checkpoints a job is trained to that step and its (target)
//! policy frozen. Episodes are then sampled from the frozen policy and the
//! REINFORCE gradient estimate `g = (1/M) Σ_episodes Σ_t ∇log π(a_t|s_t)
//! (G_t − b(s_t))` is formed `K` times (M episodes each) under every
//! baseline option, all options sharing the same episodes (common random
//! numbers). Per option the probe reports the trace of the covariance of
//! `g` over the K estimates and the norm of their mean. The options:
//! `none` (b = 0), `average` (the mean return of a separate warm-up batch),
//! `value` (the learner's own state-value estimate, where it keeps one) and
//! `optimal` (the variance-minimising constant b* = E[S·A] / E[‖S‖²] of
//! Greensmith, Bartlett & Baxter 2004 in trajectory form, estimated on the
//! warm-up batch, with `S = Σ_t ∇log π(a_t|s_t)` and `A = Σ_t G_t ∇log
//! π(a_t|s_t)` per episode; the learner's `"optimal"` baseline uses the same
//! [`crate::learn::reinforce::optimal_constant`]). The probe's episodes come
//! from a stream keyed by (master seed, seed index, checkpoint), not by the
//! variant, so probes of different variants at the same seed index sample
//! their frozen policies with the same random numbers. The return `G_t` is the discounted training
//! (shaped) return from t to the end of the episode; an episode cut by the
//! time limit is not bootstrapped. Scores are taken in the linear-softmax
//! parameterisation over the variant's features, `∇_{θ_b} log π(a|s) = x(s)
//! (1[a = b] − π(b|s))`, which is the learner's own gradient for every
//! linear actor; the probe refuses MLP actors and continuous actions.

use serde::Serialize;
use serde_json::Value;

use crate::approx::{build_features, ApproxConfig, Features, Obs, Sparse};
use crate::experiment::config::Plan;
use crate::experiment::runner::Job;
use crate::learn::Learner;
use crate::report::{to_value, Num};
use crate::reward::{Shaper, StepInput};
use crate::rng::{Purpose, Stream};
use crate::task::{Action, Task};

/// The baseline options, in report order.
pub const OPTIONS: [&str; 4] = ["none", "average", "value", "optimal"];

/// What the probe measured for one baseline option at one checkpoint.
#[derive(Clone, Debug, PartialEq)]
pub struct OptionResult {
    /// The option's name (see [`OPTIONS`]).
    pub baseline: &'static str,
    /// Trace of the covariance of the gradient estimate over the K estimates.
    pub trace_cov: f64,
    /// Norm of the mean gradient estimate.
    pub mean_norm: f64,
    /// The constant baseline used (`average`, `optimal`), if constant.
    pub constant: Option<f64>,
}

/// Settings of a probe.
#[derive(Clone, Debug, PartialEq)]
pub struct ProbeSettings {
    /// Steps of training before each measurement (each ≤ the budget).
    pub checkpoints: Vec<u64>,
    /// Gradient estimates per option, K in [2, 10000].
    pub estimates: u32,
    /// Episodes per estimate, M in [1, 1000].
    pub episodes: u32,
}

/// Errors of the probe.
#[derive(Clone, Debug, PartialEq)]
pub enum ProbeError {
    /// A setting is out of range: (name, message).
    Setting(&'static str, String),
    /// The variant's learner or task cannot be probed, and why.
    Unsupported(String),
}

impl std::fmt::Display for ProbeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ProbeError::Setting(n, m) => write!(f, "{n}: {m}"),
            ProbeError::Unsupported(m) => write!(f, "the probe cannot run here: {m}"),
        }
    }
}

impl std::error::Error for ProbeError {}

/// One sampled step: features, probabilities, action, training reward, value.
struct Sample {
    idx: Vec<u32>,
    val: Vec<f64>,
    probs: Vec<f64>,
    action: usize,
    ret: f64,
    value: f64,
}

/// Samples one episode of the frozen policy; returns its steps with the
/// discounted returns filled in.
#[allow(clippy::too_many_arguments)]
fn episode(
    task: &mut dyn Task,
    learner: &mut dyn Learner,
    features: &dyn Features,
    shaper: &mut Shaper,
    gamma: f64,
    rng: &mut Stream,
    feat: &mut Sparse,
) -> Vec<Sample> {
    let spec = task.spec().clone();
    let n_act = spec.actions.discrete_count().unwrap_or(0);
    let mut obs = vec![0.0; spec.state_vars.len()];
    let mut next = obs.clone();
    task.reset(rng, &mut obs);
    let mut id = task.state_id();
    let mut out: Vec<Sample> = Vec::new();
    let mut rewards = Vec::new();
    for t in 0..spec.max_steps {
        let o = Obs { values: &obs, id };
        let mut probs = vec![0.0; n_act];
        learner.probabilities(o, &mut probs);
        let value = learner.state_value(o).unwrap_or(f64::NAN);
        features.compute(o, feat);
        let a = rng.categorical(&probs);
        let step = task.step(Action::Index(a), rng, &mut next);
        let r = shaper.reward(&StepInput {
            obs: &obs,
            action: Action::Index(a),
            next: &next,
            base: step.reward,
            terminal: step.terminated,
            t: u64::from(t),
        });
        out.push(Sample {
            idx: feat.idx().to_vec(),
            val: feat.val().to_vec(),
            probs,
            action: a,
            ret: 0.0,
            value,
        });
        rewards.push(r);
        if step.terminated {
            break;
        }
        std::mem::swap(&mut obs, &mut next);
        id = task.state_id();
    }
    let mut g = 0.0;
    for t in (0..out.len()).rev() {
        g = rewards[t] + gamma * g;
        out[t].ret = g;
    }
    out
}

/// Adds `coef · score(sample)` to a dense gradient vector.
fn add_score(g: &mut [f64], s: &Sample, dim: usize, coef: f64) {
    for (b, &p) in s.probs.iter().enumerate() {
        let c = coef * (if s.action == b { 1.0 } else { 0.0 } - p);
        if c != 0.0 {
            for (&i, &v) in s.idx.iter().zip(&s.val) {
                g[b * dim + i as usize] += c * v;
            }
        }
    }
}

/// Measures one frozen learner: K estimates of M episodes under each option.
#[allow(clippy::too_many_arguments)]
pub fn measure(
    task: &mut dyn Task,
    learner: &mut dyn Learner,
    features: &dyn Features,
    shaper: &mut Shaper,
    gamma: f64,
    estimates: u32,
    episodes: u32,
    rng: &mut Stream,
) -> Vec<OptionResult> {
    let n_act = task.spec().actions.discrete_count().unwrap_or(0);
    let dim = features.dim();
    let mut feat = Sparse::with_capacity(features.max_active());
    // Warm-up batch for the constant baselines: per episode S = Σ score and
    // A = Σ G · score, whose products S·A and S·S estimate Greensmith's b*.
    let len = dim * n_act;
    let (mut sum_g, mut n_g, mut sum_sa, mut sum_ss) = (0.0, 0.0, 0.0, 0.0);
    let (mut s_vec, mut a_vec) = (vec![0.0; len], vec![0.0; len]);
    let warm = (estimates * episodes).max(20);
    for _ in 0..warm {
        s_vec.iter_mut().for_each(|x| *x = 0.0);
        a_vec.iter_mut().for_each(|x| *x = 0.0);
        for s in episode(task, learner, features, shaper, gamma, rng, &mut feat) {
            sum_g += s.ret;
            n_g += 1.0;
            add_score(&mut s_vec, &s, dim, 1.0);
            add_score(&mut a_vec, &s, dim, s.ret);
        }
        sum_sa += s_vec.iter().zip(&a_vec).map(|(x, y)| x * y).sum::<f64>();
        sum_ss += s_vec.iter().map(|x| x * x).sum::<f64>();
    }
    let average = if n_g > 0.0 { sum_g / n_g } else { 0.0 };
    let w = f64::from(warm);
    let optimal = crate::learn::reinforce::optimal_constant(sum_sa / w, sum_ss / w).unwrap_or(average);
    let mut sums = vec![vec![0.0; len]; OPTIONS.len()];
    let mut sums_sq = vec![vec![0.0; len]; OPTIONS.len()];
    let mut g = vec![vec![0.0; len]; OPTIONS.len()];
    let mut has_value = true;
    for _ in 0..estimates {
        for gi in g.iter_mut() {
            gi.iter_mut().for_each(|x| *x = 0.0);
        }
        for _ in 0..episodes {
            for s in episode(task, learner, features, shaper, gamma, rng, &mut feat) {
                has_value &= s.value.is_finite();
                let bases = [0.0, average, s.value, optimal];
                for (o, b) in bases.iter().enumerate() {
                    if b.is_finite() {
                        add_score(&mut g[o], &s, dim, (s.ret - b) / f64::from(episodes));
                    }
                }
            }
        }
        for o in 0..OPTIONS.len() {
            for j in 0..len {
                sums[o][j] += g[o][j];
                sums_sq[o][j] += g[o][j] * g[o][j];
            }
        }
    }
    let k = f64::from(estimates);
    (0..OPTIONS.len())
        .filter(|&o| o != 2 || has_value)
        .map(|o| {
            let mut trace = 0.0;
            let mut norm_sq = 0.0;
            for j in 0..len {
                let m = sums[o][j] / k;
                trace += ((sums_sq[o][j] - k * m * m) / (k - 1.0)).max(0.0);
                norm_sq += m * m;
            }
            OptionResult {
                baseline: OPTIONS[o],
                trace_cov: trace,
                mean_norm: norm_sq.sqrt(),
                constant: match o {
                    1 => Some(average),
                    3 => Some(optimal),
                    _ => None,
                },
            }
        })
        .collect()
}

/// The probe's report: `{variant, seed, estimates, episodes, checkpoints:
/// [{step, options: [{baseline, trace_cov, mean_norm, constant}]}]}`.
#[derive(Clone, Debug, Serialize)]
pub struct ProbeReport {
    /// The variant's label.
    pub variant: String,
    /// The seed index.
    pub seed: usize,
    /// Gradient estimates per option (K).
    pub estimates: u32,
    /// Episodes per estimate (M).
    pub episodes: u32,
    /// One entry per checkpoint, in increasing step order.
    pub checkpoints: Vec<ProbeCheckpoint>,
}

/// What the probe measured at one checkpoint.
#[derive(Clone, Debug, Serialize)]
pub struct ProbeCheckpoint {
    /// Environment steps trained before the measurement.
    pub step: u64,
    /// One entry per baseline option, in [`OPTIONS`] order.
    pub options: Vec<OptionReport>,
}

/// One baseline option at one checkpoint, numbers finite or `null`.
#[derive(Clone, Debug, Serialize)]
pub struct OptionReport {
    /// The option's name (see [`OPTIONS`]).
    pub baseline: &'static str,
    /// Trace of the covariance of the gradient estimate.
    pub trace_cov: Num,
    /// Norm of the mean gradient estimate.
    pub mean_norm: Num,
    /// The constant baseline used, `null` when the option is not constant.
    pub constant: Option<Num>,
}

impl From<&OptionResult> for OptionReport {
    fn from(r: &OptionResult) -> Self {
        OptionReport {
            baseline: r.baseline,
            trace_cov: Num(r.trace_cov),
            mean_norm: Num(r.mean_norm),
            constant: r.constant.map(Num),
        }
    }
}

/// Runs the probe on job (`variant`, `seed`) of a plan; returns its
/// [`ProbeReport`] as JSON.
pub fn probe(plan: &Plan, variant: usize, seed: usize, s: &ProbeSettings) -> Result<Value, ProbeError> {
    probe_report(plan, variant, seed, s).map(|r| to_value(&r))
}

/// Runs the probe on job (`variant`, `seed`) of a plan.
pub fn probe_report(
    plan: &Plan,
    variant: usize,
    seed: usize,
    s: &ProbeSettings,
) -> Result<ProbeReport, ProbeError> {
    let cfg = &plan.config;
    if variant >= plan.variants.len() {
        return Err(ProbeError::Setting(
            "variant",
            format!("{variant} is out of range ({} variants)", plan.variants.len()),
        ));
    }
    if seed >= cfg.seeds as usize {
        return Err(ProbeError::Setting("seed", format!("{seed} is out of range ({} seeds)", cfg.seeds)));
    }
    if !(2..=10_000).contains(&s.estimates) {
        return Err(ProbeError::Setting("estimates", format!("must be in [2, 10000], got {}", s.estimates)));
    }
    if !(1..=1000).contains(&s.episodes) {
        return Err(ProbeError::Setting("episodes", format!("must be in [1, 1000], got {}", s.episodes)));
    }
    if s.checkpoints.is_empty() || s.checkpoints.len() > 20 {
        return Err(ProbeError::Setting("checkpoints", "give 1 to 20 step counts".into()));
    }
    if let Some(c) = s.checkpoints.iter().find(|&&c| c > cfg.steps) {
        return Err(ProbeError::Setting(
            "checkpoints",
            format!("{c} is beyond the step budget {}", cfg.steps),
        ));
    }
    let spec = &plan.spec;
    if spec.actions.discrete_count().is_none() {
        return Err(ProbeError::Unsupported(
            "it measures softmax policies; this task has continuous actions".into(),
        ));
    }
    if spec.continuing {
        return Err(ProbeError::Unsupported("it needs episodes; this task is continuing".into()));
    }
    // A study's scored job runs the variant's chosen point.
    let scored = crate::experiment::scored_plan(plan);
    let plan = &scored;
    let id = plan.fresh_job_id(variant, seed);
    let point = plan.job_spec(id).expect("a scored plan builds its fresh jobs").point;
    let (setup, reward) = (plan.setup_of(variant, point), plan.reward_of(variant, point));
    let feats = match setup.actor_or_default() {
        ApproxConfig::Linear { features } => features.unwrap_or_else(|| setup.features_or_default(spec)),
        _ => {
            return Err(ProbeError::Unsupported(
                "it needs a linear actor; this variant's actor is an MLP".into(),
            ))
        }
    };
    let features = build_features(&feats, spec).map_err(|e| ProbeError::Unsupported(e.to_string()))?;
    let gamma = setup.shaping_discount(spec);
    let mut shaper = Shaper::new(reward, spec, gamma)
        .map_err(|_| ProbeError::Unsupported("the variant's reward does not compile".into()))?;
    let mut checkpoints = s.checkpoints.clone();
    checkpoints.sort_unstable();
    checkpoints.dedup();
    let mut job = Job::new(plan, id);
    let mut out = Vec::new();
    for &c in &checkpoints {
        job.advance(c - job.steps_done().min(c));
        let mut task = plan.make_task();
        let mut rng = Stream::derive(cfg.master_seed, Purpose::Other, seed as u64, c);
        let results = measure(
            task.as_mut(),
            job.learner_mut(),
            features.as_ref(),
            &mut shaper,
            gamma,
            s.estimates,
            s.episodes,
            &mut rng,
        );
        out.push(ProbeCheckpoint {
            step: job.steps_done(),
            options: results.iter().map(OptionReport::from).collect(),
        });
    }
    Ok(ProbeReport {
        variant: plan.variants[variant].label.clone(),
        seed,
        estimates: s.estimates,
        episodes: s.episodes,
        checkpoints: out,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::approx::{Features, Sparse, Tabular};
    use crate::learn::{ActionBuf, LearnError, StepDiag, Transition};
    use crate::reward::RewardConfig;
    use crate::task::finite::FiniteTask;
    use crate::task::{FiniteModel, Outcome};

    /// A frozen policy with fixed probabilities (test only).
    struct Fixed(Vec<f64>);
    impl Learner for Fixed {
        fn act(&mut self, _: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
            *out = ActionBuf::Index(rng.categorical(&self.0));
        }
        fn learn(&mut self, _: &Transition<'_>, _: &mut Stream) -> Result<StepDiag, LearnError> {
            Ok(StepDiag::default())
        }
        fn act_learned(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
            self.act(obs, rng, out);
        }
        fn best_action(&mut self, _: Obs<'_>, out: &mut ActionBuf) {
            *out = ActionBuf::Index(0);
        }
        fn probabilities(&mut self, _: Obs<'_>, out: &mut [f64]) -> bool {
            out.copy_from_slice(&self.0);
            true
        }
    }

    #[test]
    fn bernoulli_bandit_variances_match_greensmith() {
        // Greensmith, Bartlett & Baxter (2004), JMLR 5: Var(b) = Var(b*) +
        // E‖s‖² (b − b*)². Derived check (references.md): policy P(a = 1) = 0.8,
        // R(1) = 1, R(0) = 0 gives b* = 0.2 and per-sample variances 0 (b = b*),
        // 0.0064 (b = 0) and 0.0576 (b = 0.8 = the mean return), mean gradient
        // 0.16, for the scalar logit. A two-action softmax with one feature has
        // the score (a − p)(−1, 1): every variance doubles and the mean norm is
        // 0.16 √2. Here the `average` option is the worst, not `none`: the
        // probe must follow the theory, not a rule of thumb.
        let outcome = |r: f64| vec![Outcome { next: 1, prob: 1.0, reward: r, terminal: true }];
        let model = FiniteModel {
            n_states: 2,
            n_actions: 2,
            start: vec![1.0, 0.0],
            terminal: vec![false, true],
            outcomes: vec![vec![outcome(0.0), outcome(1.0)], vec![vec![], vec![]]],
        };
        let mut task = FiniteTask::new(model, "bandit", 1.0, 10, false).unwrap();
        let spec = task.spec().clone();
        let features = Tabular::new(2);
        let mut shaper = Shaper::new(&RewardConfig::default(), &spec, 1.0).unwrap();
        let mut learner = Fixed(vec![0.2, 0.8]);
        let mut rng = Stream::from_seed(11);
        let k = 4000;
        let r = measure(&mut task, &mut learner, &features, &mut shaper, 1.0, k, 1, &mut rng);
        let by = |name: &str| r.iter().find(|o| o.baseline == name).unwrap().clone();
        assert!(r.iter().all(|o| o.baseline != "value"), "no critic, no value option");
        let (none, avg, opt) = (by("none"), by("average"), by("optimal"));
        assert!((opt.constant.unwrap() - 0.2).abs() < 0.02, "b* estimate {:?}", opt.constant);
        assert!((avg.constant.unwrap() - 0.8).abs() < 0.02);
        assert!((none.trace_cov - 2.0 * 0.0064).abs() < 0.15 * 2.0 * 0.0064, "{}", none.trace_cov);
        assert!((avg.trace_cov - 2.0 * 0.0576).abs() < 0.1 * 2.0 * 0.0576, "{}", avg.trace_cov);
        assert!(opt.trace_cov < 0.15 * none.trace_cov, "{} vs {}", opt.trace_cov, none.trace_cov);
        for o in [&none, &avg, &opt] {
            assert!((o.mean_norm - 0.16 * 2f64.sqrt()).abs() < 0.02, "{}: {}", o.baseline, o.mean_norm);
        }
    }

    /// One feature, the same in every state (the agent cannot tell states apart).
    struct Constant;
    impl Features for Constant {
        fn dim(&self) -> usize {
            1
        }
        fn max_active(&self) -> usize {
            1
        }
        fn compute(&self, _: Obs<'_>, out: &mut Sparse) {
            out.clear();
            out.push(0, 1.0);
        }
    }

    #[test]
    fn the_optimal_constant_counts_the_products_between_steps() {
        // Greensmith, Bartlett & Baxter (2004), trajectory form: b* = E[S·A]/E[‖S‖²]
        // with S = Σ_t s_t, A = Σ_t G_t s_t (s_t the score). Derived by hand for a
        // two-step task in which the second step pays 1 when it repeats the first
        // action (γ = 1, π = ½ everywhere, one shared feature): ‖s_t‖² = ½,
        // s_1·s_2 = ±½, so S = 0 when the actions differ and ‖S‖² = 2, G = 1 when
        // they agree. Hence E[S·A] = E[‖S‖²] = 1 and b* = 1, at which every
        // episode's estimate (G − b)S is exactly 0: zero variance. The per-step
        // weighting Σ E[‖s_t‖² G_t] / Σ E[‖s_t‖²] would give E[G] = ½ instead,
        // with variance E[(G − ½)² ‖S‖²] = ¼ per episode and coordinate pair.
        let to =
            |next: usize, reward: f64, terminal: bool| vec![Outcome { next, prob: 1.0, reward, terminal }];
        let model = FiniteModel {
            n_states: 4,
            n_actions: 2,
            start: vec![1.0, 0.0, 0.0, 0.0],
            terminal: vec![false, false, false, true],
            outcomes: vec![
                vec![to(1, 0.0, false), to(2, 0.0, false)],
                vec![to(3, 1.0, true), to(3, 0.0, true)],
                vec![to(3, 0.0, true), to(3, 1.0, true)],
                vec![vec![], vec![]],
            ],
        };
        let mut task = FiniteTask::new(model, "repeat", 1.0, 10, false).unwrap();
        let spec = task.spec().clone();
        let mut shaper = Shaper::new(&RewardConfig::default(), &spec, 1.0).unwrap();
        let mut learner = Fixed(vec![0.5, 0.5]);
        let r =
            measure(&mut task, &mut learner, &Constant, &mut shaper, 1.0, 500, 2, &mut Stream::from_seed(4));
        let by = |name: &str| r.iter().find(|o| o.baseline == name).unwrap().clone();
        let (none, avg, opt) = (by("none"), by("average"), by("optimal"));
        assert_eq!(opt.constant, Some(1.0));
        assert!(opt.trace_cov < 1e-20, "b* removes all variance here: {}", opt.trace_cov);
        assert!((avg.constant.unwrap() - 0.5).abs() < 0.05, "{:?}", avg.constant);
        // Per episode, the trace of Cov((G − b)S) is E[(G − b)²‖S‖²] (E[S] = 0):
        // (1 − b)² with M = 2 episodes per estimate halving it.
        assert!((avg.trace_cov - 0.25 / 2.0).abs() < 0.03, "{}", avg.trace_cov);
        assert!((none.trace_cov - 0.5).abs() < 0.1, "{}", none.trace_cov);
    }

    #[test]
    fn probes_of_different_variants_share_their_episodes() {
        // Common random numbers (common practice, no source): two variants probed
        // at the same seed index before any learning hold the same policy (linear
        // actors start at zero; their training draws differ by variant) and must
        // measure it on the same episodes, so their numbers agree exactly.
        let plan = crate::experiment::parse(
            r#"{"schema": 1, "task": {"kind": "corridor"}, "steps": 3000, "seeds": 2,
                "base": {"family": "reinforce", "actor_step": 0.003},
                "variants": [{"label": "one"}, {"label": "two", "learner": {"baseline": "average"}}]}"#,
        )
        .unwrap();
        let s = ProbeSettings { checkpoints: vec![0], estimates: 20, episodes: 3 };
        let (a, b) = (probe(&plan, 0, 1, &s).unwrap(), probe(&plan, 1, 1, &s).unwrap());
        assert_eq!(a["checkpoints"], b["checkpoints"]);
        assert_ne!(a["checkpoints"], probe(&plan, 0, 0, &s).unwrap()["checkpoints"]);
    }

    #[test]
    fn probe_runs_on_a_plan_and_refuses_what_it_cannot_measure() {
        let plan = crate::experiment::parse(
            r#"{"schema": 1, "task": {"kind": "corridor"}, "steps": 2000, "seeds": 2,
                "variants": [{"label": "A2C"}]}"#,
        )
        .unwrap();
        let s = ProbeSettings { checkpoints: vec![0, 2000], estimates: 10, episodes: 2 };
        let v = probe(&plan, 0, 1, &s).unwrap();
        let cps = v["checkpoints"].as_array().unwrap();
        assert_eq!(cps.len(), 2);
        assert_eq!(cps[1]["step"], 2000);
        let names: Vec<&str> =
            cps[0]["options"].as_array().unwrap().iter().map(|o| o["baseline"].as_str().unwrap()).collect();
        assert_eq!(names, ["none", "average", "value", "optimal"]);
        assert!(probe(&plan, 0, 5, &s).unwrap_err().to_string().starts_with("seed: 5 is out of range"));
        let far = ProbeSettings { checkpoints: vec![5000], ..s.clone() };
        assert!(probe(&plan, 0, 0, &far).unwrap_err().to_string().contains("beyond the step budget"));
        let plan = crate::experiment::parse(
            r#"{"schema": 1, "task": {"kind": "lqr"}, "steps": 100, "seeds": 1,
                "variants": [{"label": "DPG", "learner": {"family": "deterministic"}}]}"#,
        )
        .unwrap();
        let s = ProbeSettings { checkpoints: vec![0], estimates: 10, episodes: 2 };
        assert!(probe(&plan, 0, 0, &s).unwrap_err().to_string().contains("continuous actions"));
    }
}
