//! The calibration's outputs: calibration.toml (for `--calibration` and `--ensemble`),
//! calibration.csv, surveys_assigned.csv, unassigned_surveys.csv, likelihood.svg and
//! cautions.txt.
//!
//! # Units
//! Kernel scales and distances in metres; coordinates in the patches' CRS.

use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::model::calibrate::PROFILE_DROP;
use crate::model::calibrate::surveys::Placement;
use crate::planning::calibrate::{Calibrated, Search};
use crate::planning::prepare::Prepared;
use crate::report::chart::{self, Series, Style};
use crate::report::output::Staging;

fn opt(v: Option<f64>) -> String {
    v.map(|x| format!("{x:.6}")).unwrap_or_default()
}

pub fn write(
    staging: &Staging,
    prepared: &Prepared,
    calibrated: &Calibrated,
    search: &Search,
) -> Result<()> {
    let fits = &calibrated.fits;
    let toml_text = toml::to_string_pretty(&calibrated.file)
        .map_err(|e| Error::Internal(format!("calibration.toml: {e}")))?;
    staging.write(
        "calibration.toml",
        format!(
            "# Fitted by `hostcut calibrate` to the surveys named below. Use it with\n# `--calibration calibration.toml` (plan, curve, simulate) or `--ensemble calibration.toml`\n# (plan: the fitted scale and the ends of its 95% interval as scenarios).\n{toml_text}"
        ),
    )?;

    // calibration.csv
    let mut w = crate::core::csv_cells::Writer::new();
    w.row(["parameter", "family", "estimate", "low", "high"])?;
    for f in fits {
        let name = f.family.as_str();
        let rows: [(&str, f64, Option<f64>, Option<f64>); 6] = [
            ("alpha_m", f.theta.alpha_m, f.alpha_low, f.alpha_high),
            (
                "colonisation",
                f.theta.colonisation,
                f.colonisation_ci.map(|c| c.0),
                f.colonisation_ci.map(|c| c.1),
            ),
            (
                "extinction",
                f.theta.extinction,
                f.extinction_ci.map(|c| c.0),
                f.extinction_ci.map(|c| c.1),
            ),
            (
                "introduction",
                f.theta.introduction,
                f.introduction_ci.map(|c| c.0),
                f.introduction_ci.map(|c| c.1),
            ),
            ("log_likelihood", f.log_likelihood, None, None),
            ("aic", f.aic, None, None),
        ];
        for (p, v, lo, hi) in rows {
            w.row([p, name, &format!("{v:.6}"), &opt(lo), &opt(hi)])?;
        }
    }
    staging.write("calibration.csv", w.into_bytes()?)?;

    // Surveys: where each went.
    let mut w = crate::core::csv_cells::Writer::new();
    w.row([
        "line",
        "x",
        "y",
        "year",
        "result",
        "patch_id",
        "how",
        "distance_m",
        "date",
        "source",
    ])?;
    let mut u = crate::core::csv_cells::Writer::new();
    u.row([
        "line",
        "x",
        "y",
        "year",
        "result",
        "nearest_patch",
        "distance_m",
        "reason",
    ])?;
    let label = |i: usize| prepared.patches.items[i].label.clone();
    for (sv, p) in calibrated.surveys.iter().zip(&calibrated.placed) {
        let result = if sv.positive { "positive" } else { "negative" };
        match p {
            Placement::Inside(i) | Placement::Nearest(i, _) => {
                let (how, d) = match p {
                    Placement::Inside(_) => ("inside", 0.0),
                    Placement::Nearest(_, d) => ("nearest", *d),
                    _ => unreachable!(),
                };
                w.row([
                    sv.line.to_string(),
                    format!("{:.2}", sv.x),
                    format!("{:.2}", sv.y),
                    sv.year.to_string(),
                    result.into(),
                    label(*i),
                    how.into(),
                    format!("{d:.1}"),
                    sv.date.clone(),
                    sv.source.clone(),
                ])?;
            }
            Placement::TooFar(near, d) => {
                u.row([
                    sv.line.to_string(),
                    format!("{:.2}", sv.x),
                    format!("{:.2}", sv.y),
                    sv.year.to_string(),
                    result.into(),
                    near.map(label).unwrap_or_default(),
                    if d.is_finite() {
                        format!("{d:.1}")
                    } else {
                        String::new()
                    },
                    format!(
                        "outside every patch and more than {} m from the nearest",
                        search.survey_radius_m
                    ),
                ])?;
            }
        }
    }
    staging.write("surveys_assigned.csv", w.into_bytes()?)?;
    staging.write("unassigned_surveys.csv", u.into_bytes()?)?;

    // likelihood.svg: deviance 2 (ln L_max - ln L(alpha)) against log10 alpha, per family.
    let top = fits
        .iter()
        .map(|f| f.log_likelihood)
        .fold(f64::NEG_INFINITY, f64::max);
    let y_max = 20.0;
    let styles = [Style::Main, Style::Dashed];
    let mut series: Vec<Series> = fits
        .iter()
        .zip(styles)
        .map(|(f, style)| Series {
            id: f.family.as_str().to_string(),
            label: format!("{} kernel (AIC {:.1})", f.family.as_str(), f.aic),
            points: f
                .profile
                .iter()
                .map(|&(a, ll)| (a.log10(), (2.0 * (top - ll)).min(y_max)))
                .collect(),
            style,
        })
        .collect();
    series.push(Series {
        id: "threshold".into(),
        label: "95% threshold (chi-square 1 df: 3.84)".into(),
        points: vec![
            (search.alpha_min.log10(), 2.0 * PROFILE_DROP),
            (search.alpha_max.log10(), 2.0 * PROFILE_DROP),
        ],
        style: Style::Dotted,
    });
    let svg = chart::line_chart(
        "Profile likelihood of the kernel scale",
        "kernel scale alpha (m, log scale)",
        "deviance from the best fit, 2 (ln L max - ln L)",
        &|x| format!("{:.0}", 10f64.powf(x)),
        y_max,
        &series,
        &[],
    );
    staging.write("likelihood.svg", &svg)?;
    staging.write("cautions.txt", cautions::standing_text())?;
    Ok(())
}
