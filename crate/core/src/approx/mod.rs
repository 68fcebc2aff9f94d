//! Features and function approximators.
//!
//! A [`Features`] map turns an observation into a sparse feature vector
//! ([`Sparse`]): tabular (one-hot on the discrete state), tile coding
//! (several offset tilings, optionally hashed; [`tiles`]), the Fourier basis
//! ([`fourier`]), Gaussian radial basis functions ([`rbf`]) and polynomials
//! ([`poly`]). [`Linear`] holds one weight block per output (per action, for
//! action values and action preferences) in one contiguous vector.
//!
//! An [`Approx`] is any differentiable function of the state with a few
//! outputs and a flat weight vector: [`LinearFn`] (a [`Linear`] map over a
//! feature map, with a [`FeatureCache`]) or a small multi-layer perceptron
//! ([`mlp::Mlp`]). Learners only talk to [`Approx`]: evaluate the outputs,
//! add `Σ_k c_k ∇ out_k` to a gradient buffer, and, for the deterministic
//! learner's critic, differentiate with respect to the input. Nothing here
//! allocates per step: buffers are sized once.

pub mod fourier;
pub mod grad;
pub mod kernels;
pub mod mlp;
pub mod poly;
pub mod rbf;
pub mod tiles;

pub use grad::Grad;
use std::cell::{RefCell, RefMut};
use std::rc::Rc;

use serde::{Deserialize, Serialize};

use crate::rng::Stream;
use crate::task::{StateVar, TaskSpec};

/// What a learner sees of a state: the observation and, for finite tasks, the
/// discrete state index.
#[derive(Clone, Copy, Debug)]
pub struct Obs<'a> {
    /// Values of the task's state variables.
    pub values: &'a [f64],
    /// The discrete state, for finite tasks.
    pub id: Option<usize>,
}

/// A sparse feature vector: parallel lists of indices and values. Written
/// only through [`Sparse::push`], [`Sparse::extend_ones`] and
/// [`Sparse::clear`], which keep track of whether every value is 1 (the
/// lists are private to `approx` so nothing else can write them).
#[derive(Clone, Debug, Default)]
pub struct Sparse {
    /// Indices of the non-zero features.
    idx: Vec<u32>,
    /// Their values.
    val: Vec<f64>,
    /// Every value is exactly 1 (a binary code: tiles, a table). Then
    /// `w * v` is `w` and `step * v` is `step` bit for bit, and the weight
    /// loops read the indices only. False is always safe (the default).
    ones: bool,
}

impl PartialEq for Sparse {
    /// The same entries (how they were written does not matter).
    fn eq(&self, other: &Self) -> bool {
        self.idx == other.idx && self.val == other.val
    }
}

impl Sparse {
    /// An empty vector with room for `n` entries.
    pub fn with_capacity(n: usize) -> Self {
        Sparse { idx: Vec::with_capacity(n), val: Vec::with_capacity(n), ones: true }
    }

    /// Removes every entry (keeps the capacity).
    pub fn clear(&mut self) {
        self.idx.clear();
        self.val.clear();
        self.ones = true;
    }

    /// Appends one entry.
    #[inline]
    pub fn push(&mut self, i: u32, v: f64) {
        self.idx.push(i);
        self.val.push(v);
        self.ones &= v == 1.0;
    }

    /// Indices of the non-zero features.
    pub fn idx(&self) -> &[u32] {
        &self.idx
    }

    /// Their values, in the same order.
    pub fn val(&self) -> &[f64] {
        &self.val
    }

    /// Whether every value is exactly 1.
    #[inline]
    pub fn is_binary(&self) -> bool {
        self.ones
    }

    /// Appends the indices, each with the value 1 (a binary code such as
    /// tiles), in one go.
    #[inline]
    pub fn extend_ones(&mut self, indices: impl Iterator<Item = u32>) {
        self.idx.extend(indices);
        self.val.resize(self.idx.len(), 1.0);
    }

    /// Squared Euclidean norm (duplicate indices count separately, as in a
    /// hashed code where they add up in the dot product too).
    pub fn norm_sq(&self) -> f64 {
        if self.ones && !self.idx.is_empty() {
            // A sum of n ones is n exactly (n is far below 2^53); the empty
            // sum stays on the general path, which gives -0.
            return self.idx.len() as f64;
        }
        self.val.iter().map(|v| v * v).sum()
    }
}

/// A map from observations to sparse features.
pub trait Features: Send {
    /// Length of the (dense) feature vector.
    fn dim(&self) -> usize;
    /// Most entries a feature vector can have (to size buffers once).
    fn max_active(&self) -> usize;
    /// Writes the features of `obs` into `out` (cleared first).
    fn compute(&self, obs: Obs<'_>, out: &mut Sparse);
    /// Factor applied to step sizes so that a step size means the same for
    /// any number of active features (1 / the expected squared norm of the
    /// feature vector: 1 / number of tilings for tile coding).
    fn step_scale(&self) -> f64 {
        1.0
    }
    /// Writes `∂(w · x(values)) / ∂values_j` into `out[j]` for a dense weight
    /// vector `w` of length [`Features::dim`]; returns false when the
    /// features are not differentiable in the observation (tabular, tiles).
    fn input_grad(&self, _values: &[f64], _w: &[f64], _out: &mut [f64]) -> bool {
        false
    }
}

/// Feature settings (the `features` object of a learner setup).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum FeatureConfig {
    /// One feature per discrete state (finite tasks only).
    Tabular,
    /// Tile coding over the state variables' ranges.
    Tiles {
        /// Number of offset tilings, in [1, 64]. Default 8.
        #[serde(default = "default_tilings")]
        tilings: u32,
        /// Intervals per variable in each tiling, in [1, 64]. Default 8.
        #[serde(default = "default_intervals")]
        intervals: u32,
        /// Hash the tiles into this many weights (0: no hashing), 0 or in
        /// [16, 4194304]. Default 4096.
        #[serde(default = "default_hash")]
        hash: u32,
    },
    /// The Fourier cosine basis (Konidaris, Osentoski & Thomas 2011) over
    /// the state variables scaled to [0, 1].
    Fourier {
        /// Highest frequency per variable, in [0, 20]; `(order + 1)^d`
        /// features, at most 65536. Default 3.
        #[serde(default = "default_order")]
        order: u32,
    },
    /// Gaussian radial basis functions on a regular grid of centres over the
    /// state variables scaled to [0, 1].
    Rbf {
        /// Centres per variable, in [2, 32]; `centers^d` features, at most
        /// 65536. Default 5.
        #[serde(default = "default_centers")]
        centers: u32,
        /// Width σ as a multiple of the spacing of the centres, in [0.1, 10].
        /// Default 1.
        #[serde(default = "default_width")]
        width: f64,
    },
    /// All monomials of total degree at most `degree` of the state variables
    /// scaled to [−1, 1] (Sutton & Barto 2018, Section 9.5.1).
    Poly {
        /// Highest total degree, in [1, 8]; at most 65536 features. Default 2.
        #[serde(default = "default_degree")]
        degree: u32,
    },
}

fn default_tilings() -> u32 {
    8
}
fn default_intervals() -> u32 {
    8
}
fn default_hash() -> u32 {
    4096
}
fn default_order() -> u32 {
    3
}
fn default_centers() -> u32 {
    5
}
fn default_width() -> f64 {
    1.0
}
fn default_degree() -> u32 {
    2
}

/// Most features a dense basis (Fourier, RBF, polynomial) may have.
pub const MAX_DENSE_FEATURES: u64 = 65536;

/// Errors building features.
#[derive(Clone, Debug, PartialEq)]
pub enum FeatureError {
    /// A setting is out of range: (field, message).
    Invalid(String, String),
}

impl std::fmt::Display for FeatureError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            FeatureError::Invalid(field, msg) => write!(f, "{field}: {msg}"),
        }
    }
}

impl std::error::Error for FeatureError {}

/// One-hot features on the discrete state.
#[derive(Clone, Debug)]
pub struct Tabular {
    n: usize,
}

impl Features for Tabular {
    fn dim(&self) -> usize {
        self.n
    }
    fn max_active(&self) -> usize {
        1
    }
    fn compute(&self, obs: Obs<'_>, out: &mut Sparse) {
        Tabular::one_hot(obs.id.expect("tabular features need a discrete state id"), out);
    }
}

impl Tabular {
    /// One-hot features over `n` states.
    pub fn new(n: usize) -> Self {
        Tabular { n }
    }

    /// Writes the one-hot vector of state `s`.
    pub fn one_hot(s: usize, out: &mut Sparse) {
        out.clear();
        out.push(s as u32, 1.0);
    }
}

/// Builds the feature map a setup asks for, checking it fits the task.
pub fn build_features(cfg: &FeatureConfig, spec: &TaskSpec) -> Result<Box<dyn Features>, FeatureError> {
    build_features_over(cfg, &spec.state_vars, spec.n_states, spec.kind)
}

/// Builds a feature map over explicit variables (`n_states` for tabular
/// features; `kind` names the task in messages).
pub fn build_features_over(
    cfg: &FeatureConfig,
    vars: &[StateVar],
    n_states: Option<usize>,
    kind: &str,
) -> Result<Box<dyn Features>, FeatureError> {
    match cfg {
        FeatureConfig::Tabular => match n_states {
            Some(n) => Ok(Box::new(Tabular { n })),
            None => Err(FeatureError::Invalid(
                "kind".into(),
                format!("\"tabular\" needs a finite task; {kind} has continuous states: use \"tiles\""),
            )),
        },
        FeatureConfig::Tiles { tilings, intervals, hash } => {
            let t = tiles::TileCoder::new(vars, *tilings, *intervals, *hash)?;
            Ok(Box::new(t))
        }
        FeatureConfig::Fourier { order } => Ok(Box::new(fourier::Fourier::new(vars, *order)?)),
        FeatureConfig::Rbf { centers, width } => Ok(Box::new(rbf::Rbf::new(vars, *centers, *width)?)),
        FeatureConfig::Poly { degree } => Ok(Box::new(poly::Poly::new(vars, *degree)?)),
    }
}

/// `d` state variables `v0, v1, …`, each over `[low, high]` (for tests).
#[cfg(test)]
pub(crate) fn test_vars(d: usize, low: f64, high: f64) -> Vec<StateVar> {
    (0..d).map(|i| StateVar { name: format!("v{i}"), low, high }).collect()
}

/// The default features for a task: tabular where finite, tile coding otherwise.
pub fn default_features(spec: &TaskSpec) -> FeatureConfig {
    if spec.n_states.is_some() {
        FeatureConfig::Tabular
    } else {
        FeatureConfig::Tiles {
            tilings: default_tilings(),
            intervals: default_intervals(),
            hash: default_hash(),
        }
    }
}

/// The scaled position of `v` in `[low, high]`, clamped to [0, 1], and the
/// derivative of that position with respect to `v` (0 where clamped).
#[inline]
pub(crate) fn unit(v: f64, low: f64, high: f64) -> (f64, f64) {
    let width = high - low;
    let u = (v - low) / width;
    if u.is_nan() || u < 0.0 {
        (0.0, 0.0)
    } else if u > 1.0 {
        (1.0, 0.0)
    } else {
        (u, 1.0 / width)
    }
}

/// A linear function with `outputs` outputs over `dim` features; weights are
/// stored output-major in one vector (`w[k * dim + i]`).
#[derive(Clone, Debug, PartialEq)]
pub struct Linear {
    /// Number of features.
    pub dim: usize,
    /// Number of outputs.
    pub outputs: usize,
    /// The weights, output-major.
    pub w: Vec<f64>,
}

impl Linear {
    /// All-zero weights.
    pub fn zeros(dim: usize, outputs: usize) -> Self {
        Linear { dim, outputs, w: vec![0.0; dim * outputs] }
    }

    /// Output `k` at features `x`.
    #[inline]
    pub fn value(&self, k: usize, x: &Sparse) -> f64 {
        block_value(&self.w[k * self.dim..(k + 1) * self.dim], x)
    }

    /// Adds `step * x` to output `k`'s weights.
    #[inline]
    pub fn add(&mut self, k: usize, step: f64, x: &Sparse) {
        block_add(&mut self.w[k * self.dim..(k + 1) * self.dim], step, x);
    }

    /// Each output's block of weights, in output order (a feature map has at
    /// least one feature; `max(1)` only keeps a zero-length map from panicking).
    fn blocks(&self) -> std::slice::ChunksExact<'_, f64> {
        self.w.chunks_exact(self.dim.max(1))
    }

    fn blocks_mut(&mut self) -> std::slice::ChunksExactMut<'_, f64> {
        self.w.chunks_exact_mut(self.dim.max(1))
    }

    /// Whether every weight is finite.
    pub fn is_finite(&self) -> bool {
        self.w.iter().all(|v| v.is_finite())
    }
}

/// Number of feature vectors a [`FeatureCache`] keeps.
const CACHE_SLOTS: usize = 3;

/// `block · x` for one output's weights. A binary code reads the indices only
/// (`w * 1` is `w`), the same sum in the same order.
#[inline]
fn block_value(block: &[f64], x: &Sparse) -> f64 {
    if x.is_binary() {
        return x.idx.iter().map(|&i| block[i as usize]).sum();
    }
    x.idx.iter().zip(&x.val).map(|(&i, &v)| block[i as usize] * v).sum()
}

/// `block += step * x` for one output's weights (`step * 1` is `step`).
#[inline]
fn block_add(block: &mut [f64], step: f64, x: &Sparse) {
    if x.is_binary() {
        for &i in &x.idx {
            block[i as usize] += step;
        }
        return;
    }
    for (&i, &v) in x.idx.iter().zip(&x.val) {
        block[i as usize] += step * v;
    }
}

/// A small cache of feature vectors keyed by observation, least recently
/// used out, so that the features of a state are computed once although the
/// state is seen by `act`, then by `learn` as the next state, then by `learn`
/// as the state, and by both the actor and the critic when they share the
/// cache ([`SharedFeatures`]; three slots: the state, the next one and the
/// one after, which `act` asks for before `learn`).
pub struct FeatureCache {
    features: Box<dyn Features>,
    keys: [Vec<f64>; CACHE_SLOTS],
    ids: [Option<usize>; CACHE_SLOTS],
    /// Last use of each slot (0: empty).
    used: [u64; CACHE_SLOTS],
    slots: [Sparse; CACHE_SLOTS],
    clock: u64,
}

impl FeatureCache {
    /// A cache over a feature map; buffers are sized once here.
    pub fn new(features: Box<dyn Features>) -> Self {
        let cap = features.max_active();
        FeatureCache {
            features,
            keys: std::array::from_fn(|_| Vec::new()),
            ids: [None; CACHE_SLOTS],
            used: [0; CACHE_SLOTS],
            slots: std::array::from_fn(|_| Sparse::with_capacity(cap)),
            clock: 0,
        }
    }

    /// Length of the feature vectors.
    pub fn dim(&self) -> usize {
        self.features.dim()
    }

    /// The feature map.
    pub fn features(&self) -> &dyn Features {
        self.features.as_ref()
    }

    fn find(&self, obs: Obs<'_>) -> Option<usize> {
        (0..CACHE_SLOTS).find(|&i| {
            self.used[i] > 0
                && self.ids[i] == obs.id
                && self.keys[i].len() == obs.values.len()
                && self.keys[i].iter().zip(obs.values).all(|(a, b)| a.to_bits() == b.to_bits())
        })
    }

    /// The slot holding `obs`'s features, computing them if needed without
    /// evicting slot `keep`.
    #[inline]
    fn ensure(&mut self, obs: Obs<'_>, keep: Option<usize>) -> usize {
        self.clock += 1;
        if let Some(i) = self.find(obs) {
            self.used[i] = self.clock;
            return i;
        }
        self.fill(obs, keep)
    }

    /// A miss: computes `obs`'s features into the least recently used slot
    /// other than `keep`. Kept out of line, so the hit path stays short.
    #[inline(never)]
    fn fill(&mut self, obs: Obs<'_>, keep: Option<usize>) -> usize {
        let slot = (0..CACHE_SLOTS)
            .filter(|&i| Some(i) != keep)
            .min_by_key(|&i| self.used[i])
            .expect("a cache has more than one slot");
        // Sized on first use only (observation lengths never change in a job).
        self.keys[slot].clear();
        self.keys[slot].extend_from_slice(obs.values);
        self.ids[slot] = obs.id;
        self.used[slot] = self.clock;
        self.features.compute(obs, &mut self.slots[slot]);
        slot
    }

    /// Features of one state.
    pub fn get(&mut self, obs: Obs<'_>) -> &Sparse {
        let i = self.ensure(obs, None);
        &self.slots[i]
    }

    /// Features of a state and of the next state.
    pub fn pair(&mut self, obs: Obs<'_>, next: Obs<'_>) -> (&Sparse, &Sparse) {
        let i = self.ensure(obs, None);
        let j = self.ensure(next, Some(i));
        (&self.slots[i], &self.slots[j])
    }
}

/// A [`FeatureCache`] that several approximators of one learner use (the
/// actor and the critic over the same features compute each state's features
/// once between them). A job runs on one thread and its approximators take
/// turns, so this is an `Rc<RefCell<_>>`: no atomic instruction per use
/// (natively the uncontended `Mutex` it replaced cost about 8% of W1's step).
/// It is why [`Approx`] and [`crate::learn::Learner`] are not `Send`: a job
/// is built on the thread that runs it (`Job::new` takes the plan and an id).
#[derive(Clone)]
pub struct SharedFeatures(Rc<RefCell<FeatureCache>>);

impl SharedFeatures {
    /// A cache over `features`, not yet shared.
    pub fn new(features: Box<dyn Features>) -> Self {
        SharedFeatures(Rc::new(RefCell::new(FeatureCache::new(features))))
    }

    /// The cache, for as long as the borrow lives (a second borrow at the
    /// same time is a bug and panics, naming `RefCell`).
    pub fn borrow(&self) -> RefMut<'_, FeatureCache> {
        self.0.borrow_mut()
    }
}

/// The feature caches built so far for one learner, by feature settings and
/// input variables: approximators built through the same pool over the same
/// features share one cache.
#[derive(Default)]
pub struct FeaturePool {
    entries: Vec<(FeatureConfig, Vec<StateVar>, Option<usize>, SharedFeatures)>,
}

impl FeaturePool {
    /// The shared cache for these settings, built on first request.
    fn get(
        &mut self,
        cfg: &FeatureConfig,
        vars: &[StateVar],
        n_states: Option<usize>,
        kind: &str,
    ) -> Result<SharedFeatures, FeatureError> {
        if let Some((.., shared)) =
            self.entries.iter().find(|(c, v, n, _)| c == cfg && v.as_slice() == vars && *n == n_states)
        {
            return Ok(shared.clone());
        }
        let shared = SharedFeatures::new(build_features_over(cfg, vars, n_states, kind)?);
        self.entries.push((cfg.clone(), vars.to_vec(), n_states, shared.clone()));
        Ok(shared)
    }
}

/// A differentiable function of the state with a few outputs and a flat
/// weight vector.
pub trait Approx {
    /// Number of outputs.
    fn outputs(&self) -> usize;
    /// The weights.
    fn params(&self) -> &[f64];
    /// The weights, mutable.
    fn params_mut(&mut self) -> &mut [f64];
    /// Step-size factor (see [`Features::step_scale`]; 1 for an MLP).
    fn step_scale(&self) -> f64 {
        1.0
    }
    /// The outputs at `obs`.
    fn eval(&mut self, obs: Obs<'_>) -> &[f64];
    /// Adds `signal · Σ_k coef[k] ∇_w out_k(obs)` to `grad`.
    fn accumulate(&mut self, obs: Obs<'_>, coef: &[f64], signal: f64, grad: &mut Grad);
    /// Plain SGD shortcut: adds `step · Σ_k coef[k] ∇_w out_k(obs)` to the
    /// weights directly and returns `‖Σ_k coef[k] ∇_w out_k‖`, or returns
    /// `None` (and changes nothing) when the approximator has no shortcut.
    fn sgd_step(&mut self, _obs: Obs<'_>, _coef: &[f64], _step: f64) -> Option<f64> {
        None
    }
    /// Writes `Σ_k coef[k] ∂out_k/∂values_j` into `out[j]`; returns false
    /// when the approximator is not differentiable in its input.
    fn input_grad(&mut self, obs: Obs<'_>, coef: &[f64], out: &mut [f64]) -> bool;
}

/// A linear map over a feature map: `out_k = w_k · x(s)`.
pub struct LinearFn {
    cache: SharedFeatures,
    lin: Linear,
    out: Vec<f64>,
    comb: Vec<f64>,
    step_scale: f64,
}

impl LinearFn {
    /// Zero weights over `features`, with `outputs` outputs.
    pub fn new(features: Box<dyn Features>, outputs: usize) -> Self {
        Self::over(SharedFeatures::new(features), outputs)
    }

    /// Zero weights over a (possibly shared) feature cache.
    pub fn over(cache: SharedFeatures, outputs: usize) -> Self {
        let (dim, step_scale) = {
            let c = cache.borrow();
            (c.dim(), c.features().step_scale())
        };
        LinearFn {
            cache,
            lin: Linear::zeros(dim, outputs),
            out: vec![0.0; outputs],
            comb: Vec::new(),
            step_scale,
        }
    }
}

impl Approx for LinearFn {
    fn outputs(&self) -> usize {
        self.lin.outputs
    }
    fn params(&self) -> &[f64] {
        &self.lin.w
    }
    fn params_mut(&mut self) -> &mut [f64] {
        &mut self.lin.w
    }
    fn step_scale(&self) -> f64 {
        self.step_scale
    }
    fn eval(&mut self, obs: Obs<'_>) -> &[f64] {
        let mut cache = self.cache.borrow();
        let x = cache.get(obs);
        if let ([o0, o1], true) = (self.out.as_mut_slice(), self.lin.outputs == 2) {
            // Two outputs (a two-action softmax actor) in one pass over the
            // features: each sum adds the same products in the same order
            // as `Linear::value`, so the values are the same bit for bit.
            let (w0, w1) = self.lin.w.split_at(self.lin.dim);
            let (mut s0, mut s1) = (-0.0, -0.0);
            if x.is_binary() {
                for &i in &x.idx {
                    s0 += w0[i as usize];
                    s1 += w1[i as usize];
                }
            } else {
                for (&i, &v) in x.idx.iter().zip(&x.val) {
                    s0 += w0[i as usize] * v;
                    s1 += w1[i as usize] * v;
                }
            }
            (*o0, *o1) = (s0, s1);
            return &self.out;
        }
        for (o, block) in self.out.iter_mut().zip(self.lin.blocks()) {
            *o = block_value(block, x);
        }
        &self.out
    }
    fn accumulate(&mut self, obs: Obs<'_>, coef: &[f64], signal: f64, grad: &mut Grad) {
        let mut cache = self.cache.borrow();
        let x = cache.get(obs);
        let dim = self.lin.dim;
        for (k, &c) in coef.iter().enumerate() {
            let c = signal * c;
            if c == 0.0 {
                continue;
            }
            for (&i, &v) in x.idx.iter().zip(&x.val) {
                grad.add(k * dim + i as usize, c * v);
            }
        }
    }
    fn sgd_step(&mut self, obs: Obs<'_>, coef: &[f64], step: f64) -> Option<f64> {
        let mut cache = self.cache.borrow();
        let x = cache.get(obs);
        if let ([c0, c1], true) = (coef, self.lin.outputs == 2) {
            // Two outputs in one pass: every weight gets the same single
            // addition as `Linear::add` gives it, so the result is the same
            // bit for bit.
            let (a0, a1) = (step * c0, step * c1);
            let (w0, w1) = self.lin.w.split_at_mut(self.lin.dim);
            if x.is_binary() {
                for &i in &x.idx {
                    w0[i as usize] += a0;
                    w1[i as usize] += a1;
                }
            } else {
                for (&i, &v) in x.idx.iter().zip(&x.val) {
                    w0[i as usize] += a0 * v;
                    w1[i as usize] += a1 * v;
                }
            }
            let sq = 0.0 + c0 * c0 + c1 * c1;
            return Some(f64::sqrt(sq * x.norm_sq()));
        }
        debug_assert_eq!(coef.len(), self.lin.outputs);
        let mut sq = 0.0;
        for (&c, block) in coef.iter().zip(self.lin.blocks_mut()) {
            sq += c * c;
            block_add(block, step * c, x);
        }
        Some(f64::sqrt(sq * x.norm_sq()))
    }
    fn input_grad(&mut self, obs: Obs<'_>, coef: &[f64], out: &mut [f64]) -> bool {
        let dim = self.lin.dim;
        if self.comb.len() != dim {
            // Sized once, on the first call.
            self.comb = vec![0.0; dim];
        }
        for i in 0..dim {
            self.comb[i] = coef.iter().enumerate().map(|(k, c)| c * self.lin.w[k * dim + i]).sum();
        }
        self.cache.borrow().features().input_grad(obs.values, &self.comb, out)
    }
}

/// Hidden-unit nonlinearity of an MLP.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Activation {
    /// Hyperbolic tangent.
    #[default]
    Tanh,
    /// Rectified linear unit, `max(0, x)`.
    Relu,
}

/// Which function approximator an actor or a critic uses (the `actor` and
/// `critic` objects of a learner setup).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum ApproxConfig {
    /// Linear in features: its own `features` object, or (the default) the
    /// setup's `features`.
    Linear {
        /// Features for this approximator only. Default: the setup's.
        #[serde(default)]
        features: Option<FeatureConfig>,
    },
    /// A multi-layer perceptron over the state variables scaled to [−1, 1].
    Mlp {
        /// Units per hidden layer: 1 to 4 layers of 1 to 512 units. Default [32].
        #[serde(default = "default_hidden")]
        hidden: Vec<u32>,
        /// `"tanh"` or `"relu"`. Default `"tanh"`.
        #[serde(default)]
        activation: Activation,
    },
}

fn default_hidden() -> Vec<u32> {
    vec![32]
}

impl Default for ApproxConfig {
    fn default() -> Self {
        ApproxConfig::Linear { features: None }
    }
}

/// Builds an approximator with `outputs` outputs over `vars` (`n_states`
/// for tabular features). A linear approximator without its own features
/// uses `shared`. An MLP draws its initial weights from `rng`; a linear one
/// starts at zero and draws nothing. Errors name the field relative to the
/// approximator object. A linear approximator's feature cache comes from
/// (and is shared through) `pool`.
#[allow(clippy::too_many_arguments)]
pub fn build_approx(
    pool: &mut FeaturePool,
    cfg: &ApproxConfig,
    shared: &FeatureConfig,
    vars: &[StateVar],
    n_states: Option<usize>,
    kind: &str,
    outputs: usize,
    rng: &mut Stream,
) -> Result<Box<dyn Approx>, FeatureError> {
    match cfg {
        ApproxConfig::Linear { features } => {
            let (fc, prefix) = match features {
                Some(f) => (f, "features."),
                None => (shared, "features."),
            };
            let f = pool.get(fc, vars, n_states, kind).map_err(|e| {
                let FeatureError::Invalid(field, msg) = e;
                FeatureError::Invalid(format!("{prefix}{field}"), msg)
            })?;
            Ok(Box::new(LinearFn::over(f, outputs)))
        }
        ApproxConfig::Mlp { hidden, activation } => {
            if hidden.is_empty() || hidden.len() > 4 {
                return Err(FeatureError::Invalid(
                    "hidden".into(),
                    format!("needs 1 to 4 layer sizes, got {}", hidden.len()),
                ));
            }
            if let Some(h) = hidden.iter().find(|&&h| !(1..=512).contains(&h)) {
                return Err(FeatureError::Invalid(
                    "hidden".into(),
                    format!("layer sizes must be in [1, 512], got {h}"),
                ));
            }
            let sizes: Vec<usize> = hidden.iter().map(|&h| h as usize).collect();
            Ok(Box::new(mlp::Mlp::new(vars, &sizes, outputs, *activation, rng)))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::sync::Arc;

    #[test]
    fn linear_value_and_update() {
        let mut l = Linear::zeros(5, 2);
        let mut x = Sparse::with_capacity(2);
        x.push(1, 1.0);
        x.push(3, 0.5);
        l.add(1, 2.0, &x);
        assert_eq!(l.value(0, &x), 0.0);
        assert_eq!(l.value(1, &x), 2.0 * 1.0 + 2.0 * 0.25);
        assert_eq!(l.w[5 + 1], 2.0);
    }

    #[test]
    fn a_binary_code_reads_and_writes_the_same_bits_as_the_general_loops() {
        // x * 1 and step * 1 are exact (IEEE 754-2019, Section 4.3: an
        // operation whose exact result is representable returns it), so the
        // index-only loops must give the general loops' bits. Weights with
        // mixed magnitudes and signs; a duplicate index as hashing can give.
        let w: Vec<f64> = (0..12).map(|i| (f64::from(i) - 5.5) * 1.37e-3 + f64::from(i % 3) * 1e8).collect();
        let idx = [3u32, 7, 3, 0, 5];
        let mut ones = Sparse::with_capacity(5);
        ones.extend_ones(idx.iter().copied());
        assert!(ones.is_binary());
        let mut general = Sparse::with_capacity(6);
        general.push(9, 0.5);
        general.clear();
        general.push(idx[0], 1.0);
        assert!(general.is_binary());
        general.push(11, 0.25);
        assert!(!general.is_binary());
        general.clear();
        for &i in &idx {
            general.push(i, 1.0);
        }
        // Written as ones, but flagged general: the slow path on the same entries.
        general.ones = false;
        assert_eq!(ones, general);
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        let obs = Obs { values: &[0.0], id: None };
        for outputs in [1, 2, 3] {
            let over = |x: &Sparse| {
                let mut f = LinearFn::new(Box::new(Fixed(x.clone())), outputs);
                f.lin.w = w.iter().cycle().take(12 * outputs).copied().collect();
                f
            };
            let (mut a, mut b) = (over(&ones), over(&general));
            for (coef, step) in [([0.3, -1.7, 2.5], 0.05), ([-2.0e-3, 4.0, -0.0], 1.0 / 3.0)] {
                assert_eq!(bits(a.eval(obs)), bits(b.eval(obs)), "{outputs} outputs");
                let (na, nb) =
                    (a.sgd_step(obs, &coef[..outputs], step), b.sgd_step(obs, &coef[..outputs], step));
                assert_eq!(na.map(f64::to_bits), nb.map(f64::to_bits));
                assert_eq!(bits(&a.lin.w), bits(&b.lin.w), "{outputs} outputs");
            }
        }
        assert_eq!(ones.norm_sq().to_bits(), general.norm_sq().to_bits());
        let (mut e1, e2) = (Sparse::with_capacity(1), Sparse::default());
        e1.clear();
        assert_eq!(e1.norm_sq().to_bits(), e2.norm_sq().to_bits(), "the empty sum is -0 on both paths");
    }

    /// The same feature vector for every observation (as written, flag included).
    struct Fixed(Sparse);

    impl Features for Fixed {
        fn dim(&self) -> usize {
            12
        }
        fn max_active(&self) -> usize {
            self.0.idx.len()
        }
        fn compute(&self, _obs: Obs<'_>, out: &mut Sparse) {
            out.clone_from(&self.0);
        }
    }

    /// One-hot features on the state id that count how often they are computed.
    struct Counting(Arc<AtomicUsize>);

    impl Features for Counting {
        fn dim(&self) -> usize {
            10
        }
        fn max_active(&self) -> usize {
            1
        }
        fn compute(&self, obs: Obs<'_>, out: &mut Sparse) {
            self.0.fetch_add(1, Ordering::SeqCst);
            Tabular::one_hot(obs.id.unwrap(), out);
        }
    }

    #[test]
    fn cache_computes_each_state_once_in_runner_order() {
        // The runner acts at the next state before learning on the pair.
        let n = Arc::new(AtomicUsize::new(0));
        let mut c = FeatureCache::new(Box::new(Counting(n.clone())));
        fn o(i: usize, v: &[f64; 1]) -> Obs<'_> {
            Obs { values: &v[..], id: Some(i) }
        }
        let vals: Vec<[f64; 1]> = (0..6).map(|i| [i as f64]).collect();
        c.get(o(0, &vals[0]));
        for s in 0..5 {
            c.get(o(s + 1, &vals[s + 1]));
            let (a, b) = c.pair(o(s, &vals[s]), o(s + 1, &vals[s + 1]));
            assert_eq!((a.idx[0], b.idx[0]), (s as u32, s as u32 + 1));
        }
        assert_eq!(n.load(Ordering::SeqCst), 6);
    }

    #[test]
    fn actor_and_critic_share_one_feature_computation_per_state() {
        // Common practice, no source: through a shared cache, an actor and a
        // critic stepping in the runner's order (act at the next state, then
        // evaluate both states, update at the first) compute each state's
        // features once between them; a pool shares by settings and inputs.
        let n = Arc::new(AtomicUsize::new(0));
        let shared = SharedFeatures::new(Box::new(Counting(n.clone())));
        let (mut actor, mut critic) = (LinearFn::over(shared.clone(), 2), LinearFn::over(shared, 1));
        let vals: Vec<[f64; 1]> = (0..8).map(|i| [i as f64]).collect();
        let o = |i: usize| Obs { values: &vals[i][..], id: Some(i) };
        actor.eval(o(0));
        for s in 0..7 {
            actor.eval(o(s + 1));
            critic.eval(o(s));
            critic.eval(o(s + 1));
            critic.sgd_step(o(s), &[1.0], 0.1);
            actor.sgd_step(o(s), &[1.0, -1.0], 0.1);
        }
        assert_eq!(n.load(Ordering::SeqCst), 8);

        let vars = [StateVar { name: "a".into(), low: -1.0, high: 1.0 }];
        let other = [StateVar { name: "b".into(), low: -1.0, high: 1.0 }];
        let cfg = FeatureConfig::Tiles { tilings: 4, intervals: 4, hash: 0 };
        let mut pool = FeaturePool::default();
        let a = pool.get(&cfg, &vars, None, "test").unwrap();
        let b = pool.get(&cfg, &vars, None, "test").unwrap();
        let c = pool.get(&cfg, &other, None, "test").unwrap();
        let d = pool.get(&FeatureConfig::Fourier { order: 2 }, &vars, None, "test").unwrap();
        assert!(Rc::ptr_eq(&a.0, &b.0));
        assert!(!Rc::ptr_eq(&a.0, &c.0) && !Rc::ptr_eq(&a.0, &d.0));
    }

    #[test]
    fn linear_fn_shortcut_equals_the_gradient_path() {
        // Common practice, no source: the SGD shortcut and the gathered
        // gradient give the same change of the weights.
        let vars = [StateVar { name: "a".into(), low: -1.0, high: 1.0 }];
        let mk = || LinearFn::new(Box::new(tiles::TileCoder::new(&vars, 4, 4, 0).unwrap()), 2);
        let (mut a, mut b) = (mk(), mk());
        let obs = Obs { values: &[0.3], id: None };
        let n = a.sgd_step(obs, &[1.0, -0.5], 0.1).unwrap();
        let mut g = Grad::new(b.params().len());
        b.accumulate(obs, &[1.0, -0.5], 1.0, &mut g);
        assert!((g.norm() - n).abs() < 1e-12);
        for (i, w) in b.params_mut().iter_mut().enumerate() {
            *w += 0.1 * g.values()[i];
        }
        assert_eq!(a.params(), b.params());
        assert_eq!(a.eval(obs), &[0.1 * 4.0, -0.05 * 4.0]);
    }

    #[test]
    fn two_output_pass_equals_the_per_output_loops_bit_for_bit() {
        // Common practice, no source: the fused two-output evaluation and
        // update add the same products in the same order as `Linear::value`
        // and `Linear::add`, so the values and weights agree bit for bit.
        let mut t = 0.0_f64;
        let mut next = move || {
            t += 1.0;
            (t * 12.9898).sin()
        };
        let vars = test_vars(2, -1.0, 1.0);
        let cfg = FeatureConfig::Fourier { order: 3 };
        let mut f = LinearFn::new(build_features_over(&cfg, &vars, None, "test").unwrap(), 2);
        for w in f.params_mut() {
            *w = 2.0 * next();
        }
        let mut reference = f.lin.clone();
        let mut x = Sparse::with_capacity(16);
        for _ in 0..50 {
            let v = [next(), next()];
            let obs = Obs { values: &v, id: None };
            f.cache.borrow().features().compute(obs, &mut x);
            let out = f.eval(obs).to_vec();
            assert_eq!(out[0].to_bits(), reference.value(0, &x).to_bits());
            assert_eq!(out[1].to_bits(), reference.value(1, &x).to_bits());
            let (c, step) = ([next(), next()], 0.01);
            f.sgd_step(obs, &c, step);
            reference.add(0, step * c[0], &x);
            reference.add(1, step * c[1], &x);
            assert!(f.params().iter().zip(&reference.w).all(|(a, b)| a.to_bits() == b.to_bits()));
        }
    }
}
