//! One file per subcommand.

pub mod bench;
pub mod calibrate;
pub mod contract;
pub mod curve;
pub mod demo;
pub mod ensemble;
pub mod orders;
pub mod plan;
pub mod program;
pub mod simulate;
