//! `hostcut orders`: crew-day work orders from a plan folder — orders.csv, orders.geojson,
//! orders.gpkg (patches, stops, routes), orders.json and a self-contained printable report.html.

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::fmt::Write as _;

use geo::{Geometry, LineString, MultiPolygon, Point};
use serde::Serialize;

use crate::app::cli::OrdersArgs;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::field::calendar::{Date, Workdays};
use crate::field::contract::{self, PlanFolder};
use crate::field::orders::{self, CrewDay, Options, Schedule};
use crate::input::gis::{self, Crs, LayerData, Property};
use crate::report::chart::{escape, thousands};
use crate::report::map::{self, Frame};
use crate::report::output::Staging;

/// Colour-blind-safe colours for methods, in catalogue order (Okabe & Ito 2008 palette).
const METHOD_COLOURS: [&str; 6] = [
    "#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9",
];
const UNTREATED: &str = "#c8c8c8";
const NOT_ELIGIBLE: &str = "#ffffff";

fn pair(text: &str, flag: &str) -> Result<(f64, f64)> {
    let bad = || {
        Error::input_with_hint(
            format!("`{flag} {text}` is not two numbers"),
            format!("write it as `{flag} 503900,4472300` (no spaces)"),
        )
    };
    let (a, b) = text.split_once(',').ok_or_else(bad)?;
    let a: f64 = a.trim().parse().map_err(|_| bad())?;
    let b: f64 = b.trim().parse().map_err(|_| bad())?;
    if a.is_finite() && b.is_finite() {
        Ok((a, b))
    } else {
        Err(bad())
    }
}

fn today() -> Date {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    Date::from_day_number((secs / 86_400) as i64)
}

/// The default first working day: today if today is inside a window of a method in the plan,
/// else the first of the next month that opens one.
fn default_start(folder: &PlanFolder, today: Date) -> Date {
    let months: BTreeSet<u8> = folder
        .planned
        .iter()
        .filter_map(|p| folder.method(&p.method))
        .flat_map(|m| m.months.iter().copied())
        .collect();
    if months.is_empty() || months.contains(&today.month) {
        return today;
    }
    for k in 1..=12 {
        let m0 = (today.month as u32 - 1 + k) % 12 + 1;
        let year = today.year + ((today.month as u32 - 1 + k) / 12) as i32;
        if months.contains(&(m0 as u8)) {
            return Date::new(year, m0 as u8, 1).expect("valid first of month");
        }
    }
    today
}

#[derive(Serialize)]
struct MissingJson {
    window: String,
    methods: Vec<String>,
    crew_days: usize,
}

#[derive(Serialize)]
struct OrdersJson {
    plan: String,
    crs: String,
    depot: [f64; 2],
    depot_is_default: bool,
    crews: usize,
    day_hours: f64,
    speed_kmh: f64,
    detour_factor: f64,
    workdays: String,
    start_date: String,
    first_date: Option<String>,
    last_date: Option<String>,
    treated_patches: usize,
    split_patches: usize,
    crew_days: usize,
    scheduled_crew_days: usize,
    missing_crew_days: usize,
    missing: Vec<MissingJson>,
    travel_hours: f64,
    work_hours: f64,
    report_overview_pages: usize,
    report_crew_day_pages: usize,
}

struct Ctx<'a> {
    folder: &'a PlanFolder,
    crs: Crs,
    schedule: Schedule,
    options: Options,
    outlines: HashMap<String, Geometry<f64>>,
    colours: HashMap<String, &'static str>,
}

pub fn run(args: &OrdersArgs, printer: Printer) -> Result<String> {
    let folder = PlanFolder::read(&args.plan_dir)?;
    let crs = Crs::parse(&folder.crs, "the plan's CRS (summary.json)")?;
    let depot = match (&args.depot, &args.depot_lonlat) {
        (Some(d), _) => Some(pair(d, "--depot")?),
        (None, Some(d)) => {
            let (lon, lat) = pair(d, "--depot-lonlat")?;
            if !(-180.0..=180.0).contains(&lon) || !(-90.0..=90.0).contains(&lat) {
                return Err(Error::input(format!(
                    "`--depot-lonlat {d}` is not a longitude,latitude (longitude first)"
                )));
            }
            let both = gis::transform_points("EPSG:4326", &crs.wkt, &[(lon, lat), (lat, lon)])
                .unwrap_or_default();
            // Latitude first is the usual slip: refuse it when the swapped pair lands by the work.
            if let (Some(centre), [given, swapped]) = (orders::default_depot(&folder), &both[..]) {
                let far = |p: &(f64, f64)| (p.0 - centre.0).hypot(p.1 - centre.1);
                if far(given) > 50_000.0 && far(swapped) < far(given) / 10.0 {
                    return Err(Error::input_with_hint(
                        format!(
                            "`--depot-lonlat {d}` lands far from the work, but reversed it lands beside it"
                        ),
                        "give longitude first, then latitude",
                    ));
                }
            }
            Some(gis::transform_points("EPSG:4326", &crs.wkt, &[(lon, lat)])?[0])
        }
        (None, None) => None,
    };
    // A depot is a yard, not a survey mark: to the centimetre, so the same place given as x,y
    // or as lon/lat (a round trip through PROJ moves it by micrometres) gives the same orders.
    let depot = depot.map(|(x, y)| ((x * 100.0).round() / 100.0, (y * 100.0).round() / 100.0));
    let workdays = Workdays::parse(&args.workdays).ok_or_else(|| {
        Error::input_with_hint(
            format!("`--workdays {}` names no days of the week", args.workdays),
            "write e.g. `mon-fri`, `mon-sat` or `mon,wed,fri`",
        )
    })?;
    let start = match &args.start_date {
        Some(s) => Date::parse(s).ok_or_else(|| {
            Error::input(format!("`--start-date {s}` is not a date like 2027-07-05"))
        })?,
        None => default_start(&folder, today()),
    };
    if !(args.day_hours > 0.0 && args.day_hours <= 24.0) {
        return Err(Error::input("`--day-hours` must be above 0 and at most 24"));
    }
    if !(args.speed_kmh > 0.0 && args.speed_kmh.is_finite()) {
        return Err(Error::input("`--speed-kmh` must be above 0"));
    }
    if !(args.detour_factor >= 1.0 && args.detour_factor.is_finite()) {
        return Err(Error::input(
            "`--detour-factor` must be at least 1 (road distance is never shorter than the straight line)",
        ));
    }
    if args.crews == 0 || args.max_stops == 0 {
        return Err(Error::input(
            "`--crews` and `--max-stops` must be at least 1",
        ));
    }
    let curve_svg = match &args.curve {
        // A curve written into the plan folder itself is used without asking.
        None => std::fs::read_to_string(args.plan_dir.join("curve.svg")).ok(),
        Some(dir) => {
            let path = dir.join("curve.svg");
            let text = std::fs::read_to_string(&path).map_err(|_| {
                Error::input_with_hint(
                    format!("`{}` has no curve.svg", dir.display()),
                    "give the `--out` folder of a `hostcut curve` run",
                )
            })?;
            Some(text)
        }
    };
    let options = Options {
        depot,
        crews: args.crews,
        day_hours: args.day_hours,
        speed_kmh: args.speed_kmh,
        detour: args.detour_factor,
        start,
        workdays,
        max_stops: args.max_stops,
    };
    let schedule = orders::schedule(&folder, &options)?;

    let plan_map = args.plan_dir.join("plan.geojson");
    let mut outlines = HashMap::new();
    if plan_map.is_file() {
        let layer = gis::read_vector(&plan_map, None, &crs, None, "the plan's map", "--plan")?;
        for f in layer.features {
            if let Some(id) = f.fields.get("patch_id") {
                outlines.insert(id.as_text(), f.geometry);
            }
        }
    }
    let colours = folder
        .catalogue
        .methods
        .iter()
        .enumerate()
        .map(|(k, m)| (m.id.clone(), METHOD_COLOURS[k % METHOD_COLOURS.len()]))
        .collect();
    let ctx = Ctx {
        folder: &folder,
        crs,
        schedule,
        options,
        outlines,
        colours,
    };

    let out = std::path::absolute(&args.out).map_err(|e| Error::io("resolve", &args.out, e))?;
    let staging = Staging::new(&out, args.force, "orders")?;
    staging.write("orders.csv", orders_csv(&ctx)?)?;
    write_maps(&ctx, &staging)?;
    // Overview, schedule at a glance, cautions, and the budget curve when there is one.
    let overview_pages = 3 + usize::from(curve_svg.is_some());
    let report = report_html(&ctx, curve_svg.as_deref())?;
    staging.write("report.html", report)?;
    staging.write("cautions.txt", cautions::standing_text())?;
    let s = &ctx.schedule;
    let summary = OrdersJson {
        plan: args.plan_dir.display().to_string(),
        crs: ctx.crs.name.clone(),
        depot: [s.depot.0, s.depot.1],
        depot_is_default: s.depot_is_default,
        crews: args.crews,
        day_hours: args.day_hours,
        speed_kmh: args.speed_kmh,
        detour_factor: args.detour_factor,
        workdays: workdays.to_string(),
        start_date: start.to_string(),
        first_date: s
            .scheduled()
            .filter_map(|d| d.date)
            .min()
            .map(|d| d.to_string()),
        last_date: s.last_date().map(|d| d.to_string()),
        treated_patches: folder.planned.len(),
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
        work_hours: round2(s.days.iter().map(|d| d.work_hours()).sum()),
        report_overview_pages: overview_pages,
        report_crew_day_pages: s.days.len(),
    };
    let json = serde_json::to_string_pretty(&summary)
        .map_err(|e| Error::Internal(format!("orders.json: {e}")))?;
    staging.write("orders.json", json + "\n")?;
    staging.commit()?;

    let mut text = String::new();
    if folder.planned.is_empty() {
        let _ = writeln!(
            text,
            "the plan treats no patches, so there is nothing to order (raise the plan's budget or check its eligibility rules)"
        );
    }
    if !printer.is_quiet() {
        let _ = writeln!(
            text,
            "hostcut orders: {} treated patches -> {} crew-days for {} crew{} ({} workdays from {start})",
            folder.planned.len(),
            s.days.len(),
            args.crews,
            if args.crews == 1 { "" } else { "s" },
            workdays
        );
        if let (Some(a), Some(b)) = (&summary.first_date, &summary.last_date) {
            let _ = writeln!(text, "  work from {a} to {b}");
        }
        let _ = writeln!(
            text,
            "  {:.1} h of work and {:.1} h of travel (straight line x {} at {} km/h, an assumption; depot {})",
            summary.work_hours,
            summary.travel_hours,
            args.detour_factor,
            args.speed_kmh,
            if s.depot_is_default {
                "at the centroid of the treated patches".to_string()
            } else {
                format!("{:.0},{:.0}", s.depot.0, s.depot.1)
            }
        );
        if s.split_patches > 0 {
            let _ = writeln!(
                text,
                "  {} patch{} too big for one day {} split across days",
                s.split_patches,
                if s.split_patches == 1 { "" } else { "es" },
                if s.split_patches == 1 { "is" } else { "are" }
            );
        }
    }
    for m in &s.missing {
        let _ = writeln!(
            text,
            "warning: the crews cannot finish {} inside its window ({}): {} crew-day{} missing; add crews or workdays, start earlier, or carry the work to next season",
            m.methods.join(" and "),
            contract::window(&m.months),
            m.crew_days,
            if m.crew_days == 1 { " is" } else { "s are" }
        );
    }
    if !printer.is_quiet() {
        let _ = writeln!(
            text,
            "outputs in {}: orders.csv, orders.geojson, orders.gpkg, orders.json, report.html, cautions.txt",
            out.display()
        );
    }
    text.push('\n');
    text.push_str(&cautions::standing_text());
    Ok(text)
}

/// Two decimals, and never "-0" (an empty sum of f64 is -0.0).
fn round2(v: f64) -> f64 {
    (v * 100.0).round() / 100.0 + 0.0
}

fn f2(v: f64) -> String {
    format!("{v:.2}")
}

/// The stops of the schedule with their lon/lat, day by day.
fn stop_lonlats(ctx: &Ctx) -> Result<Vec<Vec<(f64, f64)>>> {
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

fn orders_csv(ctx: &Ctx) -> Result<Vec<u8>> {
    let lonlats = stop_lonlats(ctx)?;
    let mut w = crate::core::csv_cells::Writer::new();
    let header = [
        "crew",
        "day",
        "date",
        "weekday",
        "stop",
        "patch_id",
        "part",
        "method",
        "stems",
        "est_hours",
        "travel_hours",
        "return_hours",
        "x",
        "y",
        "lon",
        "lat",
        "parcel",
        "contact",
        "access",
        "herbicide",
        "cautions",
        "site_notes",
        "fell_after",
        "follow_up",
        "instructions",
    ];
    w.row(header)?;
    for (d, ll) in ctx.schedule.days.iter().zip(&lonlats) {
        let n = d.stops.len();
        for (k, (s, (lon, lat))) in d.stops.iter().zip(ll).enumerate() {
            let p = &ctx.folder.planned[s.row];
            let ins = orders::instructions(ctx.folder, s, d.date);
            w.row([
                d.crew.map(|c| c.to_string()).unwrap_or_default(),
                d.day.to_string(),
                d.date.map(|x| x.to_string()).unwrap_or_default(),
                d.date
                    .map(|x| x.weekday_name().to_string())
                    .unwrap_or_default(),
                (k + 1).to_string(),
                s.patch_id.clone(),
                format!("{}/{}", s.part, s.parts),
                s.method.clone(),
                format!("{:.1}", s.stems),
                f2(s.work_hours),
                f2(s.travel_hours),
                if k + 1 == n {
                    f2(d.return_hours)
                } else {
                    f2(0.0)
                },
                f2(s.x),
                f2(s.y),
                format!("{lon:.7}"),
                format!("{lat:.7}"),
                p.parcel.clone(),
                p.contact.clone(),
                p.access.clone(),
                p.herbicide.clone(),
                p.cautions.clone(),
                p.site_notes.clone(),
                ins.fell_after.map(|x| x.to_string()).unwrap_or_default(),
                ins.follow_up.unwrap_or_default(),
                ins.text,
            ])?;
        }
    }
    w.into_bytes()
}

fn route_line(ctx: &Ctx, d: &CrewDay) -> LineString<f64> {
    let depot = ctx.schedule.depot;
    let mut pts = vec![depot];
    pts.extend(d.stops.iter().map(|s| (s.x, s.y)));
    pts.push(depot);
    LineString::from(pts)
}

fn write_maps(ctx: &Ctx, staging: &Staging) -> Result<()> {
    let text = |s: &str| Property::Text(s.to_string());
    let num = Property::Number;
    let int = |v: usize| Property::Integer(v as i64);
    let date_of = |d: &CrewDay| d.date.map(|x| x.to_string()).unwrap_or_default();
    // Stops and routes, shared by the GeoJSON and the GeoPackage.
    let stop_fields = [
        ("crew", Property::Integer(0)),
        ("day", Property::Integer(0)),
        ("date", Property::Text(String::new())),
        ("stop", Property::Integer(0)),
        ("patch_id", Property::Text(String::new())),
        ("part", Property::Text(String::new())),
        ("method", Property::Text(String::new())),
        ("stems", Property::Number(0.0)),
        ("est_hours", Property::Number(0.0)),
        ("travel_hours", Property::Number(0.0)),
        ("cautions", Property::Text(String::new())),
    ];
    let route_fields = [
        ("crew", Property::Integer(0)),
        ("day", Property::Integer(0)),
        ("date", Property::Text(String::new())),
        ("stops", Property::Integer(0)),
        ("travel_hours", Property::Number(0.0)),
        ("work_hours", Property::Number(0.0)),
    ];
    let mut stops = Vec::new();
    let mut routes = Vec::new();
    for d in &ctx.schedule.days {
        let crew = d.crew.unwrap_or(0);
        for (k, s) in d.stops.iter().enumerate() {
            stops.push((
                Geometry::Point(Point::new(s.x, s.y)),
                vec![
                    int(crew),
                    int(d.day),
                    text(&date_of(d)),
                    int(k + 1),
                    text(&s.patch_id),
                    text(&format!("{}/{}", s.part, s.parts)),
                    text(&s.method),
                    num(s.stems),
                    num(round2(s.work_hours)),
                    num(round2(s.travel_hours)),
                    text(&ctx.folder.planned[s.row].cautions),
                ],
            ));
        }
        routes.push((
            Geometry::LineString(route_line(ctx, d)),
            vec![
                int(crew),
                int(d.day),
                text(&date_of(d)),
                int(d.stops.len()),
                num(round2(d.travel_hours())),
                num(round2(d.work_hours())),
            ],
        ));
    }

    // GeoJSON: one layer, a `kind` per feature (stop, route, depot).
    let mut gj_fields: Vec<(&str, Property)> = vec![("kind", Property::Text(String::new()))];
    gj_fields.extend(stop_fields.iter().cloned());
    gj_fields.push(("stops", Property::Integer(0)));
    gj_fields.push(("work_hours", Property::Number(0.0)));
    let blank = |n: usize| -> Vec<Property> {
        (0..n)
            .map(|k| match &gj_fields[k].1 {
                Property::Text(_) => Property::Text(String::new()),
                Property::Number(_) => Property::Number(f64::NAN),
                Property::Integer(_) => Property::Integer(0),
            })
            .collect()
    };
    let mut features = Vec::new();
    for (g, p) in &stops {
        let mut v = vec![text("stop")];
        v.extend(p.iter().cloned());
        v.push(Property::Integer(0));
        v.push(Property::Number(f64::NAN));
        features.push((g.clone(), v));
    }
    for (g, p) in &routes {
        let mut v = blank(gj_fields.len());
        v[0] = text("route");
        v[1] = p[0].clone();
        v[2] = p[1].clone();
        v[3] = p[2].clone();
        v[10] = p[4].clone();
        v[12] = p[3].clone();
        v[13] = p[5].clone();
        features.push((g.clone(), v));
    }
    let mut depot = blank(gj_fields.len());
    depot[0] = text("depot");
    features.push((
        Geometry::Point(Point::new(ctx.schedule.depot.0, ctx.schedule.depot.1)),
        depot,
    ));
    gis::write_geojson(
        &staging.path("orders.geojson"),
        &ctx.crs,
        &gj_fields,
        &features,
    )?;

    // GeoPackage: patches (every patch, by plan status), stops, routes.
    let mut first_visit: HashMap<&str, (usize, String)> = HashMap::new();
    for d in ctx.schedule.scheduled() {
        for s in &d.stops {
            first_visit
                .entry(s.patch_id.as_str())
                .or_insert((d.crew.unwrap_or(0), date_of(d)));
        }
    }
    let planned: HashMap<&str, (usize, &contract::PlannedPatch)> = ctx
        .folder
        .planned
        .iter()
        .map(|p| (p.patch_id.as_str(), (p.priority, p)))
        .collect();
    let patch_fields = [
        ("patch_id", Property::Text(String::new())),
        ("status", Property::Text(String::new())),
        ("method", Property::Text(String::new())),
        ("priority", Property::Integer(0)),
        ("stems", Property::Number(0.0)),
        ("crew", Property::Integer(0)),
        ("first_date", Property::Text(String::new())),
    ];
    // Outlines for raster and polygon plans; points (patches.csv x, y) for inventories.
    let polygons = ctx
        .outlines
        .values()
        .any(|g| matches!(g, Geometry::Polygon(_) | Geometry::MultiPolygon(_)));
    let mut patches = Vec::new();
    for rec in &ctx.folder.patches {
        let geometry = match ctx.outlines.get(&rec.patch_id) {
            Some(Geometry::Polygon(p)) if polygons => {
                Geometry::MultiPolygon(MultiPolygon(vec![p.clone()]))
            }
            Some(Geometry::MultiPolygon(m)) if polygons => Geometry::MultiPolygon(m.clone()),
            _ if polygons => continue,
            _ => Geometry::Point(Point::new(rec.x, rec.y)),
        };
        let (status, method, priority) = match planned.get(rec.patch_id.as_str()) {
            Some((prio, p)) => ("treat", p.method.clone(), *prio),
            None if rec.eligible == "no" => ("not eligible", String::new(), 0),
            None => ("untreated", String::new(), 0),
        };
        let (crew, first) = first_visit
            .get(rec.patch_id.as_str())
            .cloned()
            .unwrap_or((0, String::new()));
        patches.push((
            geometry,
            vec![
                text(&rec.patch_id),
                text(status),
                text(&method),
                int(priority),
                num(rec.stems),
                int(crew),
                text(&first),
            ],
        ));
    }
    use gdal::vector::OGRwkbGeometryType as T;
    gis::write_layers(
        &staging.path("orders.gpkg"),
        "GPKG",
        &ctx.crs,
        vec![
            LayerData {
                name: "patches",
                geometry: if polygons {
                    T::wkbMultiPolygon
                } else {
                    T::wkbPoint
                },
                fields: &patch_fields,
                features: patches,
            },
            LayerData {
                name: "stops",
                geometry: T::wkbPoint,
                fields: &stop_fields,
                features: stops,
            },
            LayerData {
                name: "routes",
                geometry: T::wkbLineString,
                fields: &route_fields,
                features: routes,
            },
        ],
    )
}

// ----- report.html -----

const CSS: &str = r#"
@page { size: Letter; margin: 12mm; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", Arial, Helvetica, sans-serif; font-size: 10pt; color: #111; margin: 0; }
.page { padding: 0; }
.page + .page { break-before: page; page-break-before: always; }
@media screen { .page { max-width: 8in; margin: 0 auto 24px auto; padding: 16px; border-bottom: 2px solid #ccc; } }
h1 { font-size: 16pt; margin: 0 0 6px 0; }
h2 { font-size: 13pt; margin: 0 0 6px 0; }
h3 { font-size: 10.5pt; margin: 8px 0 4px 0; }
p { margin: 3px 0; }
table { border-collapse: collapse; width: 100%; font-size: 8.5pt; }
th, td { border: 1px solid #999; padding: 2px 4px; text-align: left; vertical-align: top; }
th { background: #eee; }
td.n { text-align: right; white-space: nowrap; }
.warn { border: 2px solid #000; padding: 4px 6px; margin: 6px 0; font-weight: bold; }
.legend span.sw { display: inline-block; width: 12px; height: 12px; border: 1px solid #333; vertical-align: middle; margin: 0 4px 0 10px; }
.small { font-size: 8pt; }
.cautions p { margin: 2px 0; }
svg { display: block; }
.curve svg { max-width: 7.4in; height: auto; }
.flag { font-weight: bold; font-size: 10.5pt; margin: 1px 0 3px 0; padding: 1px 4px; border: 2px solid #000; white-space: normal; }
.flag.noherb { background: #000; color: #fff; }
.siterules { border: 3px solid #000; padding: 4px 8px; margin: 6px 0; font-size: 10pt; }
.siterules ul { margin: 2px 0 0 16px; padding: 0; }
.sign { margin-top: 8px; }
table.stops td { padding: 1px 3px; }
table.stops td.nw { white-space: nowrap; }
.day .cautions { columns: 2; column-gap: 14px; font-size: 7.5pt; }
.day h3 { margin: 5px 0 2px 0; }
.day ul { margin: 2px 0; padding-left: 16px; }
"#;

fn status_line(summary: &serde_json::Value) -> String {
    let status = summary["status"].as_str().unwrap_or("");
    let gap = summary["gap"].as_f64();
    match (status, gap) {
        ("optimal", _) => "proven optimal for this budget".into(),
        ("gap_limit", Some(g)) => format!(
            "the optimiser stopped at its requested gap: proven within {:.3}% of the least achievable risk",
            g * 100.0
        ),
        ("time_limit", Some(g)) => format!(
            "the optimiser hit its time limit: proven within {:.2}% of the least achievable risk",
            g * 100.0
        ),
        ("no_improving_move", Some(g)) => format!(
            "the optimiser's search found no improving move left: proven within {:.2}% of the least achievable risk",
            g * 100.0
        ),
        (s, _) => format!("optimiser status {s}"),
    }
}

fn money(code: &str, v: f64) -> String {
    let s = format!("{} {}", thousands(v.round()), code);
    if code == "USD" {
        format!("${}", thousands(v.round()))
    } else {
        s
    }
}

/// The overview map: every patch coloured by plan status, depot, legend, scale bar, north.
fn overview_map(ctx: &Ctx) -> String {
    let geoms: Vec<&Geometry<f64>> = ctx.outlines.values().collect();
    let mut points: Vec<(f64, f64)> = ctx.folder.patches.iter().map(|p| (p.x, p.y)).collect();
    points.push(ctx.schedule.depot);
    let Some(b) = map::bounds(&geoms, &points) else {
        return String::new();
    };
    let f = Frame::fit(b, 720.0, 520.0, 500.0);
    let mut svg = format!(
        r##"<svg xmlns="http://www.w3.org/2000/svg" width="{:.0}" height="{:.0}" viewBox="0 0 {:.0} {:.0}" role="img" aria-label="map of patches by plan status"><rect width="100%" height="100%" fill="#fafafa" stroke="#666"/>"##,
        f.width, f.height, f.width, f.height
    );
    let planned: HashMap<&str, &str> = ctx
        .folder
        .planned
        .iter()
        .map(|p| (p.patch_id.as_str(), p.method.as_str()))
        .collect();
    for rec in &ctx.folder.patches {
        let fill = match planned.get(rec.patch_id.as_str()) {
            Some(m) => ctx.colours.get(*m).copied().unwrap_or("#000"),
            None if rec.eligible == "no" => NOT_ELIGIBLE,
            None => UNTREATED,
        };
        match ctx.outlines.get(&rec.patch_id) {
            Some(g @ (Geometry::Polygon(_) | Geometry::MultiPolygon(_))) => {
                let _ = write!(
                    svg,
                    r##"<path d="{}" fill="{fill}" stroke="#333" stroke-width="0.6"><title>{}</title></path>"##,
                    f.path(g),
                    escape(&rec.patch_id)
                );
            }
            // Inventory stands are points: a circle sized by stems (area proportional).
            _ => {
                let (x, y) = f.px(rec.x, rec.y);
                let r = (rec.stems.max(0.0).sqrt() * 0.25).clamp(2.5, 9.0);
                let _ = write!(
                    svg,
                    r##"<circle cx="{x:.1}" cy="{y:.1}" r="{r:.1}" fill="{fill}" stroke="#333" stroke-width="0.6"><title>{}</title></circle>"##,
                    escape(&rec.patch_id)
                );
            }
        }
    }
    // Priority numbers beside the first ten treated patches.
    for p in ctx.folder.planned.iter().take(10) {
        let (x, y) = f.px(p.x, p.y);
        let _ = write!(
            svg,
            r##"<text x="{:.1}" y="{:.1}" font-size="9" font-weight="bold" stroke="#fff" stroke-width="2.5" paint-order="stroke">{}</text>"##,
            x + 4.0,
            y - 4.0,
            p.priority
        );
    }
    let (dx, dy) = f.px(ctx.schedule.depot.0, ctx.schedule.depot.1);
    let _ = write!(
        svg,
        r##"<rect x="{:.1}" y="{:.1}" width="9" height="9" fill="#000"><title>depot</title></rect>"##,
        dx - 4.5,
        dy - 4.5
    );
    svg.push_str(&f.scale_bar());
    svg.push_str(&f.north_arrow());
    svg.push_str("</svg>");
    svg
}

fn legend(ctx: &Ctx) -> String {
    let mut used: Vec<&str> = Vec::new();
    for m in &ctx.folder.catalogue.methods {
        if ctx.folder.planned.iter().any(|p| p.method == m.id) {
            used.push(&m.id);
        }
    }
    let mut s = String::from(r#"<p class="legend small">"#);
    for m in used {
        let _ = write!(
            s,
            r#"<span class="sw" style="background:{}"></span>treat: {}"#,
            ctx.colours[m],
            escape(m)
        );
    }
    let _ = write!(
        s,
        r#"<span class="sw" style="background:{UNTREATED}"></span>not treated this season<span class="sw" style="background:{NOT_ELIGIBLE}"></span>not eligible (access or herbicide rules)<span class="sw" style="background:#000"></span>depot; numbers = plan priority</p>"#
    );
    s
}

fn day_map(ctx: &Ctx, d: &CrewDay) -> String {
    let depot = ctx.schedule.depot;
    let geoms: Vec<&Geometry<f64>> = d
        .stops
        .iter()
        .filter_map(|s| ctx.outlines.get(&s.patch_id))
        .collect();
    let mut points: Vec<(f64, f64)> = d.stops.iter().map(|s| (s.x, s.y)).collect();
    points.push(depot);
    let Some(b) = map::bounds(&geoms, &points) else {
        return String::new();
    };
    let f = Frame::fit(b, 720.0, 210.0, 300.0);
    let mut svg = format!(
        r##"<svg xmlns="http://www.w3.org/2000/svg" width="{:.0}" height="{:.0}" viewBox="0 0 {:.0} {:.0}" role="img" aria-label="route map"><rect width="100%" height="100%" fill="#fafafa" stroke="#666"/>"##,
        f.width, f.height, f.width, f.height
    );
    for g in &geoms {
        let _ = write!(
            svg,
            r##"<path d="{}" fill="#9ecae1" stroke="#333" stroke-width="0.6"/>"##,
            f.path(g)
        );
    }
    let line: Vec<String> = route_line(ctx, d)
        .0
        .iter()
        .map(|c| {
            let (x, y) = f.px(c.x, c.y);
            format!("{x:.1},{y:.1}")
        })
        .collect();
    let _ = write!(
        svg,
        r##"<polyline points="{}" fill="none" stroke="#000" stroke-width="1.4" stroke-dasharray="5,3"/>"##,
        line.join(" ")
    );
    let (dx, dy) = f.px(depot.0, depot.1);
    let _ = write!(
        svg,
        r##"<rect x="{:.1}" y="{:.1}" width="10" height="10" fill="#000"/><text x="{:.1}" y="{:.1}" font-size="10">depot</text>"##,
        dx - 5.0,
        dy - 5.0,
        dx + 8.0,
        dy + 4.0
    );
    for (k, s) in d.stops.iter().enumerate() {
        let (x, y) = f.px(s.x, s.y);
        let _ = write!(
            svg,
            r##"<circle cx="{x:.1}" cy="{y:.1}" r="8" fill="#fff" stroke="#000" stroke-width="1.2"/><text x="{x:.1}" y="{:.1}" font-size="9" text-anchor="middle" font-weight="bold">{}</text>"##,
            y + 3.2,
            k + 1
        );
    }
    svg.push_str(&f.scale_bar());
    svg.push_str(&f.north_arrow());
    svg.push_str("</svg>");
    svg
}

/// Crew-days listed on the schedule page.
const GLANCE: usize = 40;

fn report_html(ctx: &Ctx, curve_svg: Option<&str>) -> Result<String> {
    let folder = ctx.folder;
    let s = &ctx.schedule;
    let o = &ctx.options;
    let summary = &folder.summary;
    let currency = folder.catalogue.currency.as_str();
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>Work orders: tree-of-heaven treatment</title><style>{CSS}</style></head><body>\n"
    );

    // Page 1: overview.
    let stems: f64 = folder.planned.iter().map(|p| p.stems).sum();
    let cost: f64 = folder.planned.iter().map(|p| p.cost).sum();
    let first = s.scheduled().filter_map(|d| d.date).min();
    let last = s.last_date();
    let _ = write!(
        h,
        "<section class=\"page\" id=\"overview\"><h1>Work orders: tree-of-heaven treatment</h1>"
    );
    let _ = write!(
        h,
        "<p>This season's plan treats <b>{} patches</b> ({} stems) for <b>{}</b> of a {} budget. It cuts the spotted lanternfly establishment risk index by <b>{:.1}%</b> ({}). The index ranks relative risk under the plan's assumptions; it is not a forecast.</p>",
        folder.planned.len(),
        thousands(stems),
        money(currency, cost),
        money(currency, summary["budget"].as_f64().unwrap_or(cost)),
        summary["risk_reduction_pct"].as_f64().unwrap_or(0.0),
        escape(&status_line(summary)),
    );
    let _ = write!(
        h,
        "<p>The work is {} crew-day{} for {} crew{} working {} from {}{}: {:.1} hours of work and {:.1} hours of travel.{}</p>",
        s.days.len(),
        if s.days.len() == 1 { "" } else { "s" },
        o.crews,
        if o.crews == 1 { "" } else { "s" },
        escape(&o.workdays.to_string()),
        o.start,
        match (first, last) {
            (Some(a), Some(b)) => format!(" (first day {a}, last day {b})"),
            _ => String::new(),
        },
        s.days.iter().map(|d| d.work_hours()).sum::<f64>() + 0.0,
        s.days.iter().map(|d| d.travel_hours()).sum::<f64>() + 0.0,
        if s.split_patches > 0 {
            format!(
                " {} large patch{} spread over several days.",
                s.split_patches,
                if s.split_patches == 1 {
                    " is"
                } else {
                    "es are"
                }
            )
        } else {
            String::new()
        }
    );
    for m in &s.missing {
        let _ = write!(
            h,
            "<p class=\"warn\">Not enough crew time: {} crew-day{} of {} cannot be done inside its window ({}). Add crews or workdays, start earlier, or carry the work to next season. Those days are listed as unscheduled.</p>",
            m.crew_days,
            if m.crew_days == 1 { "" } else { "s" },
            escape(&m.methods.join(" and ")),
            escape(&contract::window(&m.months))
        );
    }
    h.push_str(&overview_map(ctx));
    h.push_str(&legend(ctx));
    let _ = write!(
        h,
        "<p class=\"small\">Map in {} (metres; north arrow shows grid north). Travel times assume straight-line distance &times; {} at {} km/h between sites, an assumption rather than a road network; depot {}.</p>",
        escape(&ctx.crs.name),
        o.detour,
        o.speed_kmh,
        if s.depot_is_default {
            "at the centroid of the treated patches".to_string()
        } else {
            format!("at {:.0}, {:.0}", s.depot.0, s.depot.1)
        }
    );
    h.push_str("<p class=\"small\"><b>Before any herbicide work:</b> apply every product per its label; the label is the law. Read the cautions on the last page.</p></section>\n");

    // Page 2 (optional): the budget curve.
    if let Some(svg) = curve_svg {
        let body = svg.find("<svg").map(|k| &svg[k..]).unwrap_or(svg);
        let _ = writeln!(
            h,
            "<section class=\"page\" id=\"curve\"><h2>What each budget buys</h2><p>Risk reduction against season budget, each point an optimised plan (from <code>hostcut curve</code>). This plan spends {} and cuts risk by {:.1}%.</p><div class=\"curve\">{body}</div></section>",
            money(currency, cost),
            summary["risk_reduction_pct"].as_f64().unwrap_or(0.0)
        );
    }

    // The schedule at a glance, one line per crew-day (the first GLANCE, so it stays one page).
    let _ = write!(
        h,
        "<section class=\"page\" id=\"schedule\"><h2>Schedule at a glance</h2><table><tr><th>Crew-day</th><th>Patches</th><th>Stops</th><th>Work h</th><th>Travel h</th></tr>"
    );
    for d in s.days.iter().take(GLANCE) {
        let mut ids: Vec<&str> = d.stops.iter().map(|s| s.patch_id.as_str()).collect();
        ids.dedup();
        let _ = write!(
            h,
            "<tr><td>{}</td><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{:.1}</td><td class=\"n\">{:.1}</td></tr>",
            escape(&day_label(d)),
            escape(&ids.join(", ")),
            d.stops.len(),
            d.work_hours(),
            d.travel_hours()
        );
    }
    if s.days.len() > GLANCE {
        let _ = write!(
            h,
            "<tr><td colspan=\"5\">... and {} more crew-days: see orders.csv and the pages that follow</td></tr>",
            s.days.len() - GLANCE
        );
    }
    h.push_str("</table></section>\n");

    let _ = write!(
        h,
        "<section class=\"page\" id=\"cautions\"><h2>Cautions for every site</h2><div class=\"cautions\"><p>These orders say where treatment buys the most risk reduction and how long it should take. They are not a pesticide recommendation: apply any product per its label, and defer to local codes and licensed practice.</p>"
    );
    for c in cautions::ALL {
        let _ = write!(h, "<p><b>[{}]</b> {}</p>", escape(c.code), escape(c.text));
    }
    h.push_str("<p>Felling: treated stems may be felled only 30 days or more after treatment (Penn State Extension; USDA Forest Service 2014). Follow-up: survivors and root suckers usually need treatment for two or three more seasons; the follow-up date on each order is the start of the method's window next season.</p></div></section>\n");

    // One page per crew-day.
    for d in &s.days {
        day_page(ctx, d, &mut h);
    }
    h.push_str("</body></html>\n");
    Ok(h)
}

/// The site's rules in large type above the method: a crew must not miss them.
fn site_rule_flags(p: &crate::field::contract::PlannedPatch) -> String {
    let mut flags = String::new();
    if p.no_herbicide() {
        flags.push_str("<div class=\"flag noherb\">NO HERBICIDE ON THIS SITE</div>");
    }
    if let Some(r) = p.restriction() {
        let _ = write!(
            flags,
            "<div class=\"flag restricted\">RESTRICTED SITE: {}</div>",
            escape(r.trim_start_matches("restricted site: "))
        );
    }
    if let Some(w) = p.near_water() {
        let _ = write!(
            flags,
            "<div class=\"flag water\">NEAR WATER: {}</div>",
            escape(w.trim_start_matches("near water: "))
        );
    }
    flags
}

fn day_page(ctx: &Ctx, d: &CrewDay, h: &mut String) {
    let folder = ctx.folder;
    let _ = write!(
        h,
        "<section class=\"page day\"><h2>{}</h2>",
        escape(&day_label(d))
    );
    let _ = write!(
        h,
        "<p>Leave the depot, {} stop{}, back to the depot: <b>{:.1} h work + {:.1} h travel = {:.1} h</b> of a {} h day.</p>",
        d.stops.len(),
        if d.stops.len() == 1 { "" } else { "s" },
        d.work_hours(),
        d.travel_hours(),
        d.hours(),
        ctx.options.day_hours
    );
    h.push_str(&day_map(ctx, d));
    let ruled: Vec<String> = d
        .stops
        .iter()
        .enumerate()
        .filter_map(|(k, s)| {
            let p = &folder.planned[s.row];
            (!p.site_notes.is_empty() && p.access != "permission" || p.no_herbicide()).then(|| {
                format!(
                    "stop {} ({}): {}",
                    k + 1,
                    escape(&s.patch_id),
                    escape(&p.site_notes)
                )
            })
        })
        .collect();
    if !ruled.is_empty() {
        let _ = write!(
            h,
            "<div class=\"siterules\"><b>Site rules today:</b><ul><li>{}</li></ul></div>",
            ruled.join("</li><li>")
        );
    }
    let to = gis::ToLonLat::new(&ctx.crs).ok();
    h.push_str("<table class=\"stops\"><tr><th>#</th><th>Patch / parcel</th><th>What to do</th><th>Stems</th><th>Hours</th><th>Getting in</th><th>Lat, lon</th><th>Cautions</th><th>Done</th></tr>");
    let mut codes: BTreeSet<String> = BTreeSet::new();
    let mut methods: BTreeMap<String, orders::Instructions> = BTreeMap::new();
    for (k, s) in d.stops.iter().enumerate() {
        let p = &folder.planned[s.row];
        let ll = to
            .as_ref()
            .and_then(|t| t.points(&[(s.x, s.y)]).ok())
            .map(|v| format!("{:.5}, {:.5}", v[0].1, v[0].0))
            .unwrap_or_default();
        for c in p.cautions.split(';').filter(|c| !c.is_empty()) {
            codes.insert(c.to_string());
        }
        let ins = orders::instructions(folder, s, d.date);
        methods.entry(s.method.clone()).or_insert(ins);
        let getting_in = match (p.access.as_str(), p.contact.is_empty()) {
            ("permission", false) => format!("permission first: {}", p.contact),
            ("permission", true) => "permission first".to_string(),
            (a, false) => format!("{a}; {}", p.contact),
            (a, true) => a.to_string(),
        };
        let _ = write!(
            h,
            "<tr><td class=\"n\">{}</td><td class=\"nw\">{}{}{}</td><td class=\"nw\">{}</td><td class=\"n\">{:.0}</td><td class=\"n\">{:.1}</td><td>{}</td><td class=\"small nw\">{}</td><td class=\"small\">{}</td><td>&#9744;</td></tr>",
            k + 1,
            escape(&s.patch_id),
            if s.parts > 1 {
                format!(" ({}/{})", s.part, s.parts)
            } else {
                String::new()
            },
            if p.parcel.is_empty() {
                String::new()
            } else {
                format!(" &middot; {}", escape(&p.parcel))
            },
            format!(
                "{}{}",
                site_rule_flags(p),
                escape(&s.method.replace('_', " "))
            ),
            s.stems,
            s.work_hours,
            escape(&getting_in),
            ll,
            escape(&p.cautions.replace(';', " "))
        );
    }
    h.push_str("</table>");
    h.push_str("<h3>How</h3><ul class=\"small\">");
    for (m, ins) in &methods {
        let method = folder.method(m).expect("checked on read");
        let mut line = escape(&method.label);
        if method.herbicide {
            line.push_str(". <b>Apply per the product label.</b>");
        }
        if let Some(f) = ins.fell_after {
            let _ = write!(line, " Do not fell treated stems before {f}.");
        }
        if let Some(f) = &ins.follow_up {
            let _ = write!(line, " Follow-up visit from {}.", escape(f));
        }
        let _ = write!(h, "<li>{line}</li>");
    }
    h.push_str("</ul><h3>Cautions at these sites</h3><div class=\"cautions small\">");
    for code in &codes {
        if let Some(c) = cautions::lookup(code) {
            let _ = write!(h, "<p><b>[{}]</b> {}</p>", escape(c.code), escape(c.text));
        }
    }
    h.push_str("<p>Defer to local codes and licensed practice.</p></div>");
    h.push_str("<p class=\"sign small\">Crew lead: ____________________ &nbsp; Date: __________ &nbsp; Applicator licence no.: ______________</p></section>\n");
}
