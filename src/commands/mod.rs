//! One file per subcommand: resolve (in [`crate::app::resolve`]) → library call → print.

pub mod bench;
pub mod calibrate;
pub mod contract;
pub mod curve;
pub mod demo;
pub mod orders;
pub mod plan;
pub mod program;
pub mod simulate;
pub mod survey;

use crate::app::resolve::Settings;
use crate::core::error::Result;
use crate::core::printer::Printer;
use crate::planning::prepare::{self, Prepared};
use crate::report::output::Staging;

/// The shared start of the commands that plan: the output folder staged (refused before any
/// layer is read if it exists without `--force`), then the layers read and prepared.
pub fn stage_and_prepare(
    settings: &Settings,
    command: &'static str,
    printer: Printer,
) -> Result<(Staging, Prepared)> {
    let staging = Staging::new(&settings.out, settings.force, command)?;
    let prepared = prepare::prepare(&settings.scenario, &printer.progress_fn(), printer.bars())?;
    Ok((staging, prepared))
}
