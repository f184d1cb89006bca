//! Rasters read whole into memory (`Grid`), opened for strip reading (`RasterFile`), and vector
//! polygons burnt into a grid of ids.

use std::path::{Path, PathBuf};

use gdal::vector::ToGdal;
use gdal::{Dataset, DriverManager};
use geo::{MultiPolygon, Rect};

use crate::core::error::{Error, Result};
use crate::core::memory::Budget;

use super::{Crs, gdal_error, missing_crs, open};

/// A single-band raster read into memory, nodata as NaN.
#[derive(Debug, Clone)]
pub struct Grid {
    pub width: usize,
    pub height: usize,
    /// GDAL geotransform: x = t0 + col t1 + row t2, y = t3 + col t4 + row t5 (cell corner).
    pub transform: [f64; 6],
    /// Row-major cell values; NaN where the raster has nodata.
    pub values: Vec<f64>,
    pub crs: Crs,
}

/// A raster's georeferencing without its values: size and geotransform.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Frame {
    pub width: usize,
    pub height: usize,
    /// GDAL geotransform: x = t0 + col t1 + row t2, y = t3 + col t4 + row t5 (cell corner).
    pub transform: [f64; 6],
}

impl Frame {
    /// Cell area in hectares (works for rotated grids too).
    pub fn cell_area_ha(&self) -> f64 {
        let t = &self.transform;
        (t[1] * t[5] - t[2] * t[4]).abs() / 10_000.0
    }

    /// Working-CRS coordinates of the centre of cell (col, row).
    pub fn cell_centre(&self, col: usize, row: usize) -> (f64, f64) {
        self.corner(col as f64 + 0.5, row as f64 + 0.5)
    }

    /// Working-CRS corner of cell (col, row) at fractional offsets.
    pub fn corner(&self, col: f64, row: f64) -> (f64, f64) {
        let t = &self.transform;
        (
            t[0] + col * t[1] + row * t[2],
            t[3] + col * t[4] + row * t[5],
        )
    }

    /// The frame of rows `row0..row0 + rows`.
    pub fn rows(&self, row0: usize, rows: usize) -> Frame {
        let (x, y) = self.corner(0.0, row0 as f64);
        let t = &self.transform;
        Frame {
            width: self.width,
            height: rows,
            transform: [x, t[1], t[2], y, t[4], t[5]],
        }
    }

    /// The raster's footprint as a rectangle in the working CRS.
    pub fn extent(&self) -> Rect<f64> {
        let corners = [
            (0.0, 0.0),
            (self.width as f64, 0.0),
            (0.0, self.height as f64),
            (self.width as f64, self.height as f64),
        ];
        let pts: Vec<(f64, f64)> = corners.iter().map(|&(c, r)| self.corner(c, r)).collect();
        let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
        for (x, y) in pts {
            x0 = x0.min(x);
            y0 = y0.min(y);
            x1 = x1.max(x);
            y1 = y1.max(y);
        }
        Rect::new((x0, y0), (x1, y1))
    }
}

impl Grid {
    pub fn frame(&self) -> Frame {
        Frame {
            width: self.width,
            height: self.height,
            transform: self.transform,
        }
    }

    pub fn cell_area_ha(&self) -> f64 {
        self.frame().cell_area_ha()
    }

    pub fn cell_centre(&self, col: usize, row: usize) -> (f64, f64) {
        self.frame().cell_centre(col, row)
    }

    pub fn corner(&self, col: f64, row: f64) -> (f64, f64) {
        self.frame().corner(col, row)
    }

    pub fn extent(&self) -> Rect<f64> {
        self.frame().extent()
    }
}

/// A host raster opened for reading by rows: its frame, CRS and nodata, values still on disk.
#[derive(Debug, Clone)]
pub struct RasterFile {
    pub path: PathBuf,
    pub frame: Frame,
    pub crs: Crs,
    pub nodata: Option<f64>,
    /// GDAL's block height: strips are read in multiples of it.
    pub block_rows: usize,
}

/// Open band 1 of a host raster for streaming, checking its header (georeferencing, CRS, a
/// numeric band without palette) and refusing from the header alone a raster too large to
/// label within `budget` ([`Budget::check_raster_header`]).
pub fn open_raster(path: &Path, assume_crs: Option<&Crs>, budget: &Budget) -> Result<RasterFile> {
    let dataset = open(path)?;
    let (crs, transform) = raster_header(&dataset, path, assume_crs)?;
    let band = dataset
        .rasterband(1)
        .map_err(|e| gdal_error("read band 1 of", path, e))?;
    let (width, height) = band.size();
    budget.check_raster_header(&format!("host raster `{}`", path.display()), width, height)?;
    if width > u32::MAX as usize || height > u32::MAX as usize {
        return Err(Error::input(format!(
            "host raster `{}` is {width} x {height} cells; this version reads rasters up to {} cells a side",
            path.display(),
            u32::MAX
        )));
    }
    check_band(&band, path)?;
    let block_rows = band.block_size().1.max(1);
    Ok(RasterFile {
        path: path.to_path_buf(),
        frame: Frame {
            width,
            height,
            transform,
        },
        crs,
        nodata: band.no_data_value(),
        block_rows,
    })
}

impl RasterFile {
    /// Rows `row0..row0 + rows` of band 1 as f32, nodata and non-finite values as NaN.
    pub fn read_rows(&self, row0: usize, rows: usize) -> Result<Vec<f32>> {
        let dataset = open(&self.path)?;
        self.read_rows_from(&dataset, row0, rows)
    }

    /// As [`RasterFile::read_rows`], from an already open dataset.
    pub fn read_rows_from(&self, dataset: &Dataset, row0: usize, rows: usize) -> Result<Vec<f32>> {
        Ok(self.read_rows_counted(dataset, row0, rows)?.0)
    }

    /// As [`RasterFile::read_rows_from`], also counting the cells that are not nodata but hold
    /// no finite number (NaN or infinity), which are skipped like nodata.
    pub fn read_rows_counted(
        &self,
        dataset: &Dataset,
        row0: usize,
        rows: usize,
    ) -> Result<(Vec<f32>, usize)> {
        let band = dataset
            .rasterband(1)
            .map_err(|e| gdal_error("read band 1 of", &self.path, e))?;
        let w = self.frame.width;
        let buffer = band
            .read_as::<f32>((0, row0 as isize), (w, rows), (w, rows), None)
            .map_err(|e| gdal_error("read band 1 of", &self.path, e))?;
        let (_, mut values) = buffer.into_shape_and_vec();
        let nodata = self.nodata;
        let mut non_finite = 0;
        for v in values.iter_mut() {
            let nd = nodata.is_some_and(|nd| {
                f64::from(*v) == nd || (nd as f32) == *v || (nd.is_nan() && v.is_nan())
            });
            if nd {
                *v = f32::NAN;
            } else if !v.is_finite() {
                non_finite += 1;
                *v = f32::NAN;
            }
        }
        Ok((values, non_finite))
    }

    /// Open the file once for a sequence of reads.
    pub fn dataset(&self) -> Result<Dataset> {
        open(&self.path)
    }
}

fn raster_header(
    dataset: &Dataset,
    path: &Path,
    assume_crs: Option<&Crs>,
) -> Result<(Crs, [f64; 6])> {
    if dataset.raster_count() == 0 {
        return Err(Error::input(format!(
            "`{}` has no raster band; the host layer needs band 1 = stems per hectare",
            path.display()
        )));
    }
    let crs = match dataset.spatial_ref() {
        Ok(srs) if !srs.to_wkt().unwrap_or_default().is_empty() => {
            Crs::from_srs(&srs, &format!("host raster `{}`", path.display()))?
        }
        _ => match assume_crs {
            Some(crs) => crs.clone(),
            None => return Err(missing_crs(path)),
        },
    };
    let transform = dataset.geo_transform().map_err(|_| {
        Error::input_with_hint(
            format!(
                "host raster `{}` has no georeferencing (geotransform)",
                path.display()
            ),
            "georeference it first, e.g. with `gdal_translate -a_ullr` or `gdalwarp`",
        )
    })?;
    Ok((crs, transform))
}

/// Band 1 must hold numbers: a complex band, or a palette (a classified map such as land
/// cover), is not stems per hectare.
fn check_band(band: &gdal::raster::RasterBand, path: &Path) -> Result<()> {
    if band.band_type() == gdal::raster::GdalDataType::Unknown {
        return Err(Error::input_with_hint(
            format!(
                "host raster `{}`: band 1 is of complex or unknown type, not stems per hectare",
                path.display()
            ),
            "give a single-band raster of tree-of-heaven density (stems/ha), e.g. Float32",
        ));
    }
    if band.color_table().is_some() {
        return Err(Error::input_with_hint(
            format!(
                "host raster `{}`: band 1 has a colour palette, so it looks like a classified map (e.g. land cover), not stems per hectare",
                path.display()
            ),
            "give a density raster (stems/ha); a class map must first be turned into densities, e.g. with gdal_calc.py",
        ));
    }
    Ok(())
}

/// Read band 1 of a raster whole (small layers and tests; the host raster is streamed by
/// [`open_raster`]). `assume_crs` is used only when the file has no CRS.
pub fn read_raster(path: &Path, assume_crs: Option<&Crs>) -> Result<Grid> {
    let dataset = open(path)?;
    let (crs, transform) = raster_header(&dataset, path, assume_crs)?;
    let band = dataset
        .rasterband(1)
        .map_err(|e| gdal_error("read band 1 of", path, e))?;
    check_band(&band, path)?;
    let (width, height) = band.size();
    let nodata = band.no_data_value();
    let buffer = band
        .read_band_as::<f64>()
        .map_err(|e| gdal_error("read band 1 of", path, e))?;
    let (_, mut values) = buffer.into_shape_and_vec();
    for v in values.iter_mut() {
        if nodata.is_some_and(|nd| *v == nd || (nd.is_nan() && v.is_nan())) || !v.is_finite() {
            *v = f64::NAN;
        }
    }
    Ok(Grid {
        width,
        height,
        transform,
        values,
        crs,
    })
}

/// Burn each (value, polygon) into a grid aligned with `grid`; 0 = no polygon (values are
/// 1-based parcel indices). Where polygons overlap the later one wins. A cell belongs to a polygon when its centre is inside.
pub fn rasterize_index(grid: &Frame, polygons: &[(u32, &MultiPolygon<f64>)]) -> Result<Vec<u32>> {
    let driver = DriverManager::get_driver_by_name("MEM")
        .map_err(|e| Error::Internal(format!("GDAL MEM driver: {e}")))?;
    let mut dataset = driver
        .create_with_band_type::<u32, _>("", grid.width, grid.height, 1)
        .map_err(|e| Error::Internal(format!("cannot create an in-memory raster: {e}")))?;
    dataset
        .set_geo_transform(&grid.transform)
        .map_err(|e| Error::Internal(format!("set geotransform: {e}")))?;
    let mut geometries = Vec::with_capacity(polygons.len());
    let mut burn = Vec::with_capacity(polygons.len());
    for (index, polygon) in polygons {
        geometries.push(
            polygon
                .to_gdal()
                .map_err(|e| Error::Internal(format!("convert parcel to GDAL: {e}")))?,
        );
        burn.push(f64::from(*index));
    }
    if !geometries.is_empty() {
        gdal::raster::rasterize(&mut dataset, &[1], &geometries, &burn, None)
            .map_err(|e| Error::Internal(format!("rasterize parcels: {e}")))?;
    }
    let band = dataset
        .rasterband(1)
        .map_err(|e| Error::Internal(format!("read parcel raster: {e}")))?;
    let buffer = band
        .read_band_as::<u32>()
        .map_err(|e| Error::Internal(format!("read parcel raster: {e}")))?;
    Ok(buffer.into_shape_and_vec().1)
}
