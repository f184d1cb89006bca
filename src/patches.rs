//! Patches: the units a crew treats. Built from a host raster (connected components of host
//! cells, split at parcel boundaries and into crew-sized blocks), from host polygons, or from a
//! stand inventory; each patch takes the access rules of the parcel it lies in.
//!
//! # Units
//! x, y in the working CRS (metres); stems are counts; area in hectares; the stem-weighted
//! centroid is what distances are measured between.

use std::collections::{BTreeSet, HashMap};
use std::path::Path;

use geo::{Area, Centroid, Contains, MultiPolygon, Point, Polygon};
use rstar::RTree;
use rstar::primitives::{GeomWithData, Rectangle};

use crate::error::{Error, Result};
use crate::gis::{self, Crs, Frame, Grid};
use crate::label::{Blob, Labeller, Rules, Run};
use crate::layers::{Host, Layers, Parcel, SiteFeature, Skipped, Stand};
use crate::settings::HostSection;

/// Dense index of a patch, 0..n, shared by every stage after this one.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct PatchId(pub u32);

impl PatchId {
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// Whether a crew may enter.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Access {
    Open,
    Permission,
    Denied,
}

impl Access {
    pub fn parse(text: &str) -> Option<Access> {
        match text.trim().to_ascii_lowercase().as_str() {
            "open" => Some(Access::Open),
            "permission" => Some(Access::Permission),
            "denied" => Some(Access::Denied),
            _ => None,
        }
    }
    pub fn as_str(self) -> &'static str {
        match self {
            Access::Open => "open",
            Access::Permission => "permission",
            Access::Denied => "denied",
        }
    }
}

/// Whether herbicide may be used on the site.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Herbicide {
    Allowed,
    Restricted,
    Prohibited,
}

impl Herbicide {
    pub fn parse(text: &str) -> Option<Herbicide> {
        match text.trim().to_ascii_lowercase().as_str() {
            "allowed" => Some(Herbicide::Allowed),
            "restricted" => Some(Herbicide::Restricted),
            "prohibited" => Some(Herbicide::Prohibited),
            _ => None,
        }
    }
    pub fn as_str(self) -> &'static str {
        match self {
            Herbicide::Allowed => "allowed",
            Herbicide::Restricted => "restricted",
            Herbicide::Prohibited => "prohibited",
        }
    }
}

/// Whether water lies within the buffer of a patch.
#[derive(Debug, Clone, PartialEq)]
pub enum Water {
    /// No water layer was given: the site was not checked.
    Unchecked,
    /// No water feature of the water layers lies within its buffer.
    Clear,
    /// Within the buffer of these water features (e.g. `Mill Creek (12 m)`).
    Near(String),
}

impl Water {
    pub fn as_str(&self) -> &'static str {
        match self {
            Water::Unchecked => "unchecked",
            Water::Clear => "clear",
            Water::Near(_) => "near",
        }
    }
}

/// The rules of the place a patch stands on.
#[derive(Debug, Clone, PartialEq)]
pub struct Site {
    pub parcel: String,
    pub access: Access,
    pub herbicide: Herbicide,
    pub cost_factor: f64,
    pub contact: String,
    /// Why herbicide is restricted here (the parcel's rule, a sensitive site nearby), for crews
    /// and bidders; `None` unless `herbicide` is restricted.
    pub restriction: Option<String>,
    pub water: Water,
}

impl Default for Site {
    fn default() -> Self {
        Site {
            parcel: String::new(),
            access: Access::Open,
            herbicide: Herbicide::Allowed,
            cost_factor: 1.0,
            contact: String::new(),
            restriction: None,
            water: Water::Unchecked,
        }
    }
}

impl Site {
    /// The site's rules in words for people (plan.csv `site_notes`, work orders, the scope of
    /// work): no herbicide, restricted conditions, water nearby. Empty for an open site with no
    /// special rule.
    pub fn notes(&self) -> String {
        let mut notes = Vec::new();
        match self.herbicide {
            Herbicide::Prohibited => notes.push("NO HERBICIDE ON THIS SITE".to_string()),
            Herbicide::Restricted => notes.push(format!(
                "restricted site: herbicide only under the site's conditions ({})",
                self.restriction.as_deref().unwrap_or("confirm them with the site manager")
            )),
            Herbicide::Allowed => {}
        }
        if let Water::Near(what) = &self.water {
            notes.push(format!("near water: {what}"));
        }
        if self.access == Access::Permission {
            notes.push("landowner permission first".to_string());
        }
        notes.join("; ")
    }
}

/// One patch of tree-of-heaven.
#[derive(Debug, Clone)]
pub struct Patch {
    pub id: PatchId,
    /// The id users see (raster patches: P0001...; inventory and polygons: their own id).
    pub label: String,
    /// Stem-weighted centroid in the working CRS.
    pub x: f64,
    pub y: f64,
    pub stems: f64,
    pub area_ha: Option<f64>,
    pub outline: Option<MultiPolygon<f64>>,
    pub site: Site,
    /// Replaces the computed introduction pressure (inventory `pressure` column).
    pub pressure_override: Option<f64>,
    /// Establishment suitability from the inventory's `suitability` column (0 to 1).
    pub suitability: Option<f64>,
}

impl Patch {
    /// The patch as a geometry: its outline, or its centroid when it has none.
    pub fn geometry(&self) -> geo::Geometry<f64> {
        match &self.outline {
            Some(m) => geo::Geometry::MultiPolygon(m.clone()),
            None => geo::Geometry::Point(Point::new(self.x, self.y)),
        }
    }
}

/// All patches, in id order.
#[derive(Debug, Clone)]
pub struct Patches {
    pub crs: Crs,
    pub items: Vec<Patch>,
    /// Raster components dropped as smaller than `min_patch_ha`.
    pub dropped_slivers: usize,
    /// Everything skipped while reading the layers and building patches, by reason.
    pub skipped: Skipped,
    /// Plain notes on rules that took their default (from the access layer).
    pub notes: Vec<String>,
    /// Whether the sites were checked against water layers.
    pub water_checked: bool,
    /// What kind of host input they came from: `raster`, `polygons` or `inventory`.
    pub source: &'static str,
    /// For raster input, each patch's runs of cells in the host raster (`frame`); else empty.
    pub runs: Vec<Vec<Run>>,
    /// The host raster's frame, for raster input.
    pub frame: Option<Frame>,
}

impl Patches {
    pub fn len(&self) -> usize {
        self.items.len()
    }
    pub fn is_empty(&self) -> bool {
        self.items.is_empty()
    }
    /// Find a patch by its user-facing id.
    pub fn by_label(&self) -> HashMap<&str, PatchId> {
        self.items
            .iter()
            .map(|p| (p.label.as_str(), p.id))
            .collect()
    }
}

/// How raster cells become patches.
#[derive(Debug, Clone, Copy)]
pub struct LabelOptions {
    pub min_density: f64,
    /// 4 or 8.
    pub connectivity: u8,
    pub min_patch_ha: f64,
    pub max_patch_ha: Option<f64>,
}

impl LabelOptions {
    /// The labeller's rules for cells of `cell_ha` hectares.
    pub fn rules(&self, cell_ha: f64) -> Rules {
        Rules {
            min_density: self.min_density,
            connectivity: self.connectivity,
            block_side: self
                .max_patch_ha
                .map(|max| ((max / cell_ha).sqrt().floor() as usize).max(1))
                .unwrap_or(usize::MAX),
        }
    }
}

/// Label host cells into components, streaming strips of `strip` rows from `read(row0, rows)`
/// (values, and parcel indices or an empty vector). Two host cells join when they touch (4- or
/// 8-connected), lie in the same parcel and, with `max_patch_ha`, in the same square block.
/// Components come in the row-major order of their first cell; those smaller than
/// `min_patch_ha` are dropped and counted. Also returns the largest value seen (NaN if none).
pub fn label_strips(
    frame: &Frame,
    options: LabelOptions,
    strip: usize,
    mut read: impl FnMut(usize, usize) -> Result<(Vec<f32>, Vec<u32>)>,
) -> Result<(Vec<Blob>, usize, f64)> {
    let (w, h) = (frame.width, frame.height);
    let cell_ha = frame.cell_area_ha();
    let mut labeller = Labeller::new(w, options.rules(cell_ha));
    let strip = strip.max(1);
    let mut row0 = 0;
    let bar = crate::progress::Stage::bar("labelling host cells", h as u64, "rows");
    while row0 < h {
        bar.set(row0 as u64);
        let rows = strip.min(h - row0);
        let (values, parcels) = read(row0, rows)?;
        for r in 0..rows {
            let parcels = if parcels.is_empty() {
                &[][..]
            } else {
                &parcels[r * w..(r + 1) * w]
            };
            labeller.push_row(&values[r * w..(r + 1) * w], parcels);
        }
        row0 += rows;
    }
    let max = labeller.max_value();
    let mut blobs = labeller.finish();
    let before = blobs.len();
    blobs.retain(|b| b.cells as f64 * cell_ha >= options.min_patch_ha);
    let dropped = before - blobs.len();
    Ok((blobs, dropped, max))
}

/// [`label_strips`] over a grid in memory and its parcel index (one entry per cell), in
/// strips of `strip` rows.
pub fn label_cells(
    grid: &Grid,
    parcel_index: &[u32],
    options: LabelOptions,
    strip: usize,
) -> (Vec<Blob>, usize) {
    let w = grid.width;
    let (blobs, dropped, _) = label_strips(&grid.frame(), options, strip, |row0, rows| {
        let cells = row0 * w..(row0 + rows) * w;
        let values = grid.values[cells.clone()]
            .iter()
            .map(|&v| v as f32)
            .collect();
        let parcels = parcel_index
            .get(cells)
            .map(<[u32]>::to_vec)
            .unwrap_or_default();
        Ok((values, parcels))
    })
    .expect("reading from memory cannot fail");
    (blobs, dropped)
}

/// The outline of a component: the union of its row runs.
pub fn outline(frame: &Frame, runs: &[Run]) -> MultiPolygon<f64> {
    let polygons: Vec<Polygon<f64>> = runs
        .iter()
        .map(|r| {
            let row = r.row as f64;
            let (c0, c1) = (r.c0 as f64, r.c1 as f64);
            let corners = [
                frame.corner(c0, row),
                frame.corner(c1, row),
                frame.corner(c1, row + 1.0),
                frame.corner(c0, row + 1.0),
                frame.corner(c0, row),
            ];
            Polygon::new(
                corners
                    .iter()
                    .map(|&(x, y)| geo::coord! { x: x, y: y })
                    .collect::<Vec<_>>()
                    .into(),
                vec![],
            )
        })
        .collect();
    if polygons.len() == 1 {
        return MultiPolygon(polygons);
    }
    geo::unary_union(&polygons)
}

/// Rows per strip for the streaming read: a multiple of GDAL's block height, about 256 rows,
/// at most 64 MB of values and parcel indices.
pub fn strip_rows(raster: &gis::RasterFile) -> usize {
    let block = raster.block_rows.max(1);
    let cap = (64e6 / (8.0 * raster.frame.width.max(1) as f64))
        .floor()
        .max(1.0) as usize;
    let want = 256usize.div_ceil(block) * block;
    if want <= cap {
        want
    } else if block > cap {
        cap
    } else {
        (cap / block) * block
    }
}

/// Finds the parcel a point lies in.
pub struct ParcelIndex<'a> {
    parcels: &'a [Parcel],
    tree: RTree<GeomWithData<Rectangle<[f64; 2]>, usize>>,
}

impl<'a> ParcelIndex<'a> {
    pub fn new(parcels: &'a [Parcel]) -> Self {
        use geo::BoundingRect;
        let items = parcels
            .iter()
            .enumerate()
            .filter_map(|(i, p)| {
                p.geometry.bounding_rect().map(|r| {
                    GeomWithData::new(
                        Rectangle::from_corners([r.min().x, r.min().y], [r.max().x, r.max().y]),
                        i,
                    )
                })
            })
            .collect();
        ParcelIndex {
            parcels,
            tree: RTree::bulk_load(items),
        }
    }

    /// The last parcel (in layer order) containing (x, y), as rasterising would burn it.
    pub fn locate(&self, x: f64, y: f64) -> Option<&'a Parcel> {
        let point = Point::new(x, y);
        self.tree
            .locate_all_at_point(&[x, y])
            .map(|g| g.data)
            .filter(|&i| self.parcels[i].geometry.contains(&point))
            .max()
            .map(|i| &self.parcels[i])
    }
}

/// Build patches from the loaded layers.
pub fn build(layers: &Layers, host: &HostSection) -> Result<Patches> {
    let parcel_index = ParcelIndex::new(&layers.parcels);
    let site_at = |x: f64, y: f64| {
        parcel_index
            .locate(x, y)
            .map(|p| p.site.clone())
            .unwrap_or_default()
    };
    let mut items = Vec::new();
    let mut dropped_slivers = 0;
    let mut runs = Vec::new();
    let mut skipped = layers.skipped.clone();
    let non_finite = std::cell::Cell::new(0usize);
    let source;
    match &layers.host {
        Host::Raster(raster) => {
            source = "raster";
            let frame = &raster.frame;
            // Parcels with their 1-based index and bounding box, so each strip burns only
            // the parcels that reach it.
            type Reach<'a> = (u32, &'a MultiPolygon<f64>, Option<geo::Rect<f64>>);
            let parcels: Vec<Reach> = layers
                .parcels
                .iter()
                .enumerate()
                .map(|(i, p)| {
                    use geo::BoundingRect;
                    ((i + 1) as u32, &p.geometry, p.geometry.bounding_rect())
                })
                .collect();
            let options = LabelOptions {
                min_density: host.min_density,
                connectivity: host.connectivity,
                min_patch_ha: host.min_patch_ha,
                max_patch_ha: host.max_patch_ha,
            };
            let dataset = raster.dataset()?;
            let (components, dropped, max) =
                label_strips(frame, options, strip_rows(raster), |row0, rows| {
                    let (values, bad) = raster.read_rows_counted(&dataset, row0, rows)?;
                    non_finite.set(non_finite.get() + bad);
                    let strip = frame.rows(row0, rows);
                    let extent = strip.extent();
                    let reaching: Vec<(u32, &MultiPolygon<f64>)> = parcels
                        .iter()
                        .filter(|(_, _, r)| {
                            r.is_some_and(|r| {
                                use geo::Intersects;
                                r.intersects(&extent)
                            })
                        })
                        .map(|&(i, g, _)| (i, g))
                        .collect();
                    let index = if reaching.is_empty() {
                        Vec::new()
                    } else {
                        gis::rasterize_index(&strip, &reaching)?
                    };
                    Ok((values, index))
                })?;
            dropped_slivers = dropped;
            skipped.add("host_cells_not_finite", non_finite.get());
            skipped.add("host_patches_below_min_patch_ha", dropped);
            if components.is_empty() {
                return Err(Error::input_with_hint(
                    format!(
                        "host raster: no patch left (cells >= {} stems/ha: none{}; largest value {})",
                        host.min_density,
                        if dropped > 0 {
                            format!(
                                " after dropping {dropped} slivers under {} ha",
                                host.min_patch_ha
                            )
                        } else {
                            String::new()
                        },
                        if max.is_nan() {
                            "none: every cell is nodata".to_string()
                        } else {
                            format!("{max}")
                        }
                    ),
                    "check that band 1 holds stems per hectare, or lower `--min-density` / `--min-patch-ha`",
                ));
            }
            let cell_ha = frame.cell_area_ha();
            let width = components.len().to_string().len().max(4);
            for (k, c) in components.iter().enumerate() {
                let stems = c.sum * cell_ha;
                // The affine geotransform maps the value-weighted mean cell position to the
                // stem-weighted centroid.
                let (x, y) = frame.corner(c.sum_col / c.sum, c.sum_row / c.sum);
                let site = if c.parcel == 0 {
                    Site::default()
                } else {
                    layers.parcels[c.parcel as usize - 1].site.clone()
                };
                items.push(Patch {
                    id: PatchId(k as u32),
                    label: format!("P{:0width$}", k + 1),
                    x,
                    y,
                    stems,
                    area_ha: Some(c.cells as f64 * cell_ha),
                    outline: Some(outline(frame, &c.runs)),
                    site,
                    pressure_override: None,
                    suitability: None,
                });
            }
            runs = components.into_iter().map(|c| c.runs).collect();
        }
        Host::Polygons(layer) => {
            source = "polygons";
            let mut seen = BTreeSet::new();
            let stems_field = layer
                .field(&host.stems_field)
                .unwrap_or(&host.stems_field)
                .to_string();
            let id_field = host
                .id_field
                .as_ref()
                .map(|f| layer.field(f).unwrap_or(f).to_string());
            for f in &layer.features {
                let at = format!(
                    "host layer `{}`, feature {}",
                    layer.path.display(),
                    f.number
                );
                let polygon = match &f.geometry {
                    geo::Geometry::Polygon(p) => MultiPolygon(vec![p.clone()]),
                    geo::Geometry::MultiPolygon(m) => m.clone(),
                    _ => {
                        return Err(Error::input_with_hint(
                            format!("{at}: expected a polygon"),
                            "give host stands as Polygon features with a stems field",
                        ));
                    }
                };
                let stems = f.fields.get(&stems_field).and_then(|v| v.as_number());
                let stems = match stems {
                    Some(s) if s.is_finite() && s >= 0.0 => s,
                    _ => {
                        return Err(Error::input_with_hint(
                            format!(
                                "{at}, field `{}`: stems must be a number 0 or more, got `{}`",
                                stems_field,
                                f.fields
                                    .get(&stems_field)
                                    .map(|v| v.as_text())
                                    .unwrap_or_default()
                            ),
                            "fix the value or name the right field with `--stems-field`",
                        ));
                    }
                };
                let label = match &id_field {
                    Some(field) => f
                        .fields
                        .get(field)
                        .map(|v| v.as_text())
                        .filter(|t| !t.is_empty())
                        .ok_or_else(|| {
                            Error::input(format!("{at}: empty id in field `{field}`"))
                        })?,
                    None => format!("P{:04}", f.number),
                };
                if let Some(c) = label.chars().find(|c| c.is_control() && *c != '\t') {
                    return Err(Error::input_with_hint(
                        format!(
                            "{at}: the id holds a control character (U+{:04X})",
                            c as u32
                        ),
                        "ids are printed on work orders and maps: use letters, digits and punctuation",
                    ));
                }
                if !seen.insert(label.clone()) {
                    return Err(Error::input_with_hint(
                        format!("{at}: duplicate id `{label}`"),
                        "every patch needs its own id",
                    ));
                }
                let Some(centre) = polygon.centroid() else {
                    return Err(Error::input(format!("{at}: empty polygon")));
                };
                if stems <= 0.0 {
                    skipped.add("host_features_with_0_stems", 1);
                    continue;
                }
                items.push(Patch {
                    id: PatchId(items.len() as u32),
                    label,
                    x: centre.x(),
                    y: centre.y(),
                    stems,
                    area_ha: Some(polygon.unsigned_area() / 10_000.0),
                    site: site_at(centre.x(), centre.y()),
                    outline: Some(polygon),
                    pressure_override: None,
                    suitability: None,
                });
            }
            if items.is_empty() {
                return Err(Error::input(format!(
                    "host layer `{}` has no polygon with stems above 0",
                    layer.path.display()
                )));
            }
        }
        Host::Inventory { stands, .. } => {
            source = "inventory";
            for s in stands {
                let mut site = site_at(s.x, s.y);
                if let Some(a) = s.access {
                    site.access = a;
                }
                if let Some(h) = s.herbicide {
                    site.herbicide = h;
                }
                if let Some(c) = s.cost_factor {
                    site.cost_factor = c;
                }
                items.push(Patch {
                    id: PatchId(items.len() as u32),
                    label: s.id.clone(),
                    x: s.x,
                    y: s.y,
                    stems: s.stems,
                    area_ha: s.area_ha,
                    outline: None,
                    site,
                    pressure_override: s.pressure,
                    suitability: s.suitability,
                });
            }
        }
    }
    let total: f64 = items.iter().map(|p| p.stems).sum();
    if total <= 0.0 {
        return Err(Error::input(
            "the host layer holds no stems (every patch has 0 stems)",
        ));
    }
    check_positions(&items, &layers.crs, source)?;
    overlay_sites(&mut items, layers);
    Ok(Patches {
        crs: layers.crs.clone(),
        items,
        dropped_slivers,
        skipped,
        notes: layers.notes.clone(),
        water_checked: layers.water_checked,
        source,
        runs,
        frame: match &layers.host {
            Host::Raster(r) => Some(r.frame),
            _ => None,
        },
    })
}

/// Every patch position must convert to longitude and latitude (outputs carry both): a point
/// outside the working CRS's domain (e.g. x = 1e300, a raster whose origin is off the globe) is
/// refused, naming the patch.
fn check_positions(items: &[Patch], crs: &Crs, source: &str) -> Result<()> {
    let to_lonlat = gis::ToLonLat::new(crs)?;
    let points: Vec<(f64, f64)> = items.iter().map(|p| (p.x, p.y)).collect();
    if let Err(k) = to_lonlat.check(&points) {
        let p = &items[k];
        let what = match source {
            "inventory" => format!("stand `{}`", p.label),
            "polygons" => format!("host polygon `{}`", p.label),
            _ => format!("host raster patch `{}`", p.label),
        };
        return Err(Error::input_with_hint(
            format!(
                "{what} lies at x {:e}, y {:e}, outside the area {} covers",
                p.x, p.y, crs.name
            ),
            "check the coordinates and the CRS they are in (`--crs`, or the layer's own CRS)",
        ));
    }
    Ok(())
}

/// The first buffered feature of `features` within reach of `geometry`, with its distance.
fn within_buffer(
    tree: &RTree<GeomWithData<Rectangle<[f64; 2]>, usize>>,
    features: &[SiteFeature],
    geometry: &geo::Geometry<f64>,
) -> Vec<(usize, f64)> {
    use geo::{BoundingRect, Distance, Euclidean};
    let Some(r) = geometry.bounding_rect() else {
        return Vec::new();
    };
    let reach = features.iter().map(|f| f.buffer_m).fold(0.0, f64::max);
    let envelope = rstar::AABB::from_corners(
        [r.min().x - reach, r.min().y - reach],
        [r.max().x + reach, r.max().y + reach],
    );
    let mut hits: Vec<(usize, f64)> = tree
        .locate_in_envelope_intersecting(&envelope)
        .filter_map(|g| {
            let f = &features[g.data];
            let d = Euclidean.distance(geometry, &f.geometry);
            (d <= f.buffer_m).then_some((g.data, d))
        })
        .collect();
    hits.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    hits
}

fn feature_tree(features: &[SiteFeature]) -> RTree<GeomWithData<Rectangle<[f64; 2]>, usize>> {
    use geo::BoundingRect;
    RTree::bulk_load(
        features
            .iter()
            .enumerate()
            .filter_map(|(i, f)| {
                f.geometry.bounding_rect().map(|r| {
                    GeomWithData::new(
                        Rectangle::from_corners([r.min().x, r.min().y], [r.max().x, r.max().y]),
                        i,
                    )
                })
            })
            .collect(),
    )
}

/// Apply the water and sensitive-site layers to each patch's site: a patch within the buffer
/// of a sensitive site becomes a restricted site (a prohibited one stays prohibited), with the
/// site named as the reason; with water layers, each patch is near water or clear.
fn overlay_sites(items: &mut [Patch], layers: &Layers) {
    let sensitive = feature_tree(&layers.sensitive);
    let water = feature_tree(&layers.water);
    let describe = |features: &[SiteFeature], hits: &[(usize, f64)]| {
        hits.iter()
            .take(3)
            .map(|&(k, d)| format!("{} ({:.0} m)", features[k].name, d))
            .collect::<Vec<_>>()
            .join(", ")
    };
    for p in items.iter_mut() {
        let geometry = p.geometry();
        if !layers.sensitive.is_empty() {
            let hits = within_buffer(&sensitive, &layers.sensitive, &geometry);
            if !hits.is_empty() {
                let reason = format!(
                    "within the buffer of sensitive site {}",
                    describe(&layers.sensitive, &hits)
                );
                if p.site.herbicide == Herbicide::Allowed {
                    p.site.herbicide = Herbicide::Restricted;
                }
                if p.site.herbicide == Herbicide::Restricted {
                    p.site.restriction = Some(match p.site.restriction.take() {
                        Some(r) => format!("{r}; {reason}"),
                        None => reason,
                    });
                }
            }
        }
        if layers.water_checked {
            let hits = within_buffer(&water, &layers.water, &geometry);
            p.site.water = if hits.is_empty() {
                Water::Clear
            } else {
                Water::Near(describe(&layers.water, &hits))
            };
        }
    }
}

/// Read and check a stand inventory CSV: `id,x,y,stems` plus optional `access`, `herbicide`,
/// `cost_factor`, `pressure`, `area_ha`, `suitability`. Column names are matched case-insensitively.
pub fn read_inventory(path: &Path) -> Result<Vec<Stand>> {
    let bytes = std::fs::read(path).map_err(|e| Error::io("read", path, e))?;
    parse_inventory(&bytes, &path.display().to_string())
}

/// Parse and check inventory CSV bytes; `origin` names the file in messages.
pub fn parse_inventory(bytes: &[u8], origin: &str) -> Result<Vec<Stand>> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(bytes);
    let file = origin;
    let headers: Vec<String> = reader
        .headers()
        .map_err(|e| {
            Error::input(format!(
                "inventory `{file}`: cannot read the header line ({e})"
            ))
        })?
        .iter()
        .map(|h| h.to_ascii_lowercase())
        .collect();
    let column = |name: &str| headers.iter().position(|h| h == name);
    let mut missing = Vec::new();
    for name in ["id", "x", "y", "stems"] {
        if column(name).is_none() {
            missing.push(name);
        }
    }
    if !missing.is_empty() {
        let hint = if headers.len() == 1 && headers[0].contains(';') {
            "the file looks semicolon-separated; save it as comma-separated CSV"
        } else {
            "the first line must name the columns: id,x,y,stems (optional: access,herbicide,cost_factor,pressure,area_ha)"
        };
        return Err(Error::input_with_hint(
            format!(
                "inventory `{file}`: missing required column(s) {} (found: {})",
                missing.join(", "),
                headers.join(", ")
            ),
            hint,
        ));
    }
    let (ci, cx, cy, cs) = (
        column("id").unwrap_or(0),
        column("x").unwrap_or(0),
        column("y").unwrap_or(0),
        column("stems").unwrap_or(0),
    );
    let csuit = column("suitability");
    let (ca, ch, cc, cp, car) = (
        column("access"),
        column("herbicide"),
        column("cost_factor"),
        column("pressure"),
        column("area_ha"),
    );
    let mut stands = Vec::new();
    let mut seen: HashMap<String, u64> = HashMap::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let line = e.position().map(|p| format!(", line {}", p.line())).unwrap_or_default();
            if matches!(e.kind(), csv::ErrorKind::Utf8 { .. }) {
                return Error::input_with_hint(
                    format!("inventory `{file}`{line}: text that is not UTF-8 (an export in a legacy encoding such as Windows-1252)"),
                    "save the file as UTF-8 (in a spreadsheet: Save As, CSV UTF-8) and run again",
                );
            }
            Error::input_with_hint(format!("inventory `{file}`{line}: malformed CSV ({e})"), "every row needs the same number of fields as the header; quote fields that contain commas")
        })?;
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        // inventory.next.csv (and any CSV the tool wrote) has formula-like ids neutralised.
        let get = |c: usize| crate::csv_cells::restore(record.get(c).unwrap_or(""));
        let number = |c: usize, name: &str, allow_negative: bool| -> Result<f64> {
            let text = get(c);
            let value: f64 = text.parse().map_err(|_| {
                Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `{name}`: `{text}` is not a number"
                    ),
                    "use plain numbers with a dot for decimals and no thousands separators",
                )
            })?;
            if !value.is_finite() || (!allow_negative && value < 0.0) {
                return Err(Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `{name}`: `{text}` must be a finite number{}",
                        if allow_negative { "" } else { " 0 or more" }
                    ),
                    "fix the value in the inventory",
                ));
            }
            Ok(value)
        };
        let id = get(ci).to_string();
        if id.is_empty() {
            return Err(Error::input(format!(
                "inventory `{file}`, line {line}: empty id"
            )));
        }
        if let Some(c) = id.chars().find(|c| c.is_control() && *c != '\t') {
            return Err(Error::input_with_hint(
                format!(
                    "inventory `{file}`, line {line}, column `id`: the id holds a control character (U+{:04X})",
                    c as u32
                ),
                "ids are printed on work orders and maps: use letters, digits and punctuation",
            ));
        }
        if let Some(first) = seen.insert(id.clone(), line) {
            return Err(Error::input_with_hint(
                format!(
                    "inventory `{file}`, line {line}: duplicate id `{id}` (first on line {first})"
                ),
                "every stand needs its own id",
            ));
        }
        let optional_text = |c: Option<usize>| c.map(get).filter(|t| !t.is_empty());
        let access = match optional_text(ca) {
            None => None,
            Some(t) => Some(Access::parse(t).ok_or_else(|| {
                Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `access`: unknown value `{t}`"
                    ),
                    "use open, permission or denied",
                )
            })?),
        };
        let herbicide = match optional_text(ch) {
            None => None,
            Some(t) => Some(Herbicide::parse(t).ok_or_else(|| {
                Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `herbicide`: unknown value `{t}`"
                    ),
                    "use allowed, restricted or prohibited",
                )
            })?),
        };
        let cost_factor = match cc.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => {
                let v = number(c, "cost_factor", false)?;
                if v <= 0.0 {
                    return Err(Error::input(format!(
                        "inventory `{file}`, line {line}, column `cost_factor`: must be above 0, got {v}"
                    )));
                }
                Some(v)
            }
        };
        let pressure = match cp.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => Some(number(c, "pressure", false)?),
        };
        let area_ha = match car.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => Some(number(c, "area_ha", false)?),
        };
        let suitability = match csuit.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => {
                let v = number(c, "suitability", false)?;
                if v > 1.0 {
                    return Err(Error::input_with_hint(
                        format!(
                            "inventory `{file}`, line {line}, column `suitability`: {v} is above 1"
                        ),
                        "suitability runs from 0 (the insect cannot establish) to 1 (fully suitable)",
                    ));
                }
                Some(v)
            }
        };
        stands.push(Stand {
            x: number(cx, "x", true)?,
            y: number(cy, "y", true)?,
            stems: number(cs, "stems", false)?,
            id,
            area_ha,
            access,
            herbicide,
            cost_factor,
            pressure,
            suitability,
        });
    }
    if stands.is_empty() {
        return Err(Error::input_with_hint(
            format!("inventory `{file}` has a header but no stands"),
            "add one row per stand below the header",
        ));
    }
    Ok(stands)
}
