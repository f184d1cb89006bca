//! Stage 3, the optimiser: the problem and its answer (`problem`), the heuristics, the exact MIP
//! formulations and their HiGHS runner (`mip`), decomposition by components, the relaxation
//! bounds (`relax`), variable fixing from those bounds (`fixing`), and the orchestrator that
//! picks among them (`optimise`).

pub mod components;
pub mod decompose;
pub mod fixing;
pub mod heuristics;
pub mod instance;
pub mod mip;
pub mod optimise;
pub mod problem;
pub mod relax;
pub mod survey;
