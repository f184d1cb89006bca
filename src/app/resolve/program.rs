//! `hostcut program`: the horizon (seasons, growth, regrowth, discount) and each season's budget
//! and crew hours.

use super::Settings;
use crate::app::cli::ProgramArgs;
use crate::core::error::{Error, Result};
use crate::planning::program::Horizon;

/// Settings of one `program` run.
#[derive(Debug, Clone)]
pub struct ProgramSettings {
    pub settings: Settings,
    pub horizon: Horizon,
    /// One budget per season.
    pub budgets: Vec<f64>,
    /// One crew-hour limit per season, if limited.
    pub hours: Option<Vec<f64>>,
}

/// One value per season from `values` (one value for every season, or one each).
fn per_season(values: &[f64], seasons: usize, flag: &str) -> Result<Vec<f64>> {
    let v = match values.len() {
        1 => vec![values[0]; seasons],
        n if n == seasons => values.to_vec(),
        n => {
            return Err(Error::input_with_hint(
                format!("`{flag}` has {n} values for {seasons} seasons"),
                "give one value per season, or one value for every season",
            ));
        }
    };
    if let Some(b) = v.iter().find(|b| !(b.is_finite() && **b >= 0.0)) {
        return Err(Error::input(format!("`{flag}`: {b} is not 0 or more")));
    }
    Ok(v)
}

pub fn resolve(args: &ProgramArgs) -> Result<ProgramSettings> {
    let plan_folder = super::plan_folder_of(args.plan_dir.as_deref())?;
    if !(1..=10).contains(&args.seasons) {
        return Err(Error::input("`--seasons` must be between 1 and 10"));
    }
    let budgets = per_season(&args.budgets, args.seasons, "--budgets")?;
    if !(args.discount > 0.0 && args.discount <= 1.0) {
        return Err(Error::input("`--discount` must be above 0 and at most 1"));
    }
    if !(args.growth.is_finite() && args.growth >= 0.0 && args.growth <= 1.0) {
        return Err(Error::input("`--growth` must be between 0 and 1"));
    }
    if !(0.0..=1.0).contains(&args.regrowth) {
        return Err(Error::input("`--regrowth` must be between 0 and 1"));
    }
    let settings = super::single_kernel(
        &args.inputs,
        plan_folder,
        "program",
        "`hostcut program` works on one dispersal kernel",
        "give one kernel, e.g. `--kernel exp:200`",
    )?;
    let hours = if !args.season_crew_hours.is_empty() {
        Some(per_season(
            &args.season_crew_hours,
            args.seasons,
            "--season-crew-hours",
        )?)
    } else {
        settings
            .scenario
            .plan
            .crew_hours
            .map(|h| vec![h; args.seasons])
    };
    Ok(ProgramSettings {
        settings,
        horizon: Horizon {
            seasons: args.seasons,
            growth: args.growth,
            regrowth: args.regrowth,
            discount: args.discount,
        },
        budgets,
        hours,
    })
}
