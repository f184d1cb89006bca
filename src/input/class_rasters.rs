//! Stems by size class from one density raster per class (`[host] class_rasters`,
//! `--host-class CLASS=RASTER`): the host raster outlines the patches, each class raster says
//! how many of a patch's stems are of its class.
//!
//! Every class raster must lie on the host raster's grid (same size, geotransform and CRS):
//! summing a raster over another grid's cells would need resampling, which the user chooses
//! (`gdalwarp -r sum`), not the tool.

use std::collections::BTreeMap;
use std::path::PathBuf;

use crate::core::error::{Error, Result};
use crate::core::memory::Budget;
use crate::input::gis::{self, Crs, Frame, RasterFile};
use crate::input::label::Run;

/// Open the class rasters in the catalogue's class order, checking each against the host
/// raster's grid. `given`: class id -> raster path; every catalogue class must have one.
pub fn open(
    given: &BTreeMap<String, PathBuf>,
    size_classes: &[String],
    host: &RasterFile,
    assume: Option<&Crs>,
    budget: &Budget,
) -> Result<Vec<RasterFile>> {
    if size_classes.is_empty() {
        return Err(Error::input_with_hint(
            "class rasters (`--host-class`) given, but the treatment catalogue has no size classes",
            "drop `--host-class`, or use a catalogue with [[size_class]]",
        ));
    }
    if let Some(unknown) = given.keys().find(|c| !size_classes.contains(c)) {
        return Err(Error::input_with_hint(
            format!(
                "`--host-class {unknown}=...`: the catalogue has no size class `{unknown}` (it has {})",
                size_classes.join(", ")
            ),
            "name each raster after one of the catalogue's classes",
        ));
    }
    let missing: Vec<&str> = size_classes
        .iter()
        .filter(|c| !given.contains_key(*c))
        .map(String::as_str)
        .collect();
    if !missing.is_empty() {
        return Err(Error::input_with_hint(
            format!(
                "class rasters cover {} of the catalogue's size classes; missing: {}",
                given.len(),
                missing.join(", ")
            ),
            "give one raster per class (`--host-class CLASS=RASTER`, a raster of 0 for a class the stands lack), or none and let the default mix apply",
        ));
    }
    size_classes
        .iter()
        .map(|c| {
            let path = &given[c];
            if !path.exists() {
                return Err(Error::input_with_hint(
                    format!("class raster `{}` ({c}) does not exist", path.display()),
                    "check the path given to `--host-class`",
                ));
            }
            let raster = gis::open_raster(path, assume, budget)?;
            if !same_grid(&raster.frame, &host.frame) || !gis::same_crs(&raster.crs, &host.crs) {
                let f = &host.frame;
                let t = &f.transform;
                let (x1, y1) = (t[0] + f.width as f64 * t[1], t[3] + f.height as f64 * t[5]);
                return Err(Error::input_with_hint(
                    format!(
                        "class raster `{}` ({c}) is not on the host raster's grid ({} x {} cells of {} m, {}); stems by class are summed cell by cell",
                        path.display(),
                        f.width,
                        f.height,
                        t[1].abs(),
                        host.crs.name
                    ),
                    format!(
                        "resample it onto that grid, keeping stem totals, e.g. `gdalwarp -t_srs {} -te {} {} {} {} -ts {} {} -r sum {} {c}_on_grid.tif`",
                        host.crs.name,
                        t[0].min(x1),
                        t[3].min(y1),
                        t[0].max(x1),
                        t[3].max(y1),
                        f.width,
                        f.height,
                        path.display()
                    ),
                ));
            }
            Ok(raster)
        })
        .collect()
}

fn same_grid(a: &Frame, b: &Frame) -> bool {
    let cell = b.transform[1].abs().max(b.transform[5].abs());
    a.width == b.width
        && a.height == b.height
        && a.transform
            .iter()
            .zip(&b.transform)
            .all(|(x, y)| (x - y).abs() <= 1e-6 * cell.max(1.0))
}

/// For each patch (its runs of cells), the sum of each class raster's values over its cells,
/// in density units (stems/ha; multiply by the cell area for stems). Nodata counts 0; a
/// negative density is refused.
pub fn sums(rasters: &[RasterFile], patches: &[&[Run]]) -> Result<Vec<Vec<f64>>> {
    let Some(first) = rasters.first() else {
        return Ok(Vec::new());
    };
    let height = first.frame.height;
    let width = first.frame.width;
    // The runs of each row, with their patch.
    let mut by_row: Vec<Vec<(usize, u32, u32)>> = vec![Vec::new(); height];
    for (k, runs) in patches.iter().enumerate() {
        for r in runs.iter() {
            by_row[r.row as usize].push((k, r.c0, r.c1));
        }
    }
    let mut out = vec![vec![0.0; rasters.len()]; patches.len()];
    let strip = Budget::strip_rows(width, 8, first.block_rows).max(1);
    for (c, raster) in rasters.iter().enumerate() {
        let dataset = raster.dataset()?;
        let mut row0 = 0;
        while row0 < height {
            let rows = strip.min(height - row0);
            // Rows without a patch cell are not read.
            if (row0..row0 + rows).all(|r| by_row[r].is_empty()) {
                row0 += rows;
                continue;
            }
            let values = raster.read_rows_from(&dataset, row0, rows)?;
            for r in 0..rows {
                for &(k, c0, c1) in &by_row[row0 + r] {
                    let cells = &values[r * width + c0 as usize..r * width + c1 as usize];
                    for (i, &v) in cells.iter().enumerate() {
                        if v < 0.0 {
                            return Err(Error::input_with_hint(
                                format!(
                                    "class raster `{}` holds a negative density ({v}) at column {}, row {}",
                                    raster.path.display(),
                                    c0 as usize + i,
                                    row0 + r
                                ),
                                "band 1 of a class raster is stems per hectare of that class: 0 or more (nodata where unknown)",
                            ));
                        }
                        if v.is_finite() {
                            out[k][c] += f64::from(v);
                        }
                    }
                }
            }
            row0 += rows;
        }
    }
    Ok(out)
}
