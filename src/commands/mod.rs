//! One file per subcommand.

pub mod demo;
pub mod plan;
