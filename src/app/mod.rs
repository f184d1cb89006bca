//! Stage 7, the application: command-line arguments (plain clap data), the resolve step and the
//! demo landscape.

pub mod cli;
pub mod demo;
pub mod settings;
