//! Sampling band 1 of any raster at working-CRS points, strip by strip.

use std::path::{Path, PathBuf};

use gdal::Dataset;
use gdal::spatial_ref::CoordTransform;

use crate::core::error::{Error, Result};

use super::{Crs, gdal_error, missing_crs, open, traditional};

/// Band 1 of any GDAL raster, in any CRS, opened for sampling at working-CRS points. Values are
/// read in strips of whole GDAL blocks (at most [`crate::core::memory::STRIP_BYTES`]), only where a
/// point falls, so a raster of any size is never in memory whole.
pub struct RasterSampler {
    path: PathBuf,
    dataset: Dataset,
    width: usize,
    height: usize,
    nodata: Option<f64>,
    /// GDAL geotransform of the raster.
    t: [f64; 6],
    det: f64,
    to_source: CoordTransform,
    block_rows: usize,
}

impl RasterSampler {
    /// Open `path`; `assume_crs` is used when the file has none.
    pub fn open(path: &Path, working: &Crs, assume_crs: Option<&Crs>) -> Result<RasterSampler> {
        let dataset = open(path)?;
        if dataset.raster_count() == 0 {
            return Err(Error::input(format!(
                "`{}` has no raster band",
                path.display()
            )));
        }
        let source = match dataset.spatial_ref() {
            Ok(srs) if !srs.to_wkt().unwrap_or_default().is_empty() => traditional(srs),
            _ => match assume_crs {
                Some(c) => c.srs()?,
                None => return Err(missing_crs(path)),
            },
        };
        let t = dataset.geo_transform().map_err(|_| {
            Error::input(format!(
                "`{}` has no georeferencing (geotransform)",
                path.display()
            ))
        })?;
        // Invert the geotransform: [x - t0, y - t3] = [[t1, t2], [t4, t5]] [col, row].
        let det = t[1] * t[5] - t[2] * t[4];
        if det == 0.0 || !det.is_finite() {
            return Err(Error::input(format!(
                "`{}` has a degenerate geotransform",
                path.display()
            )));
        }
        let (width, height, nodata, block_rows) = {
            let band = dataset
                .rasterband(1)
                .map_err(|e| gdal_error("read band 1 of", path, e))?;
            let (w, h) = band.size();
            (w, h, band.no_data_value(), band.block_size().1.max(1))
        };
        if width > u32::MAX as usize || height > u32::MAX as usize {
            return Err(Error::input(format!(
                "`{}` is {width} x {height} cells; this version reads rasters up to {} cells a side",
                path.display(),
                u32::MAX
            )));
        }
        let to_source = CoordTransform::new(&working.srs()?, &source)
            .map_err(|e| gdal_error("set up a reprojection for", path, e))?;
        Ok(RasterSampler {
            path: path.to_path_buf(),
            dataset,
            width,
            height,
            nodata,
            t,
            det,
            to_source,
            block_rows,
        })
    }

    /// The value at each working-CRS point (nearest cell): NaN where a point falls outside the
    /// raster or on nodata. Memory: about [`crate::core::memory::SAMPLE_BYTES_PER_POINT`] per point
    /// and one strip.
    pub fn sample(&self, points: &[(f64, f64)]) -> Result<Vec<f64>> {
        let path = &self.path;
        let mut out = vec![f64::NAN; points.len()];
        let mut xs: Vec<f64> = points.iter().map(|p| p.0).collect();
        let mut ys: Vec<f64> = points.iter().map(|p| p.1).collect();
        if !xs.is_empty() {
            self.to_source
                .transform_coords(&mut xs, &mut ys, &mut [])
                .map_err(|e| {
                    Error::input(format!(
                        "cannot reproject patch positions into the CRS of `{}` ({e})",
                        path.display()
                    ))
                })?;
        }
        let t = &self.t;
        // (row, col, point) of every point inside the raster, by row.
        let mut cells: Vec<(u32, u32, u32)> = xs
            .iter()
            .zip(&ys)
            .enumerate()
            .filter_map(|(k, (&x, &y))| {
                let (dx, dy) = (x - t[0], y - t[3]);
                let col = (t[5] * dx - t[2] * dy) / self.det;
                let row = (-t[4] * dx + t[1] * dy) / self.det;
                let inside = col.is_finite()
                    && row.is_finite()
                    && col >= 0.0
                    && row >= 0.0
                    && col < self.width as f64
                    && row < self.height as f64;
                inside.then_some((row as u32, col as u32, k as u32))
            })
            .collect();
        drop((xs, ys));
        cells.sort_unstable();
        let band = self
            .dataset
            .rasterband(1)
            .map_err(|e| gdal_error("read band 1 of", path, e))?;
        let strip_rows =
            crate::core::memory::Budget::strip_rows(self.width, size_of::<f64>(), self.block_rows);
        let mut next = 0;
        while next < cells.len() {
            // The strip of whole blocks holding the next point's row.
            let row = cells[next].0 as usize;
            let mut row0 = (row / self.block_rows) * self.block_rows;
            if row0 + strip_rows <= row {
                // Blocks taller than a strip: start at the row itself.
                row0 = row;
            }
            let rows = strip_rows.min(self.height - row0);
            let end = next + cells[next..].partition_point(|c| (c.0 as usize) < row0 + rows);
            let in_strip = &mut cells[next..end];
            in_strip.sort_unstable_by_key(|c| (c.1, c.0));
            // Windows of the strip's columns that hold points, each at most one strip's bytes.
            let max_cols = (crate::core::memory::STRIP_BYTES / (size_of::<f64>() * rows)).max(1);
            let mut k = 0;
            while k < in_strip.len() {
                let col0 = in_strip[k].1 as usize;
                let cols = max_cols.min(self.width - col0);
                let stop = k + in_strip[k..].partition_point(|c| (c.1 as usize) < col0 + cols);
                let last_col = in_strip[stop - 1].1 as usize;
                let cols = last_col + 1 - col0;
                let buffer = band
                    .read_as::<f64>(
                        (col0 as isize, row0 as isize),
                        (cols, rows),
                        (cols, rows),
                        None,
                    )
                    .map_err(|e| gdal_error("read band 1 of", path, e))?;
                let (_, values) = buffer.into_shape_and_vec();
                for &(row, col, p) in &in_strip[k..stop] {
                    let v = values[(row as usize - row0) * cols + (col as usize - col0)];
                    out[p as usize] = if self.nodata.is_some_and(|nd| v == nd) || !v.is_finite() {
                        f64::NAN
                    } else {
                        v
                    };
                }
                k = stop;
            }
            next = end;
        }
        Ok(out)
    }
}
