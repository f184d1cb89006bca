//! `hostcut simulate`: the spread parameters (flags over the scenario's `[simulate]` table over
//! `--calibration` over defaults), the runs, and the plan to simulate (`--plan DIR`, the
//! table's `plan`, or planned here at `--budget`). What was resolved is kept as a
//! [`SimulateSection`] for the run's record, `simulate.resolved.toml`.

use std::path::PathBuf;

use super::Settings;
use crate::app::cli::SimulateArgs;
use crate::core::error::{Error, Result};
use crate::core::scenario::{self, Calibration, SimulateSection};
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
    /// Every setting above as `simulate.resolved.toml`'s `[simulate]` table records it.
    pub record: SimulateSection,
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
    let table = settings.scenario.simulate.clone().unwrap_or_default();
    // Absolute, so the record names the folder wherever it is read from.
    let plan_dir = match &args.plan_dir {
        Some(dir) => Some(std::path::absolute(dir).map_err(|e| Error::io("resolve", dir, e))?),
        None => table.plan.clone(),
    };
    let record = chosen(args, &table, fitted.as_ref(), plan_dir);
    let params = params(&record)?;
    if args.jobs == 0 {
        return Err(Error::input(
            "`--years`, `--runs` and `--jobs` must be at least 1",
        ));
    }
    super::refuse_ensemble(
        &settings,
        "`hostcut simulate` works on one dispersal kernel; the scenarios of an ensemble apply to `hostcut plan`",
        "give one kernel, e.g. `--kernel exp:200`, to simulate each scenario in turn",
    )?;
    Ok(SimulateSettings {
        settings,
        params,
        runs: Runs {
            years: record.years.unwrap_or_default(),
            runs: record.runs.unwrap_or_default(),
            seed: record.seed.unwrap_or_default(),
            jobs: args.jobs,
            proxy_plans: record.proxy_plans.unwrap_or_default(),
        },
        plan_dir: record.plan.clone(),
        record,
    })
}

/// Each setting: the flag, else the scenario's `[simulate]` table, else (the rates) the fitted
/// value of `--calibration`, else the default. Every field of the result is set.
fn chosen(
    args: &SimulateArgs,
    table: &SimulateSection,
    fitted: Option<&Calibration>,
    plan: Option<PathBuf>,
) -> SimulateSection {
    let d = Params::default();
    let rate = |flag: Option<f64>, kept: Option<f64>, fit: Option<f64>, default: f64| {
        Some(flag.or(kept).or(fit).unwrap_or(default))
    };
    SimulateSection {
        plan,
        years: Some(args.years.or(table.years).unwrap_or(10)),
        runs: Some(args.runs.or(table.runs).unwrap_or(500)),
        seed: Some(args.seed.or(table.seed).unwrap_or(42)),
        proxy_plans: Some(args.proxy_plans.or(table.proxy_plans).unwrap_or(12)),
        extinction: rate(
            args.extinction,
            table.extinction,
            fitted.map(|c| c.extinction),
            d.extinction,
        ),
        extinction_exponent: rate(
            args.extinction_exponent,
            table.extinction_exponent,
            fitted.map(|c| c.extinction_exponent),
            d.extinction_exponent,
        ),
        colonisation: rate(
            args.colonisation,
            table.colonisation,
            fitted.map(|c| c.colonisation),
            d.colonisation,
        ),
        introduction: rate(
            args.introduction,
            table.introduction,
            fitted.map(|c| c.introduction),
            d.introduction,
        ),
        regrowth: rate(args.regrowth, table.regrowth, None, d.regrowth),
        long_distance_share: rate(
            args.long_distance_share,
            table.long_distance_share,
            None,
            0.0,
        ),
        long_distance_multiple: rate(
            args.long_distance_multiple,
            table.long_distance_multiple,
            None,
            10.0,
        ),
        long_distance_after_years: Some(
            args.long_distance_after_years
                .or(table.long_distance_after_years)
                .unwrap_or(3),
        ),
    }
}

/// The simulation's parameters from the chosen settings, each checked.
fn params(c: &SimulateSection) -> Result<Params> {
    let v = |x: Option<f64>| x.unwrap_or_default();
    let (extinction, extinction_exponent, colonisation, introduction, regrowth) = (
        v(c.extinction),
        v(c.extinction_exponent),
        v(c.colonisation),
        v(c.introduction),
        v(c.regrowth),
    );
    let (share, multiple) = (v(c.long_distance_share), v(c.long_distance_multiple));
    let (years, runs) = (c.years.unwrap_or(0), c.runs.unwrap_or(0));
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
    positive(regrowth, "regrowth")?;
    if !(0.0..=1.0).contains(&share) {
        return Err(Error::input(
            "`--long-distance-share` must be between 0 and 1",
        ));
    }
    if !(multiple >= 1.0 && multiple.is_finite()) {
        return Err(Error::input(
            "`--long-distance-multiple` must be at least 1",
        ));
    }
    if years == 0 || runs == 0 {
        return Err(Error::input(
            "`--years`, `--runs` and `--jobs` must be at least 1",
        ));
    }
    if years > 1000 || runs > 1_000_000 {
        return Err(Error::input(
            "`--years` is at most 1000 and `--runs` at most 1,000,000",
        ));
    }
    if c.proxy_plans.unwrap_or(0) > 1000 {
        return Err(Error::input_with_hint(
            "`--proxy-plans` is at most 1000",
            "a dozen random plans show whether R ranks plans as the simulation does; each one is simulated in full",
        ));
    }
    Ok(Params {
        extinction,
        extinction_exponent,
        colonisation,
        introduction,
        regrowth,
        long_distance: (share > 0.0).then_some(LongDistance {
            share,
            multiple,
            after_years: c.long_distance_after_years.unwrap_or(3),
        }),
    })
}
