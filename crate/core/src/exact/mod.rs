//! Dynamic programming on finite models.
//!
//! Works on a task's [`FiniteModel`]: [`evaluate`] solves the Bellman
//! equation of a fixed stochastic policy exactly (a dense linear solve),
//! [`value_iteration`] finds optimal values and the greedy actions, and
//! [`q_values`] gives action values from state values;
//! [`relative_value_iteration`] solves the average-reward optimality
//! equation of a continuing model. Terminal states have
//! value 0. With γ = 1 the model must be proper (every policy considered
//! reaches a terminal state) or the solve reports it as singular.
//! [`gradient`] adds the exact objective and policy gradient of softmax
//! policies (policy gradient theorem), the discounted state visitation, and
//! the stationary distribution and average reward on continuing models.

pub mod gradient;

pub use gradient::{
    average_reward, linear_softmax_policy, objective, policy_gradient_linear, policy_gradient_tabular,
    softmax_policy, stationary, visitation,
};

use crate::task::FiniteModel;

/// Errors of the exact solvers.
#[derive(Clone, Debug, PartialEq)]
pub enum ExactError {
    /// The Bellman system has no unique solution (γ = 1 with a policy that
    /// never terminates from some state).
    Singular,
    /// Value iteration did not settle within its iteration limit.
    NoConvergence {
        /// The largest change in the last sweep.
        residual: f64,
    },
    /// A policy table has the wrong shape or is not a distribution.
    BadPolicy(String),
}

impl std::fmt::Display for ExactError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ExactError::Singular => {
                write!(f, "the Bellman system is singular: some state never reaches a terminal state with discount 1")
            }
            ExactError::NoConvergence { residual } => {
                write!(f, "value iteration did not converge (last change {residual:e})")
            }
            ExactError::BadPolicy(m) => write!(f, "policy: {m}"),
        }
    }
}

impl std::error::Error for ExactError {}

/// Action values `Q(s, a) = Σ p (r + γ V(s'))`, laid out `q[s * n_actions + a]`
/// (zero for terminal states).
pub fn q_values(m: &FiniteModel, v: &[f64], gamma: f64) -> Vec<f64> {
    let mut q = vec![0.0; m.n_states * m.n_actions];
    for s in 0..m.n_states {
        if m.terminal[s] {
            continue;
        }
        for a in 0..m.n_actions {
            q[s * m.n_actions + a] = m.outcomes[s][a]
                .iter()
                .map(|o| o.prob * (o.reward + if o.terminal { 0.0 } else { gamma * v[o.next] }))
                .sum();
        }
    }
    q
}

/// Solves `A x = b` in place by Gaussian elimination with partial pivoting
/// (`a` is row-major n × n). Returns `None` when `A` is singular.
pub fn solve_dense(a: &mut [f64], b: &mut [f64]) -> Option<Vec<f64>> {
    let n = b.len();
    for col in 0..n {
        let piv = (col..n).max_by(|&i, &j| a[i * n + col].abs().total_cmp(&a[j * n + col].abs()))?;
        if a[piv * n + col].abs() < 1e-12 {
            return None;
        }
        if piv != col {
            for k in 0..n {
                a.swap(piv * n + k, col * n + k);
            }
            b.swap(piv, col);
        }
        for row in col + 1..n {
            let f = a[row * n + col] / a[col * n + col];
            if f != 0.0 {
                for k in col..n {
                    a[row * n + k] -= f * a[col * n + k];
                }
                b[row] -= f * b[col];
            }
        }
    }
    let mut x = vec![0.0; n];
    for row in (0..n).rev() {
        let s: f64 = (row + 1..n).map(|k| a[row * n + k] * x[k]).sum();
        x[row] = (b[row] - s) / a[row * n + row];
    }
    Some(x)
}

/// Checks that `pi` has one probability per state and action of `m`.
pub(crate) fn check_policy(m: &FiniteModel, pi: &[f64]) -> Result<(), ExactError> {
    let want = m.n_states * m.n_actions;
    if pi.len() != want {
        return Err(ExactError::BadPolicy(format!("needs {want} entries, has {}", pi.len())));
    }
    Ok(())
}

/// Exact state values of a stochastic policy `pi[s * n_actions + a]`:
/// solves `(I − γ P_π) V = r_π` with `V = 0` at terminal states.
pub fn evaluate(m: &FiniteModel, pi: &[f64], gamma: f64) -> Result<Vec<f64>, ExactError> {
    let (n, na) = (m.n_states, m.n_actions);
    check_policy(m, pi)?;
    let mut a = vec![0.0; n * n];
    let mut b = vec![0.0; n];
    for s in 0..n {
        a[s * n + s] = 1.0;
        if m.terminal[s] {
            continue;
        }
        let row = &pi[s * na..(s + 1) * na];
        let total: f64 = row.iter().sum();
        if row.iter().any(|p| !(0.0..=1.0).contains(p)) || (total - 1.0).abs() > 1e-9 {
            return Err(ExactError::BadPolicy(format!("state {s}: probabilities {row:?} do not sum to 1")));
        }
        for (act, &p) in row.iter().enumerate() {
            for o in &m.outcomes[s][act] {
                b[s] += p * o.prob * o.reward;
                if !o.terminal {
                    a[s * n + o.next] -= gamma * p * o.prob;
                }
            }
        }
    }
    solve_dense(&mut a, &mut b).ok_or(ExactError::Singular)
}

/// The result of value iteration.
#[derive(Clone, Debug, PartialEq)]
pub struct Optimal {
    /// Optimal state values.
    pub values: Vec<f64>,
    /// Optimal action values, `q[s * n_actions + a]`.
    pub q: Vec<f64>,
    /// For each state, the optimal actions (those within `tie` of the best);
    /// empty for terminal states.
    pub greedy: Vec<Vec<usize>>,
}

/// Optimal state values by in-place value iteration: at most `max_sweeps`
/// sweeps, giving up as soon as a value grows past `bound` in size (a
/// rewarding loop under discount 1 never settles), until the largest change
/// in a sweep is below `tol`.
pub fn optimal_values(
    m: &FiniteModel,
    gamma: f64,
    tol: f64,
    max_sweeps: usize,
    bound: f64,
) -> Result<Vec<f64>, ExactError> {
    let mut v = vec![0.0; m.n_states];
    let mut residual = f64::INFINITY;
    for _ in 0..max_sweeps {
        residual = 0.0;
        for s in 0..m.n_states {
            if m.terminal[s] {
                continue;
            }
            let best = (0..m.n_actions)
                .map(|a| {
                    m.outcomes[s][a]
                        .iter()
                        .map(|o| o.prob * (o.reward + if o.terminal { 0.0 } else { gamma * v[o.next] }))
                        .sum::<f64>()
                })
                .fold(f64::NEG_INFINITY, f64::max);
            residual = residual.max((best - v[s]).abs());
            v[s] = best;
        }
        if !residual.is_finite() || v.iter().any(|x| x.abs() > bound) {
            return Err(ExactError::NoConvergence { residual });
        }
        if residual < tol {
            return Ok(v);
        }
    }
    Err(ExactError::NoConvergence { residual })
}

/// The optimal average reward of a continuing model and a bias (relative
/// value) function: `(gain, h)` with `g + h(s) = max_a Σ p (r + h(s'))` and
/// `h = 0` at the first state.
#[derive(Clone, Debug, PartialEq)]
pub struct AverageOptimal {
    /// The optimal average reward per step.
    pub gain: f64,
    /// The bias of each state, relative to state 0.
    pub bias: Vec<f64>,
}

/// Relative value iteration for the average-reward optimality equation
/// (Puterman 1994, Section 8.5.5, from memory) on a unichain continuing
/// model, after the aperiodicity transformation `P̃ = τ P + (1 − τ) I` with
/// τ = ½ (Section 8.5.4), which keeps the optimal policies and the bias and
/// halves the gain, so that the iteration converges on periodic models too.
/// Stops when the span of one sweep's change is below `tol`, at most
/// `max_sweeps` sweeps. Terminal states are not allowed (an episodic model
/// has no average reward to optimise).
pub fn relative_value_iteration(
    m: &FiniteModel,
    tol: f64,
    max_sweeps: usize,
) -> Result<AverageOptimal, ExactError> {
    if m.terminal.iter().any(|&t| t) || m.n_states == 0 {
        return Err(ExactError::BadPolicy("relative value iteration needs a continuing model".into()));
    }
    let tau = 0.5;
    let mut h = vec![0.0; m.n_states];
    let mut next = vec![0.0; m.n_states];
    let mut residual = f64::INFINITY;
    for _ in 0..max_sweeps {
        for s in 0..m.n_states {
            let best = (0..m.n_actions)
                .map(|a| m.outcomes[s][a].iter().map(|o| o.prob * (o.reward + h[o.next])).sum::<f64>())
                .fold(f64::NEG_INFINITY, f64::max);
            next[s] = tau * best + (1.0 - tau) * h[s];
        }
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for s in 0..m.n_states {
            let d = next[s] - h[s];
            lo = lo.min(d);
            hi = hi.max(d);
        }
        residual = hi - lo;
        let offset = next[0];
        for s in 0..m.n_states {
            h[s] = next[s] - offset;
        }
        if !residual.is_finite() {
            break;
        }
        if residual < tol {
            // The change per sweep of the transformed problem is its gain, τ g.
            return Ok(AverageOptimal { gain: 0.5 * (lo + hi) / tau, bias: h });
        }
    }
    Err(ExactError::NoConvergence { residual })
}

/// Value iteration (at most 200 000 sweeps; it stops early when values
/// grow past 1e15, as with a rewarding loop under discount 1) to a residual
/// below `tol` (Bellman optimality equation;
/// Sutton & Barto 2018, Section 4.4). Actions whose value is within
/// `1e-9 · max(1, |best|)` of the best are all reported as optimal.
pub fn value_iteration(m: &FiniteModel, gamma: f64, tol: f64) -> Result<Optimal, ExactError> {
    let v = optimal_values(m, gamma, tol, 200_000, 1e15)?;
    let q = q_values(m, &v, gamma);
    let na = m.n_actions;
    let greedy = (0..m.n_states)
        .map(|s| {
            if m.terminal[s] {
                return Vec::new();
            }
            let row = &q[s * na..(s + 1) * na];
            let best = row.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let tie = 1e-9 * best.abs().max(1.0);
            (0..na).filter(|&a| row[a] >= best - tie).collect()
        })
        .collect();
    Ok(Optimal { values: v, q, greedy })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::task::grid::{GridConfig, GridWorld};
    use crate::task::Task;

    #[test]
    fn evaluation_of_the_optimal_policy_matches_value_iteration() {
        // Exact solutions: the linear solve of the Bellman equation for the
        // greedy policy equals the value-iteration fixed point (Sutton & Barto
        // 2018, Sections 4.1 and 4.4).
        let w = GridWorld::new(GridConfig { slip: 0.1, ..GridConfig::default() }).unwrap();
        let m = w.model().unwrap();
        let opt = value_iteration(&m, 0.95, 1e-12).unwrap();
        let mut pi = vec![0.0; m.n_states * 4];
        for s in 0..m.n_states {
            if let Some(&a) = opt.greedy[s].first() {
                pi[s * 4 + a] = 1.0;
            } else {
                pi[s * 4] = 1.0;
            }
        }
        let v = evaluate(&m, &pi, 0.95).unwrap();
        for s in 0..m.n_states {
            assert!((v[s] - opt.values[s]).abs() < 1e-9, "state {s}: {} vs {}", v[s], opt.values[s]);
        }
    }

    #[test]
    fn a_policy_that_never_ends_is_singular_with_discount_one() {
        let w = GridWorld::new(GridConfig {
            map: vec!["#####".into(), "#S.D#".into(), "#####".into()],
            ..GridConfig::default()
        })
        .unwrap();
        let m = w.model().unwrap();
        // Always push west: the rover never reaches the dock.
        let mut pi = vec![0.0; m.n_states * 4];
        for s in 0..m.n_states {
            pi[s * 4 + 3] = 1.0;
        }
        assert_eq!(evaluate(&m, &pi, 1.0), Err(ExactError::Singular));
        assert!(evaluate(&m, &pi, 0.9).is_ok());
    }
}
