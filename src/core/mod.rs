//! Stage 0: types and helpers every stage shares.

pub mod kernel;
pub mod scenario;
pub mod site;
