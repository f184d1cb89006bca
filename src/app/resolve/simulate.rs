//! `hostcut simulate`: the spread parameters (flags over `--calibration` over defaults), the
//! runs, and the plan to simulate (`--plan DIR`, or planned here at `--budget`).

use std::path::PathBuf;

use super::Settings;
use crate::app::cli::SimulateArgs;
use crate::core::error::{Error, Result};
use crate::core::scenario::{self, Calibration};
use crate::model::simulate::{LongDistance, Params};
use crate::planning::simulate::Runs;

/// Settings of one `simulate` run.
#[derive(Debug, Clone)]
pub struct SimulateSettings {
    pub settings: Settings,
    pub params: Params,
    pub runs: Runs,
    /// The plan folder whose plan is simulated; none: plan here at the scenario's budget.
    pub plan_dir: Option<PathBuf>,
}

pub fn resolve(args: &SimulateArgs) -> Result<SimulateSettings> {
    let settings = super::planning(
        args.inputs.clone(),
        args.plan_dir.as_deref(),
        args.plan_dir.is_none(),
    )?;
    let fitted = match &settings.scenario.model.calibration {
        Some(path) => Some(scenario::read_calibration(path)?.calibration),
        None => None,
    };
    let params = params(args, fitted.as_ref())?;
    super::refuse_ensemble(
        &settings,
        "`hostcut simulate` works on one dispersal kernel; the scenarios of an ensemble apply to `hostcut plan`",
        "give one kernel, e.g. `--kernel exp:200`, to simulate each scenario in turn",
    )?;
    Ok(SimulateSettings {
        settings,
        params,
        runs: Runs {
            years: args.years,
            runs: args.runs,
            seed: args.seed,
            jobs: args.jobs,
        },
        plan_dir: args.plan_dir.clone(),
    })
}

/// The simulation's parameters: each flag, else the fitted value of `--calibration`, else the
/// default; then the runs' flags checked.
fn params(args: &SimulateArgs, fitted: Option<&Calibration>) -> Result<Params> {
    let d = Params::default();
    let pick = |flag: Option<f64>, fit: Option<f64>, default: f64| flag.or(fit).unwrap_or(default);
    let extinction = pick(args.extinction, fitted.map(|c| c.extinction), d.extinction);
    let extinction_exponent = pick(
        args.extinction_exponent,
        fitted.map(|c| c.extinction_exponent),
        d.extinction_exponent,
    );
    let colonisation = pick(
        args.colonisation,
        fitted.map(|c| c.colonisation),
        d.colonisation,
    );
    let introduction = pick(
        args.introduction,
        fitted.map(|c| c.introduction),
        d.introduction,
    );
    let positive = |v: f64, name: &str| -> Result<()> {
        if v.is_finite() && v >= 0.0 {
            Ok(())
        } else {
            Err(Error::input(format!(
                "`--{name}` must be 0 or more, got {v}"
            )))
        }
    };
    positive(extinction, "extinction")?;
    positive(extinction_exponent, "extinction-exponent")?;
    positive(colonisation, "colonisation")?;
    positive(introduction, "introduction")?;
    positive(args.regrowth, "regrowth")?;
    if !(0.0..=1.0).contains(&args.long_distance_share) {
        return Err(Error::input(
            "`--long-distance-share` must be between 0 and 1",
        ));
    }
    if !(args.long_distance_multiple >= 1.0 && args.long_distance_multiple.is_finite()) {
        return Err(Error::input(
            "`--long-distance-multiple` must be at least 1",
        ));
    }
    if args.years == 0 || args.runs == 0 || args.jobs == 0 {
        return Err(Error::input(
            "`--years`, `--runs` and `--jobs` must be at least 1",
        ));
    }
    if args.years > 1000 || args.runs > 1_000_000 {
        return Err(Error::input(
            "`--years` is at most 1000 and `--runs` at most 1,000,000",
        ));
    }
    Ok(Params {
        extinction,
        extinction_exponent,
        colonisation,
        introduction,
        regrowth: args.regrowth,
        long_distance: (args.long_distance_share > 0.0).then_some(LongDistance {
            share: args.long_distance_share,
            multiple: args.long_distance_multiple,
            after_years: args.long_distance_after_years,
        }),
    })
}
