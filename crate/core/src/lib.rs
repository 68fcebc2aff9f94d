//! critbox core: tasks, actor-critic learners, experiments and statistics.
//!
//! Pure Rust with no browser dependencies; the WebAssembly layer and the
//! native CLI both call into it, so the same config gives the same numbers
//! bit for bit. Randomness is injected through [`rng::Stream`] and
//! transcendental functions come from `libm`, so native and WebAssembly
//! builds agree exactly.
#![deny(missing_docs)]
// Numeric kernels index several parallel arrays with one loop variable;
// iterator chains would hide which index is which.
#![allow(clippy::needless_range_loop)]

pub mod approx;
pub mod exact;
pub mod experiment;
pub mod learn;
pub mod optim;
pub mod policy;
pub mod problem;
pub mod report;
pub mod reward;
pub mod rng;
pub mod settings;
pub mod stats;
pub mod task;
pub mod usertask;
