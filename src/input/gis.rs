//! The GDAL edge: every raster and vector read or written by the tool goes through here.
//!
//! Takes file paths and CRS definitions; gives plain Rust data (`Grid`, `VectorLayer`, geo
//! geometries) already reprojected into the working CRS, so the stages after this one never see
//! GDAL. Also converts working-CRS points to WGS 84 longitude/latitude and writes GeoJSON.
//!
//! # Units
//! The working CRS is projected with metre units; a geographic CRS is refused. Coordinates are
//! always in traditional GIS order (x = easting or longitude, y = northing or latitude).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform, SpatialRef};
use gdal::vector::{Geometry, LayerAccess, ToGdal};
use gdal::{Dataset, DriverManager};
use geo::{BoundingRect, MultiPolygon, Rect};

use crate::core::error::{Error, Result};
use crate::core::memory::Budget;

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

fn srs_name(srs: &SpatialRef) -> String {
    match (srs.auth_name(), srs.auth_code()) {
        (Some(auth), Ok(code)) => format!("{auth}:{code}"),
        _ => srs.name().unwrap_or_else(|| "an unnamed CRS".to_string()),
    }
}

fn traditional(mut srs: SpatialRef) -> SpatialRef {
    srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    srs
}

fn open(path: &Path) -> Result<Dataset> {
    if !path.exists() {
        return Err(Error::input_with_hint(
            format!("`{}` does not exist", path.display()),
            "check the path; relative paths in a scenario file are relative to the scenario file",
        ));
    }
    Dataset::open(path).map_err(|e| Error::gdal("open", path, e))
}

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
        .map_err(|e| Error::gdal("read band 1 of", path, e))?;
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
            .map_err(|e| Error::gdal("read band 1 of", &self.path, e))?;
        let w = self.frame.width;
        let buffer = band
            .read_as::<f32>((0, row0 as isize), (w, rows), (w, rows), None)
            .map_err(|e| Error::gdal("read band 1 of", &self.path, e))?;
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
        .map_err(|e| Error::gdal("read band 1 of", path, e))?;
    check_band(&band, path)?;
    let (width, height) = band.size();
    let nodata = band.no_data_value();
    let buffer = band
        .read_band_as::<f64>()
        .map_err(|e| Error::gdal("read band 1 of", path, e))?;
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

fn missing_crs(path: &Path) -> Error {
    Error::input_with_hint(
        format!("`{}` has no coordinate reference system", path.display()),
        "add one with `gdal_edit.py -a_srs EPSG:NNNN` / `ogr2ogr -a_srs EPSG:NNNN`, or name it with `--assume-crs EPSG:NNNN`",
    )
}

/// An attribute value read from a vector layer.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    Text(String),
    Number(f64),
}

impl Value {
    pub fn as_text(&self) -> String {
        match self {
            Value::Text(s) => s.trim().to_string(),
            Value::Number(n) if n.fract() == 0.0 && n.abs() < 1e15 => format!("{}", *n as i64),
            Value::Number(n) => format!("{n}"),
        }
    }
    pub fn as_number(&self) -> Option<f64> {
        match self {
            Value::Number(n) => Some(*n),
            Value::Text(s) => s.trim().parse().ok(),
        }
    }
}

/// One feature: geometry in the working CRS plus its attributes by field name.
#[derive(Debug, Clone)]
pub struct VectorFeature {
    pub geometry: geo::Geometry<f64>,
    pub fields: BTreeMap<String, Value>,
    /// 1-based position of the feature in the layer, for messages.
    pub number: usize,
}

/// A vector layer read into memory and reprojected into the working CRS.
#[derive(Debug, Clone)]
pub struct VectorLayer {
    pub path: PathBuf,
    /// The layer read (recorded in `scenario.resolved.toml`).
    pub layer_name: String,
    /// How many layers the file has.
    pub layer_count: usize,
    pub field_names: Vec<String>,
    pub features: Vec<VectorFeature>,
    /// Features skipped because they have no geometry (null or empty), counted for the
    /// summary: nothing is dropped without a word.
    pub without_geometry: usize,
}

impl VectorLayer {
    /// Bounding rectangle of all features, if any have extent.
    pub fn extent(&self) -> Option<Rect<f64>> {
        let mut out: Option<Rect<f64>> = None;
        for f in &self.features {
            if let Some(r) = f.geometry.bounding_rect() {
                out = Some(match out {
                    None => r,
                    Some(o) => Rect::new(
                        (o.min().x.min(r.min().x), o.min().y.min(r.min().y)),
                        (o.max().x.max(r.max().x), o.max().y.max(r.max().y)),
                    ),
                });
            }
        }
        out
    }

    /// The layer's own name for the field a user calls `wanted`: the same name, the same name
    /// in another case (county exports are often upper case), or — for a Shapefile, whose
    /// field names are cut to 10 characters — its first 10 characters in any case.
    pub fn field(&self, wanted: &str) -> Option<&str> {
        let wanted = wanted.trim();
        if let Some(f) = self.field_names.iter().find(|f| *f == wanted) {
            return Some(f);
        }
        if let Some(f) = self
            .field_names
            .iter()
            .find(|f| f.eq_ignore_ascii_case(wanted))
        {
            return Some(f);
        }
        let cut: String = wanted.chars().take(10).collect();
        if cut.len() < wanted.len() {
            return self
                .field_names
                .iter()
                .find(|f| f.eq_ignore_ascii_case(&cut))
                .map(String::as_str);
        }
        None
    }

    /// The layer's name for `field` (see [`VectorLayer::field`]), or an input error listing the
    /// fields it has; `flag` is the setting that names the field.
    pub fn require_field(&self, field: &str, what: &str, flag: &str) -> Result<String> {
        if let Some(f) = self.field(field) {
            return Ok(f.to_string());
        }
        Err(Error::input_with_hint(
            format!(
                "{what} `{}`{} has no field `{field}` (fields: {})",
                self.path.display(),
                self.layer_note(),
                if self.field_names.is_empty() {
                    "none".to_string()
                } else {
                    self.field_names.join(", ")
                }
            ),
            format!(
                "name the right field with `{flag}` (or in the scenario), or rename the field in the layer"
            ),
        ))
    }

    /// ", layer `NAME`" for messages about a file with several layers.
    fn layer_note(&self) -> String {
        if self.layer_count > 1 {
            format!(", layer `{}`", self.layer_name)
        } else {
            String::new()
        }
    }
}

/// Pick the layer of a vector file: the named one, the only one, or the only one with
/// geometry; a file with several candidate layers and no name is refused, listing them, so a
/// GeoPackage is never silently read from whichever layer comes first. `flag` is the setting
/// that names the layer.
fn pick_layer<'a>(
    dataset: &'a Dataset,
    path: &Path,
    layer_name: Option<&str>,
    what: &str,
    flag: &str,
) -> Result<gdal::vector::Layer<'a>> {
    let names: Vec<String> = dataset.layers().map(|l| l.name()).collect();
    if let Some(name) = layer_name {
        return dataset.layer_by_name(name).map_err(|_| {
            Error::input_with_hint(
                format!(
                    "{what} `{}` has no layer `{name}` (layers: {})",
                    path.display(),
                    names.join(", ")
                ),
                format!("name one of its layers with `{flag}`"),
            )
        });
    }
    if names.is_empty() {
        return Err(Error::input(format!(
            "{what} `{}` has no vector layer",
            path.display()
        )));
    }
    if names.len() == 1 {
        return dataset
            .layer(0)
            .map_err(|e| Error::gdal("read the first layer of", path, e));
    }
    let spatial: Vec<usize> = dataset
        .layers()
        .enumerate()
        .filter(|(_, l)| l.defn().geom_fields().next().is_some())
        .map(|(k, _)| k)
        .collect();
    if spatial.len() == 1 {
        return dataset
            .layer(spatial[0])
            .map_err(|e| Error::gdal("read a layer of", path, e));
    }
    Err(Error::input_with_hint(
        format!(
            "{what} `{}` has {} layers ({}); which one should be read?",
            path.display(),
            names.len(),
            names.join(", ")
        ),
        format!("name the layer with `{flag}` (or `layer = \"...\"` in the scenario)"),
    ))
}

/// The working CRS of a vector layer (the named one, or the only one): its own, which must be
/// projected in metres, or `assume` when it has none.
pub fn vector_crs(
    path: &Path,
    layer_name: Option<&str>,
    assume: Option<&Crs>,
    what: &str,
    layer_flag: &str,
) -> Result<Crs> {
    let dataset = open(path)?;
    let layer = pick_layer(&dataset, path, layer_name, what, layer_flag)?;
    match layer.spatial_ref() {
        Some(srs) => Crs::from_srs(&srs, &format!("{what} `{}`", path.display())),
        None => assume.cloned().ok_or_else(|| missing_crs(path)),
    }
}

/// Read the named layer of a vector file (or its only layer), reprojected into `target`.
/// `layer_flag` is the setting that names the layer, for messages.
pub fn read_vector(
    path: &Path,
    layer_name: Option<&str>,
    target: &Crs,
    assume_crs: Option<&Crs>,
    what: &str,
    layer_flag: &str,
) -> Result<VectorLayer> {
    let dataset = open(path)?;
    let layer_count = dataset.layer_count();
    let mut layer = pick_layer(&dataset, path, layer_name, what, layer_flag)?;
    let source_srs = match layer.spatial_ref() {
        Some(srs) => traditional(srs),
        None => match assume_crs {
            Some(crs) => crs.srs()?,
            None => return Err(missing_crs(path)),
        },
    };
    let target_srs = target.srs()?;
    let transform = CoordTransform::new(&source_srs, &target_srs)
        .map_err(|e| Error::gdal("set up a reprojection for", path, e))?;
    let field_names: Vec<String> = layer.defn().fields().map(|f| f.name()).collect();
    let name = layer.name();
    let mut features = Vec::new();
    let mut without_geometry = 0;
    for (index, feature) in layer.features().enumerate() {
        let number = index + 1;
        let Some(geometry) = feature.geometry() else {
            without_geometry += 1;
            continue;
        };
        if geometry.is_empty() {
            without_geometry += 1;
            continue;
        }
        let mut geometry = geometry.clone();
        geometry.flatten_to_2d();
        // Self-intersecting or otherwise invalid polygons make areas and point-in-polygon tests
        // wrong: refuse them with the fix rather than guess.
        let flat = gdal::vector::geometry_type_flatten(geometry.geometry_type());
        let polygonal = flat == gdal::vector::OGRwkbGeometryType::wkbPolygon
            || flat == gdal::vector::OGRwkbGeometryType::wkbMultiPolygon;
        if polygonal && !geometry.is_valid() {
            return Err(Error::input_with_hint(
                format!(
                    "{what} `{}`, feature {number}: invalid polygon (self-intersecting, or with overlapping rings)",
                    path.display()
                ),
                "repair it, e.g. `ogr2ogr -makevalid fixed.gpkg input.gpkg`, or fix the shape in your GIS",
            ));
        }
        geometry.transform_inplace(&transform).map_err(|e| {
            Error::input(format!(
                "{what} `{}`, feature {number}: cannot reproject it into {} ({e})",
                path.display(),
                target.name
            ))
        })?;
        let geometry = geometry.to_geo().map_err(|e| {
            Error::input(format!(
                "{what} `{}`, feature {number}: unreadable geometry ({e})",
                path.display()
            ))
        })?;
        let mut fields = BTreeMap::new();
        for (field_name, value) in feature.fields() {
            let value = match value {
                None => continue,
                Some(gdal::vector::FieldValue::StringValue(s)) if s.contains('\u{FFFD}') => {
                    return Err(Error::input_with_hint(
                        format!(
                            "{what} `{}`, feature {number}, field `{field_name}`: text that is not valid UTF-8 (`{s}`)",
                            path.display()
                        ),
                        "save the layer as UTF-8 (e.g. `ogr2ogr -lco ENCODING=UTF-8`), or give a Shapefile a .cpg file naming its encoding",
                    ));
                }
                Some(gdal::vector::FieldValue::StringValue(s)) => Value::Text(s),
                Some(gdal::vector::FieldValue::RealValue(r)) => Value::Number(r),
                Some(gdal::vector::FieldValue::IntegerValue(i)) => Value::Number(i as f64),
                Some(gdal::vector::FieldValue::Integer64Value(i)) => Value::Number(i as f64),
                Some(other) => match other.into_string() {
                    Some(s) => Value::Text(s),
                    None => continue,
                },
            };
            fields.insert(field_name, value);
        }
        features.push(VectorFeature {
            geometry,
            fields,
            number,
        });
    }
    Ok(VectorLayer {
        path: path.to_path_buf(),
        layer_name: name,
        layer_count,
        field_names,
        features,
        without_geometry,
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

/// Converts working-CRS points to WGS 84 longitude/latitude.
pub struct ToLonLat {
    transform: CoordTransform,
}

impl ToLonLat {
    pub fn new(crs: &Crs) -> Result<ToLonLat> {
        let wgs84 = traditional(
            SpatialRef::from_epsg(4326).map_err(|e| Error::Internal(format!("EPSG:4326: {e}")))?,
        );
        let transform = CoordTransform::new(&crs.srs()?, &wgs84)
            .map_err(|e| Error::Internal(format!("reprojection to WGS 84: {e}")))?;
        Ok(ToLonLat { transform })
    }

    /// (lon, lat) in degrees for each (x, y).
    pub fn points(&self, points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>> {
        let mut xs: Vec<f64> = points.iter().map(|p| p.0).collect();
        let mut ys: Vec<f64> = points.iter().map(|p| p.1).collect();
        if xs.is_empty() {
            return Ok(Vec::new());
        }
        self.transform
            .transform_coords(&mut xs, &mut ys, &mut [])
            .map_err(|e| Error::Internal(format!("reprojection to WGS 84: {e}")))?;
        Ok(xs.into_iter().zip(ys).collect())
    }

    /// The index of the first point that cannot be converted (outside the CRS's domain, or not
    /// finite), or Ok when all can.
    pub fn check(&self, points: &[(f64, f64)]) -> std::result::Result<(), usize> {
        if let Some(k) = points
            .iter()
            .position(|p| !(p.0.is_finite() && p.1.is_finite()))
        {
            return Err(k);
        }
        let ok = |chunk: &[(f64, f64)]| {
            self.points(chunk)
                .is_ok_and(|v| v.iter().all(|p| p.0.is_finite() && p.1.is_finite()))
        };
        if ok(points) {
            return Ok(());
        }
        // Find the culprit point by point (only on failure).
        match points.iter().position(|p| !ok(std::slice::from_ref(p))) {
            Some(k) => Err(k),
            None => Ok(()),
        }
    }

    /// A geometry reprojected to WGS 84.
    pub fn geometry(&self, geometry: &geo::Geometry<f64>) -> Result<Geometry> {
        let mut g = geometry
            .to_gdal()
            .map_err(|e| Error::Internal(format!("convert geometry to GDAL: {e}")))?;
        g.transform_inplace(&self.transform)
            .map_err(|e| Error::Internal(format!("reprojection to WGS 84: {e}")))?;
        Ok(g)
    }
}

/// Transform points between two CRS given as definitions (used by tests and the demo generator).
pub fn transform_points(from: &str, to: &str, points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>> {
    let from = traditional(
        SpatialRef::from_definition(from)
            .map_err(|e| Error::input(format!("CRS `{from}`: {e}")))?,
    );
    let to = traditional(
        SpatialRef::from_definition(to).map_err(|e| Error::input(format!("CRS `{to}`: {e}")))?,
    );
    let transform = CoordTransform::new(&from, &to)
        .map_err(|e| Error::Internal(format!("reprojection: {e}")))?;
    let mut xs: Vec<f64> = points.iter().map(|p| p.0).collect();
    let mut ys: Vec<f64> = points.iter().map(|p| p.1).collect();
    transform
        .transform_coords(&mut xs, &mut ys, &mut [])
        .map_err(|e| Error::Internal(format!("reprojection: {e}")))?;
    Ok(xs.into_iter().zip(ys).collect())
}

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

/// One layer for [`write_layers`]: its name, geometry type, field names and features (geo
/// geometries in the file's CRS).
pub struct LayerData<'a> {
    pub name: &'a str,
    pub geometry: gdal::vector::OGRwkbGeometryType::Type,
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
        .map_err(|e| Error::gdal("create", path, e))?;
    for layer in layers {
        let mut converted = Vec::with_capacity(layer.features.len());
        for (g, p) in layer.features {
            converted.push((
                g.to_gdal()
                    .map_err(|e| Error::Internal(format!("convert geometry to GDAL: {e}")))?,
                p,
            ));
        }
        add_layer(
            &mut dataset,
            path,
            layer.name,
            &srs,
            layer.geometry,
            &[],
            layer.fields,
            converted,
        )?;
    }
    dataset
        .close()
        .map_err(|e| Error::gdal("finish writing", path, e))?;
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
        .map_err(|e| Error::gdal("create", path, e))?;
    add_layer(
        &mut dataset,
        path,
        layer_name,
        srs,
        gdal::vector::OGRwkbGeometryType::wkbUnknown,
        options,
        field_names,
        features,
    )?;
    dataset
        .close()
        .map_err(|e| Error::gdal("finish writing", path, e))?;
    Ok(())
}

fn add_layer(
    dataset: &mut gdal::Dataset,
    path: &Path,
    layer_name: &str,
    srs: &SpatialRef,
    ty: gdal::vector::OGRwkbGeometryType::Type,
    options: &[&str],
    field_names: &[(&str, Property)],
    features: Vec<(Geometry, Vec<Property>)>,
) -> Result<()> {
    let layer = dataset
        .create_layer(gdal::vector::LayerOptions {
            name: layer_name,
            srs: Some(srs),
            ty,
            options: Some(options),
        })
        .map_err(|e| Error::gdal("create a layer in", path, e))?;
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
        feature
            .set_geometry(geometry)
            .map_err(|e| Error::Internal(format!("feature geometry: {e}")))?;
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
            .map_err(|e| Error::gdal("write a feature to", path, e))?;
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
        .map_err(|e| Error::gdal("create", path, e))?;
    dataset
        .set_geo_transform(&transform)
        .map_err(|e| Error::gdal("georeference", path, e))?;
    dataset
        .set_spatial_ref(&crs.srs()?)
        .map_err(|e| Error::gdal("set the CRS of", path, e))?;
    {
        let mut band = dataset
            .rasterband(1)
            .map_err(|e| Error::gdal("write", path, e))?;
        band.set_no_data_value(Some(-9999.0))
            .map_err(|e| Error::gdal("set nodata of", path, e))?;
        let mut buffer = gdal::raster::Buffer::new((width, height), values.to_vec());
        band.write((0, 0), (width, height), &mut buffer)
            .map_err(|e| Error::gdal("write", path, e))?;
    }
    dataset
        .close()
        .map_err(|e| Error::gdal("finish writing", path, e))?;
    Ok(())
}

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
                .map_err(|e| Error::gdal("read band 1 of", path, e))?;
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
            .map_err(|e| Error::gdal("set up a reprojection for", path, e))?;
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
            .map_err(|e| Error::gdal("read band 1 of", path, e))?;
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
                    .map_err(|e| Error::gdal("read band 1 of", path, e))?;
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
