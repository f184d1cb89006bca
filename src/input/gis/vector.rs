//! Vector layers read into plain Rust: features as geo geometries reprojected into the working
//! CRS, attributes as [`Value`]s.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use gdal::Dataset;
use gdal::spatial_ref::CoordTransform;
use gdal::vector::LayerAccess;
use geo::{BoundingRect, Rect};

use crate::core::error::{Error, Result};

use super::{Crs, gdal_error, missing_crs, open, traditional};

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
            .map_err(|e| gdal_error("read the first layer of", path, e));
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
            .map_err(|e| gdal_error("read a layer of", path, e));
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
        .map_err(|e| gdal_error("set up a reprojection for", path, e))?;
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

/// The polygon outlines of a GeoJSON or other vector file with a `patch_id` field (a plan
/// folder's plan.geojson), by patch id, as WKT in `crs`. Point features (stands without an
/// outline) are left out.
pub fn outlines_wkt(path: &Path, crs: &Crs) -> Result<BTreeMap<String, String>> {
    use gdal::vector::ToGdal;
    let layer = read_vector(path, None, crs, None, "plan outlines", "--layer")?;
    let mut out = BTreeMap::new();
    for f in &layer.features {
        if !matches!(
            f.geometry,
            geo::Geometry::Polygon(_) | geo::Geometry::MultiPolygon(_)
        ) {
            continue;
        }
        let Some(id) = f.fields.get("patch_id") else {
            continue;
        };
        let wkt =
            f.geometry.to_gdal().and_then(|g| g.wkt()).map_err(|e| {
                Error::Internal(format!("outline of `{}` as WKT: {e}", id.as_text()))
            })?;
        out.insert(id.as_text(), wkt);
    }
    Ok(out)
}

/// A polygon outline written as WKT in the CRS `from` (a definition, as `--crs` takes it), as
/// a multipolygon in `to`; the reason in words when it is not a polygon GDAL can read.
pub fn outline_from_wkt(
    wkt: &str,
    from: &str,
    to: &Crs,
) -> std::result::Result<geo::MultiPolygon<f64>, String> {
    let source = gdal::spatial_ref::SpatialRef::from_definition(&super::normalise_definition(from))
        .map_err(|e| e.to_string())?;
    let source = traditional(source);
    let target = to.srs().map_err(|e| e.to_string())?;
    let transform = CoordTransform::new(&source, &target).map_err(|e| e.to_string())?;
    let mut g = gdal::vector::Geometry::from_wkt(wkt).map_err(|e| format!("not WKT ({e})"))?;
    g.transform_inplace(&transform).map_err(|e| e.to_string())?;
    match g.to_geo().map_err(|e| e.to_string())? {
        geo::Geometry::Polygon(p) => Ok(geo::MultiPolygon(vec![p])),
        geo::Geometry::MultiPolygon(m) => Ok(m),
        _ => Err("not a polygon or multipolygon".into()),
    }
}
