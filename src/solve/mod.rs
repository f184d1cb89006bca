//! Stage 3: the optimiser.

pub mod components;
pub mod highs;
pub mod problem;
