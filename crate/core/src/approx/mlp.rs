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
//! input. Buffers are sized in the constructor; the last two forward passes
//! are kept and reused while the weights are unchanged (a learner's step
//! evaluates a state and its successor, then updates at the first). With
//! plain SGD the update is added to the weights during backpropagation
//! ([`Approx::sgd_step`]), row by row, without a gradient buffer; the
//! gradient's norm comes from `‖g aᵀ‖ = ‖g‖ ‖a‖`. Dense loops use the
//! kernels of [`super::kernels`].

use super::kernels::{axpy, backprop_step, matvec, norm_sq, tanh_in_place};
use super::Grad;
use super::{Activation, Approx, Obs};
use crate::rng::Stream;
use crate::task::StateVar;

/// The activations of every layer at one input, flat (layer `l` at
/// `Mlp::aoff[l]`), valid while `fresh` and the weights are unchanged.
#[derive(Clone, Debug)]
struct Pass {
    key: Vec<f64>,
    a: Vec<f64>,
    fresh: bool,
}

/// A multi-layer perceptron.
#[derive(Clone, Debug)]
pub struct Mlp {
    sizes: Vec<usize>,
    act: Activation,
    w: Vec<f64>,
    off: Vec<usize>,
    aoff: Vec<usize>,
    low: Vec<f64>,
    inv: Vec<f64>,
    /// Two cached forward passes (a learner's step looks at a state and the
    /// next one), the most recently used one is `passes[recent]`.
    passes: [Pass; 2],
    recent: usize,
    /// Backpropagated sensitivities, laid out like a pass's activations.
    g: Vec<f64>,
    /// Per-row step sizes of an SGD step (as long as the widest layer).
    step_buf: Vec<f64>,
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
        let mut aoff = Vec::with_capacity(sizes.len() + 1);
        let mut units = 0;
        for &n in &sizes {
            aoff.push(units);
            units += n;
        }
        aoff.push(units);
        let mut w = vec![0.0; total];
        for l in 0..sizes.len() - 2 {
            let (n_in, n_out) = (sizes[l], sizes[l + 1]);
            let limit = match act {
                Activation::Tanh => f64::sqrt(6.0 / (n_in + n_out) as f64),
                Activation::Relu => f64::sqrt(6.0 / n_in.max(1) as f64),
            };
            for v in &mut w[off[l]..off[l] + n_out * n_in] {
                *v = rng.uniform_in(-limit, limit);
            }
        }
        let pass = Pass { key: vec![0.0; vars.len()], a: vec![0.0; units], fresh: false };
        Mlp {
            passes: [pass.clone(), pass],
            recent: 0,
            g: vec![0.0; units],
            step_buf: vec![0.0; sizes.iter().copied().max().unwrap_or(0)],
            low: vars.iter().map(|v| v.low).collect(),
            inv: vars.iter().map(|v| 2.0 / (v.high - v.low)).collect(),
            sizes,
            act,
            w,
            off,
            aoff,
        }
    }

    /// Number of layers of weights.
    fn layers(&self) -> usize {
        self.sizes.len() - 1
    }

    /// Runs (or finds cached) the forward pass at `x`; returns its slot.
    fn forward(&mut self, x: &[f64]) -> usize {
        let same = |p: &Pass| p.fresh && p.key.iter().zip(x).all(|(a, b)| a.to_bits() == b.to_bits());
        for s in [self.recent, 1 - self.recent] {
            if same(&self.passes[s]) {
                self.recent = s;
                return s;
            }
        }
        let s = 1 - self.recent;
        self.recent = s;
        let layers = self.layers();
        let pass = &mut self.passes[s];
        pass.key.copy_from_slice(x);
        for j in 0..x.len() {
            pass.a[j] = (x[j] - self.low[j]) * self.inv[j] - 1.0;
        }
        for l in 0..layers {
            let (n_in, n_out) = (self.sizes[l], self.sizes[l + 1]);
            let (prev, next) = pass.a.split_at_mut(self.aoff[l + 1]);
            let (input, out) = (&prev[self.aoff[l]..], &mut next[..n_out]);
            let m = &self.w[self.off[l]..self.off[l] + n_out * n_in];
            let b = &self.w[self.off[l] + n_out * n_in..self.off[l] + n_out * n_in + n_out];
            matvec(m, input, b, out);
            if l + 1 != layers {
                match self.act {
                    Activation::Tanh => tanh_in_place(out),
                    Activation::Relu => out.iter_mut().for_each(|v| *v = v.max(0.0)),
                }
            }
        }
        pass.fresh = true;
        s
    }

    /// Multiplies the sensitivities `below` of hidden layer `l` by the
    /// activation's derivative at that layer's activations `a`.
    fn activation_derivative(act: Activation, a: &[f64], below: &mut [f64]) {
        match act {
            Activation::Tanh => {
                for (g, &a) in below.iter_mut().zip(a) {
                    *g *= 1.0 - a * a;
                }
            }
            Activation::Relu => {
                for (g, &a) in below.iter_mut().zip(a) {
                    if a <= 0.0 {
                        *g = 0.0;
                    }
                }
            }
        }
    }

    /// Backpropagates output sensitivities `signal · coef` through the pass
    /// in slot `s` (into `self.g`), and for every layer either adds the
    /// weight gradient to `grad` or, with `step`, adds `step ·` it to the
    /// weights in place (after the layer's sensitivities below have been
    /// computed with the old weights). Returns the squared norm of the
    /// weight gradient, `Σ_l ‖g_l‖² (‖a_{l−1}‖² + 1)` (an outer product
    /// plus the biases per layer).
    fn backward(&mut self, s: usize, coef: &[f64], signal: f64, target: Target<'_>, to_input: bool) -> f64 {
        let layers = self.layers();
        let a = &self.passes[s].a;
        for (gk, &c) in self.g[self.aoff[layers]..].iter_mut().zip(coef) {
            *gk = signal * c;
        }
        let mut target = target;
        let mut sq = 0.0;
        for l in (0..layers).rev() {
            let (n_in, n_out) = (self.sizes[l], self.sizes[l + 1]);
            let (wo, bo) = (self.off[l], self.off[l] + n_out * n_in);
            let (lower, upper) = self.g.split_at_mut(self.aoff[l + 1]);
            let above = &upper[..n_out];
            let below = &mut lower[self.aoff[l]..];
            let input = &a[self.aoff[l]..self.aoff[l + 1]];
            let need_below = l > 0 || to_input;
            if need_below {
                below.iter_mut().for_each(|v| *v = 0.0);
            }
            if let Target::Grad(_) | Target::Step(_) = target {
                sq += norm_sq(above) * (norm_sq(input) + 1.0);
            }
            match &mut target {
                Target::Step(step) if need_below => {
                    // All rows at once (blocked); the step per row goes in
                    // `step_buf`.
                    for (cb, &gr) in self.step_buf.iter_mut().zip(above) {
                        *cb = *step * gr;
                    }
                    let cs = &self.step_buf[..n_out];
                    backprop_step(above, cs, input, &mut self.w[wo..bo], below);
                    for (b, &c) in self.w[bo..bo + n_out].iter_mut().zip(cs) {
                        *b += c;
                    }
                }
                _ => {
                    for r in 0..n_out {
                        let gr = above[r];
                        if gr == 0.0 {
                            continue;
                        }
                        let row = wo + r * n_in..wo + (r + 1) * n_in;
                        match &mut target {
                            Target::Step(step) => {
                                let c = *step * gr;
                                axpy(c, input, &mut self.w[row]);
                                self.w[bo + r] += c;
                            }
                            Target::Grad(g) => {
                                if need_below {
                                    axpy(gr, &self.w[row.clone()], below);
                                }
                                axpy(gr, input, &mut g[row]);
                                g[bo + r] += gr;
                            }
                            Target::None => {
                                if need_below {
                                    axpy(gr, &self.w[row], below);
                                }
                            }
                        }
                    }
                }
            }
            if !need_below {
                break;
            }
            if l > 0 {
                Self::activation_derivative(self.act, input, below);
            }
        }
        if let Target::Step(_) = target {
            self.passes[0].fresh = false;
            self.passes[1].fresh = false;
        }
        sq
    }
}

/// Where [`Mlp::backward`] puts the weight gradient.
enum Target<'a> {
    /// Nowhere (input gradient only).
    None,
    /// Added to a dense gradient buffer.
    Grad(&'a mut [f64]),
    /// Added to the weights times this step size.
    Step(f64),
}

impl Approx for Mlp {
    fn outputs(&self) -> usize {
        *self.sizes.last().expect("an MLP has layers")
    }

    fn params(&self) -> &[f64] {
        &self.w
    }

    fn params_mut(&mut self) -> &mut [f64] {
        self.passes[0].fresh = false;
        self.passes[1].fresh = false;
        &mut self.w
    }

    fn eval(&mut self, obs: Obs<'_>) -> &[f64] {
        let s = self.forward(obs.values);
        &self.passes[s].a[self.aoff[self.layers()]..]
    }

    fn accumulate(&mut self, obs: Obs<'_>, coef: &[f64], signal: f64, grad: &mut Grad) {
        let s = self.forward(obs.values);
        self.backward(s, coef, signal, Target::Grad(grad.dense_mut()), false);
    }

    fn sgd_step(&mut self, obs: Obs<'_>, coef: &[f64], step: f64) -> Option<f64> {
        let s = self.forward(obs.values);
        Some(f64::sqrt(self.backward(s, coef, 1.0, Target::Step(step), false)))
    }

    fn input_grad(&mut self, obs: Obs<'_>, coef: &[f64], out: &mut [f64]) -> bool {
        let s = self.forward(obs.values);
        self.backward(s, coef, 1.0, Target::None, true);
        for j in 0..self.inv.len() {
            out[j] = self.g[j] * self.inv[j];
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
