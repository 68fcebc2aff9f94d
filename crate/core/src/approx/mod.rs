//! Features and function approximators.
//!
//! A [`Features`] map turns an observation into a sparse feature vector
//! ([`Sparse`]): tabular (one-hot on the discrete state) and tile coding
//! (several offset tilings, optionally hashed). [`Linear`] holds one weight
//! block per output (per action, for action values and action preferences)
//! in one contiguous vector. Nothing here allocates per step: buffers are
//! sized once.

pub mod tiles;

use serde::{Deserialize, Serialize};

use crate::task::TaskSpec;

/// What a learner sees of a state: the observation and, for finite tasks, the
/// discrete state index.
#[derive(Clone, Copy, Debug)]
pub struct Obs<'a> {
    /// Values of the task's state variables.
    pub values: &'a [f64],
    /// The discrete state, for finite tasks.
    pub id: Option<usize>,
}

/// A sparse feature vector: parallel lists of indices and values.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Sparse {
    /// Indices of the non-zero features.
    pub idx: Vec<u32>,
    /// Their values.
    pub val: Vec<f64>,
}

impl Sparse {
    /// An empty vector with room for `n` entries.
    pub fn with_capacity(n: usize) -> Self {
        Sparse { idx: Vec::with_capacity(n), val: Vec::with_capacity(n) }
    }

    /// Removes every entry (keeps the capacity).
    pub fn clear(&mut self) {
        self.idx.clear();
        self.val.clear();
    }

    /// Appends one entry.
    #[inline]
    pub fn push(&mut self, i: u32, v: f64) {
        self.idx.push(i);
        self.val.push(v);
    }

    /// Squared Euclidean norm (duplicate indices count separately, as in a
    /// hashed code where they add up in the dot product too).
    pub fn norm_sq(&self) -> f64 {
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
    /// any number of active features (1 / number of tilings for tile coding).
    fn step_scale(&self) -> f64 {
        1.0
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
    /// Writes the one-hot vector of state `s`.
    pub fn one_hot(s: usize, out: &mut Sparse) {
        out.clear();
        out.push(s as u32, 1.0);
    }
}

/// Builds the feature map a setup asks for, checking it fits the task.
pub fn build_features(cfg: &FeatureConfig, spec: &TaskSpec) -> Result<Box<dyn Features>, FeatureError> {
    match cfg {
        FeatureConfig::Tabular => match spec.n_states {
            Some(n) => Ok(Box::new(Tabular { n })),
            None => Err(FeatureError::Invalid(
                "kind".into(),
                format!(
                    "\"tabular\" needs a finite task; {} has continuous states: use \"tiles\"",
                    spec.kind
                ),
            )),
        },
        FeatureConfig::Tiles { tilings, intervals, hash } => {
            let t = tiles::TileCoder::new(&spec.state_vars, *tilings, *intervals, *hash)?;
            Ok(Box::new(t))
        }
    }
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
        let block = &self.w[k * self.dim..(k + 1) * self.dim];
        x.idx.iter().zip(&x.val).map(|(&i, &v)| block[i as usize] * v).sum()
    }

    /// Adds `step * x` to output `k`'s weights.
    #[inline]
    pub fn add(&mut self, k: usize, step: f64, x: &Sparse) {
        let block = &mut self.w[k * self.dim..(k + 1) * self.dim];
        for (&i, &v) in x.idx.iter().zip(&x.val) {
            block[i as usize] += step * v;
        }
    }

    /// Whether every weight is finite.
    pub fn is_finite(&self) -> bool {
        self.w.iter().all(|v| v.is_finite())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

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
}
