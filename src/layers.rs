//! Layers in: read the host layer (raster, polygons or stand inventory), the access polygons,
//! the corridors and the detections, all reprojected into the working CRS.
//!
//! # Units
//! The working CRS is the host layer's (or, for an inventory, `--crs`): projected, metres.

use std::path::{Path, PathBuf};

use geo::{BoundingRect, Intersects, MultiLineString, MultiPolygon, Point, Rect};

use crate::error::{Error, Result};
use crate::gis::{self, Crs, RasterFile, VectorLayer};
use crate::patches::{Access, Herbicide, Site};
use crate::settings::Scenario;

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

/// One row of a stand inventory, already checked.
#[derive(Debug, Clone)]
pub struct Stand {
    pub id: String,
    pub x: f64,
    pub y: f64,
    pub stems: f64,
    pub area_ha: Option<f64>,
    pub access: Option<Access>,
    pub herbicide: Option<Herbicide>,
    pub cost_factor: Option<f64>,
    pub pressure: Option<f64>,
    pub suitability: Option<f64>,
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
}

/// Read every layer the scenario names.
pub fn load(s: &Scenario) -> Result<Layers> {
    let assume = match &s.host.assume_crs {
        Some(def) => Some(Crs::parse(def, "`--assume-crs`")?),
        None => None,
    };
    let (crs, host) = if let Some(path) = &s.host.inventory {
        let crs = Crs::parse(s.host.crs.as_deref().unwrap_or_default(), "`--crs`")?;
        let stands = crate::patches::read_inventory(path)?;
        (
            crs,
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
            s.solver.max_memory_gb,
        )?
    };
    let host_extent = host_extent(&host);

    let mut parcels = Vec::new();
    if let Some(a) = &s.access {
        let layer = gis::read_vector(
            &a.path,
            a.layer.as_deref(),
            &crs,
            assume.as_ref(),
            "access layer",
        )?;
        if layer.features.is_empty() {
            return Err(Error::input_with_hint(
                format!("access layer `{}` has no features", a.path.display()),
                "give a layer with the parcels (or leave out `--access`: every patch is then open, herbicide allowed)",
            ));
        }
        check_overlap(&layer, host_extent, "access layer")?;
        parcels = read_parcels(&layer, a)?;
    }
    let mut corridors = Vec::new();
    for c in &s.corridors {
        let layer = gis::read_vector(
            &c.path,
            c.layer.as_deref(),
            &crs,
            assume.as_ref(),
            "corridor layer",
        )?;
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
        )?;
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
    Ok(Layers {
        crs,
        host,
        parcels,
        corridors,
        detections,
        detection_weight,
    })
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
    max_gb: f64,
) -> Result<(Crs, Host)> {
    if !path.exists() {
        return Err(Error::input_with_hint(
            format!("host layer `{}` does not exist", path.display()),
            "check the path given to `--host`",
        ));
    }
    let dataset = gdal::Dataset::open(path).map_err(|e| Error::gdal("open", path, e))?;
    if dataset.raster_count() > 0 {
        drop(dataset);
        let raster = gis::open_raster(path, assume, max_gb)?;
        return Ok((raster.crs.clone(), Host::Raster(raster)));
    }
    if dataset.layer_count() == 0 {
        return Err(Error::input(format!(
            "host layer `{}` has neither a raster band nor a vector layer",
            path.display()
        )));
    }
    let first = match layer {
        Some(name) => dataset.layer_by_name(name).map_err(|_| {
            Error::input(format!(
                "host layer `{}` has no layer `{name}`",
                path.display()
            ))
        })?,
        None => dataset.layer(0).map_err(|e| Error::gdal("read", path, e))?,
    };
    use gdal::vector::LayerAccess;
    let crs = match first.spatial_ref() {
        Some(srs) => Crs::from_srs(&srs, &format!("host layer `{}`", path.display()))?,
        None => assume.cloned().ok_or_else(|| {
            Error::input_with_hint(
                format!("`{}` has no coordinate reference system", path.display()),
                "name it with `--assume-crs EPSG:NNNN`",
            )
        })?,
    };
    drop(dataset);
    let layer = gis::read_vector(path, layer, &crs, assume, "host layer")?;
    layer.require_field(stems_field, "host layer")?;
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

fn read_parcels(layer: &VectorLayer, a: &crate::settings::AccessSection) -> Result<Vec<Parcel>> {
    let mut parcels = Vec::new();
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
        let text = |field: &str| {
            f.fields
                .get(field)
                .map(|v| v.as_text())
                .filter(|t| !t.is_empty())
        };
        let access = match text(&a.access_field) {
            None => Access::Open,
            Some(t) => Access::parse(&t).ok_or_else(|| {
                Error::input_with_hint(
                    format!("{}: unknown access `{t}`", at(&a.access_field)),
                    "use open, permission or denied",
                )
            })?,
        };
        let herbicide = match text(&a.herbicide_field) {
            None => Herbicide::Allowed,
            Some(t) => Herbicide::parse(&t).ok_or_else(|| {
                Error::input_with_hint(
                    format!("{}: unknown herbicide rule `{t}`", at(&a.herbicide_field)),
                    "use allowed, restricted or prohibited",
                )
            })?,
        };
        let cost_factor = match f.fields.get(&a.cost_factor_field) {
            None => 1.0,
            Some(v) => match v.as_number() {
                Some(c) if c.is_finite() && c > 0.0 => c,
                _ => {
                    return Err(Error::input_with_hint(
                        format!(
                            "{}: cost factor `{}` is not a positive number",
                            at(&a.cost_factor_field),
                            v.as_text()
                        ),
                        "use e.g. 1 or 1.25",
                    ));
                }
            },
        };
        let parcel = text(&a.parcel_field).unwrap_or_else(|| format!("feature-{}", f.number));
        let contact = text(&a.contact_field).unwrap_or_default();
        parcels.push(Parcel {
            geometry,
            site: Site {
                parcel,
                access,
                herbicide,
                cost_factor,
                contact,
            },
        });
    }
    Ok(parcels)
}
