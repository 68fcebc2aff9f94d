//! A small multi-layer perceptron with hand-derived backpropagation.
//!
//! Inputs are the state variables scaled linearly so that their declared
//! range maps to [−1, 1] (not clamped, so the map stays differentiable);
//! hidden layers apply tanh or ReLU; the output layer is linear. Weights are
//! stored layer by layer in one vector: for layer `l` (from `n_in` to
//! `n_out` units) first the `n_out × n_in` matrix row by row, then the
//! `n_out` biases. Hidden weights start uniform in `±√(6 / (n_in + n_out))`
//! for tanh (Glorot & Bengio 2010) or `±√(6 / n_in)` for ReLU (He et al.
//! 2015); the output layer and all biases start at zero, so a fresh actor is
//! uniform (or has mean zero) and a fresh critic is zero.
//!
//! Backpropagation (Rumelhart, Hinton & Williams 1986): with output
//! sensitivities `g_L = c` (the coefficients of the outputs),
//! `∂/∂W_l = g_l a_{l−1}ᵀ`, `∂/∂b_l = g_l`, and
//! `g_{l−1} = (W_lᵀ g_l) ⊙ f'(a_{l−1})` with `tanh' = 1 − a²` and
//! `relu' = 1[a > 0]`; one more step gives the gradient with respect to the
//! input. Buffers are sized in the constructor; the last forward pass is
//! kept and reused when the next call is at the same input.

use super::{Activation, Approx, Obs};
use crate::optim::Grad;
use crate::rng::Stream;
use crate::task::StateVar;

/// A multi-layer perceptron.
#[derive(Clone, Debug)]
pub struct Mlp {
    sizes: Vec<usize>,
    act: Activation,
    w: Vec<f64>,
    off: Vec<usize>,
    low: Vec<f64>,
    inv: Vec<f64>,
    a: Vec<Vec<f64>>,
    g: Vec<Vec<f64>>,
    key: Vec<f64>,
    fresh: bool,
}

impl Mlp {
    /// A network from the state variables `vars` through `hidden` layers to
    /// `outputs` linear outputs, initialised from `rng`.
    pub fn new(
        vars: &[StateVar],
        hidden: &[usize],
        outputs: usize,
        act: Activation,
        rng: &mut Stream,
    ) -> Self {
        let mut sizes = vec![vars.len()];
        sizes.extend_from_slice(hidden);
        sizes.push(outputs);
        let mut off = Vec::with_capacity(sizes.len());
        let mut total = 0;
        for l in 0..sizes.len() - 1 {
            off.push(total);
            total += sizes[l + 1] * sizes[l] + sizes[l + 1];
        }
        let mut w = vec![0.0; total];
        for l in 0..sizes.len() - 2 {
            let (n_in, n_out) = (sizes[l], sizes[l + 1]);
            let limit = match act {
                Activation::Tanh => libm::sqrt(6.0 / (n_in + n_out) as f64),
                Activation::Relu => libm::sqrt(6.0 / n_in.max(1) as f64),
            };
            for v in &mut w[off[l]..off[l] + n_out * n_in] {
                *v = rng.uniform_in(-limit, limit);
            }
        }
        Mlp {
            a: sizes.iter().map(|&n| vec![0.0; n]).collect(),
            g: sizes.iter().map(|&n| vec![0.0; n]).collect(),
            low: vars.iter().map(|v| v.low).collect(),
            inv: vars.iter().map(|v| 2.0 / (v.high - v.low)).collect(),
            key: vec![0.0; vars.len()],
            fresh: false,
            sizes,
            act,
            w,
            off,
        }
    }

    /// Number of layers of weights.
    fn layers(&self) -> usize {
        self.sizes.len() - 1
    }

    fn forward(&mut self, x: &[f64]) {
        if self.fresh && self.key.iter().zip(x).all(|(a, b)| a.to_bits() == b.to_bits()) {
            return;
        }
        self.key.copy_from_slice(x);
        for j in 0..x.len() {
            self.a[0][j] = (x[j] - self.low[j]) * self.inv[j] - 1.0;
        }
        let last = self.layers() - 1;
        for l in 0..self.layers() {
            let (n_in, n_out) = (self.sizes[l], self.sizes[l + 1]);
            let (prev, next) = self.a.split_at_mut(l + 1);
            let (input, out) = (&prev[l], &mut next[0]);
            let m = &self.w[self.off[l]..self.off[l] + n_out * n_in];
            let b = &self.w[self.off[l] + n_out * n_in..self.off[l] + n_out * n_in + n_out];
            for r in 0..n_out {
                let row = &m[r * n_in..(r + 1) * n_in];
                let pre = b[r] + row.iter().zip(input).map(|(w, v)| w * v).sum::<f64>();
                out[r] = if l == last {
                    pre
                } else {
                    match self.act {
                        Activation::Tanh => libm::tanh(pre),
                        Activation::Relu => pre.max(0.0),
                    }
                };
            }
        }
        self.fresh = true;
    }

    /// Backpropagates output sensitivities `signal · coef` to every layer
    /// (`self.g`), adding weight gradients to `grad` when given.
    fn backward(&mut self, coef: &[f64], signal: f64, mut grad: Option<&mut [f64]>, to_input: bool) {
        let layers = self.layers();
        for (gk, &c) in self.g[layers].iter_mut().zip(coef) {
            *gk = signal * c;
        }
        for l in (0..layers).rev() {
            let (n_in, n_out) = (self.sizes[l], self.sizes[l + 1]);
            let (wo, bo) = (self.off[l], self.off[l] + n_out * n_in);
            if let Some(gr) = grad.as_deref_mut() {
                for r in 0..n_out {
                    let gr_r = self.g[l + 1][r];
                    if gr_r == 0.0 {
                        continue;
                    }
                    for c in 0..n_in {
                        gr[wo + r * n_in + c] += gr_r * self.a[l][c];
                    }
                    gr[bo + r] += gr_r;
                }
            }
            if l == 0 && !to_input {
                break;
            }
            let (lower, upper) = self.g.split_at_mut(l + 1);
            let (below, above) = (&mut lower[l], &upper[0]);
            for c in 0..n_in {
                let mut s = 0.0;
                for r in 0..n_out {
                    s += self.w[wo + r * n_in + c] * above[r];
                }
                below[c] = if l == 0 {
                    s
                } else {
                    let a = self.a[l][c];
                    match self.act {
                        Activation::Tanh => s * (1.0 - a * a),
                        Activation::Relu => {
                            if a > 0.0 {
                                s
                            } else {
                                0.0
                            }
                        }
                    }
                };
            }
        }
    }
}

impl Approx for Mlp {
    fn outputs(&self) -> usize {
        *self.sizes.last().expect("an MLP has layers")
    }

    fn params(&self) -> &[f64] {
        &self.w
    }

    fn params_mut(&mut self) -> &mut [f64] {
        self.fresh = false;
        &mut self.w
    }

    fn eval(&mut self, obs: Obs<'_>) -> &[f64] {
        self.forward(obs.values);
        &self.a[self.layers()]
    }

    fn accumulate(&mut self, obs: Obs<'_>, coef: &[f64], signal: f64, grad: &mut Grad) {
        self.forward(obs.values);
        self.backward(coef, signal, Some(grad.dense_mut()), false);
    }

    fn input_grad(&mut self, obs: Obs<'_>, coef: &[f64], out: &mut [f64]) -> bool {
        self.forward(obs.values);
        self.backward(coef, 1.0, None, true);
        for j in 0..self.inv.len() {
            out[j] = self.g[0][j] * self.inv[j];
        }
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn net(act: Activation) -> (Mlp, Vec<StateVar>) {
        let vars: Vec<StateVar> =
            (0..3).map(|i| StateVar { name: format!("v{i}"), low: -2.0, high: 2.0 }).collect();
        let mut rng = Stream::from_seed(11);
        let mut m = Mlp::new(&vars, &[5, 4], 2, act, &mut rng);
        // Non-zero output layer and biases so every weight matters.
        for v in m.params_mut().iter_mut() {
            if *v == 0.0 {
                *v = rng.uniform_in(-0.5, 0.5);
            }
        }
        (m, vars)
    }

    #[test]
    fn backpropagation_equals_finite_differences() {
        // Rumelhart, Hinton & Williams (1986): backpropagated weight and input
        // gradients of c·out against central finite differences, for both
        // activations (ReLU away from its kink at this input).
        for act in [Activation::Tanh, Activation::Relu] {
            let (mut m, _) = net(act);
            let x = [0.4, -1.1, 0.9];
            let coef = [0.7, -1.3];
            let obs = Obs { values: &x, id: None };
            let mut g = Grad::new(m.params().len());
            m.accumulate(obs, &coef, 1.0, &mut g);
            let f = |m: &mut Mlp, x: &[f64]| {
                let o = m.eval(Obs { values: x, id: None });
                coef[0] * o[0] + coef[1] * o[1]
            };
            let h = 1e-6;
            for i in 0..m.params().len() {
                let w0 = m.params()[i];
                m.params_mut()[i] = w0 + h;
                let up = f(&mut m, &x);
                m.params_mut()[i] = w0 - h;
                let down = f(&mut m, &x);
                m.params_mut()[i] = w0;
                let fd = (up - down) / (2.0 * h);
                assert!((fd - g.values()[i]).abs() < 1e-7, "{act:?} weight {i}: {fd} vs {}", g.values()[i]);
            }
            let mut gi = [0.0; 3];
            assert!(m.input_grad(obs, &coef, &mut gi));
            for j in 0..3 {
                let (mut p, mut q) = (x, x);
                p[j] += h;
                q[j] -= h;
                let fd = (f(&mut m, &p) - f(&mut m, &q)) / (2.0 * h);
                assert!((fd - gi[j]).abs() < 1e-7, "{act:?} input {j}: {fd} vs {}", gi[j]);
            }
        }
    }

    #[test]
    fn fresh_network_outputs_zero() {
        let vars = [StateVar { name: "x".into(), low: 0.0, high: 1.0 }];
        let mut m = Mlp::new(&vars, &[8], 3, Activation::Tanh, &mut Stream::from_seed(1));
        assert_eq!(m.eval(Obs { values: &[0.3], id: None }), &[0.0, 0.0, 0.0]);
        assert_eq!(m.params().len(), 8 + 8 + 3 * 8 + 3);
    }
}
