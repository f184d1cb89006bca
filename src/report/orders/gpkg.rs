//! orders.geojson (one layer, a `kind` per feature) and orders.gpkg (patches, stops, routes, and
//! their styles in `layer_styles`).

use std::collections::HashMap;

use geo::{Area, Geometry, MultiPolygon, Point};

use crate::core::error::Result;
use crate::field::contract;
use crate::field::orders::CrewDay;
use crate::input::gis::{self, GeometryKind, LayerData, Property};
use crate::report::output::Staging;

use super::{Orders, round2, route_line, styles};

pub(super) fn write_maps(ctx: &Orders, staging: &Staging) -> Result<()> {
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
        ("travel_km", Property::Number(0.0)),
        ("cautions", Property::Text(String::new())),
    ];
    let route_fields = [
        ("crew", Property::Integer(0)),
        ("day", Property::Integer(0)),
        ("date", Property::Text(String::new())),
        ("stops", Property::Integer(0)),
        ("travel_hours", Property::Number(0.0)),
        ("travel_km", Property::Number(0.0)),
        ("work_hours", Property::Number(0.0)),
        ("travel_model", Property::Text(String::new())),
    ];
    // The strip of a split patch each crew-day works (patches with an outline only).
    let part_fields = [
        ("crew", Property::Integer(0)),
        ("day", Property::Integer(0)),
        ("date", Property::Text(String::new())),
        ("stop", Property::Integer(0)),
        ("patch_id", Property::Text(String::new())),
        ("part", Property::Integer(0)),
        ("parts", Property::Integer(0)),
        ("method", Property::Text(String::new())),
        ("stems", Property::Number(0.0)),
        ("part_of", Property::Text(String::new())),
        ("strip", Property::Text(String::new())),
        ("area_m2", Property::Number(0.0)),
    ];
    let mut stops = Vec::new();
    let mut routes = Vec::new();
    let mut parts = Vec::new();
    for d in &ctx.schedule.days {
        let crew = d.crew.unwrap_or(0);
        for (k, s) in d.stops.iter().enumerate() {
            if let Some(strip) = ctx.strips.get(&(s.patch_id.clone(), s.part)) {
                parts.push((
                    Geometry::MultiPolygon(strip.outline.clone()),
                    vec![
                        int(crew),
                        int(d.day),
                        text(&date_of(d)),
                        int(k + 1),
                        text(&s.patch_id),
                        int(s.part),
                        int(s.parts),
                        text(&s.method),
                        num(s.stems),
                        text(&format!("{}/{}", s.part, s.parts)),
                        text(&strip.words),
                        num(round2(strip.outline.unsigned_area())),
                    ],
                ));
            }
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
                    num(round2(s.travel_km)),
                    text(&ctx.folder.planned[s.row].cautions),
                ],
            ));
        }
        routes.push((
            Geometry::LineString(route_line(d)),
            vec![
                int(crew),
                int(d.day),
                text(&date_of(d)),
                int(d.stops.len()),
                num(round2(d.travel_hours())),
                num(round2(d.travel_km())),
                num(round2(d.work_hours())),
                text(ctx.schedule.travel_model),
            ],
        ));
    }

    // GeoJSON: one layer, a `kind` per feature (stop, route, depot).
    let mut gj_fields: Vec<(&str, Property)> = vec![("kind", Property::Text(String::new()))];
    gj_fields.extend(stop_fields.iter().cloned());
    gj_fields.push(("stops", Property::Integer(0)));
    gj_fields.push(("work_hours", Property::Number(0.0)));
    gj_fields.push(("travel_model", Property::Text(String::new())));
    // Parts of split patches (kind `part`): how many parts, and which strip in words.
    gj_fields.push(("parts", Property::Integer(0)));
    gj_fields.push(("strip", Property::Text(String::new())));
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
        v.push(text(ctx.schedule.travel_model));
        v.push(Property::Integer(0));
        v.push(text(""));
        features.push((g.clone(), v));
    }
    for (g, p) in &routes {
        let mut v = blank(gj_fields.len());
        v[0] = text("route");
        v[1] = p[0].clone();
        v[2] = p[1].clone();
        v[3] = p[2].clone();
        // kind, crew, day, date, stop, patch_id, part, method, stems, est_hours, travel_hours,
        // travel_km, cautions, stops, work_hours, travel_model.
        v[10] = p[4].clone();
        v[11] = p[5].clone();
        v[13] = p[3].clone();
        v[14] = p[6].clone();
        v[15] = p[7].clone();
        features.push((g.clone(), v));
    }
    for (g, p) in &parts {
        let mut v = blank(gj_fields.len());
        v[0] = text("part");
        // kind, crew, day, date, stop, patch_id, part, method, stems, est_hours, ...
        v[1] = p[0].clone();
        v[2] = p[1].clone();
        v[3] = p[2].clone();
        v[4] = p[3].clone();
        v[5] = p[4].clone();
        v[6] = p[9].clone();
        v[7] = p[7].clone();
        v[8] = p[8].clone();
        v[16] = p[6].clone();
        v[17] = p[10].clone();
        features.push((g.clone(), v));
    }
    let mut depot = blank(gj_fields.len());
    depot[0] = text("depot");
    depot[15] = text(ctx.schedule.travel_model);
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
        let unreached = ctx
            .schedule
            .unreached
            .iter()
            .any(|u| u.patch_id == rec.patch_id);
        let (status, method, priority) = match planned.get(rec.patch_id.as_str()) {
            Some((prio, p)) if unreached => {
                ("treat: not scheduled, no road", p.method.clone(), *prio)
            }
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
    let (style_fields, style_rows) = styles::table(styles::layer_styles(
        ctx,
        polygons,
        &["untreated", "not eligible", "treat: not scheduled, no road"],
    ));
    gis::write_layers(
        &staging.path("orders.gpkg"),
        "GPKG",
        &ctx.crs,
        vec![
            LayerData {
                name: "patches",
                geometry: if polygons {
                    GeometryKind::MultiPolygon
                } else {
                    GeometryKind::Point
                },
                fields: &patch_fields,
                features: patches,
            },
            LayerData {
                name: "stops",
                geometry: GeometryKind::Point,
                fields: &stop_fields,
                features: stops,
            },
            LayerData {
                name: "parts",
                geometry: GeometryKind::MultiPolygon,
                fields: &part_fields,
                features: parts,
            },
            LayerData {
                name: "routes",
                geometry: GeometryKind::LineString,
                fields: &route_fields,
                features: routes,
            },
            // Every layer's style (OGC SLD), read by desktop GIS tools (see `styles`).
            LayerData {
                name: "layer_styles",
                geometry: GeometryKind::None,
                fields: &style_fields,
                features: style_rows
                    .into_iter()
                    .map(|r| (Geometry::Point(Point::new(0.0, 0.0)), r))
                    .collect(),
            },
        ],
    )
}
