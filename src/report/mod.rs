//! Stage 6, outputs: the output folder (staging, atomic swap) and its writers, charts and maps.

pub mod chart;
pub mod format;
pub mod map;
pub mod orders;
pub mod output;
pub mod staging;
