//! Stage 3, the optimiser: the problem and its answer, the heuristics and MIP formulations, the
//! HiGHS runner, decomposition by components and the relaxation bounds.

pub mod components;
pub mod decompose;
pub mod highs;
pub mod optimise;
pub mod problem;
pub mod relax;
