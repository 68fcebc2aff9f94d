//! Update directions in weight space: [`Grad`], the buffer every
//! approximator accumulates its gradients into and every optimizer reads.
//! It lives with the approximators (which fill it); the optimizers and
//! [`crate::optim::Trainable`] sit above both.

/// An update direction in weight space, accumulated entry by entry.
///
/// Entries are added with [`Grad::add`]; the buffer keeps the list of
/// touched entries so that applying and clearing it costs only those (a
/// tile-coded critic touches a handful of its thousands of weights). A
/// dense approximator (an MLP) marks the whole buffer touched instead.
#[derive(Clone, Debug)]
pub struct Grad {
    pub(crate) g: Vec<f64>,
    mark: Vec<bool>,
    touched: Vec<u32>,
    dense: bool,
}

impl Grad {
    /// A zero direction over `n` weights.
    pub fn new(n: usize) -> Self {
        Grad { g: vec![0.0; n], mark: vec![false; n], touched: Vec::with_capacity(n.min(4096)), dense: false }
    }

    /// Number of weights.
    pub fn len(&self) -> usize {
        self.g.len()
    }

    /// Whether the buffer covers no weights at all.
    pub fn is_empty(&self) -> bool {
        self.g.is_empty()
    }

    /// Adds `v` to entry `i`.
    #[inline]
    pub fn add(&mut self, i: usize, v: f64) {
        if !self.dense && !self.mark[i] {
            self.mark[i] = true;
            if self.touched.len() == self.touched.capacity() {
                // More distinct entries than the initial room: treat as dense
                // rather than grow the list (keeps the step allocation-free).
                self.dense = true;
            } else {
                self.touched.push(i as u32);
            }
        }
        self.g[i] += v;
    }

    /// Marks every entry touched and gives mutable access to all of them
    /// (for dense approximators).
    pub fn dense_mut(&mut self) -> &mut [f64] {
        self.dense = true;
        &mut self.g
    }

    /// The entries (zero where untouched).
    pub fn values(&self) -> &[f64] {
        &self.g
    }

    pub(crate) fn for_each_touched(&self, mut f: impl FnMut(usize)) {
        if self.dense {
            (0..self.g.len()).for_each(f);
        } else {
            for &i in &self.touched {
                f(i as usize);
            }
        }
    }

    /// Euclidean norm.
    pub fn norm(&self) -> f64 {
        let mut sq = 0.0;
        self.for_each_touched(|i| sq += self.g[i] * self.g[i]);
        f64::sqrt(sq)
    }

    /// Dot product with another direction over the same weights.
    pub fn dot(&self, other: &Grad) -> f64 {
        let mut s = 0.0;
        self.for_each_touched(|i| s += self.g[i] * other.g[i]);
        s
    }

    /// Adds `a · other` to this direction.
    pub fn add_scaled(&mut self, a: f64, other: &Grad) {
        if other.dense {
            for i in 0..other.g.len() {
                let v = a * other.g[i];
                self.add(i, v);
            }
        } else {
            for &i in &other.touched {
                let v = a * other.g[i as usize];
                self.add(i as usize, v);
            }
        }
    }

    /// Multiplies every entry by `a`.
    pub fn scale(&mut self, a: f64) {
        if self.dense {
            self.g.iter_mut().for_each(|v| *v *= a);
        } else {
            for &i in &self.touched {
                self.g[i as usize] *= a;
            }
        }
    }

    /// Resets to the zero direction.
    pub fn clear(&mut self) {
        if self.dense {
            self.g.iter_mut().for_each(|v| *v = 0.0);
            self.mark.iter_mut().for_each(|m| *m = false);
            self.dense = false;
        } else {
            for &i in &self.touched {
                self.g[i as usize] = 0.0;
                self.mark[i as usize] = false;
            }
        }
        self.touched.clear();
    }
}
