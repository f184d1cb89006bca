//! Writers: GeoJSON and other OGR vector formats (one or several layers, e.g. the orders
//! GeoPackage), and single-band GeoTIFFs.

use std::path::Path;

use gdal::DriverManager;
use gdal::spatial_ref::SpatialRef;
use gdal::vector::{Geometry, LayerAccess, ToGdal};

use crate::core::error::{Error, Result};

use super::reproject::ToLonLat;
use super::{Crs, gdal_error, traditional};

/// A field written to a GeoJSON feature.
#[derive(Debug, Clone)]
pub enum Property {
    Text(String),
    Number(f64),
    Integer(i64),
}

/// Write features as RFC 7946 GeoJSON (WGS 84 lon/lat, right-hand winding) through GDAL.
pub fn write_geojson(
    path: &Path,
    crs: &Crs,
    field_names: &[(&str, Property)],
    features: &[(geo::Geometry<f64>, Vec<Property>)],
) -> Result<()> {
    let wgs84 = traditional(
        SpatialRef::from_epsg(4326).map_err(|e| Error::Internal(format!("EPSG:4326: {e}")))?,
    );
    let to_lonlat = ToLonLat::new(crs)?;
    let mut converted = Vec::with_capacity(features.len());
    for (g, p) in features {
        converted.push((to_lonlat.geometry(g)?, p.clone()));
    }
    write_layer(
        path,
        "GeoJSON",
        "plan",
        &wgs84,
        &["RFC7946=YES", "COORDINATE_PRECISION=7", "WRITE_NAME=NO"],
        field_names,
        converted,
    )
}

/// Write features (geo geometries in `crs`) to a new vector file with the named GDAL driver.
pub fn write_vector(
    path: &Path,
    driver: &str,
    layer: &str,
    crs: &Crs,
    field_names: &[(&str, Property)],
    features: &[(geo::Geometry<f64>, Vec<Property>)],
) -> Result<()> {
    let mut converted = Vec::with_capacity(features.len());
    for (g, p) in features {
        converted.push((
            g.to_gdal()
                .map_err(|e| Error::Internal(format!("convert geometry to GDAL: {e}")))?,
            p.clone(),
        ));
    }
    write_layer(
        path,
        driver,
        layer,
        &crs.srs()?,
        &[],
        field_names,
        converted,
    )
}

/// The geometry type of a layer written by [`write_layers`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GeometryKind {
    Point,
    LineString,
    MultiPolygon,
    /// No geometry: an attribute table (e.g. a GeoPackage's `layer_styles`); the features'
    /// geometries are ignored and its key column is `id`.
    None,
}

impl GeometryKind {
    fn gdal(self) -> gdal::vector::OGRwkbGeometryType::Type {
        use gdal::vector::OGRwkbGeometryType as T;
        match self {
            GeometryKind::Point => T::wkbPoint,
            GeometryKind::LineString => T::wkbLineString,
            GeometryKind::MultiPolygon => T::wkbMultiPolygon,
            GeometryKind::None => T::wkbNone,
        }
    }
}

/// One layer for [`write_layers`]: its name, geometry type, field names and features (geo
/// geometries in the file's CRS).
pub struct LayerData<'a> {
    pub name: &'a str,
    pub geometry: GeometryKind,
    pub fields: &'a [(&'a str, Property)],
    pub features: Vec<(geo::Geometry<f64>, Vec<Property>)>,
}

/// Write several layers into one new file (e.g. a GeoPackage) in `crs`.
pub fn write_layers(path: &Path, driver: &str, crs: &Crs, layers: Vec<LayerData>) -> Result<()> {
    let srs = crs.srs()?;
    let driver = DriverManager::get_driver_by_name(driver)
        .map_err(|e| Error::Internal(format!("GDAL driver {driver}: {e}")))?;
    let mut dataset = driver
        .create_vector_only(path)
        .map_err(|e| gdal_error("create", path, e))?;
    for layer in layers {
        let table = layer.geometry == GeometryKind::None;
        let mut converted = Vec::with_capacity(layer.features.len());
        for (g, p) in layer.features {
            converted.push((
                (!table)
                    .then(|| g.to_gdal())
                    .transpose()
                    .map_err(|e| Error::Internal(format!("convert geometry to GDAL: {e}")))?,
                p,
            ));
        }
        add_layer(
            &mut dataset,
            path,
            layer.name,
            (!table).then_some(&srs),
            layer.geometry.gdal(),
            if table { &["FID=id"] } else { &[] },
            layer.fields,
            converted,
        )?;
    }
    dataset
        .close()
        .map_err(|e| gdal_error("finish writing", path, e))?;
    Ok(())
}

fn write_layer(
    path: &Path,
    driver: &str,
    layer_name: &str,
    srs: &SpatialRef,
    options: &[&str],
    field_names: &[(&str, Property)],
    features: Vec<(Geometry, Vec<Property>)>,
) -> Result<()> {
    let driver = DriverManager::get_driver_by_name(driver)
        .map_err(|e| Error::Internal(format!("GDAL driver {driver}: {e}")))?;
    let mut dataset = driver
        .create_vector_only(path)
        .map_err(|e| gdal_error("create", path, e))?;
    add_layer(
        &mut dataset,
        path,
        layer_name,
        Some(srs),
        gdal::vector::OGRwkbGeometryType::wkbUnknown,
        options,
        field_names,
        features.into_iter().map(|(g, p)| (Some(g), p)).collect(),
    )?;
    dataset
        .close()
        .map_err(|e| gdal_error("finish writing", path, e))?;
    Ok(())
}

fn add_layer(
    dataset: &mut gdal::Dataset,
    path: &Path,
    layer_name: &str,
    srs: Option<&SpatialRef>,
    ty: gdal::vector::OGRwkbGeometryType::Type,
    options: &[&str],
    field_names: &[(&str, Property)],
    features: Vec<(Option<Geometry>, Vec<Property>)>,
) -> Result<()> {
    let layer = dataset
        .create_layer(gdal::vector::LayerOptions {
            name: layer_name,
            srs,
            ty,
            options: Some(options),
        })
        .map_err(|e| gdal_error("create a layer in", path, e))?;
    for (name, kind) in field_names {
        let ty = match kind {
            Property::Text(_) => gdal::vector::OGRFieldType::OFTString,
            Property::Number(_) => gdal::vector::OGRFieldType::OFTReal,
            Property::Integer(_) => gdal::vector::OGRFieldType::OFTInteger64,
        };
        let defn = gdal::vector::FieldDefn::new(name, ty)
            .map_err(|e| Error::Internal(format!("field {name}: {e}")))?;
        defn.add_to_layer(&layer)
            .map_err(|e| Error::Internal(format!("field {name}: {e}")))?;
    }
    let defn = layer.defn();
    for (geometry, properties) in features {
        let mut feature = gdal::vector::Feature::new(defn)
            .map_err(|e| Error::Internal(format!("feature: {e}")))?;
        if let Some(geometry) = geometry {
            feature
                .set_geometry(geometry)
                .map_err(|e| Error::Internal(format!("feature geometry: {e}")))?;
        }
        for (i, value) in properties.iter().enumerate() {
            let result = match value {
                Property::Text(s) if s.is_empty() => Ok(()),
                Property::Text(s) => feature.set_field_string(i, s),
                Property::Number(n) if n.is_finite() => feature.set_field_double(i, *n),
                Property::Number(_) => Ok(()),
                Property::Integer(n) => feature.set_field_integer64(i, *n),
            };
            result.map_err(|e| Error::Internal(format!("feature field: {e}")))?;
        }
        feature
            .create(&layer)
            .map_err(|e| gdal_error("write a feature to", path, e))?;
    }
    Ok(())
}

/// Write a single-band Float32 GeoTIFF (nodata = -9999) in `crs`.
pub fn write_geotiff(
    path: &Path,
    crs: &Crs,
    width: usize,
    height: usize,
    transform: [f64; 6],
    values: &[f32],
) -> Result<()> {
    let driver = DriverManager::get_driver_by_name("GTiff")
        .map_err(|e| Error::Internal(format!("GDAL GTiff driver: {e}")))?;
    let options = gdal::raster::RasterCreationOptions::from_iter(["COMPRESS=DEFLATE", "TILED=NO"]);
    let mut dataset = driver
        .create_with_band_type_with_options::<f32, _>(path, width, height, 1, &options)
        .map_err(|e| gdal_error("create", path, e))?;
    dataset
        .set_geo_transform(&transform)
        .map_err(|e| gdal_error("georeference", path, e))?;
    dataset
        .set_spatial_ref(&crs.srs()?)
        .map_err(|e| gdal_error("set the CRS of", path, e))?;
    {
        let mut band = dataset
            .rasterband(1)
            .map_err(|e| gdal_error("write", path, e))?;
        band.set_no_data_value(Some(-9999.0))
            .map_err(|e| gdal_error("set nodata of", path, e))?;
        let mut buffer = gdal::raster::Buffer::new((width, height), values.to_vec());
        band.write((0, 0), (width, height), &mut buffer)
            .map_err(|e| gdal_error("write", path, e))?;
    }
    dataset
        .close()
        .map_err(|e| gdal_error("finish writing", path, e))?;
    Ok(())
}

/// Write a tiled (256 x 256 blocks) single-band Float32 GeoTIFF in EPSG `epsg`, 256 rows at a
/// time: `rows(row0, n)` gives `n` rows of `width` values. For rasters too large to hold whole
/// (the synthetic benchmark landscapes). The file is written at `path`; errors name `shown`.
pub fn write_geotiff_strips(
    path: &Path,
    shown: &Path,
    (width, height): (usize, usize),
    transform: [f64; 6],
    epsg: u32,
    mut rows: impl FnMut(usize, usize) -> Vec<f32>,
) -> Result<()> {
    let fail = |e| gdal_error("write", shown, e);
    let driver = DriverManager::get_driver_by_name("GTiff").map_err(fail)?;
    let options = gdal::raster::RasterCreationOptions::from_iter([
        "TILED=YES",
        "BLOCKXSIZE=256",
        "BLOCKYSIZE=256",
        "BIGTIFF=IF_SAFER",
    ]);
    let mut dataset = driver
        .create_with_band_type_with_options::<f32, _>(path, width, height, 1, &options)
        .map_err(fail)?;
    dataset.set_geo_transform(&transform).map_err(fail)?;
    let srs = SpatialRef::from_epsg(epsg).map_err(fail)?;
    dataset.set_spatial_ref(&srs).map_err(fail)?;
    let mut band = dataset.rasterband(1).map_err(fail)?;
    let mut row0 = 0;
    while row0 < height {
        let n = 256.min(height - row0);
        let mut buffer = gdal::raster::Buffer::new((width, n), rows(row0, n));
        band.write((0, row0 as isize), (width, n), &mut buffer)
            .map_err(fail)?;
        row0 += n;
    }
    Ok(())
}
