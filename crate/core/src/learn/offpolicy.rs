//! Off-policy actor-critic with per-decision importance weights.
//!
//! After Degris, White & Sutton (2012), "Off-policy actor-critic", ICML, in
//! its one-step form (λ = 0, a TD(0) critic in place of their GTD(λ)): the
//! agent acts with a behaviour policy `b` while it learns a target policy
//! `π`. Each transition is weighted by `ρ = π(a|s) / b(a|s)` (for continuous
//! actions the ratio of densities, with the tanh-squash correction of both
//! where it applies), optionally cut at `rho_cap` (`ρ̄ = min(ρ, cap)`, as in
//! Retrace and V-trace; Munos et al. 2016, Espeholt et al. 2018). Critic:
//! `w ← w + α_c ρ̄ δ ∇V(s)` with `δ = r + γ V(s') − V(s)`; actor:
//! `θ ← θ + α_a ρ̄ δ ∇ log π(a|s)` (plus an optional, unweighted entropy
//! bonus). Their gradient theorem holds only for tabular policies (Imani,
//! Graves & White 2018); with features the update follows the excursion
//! objective. Behaviours ([`BehaviourKind`]): uniform over the actions (or
//! the action box), `(1 − ε) π + ε · uniform`, or a frozen copy of `π`
//! refreshed every `snapshot_every` learning steps. Each step reports `ρ`
//! before the cap; the runner turns the weights into per-bin statistics and
//! the effective sample size `(Σρ)² / Σρ²` (Kong 1992).
//!
//! The curves of an off-policy job show the returns of the episodes it ran,
//! that is, of the behaviour policy.

use super::ActorParams;
use super::{
    entropy_and_ascend, finite, stochastic_actor, value_critic, BehaviourKind, LearnError, Learner,
    LearnerSetup, StepDiag, Transition,
};
use crate::approx::FeaturePool;
use crate::approx::Obs;
use crate::optim::Trainable;
use crate::policy::StochasticPolicy;
use crate::rng::Stream;
use crate::task::ActionBuf;
use crate::task::{Action, ActionSpace, TaskSpec};

/// The importance weight of an action from log-probabilities under the
/// target and the behaviour, and the cap: returns `(ρ, min(ρ, cap), cut)`.
pub fn importance_weight(log_pi: f64, log_b: f64, cap: Option<f64>) -> (f64, f64, bool) {
    let rho = libm::exp(log_pi - log_b);
    match cap {
        Some(c) if rho > c => (rho, c, true),
        _ => (rho, rho, false),
    }
}

/// The off-policy actor-critic.
pub struct OffPolicy {
    target: StochasticPolicy,
    snapshot: Option<StochasticPolicy>,
    critic: Trainable,
    kind: BehaviourKind,
    epsilon: f64,
    every: u64,
    cap: Option<f64>,
    gamma: f64,
    beta: f64,
    until_refresh: u64,
    n_actions: usize,
    low: Vec<f64>,
    high: Vec<f64>,
    log_volume: f64,
    probs: Vec<f64>,
    copy: Vec<f64>,
    sampled: [Sampled; 2],
    newest: usize,
}

/// An action the behaviour sampled, with its log-probability at that moment.
struct Sampled {
    valid: bool,
    obs: Vec<f64>,
    id: Option<usize>,
    index: usize,
    vector: Vec<f64>,
    log_b: f64,
}

impl Sampled {
    fn new(n_obs: usize, dims: usize) -> Self {
        Sampled {
            valid: false,
            obs: vec![0.0; n_obs],
            id: None,
            index: 0,
            vector: vec![0.0; dims],
            log_b: 0.0,
        }
    }

    fn matches(&self, obs: Obs<'_>, action: Action<'_>) -> bool {
        let same = |a: &[f64], b: &[f64]| {
            a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
        };
        self.valid
            && self.id == obs.id
            && same(&self.obs, obs.values)
            && match action {
                Action::Index(i) => i == self.index,
                Action::Vector(v) => same(&self.vector, v),
            }
    }
}

impl OffPolicy {
    /// A learner for a checked setup.
    pub fn new(setup: &LearnerSetup, spec: &TaskSpec, rng: &mut Stream) -> Self {
        let mut pool = FeaturePool::default();
        let target = stochastic_actor(&mut pool, setup, spec, rng);
        let critic = value_critic(&mut pool, setup, spec, rng);
        let snapshot = (setup.behaviour.kind == BehaviourKind::Snapshot).then(|| {
            // Same shape; the weights are copied from the target below.
            stochastic_actor(&mut pool, setup, spec, &mut rng.clone())
        });
        let (n_actions, low, high) = match &spec.actions {
            ActionSpace::Discrete(n) => (n.len(), Vec::new(), Vec::new()),
            ActionSpace::Continuous { low, high, .. } => (0, low.clone(), high.clone()),
        };
        let log_volume = low.iter().zip(&high).map(|(l, h)| libm::log(h - l)).sum();
        let dims = low.len();
        let mut me = OffPolicy {
            target,
            snapshot,
            critic,
            kind: setup.behaviour.kind,
            epsilon: setup.behaviour.epsilon,
            every: setup.behaviour.snapshot_every,
            cap: setup.rho_cap,
            gamma: setup.discount_on(spec),
            beta: setup.entropy,
            until_refresh: setup.behaviour.snapshot_every,
            probs: vec![0.0; n_actions],
            n_actions,
            low,
            high,
            log_volume,
            copy: Vec::new(),
            sampled: [Sampled::new(spec.state_vars.len(), dims), Sampled::new(spec.state_vars.len(), dims)],
            newest: 0,
        };
        me.refresh_snapshot();
        me
    }

    fn refresh_snapshot(&mut self) {
        if let Some(s) = &mut self.snapshot {
            self.target.copy_params_into(&mut self.copy);
            s.set_params(&self.copy);
        }
    }

    /// `log b(a|s)` of the behaviour policy.
    pub fn behaviour_log_prob(&mut self, obs: Obs<'_>, action: Action<'_>) -> f64 {
        let discrete = self.n_actions > 0;
        let log_uniform = if discrete { -libm::log(self.n_actions as f64) } else { -self.log_volume };
        match self.kind {
            BehaviourKind::Uniform => log_uniform,
            BehaviourKind::EpsilonMix => {
                let log_pi = self.target.log_prob(obs, action);
                let mixed = (1.0 - self.epsilon) * libm::exp(log_pi) + self.epsilon * libm::exp(log_uniform);
                libm::log(mixed)
            }
            BehaviourKind::Snapshot => {
                self.snapshot.as_mut().expect("a snapshot behaviour has a snapshot").log_prob(obs, action)
            }
        }
    }

    /// Draws an action from the behaviour policy.
    fn sample(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        match (self.kind, out) {
            (BehaviourKind::Snapshot, out) => {
                self.snapshot.as_mut().expect("a snapshot behaviour has a snapshot").act(obs, rng, out)
            }
            (BehaviourKind::Uniform, ActionBuf::Index(i)) => *i = rng.below(self.n_actions),
            (BehaviourKind::Uniform, ActionBuf::Vector(a)) => {
                for j in 0..a.len() {
                    a[j] = rng.uniform_in(self.low[j], self.high[j]);
                }
            }
            (BehaviourKind::EpsilonMix, ActionBuf::Index(i)) => {
                let eps = self.epsilon;
                let n = self.n_actions as f64;
                let p = self.target.probabilities(obs);
                for (b, &q) in self.probs.iter_mut().zip(p) {
                    *b = (1.0 - eps) * q + eps / n;
                }
                *i = rng.categorical(&self.probs);
            }
            (BehaviourKind::EpsilonMix, out @ ActionBuf::Vector(_)) => {
                if rng.uniform() < self.epsilon {
                    let ActionBuf::Vector(a) = out else { unreachable!() };
                    for j in 0..a.len() {
                        a[j] = rng.uniform_in(self.low[j], self.high[j]);
                    }
                } else {
                    self.target.act(obs, rng, out);
                }
            }
        }
    }

    /// The update of one transition given `log π(a|s)` and `log b(a|s)`.
    fn learn_weighted(
        &mut self,
        t: &Transition<'_>,
        log_pi: f64,
        log_b: f64,
    ) -> Result<StepDiag, LearnError> {
        let (rho, w, cut) = importance_weight(log_pi, log_b, self.cap);
        finite("importance weight", w)?;
        let v = self.critic.eval(t.obs)[0];
        let vn = if t.terminated { 0.0 } else { self.critic.eval(t.next)[0] };
        let delta = finite("TD error", t.reward + self.gamma * vn - v)?;
        let critic_norm = self.critic.ascend(t.obs, &[1.0], w * delta);
        let (entropy, actor_norm) =
            entropy_and_ascend(&mut self.target, t.obs, t.action, w * delta, self.beta)?;
        self.until_refresh -= 1;
        if self.until_refresh == 0 {
            self.until_refresh = self.every;
            self.refresh_snapshot();
        }
        Ok(StepDiag {
            td_error: delta,
            entropy,
            actor_grad_norm: actor_norm,
            critic_grad_norm: critic_norm,
            weight: Some(rho),
            weight_truncated: cut,
        })
    }

    /// `log π(a|s)` of the target policy.
    pub fn target_log_prob(&mut self, obs: Obs<'_>, action: Action<'_>) -> f64 {
        self.target.log_prob(obs, action)
    }
}

impl Learner for OffPolicy {
    fn act(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.sample(obs, rng, out);
        // Remember log b(a|s) now: by the time this action is learned from, the
        // target (inside an ε-mix) or the snapshot may have changed.
        let log_b = self.behaviour_log_prob(obs, out.as_action());
        let slot = 1 - self.newest;
        let m = &mut self.sampled[slot];
        m.valid = true;
        m.obs.copy_from_slice(obs.values);
        m.id = obs.id;
        match out {
            ActionBuf::Index(i) => m.index = *i,
            ActionBuf::Vector(v) => m.vector.copy_from_slice(v),
        }
        m.log_b = log_b;
        self.newest = slot;
    }

    fn learn(&mut self, t: &Transition<'_>, _rng: &mut Stream) -> Result<StepDiag, LearnError> {
        let log_pi = self.target.log_prob(t.obs, t.action);
        let log_b = match self.sampled.iter().find(|m| m.matches(t.obs, t.action)) {
            Some(m) => m.log_b,
            // A transition this learner did not sample (driven from outside).
            None => self.behaviour_log_prob(t.obs, t.action),
        };
        self.learn_weighted(t, log_pi, log_b)
    }

    fn act_learned(&mut self, obs: Obs<'_>, rng: &mut Stream, out: &mut ActionBuf) {
        self.target.sample(obs, rng, out);
    }

    fn best_action(&mut self, obs: Obs<'_>, out: &mut ActionBuf) {
        self.target.best_action(obs, out);
    }

    fn state_value(&mut self, obs: Obs<'_>) -> Option<f64> {
        Some(self.critic.eval(obs)[0])
    }

    fn actor_params(&self) -> Option<ActorParams<'_>> {
        Some(self.target.actor_params())
    }

    fn probabilities(&mut self, obs: Obs<'_>, out: &mut [f64]) -> bool {
        self.target.write_probabilities(obs, out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::approx::FeatureConfig;
    use crate::exact::{evaluate, policy_gradient_tabular, q_values, softmax_policy};
    use crate::learn::{BehaviourConfig, LearnerSetup};
    use crate::task::finite::{random_mdp, FiniteTask};
    use crate::task::Task;

    #[test]
    fn importance_weighted_gradient_is_unbiased() {
        // Per-decision importance sampling (Precup, Sutton & Singh 2000, Section
        // 3) of the policy gradient theorem in trajectory form (Sutton, McAllester,
        // Singh & Mansour 2000, Theorem 1): under the behaviour b,
        // E_b[Σ_t γ^t ρ_0⋯ρ_t ∇ log π(a_t|s_t) (Q(s_t, a_t) − V(s_t))] = ∇J(π).
        // Episodes come from this learner's own ε-mix behaviour (ε = 0.5) and its
        // weights; the exact gradient from exact::policy_gradient_tabular. Each
        // component's sample mean must lie within 4 standard errors of it.
        let gamma = 0.9;
        let model = random_mdp(3, 2, 5, false);
        let mut task = FiniteTask::new(model.clone(), "random_mdp", gamma, 200, false).unwrap();
        let spec = task.spec().clone();
        let setup = LearnerSetup {
            family: crate::learn::Family::OffPolicy,
            features: Some(FeatureConfig::Tabular),
            behaviour: BehaviourConfig {
                kind: BehaviourKind::EpsilonMix,
                epsilon: 0.5,
                snapshot_every: 1000,
            },
            ..LearnerSetup::default()
        };
        let mut learner = OffPolicy::new(&setup, &spec, &mut Stream::from_seed(0));
        let (n, na) = (model.n_states, model.n_actions);
        let mut theta = vec![0.0; n * na];
        for (i, w) in learner.target.net.net.params_mut().iter_mut().enumerate() {
            *w = 1.5 * libm::sin(1.0 + 2.3 * i as f64);
            // Approximator layout: weight (action a, state s) at a * n + s.
            theta[(i % n) * na + i / n] = *w;
        }
        let exact = policy_gradient_tabular(&model, &theta, gamma).unwrap();
        let pi = softmax_policy(&model, &theta);
        let v = evaluate(&model, &pi, gamma).unwrap();
        let q = q_values(&model, &v, gamma);

        let np = learner.target.n_params();
        let mut g = crate::approx::Grad::new(np);
        let (mut sum, mut sq) = (vec![0.0; np], vec![0.0; np]);
        let mut rng = Stream::from_seed(42);
        let mut obs = [0.0];
        let mut next = [0.0];
        let mut act = ActionBuf::Index(0);
        let episodes = 40_000;
        for _ in 0..episodes {
            task.reset(&mut rng, &mut obs);
            let (mut disc, mut prod) = (1.0, 1.0);
            for _ in 0..200 {
                let s = task.state_id().unwrap();
                let o = Obs { values: &obs, id: Some(s) };
                learner.act(o, &mut rng, &mut act);
                let a = act.index();
                let (_, w, _) = importance_weight(
                    learner.target_log_prob(o, Action::Index(a)),
                    learner.behaviour_log_prob(o, Action::Index(a)),
                    None,
                );
                prod *= w;
                let adv = q[s * na + a] - v[s];
                learner.target.accumulate_score(o, Action::Index(a), disc * prod * adv, &mut g);
                disc *= gamma;
                let st = task.step(Action::Index(a), &mut rng, &mut next);
                obs = next;
                if st.terminated {
                    break;
                }
            }
            for i in 0..np {
                sum[i] += g.values()[i];
                sq[i] += g.values()[i] * g.values()[i];
            }
            g.clear();
        }
        let nf = episodes as f64;
        let scale = exact.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        for i in 0..np {
            let (s, a) = (i % n, i / n);
            if model.terminal[s] {
                continue;
            }
            let mean = sum[i] / nf;
            let se = f64::sqrt((sq[i] / nf - mean * mean) / nf);
            let want = exact[s * na + a];
            assert!((mean - want).abs() < 4.0 * se, "state {s} action {a}: {mean} ± {se} vs exact {want}");
            assert!(se < 0.1 * scale, "the check has power: se {se} vs gradient scale {scale}");
        }
    }

    #[test]
    fn weights_and_cap() {
        // Definition (Degris, White & Sutton 2012, Section 2): ρ = π(a|s)/b(a|s);
        // truncation min(ρ, c) (Munos et al. 2016, Section 3).
        let (rho, w, cut) = importance_weight(libm::log(0.6), libm::log(0.2), Some(2.0));
        assert!((rho - 3.0).abs() < 1e-12 && w == 2.0 && cut);
        let (rho, w, cut) = importance_weight(libm::log(0.1), libm::log(0.2), Some(2.0));
        assert!((rho - 0.5).abs() < 1e-12 && w == rho && !cut);
    }
}
