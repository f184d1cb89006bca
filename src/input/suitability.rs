//! Establishment suitability s_i in [0, 1] for each patch, from a user's raster (a climate,
//! degree-day or habitat model of where the insect can establish) and/or the inventory's
//! `suitability` column. The tool does not make such layers; it weights host by them:
//! effective host h_i = stems_i x s_i.
//!
//! Sampling: for raster host input, the mean of the layer over the patch's cell centres (each
//! centre reprojected into the layer's CRS and read from the nearest cell); for polygon or
//! inventory input, the value at the patch's point. Cells of the layer that are nodata are left
//! out of the mean; a patch with no valid value at all is refused, as is any value outside
//! [0, 1] — neither is guessed at. The inventory column, where given, replaces the layer.
//!
//! Memory: the layer is read in strips where sample points fall ([`gis::RasterSampler`]), and
//! the points are taken [`SAMPLE_CHUNK`] at a time, so neither the layer nor a raster host's
//! cells are ever all in memory.

use std::path::Path;

use crate::core::error::{Error, Result};
use crate::core::memory::SAMPLE_CHUNK;
use crate::input::gis::{self, Crs};
use crate::input::patches::Patches;

/// s_i for every patch: 1 without a layer or column.
pub fn per_patch(
    patches: &Patches,
    layer: Option<&Path>,
    assume: Option<&Crs>,
) -> Result<Vec<f64>> {
    let n = patches.len();
    let mut s = vec![1.0; n];
    if let Some(path) = layer {
        let use_cells = patches.frame.is_some() && patches.runs.len() == n;
        // Sample points with their patch: every host cell's centre, or each patch's point.
        let points: Box<dyn Iterator<Item = ((f64, f64), usize)> + '_> =
            if let (true, Some(frame)) = (use_cells, patches.frame) {
                Box::new(patches.runs.iter().enumerate().flat_map(move |(i, runs)| {
                    runs.iter().flat_map(move |r| {
                        (r.c0..r.c1)
                            .map(move |c| (frame.cell_centre(c as usize, r.row as usize), i))
                    })
                }))
            } else {
                Box::new(
                    patches
                        .items
                        .iter()
                        .enumerate()
                        .map(|(i, p)| ((p.x, p.y), i)),
                )
            };
        // In chunks, so a raster host of 10^8 cells never has all its sample points in memory.
        let sampler = gis::RasterSampler::open(path, &patches.crs, assume)?;
        let mut sum = vec![0.0; n];
        let mut count = vec![0usize; n];
        let mut points = points.peekable();
        while points.peek().is_some() {
            let (chunk, owner): (Vec<(f64, f64)>, Vec<usize>) =
                points.by_ref().take(SAMPLE_CHUNK).unzip();
            let values = sampler.sample(&chunk)?;
            drop(chunk);
            for (k, v) in values.iter().enumerate() {
                if v.is_nan() {
                    continue;
                }
                if *v < -1e-9 || *v > 1.0 + 1e-9 {
                    let i = owner[k];
                    return Err(Error::input_with_hint(
                        format!(
                            "suitability layer `{}`: value {v} under patch `{}` is outside 0..1",
                            path.display(),
                            patches.items[i].label
                        ),
                        "suitability must run from 0 (cannot establish) to 1 (fully suitable); rescale the layer, e.g. with gdal_calc.py",
                    ));
                }
                sum[owner[k]] += v.clamp(0.0, 1.0);
                count[owner[k]] += 1;
            }
        }
        for i in 0..n {
            if count[i] == 0 && patches.items[i].suitability.is_none() {
                let p = &patches.items[i];
                return Err(Error::input_with_hint(
                    format!(
                        "suitability layer `{}` has no value over patch `{}` (x {:.0}, y {:.0}): nodata or outside the layer",
                        path.display(),
                        p.label,
                        p.x,
                        p.y
                    ),
                    "extend or fill the layer over the whole programme area (e.g. gdal_fillnodata.py), or give the stand a `suitability` in the inventory",
                ));
            }
            if count[i] > 0 {
                s[i] = sum[i] / count[i] as f64;
            }
        }
    }
    for (i, p) in patches.items.iter().enumerate() {
        if let Some(v) = p.suitability {
            s[i] = v;
        }
    }
    Ok(s)
}
