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
use crate::app::{demo, settings};
pub use crate::core::error::{Error, Result};
use crate::core::progress;
use crate::report::output;

/// Run one command; returns the text for stdout.
pub fn run(cli: Cli) -> Result<String> {
    crate::input::gis::init();
    progress::init(match &cli.command {
        Command::Plan(a) => a.inputs.quiet,
        Command::Curve(a) => a.inputs.quiet,
        Command::Simulate(a) => a.inputs.quiet,
        Command::Calibrate(a) => a.inputs.quiet,
        Command::Program(a) => a.inputs.quiet,
        Command::Orders(a) => a.quiet,
        Command::Demo(a) => a.quiet,
        _ => false,
    });
    match cli.command {
        Command::Plan(args) => {
            if let Some(p) = &args.write_mps
                && !p.extension().is_some_and(|e| e.eq_ignore_ascii_case("mps"))
            {
                return Err(Error::input_with_hint(
                    format!("`--write-mps {}`: the file must end in .mps", p.display()),
                    "e.g. `--write-mps plan.mps`",
                ));
            }
            let settings = settings::resolve(&args.inputs)?;
            let report = commands::plan::run_with(&settings, args.write_mps.as_deref())?;
            Ok(report.text)
        }
        Command::Curve(args) => Ok(commands::curve::run(&args)?.text),
        Command::Contract(args) => Ok(commands::contract::run_contract(&args)?),
        Command::Record(args) => Ok(commands::contract::run_record(&args)?),
        Command::Orders(args) => commands::orders::run(&args),
        Command::Simulate(args) => commands::simulate::run(&args),
        Command::Calibrate(args) => commands::calibrate::run(&args),
        Command::Program(args) => commands::program::run(&args),
        Command::Demo(args) => Ok(commands::demo::run(&args)?.text),
        Command::Bench(args) => commands::bench::run(&args),
        Command::MakeDemoInputs(args) => {
            let staging = output::Staging::new(&args.dir, args.force, "make-demo-inputs")?;
            demo::write_inputs(staging.dir())?;
            let dir = staging.commit()?;
            Ok(format!("demo inputs written to {}\n", dir.display()))
        }
    }
}
