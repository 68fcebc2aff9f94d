//! Statistics (placeholder until written).
