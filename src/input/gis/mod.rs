//! The GDAL edge: every raster and vector read or written by the tool goes through here.
//!
//! Takes file paths and CRS definitions; gives plain Rust data (`Grid`, `VectorLayer`, geo
//! geometries) already reprojected into the working CRS, so the stages after this one never see
//! GDAL. Also converts working-CRS points to WGS 84 longitude/latitude and writes GeoJSON.
//!
//! # Units
//! The working CRS is projected with metre units; a geographic CRS is refused. Coordinates are
//! always in traditional GIS order (x = easting or longitude, y = northing or latitude).

mod raster;
mod reproject;
pub mod roads;
mod sample;
mod vector;
mod write;

use std::path::{Path, PathBuf};

use gdal::Dataset;
use gdal::spatial_ref::{AxisMappingStrategy, SpatialRef};

use crate::core::error::{Error, Result};
use crate::core::memory::GDAL_CACHE_MB;

pub use raster::{Frame, Grid, RasterFile, open_raster, rasterize_index, read_raster};
pub use reproject::{ToLonLat, transform_points};
pub use sample::RasterSampler;
pub use vector::{Value, VectorFeature, VectorLayer, read_vector, vector_crs};
pub use write::{
    GeometryKind, LayerData, Property, write_geojson, write_geotiff, write_geotiff_strips,
    write_layers, write_vector,
};

/// A GDAL failure on `path`, with GDAL's own message and none of its plumbing.
pub(crate) fn gdal_error(
    action: &'static str,
    path: impl Into<PathBuf>,
    err: gdal::errors::GdalError,
) -> Error {
    use gdal::errors::GdalError;
    let message = match &err {
        GdalError::CplError { msg, .. } | GdalError::NullPointer { msg, .. }
            if !msg.trim().is_empty() =>
        {
            msg.trim().to_string()
        }
        GdalError::NullPointer { .. } | GdalError::CplError { .. } => {
            "not a format GDAL can read, or the file is damaged or truncated".to_string()
        }
        other => other.to_string().trim().to_string(),
    };
    Error::Gdal {
        action,
        path: path.into(),
        message,
    }
}

/// Set GDAL up once per process, before any file is read: its messages reach the user inside our
/// own errors, once, with the file named, so its default handler must not print them a second
/// time; and its block cache is capped at [`GDAL_CACHE_MB`].
pub fn init() {
    gdal::config::set_error_handler(|_, _, _| {});
    // GDAL reads the option when its cache is first used.
    let _ = gdal::config::set_config_option("GDAL_CACHEMAX", &GDAL_CACHE_MB.to_string());
}

/// What a GDAL dataset holds: a raster band (read as a raster even when it also has vector
/// layers), vector layers only, or neither.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DatasetKind {
    Raster,
    Vector,
    Neither,
}

/// Open `path` and say what it holds (no existence check of its own: callers word that).
pub fn dataset_kind(path: &Path) -> Result<DatasetKind> {
    let dataset = Dataset::open(path).map_err(|e| gdal_error("open", path, e))?;
    Ok(if dataset.raster_count() > 0 {
        DatasetKind::Raster
    } else if dataset.layer_count() == 0 {
        DatasetKind::Neither
    } else {
        DatasetKind::Vector
    })
}

/// A coordinate reference system the tool works in: projected, metres.
#[derive(Debug, Clone)]
pub struct Crs {
    /// WKT as GDAL writes it.
    pub wkt: String,
    /// A short name for messages and outputs, e.g. `EPSG:32618`.
    pub name: String,
}

impl Crs {
    /// Parse any definition GDAL accepts (`EPSG:32618`, WKT, PROJ string) as a working CRS.
    pub fn parse(definition: &str, what: &str) -> Result<Crs> {
        let srs = SpatialRef::from_definition(definition).map_err(|e| {
            Error::input_with_hint(
                format!(
                    "{what}: `{definition}` is not a coordinate reference system GDAL knows ({e})"
                ),
                "name it as an EPSG code, e.g. `EPSG:32618`",
            )
        })?;
        Crs::from_srs(&srs, what)
    }

    /// Check that `srs` is projected in metres and wrap it.
    pub fn from_srs(srs: &SpatialRef, what: &str) -> Result<Crs> {
        let name = srs_name(srs);
        if srs.is_geographic() || !srs.is_projected() {
            return Err(Error::input_with_hint(
                format!(
                    "{what} is in {name}, a geographic CRS (degrees); distances and areas need a projected CRS in metres"
                ),
                "use a projected CRS in metres (a local UTM zone or metric state plane), reprojecting the data first: `gdalwarp -t_srs EPSG:32618 in.tif out.tif` for rasters, `ogr2ogr -t_srs EPSG:32618 out.gpkg in.gpkg` for vectors",
            ));
        }
        let units = srs.linear_units();
        if (units - 1.0).abs() > 1e-9 {
            return Err(Error::input_with_hint(
                format!(
                    "{what} is in {name}, whose units are {} ({units} m), not metres",
                    srs.linear_units_name().unwrap_or_default()
                ),
                "reproject it to a projected CRS in metres (a local UTM zone or a metric state-plane CRS)",
            ));
        }
        let wkt = srs
            .to_wkt()
            .map_err(|e| Error::Internal(format!("cannot write CRS as WKT: {e}")))?;
        Ok(Crs { wkt, name })
    }

    /// The GDAL spatial reference, in traditional GIS axis order.
    pub fn srs(&self) -> Result<SpatialRef> {
        let mut srs = SpatialRef::from_wkt(&self.wkt)
            .map_err(|e| Error::Internal(format!("cannot read CRS WKT: {e}")))?;
        srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
        Ok(srs)
    }
}

pub(super) fn srs_name(srs: &SpatialRef) -> String {
    match (srs.auth_name(), srs.auth_code()) {
        (Some(auth), Ok(code)) => format!("{auth}:{code}"),
        _ => srs.name().unwrap_or_else(|| "an unnamed CRS".to_string()),
    }
}

pub(super) fn traditional(mut srs: SpatialRef) -> SpatialRef {
    srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    srs
}

pub(super) fn open(path: &Path) -> Result<Dataset> {
    if !path.exists() {
        return Err(Error::input_with_hint(
            format!("`{}` does not exist", path.display()),
            "check the path; relative paths in a scenario file are relative to the scenario file",
        ));
    }
    Dataset::open(path).map_err(|e| gdal_error("open", path, e))
}

pub(super) fn missing_crs(path: &Path) -> Error {
    Error::input_with_hint(
        format!("`{}` has no coordinate reference system", path.display()),
        "add one with `gdal_edit.py -a_srs EPSG:NNNN` / `ogr2ogr -a_srs EPSG:NNNN`, or name it with `--assume-crs EPSG:NNNN`",
    )
}
