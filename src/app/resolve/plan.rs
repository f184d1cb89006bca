//! `hostcut plan`: the planning flags and `--write-mps`.

use std::path::PathBuf;

use super::Settings;
use crate::app::cli::PlanCommand;
use crate::core::error::{Error, Result};

/// Settings of one `plan` run.
#[derive(Debug, Clone)]
pub struct PlanSettings {
    pub settings: Settings,
    /// Where to write the exact MIP in MPS, if asked.
    pub write_mps: Option<PathBuf>,
}

pub fn resolve(args: &PlanCommand) -> Result<PlanSettings> {
    if let Some(p) = &args.write_mps
        && !p.extension().is_some_and(|e| e.eq_ignore_ascii_case("mps"))
    {
        return Err(Error::input_with_hint(
            format!("`--write-mps {}`: the file must end in .mps", p.display()),
            "e.g. `--write-mps plan.mps`",
        ));
    }
    let mut settings = super::resolve(&args.inputs)?;
    super::set_aside_simulate_table(&mut settings, "plan");
    Ok(PlanSettings {
        settings,
        write_mps: args.write_mps.clone(),
    })
}
