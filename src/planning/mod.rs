//! Stage 4, planning: the prepared pipeline (layers → patches → graph → model → choices), one
//! plan, the baselines, budget curves and multi-season programs.

pub mod baselines;
pub mod calibrate;
pub mod curve;
pub mod divergence;
pub mod ensemble;
pub mod plan;
pub mod prepare;
pub mod program;
pub mod proxy;
pub mod simulate;
pub mod survey;
