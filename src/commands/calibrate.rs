//! `hostcut calibrate`: read survey records, assign them to patches, fit the occupancy model for
//! each kernel family, and write calibration.toml (for `--calibration` and `--ensemble`),
//! calibration.csv, likelihood.svg, surveys_assigned.csv and unassigned_surveys.csv.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::Path;

use geo::{BoundingRect, Contains, Point};

use crate::app::cli::CalibrateArgs;
use crate::app::settings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::kernel::Kernel;
use crate::core::kernel::KernelKind;
use crate::core::scenario::Robust;
use crate::core::scenario::{Calibration, CalibrationFile, EnsembleMember};
use crate::input::gis;
use crate::input::patches::Patches;
use crate::model::calibrate::{self, FamilyFit, Geometry, Observations, PROFILE_DROP};
use crate::model::graph;
use crate::planning::prepare::{self, Prepared};
use crate::report::chart::{self, Series, Style};
use crate::report::output::Staging;

/// One survey record.
#[derive(Debug, Clone)]
pub struct Survey {
    pub line: usize,
    pub x: f64,
    pub y: f64,
    pub year: i32,
    pub positive: bool,
    pub date: String,
    pub source: String,
}

/// Read the survey CSV (UTF-8, optional BOM, header row; columns in any order).
pub fn read_surveys(path: &Path) -> Result<Vec<Survey>> {
    let bytes = std::fs::read(path).map_err(|e| Error::io("read", path, e))?;
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(&bytes);
    let text = std::str::from_utf8(bytes).map_err(|_| {
        Error::input_with_hint(
            format!("surveys `{}` is not UTF-8 text", path.display()),
            "save it as CSV UTF-8",
        )
    })?;
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(false)
        .from_reader(text.as_bytes());
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| Error::input(format!("surveys `{}`: {e}", path.display())))?
        .iter()
        .map(|h| h.to_ascii_lowercase())
        .collect();
    let col = |name: &str| header.iter().position(|h| h == name);
    let (Some(cx), Some(cy), Some(cyear), Some(cres)) =
        (col("x"), col("y"), col("year"), col("result"))
    else {
        return Err(Error::input_with_hint(
            format!(
                "surveys `{}` needs columns x, y, year, result (found: {})",
                path.display(),
                header.join(", ")
            ),
            "one row per survey visit: x,y,year,result with result `positive` or `negative`",
        ));
    };
    let (cdate, csource) = (col("date"), col("source"));
    let mut out = Vec::new();
    for (k, rec) in reader.records().enumerate() {
        let line = k + 2;
        let rec = rec
            .map_err(|e| Error::input(format!("surveys `{}`, line {line}: {e}", path.display())))?;
        // Cells neutralised by a CSV the tool wrote (e.g. surveys_assigned.csv) read as written.
        let rec = crate::core::csv_cells::restored(&rec);
        let bad = |what: &str| {
            Error::input_with_hint(
                format!("surveys `{}`, line {line}: {what}", path.display()),
                "x and y are numbers in metres, year a whole year such as 2024, result `positive` or `negative`",
            )
        };
        let num = |c: usize, name: &str| -> Result<f64> {
            rec.get(c)
                .and_then(|v| v.parse::<f64>().ok())
                .filter(|v| v.is_finite())
                .ok_or_else(|| {
                    bad(&format!(
                        "{name} `{}` is not a number",
                        rec.get(c).unwrap_or("")
                    ))
                })
        };
        let x = num(cx, "x")?;
        let y = num(cy, "y")?;
        let year: i32 = rec
            .get(cyear)
            .and_then(|v| v.parse().ok())
            .filter(|v| (1900..=2200).contains(v))
            .ok_or_else(|| {
                bad(&format!(
                    "year `{}` is not a year",
                    rec.get(cyear).unwrap_or("")
                ))
            })?;
        let positive = match rec.get(cres).unwrap_or("").to_ascii_lowercase().as_str() {
            "positive" => true,
            "negative" => false,
            other => {
                return Err(bad(&format!(
                    "result `{other}` is neither `positive` nor `negative`"
                )));
            }
        };
        out.push(Survey {
            line,
            x,
            y,
            year,
            positive,
            date: cdate.and_then(|c| rec.get(c)).unwrap_or("").to_string(),
            source: csource.and_then(|c| rec.get(c)).unwrap_or("").to_string(),
        });
    }
    if out.is_empty() {
        return Err(Error::input(format!(
            "surveys `{}` has no records",
            path.display()
        )));
    }
    Ok(out)
}

/// Where a survey went.
#[derive(Debug, Clone, PartialEq)]
pub enum Placement {
    Inside(usize),
    Nearest(usize, f64),
    /// Nearest patch and its distance, beyond the radius.
    TooFar(Option<usize>, f64),
}

/// Assign each survey to the patch it falls in, else the nearest patch centroid within
/// `radius_m`.
pub fn assign(surveys: &[Survey], patches: &Patches, radius_m: f64) -> Vec<Placement> {
    let boxes: Vec<Option<geo::Rect<f64>>> = patches
        .items
        .iter()
        .map(|p| p.outline.as_ref().and_then(|o| o.bounding_rect()))
        .collect();
    surveys
        .iter()
        .map(|s| {
            let pt = Point::new(s.x, s.y);
            for (i, p) in patches.items.iter().enumerate() {
                if let (Some(b), Some(o)) = (&boxes[i], &p.outline)
                    && b.min().x <= s.x
                    && s.x <= b.max().x
                    && b.min().y <= s.y
                    && s.y <= b.max().y
                    && o.contains(&pt)
                {
                    return Placement::Inside(i);
                }
            }
            let nearest = (0..patches.len())
                .map(|i| {
                    (
                        i,
                        (patches.items[i].x - s.x).hypot(patches.items[i].y - s.y),
                    )
                })
                .min_by(|a, b| a.1.total_cmp(&b.1));
            match nearest {
                Some((i, d)) if d <= radius_m => Placement::Nearest(i, d),
                Some((i, d)) => Placement::TooFar(Some(i), d),
                None => Placement::TooFar(None, f64::INFINITY),
            }
        })
        .collect()
}

/// Patch-year states from assigned surveys: any positive in a year makes the patch occupied.
pub fn observations(surveys: &[Survey], placed: &[Placement], n: usize) -> Option<Observations> {
    let mut by: BTreeMap<(i32, usize), bool> = BTreeMap::new();
    for (s, p) in surveys.iter().zip(placed) {
        let i = match p {
            Placement::Inside(i) | Placement::Nearest(i, _) => *i,
            Placement::TooFar(..) => continue,
        };
        let e = by.entry((s.year, i)).or_insert(false);
        *e |= s.positive;
    }
    let first = by.keys().map(|k| k.0).min()?;
    let last = by.keys().map(|k| k.0).max()?;
    let mut states = vec![vec![None; n]; (last - first + 1) as usize];
    for ((year, i), o) in by {
        states[(year - first) as usize][i] = Some(o);
    }
    Some(Observations {
        first_year: first,
        states,
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

fn opt(v: Option<f64>) -> String {
    v.map(|x| format!("{x:.6}")).unwrap_or_default()
}

/// Move survey points into the patches' CRS. A point the projection cannot take (metre
/// coordinates read as degrees, say) is an input error naming the file and the line.
fn reproject_surveys(
    file: &std::path::Path,
    def: &str,
    from: &str,
    to: &str,
    pts: &[(f64, f64)],
    lines: &[usize],
) -> Result<Vec<(f64, f64)>> {
    let bad = |i: usize| {
        let (x, y) = pts[i];
        Error::input_with_hint(
            format!(
                "surveys `{}`, line {}: x {x}, y {y} cannot be moved from `{def}` into the patches' CRS",
                file.display(),
                lines[i]
            ),
            "check `--surveys-crs`: lon/lat surveys are EPSG:4326 (x = longitude, y = latitude); metre coordinates need the projected CRS they were taken in",
        )
    };
    let moved = match gis::transform_points(from, to, pts) {
        Ok(m) => m,
        Err(Error::Internal(_)) => {
            // Find the first point that fails, to name its line.
            for (i, p) in pts.iter().enumerate() {
                if !matches!(gis::transform_points(from, to, &[*p]), Ok(m) if m[0].0.is_finite() && m[0].1.is_finite())
                {
                    return Err(bad(i));
                }
            }
            return Err(Error::input_with_hint(
                format!(
                    "surveys `{}`: cannot be moved from `{def}` into the patches' CRS",
                    file.display()
                ),
                "check `--surveys-crs`",
            ));
        }
        Err(e) => return Err(e),
    };
    if let Some(i) = moved
        .iter()
        .position(|p| !(p.0.is_finite() && p.1.is_finite()))
    {
        return Err(bad(i));
    }
    Ok(moved)
}

pub fn run(args: &CalibrateArgs) -> Result<String> {
    let mut inputs = args.inputs.clone();
    let mut surveys_crs = args.surveys_crs.clone();
    if let Some(dir) = &args.plan_dir {
        inputs.scenario = Some(settings::plan_folder_scenario(dir)?);
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
    let settings = settings::resolve_with(&inputs, false)?;
    let s = &settings.scenario;
    let mut surveys = read_surveys(&args.surveys)?;
    let progress = |msg: &str| settings.progress(msg);
    let prepared = prepare::prepare(s, &progress)?;
    let crs = &prepared.patches.crs;
    if let Some(def) = &surveys_crs {
        let from = gis::Crs::parse(def, "`--surveys-crs`").or_else(|_| {
            // A geographic CRS (lon/lat) is fine for survey points.
            gis::transform_points(def, def, &[(0.0, 0.0)]).map(|_| gis::Crs {
                wkt: def.clone(),
                name: def.clone(),
            })
        })?;
        let pts: Vec<(f64, f64)> = surveys.iter().map(|s| (s.x, s.y)).collect();
        let moved = reproject_surveys(
            &args.surveys,
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
    let placed = assign(&surveys, &prepared.patches, args.survey_radius_m);
    let n = prepared.patches.len();
    let unassigned = placed
        .iter()
        .filter(|p| matches!(p, Placement::TooFar(..)))
        .count();
    let obs = observations(&surveys, &placed, n).ok_or_else(|| {
        Error::input_with_hint(
            format!(
                "none of the {} surveys falls in or within {} m of a patch",
                surveys.len(),
                args.survey_radius_m
            ),
            "check the surveys' CRS (`--surveys-crs`) or raise `--survey-radius-m`",
        )
    })?;
    let transitions = obs.transitions();
    if transitions < args.min_transitions {
        return Err(Error::input_with_hint(
            format!(
                "only {transitions} observed year-to-year transitions (surveyed patch-years after the first year); at least {} are needed to fit",
                args.min_transitions
            ),
            format!(
                "survey about {} more patch-years, ideally the same patches in consecutive years",
                args.min_transitions - transitions
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
        extinction_exponent: args.extinction_exponent,
    };
    let grid = calibrate::alpha_grid(alpha_min, alpha_max, args.alpha_steps);
    let mut fits: Vec<FamilyFit> = Vec::new();
    for family in [KernelKind::Exp, KernelKind::Cauchy] {
        progress(&format!("fitting the {} kernel", family.as_str()));
        let pressure_at = |alpha: f64| pressure(&prepared, family, alpha);
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

    let out =
        std::path::absolute(&settings.out).map_err(|e| Error::io("resolve", &settings.out, e))?;
    let staging = Staging::new(&out, settings.force, "calibrate")?;
    let last_year = obs.first_year + obs.states.len() as i32 - 1;
    let calibration = CalibrationFile {
        robust: Robust::Mean,
        calibration: Calibration {
            family: fit.family,
            alpha_m: fit.theta.alpha_m,
            alpha_low_m: low,
            alpha_high_m: high,
            colonisation: fit.theta.colonisation,
            extinction: fit.theta.extinction,
            extinction_exponent: args.extinction_exponent,
            introduction: fit.theta.introduction,
            log_likelihood: fit.log_likelihood,
            aic: fit.aic,
            aic_difference: other.aic - fit.aic,
            transitions,
            first_year: obs.first_year,
            last_year,
            surveys: args.surveys.display().to_string(),
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
    let toml_text = toml::to_string_pretty(&calibration)
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
    for f in &fits {
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
    for (sv, p) in surveys.iter().zip(&placed) {
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
                        args.survey_radius_m
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
            (alpha_min.log10(), 2.0 * PROFILE_DROP),
            (alpha_max.log10(), 2.0 * PROFILE_DROP),
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
    let out = staging.commit()?;

    let mut t = String::new();
    if !settings.quiet {
        let _ = writeln!(
            t,
            "hostcut calibrate: {} surveys ({} assigned to patches, {unassigned} too far from any patch: unassigned_surveys.csv), {}-{last_year}, {transitions} year-to-year transitions",
            surveys.len(),
            surveys.len() - unassigned,
            obs.first_year
        );
    }
    let _ = writeln!(
        t,
        "the surveys favour the {} kernel (AIC {:.1} against {:.1} for {}: difference {:.1})",
        fit.family.as_str(),
        fit.aic,
        other.aic,
        other.family.as_str(),
        other.aic - fit.aic
    );
    let _ = writeln!(
        t,
        "  alpha {:.0} m (95% profile interval {:.0} to {:.0} m); colonisation {:.3}, extinction {:.3}, introduction {:.4}",
        fit.theta.alpha_m,
        low,
        high,
        fit.theta.colonisation,
        fit.theta.extinction,
        fit.theta.introduction
    );
    if !settings.quiet {
        let _ = writeln!(
            t,
            "plan with `--calibration {0}`, or across the interval with `--ensemble {0}`",
            out.join("calibration.toml").display()
        );
        let _ = writeln!(
            t,
            "outputs in {}: calibration.toml, calibration.csv, likelihood.svg, surveys_assigned.csv, unassigned_surveys.csv, cautions.txt",
            out.display()
        );
    }
    t.push('\n');
    t.push_str(&cautions::standing_text());
    Ok(t)
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
