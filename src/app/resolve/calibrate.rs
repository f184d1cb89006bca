//! `hostcut calibrate`: the surveys, their CRS and assignment radius, and the search of the
//! kernel scale.

use std::path::PathBuf;

use super::Settings;
use crate::app::cli::CalibrateArgs;
use crate::core::error::{Error, Result};
use crate::planning::calibrate::Search;

/// Settings of one `calibrate` run.
#[derive(Debug, Clone)]
pub struct CalibrateSettings {
    pub settings: Settings,
    /// The survey CSV.
    pub surveys: PathBuf,
    /// The CRS of the surveys' x, y when it is not the patches'.
    pub surveys_crs: Option<String>,
    pub search: Search,
}

pub fn resolve(args: &CalibrateArgs) -> Result<CalibrateSettings> {
    let mut inputs = args.inputs.clone();
    let mut surveys_crs = args.surveys_crs.clone();
    if let Some(dir) = &args.plan_dir {
        inputs.scenario = Some(super::plan_folder_scenario(dir)?);
        // With a plan folder the inventory's CRS is settled; `--crs` can only mean the surveys'.
        if surveys_crs.is_none() {
            surveys_crs = inputs.crs.take();
        }
    }
    let (alpha_min, alpha_max) = parse_range(&args.alpha_range)?;
    if !(args.survey_radius_m >= 0.0 && args.survey_radius_m.is_finite()) {
        return Err(Error::input("`--survey-radius-m` must be 0 or more"));
    }
    if !(3..=200).contains(&args.alpha_steps) {
        return Err(Error::input("`--alpha-steps` must be between 3 and 200"));
    }
    if !(args.extinction_exponent.is_finite() && args.extinction_exponent >= 0.0) {
        return Err(Error::input("`--extinction-exponent` must be 0 or more"));
    }
    let mut settings = super::planning(inputs, None, false)?;
    super::set_aside_simulate_table(&mut settings, "calibrate");
    Ok(CalibrateSettings {
        settings,
        surveys: args.surveys.clone(),
        surveys_crs,
        search: Search {
            alpha_min,
            alpha_max,
            alpha_steps: args.alpha_steps,
            survey_radius_m: args.survey_radius_m,
            extinction_exponent: args.extinction_exponent,
            min_transitions: args.min_transitions,
        },
    })
}

fn parse_range(text: &str) -> Result<(f64, f64)> {
    let bad = || {
        Error::input_with_hint(
            format!("`--alpha-range {text}` is not MIN:MAX"),
            "e.g. `--alpha-range 25:3000` (metres)",
        )
    };
    let (a, b) = text.split_once(':').ok_or_else(bad)?;
    let (a, b): (f64, f64) = (
        a.trim().parse().map_err(|_| bad())?,
        b.trim().parse().map_err(|_| bad())?,
    );
    if !(a > 0.0 && b > a && b.is_finite()) {
        return Err(bad());
    }
    Ok((a, b))
}
