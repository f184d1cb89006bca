//! Stage 6, outputs: the output folder (staging, atomic swap) and its writers, charts and maps.

pub mod calibrate;
pub mod chart;
pub mod contract;
pub mod curve;
pub mod format;
pub mod map;
pub mod orders;
pub mod output;
pub mod plan;
pub mod program;
pub mod simulate;
pub mod staging;
pub mod survey;
