//! The exact objective and policy gradient of a softmax policy, and the
//! average reward of a policy on a continuing model.
//!
//! For a finite model with start distribution `d₀` and a policy `π`, the
//! objective is `J(π) = Σ_s d₀(s) V^π(s)` and the discounted state
//! visitation `η(s) = Σ_t γ^t Pr(s_t = s)` solves `η = d₀ + γ P_πᵀ η`
//! (over non-terminal states). For preferences linear in state features,
//! `h(s, a) = θ_a · φ(s)` (tabular: `φ` one-hot), the policy gradient theorem
//! (Sutton, McAllester, Singh & Mansour 2000, Theorem 1; Sutton & Barto 2018,
//! Section 13.2) gives
//! `∂J/∂θ_{b,i} = Σ_s η(s) π(b|s) φ_i(s) (Q(s, b) − V(s))`.
//! On a continuing model the stationary distribution `d` solves
//! `dᵀ P_π = dᵀ`, `Σ d = 1`, and the average reward is `Σ_s d(s) r_π(s)`
//! (Sutton & Barto 2018, Section 10.3).

use super::{check_policy, evaluate, q_values, solve_dense, ExactError};
use crate::policy::softmax;
use crate::task::FiniteModel;

/// The tabular softmax policy of preferences `theta[s * n_actions + a]`,
/// laid out the same way.
pub fn softmax_policy(m: &FiniteModel, theta: &[f64]) -> Vec<f64> {
    let na = m.n_actions;
    let mut pi = vec![0.0; m.n_states * na];
    for s in 0..m.n_states {
        softmax(&theta[s * na..(s + 1) * na], &mut pi[s * na..(s + 1) * na]);
    }
    pi
}

/// The softmax policy of linear preferences `h(s, a) = θ_a · φ(s)`, with
/// `phi[s * dim + i]` and `theta[a * dim + i]`.
pub fn linear_softmax_policy(m: &FiniteModel, phi: &[f64], dim: usize, theta: &[f64]) -> Vec<f64> {
    let na = m.n_actions;
    let mut prefs = vec![0.0; na];
    let mut pi = vec![0.0; m.n_states * na];
    for s in 0..m.n_states {
        for a in 0..na {
            prefs[a] = (0..dim).map(|i| theta[a * dim + i] * phi[s * dim + i]).sum();
        }
        softmax(&prefs, &mut pi[s * na..(s + 1) * na]);
    }
    pi
}

/// The discounted state visitation `η(s) = Σ_t γ^t Pr(s_t = s)` of a policy
/// (0 at terminal states).
pub fn visitation(m: &FiniteModel, pi: &[f64], gamma: f64) -> Result<Vec<f64>, ExactError> {
    let (n, na) = (m.n_states, m.n_actions);
    check_policy(m, pi)?;
    let mut a = vec![0.0; n * n];
    let mut b = vec![0.0; n];
    for s in 0..n {
        a[s * n + s] = 1.0;
        if !m.terminal[s] {
            b[s] = m.start[s];
        }
    }
    for s in 0..n {
        if m.terminal[s] {
            continue;
        }
        for act in 0..na {
            for o in &m.outcomes[s][act] {
                if !o.terminal && !m.terminal[o.next] {
                    a[o.next * n + s] -= gamma * pi[s * na + act] * o.prob;
                }
            }
        }
    }
    solve_dense(&mut a, &mut b).ok_or(ExactError::Singular)
}

/// The objective `J = Σ_s d₀(s) V^π(s)`.
pub fn objective(m: &FiniteModel, pi: &[f64], gamma: f64) -> Result<f64, ExactError> {
    let v = evaluate(m, pi, gamma)?;
    Ok(m.start.iter().zip(&v).map(|(d, v)| d * v).sum())
}

/// The exact gradient of [`objective`] for linear softmax preferences
/// (`phi[s * dim + i]`, `theta[a * dim + i]`), laid out like `theta`.
pub fn policy_gradient_linear(
    m: &FiniteModel,
    phi: &[f64],
    dim: usize,
    theta: &[f64],
    gamma: f64,
) -> Result<Vec<f64>, ExactError> {
    let na = m.n_actions;
    let pi = linear_softmax_policy(m, phi, dim, theta);
    let v = evaluate(m, &pi, gamma)?;
    let q = q_values(m, &v, gamma);
    let eta = visitation(m, &pi, gamma)?;
    let mut g = vec![0.0; na * dim];
    for s in 0..m.n_states {
        if m.terminal[s] {
            continue;
        }
        for b in 0..na {
            let w = eta[s] * pi[s * na + b] * (q[s * na + b] - v[s]);
            for i in 0..dim {
                g[b * dim + i] += w * phi[s * dim + i];
            }
        }
    }
    Ok(g)
}

/// The exact gradient of [`objective`] for a tabular softmax policy
/// (`theta[s * n_actions + a]`), laid out like `theta`:
/// `∂J/∂θ(s, b) = η(s) π(b|s) (Q(s, b) − V(s))`.
pub fn policy_gradient_tabular(m: &FiniteModel, theta: &[f64], gamma: f64) -> Result<Vec<f64>, ExactError> {
    let (n, na) = (m.n_states, m.n_actions);
    let pi = softmax_policy(m, theta);
    let v = evaluate(m, &pi, gamma)?;
    let q = q_values(m, &v, gamma);
    let eta = visitation(m, &pi, gamma)?;
    let mut g = vec![0.0; n * na];
    for s in 0..n {
        if m.terminal[s] {
            continue;
        }
        for b in 0..na {
            g[s * na + b] = eta[s] * pi[s * na + b] * (q[s * na + b] - v[s]);
        }
    }
    Ok(g)
}

/// The stationary distribution of a policy on a continuing model (one
/// recurrent class assumed; terminal states are not allowed).
pub fn stationary(m: &FiniteModel, pi: &[f64]) -> Result<Vec<f64>, ExactError> {
    let (n, na) = (m.n_states, m.n_actions);
    check_policy(m, pi)?;
    if m.terminal.iter().any(|&t| t) {
        return Err(ExactError::BadPolicy(
            "a stationary distribution needs a model without terminal states".into(),
        ));
    }
    // Rows 0..n-1: (P_πᵀ − I) d = 0, with the last row replaced by Σ d = 1.
    let mut a = vec![0.0; n * n];
    let mut b = vec![0.0; n];
    for s in 0..n {
        a[s * n + s] -= 1.0;
        for act in 0..na {
            for o in &m.outcomes[s][act] {
                a[o.next * n + s] += pi[s * na + act] * o.prob;
            }
        }
    }
    for s in 0..n {
        a[(n - 1) * n + s] = 1.0;
    }
    b[n - 1] = 1.0;
    solve_dense(&mut a, &mut b).ok_or(ExactError::Singular)
}

/// The average reward per step of a policy on a continuing model.
pub fn average_reward(m: &FiniteModel, pi: &[f64]) -> Result<f64, ExactError> {
    let d = stationary(m, pi)?;
    let na = m.n_actions;
    let mut total = 0.0;
    for s in 0..m.n_states {
        for act in 0..na {
            let r: f64 = m.outcomes[s][act].iter().map(|o| o.prob * o.reward).sum();
            total += d[s] * pi[s * na + act] * r;
        }
    }
    Ok(total)
}
