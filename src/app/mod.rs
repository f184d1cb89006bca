//! Stage 7, the application: command-line arguments (plain clap data), one resolve step per
//! subcommand (flags → typed settings) and the demo landscape.

pub mod cli;
pub mod demo;
pub mod resolve;
