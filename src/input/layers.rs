//! Layers in: read the host layer (raster, polygons or stand inventory), the access polygons,
//! the corridors and the detections, all reprojected into the working CRS.
//!
//! # Units
//! The working CRS is the host layer's (or, for an inventory, `--crs`): projected, metres.

use std::path::{Path, PathBuf};

use geo::{BoundingRect, Intersects, MultiLineString, MultiPolygon, Point, Rect};

use crate::core::error::{Error, Result};
use crate::core::memory::Budget;
use crate::core::scenario;
use crate::core::scenario::{NO_FIELD, Scenario, SiteLayerSection};
use crate::core::site::{Access, Herbicide, Site};
use crate::input::gis::{self, Crs, RasterFile, VectorLayer};
use crate::input::inventory::Stand;

/// Counts of what a run skipped, by reason (`host_cells_not_finite`,
/// `parcel_features_without_geometry`, ...): shown on stderr and in summary.json, so nothing is
/// dropped without a word.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Skipped(pub std::collections::BTreeMap<String, usize>);

impl Skipped {
    /// Count `n` more of `reason` (nothing when `n` is 0).
    pub fn add(&mut self, reason: &str, n: usize) {
        if n > 0 {
            *self.0.entry(reason.to_string()).or_insert(0) += n;
        }
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// One line per reason, for stderr.
    pub fn lines(&self) -> Vec<String> {
        self.0
            .iter()
            .map(|(reason, n)| format!("skipped {n}: {}", reason.replace('_', " ")))
            .collect()
    }
}

/// A water feature or sensitive site with its buffer, in the working CRS.
#[derive(Debug, Clone)]
pub struct SiteFeature {
    pub geometry: geo::Geometry<f64>,
    /// What crews and bidders read, e.g. `Mill Creek` or `streams.gpkg feature 3`.
    pub name: String,
    pub buffer_m: f64,
}

/// What the run actually read, for `scenario.resolved.toml`: the layer of each file and the
/// field behind each rule (or `none`).
#[derive(Debug, Clone, Default)]
pub struct Bindings {
    pub host_layer: Option<String>,
    pub stems_field: Option<String>,
    pub id_field: Option<String>,
    pub access_layer: Option<String>,
    /// (rule, field name in the layer or `none`).
    pub access_fields: Vec<(&'static str, String)>,
    pub corridor_layers: Vec<String>,
    pub detections_layer: Option<String>,
    pub water_layers: Vec<(String, Option<String>)>,
    pub sensitive_layers: Vec<(String, Option<String>)>,
}

impl Bindings {
    /// Write what was read into the scenario, so repeating it reads the same layers and
    /// fields.
    pub fn apply(&self, s: &mut Scenario) {
        if self.host_layer.is_some() {
            s.host.layer = self.host_layer.clone();
        }
        if let Some(f) = &self.stems_field {
            s.host.stems_field = f.clone();
        }
        if self.id_field.is_some() {
            s.host.id_field = self.id_field.clone();
        }
        if let Some(a) = s.access.as_mut() {
            if self.access_layer.is_some() {
                a.layer = self.access_layer.clone();
            }
            for (rule, field) in &self.access_fields {
                if let Some(slot) = a.field_mut(rule) {
                    *slot = Some(field.clone());
                }
            }
        }
        for (c, layer) in s.corridors.iter_mut().zip(&self.corridor_layers) {
            c.layer = Some(layer.clone());
        }
        if let (Some(d), Some(layer)) = (s.detections.as_mut(), &self.detections_layer) {
            d.layer = Some(layer.clone());
        }
        for (sections, bound) in [
            (&mut s.water, &self.water_layers),
            (&mut s.sensitive, &self.sensitive_layers),
        ] {
            for (section, (layer, name_field)) in sections.iter_mut().zip(bound) {
                section.layer = Some(layer.clone());
                section.name_field = name_field.clone();
            }
        }
    }
}

/// An access polygon (e.g. a parcel) and the rules that come with it.
#[derive(Debug, Clone)]
pub struct Parcel {
    pub geometry: MultiPolygon<f64>,
    pub site: Site,
}

/// A transport corridor: its lines, weight beta_c and buffer b_c.
#[derive(Debug, Clone)]
pub struct Corridor {
    pub name: String,
    pub lines: MultiLineString<f64>,
    pub weight: f64,
    pub buffer_m: f64,
}

/// The host layer in whichever form it came.
#[derive(Debug, Clone)]
pub enum Host {
    /// A density raster, read by rows when patches are labelled.
    Raster(RasterFile),
    Polygons(VectorLayer),
    Inventory {
        path: PathBuf,
        stands: Vec<Stand>,
    },
}

/// Every input layer, in the working CRS.
#[derive(Debug, Clone)]
pub struct Layers {
    pub crs: Crs,
    pub host: Host,
    pub parcels: Vec<Parcel>,
    pub corridors: Vec<Corridor>,
    pub detections: Vec<(f64, f64)>,
    pub detection_weight: f64,
    /// Water features with their buffers (empty: no water layer was given).
    pub water: Vec<SiteFeature>,
    /// Whether any water layer was given (sites are then checked, not assumed).
    pub water_checked: bool,
    /// Sensitive sites with their buffers.
    pub sensitive: Vec<SiteFeature>,
    /// What was skipped while reading, by reason.
    pub skipped: Skipped,
    /// Plain statements about rules that took their default (e.g. parcels with no herbicide
    /// value), shown on stderr and in summary.json.
    pub notes: Vec<String>,
    /// How an inventory's coordinates were converted into the work CRS, if they were.
    pub crs_conversion: Option<String>,
    /// The inventory CRS's linear unit when not metres (see `gis::Projected::linear_units`).
    pub input_linear_units: Option<String>,
    /// The layers and fields actually read.
    pub bindings: Bindings,
    /// The catalogue's size-class ids: inventory columns and host-polygon fields counting stems
    /// by class.
    pub size_classes: Vec<String>,
    /// One density raster per size class, in class order, on the host raster's grid (empty:
    /// none given).
    pub class_rasters: Vec<RasterFile>,
}

/// Read every layer the scenario names; a host raster too large for `budget` is refused from
/// its header. `size_classes` are the catalogue's class ids (inventory columns and polygon
/// fields that count stems by class; empty without classes).
pub fn load(s: &Scenario, budget: &Budget, size_classes: &[String]) -> Result<Layers> {
    let assume = match &s.host.assume_crs {
        Some(def) => Some(Crs::parse(def, "`--assume-crs`")?),
        None => None,
    };
    let mut inventory_note = None;
    let mut input_linear_units = None;
    let (crs, host) = if let Some(path) = &s.host.inventory {
        let mut stands = crate::input::inventory::read_inventory(path, size_classes)?;
        let points: Vec<(f64, f64)> = stands.iter().map(|s| (s.x, s.y)).collect();
        let projected = gis::project_points(
            s.host.crs.as_deref().unwrap_or_default(),
            s.host.work_crs.as_deref(),
            &points,
            &format!("inventory `{}` (`--crs`)", path.display()),
        )?;
        for (stand, &(x, y)) in stands.iter_mut().zip(&projected.points) {
            stand.x = x;
            stand.y = y;
            if let Some((wkt, line)) = &stand.outline_wkt {
                let from = s.host.crs.as_deref().unwrap_or_default();
                stand.outline = Some(gis::outline_from_wkt(wkt, from, &projected.crs).map_err(
                    |why| {
                        Error::input_with_hint(
                            format!(
                                "inventory `{}`, line {line}, column `outline`: {why}",
                                path.display()
                            ),
                            "give a POLYGON or MULTIPOLYGON in WKT, in the inventory's CRS, or leave the cell empty",
                        )
                    },
                )?);
            }
        }
        inventory_note = projected.note;
        input_linear_units = projected.linear_units;
        (
            projected.crs,
            Host::Inventory {
                path: path.clone(),
                stands,
            },
        )
    } else {
        let path = s
            .host
            .path
            .as_ref()
            .ok_or_else(|| Error::input("no host layer given"))?;
        open_host(
            path,
            s.host.layer.as_deref(),
            assume.as_ref(),
            &s.host.stems_field,
            size_classes,
            s.host.id_field.as_deref(),
            budget,
        )?
    };
    let class_rasters = match (&s.host.class_rasters, &host) {
        (None, _) => Vec::new(),
        (Some(given), Host::Raster(r)) => {
            crate::input::class_rasters::open(given, size_classes, r, assume.as_ref(), budget)?
        }
        (Some(_), _) => {
            return Err(Error::input_with_hint(
                "class rasters (`--host-class`) split a host raster's stems, but the host is not a raster",
                "give stems by class as fields of the host polygons or columns of the inventory, named after the classes",
            ));
        }
    };
    let host_extent = host_extent(&host);
    let mut skipped = Skipped::default();
    let mut notes: Vec<String> = Vec::new();
    let mut bindings = Bindings::default();
    if let Host::Polygons(layer) = &host {
        skipped.add("host_features_without_geometry", layer.without_geometry);
        bindings.host_layer = Some(layer.layer_name.clone());
        // With a field for every size class, the classes alone count the stems: a missing
        // stems field is then said, not refused (`open_host` refused it otherwise).
        bindings.stems_field = match layer.field(&s.host.stems_field) {
            Some(f) => Some(f.to_string()),
            None => {
                notes.push(format!(
                    "host layer `{}` has no field `{}`: each stand's stems are the sum of its size-class fields ({})",
                    layer.path.display(),
                    s.host.stems_field,
                    size_classes.join(", ")
                ));
                None
            }
        };
        if let Some(id) = &s.host.id_field {
            bindings.id_field = Some(layer.require_field(id, "host layer", "--id-field")?);
        }
    }

    let mut parcels = Vec::new();
    if let Some(a) = &s.access {
        let layer = gis::read_vector(
            &a.path,
            a.layer.as_deref(),
            &crs,
            assume.as_ref(),
            "access layer",
            "--access-layer",
        )?;
        skipped.add("parcel_features_without_geometry", layer.without_geometry);
        if layer.features.is_empty() {
            return Err(Error::input_with_hint(
                format!("access layer `{}` has no features", a.path.display()),
                "give a layer with the parcels (or leave out `--access`: every patch is then open, herbicide allowed)",
            ));
        }
        check_overlap(&layer, host_extent, "access layer")?;
        // Geometry first: a layer of the wrong shapes is refused before its fields are read.
        if let Some(f) = layer.features.iter().find(|f| {
            !matches!(
                f.geometry,
                geo::Geometry::Polygon(_) | geo::Geometry::MultiPolygon(_)
            )
        }) {
            return Err(Error::input_with_hint(
                format!(
                    "access layer `{}`, feature {}: expected polygons, found another geometry type",
                    layer.path.display(),
                    f.number
                ),
                "give parcels as Polygon or MultiPolygon features",
            ));
        }
        let fields = access_fields(&layer, a)?;
        let (read, parcel_notes) = read_parcels(&layer, &fields)?;
        parcels = read;
        notes.extend(parcel_notes);
        bindings.access_layer = Some(layer.layer_name.clone());
        bindings.access_fields = fields
            .iter()
            .map(|(rule, f)| (*rule, f.clone().unwrap_or_else(|| NO_FIELD.to_string())))
            .collect();
    }
    let mut corridors = Vec::new();
    for c in &s.corridors {
        let layer = gis::read_vector(
            &c.path,
            c.layer.as_deref(),
            &crs,
            assume.as_ref(),
            "corridor layer",
            "--corridor-layer",
        )?;
        skipped.add("corridor_features_without_geometry", layer.without_geometry);
        bindings.corridor_layers.push(layer.layer_name.clone());
        let mut lines = Vec::new();
        for f in &layer.features {
            match &f.geometry {
                geo::Geometry::LineString(l) => lines.push(l.clone()),
                geo::Geometry::MultiLineString(m) => lines.extend(m.0.iter().cloned()),
                geo::Geometry::Polygon(p) => lines.push(p.exterior().clone()),
                geo::Geometry::MultiPolygon(m) => {
                    lines.extend(m.0.iter().map(|p| p.exterior().clone()))
                }
                _ => {
                    return Err(Error::input_with_hint(
                        format!(
                            "corridor layer `{}`, feature {}: expected lines, found another geometry type",
                            c.path.display(),
                            f.number
                        ),
                        "give rail lines or roads as LineString features",
                    ));
                }
            }
        }
        if lines.is_empty() {
            return Err(Error::input(format!(
                "corridor layer `{}` has no line features",
                c.path.display()
            )));
        }
        check_overlap(
            &layer,
            host_extent.map(|r| grow(r, c.buffer_m)),
            "corridor layer",
        )?;
        corridors.push(Corridor {
            name: c.name.clone(),
            lines: MultiLineString(lines),
            weight: c.weight,
            buffer_m: c.buffer_m,
        });
    }
    let mut detections = Vec::new();
    let mut detection_weight = 0.0;
    if let Some(d) = &s.detections {
        let layer = gis::read_vector(
            &d.path,
            d.layer.as_deref(),
            &crs,
            assume.as_ref(),
            "detections layer",
            "--detections-layer",
        )?;
        skipped.add(
            "detection_features_without_geometry",
            layer.without_geometry,
        );
        bindings.detections_layer = Some(layer.layer_name.clone());
        for f in &layer.features {
            match &f.geometry {
                geo::Geometry::Point(p) => detections.push((p.x(), p.y())),
                geo::Geometry::MultiPoint(m) => {
                    detections.extend(m.0.iter().map(|p| (p.x(), p.y())))
                }
                _ => {
                    return Err(Error::input_with_hint(
                        format!(
                            "detections layer `{}`, feature {}: expected points, found another geometry type",
                            d.path.display(),
                            f.number
                        ),
                        "give detections as Point features",
                    ));
                }
            }
        }
        if detections.is_empty() {
            return Err(Error::input_with_hint(
                format!("detections layer `{}` has no points", d.path.display()),
                "give a layer of detection points, or leave out `--detections`",
            ));
        }
        detection_weight = d.weight;
    }
    let mut water = Vec::new();
    for section in &s.water {
        let (features, layer, name_field) = read_site_layer(
            section,
            &crs,
            assume.as_ref(),
            host_extent,
            "water layer",
            "--water-layer",
            scenario::DEFAULT_WATER_BUFFER_M,
            &mut skipped,
        )?;
        water.extend(features);
        bindings.water_layers.push((layer, name_field));
    }
    let mut sensitive = Vec::new();
    for section in &s.sensitive {
        let (features, layer, name_field) = read_site_layer(
            section,
            &crs,
            assume.as_ref(),
            host_extent,
            "sensitive-site layer",
            "--sensitive-layer",
            scenario::DEFAULT_SENSITIVE_BUFFER_M,
            &mut skipped,
        )?;
        sensitive.extend(features);
        bindings.sensitive_layers.push((layer, name_field));
    }
    Ok(Layers {
        crs,
        host,
        parcels,
        corridors,
        detections,
        detection_weight,
        water,
        water_checked: !s.water.is_empty(),
        sensitive,
        skipped,
        notes,
        crs_conversion: inventory_note,
        input_linear_units,
        bindings,
        size_classes: size_classes.to_vec(),
        class_rasters,
    })
}

/// Read one water or sensitive-site layer: any geometry, each feature named by `name_field`
/// (or a `name` field when the layer has one, else the file and feature number). Returns the
/// features, the layer read and the name field used.
#[allow(clippy::too_many_arguments)]
fn read_site_layer(
    section: &SiteLayerSection,
    crs: &Crs,
    assume: Option<&Crs>,
    host_extent: Option<Rect<f64>>,
    what: &str,
    layer_flag: &str,
    default_buffer_m: f64,
    skipped: &mut Skipped,
) -> Result<(Vec<SiteFeature>, String, Option<String>)> {
    let layer = gis::read_vector(
        &section.path,
        section.layer.as_deref(),
        crs,
        assume,
        what,
        layer_flag,
    )?;
    skipped.add(
        &format!(
            "{}_features_without_geometry",
            what.split(' ').next().unwrap_or(what).replace('-', "_")
        ),
        layer.without_geometry,
    );
    if layer.features.is_empty() {
        return Err(Error::input_with_hint(
            format!("{what} `{}` has no features", section.path.display()),
            "give a layer with features, or leave it out".to_string(),
        ));
    }
    let buffer_m = section.buffer_m.unwrap_or(default_buffer_m);
    check_overlap(&layer, host_extent.map(|r| grow(r, buffer_m)), what)?;
    let name_field = match &section.name_field {
        Some(f) if f == NO_FIELD => None,
        Some(f) => Some(layer.require_field(f, what, "`name_field` in the scenario")?),
        None => layer.field("name").map(str::to_string),
    };
    let file = section
        .path
        .file_name()
        .map(|f| f.to_string_lossy().into_owned())
        .unwrap_or_default();
    let features = layer
        .features
        .iter()
        .map(|f| SiteFeature {
            geometry: f.geometry.clone(),
            name: name_field
                .as_ref()
                .and_then(|n| f.fields.get(n))
                .map(|v| v.as_text())
                .filter(|t| !t.is_empty())
                .unwrap_or_else(|| format!("{file} feature {}", f.number)),
            buffer_m,
        })
        .collect();
    Ok((
        features,
        layer.layer_name.clone(),
        Some(name_field.unwrap_or_else(|| NO_FIELD.to_string())),
    ))
}

fn grow(r: Rect<f64>, by: f64) -> Rect<f64> {
    Rect::new(
        (r.min().x - by, r.min().y - by),
        (r.max().x + by, r.max().y + by),
    )
}

fn open_host(
    path: &Path,
    layer: Option<&str>,
    assume: Option<&Crs>,
    stems_field: &str,
    size_classes: &[String],
    id_field: Option<&str>,
    budget: &Budget,
) -> Result<(Crs, Host)> {
    if !path.exists() {
        return Err(Error::input_with_hint(
            format!("host layer `{}` does not exist", path.display()),
            "check the path given to `--host`",
        ));
    }
    let kind = gis::dataset_kind(path)?;
    if kind == gis::DatasetKind::Raster {
        let raster = gis::open_raster(path, assume, budget)?;
        return Ok((raster.crs.clone(), Host::Raster(raster)));
    }
    if kind == gis::DatasetKind::Neither {
        return Err(Error::input(format!(
            "host layer `{}` has neither a raster band nor a vector layer",
            path.display()
        )));
    }
    let crs = gis::vector_crs(path, layer, assume, "host layer", "--host-layer")?;
    let layer = gis::read_vector(path, layer, &crs, assume, "host layer", "--host-layer")?;
    // The stems field may be missing only when every size class has a field of its own.
    let every_class =
        !size_classes.is_empty() && size_classes.iter().all(|c| layer.field(c).is_some());
    if !every_class {
        layer.require_field(stems_field, "host layer", "--stems-field")?;
    }
    if let Some(id) = id_field {
        layer.require_field(id, "host layer", "--id-field")?;
    }
    Ok((crs, Host::Polygons(layer)))
}

fn host_extent(host: &Host) -> Option<Rect<f64>> {
    match host {
        Host::Raster(r) => Some(r.frame.extent()),
        Host::Polygons(l) => l.extent(),
        Host::Inventory { stands, .. } => {
            let pts: Vec<geo::Coord<f64>> = stands
                .iter()
                .map(|s| geo::coord! { x: s.x, y: s.y })
                .collect();
            geo::MultiPoint::from(pts.into_iter().map(Point::from).collect::<Vec<_>>())
                .bounding_rect()
        }
    }
}

fn check_overlap(layer: &VectorLayer, host: Option<Rect<f64>>, what: &str) -> Result<()> {
    let (Some(host), Some(extent)) = (host, layer.extent()) else {
        return Ok(());
    };
    // A point inventory has a degenerate extent; grow it a little so touching counts.
    let host = grow(host, 1.0);
    if !host.intersects(&extent) {
        return Err(Error::input_with_hint(
            format!(
                "{what} `{}` does not overlap the host layer (layer x {:.0}..{:.0}, y {:.0}..{:.0}; host x {:.0}..{:.0}, y {:.0}..{:.0})",
                layer.path.display(),
                extent.min().x,
                extent.max().x,
                extent.min().y,
                extent.max().y,
                host.min().x,
                host.max().x,
                host.min().y,
                host.max().y
            ),
            "check that both layers cover the same area and carry the right CRS",
        ));
    }
    Ok(())
}

/// Resolve the access layer's rule fields: each to the layer's own field name or `None` for a
/// field the layer lacks (or is said to lack: `none`). A field named by the user that the layer
/// lacks is refused, and so is a layer that carries none of the rule fields (access, herbicide,
/// cost factor) — a parcels layer whose rules cannot be read must never become "open, herbicide
/// allowed" without a word. A missing default field is stated in the run's notes.
fn access_fields(
    layer: &VectorLayer,
    a: &scenario::AccessSection,
) -> Result<Vec<(&'static str, Option<String>)>> {
    let mut out = Vec::new();
    let mut said_none = false;
    for (rule, default) in scenario::ACCESS_FIELDS {
        let flag = format!("--{}-field", rule.replace('_', "-"));
        let found = match a.field(rule) {
            Some(f) if f.eq_ignore_ascii_case(NO_FIELD) => {
                said_none |= matches!(rule, "access" | "herbicide" | "cost_factor");
                None
            }
            Some(f) => Some(layer.require_field(f, "access layer", &flag)?),
            None => layer.field(default).map(str::to_string),
        };
        out.push((rule, found));
    }
    let rules_found = out
        .iter()
        .any(|(rule, f)| matches!(*rule, "access" | "herbicide" | "cost_factor") && f.is_some());
    if !rules_found && !said_none {
        return Err(Error::input_with_hint(
            format!(
                "access layer `{}` has none of the rule fields access, herbicide or cost_factor (fields: {}): its parcels' rules cannot be read",
                layer.path.display(),
                if layer.field_names.is_empty() {
                    "none".to_string()
                } else {
                    layer.field_names.join(", ")
                }
            ),
            "name the fields with `--access-field`, `--herbicide-field` and `--cost-factor-field` (or `none` for a rule the layer does not hold)",
        ));
    }
    Ok(out)
}

/// The parcels and their rules, read through the resolved `fields`; also plain notes on rules
/// that took their default because a parcel has no value or the layer no field.
fn read_parcels(
    layer: &VectorLayer,
    fields: &[(&'static str, Option<String>)],
) -> Result<(Vec<Parcel>, Vec<String>)> {
    let field_of = |rule: &str| {
        fields
            .iter()
            .find(|(r, _)| *r == rule)
            .and_then(|(_, f)| f.as_deref())
    };
    let mut parcels = Vec::new();
    let mut defaulted: std::collections::BTreeMap<&str, usize> = Default::default();
    for f in &layer.features {
        let geometry = match &f.geometry {
            geo::Geometry::Polygon(p) => MultiPolygon(vec![p.clone()]),
            geo::Geometry::MultiPolygon(m) => m.clone(),
            _ => {
                return Err(Error::input_with_hint(
                    format!(
                        "access layer `{}`, feature {}: expected polygons, found another geometry type",
                        layer.path.display(),
                        f.number
                    ),
                    "give parcels as Polygon or MultiPolygon features",
                ));
            }
        };
        let at = |field: &str| {
            format!(
                "access layer `{}`, feature {}, field `{field}`",
                layer.path.display(),
                f.number
            )
        };
        let text = |rule: &str| {
            field_of(rule)
                .and_then(|field| f.fields.get(field))
                .map(|v| v.as_text())
                .filter(|t| !t.is_empty())
        };
        // A rule's text on this feature; a field the layer has but this parcel leaves empty
        // takes the default, counted for the notes (a rule is never dropped silently).
        let mut rule = |name: &'static str| {
            let t = text(name);
            if t.is_none() && field_of(name).is_some() {
                *defaulted.entry(name).or_insert(0) += 1;
            }
            t
        };
        let unknown = |name: &str, what: &str, t: &str, hint: &str| {
            let at = at(field_of(name).unwrap_or_default());
            Error::input_with_hint(format!("{at}: unknown {what} `{t}`"), hint)
        };
        let access = match rule("access") {
            None => Access::Open,
            Some(t) => Access::parse(&t)
                .ok_or_else(|| unknown("access", "access", &t, "use open, permission or denied"))?,
        };
        let herbicide = match rule("herbicide") {
            None => Herbicide::Allowed,
            Some(t) => Herbicide::parse(&t).ok_or_else(|| {
                unknown(
                    "herbicide",
                    "herbicide rule",
                    &t,
                    "use allowed, restricted or prohibited",
                )
            })?,
        };
        let cost_factor = match field_of("cost_factor").and_then(|field| f.fields.get(field)) {
            None => 1.0,
            Some(v) => match v.as_number() {
                Some(c) if c.is_finite() && c > 0.0 => c,
                _ => {
                    return Err(Error::input_with_hint(
                        format!(
                            "{}: cost factor `{}` is not a positive number",
                            at(field_of("cost_factor").unwrap_or_default()),
                            v.as_text()
                        ),
                        "use e.g. 1 or 1.25",
                    ));
                }
            },
        };
        let parcel = text("parcel").unwrap_or_else(|| format!("feature-{}", f.number));
        let contact = text("contact").unwrap_or_default();
        let restriction = (herbicide == Herbicide::Restricted)
            .then(|| format!("parcel {parcel} restricts herbicide use"));
        parcels.push(Parcel {
            geometry,
            site: Site {
                parcel,
                access,
                herbicide,
                cost_factor,
                contact,
                restriction,
                ..Site::default()
            },
        });
    }
    let mut notes = Vec::new();
    for (rule, default_value) in [("access", "open"), ("herbicide", "allowed")] {
        match (field_of(rule), defaulted.get(rule)) {
            (None, _) => notes.push(format!(
                "the access layer has no {rule} field: {rule} is {default_value} on every parcel (name the field with `--{rule}-field` if it has another name)"
            )),
            (Some(field), Some(&n)) => notes.push(format!(
                "{n} parcel(s) have no value in `{field}`: taken as {rule} {default_value}"
            )),
            _ => {}
        }
    }
    if field_of("cost_factor").is_none() {
        notes.push(
            "the access layer has no cost_factor field: cost factor 1 on every parcel".into(),
        );
    }
    Ok((parcels, notes))
}
