//! hostcut: plan which tree-of-heaven patches to treat this season, and how, to cut spotted
//! lanternfly establishment risk the most for a fixed budget.
//!
//! Data flow (one module per stage): [`settings`] → [`layers`] → [`patches`] → [`graph`] →
//! [`model`] → [`optimise`] → [`plan`] → [`output`]. GDAL lives in [`gis`]; HiGHS in
//! [`optimise`].

pub mod baselines;
pub mod calendar;
pub mod calibrate;
pub mod cautions;
pub mod chart;
pub mod cli;
pub mod commands;
pub mod contract;
pub mod csv_cells;
pub mod curve;
pub mod deadline;
pub mod decompose;
pub mod demo;
pub mod ensemble;
pub mod error;
pub mod gis;
pub mod graph;
pub mod label;
pub mod layers;
pub mod map;
pub mod model;
pub mod optimise;
pub mod orders;
pub mod output;
pub mod patches;
pub mod pipeline;
pub mod plan;
pub mod program;
pub mod progress;
pub mod relax;
pub mod rng;
pub mod routing;
pub mod settings;
pub mod simulate;
pub mod suitability;
pub mod synthetic;
pub mod treatments;

use cli::{Cli, Command};
pub use error::{Error, Result};

/// Run one command; returns the text for stdout.
pub fn run(cli: Cli) -> Result<String> {
    // GDAL's messages reach the user inside our own errors, once, with the file named; keep its
    // default handler from printing them a second time.
    gdal::config::set_error_handler(|_, _, _| {});
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
