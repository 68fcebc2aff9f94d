//! critbox core.
pub mod rng;
pub mod stats;
