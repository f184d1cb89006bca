//! Road layers in: any GDAL line layer — a county centreline GeoPackage or Shapefile, or an
//! OpenStreetMap `.osm.pbf` / `.osm` extract through GDAL's OSM driver — read into plain
//! [`RoadSegment`]s for `field::network`.
//!
//! Takes a path, the working CRS and [`RoadFields`] (which attributes hold the road class, the
//! one-way flag and an explicit speed); gives polylines reprojected into the working CRS with
//! their class, direction and speed. Lines and multi-lines are read (each part of a multi-line
//! is its own segment); points and polygons are counted in [`RoadSkips`], never dropped silently.
//!
//! OpenStreetMap through GDAL: the layer is `lines` unless another is named; tags GDAL does not
//! give a column of their own (by default `oneway`, `maxspeed`, `junction`) are read from its
//! `other_tags` field (`"key"=>"value",...`). OpenStreetMap's implied one-ways are applied when
//! the layer carries no explicit value: `highway=motorway` and `junction=roundabout` are one-way
//! in drawing direction (OpenStreetMap wiki, `Key:oneway`; from memory).
//!
//! Values (common practice, from memory of OpenStreetMap tagging and county centreline exports):
//! - one-way: `yes`, `true`, `1`, `T`, `Y`, `FT` forward; `-1`, `reverse`, `TF` reverse; anything
//!   else, including `no`, `0`, empty and `reversible`/`alternating` (time-dependent), both ways.
//! - speed: a number in km/h, or `N mph`; unreadable or non-positive values (`none`, `signals`,
//!   `walk`) fall back to the class speed and are counted.
//!
//! GDAL is called here directly rather than through `input::gis` because a road layer may be in a
//! geographic CRS (every OpenStreetMap extract is), which `gis` refuses for the working layers.
//!
//! # Units
//! Coordinates in the working CRS (projected, metres); speeds in km/h.

use std::path::{Path, PathBuf};

use gdal::Dataset;
use gdal::spatial_ref::{AxisMappingStrategy, CoordTransform};
use gdal::vector::{LayerAccess, OGRwkbGeometryType, geometry_type_flatten};

use super::{Crs, gdal_error};
use crate::core::error::{Error, Result};

/// Which attributes of the road layer hold what, and which layer to read.
#[derive(Debug, Clone, PartialEq)]
pub struct RoadFields {
    /// The layer to read; `None`: `lines` for OpenStreetMap, else the only (line) layer.
    pub layer: Option<String>,
    /// The road-class field (default `highway`).
    pub class: String,
    /// The one-way field (default `oneway`).
    pub oneway: String,
    /// The explicit speed field (default `maxspeed`).
    pub speed: String,
    /// Whether each field was named by the user: a named field that is absent is refused, a
    /// default one that is absent is simply not used.
    pub named: NamedFields,
}

/// Which of [`RoadFields`]' fields the user named (flag or scenario) rather than defaulted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct NamedFields {
    pub class: bool,
    pub oneway: bool,
    pub speed: bool,
}

impl Default for RoadFields {
    fn default() -> Self {
        RoadFields {
            layer: None,
            class: "highway".to_string(),
            oneway: "oneway".to_string(),
            speed: "maxspeed".to_string(),
            named: NamedFields::default(),
        }
    }
}

/// Which ways a segment may be driven, relative to its drawing direction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OneWay {
    Both,
    /// Only from the first vertex towards the last.
    Forward,
    /// Only from the last vertex towards the first.
    Reverse,
}

/// One road polyline in the working CRS.
#[derive(Debug, Clone, PartialEq)]
pub struct RoadSegment {
    /// At least two vertices, in drawing order.
    pub points: Vec<(f64, f64)>,
    /// The road class as written in the layer (trimmed, lower case), empty when absent.
    pub class: String,
    pub oneway: OneWay,
    /// The layer's own speed for this road, km/h, when it has a readable one.
    pub speed_kmh: Option<f64>,
    /// 1-based position of the feature in the layer, for messages.
    pub feature: usize,
}

/// Features read but not turned into segments, and values not understood, by reason.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct RoadSkips {
    /// Null or empty geometry.
    pub without_geometry: usize,
    /// Points, polygons or collections: not lines.
    pub not_lines: usize,
    /// Line parts with fewer than two vertices.
    pub degenerate: usize,
    /// Speed values that are not a positive number (the class speed is used instead).
    pub unreadable_speed: usize,
    /// One-way values that are neither a yes nor a reverse nor a no (read as both ways).
    pub unknown_oneway: usize,
}

/// Where a wanted attribute is found in the layer.
#[derive(Debug, Clone, PartialEq)]
pub enum FieldSource {
    /// Its own column, by the layer's name for it.
    Column(String),
    /// A key in GDAL's OpenStreetMap `other_tags` field.
    OtherTags(String),
    /// Nowhere: the attribute is not used.
    Absent,
}

/// A road layer read into segments.
#[derive(Debug, Clone)]
pub struct RoadLayer {
    pub path: PathBuf,
    pub layer_name: String,
    /// The GDAL driver that read the file (e.g. `GPKG`, `ESRI Shapefile`, `OSM`).
    pub driver: String,
    /// The layer's own CRS, e.g. `EPSG:4326`.
    pub source_crs: String,
    pub class: FieldSource,
    pub oneway: FieldSource,
    pub speed: FieldSource,
    pub segments: Vec<RoadSegment>,
    pub skips: RoadSkips,
}

fn open(path: &Path) -> Result<Dataset> {
    if !path.exists() {
        return Err(Error::input_with_hint(
            format!("road layer `{}` does not exist", path.display()),
            "check the path given with `--roads`",
        ));
    }
    Dataset::open(path).map_err(|e| gdal_error("open", path, e))
}

/// The layer's own name for `wanted`: the same name, in any case, or a Shapefile's 10-character
/// cut of it (as `gis::VectorLayer::field`).
fn column(names: &[String], wanted: &str) -> Option<String> {
    let wanted = wanted.trim();
    if let Some(f) = names.iter().find(|f| *f == wanted) {
        return Some(f.clone());
    }
    if let Some(f) = names.iter().find(|f| f.eq_ignore_ascii_case(wanted)) {
        return Some(f.clone());
    }
    let cut: String = wanted.chars().take(10).collect();
    if cut.len() < wanted.len() {
        return names.iter().find(|f| f.eq_ignore_ascii_case(&cut)).cloned();
    }
    None
}

/// The value of `key` in GDAL's OpenStreetMap `other_tags` text (`"k"=>"v","k2"=>"v2"`, with
/// `\"` and `\\` escapes).
pub fn other_tag(tags: &str, key: &str) -> Option<String> {
    fn read_quoted(chars: &mut std::iter::Peekable<std::str::Chars>) -> Option<String> {
        while chars.peek().is_some_and(|c| *c != '"') {
            chars.next();
        }
        chars.next()?;
        let mut out = String::new();
        loop {
            match chars.next()? {
                '\\' => out.push(chars.next()?),
                '"' => return Some(out),
                c => out.push(c),
            }
        }
    }
    let mut chars = tags.chars().peekable();
    loop {
        let k = read_quoted(&mut chars)?;
        // The text between key and value (`=>`) is skipped by `read_quoted`.
        let v = read_quoted(&mut chars)?;
        if k == key {
            return Some(v);
        }
    }
}

/// Read a one-way value (see the module doc); `None` when not understood.
pub fn parse_oneway(value: &str) -> Option<OneWay> {
    match value.trim().to_ascii_lowercase().as_str() {
        "yes" | "true" | "1" | "t" | "y" | "ft" => Some(OneWay::Forward),
        "-1" | "reverse" | "tf" => Some(OneWay::Reverse),
        "no" | "false" | "0" | "f" | "n" | "" | "b" | "reversible" | "alternating" => {
            Some(OneWay::Both)
        }
        _ => None,
    }
}

/// Read a speed value: a number in km/h, `N km/h`, `N kmh` or `N mph`; `None` unless positive.
pub fn parse_speed(value: &str) -> Option<f64> {
    let v = value.trim().to_ascii_lowercase();
    let (number, factor) = if let Some(n) = v.strip_suffix("mph") {
        (n, 1.609344)
    } else if let Some(n) = v.strip_suffix("km/h").or_else(|| v.strip_suffix("kmh")) {
        (n, 1.0)
    } else {
        (v.as_str(), 1.0)
    };
    let speed = number.trim().parse::<f64>().ok()? * factor;
    (speed.is_finite() && speed > 0.0).then_some(speed)
}

fn pick_layer<'a>(
    dataset: &'a Dataset,
    path: &Path,
    wanted: Option<&str>,
    osm: bool,
) -> Result<gdal::vector::Layer<'a>> {
    let names: Vec<String> = dataset.layers().map(|l| l.name()).collect();
    let wanted = wanted.or(if osm { Some("lines") } else { None });
    if let Some(name) = wanted {
        return dataset.layer_by_name(name).map_err(|_| {
            Error::input_with_hint(
                format!(
                    "road layer `{}` has no layer `{name}` (layers: {})",
                    path.display(),
                    names.join(", ")
                ),
                "name one of its layers with `--roads-layer`",
            )
        });
    }
    let lines: Vec<usize> = dataset
        .layers()
        .enumerate()
        .filter(|(_, l)| {
            l.defn().geom_fields().any(|g| {
                let t = geometry_type_flatten(g.field_type());
                t == OGRwkbGeometryType::wkbLineString
                    || t == OGRwkbGeometryType::wkbMultiLineString
                    || t == OGRwkbGeometryType::wkbUnknown
            })
        })
        .map(|(k, _)| k)
        .collect();
    match (names.len(), lines.as_slice()) {
        (0, _) => Err(Error::input(format!(
            "road layer `{}` has no vector layer",
            path.display()
        ))),
        (1, _) => dataset
            .layer(0)
            .map_err(|e| gdal_error("read the first layer of", path, e)),
        (_, [only]) => dataset
            .layer(*only)
            .map_err(|e| gdal_error("read a layer of", path, e)),
        _ => Err(Error::input_with_hint(
            format!(
                "road layer `{}` has {} layers ({}); which one holds the roads?",
                path.display(),
                names.len(),
                names.join(", ")
            ),
            "name the layer with `--roads-layer`",
        )),
    }
}

/// Read the road layer of `path` into segments in `target`. A layer without a CRS is refused.
pub fn read_roads(path: &Path, target: &Crs, fields: &RoadFields) -> Result<RoadLayer> {
    let dataset = open(path)?;
    let driver = dataset.driver().short_name();
    let osm = driver == "OSM";
    if osm {
        // GDAL's OSM driver reads every layer in one pass; naming the one wanted lets it skip
        // the others instead of buffering them (`SET interest_layers`, GDAL OSM driver docs).
        let wanted = fields.layer.as_deref().unwrap_or("lines");
        if dataset.layers().any(|l| l.name() == wanted) {
            dataset
                .execute_sql(
                    format!("SET interest_layers = {wanted}"),
                    None,
                    gdal::vector::sql::Dialect::DEFAULT,
                )
                .map_err(|e| gdal_error("select the road layer of", path, e))?;
        }
    }
    let mut layer = pick_layer(&dataset, path, fields.layer.as_deref(), osm)?;
    let layer_name = layer.name();
    let Some(mut source_srs) = layer.spatial_ref() else {
        return Err(Error::input_with_hint(
            format!(
                "road layer `{}` (layer `{layer_name}`) has no coordinate reference system",
                path.display()
            ),
            "give it one, e.g. `ogr2ogr -a_srs EPSG:NNNN roads_with_crs.gpkg roads.gpkg` with the CRS the coordinates are in",
        ));
    };
    source_srs.set_axis_mapping_strategy(AxisMappingStrategy::TraditionalGisOrder);
    let source_crs = match (source_srs.auth_name(), source_srs.auth_code()) {
        (Some(auth), Ok(code)) => format!("{auth}:{code}"),
        _ => source_srs
            .name()
            .unwrap_or_else(|| "an unnamed CRS".to_string()),
    };
    let transform = CoordTransform::new(&source_srs, &target.srs()?)
        .map_err(|e| gdal_error("set up a reprojection for", path, e))?;

    let names: Vec<String> = layer.defn().fields().map(|f| f.name()).collect();
    let other_tags = if osm {
        column(&names, "other_tags")
    } else {
        None
    };
    let resolve = |wanted: &str, named: bool, flag: &str| -> Result<FieldSource> {
        if let Some(c) = column(&names, wanted) {
            return Ok(FieldSource::Column(c));
        }
        if other_tags.is_some() {
            return Ok(FieldSource::OtherTags(wanted.trim().to_string()));
        }
        if named {
            return Err(Error::input_with_hint(
                format!(
                    "road layer `{}` (layer `{layer_name}`) has no field `{wanted}` (fields: {})",
                    path.display(),
                    if names.is_empty() {
                        "none".to_string()
                    } else {
                        names.join(", ")
                    }
                ),
                format!("name the right field with `{flag}`, or rename the field in the layer"),
            ));
        }
        Ok(FieldSource::Absent)
    };
    let class = resolve(&fields.class, fields.named.class, "--roads-class-field")?;
    let oneway = resolve(&fields.oneway, fields.named.oneway, "--roads-oneway-field")?;
    let speed = resolve(&fields.speed, fields.named.speed, "--roads-speed-field")?;
    let junction = if osm {
        resolve("junction", false, "")?
    } else {
        FieldSource::Absent
    };
    let index = |name: &str| -> Result<usize> {
        layer
            .defn()
            .field_index(name)
            .map_err(|e| gdal_error("read the fields of", path, e))
    };
    let column_index = |source: &FieldSource| -> Result<Option<usize>> {
        match source {
            FieldSource::Column(c) => index(c).map(Some),
            _ => Ok(None),
        }
    };
    let class_at = column_index(&class)?;
    let oneway_at = column_index(&oneway)?;
    let speed_at = column_index(&speed)?;
    let junction_at = column_index(&junction)?;
    let tags_at = match &other_tags {
        Some(c) => Some(index(c)?),
        None => None,
    };

    let mut segments = Vec::new();
    let mut skips = RoadSkips::default();
    let mut vertices: Vec<(f64, f64, f64)> = Vec::new();
    for (position, feature) in layer.features().enumerate() {
        let number = position + 1;
        let text = |at: Option<usize>| -> Option<String> {
            let value = feature.field(at?).ok()??;
            match value {
                gdal::vector::FieldValue::RealValue(r) => Some(format!("{r}")),
                gdal::vector::FieldValue::IntegerValue(i) => Some(format!("{i}")),
                gdal::vector::FieldValue::Integer64Value(i) => Some(format!("{i}")),
                other => other.into_string(),
            }
        };
        let tags = text(tags_at);
        let value = |source: &FieldSource, at: Option<usize>| -> Option<String> {
            match source {
                FieldSource::Column(_) => text(at),
                FieldSource::OtherTags(key) => other_tag(tags.as_deref()?, key),
                FieldSource::Absent => None,
            }
        };
        let Some(geometry) = feature.geometry() else {
            skips.without_geometry += 1;
            continue;
        };
        if geometry.is_empty() {
            skips.without_geometry += 1;
            continue;
        }
        let road_class = value(&class, class_at)
            .map(|c| c.trim().to_ascii_lowercase())
            .unwrap_or_default();
        let direction = match value(&oneway, oneway_at) {
            Some(v) => parse_oneway(&v).unwrap_or_else(|| {
                skips.unknown_oneway += 1;
                OneWay::Both
            }),
            None => {
                let roundabout = value(&junction, junction_at)
                    .is_some_and(|j| j.trim().eq_ignore_ascii_case("roundabout"));
                if osm && (road_class == "motorway" || roundabout) {
                    OneWay::Forward
                } else {
                    OneWay::Both
                }
            }
        };
        let speed_kmh = match value(&speed, speed_at) {
            Some(v) if !v.trim().is_empty() => {
                let s = parse_speed(&v);
                if s.is_none() {
                    skips.unreadable_speed += 1;
                }
                s
            }
            _ => None,
        };
        let flat = geometry_type_flatten(geometry.geometry_type());
        let parts: Vec<gdal::vector::Geometry> = if flat == OGRwkbGeometryType::wkbLineString {
            vec![geometry.clone()]
        } else if flat == OGRwkbGeometryType::wkbMultiLineString {
            (0..geometry.geometry_count())
                .map(|k| geometry.get_geometry(k).clone())
                .collect()
        } else {
            skips.not_lines += 1;
            continue;
        };
        for part in parts {
            vertices.clear();
            part.get_points(&mut vertices);
            if vertices.len() < 2 {
                skips.degenerate += 1;
                continue;
            }
            let mut xs: Vec<f64> = vertices.iter().map(|p| p.0).collect();
            let mut ys: Vec<f64> = vertices.iter().map(|p| p.1).collect();
            let mut zs = vec![0.0; xs.len()];
            transform
                .transform_coords(&mut xs, &mut ys, &mut zs)
                .map_err(|e| {
                    Error::input(format!(
                        "road layer `{}`, feature {number}: cannot reproject it into {} ({e})",
                        path.display(),
                        target.name
                    ))
                })?;
            let points: Vec<(f64, f64)> = xs.into_iter().zip(ys).collect();
            if points.iter().any(|p| !p.0.is_finite() || !p.1.is_finite()) {
                return Err(Error::input(format!(
                    "road layer `{}`, feature {number}: coordinates outside {}",
                    path.display(),
                    target.name
                )));
            }
            segments.push(RoadSegment {
                points,
                class: road_class.clone(),
                oneway: direction,
                speed_kmh,
                feature: number,
            });
        }
    }
    Ok(RoadLayer {
        path: path.to_path_buf(),
        layer_name,
        driver,
        source_crs,
        class,
        oneway,
        speed,
        segments,
        skips,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn other_tags_are_read_with_escapes() {
        // Format of GDAL's OSM driver `other_tags` (an hstore literal; GDAL docs, from memory).
        let tags = r#""oneway"=>"-1","name:en"=>"A \"quoted\" road","maxspeed"=>"30 mph""#;
        assert_eq!(other_tag(tags, "oneway").as_deref(), Some("-1"));
        assert_eq!(
            other_tag(tags, "name:en").as_deref(),
            Some(r#"A "quoted" road"#)
        );
        assert_eq!(other_tag(tags, "maxspeed").as_deref(), Some("30 mph"));
        assert_eq!(other_tag(tags, "junction"), None);
        assert_eq!(other_tag("", "oneway"), None);
    }

    #[test]
    fn oneway_and_speed_values() {
        // OpenStreetMap `oneway` values (wiki Key:oneway, from memory) and county FT/TF codes.
        assert_eq!(parse_oneway("yes"), Some(OneWay::Forward));
        assert_eq!(parse_oneway("1"), Some(OneWay::Forward));
        assert_eq!(parse_oneway("TRUE"), Some(OneWay::Forward));
        assert_eq!(parse_oneway("-1"), Some(OneWay::Reverse));
        assert_eq!(parse_oneway("no"), Some(OneWay::Both));
        assert_eq!(parse_oneway("reversible"), Some(OneWay::Both));
        assert_eq!(parse_oneway("sometimes"), None);
        // 1 mph = 1.609344 km/h (international mile, exact).
        assert!((parse_speed("30 mph").unwrap() - 48.28032).abs() < 1e-9);
        assert_eq!(parse_speed("50"), Some(50.0));
        assert_eq!(parse_speed("50 km/h"), Some(50.0));
        assert_eq!(parse_speed("none"), None);
        assert_eq!(parse_speed("0"), None);
        assert_eq!(parse_speed("-5"), None);
    }
}
