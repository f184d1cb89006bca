//! Stage 0, shared by every later stage: errors, cautions, the printer and progress bars, the random stream, dispersal kernels,
//! site rules and patch ids, and the scenario schema.

pub mod cautions;
pub mod csv_cells;
pub mod deadline;
pub mod error;
pub mod kernel;
pub mod memory;
pub mod printer;
pub mod progress;
pub mod rng;
pub mod scenario;
pub mod site;
