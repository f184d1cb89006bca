//! Calibration on the prepared landscape: surveys moved into the patches' CRS and assigned,
//! enough transitions checked, the occupancy model fitted for each kernel family
//! ([`crate::model::calibrate`]), the scale's identifiability checked, and the calibration file
//! (with a low / estimate / high ensemble) made.
//!
//! # Units
//! Kernel scales and radii in metres.

use crate::core::error::{Error, Result};
use crate::core::kernel::{Kernel, KernelKind};
use crate::core::printer::Printer;
use crate::core::scenario::{Calibration, CalibrationFile, EnsembleMember, Robust};
use crate::input::gis;
use crate::model::calibrate::surveys::{self, Placement, Survey};
use crate::model::calibrate::{self, FamilyFit, Geometry, Observations, PROFILE_DROP};
use crate::model::graph;
use crate::planning::prepare::Prepared;

/// How to assign the surveys and search the kernel scale.
#[derive(Debug, Clone)]
pub struct Search {
    /// The kernel scales searched, metres (`--alpha-range MIN:MAX`).
    pub alpha_min: f64,
    pub alpha_max: f64,
    pub alpha_steps: usize,
    /// How far from a patch's centroid a survey outside every patch still counts, metres.
    pub survey_radius_m: f64,
    pub extinction_exponent: f64,
    /// The fewest year-to-year transitions to fit on.
    pub min_transitions: usize,
}

/// A fitted calibration and what it was fitted on.
pub struct Calibrated {
    /// The surveys, in the patches' CRS.
    pub surveys: Vec<Survey>,
    pub placed: Vec<Placement>,
    /// Surveys too far from every patch.
    pub unassigned: usize,
    pub observations: Observations,
    pub transitions: usize,
    /// The exp and cauchy fits, in that order.
    pub fits: Vec<FamilyFit>,
    /// Index in `fits` of the family the surveys favour (lower AIC).
    pub best: usize,
    pub file: CalibrationFile,
}

impl Calibrated {
    pub fn fit(&self) -> &FamilyFit {
        &self.fits[self.best]
    }

    pub fn other(&self) -> &FamilyFit {
        &self.fits[1 - self.best]
    }

    pub fn last_year(&self) -> i32 {
        self.observations.first_year + self.observations.states.len() as i32 - 1
    }
}

/// Fit the occupancy model to `surveys` (file `path`, in CRS `surveys_crs` when given).
pub fn calibrate(
    prepared: &Prepared,
    mut surveys: Vec<Survey>,
    path: &std::path::Path,
    surveys_crs: Option<&str>,
    search: &Search,
    printer: Printer,
) -> Result<Calibrated> {
    let (alpha_min, alpha_max) = (search.alpha_min, search.alpha_max);
    let crs = &prepared.patches.crs;
    if let Some(def) = surveys_crs {
        let from = gis::Crs::parse(def, "`--surveys-crs`").or_else(|_| {
            // A geographic CRS (lon/lat) is fine for survey points.
            gis::transform_points(def, def, &[(0.0, 0.0)]).map(|_| gis::Crs {
                wkt: def.to_string(),
                name: def.to_string(),
            })
        })?;
        let pts: Vec<(f64, f64)> = surveys.iter().map(|s| (s.x, s.y)).collect();
        let moved = surveys::reproject_surveys(
            path,
            def,
            &from.wkt,
            &crs.wkt,
            &pts,
            &surveys.iter().map(|s| s.line).collect::<Vec<_>>(),
        )?;
        for (s, p) in surveys.iter_mut().zip(moved) {
            s.x = p.0;
            s.y = p.1;
        }
    }
    let placed = surveys::assign(&surveys, &prepared.patches, search.survey_radius_m);
    let n = prepared.patches.len();
    let unassigned = placed
        .iter()
        .filter(|p| matches!(p, Placement::TooFar(..)))
        .count();
    let obs = surveys::observations(&surveys, &placed, n).ok_or_else(|| {
        Error::input_with_hint(
            format!(
                "none of the {} surveys falls in or within {} m of a patch",
                surveys.len(),
                search.survey_radius_m
            ),
            "check the surveys' CRS (`--surveys-crs`) or raise `--survey-radius-m`",
        )
    })?;
    let transitions = obs.transitions();
    if transitions < search.min_transitions {
        return Err(Error::input_with_hint(
            format!(
                "only {transitions} observed year-to-year transitions (surveyed patch-years after the first year); at least {} are needed to fit",
                search.min_transitions
            ),
            format!(
                "survey about {} more patch-years, ideally the same patches in consecutive years",
                search.min_transitions - transitions
            ),
        ));
    }

    // Every pair within reach of the widest kernel searched (cauchy at the largest scale).
    let points: Vec<(f64, f64)> = prepared.patches.items.iter().map(|p| (p.x, p.y)).collect();
    let wide = graph::build_graph_within(
        &points,
        Kernel {
            kind: KernelKind::Cauchy,
            alpha_m: alpha_max,
        },
        prepared.epsilon,
        &prepared.budget,
        "the patch pairs within reach of the largest scale searched (`--alpha-range`)",
        prepared.raster_cost(),
        prepared.resolved.host.suitability.is_some(),
    )
    .map_err(|e| match e {
        Error::Input { message, hint } => Error::Input {
            message,
            hint: hint.map(|h| format!("lower the top of `--alpha-range`; {h}")),
        },
        other => other,
    })?;
    let geometry = Geometry {
        share: prepared.model.share.clone(),
        pairs: wide
            .edges
            .iter()
            .map(|e| (e.a.index(), e.b.index(), e.distance))
            .collect(),
        epsilon: prepared.epsilon,
        extinction_exponent: search.extinction_exponent,
    };
    let grid = calibrate::alpha_grid(alpha_min, alpha_max, search.alpha_steps);
    let mut fits: Vec<FamilyFit> = Vec::new();
    for family in [KernelKind::Exp, KernelKind::Cauchy] {
        printer.progress(&format!("fitting the {} kernel", family.as_str()));
        let pressure_at = |alpha: f64| pressure(prepared, family, alpha);
        fits.push(calibrate::fit_family(
            &geometry,
            &obs,
            family,
            &grid,
            &pressure_at,
        ));
    }
    let best = if fits[0].aic <= fits[1].aic { 0 } else { 1 };
    let (fit, other) = (&fits[best], &fits[1 - best]);
    let (Some(low), Some(high)) = (fit.alpha_low, fit.alpha_high) else {
        let ll_max = fit.log_likelihood;
        let ends = fit
            .profile
            .first()
            .map(|p| p.1)
            .into_iter()
            .chain(fit.profile.last().map(|p| p.1))
            .fold(f64::NEG_INFINITY, f64::max);
        let drop = (ll_max - ends).max(1e-6);
        let need = ((transitions as f64) * PROFILE_DROP / drop).ceil() as usize;
        return Err(Error::input_with_hint(
            format!(
                "the surveys cannot pin down the kernel scale: the profile likelihood of alpha ({}) falls by only {drop:.2} of the {PROFILE_DROP:.2} needed for a 95% interval between {alpha_min} and {alpha_max} m",
                fit.family.as_str()
            ),
            format!(
                "about {} more surveyed patch-years (the same patches in consecutive years) would help; or narrow `--alpha-range`",
                need.saturating_sub(transitions).max(1)
            ),
        ));
    };
    let last_year = obs.first_year + obs.states.len() as i32 - 1;
    let file = CalibrationFile {
        robust: Robust::Mean,
        calibration: Calibration {
            family: fit.family,
            alpha_m: fit.theta.alpha_m,
            alpha_low_m: low,
            alpha_high_m: high,
            colonisation: fit.theta.colonisation,
            extinction: fit.theta.extinction,
            extinction_exponent: search.extinction_exponent,
            introduction: fit.theta.introduction,
            log_likelihood: fit.log_likelihood,
            aic: fit.aic,
            aic_difference: other.aic - fit.aic,
            transitions,
            first_year: obs.first_year,
            last_year,
            surveys: path.display().to_string(),
        },
        members: [
            ("low", low, 1.0),
            ("estimate", fit.theta.alpha_m, 2.0),
            ("high", high, 1.0),
        ]
        .into_iter()
        .map(|(tag, alpha, weight)| EnsembleMember {
            name: format!("{}:{tag}", fit.family.as_str()),
            kernel: fit.family,
            alpha_m: alpha,
            weight,
        })
        .collect(),
    };
    Ok(Calibrated {
        surveys,
        placed,
        unassigned,
        observations: obs,
        transitions,
        fits,
        best,
        file,
    })
}

/// pi at another kernel scale (detections weigh by the kernel).
fn pressure(prepared: &Prepared, family: KernelKind, alpha: f64) -> Vec<f64> {
    graph::pressure(
        &prepared.patches,
        &prepared.corridors,
        &prepared.detections,
        prepared.detection_weight,
        Kernel {
            kind: family,
            alpha_m: alpha,
        },
        prepared.epsilon,
    )
    .values
}
