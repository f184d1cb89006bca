//! Survey records: read from CSV, moved into the patches' CRS, assigned to the patch they fall
//! in (else the nearest centroid within a radius) and turned into patch-year observations.
//!
//! # Units
//! x, y in metres of the patches' CRS after [`reproject_surveys`]; distances in metres.

use std::collections::BTreeMap;
use std::path::Path;

use geo::{BoundingRect, Contains, Point};

use super::Observations;
use crate::core::error::{Error, Result};
use crate::input::gis;
use crate::input::patches::Patches;

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

/// Move survey points into the patches' CRS. A point the projection cannot take (metre
/// coordinates read as degrees, say) is an input error naming the file and the line.
pub fn reproject_surveys(
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
