//! The `orders` report: from a plan folder's crew-day schedule to the files a crew and a manager
//! read — orders.csv ([`csv`]), orders.geojson and orders.gpkg ([`gpkg`]), the printable
//! report.html ([`html`], with its SVG maps in [`svg`]), cautions.txt and orders.json.
//!
//! Takes the [`Schedule`] built in `field::orders` and the plan folder it came from; writes
//! into a [`Staging`] folder the command commits.
//!
//! # Units
//! Coordinates in the plan's working CRS (metres), lon/lat in WGS 84; hours as decimal hours;
//! money through [`crate::report::format`].

mod crewday;
mod csv;
mod explore;
mod gpkg;
mod html;
mod labels;
mod styles;
mod svg;

use std::collections::{BTreeMap, HashMap};

use geo::{Geometry, LineString};
use serde::Serialize;

use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::field::context::Context;
use crate::field::contract::{self, PlanFolder};
use crate::field::orders::{CrewDay, Options, Schedule};
use crate::field::parts::{self, Strip};
use crate::field::travel::TravelModel;
use crate::input::gis::{self, Crs};
use crate::input::roads::FieldSource;
use crate::report::format::DistanceUnit;
use crate::report::output::Staging;

/// Colour-blind-safe colours for methods, in catalogue order (Okabe & Ito 2008 palette).
const METHOD_COLOURS: [&str; 6] = [
    "#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9",
];
const UNTREATED: &str = "#c8c8c8";
const NOT_ELIGIBLE: &str = "#ffffff";

#[derive(Serialize)]
pub struct MissingJson {
    pub window: String,
    pub methods: Vec<String>,
    pub crew_days: usize,
}

/// The road layer a run was routed on, as read.
#[derive(Serialize)]
pub struct RoadsJson {
    pub path: String,
    pub layer: String,
    pub driver: String,
    pub source_crs: String,
    /// Where the class, one-way and speed came from: `field NAME`, `other_tags KEY` or `none`.
    pub class_field: String,
    pub oneway_field: String,
    pub speed_field: String,
    /// One speed for every drivable road (`--road-speed-kmh`), or null for the class table.
    pub road_speed_kmh: Option<f64>,
    pub road_km: f64,
    pub pieces: usize,
    pub graph_nodes: usize,
    pub arcs: usize,
    pub walk_kmh: f64,
    pub max_walk_m: f64,
}

#[derive(Serialize)]
pub struct UnreachedJson {
    pub patch_id: String,
    pub reason: String,
}

#[derive(Serialize)]
pub struct FarJson {
    pub patch_id: String,
    pub walk_m: f64,
}

#[derive(Serialize)]
pub struct OrdersJson {
    pub plan: String,
    pub crs: String,
    pub depot: [f64; 2],
    pub depot_is_default: bool,
    pub crews: usize,
    pub day_hours: f64,
    /// `road network` or `straight line`, and how travel was found in words.
    pub travel_model: String,
    pub travel: String,
    /// Straight-line travel only (null with a road layer).
    pub speed_kmh: Option<f64>,
    pub detour_factor: Option<f64>,
    pub roads: Option<RoadsJson>,
    pub workdays: String,
    pub start_date: String,
    pub first_date: Option<String>,
    pub last_date: Option<String>,
    pub treated_patches: usize,
    pub split_patches: usize,
    pub crew_days: usize,
    pub scheduled_crew_days: usize,
    pub missing_crew_days: usize,
    pub missing: Vec<MissingJson>,
    pub travel_hours: f64,
    pub travel_km: f64,
    pub work_hours: f64,
    /// Treated patches no road from the depot reaches: not scheduled.
    pub unreachable: Vec<UnreachedJson>,
    /// The depot and stands farther from a road than the walk limit (scheduled, walk counted).
    pub far_from_road: Vec<FarJson>,
    pub report_overview_pages: usize,
    /// Printed sheets of the crew-days: one each, plus a continuation sheet for a day whose
    /// page would not fit (its work by method and cautions go on the next sheet).
    pub report_crew_day_pages: usize,
}

/// What the report is drawn from: the plan folder, its CRS, the schedule and the patch outlines.
pub struct Orders<'a> {
    pub folder: &'a PlanFolder,
    pub crs: Crs,
    pub schedule: Schedule,
    pub options: Options,
    pub travel: &'a TravelModel,
    pub outlines: HashMap<String, Geometry<f64>>,
    /// Parcels, water, sensitive sites and corridors the plan used, drawn under the overview.
    pub context: Context,
    /// The strip of a split patch each part works, by (patch id, part); none for a patch
    /// without an outline (given as a point).
    pub strips: HashMap<(String, usize), Strip>,
    /// Distances people read: feet and miles when the inventory's CRS was in feet.
    pub units: DistanceUnit,
    colours: HashMap<String, &'static str>,
}

impl<'a> Orders<'a> {
    pub fn new(
        folder: &'a PlanFolder,
        crs: Crs,
        schedule: Schedule,
        options: Options,
        travel: &'a TravelModel,
        outlines: HashMap<String, Geometry<f64>>,
    ) -> Orders<'a> {
        let colours = folder
            .catalogue
            .methods
            .iter()
            .enumerate()
            .map(|(k, m)| (m.id.clone(), METHOD_COLOURS[k % METHOD_COLOURS.len()]))
            .collect();
        let strips = strips_of(&schedule, &outlines);
        Orders {
            folder,
            crs,
            schedule,
            options,
            travel,
            outlines,
            context: Context::default(),
            strips,
            units: DistanceUnit::of_input(folder.summary.input_linear_units.as_deref()),
            colours,
        }
    }
}

/// Each split patch cut into one strip per part, in proportion to the part's work hours, the
/// first part at the end nearest the depot.
fn strips_of(
    schedule: &Schedule,
    outlines: &HashMap<String, Geometry<f64>>,
) -> HashMap<(String, usize), Strip> {
    let mut work: BTreeMap<&str, Vec<(usize, f64)>> = BTreeMap::new();
    for s in schedule.days.iter().flat_map(|d| &d.stops) {
        if s.parts > 1 {
            work.entry(&s.patch_id)
                .or_default()
                .push((s.part, s.work_hours));
        }
    }
    let mut out = HashMap::new();
    for (id, mut parts) in work {
        parts.sort_by_key(|p| p.0);
        let shares: Vec<f64> = parts.iter().map(|p| p.1).collect();
        let Some(strips) = outlines
            .get(id)
            .and_then(|g| parts::cut(g, &shares, schedule.depot))
        else {
            continue;
        };
        for ((part, _), strip) in parts.iter().zip(strips) {
            out.insert((id.to_string(), *part), strip);
        }
    }
    out
}

/// Writes orders.csv, orders.geojson, orders.gpkg, report.html, cautions.txt and orders.json into
/// `staging` (the caller commits it) and gives orders.json's content. `curve_svg` is a budget
/// curve to include as a page of its own.
pub fn write(ctx: &Orders, staging: &Staging, curve_svg: Option<&str>) -> Result<OrdersJson> {
    staging.write("orders.csv", csv::orders_csv(ctx)?)?;
    gpkg::write_maps(ctx, staging)?;
    // Overview, schedule at a glance, cautions, and the budget curve when there is one.
    let overview_pages = 3 + usize::from(curve_svg.is_some());
    let (report, day_sheets) = html::report_html(ctx, curve_svg)?;
    staging.write("report.html", report)?;
    staging.write("cautions.txt", cautions::standing_text())?;
    let s = &ctx.schedule;
    let o = &ctx.options;
    let summary = OrdersJson {
        plan: ctx.folder.dir.display().to_string(),
        crs: ctx.crs.name.clone(),
        depot: [s.depot.0, s.depot.1],
        depot_is_default: s.depot_is_default,
        crews: o.crews,
        day_hours: o.day_hours,
        travel_model: s.travel_model.to_string(),
        travel: s.travel_text.clone(),
        speed_kmh: match ctx.travel {
            TravelModel::StraightLine { speed_kmh, .. } => Some(*speed_kmh),
            TravelModel::Roads(_) => None,
        },
        detour_factor: match ctx.travel {
            TravelModel::StraightLine { detour, .. } => Some(*detour),
            TravelModel::Roads(_) => None,
        },
        roads: roads_json(ctx.travel),
        workdays: o.workdays.to_string(),
        start_date: o.start.to_string(),
        first_date: s
            .scheduled()
            .filter_map(|d| d.date)
            .min()
            .map(|d| d.to_string()),
        last_date: s.last_date().map(|d| d.to_string()),
        treated_patches: ctx.folder.planned.len(),
        split_patches: s.split_patches,
        crew_days: s.days.len(),
        scheduled_crew_days: s.scheduled().count(),
        missing_crew_days: s.missing_days(),
        missing: s
            .missing
            .iter()
            .map(|m| MissingJson {
                window: contract::window(&m.months),
                methods: m.methods.clone(),
                crew_days: m.crew_days,
            })
            .collect(),
        travel_hours: round2(s.days.iter().map(|d| d.travel_hours()).sum()),
        travel_km: round2(s.days.iter().map(|d| d.travel_km()).sum()),
        unreachable: s
            .unreached
            .iter()
            .map(|u| UnreachedJson {
                patch_id: u.patch_id.clone(),
                reason: u.reason.clone(),
            })
            .collect(),
        far_from_road: s
            .far_from_road
            .iter()
            .map(|f| FarJson {
                patch_id: f.patch_id.clone(),
                walk_m: round2(f.walk_m),
            })
            .collect(),
        work_hours: round2(s.days.iter().map(|d| d.work_hours()).sum()),
        report_overview_pages: overview_pages,
        report_crew_day_pages: day_sheets,
    };
    let json = serde_json::to_string_pretty(&summary)
        .map_err(|e| Error::Internal(format!("orders.json: {e}")))?;
    staging.write("orders.json", json + "\n")?;
    Ok(summary)
}

fn roads_json(travel: &TravelModel) -> Option<RoadsJson> {
    let TravelModel::Roads(r) = travel else {
        return None;
    };
    let source = |f: &FieldSource| match f {
        FieldSource::Column(c) => format!("field {c}"),
        FieldSource::OtherTags(k) => format!("other_tags {k}"),
        FieldSource::Absent => "none".to_string(),
    };
    Some(RoadsJson {
        path: r.settings.path.display().to_string(),
        layer: r.layer_name.clone(),
        driver: r.driver.clone(),
        source_crs: r.source_crs.clone(),
        class_field: source(&r.class_source),
        oneway_field: source(&r.oneway_source),
        speed_field: source(&r.speed_source),
        road_speed_kmh: r.settings.speed_kmh,
        road_km: round2(r.network.stats.road_km),
        pieces: r.network.pieces.len(),
        graph_nodes: r.network.stats.graph_nodes,
        arcs: r.network.stats.arcs,
        walk_kmh: r.walk_kmh,
        max_walk_m: r.max_walk_m,
    })
}

/// Two decimals, and never "-0" (an empty sum of f64 is -0.0).
fn round2(v: f64) -> f64 {
    (v * 100.0).round() / 100.0 + 0.0
}

fn f2(v: f64) -> String {
    crate::report::format::fixed(v, 2)
}

/// The stops of the schedule with their lon/lat, day by day.
fn stop_lonlats(ctx: &Orders) -> Result<Vec<Vec<(f64, f64)>>> {
    let to = gis::ToLonLat::new(&ctx.crs)?;
    ctx.schedule
        .days
        .iter()
        .map(|d| to.points(&d.stops.iter().map(|s| (s.x, s.y)).collect::<Vec<_>>()))
        .collect()
}

fn day_label(d: &CrewDay) -> String {
    match (d.crew, d.date) {
        (Some(c), Some(date)) => {
            format!("Crew {c}, day {} - {} {date}", d.day, date.weekday_name())
        }
        _ => format!("Unscheduled crew-day {} (outside the season window)", d.day),
    }
}

/// The day's route: along the roads with a road layer, straight lines without.
fn route_line(d: &CrewDay) -> LineString<f64> {
    LineString::from(d.route.clone())
}
