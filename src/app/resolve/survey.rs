//! `hostcut survey`: the survey hours, sites, records, methods and rates, each checked.

use std::path::PathBuf;

use super::Settings;
use crate::app::cli::SurveyArgs;
use crate::core::error::{Error, Result};
use crate::core::scenario;
use crate::input::survey_methods::SurveyMethods;
use crate::model::simulate::Params;
use crate::model::survey::Rates;
use crate::planning::survey::SurveyRequest;

/// Settings of one `survey` run.
#[derive(Debug, Clone)]
pub struct SurveySettings {
    pub settings: Settings,
    pub request: SurveyRequest,
    pub methods: SurveyMethods,
    pub sites: Option<PathBuf>,
    pub surveys: Option<PathBuf>,
}

pub fn resolve(args: &SurveyArgs) -> Result<SurveySettings> {
    if !(args.hours > 0.0 && args.hours.is_finite()) {
        return Err(Error::input_with_hint(
            format!("`--hours {}` must be more than 0", args.hours),
            "the crew hours this season has for surveys, travel included, e.g. `--hours 80`",
        ));
    }
    if !(1..=20).contains(&args.max_visits) {
        return Err(Error::input("`--max-visits` must be between 1 and 20"));
    }
    let weight_host = match args.weight.to_ascii_lowercase().as_str() {
        "host" => true,
        "none" => false,
        other => {
            return Err(Error::input_with_hint(
                format!("`--weight {other}` is neither `host` nor `none`"),
                "`--weight host` counts a population on much host for more",
            ));
        }
    };
    if !(1..=100).contains(&args.history_years) {
        return Err(Error::input("`--history-years` must be between 1 and 100"));
    }
    if !(args.survey_radius_m >= 0.0 && args.survey_radius_m.is_finite()) {
        return Err(Error::input("`--survey-radius-m` must be 0 or more"));
    }
    if !(args.speed_kmh > 0.0 && args.speed_kmh.is_finite()) {
        return Err(Error::input("`--speed-kmh` must be more than 0"));
    }
    if !(args.detour_factor >= 1.0 && args.detour_factor.is_finite()) {
        return Err(Error::input(
            "`--detour-factor` must be at least 1 (road distance is never shorter than the straight line)",
        ));
    }
    let methods = SurveyMethods::load(args.survey_methods.as_deref())?;
    let past_detection = match args.past_detection {
        Some(p) => p,
        None => {
            methods
                .get("visual")
                .unwrap_or(&methods.methods[0])
                .detect_per_visit
        }
    };
    if !(0.0..1.0).contains(&past_detection) {
        return Err(Error::input_with_hint(
            format!("`--past-detection {past_detection}` must be 0 or more and below 1"),
            "a past negative visit is weak evidence of absence, never proof",
        ));
    }
    let mut settings = super::planning(args.inputs.clone(), args.plan_dir.as_deref(), false)?;
    super::set_aside_simulate_table(&mut settings, "survey");
    super::refuse_ensemble(
        &settings,
        "`hostcut survey` works on one dispersal kernel",
        "give one kernel, e.g. `--kernel exp:200`, or `--calibration calibration.toml`",
    )?;
    // The yard: `--depot X,Y` (a planning flag) or the plan folder's scenario's depot.
    let depot = settings.scenario.plan.depot.map(|[x, y]| (x, y));
    let d = Params::default();
    let (rates, rates_source) = match &settings.scenario.model.calibration {
        Some(path) => {
            let c = scenario::read_calibration(path)?.calibration;
            (
                Rates {
                    colonisation: c.colonisation,
                    introduction: c.introduction,
                },
                format!("the fit to surveys in {}", path.display()),
            )
        }
        None => (
            Rates {
                colonisation: d.colonisation,
                introduction: d.introduction,
            },
            "the simulation's defaults (illustrative; fit them with `hostcut calibrate` and give `--calibration`)".to_string(),
        ),
    };
    Ok(SurveySettings {
        settings,
        request: SurveyRequest {
            hours: args.hours,
            max_visits: args.max_visits,
            weight_host,
            season: args.season,
            history_years: args.history_years,
            past_detection,
            survey_radius_m: args.survey_radius_m,
            depot,
            detour: args.detour_factor,
            speed_kmh: args.speed_kmh,
            rates,
            rates_source,
        },
        methods,
        sites: args.sites.clone(),
        surveys: args.surveys.clone(),
    })
}
