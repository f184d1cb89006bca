//! One file per subcommand.

pub mod curve;
pub mod demo;
pub mod plan;
