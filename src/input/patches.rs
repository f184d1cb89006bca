//! Patches: the units a crew treats. Built from a host raster (connected components of host
//! cells, split at parcel boundaries and into crew-sized blocks), from host polygons, or from a
//! stand inventory; each patch takes the access rules of the parcel it lies in.
//!
//! # Units
//! x, y in the working CRS (metres); stems are counts; area in hectares; the stem-weighted
//! centroid is what distances are measured between.

use std::collections::{BTreeSet, HashMap};

use geo::{Area, Centroid, MultiPolygon, Point, Polygon};
use rstar::RTree;
use rstar::primitives::{GeomWithData, Rectangle};

use crate::core::error::{Error, Result};
use crate::core::memory::{Budget, RasterCost};
use crate::core::progress::Bars;
use crate::core::scenario::HostSection;
use crate::core::site::{Herbicide, PatchId, Site, Water};
use crate::input::class_rasters;
use crate::input::gis::{self, Crs, Frame, Grid};
use crate::input::label::{Blob, Labeller, Rules, Run};
use crate::input::layers::{Host, Layers, SiteFeature, Skipped};

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
    /// Stems by size class, in catalogue class order (inventory columns or polygon fields named
    /// after the classes); `None` when counted only as `stems` (the default mix applies).
    pub by_class: Option<Vec<f64>>,
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
    /// How an inventory's coordinates were converted into the work CRS, if they were.
    pub crs_conversion: Option<String>,
    /// The inventory CRS's linear unit when not metres (feet): printed distances follow it.
    pub input_linear_units: Option<String>,
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
    read: impl FnMut(usize, usize) -> Result<(Vec<f32>, Vec<u32>)>,
) -> Result<(Vec<Blob>, usize, f64)> {
    label_strips_within(
        frame,
        options,
        strip,
        &Budget::unlimited(),
        "host raster",
        Bars::Hidden,
        read,
    )
}

/// [`label_strips`], checking after every strip that what the labeller holds stays within
/// `budget` and that fewer than [`crate::core::memory::MAX_PATCHES`] patches are certain
/// ([`Budget::check_labelling`]); `what` names the raster in the refusal; `bars`: whether
/// the rows labelled are shown as a bar (the command's printer's choice).
pub fn label_strips_within(
    frame: &Frame,
    options: LabelOptions,
    strip: usize,
    budget: &Budget,
    what: &str,
    bars: Bars,
    mut read: impl FnMut(usize, usize) -> Result<(Vec<f32>, Vec<u32>)>,
) -> Result<(Vec<Blob>, usize, f64)> {
    let (w, h) = (frame.width, frame.height);
    let cell_ha = frame.cell_area_ha();
    let mut labeller = Labeller::new(w, options.rules(cell_ha));
    // Every component has a cell, so closed components are kept patches unless slivers go.
    let closed_are_kept = options.min_patch_ha <= cell_ha;
    let strip = strip.max(1);
    let mut row0 = 0;
    let bar = bars.bar("labelling host cells", h as u64, "rows");
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
        let mut held = labeller.held();
        if !closed_are_kept {
            held.closed = 0;
        }
        budget.check_labelling(what, held, w, h)?;
    }
    let max = labeller.max_value();
    let mut blobs = labeller.finish();
    let before = blobs.len();
    blobs.retain(|b| b.cells as f64 * cell_ha >= options.min_patch_ha);
    let dropped = before - blobs.len();
    Ok((blobs, dropped, max))
}

/// [`label_strips`] over a grid in memory and its parcel index (one per cell), `strip` rows.
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

/// The polygons of a component's outline: its runs (row-major) joined where they share an
/// edge, as the union in [`outline`] joins them (runs touching only at a corner stay apart).
pub fn outline_pieces(runs: &[Run]) -> usize {
    fn find(parent: &mut [usize], mut i: usize) -> usize {
        while parent[i] != i {
            parent[i] = parent[parent[i]];
            i = parent[i];
        }
        i
    }
    let mut parent: Vec<usize> = (0..runs.len()).collect();
    let mut pieces = runs.len();
    // The previous row's runs and this row's, as index ranges into `runs`.
    let (mut previous, mut start) = (0..0, 0);
    while start < runs.len() {
        let row = runs[start].row;
        let end = start + runs[start..].partition_point(|r| r.row == row);
        if previous.end > previous.start && runs[previous.start].row + 1 == row {
            let mut p = previous.start;
            for k in start..end {
                // Previous runs that end before this one starts can touch no later run.
                while p < previous.end && runs[p].c1 <= runs[k].c0 {
                    p += 1;
                }
                let mut q = p;
                while q < previous.end && runs[q].c0 < runs[k].c1 {
                    let (a, b) = (find(&mut parent, q), find(&mut parent, k));
                    if a != b {
                        parent[a.max(b)] = a.min(b);
                        pieces -= 1;
                    }
                    q += 1;
                }
            }
        }
        previous = start..end;
        start = end;
    }
    pieces
}

/// The memory cost of raster patches with these runs ([`RasterCost`]).
pub fn raster_cost<'a>(runs: impl IntoIterator<Item = &'a Vec<Run>>) -> RasterCost {
    let mut cost = RasterCost::default();
    for r in runs {
        cost.runs += r.len();
        cost.pieces += outline_pieces(r);
        cost.largest_runs = cost.largest_runs.max(r.len());
    }
    cost
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
/// at most [`crate::core::memory::STRIP_BYTES`] of values and parcel indices (4 + 4 bytes a cell).
pub fn strip_rows(raster: &gis::RasterFile) -> usize {
    Budget::strip_rows(raster.frame.width, 8, raster.block_rows)
}

/// Build patches from the loaded layers.
/// Raster patches are checked against `budget` while labelling and before their outlines are
/// drawn; `bars` says whether labelling shows a bar (the command's printer's choice).
pub fn build(layers: &Layers, host: &HostSection, budget: &Budget, bars: Bars) -> Result<Patches> {
    let parcel_index = crate::input::parcel_index::ParcelIndex::new(&layers.parcels);
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
    let mut class_note = None;
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
            let what = format!("host raster `{}`", raster.path.display());
            let (components, dropped, max) = label_strips_within(
                frame,
                options,
                strip_rows(raster),
                budget,
                &what,
                bars,
                |row0, rows| {
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
                },
            )?;
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
            // Before any outline is drawn: outlines cost memory by the run and the polygon.
            budget.check_patches(
                components.len(),
                raster_cost(components.iter().map(|c| &c.runs)),
                host.suitability.is_some(),
            )?;
            let cell_ha = frame.cell_area_ha();
            let width = components.len().to_string().len().max(4);
            // With one raster per size class, those split each patch's stems.
            let runs_of: Vec<&[Run]> = components.iter().map(|c| c.runs.as_slice()).collect();
            let by_class = class_rasters::sums(&layers.class_rasters, &runs_of)?;
            for (k, c) in components.iter().enumerate() {
                let by_class: Option<Vec<f64>> =
                    (by_class.get(k)).map(|v| v.iter().map(|d| d * cell_ha).collect());
                let stems = by_class
                    .as_ref()
                    .map_or(c.sum * cell_ha, |v| v.iter().sum());
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
                    by_class,
                });
            }
            if !by_class.is_empty() {
                let host_total: f64 = components.iter().map(|c| c.sum * cell_ha).sum();
                let class_total: f64 = items.iter().map(|p: &Patch| p.stems).sum();
                if (class_total - host_total).abs() > 0.01 * host_total.max(1.0) {
                    class_note = Some(format!(
                        "the class rasters hold {class_total:.0} stems inside the patches, the host raster {host_total:.0}: the stems and their size classes come from the class rasters, the outlines from the host raster"
                    ));
                }
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
            // Fields counting stems by size class, where the layer has them.
            let class_fields: Vec<(usize, String)> = layers
                .size_classes
                .iter()
                .enumerate()
                .filter_map(|(k, id)| layer.field(id).map(|f| (k, f.to_string())))
                .collect();
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
                // No stems field (every class has one): the stems are the classes' sum.
                let has_stems_field = layer.field(&stems_field).is_some();
                let stems = f.fields.get(&stems_field).and_then(|v| v.as_number());
                let mut stems = match stems {
                    Some(s) if s.is_finite() && s >= 0.0 => s,
                    None if !has_stems_field => f64::NAN,
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
                let mut by_class = None;
                if !class_fields.is_empty() {
                    let mut counts = vec![0.0; layers.size_classes.len()];
                    let mut any = false;
                    for (k, field) in &class_fields {
                        let Some(v) = f.fields.get(field) else {
                            continue;
                        };
                        if v.as_text().is_empty() {
                            continue;
                        }
                        match v.as_number() {
                            Some(n) if n.is_finite() && n >= 0.0 => {
                                counts[*k] = n;
                                any = true;
                            }
                            _ => {
                                return Err(Error::input_with_hint(
                                    format!(
                                        "{at}, field `{field}`: stems must be a number 0 or more, got `{}`",
                                        v.as_text()
                                    ),
                                    "fix the value in the host layer",
                                ));
                            }
                        }
                    }
                    if any {
                        let sum: f64 = counts.iter().sum();
                        if stems.is_nan() {
                            stems = sum;
                        } else if (sum - stems).abs() > 0.5 {
                            return Err(Error::input_with_hint(
                                format!(
                                    "{at}: the stems by size class sum to {sum}, but field `{stems_field}` is {stems}"
                                ),
                                "fix the counts so they add up to the stems field",
                            ));
                        }
                        by_class = Some(counts);
                    }
                }
                if stems.is_nan() {
                    return Err(Error::input_with_hint(
                        format!("{at}: no stems in any size-class field"),
                        "give the stand's stems by size class (0 where a class is absent)",
                    ));
                }
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
                    by_class,
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
                if let Some(p) = &s.parcel {
                    site.parcel = p.clone();
                }
                if let Some(c) = &s.contact {
                    site.contact = c.clone();
                }
                items.push(Patch {
                    id: PatchId(items.len() as u32),
                    label: s.id.clone(),
                    x: s.x,
                    y: s.y,
                    stems: s.stems,
                    area_ha: s.area_ha,
                    outline: s.outline.clone(),
                    site,
                    pressure_override: s.pressure,
                    suitability: s.suitability,
                    by_class: s.by_class.clone(),
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
        notes: layers.notes.iter().cloned().chain(class_note).collect(),
        crs_conversion: layers.crs_conversion.clone(),
        input_linear_units: layers.input_linear_units.clone(),
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
/// outside the working CRS's domain (x = 1e300, a raster off the globe) is refused, by name.
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
