//! Stage 1: reading inputs.

pub mod inventory;
