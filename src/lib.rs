//! hostcut: plan which tree-of-heaven patches to treat this season, and how, to cut spotted
//! lanternfly establishment risk the most for a fixed budget.
//!
//! The folders are the pipeline's stages, each using only the ones before it (docs/ARCHITECTURE.md):
//! [`core`] → [`input`] → [`model`] → [`solve`] → [`planning`] → [`field`] → [`report`] → [`app`]
//! → [`commands`]. GDAL lives in [`input::gis`]; HiGHS in [`solve`].

pub mod app;
pub mod commands;
pub mod core;
pub mod field;
pub mod input;
pub mod model;
pub mod planning;
pub mod report;
pub mod solve;

use crate::app::cli::{Cli, Command};
use crate::app::{demo, resolve};
pub use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::report::output;

/// Run one command; returns the text for stdout.
pub fn run(cli: Cli) -> Result<String> {
    crate::input::gis::init();
    let printer = Printer::new(match &cli.command {
        Command::Plan(a) => a.inputs.quiet,
        Command::Curve(a) => a.inputs.quiet,
        Command::Simulate(a) => a.inputs.quiet,
        Command::Calibrate(a) => a.inputs.quiet,
        Command::Program(a) => a.inputs.quiet,
        Command::Survey(a) => a.inputs.quiet,
        Command::Orders(a) => a.quiet,
        Command::Demo(a) => a.quiet,
        _ => false,
    });
    match cli.command {
        Command::Plan(args) => {
            let settings = resolve::plan::resolve(&args)?;
            Ok(commands::plan::run(&settings, printer)?.text)
        }
        Command::Curve(args) => {
            let settings = resolve::curve::resolve(&args)?;
            Ok(commands::curve::run(&settings, printer)?.text)
        }
        Command::Contract(args) => {
            commands::contract::run_contract(&resolve::contract::contract(&args)?)
        }
        Command::Record(args) => commands::contract::run_record(&resolve::contract::record(&args)?),
        Command::Orders(args) => commands::orders::run(resolve::orders::resolve(&args)?, printer),
        Command::Simulate(args) => {
            commands::simulate::run(&resolve::simulate::resolve(&args)?, printer)
        }
        Command::Calibrate(args) => {
            commands::calibrate::run(&resolve::calibrate::resolve(&args)?, printer)
        }
        Command::Program(args) => {
            commands::program::run(&resolve::program::resolve(&args)?, printer)
        }
        Command::Survey(args) => commands::survey::run(&resolve::survey::resolve(&args)?, printer),
        Command::Demo(args) => Ok(commands::demo::run(&args, printer)?.text),
        Command::Bench(args) => commands::bench::run(&args, printer),
        Command::MakeDemoInputs(args) => {
            let staging = output::Staging::new(&args.dir, args.force, "make-demo-inputs")?;
            demo::write_inputs(staging.dir())?;
            let dir = staging.commit()?;
            Ok(format!("demo inputs written to {}\n", dir.display()))
        }
    }
}
