//! Stage 2, the model: the patch graph, the risk model, ensembles of dispersal scenarios,
//! calibration from surveys, the spread simulation and synthetic landscapes.

pub mod calibrate;
pub mod ensemble;
pub mod graph;
pub mod risk;
pub mod simulate;
pub mod survey;
pub mod synthetic;
