//! Raw arguments → resolved settings, one resolve step per subcommand.
//!
//! The clap structs of [`crate::app::cli`] stay plain data. Each subcommand's `resolve` checks
//! its own flags, then (for the subcommands that plan) runs the shared preamble once: `--plan
//! DIR` stands for that folder's scenario.resolved.toml, the flags are laid over the scenario
//! file over defaults ([`scenario`]), every number is validated ([`validate`]), and a
//! single-kernel command refuses an ensemble. What comes out is typed settings the command hands
//! to the library; nothing here reads a layer or solves anything.
//!
//! # Units
//! Distances in metres, areas in hectares, densities in stems per hectare, money in the currency
//! of the treatment catalogue, time in hours (crew) or seconds (solver).

pub mod calibrate;
pub mod contract;
pub mod curve;
pub mod orders;
pub mod plan;
pub mod program;
pub mod scenario;
pub mod simulate;
pub mod survey;
pub mod validate;

use std::path::{Path, PathBuf};

use crate::app::cli::PlanArgs;
use crate::core::deadline::Deadline;
use crate::core::error::{Error, Result};
use crate::core::scenario::Scenario;

pub use scenario::{plan_folder_scenario, resolve, resolve_with};
pub use validate::validate;

/// The resolved scenario of one planning run plus its run-only switches.
#[derive(Debug, Clone)]
pub struct Settings {
    pub scenario: Scenario,
    pub out: PathBuf,
    pub force: bool,
    /// When the command started (before any layer is read): `--time-limit-s` counts from here.
    pub started: std::time::Instant,
}

impl Settings {
    /// The deadline of every search of this command: `--time-limit-s` from the command's start,
    /// less the reserve for writing outputs ([`crate::core::deadline::OUTPUT_RESERVE`]).
    pub fn deadline(&self) -> Deadline {
        Deadline::for_command(self.started, self.scenario.solver.time_limit_s)
    }
}

/// The shared preamble of the subcommands that plan: `plan_dir` (`--plan DIR`) stands for that
/// folder's scenario.resolved.toml under the flags, which are laid over it and validated;
/// `need_budget` false for commands that choose their own budgets.
pub fn planning(
    mut inputs: PlanArgs,
    plan_dir: Option<&Path>,
    need_budget: bool,
) -> Result<Settings> {
    if let Some(dir) = plan_dir {
        inputs.scenario = Some(plan_folder_scenario(dir)?);
    }
    resolve_with(&inputs, need_budget)
}

/// The preamble of `curve` and `program`, after their own flags: the plan folder's scenario
/// (`plan_folder`, read before their flags were checked so a wrong `--plan` is said first)
/// under the flags, resolved without a budget, an ensemble refused with `message` and `hint`,
/// a `[simulate]` table set aside (`command` names the command in the note).
pub fn single_kernel(
    args: &PlanArgs,
    plan_folder: Option<PathBuf>,
    command: &str,
    message: &str,
    hint: &str,
) -> Result<Settings> {
    let mut inputs = args.clone();
    if plan_folder.is_some() {
        inputs.scenario = plan_folder;
    }
    let mut settings = planning(inputs, None, false)?;
    refuse_ensemble(&settings, message, hint)?;
    set_aside_simulate_table(&mut settings, command);
    Ok(settings)
}

/// A plan folder's scenario.resolved.toml, when `--plan DIR` is given.
pub fn plan_folder_of(plan_dir: Option<&Path>) -> Result<Option<PathBuf>> {
    plan_dir.map(plan_folder_scenario).transpose()
}

/// A scenario's `[simulate]` table (as `simulate.resolved.toml` has) is `hostcut simulate`'s
/// alone: any other command takes it out of its settings, so its own record does not carry it,
/// and says so rather than dropping it silently.
pub fn set_aside_simulate_table(settings: &mut Settings, command: &str) {
    if settings.scenario.simulate.take().is_some() {
        crate::core::printer::note(format_args!(
            "note: the scenario's [simulate] table applies to `hostcut simulate` only; `hostcut {command}` does not use it"
        ));
    }
}

/// Refuse an ensemble for a command that works on one dispersal kernel.
pub fn refuse_ensemble(settings: &Settings, message: &str, hint: &str) -> Result<()> {
    if settings.scenario.ensemble.is_some() {
        return Err(Error::input_with_hint(message, hint));
    }
    Ok(())
}
