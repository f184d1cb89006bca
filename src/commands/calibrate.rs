//! `hostcut calibrate`: read survey records, assign them to patches, fit the occupancy model for
//! each kernel family, and write calibration.toml (for `--calibration` and `--ensemble`),
//! calibration.csv, likelihood.svg, surveys_assigned.csv and unassigned_surveys.csv.

use crate::app::resolve::calibrate::CalibrateSettings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::model::calibrate::surveys;
use crate::planning::calibrate;
use crate::planning::prepare;
use crate::report::calibrate as calibrate_report;
use crate::report::output::Staging;

pub fn run(resolved: &CalibrateSettings, printer: Printer) -> Result<String> {
    let settings = &resolved.settings;
    let surveys = surveys::read_surveys(&resolved.surveys)?;
    let prepared = prepare::prepare(&settings.scenario, &printer.progress_fn(), printer.bars())?;
    let calibrated = calibrate::calibrate(
        &prepared,
        surveys,
        &resolved.surveys,
        resolved.surveys_crs.as_deref(),
        &resolved.search,
        printer,
    )?;
    // The output folder is staged only once the fit has succeeded.
    let out =
        std::path::absolute(&settings.out).map_err(|e| Error::io("resolve", &settings.out, e))?;
    let staging = Staging::new(&out, settings.force, "calibrate")?;
    calibrate_report::write(&staging, &prepared, &calibrated, &resolved.search)?;
    let out = staging.commit()?;

    let (fit, other) = (calibrated.fit(), calibrated.other());
    let theta = &fit.theta;
    let c = &calibrated.file.calibration;
    let n = calibrated.surveys.len();
    let mut t = printer.text();
    t.line(format_args!(
        "hostcut calibrate: {n} surveys ({} assigned to patches, {} too far from any patch: unassigned_surveys.csv), {}-{}, {} year-to-year transitions",
        n - calibrated.unassigned,
        calibrated.unassigned,
        calibrated.observations.first_year,
        calibrated.last_year(),
        calibrated.transitions
    ));
    t.line(format_args!(
        "the surveys favour the {} kernel (AIC {:.1} against {:.1} for {}: difference {:.1})",
        fit.family.as_str(),
        fit.aic,
        other.aic,
        other.family.as_str(),
        other.aic - fit.aic
    ));
    t.line(format_args!(
        "  alpha {:.0} m (95% profile interval {:.0} to {:.0} m); colonisation {:.3}, extinction {:.3}, introduction {:.4}",
        theta.alpha_m,
        c.alpha_low_m,
        c.alpha_high_m,
        theta.colonisation,
        theta.extinction,
        theta.introduction
    ));
    t.line(format_args!(
        "plan with `--calibration {0}`, or across the interval with `--ensemble {0}`",
        out.join("calibration.toml").display()
    ));
    t.line(format_args!(
        "outputs in {}: calibration.toml, calibration.csv, likelihood.svg, surveys_assigned.csv, unassigned_surveys.csv, cautions.txt",
        out.display()
    ));
    // Calibration prescribes nothing: its cautions block is for the reader, not for `--quiet`.
    t.cautions(&cautions::standing_text(), false);
    Ok(t.into_string())
}
