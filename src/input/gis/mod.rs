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
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};

use crate::core::error::{Error, Result};
use crate::core::memory::GDAL_CACHE_MB;

pub use raster::{Frame, Grid, RasterFile, open_raster, rasterize_index, read_raster};
pub use reproject::{ToLonLat, transform_points};
pub use sample::RasterSampler;
pub use vector::{
    Value, VectorFeature, VectorLayer, outline_from_wkt, outlines_wkt, read_vector, vector_crs,
};
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
        let definition = &normalise_definition(definition);
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

/// Whether two CRSs are the same (GDAL's `OSRIsSame`; the same WKT always is).
pub fn same_crs(a: &Crs, b: &Crs) -> bool {
    a.wkt == b.wkt
        || match (a.srs(), b.srs()) {
            (Ok(x), Ok(y)) => x == y,
            _ => false,
        }
}

/// A CRS definition as people write it, in the form GDAL reads: a bare EPSG number (`32618`)
/// is `EPSG:32618`; `CRS84` is `OGC:CRS84`; anything else is passed on unchanged.
pub fn normalise_definition(definition: &str) -> String {
    let d = definition.trim();
    if !d.is_empty() && d.len() <= 6 && d.bytes().all(|b| b.is_ascii_digit()) {
        format!("EPSG:{d}")
    } else if d.eq_ignore_ascii_case("CRS84") {
        "OGC:CRS84".to_string()
    } else {
        d.to_string()
    }
}

/// The UTM zone (WGS 84, EPSG:326zz north / 327zz south) whose central meridian is nearest
/// `lon`, `lat` (standard 6-degree zones from 180 W; the Norway/Svalbard exceptions are not
/// applied).
pub fn utm_epsg(lon: f64, lat: f64) -> u32 {
    let zone = (((lon + 180.0) / 6.0).floor() as i64).clamp(0, 59) as u32 + 1;
    if lat >= 0.0 {
        32600 + zone
    } else {
        32700 + zone
    }
}

/// An inventory's coordinates converted into the work CRS.
pub struct Projected {
    /// The work CRS: projected, metres.
    pub crs: Crs,
    /// The points in the work CRS, in the order given.
    pub points: Vec<(f64, f64)>,
    /// What was converted, in words (for stderr and summary.json); `None` when the input was
    /// already the work CRS.
    pub note: Option<String>,
    /// The input's linear unit when it was a projected CRS not in metres (e.g. `US survey
    /// foot`): distances people read are printed in feet and miles for it.
    pub linear_units: Option<String>,
}

/// Convert points given in `definition` (any CRS GDAL knows: projected in metres or feet, or
/// geographic lon/lat) into the work CRS: `work` when given; else the input CRS itself when it
/// is projected in metres; else, for lon/lat, the UTM zone of the points' extent's centre; else,
/// for a projected CRS in other units (US survey or international feet), the same projection
/// with metre units (PROJ's false easting and northing are metres, so only the unit changes).
pub fn project_points(
    definition: &str,
    work: Option<&str>,
    points: &[(f64, f64)],
    what: &str,
) -> Result<Projected> {
    let normalised = normalise_definition(definition);
    let srs = SpatialRef::from_definition(&normalised).map_err(|e| {
        Error::input_with_hint(
            format!("{what}: `{definition}` is not a coordinate reference system GDAL knows ({e})"),
            "name it as an EPSG code, e.g. `EPSG:32618` or `32618`",
        )
    })?;
    let source = traditional(srs);
    let name = srs_name(&source);
    let geographic = source.is_geographic() || !source.is_projected();
    let units = if geographic {
        1.0
    } else {
        source.linear_units()
    };
    let units_name = if geographic {
        "degrees".to_string()
    } else {
        source
            .linear_units_name()
            .unwrap_or_else(|| format!("{units} m"))
    };
    if geographic {
        if let Some(k) = points
            .iter()
            .position(|p| !(p.0.abs() <= 180.0 && p.1.abs() <= 90.0))
        {
            return Err(Error::input_with_hint(
                format!(
                    "{what}: row {} has x = {}, y = {}, not a longitude and latitude in {name}",
                    k + 1,
                    points[k].0,
                    points[k].1
                ),
                "in a lon/lat CRS x is the longitude (-180 to 180) and y the latitude (-90 to 90); projected coordinates need their projected CRS in `--crs`",
            ));
        }
    }
    let (crs, reason) = match work {
        Some(w) => (
            Crs::parse(w, "`--work-crs`")?,
            "named by `--work-crs`".to_string(),
        ),
        None if !geographic && (units - 1.0).abs() <= 1e-9 => {
            return Ok(Projected {
                crs: Crs::from_srs(&source, what)?,
                points: points.to_vec(),
                note: None,
                linear_units: None,
            });
        }
        None if geographic => {
            let (mut lo, mut hi) = ((f64::MAX, f64::MAX), (f64::MIN, f64::MIN));
            for p in points {
                lo = (lo.0.min(p.0), lo.1.min(p.1));
                hi = (hi.0.max(p.0), hi.1.max(p.1));
            }
            let (lon, lat) = ((lo.0 + hi.0) / 2.0, (lo.1 + hi.1) / 2.0);
            let epsg = utm_epsg(lon, lat);
            (
                Crs::parse(&format!("EPSG:{epsg}"), what)?,
                format!(
                    "the UTM zone of the stands' centre ({lon:.4}, {lat:.4}); name another with `--work-crs`"
                ),
            )
        }
        None => {
            let proj = source
                .to_proj4()
                .map_err(|e| Error::Internal(format!("cannot write {name} as PROJ: {e}")))?;
            let metric: Vec<&str> = proj
                .split_whitespace()
                .filter(|t| !t.starts_with("+units=") && !t.starts_with("+to_meter="))
                .collect();
            let metric = format!("{} +units=m", metric.join(" "));
            let mut crs = Crs::parse(&metric, what)?;
            crs.name = metric;
            (crs, format!("{name} with metre units, the same projection"))
        }
    };
    let target = crs.srs()?;
    let transform = CoordTransform::new(&source, &target)
        .map_err(|e| Error::Internal(format!("reprojection from {name}: {e}")))?;
    let mut xs: Vec<f64> = points.iter().map(|p| p.0).collect();
    let mut ys: Vec<f64> = points.iter().map(|p| p.1).collect();
    if !xs.is_empty() {
        transform
            .transform_coords(&mut xs, &mut ys, &mut [])
            .map_err(|e| {
                Error::input_with_hint(
                    format!(
                        "{what}: coordinates in {name} cannot be converted into {} ({e})",
                        crs.name
                    ),
                    "check the coordinates and the CRS they are in (`--crs`)",
                )
            })?;
    }
    let note = format!(
        "{what}: coordinates in {name} ({units_name}) converted into the work CRS {} ({reason}); outputs' x, y are in the work CRS, metres",
        crs.name
    );
    Ok(Projected {
        crs,
        points: xs.into_iter().zip(ys).collect(),
        note: Some(note),
        linear_units: (!geographic && (units - 1.0).abs() > 1e-9).then_some(units_name),
    })
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
