//! `hostcut orders --roads` on the binary with one-way streets (issue 21): the same small layout
//! given once as a GeoPackage with a `oneway` field (written by `ogr2ogr`, GDAL's command-line
//! tool) and once as an OpenStreetMap `.osm.pbf` extract (written by `pyosmium`, read by the
//! binary through GDAL's OSM driver).
//!
//! The layout: a straight street 1 km long, one-way, from the depot's end to the stand's end,
//! and a two-way loop (north 500 m, east 1 km, south 500 m) joining its two ends. Depot and stand
//! are 20 m off the one-way street, 20 m from its ends. Expected distances are derived here from
//! the layout (marked [D]): along the one-way 960 m; against it, 20 m to the end, 2 km round the
//! loop, 20 m to the snapped point: 2,040 m.
//!
//! Needs `ogr2ogr` and `/usr/bin/python3` (or `python3`) with `osmium` (Debian's `gdal-bin` and
//! `python3-pyosmium`, installed by `.ci/run`).

mod common;

use std::collections::HashMap;
use std::path::Path;

use common::*;
use serde_json::json;

const X0: f64 = 500_000.0;
const Y0: f64 = 4_400_000.0;
const DEPOT: (f64, f64) = (20.0, -20.0);
const STAND: (f64, f64) = (980.0, -20.0);

/// The one-way street (drawn west to east) and the loop, in metres from (X0, Y0).
fn layout() -> (Vec<(f64, f64)>, Vec<(f64, f64)>) {
    (
        vec![(0.0, 0.0), (500.0, 0.0), (1000.0, 0.0)],
        vec![(0.0, 0.0), (0.0, 500.0), (1000.0, 500.0), (1000.0, 0.0)],
    )
}

fn python() -> String {
    if Path::new("/usr/bin/python3").exists() {
        "/usr/bin/python3".into()
    } else {
        "python3".into()
    }
}

fn check(out: std::process::Output, what: &str) {
    assert!(
        out.status.success(),
        "{what}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn plan(dir: &Path) {
    write(
        dir,
        "stands.csv",
        &format!(
            "id,x,y,stems\nEAST,{:.0},{:.0},60\n",
            X0 + STAND.0,
            Y0 + STAND.1
        ),
    );
    let o = run(
        dir,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "100000",
            "--out",
            "plan",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
}

/// `orders --roads ROADS`; the one stop's (travel_km, return_km) and stdout.
fn orders(dir: &Path, roads: &str, out: &str) -> (f64, f64, String) {
    let depot = format!("{},{}", X0 + DEPOT.0, Y0 + DEPOT.1);
    let o = run(
        dir,
        &[
            "orders",
            "--plan",
            "plan",
            "--out",
            out,
            "--depot",
            &depot,
            "--start-date",
            "2027-04-01",
            "--roads",
            roads,
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("travel: road network"), "{text}");
    let mut r = csv::Reader::from_path(dir.join(out).join("orders.csv")).unwrap();
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    let rows: Vec<HashMap<String, String>> = r
        .records()
        .map(|rec| {
            header
                .iter()
                .cloned()
                .zip(rec.unwrap().iter().map(String::from))
                .collect()
        })
        .collect();
    assert_eq!(rows.len(), 1);
    let row = &rows[0];
    assert_eq!(row["patch_id"], "EAST");
    assert_eq!(row["travel_model"], "road network");
    // Herbicide outputs always carry the site cautions.
    assert!(
        row["instructions"].contains("Apply per the product label"),
        "{}",
        row["instructions"]
    );
    let num = |k: &str| -> f64 { row[k].parse().unwrap() };
    (num("travel_km"), num("return_km"), text)
}

#[test]
fn a_one_way_street_in_a_geopackage_is_driven_one_way_by_orders() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    plan(d);
    let (street, lp) = layout();
    let line = |pts: &[(f64, f64)]| pts.iter().map(|p| [X0 + p.0, Y0 + p.1]).collect::<Vec<_>>();
    let collection = |oneway: &str| {
        json!({"type": "FeatureCollection", "features": [
            {"type": "Feature", "properties": {"highway": "residential", "oneway": oneway},
             "geometry": {"type": "LineString", "coordinates": line(&street)}},
            {"type": "Feature", "properties": {"highway": "residential", "oneway": "no"},
             "geometry": {"type": "LineString", "coordinates": line(&lp)}},
        ]})
    };
    for (oneway, name) in [("yes", "fwd"), ("-1", "rev")] {
        let source = d.join(format!("{name}.geojson"));
        std::fs::write(&source, collection(oneway).to_string()).unwrap();
        check(
            std::process::Command::new("ogr2ogr")
                .args([
                    "-f",
                    "GPKG",
                    d.join(format!("{name}.gpkg")).to_str().unwrap(),
                ])
                .arg(&source)
                .args(["-nln", "roads", "-a_srs", "EPSG:32618"])
                .output()
                .unwrap(),
            "ogr2ogr",
        );
    }
    // [D] `yes`: the depot drives 960 m with the street to the stand, and back round the loop.
    let (there, back, _) = orders(d, "fwd.gpkg", "fwd");
    assert!((there - 0.96).abs() < 0.011, "there {there} km");
    assert!((back - 2.04).abs() < 0.011, "back {back} km");
    // [D] `-1` (one-way against the drawing direction): the other way round.
    let (there, back, _) = orders(d, "rev.gpkg", "rev");
    assert!((there - 2.04).abs() < 0.011, "there {there} km");
    assert!((back - 0.96).abs() < 0.011, "back {back} km");
}

#[test]
fn an_openstreetmap_extract_is_routed_by_orders_one_ways_included() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    plan(d);
    let (street, lp) = layout();
    // Nodes in longitude/latitude: the layout's metres taken back from UTM zone 18N by PROJ
    // through GDAL (hostcut's own reprojection), so the binary's reading lands on the layout.
    let wkt = hostcut::input::gis::Crs::parse("EPSG:32618", "test")
        .unwrap()
        .wkt;
    let corners = [
        (0.0, 0.0),
        (500.0, 0.0),
        (1000.0, 0.0),
        (0.0, 500.0),
        (1000.0, 500.0),
    ];
    let xy: Vec<(f64, f64)> = corners.iter().map(|p| (X0 + p.0, Y0 + p.1)).collect();
    let lonlat = hostcut::input::gis::transform_points(&wkt, "EPSG:4326", &xy).unwrap();
    let id = |p: &(f64, f64)| 1 + corners.iter().position(|c| c == p).unwrap() as i64;
    let nodes: Vec<_> = lonlat
        .iter()
        .enumerate()
        .map(|(k, (lon, lat))| json!([k as i64 + 1, lon, lat]))
        .collect();
    let ways = json!([
        [100, street.iter().map(id).collect::<Vec<_>>(), {"highway": "residential", "oneway": "-1"}],
        [101, lp.iter().map(id).collect::<Vec<_>>(), {"highway": "residential"}],
        // A footway straight from the depot's end to the stand's end is not driven.
        [102, [1, 3], {"highway": "footway"}],
    ]);
    let spec = d.join("extract.json");
    std::fs::write(&spec, json!({"nodes": nodes, "ways": ways}).to_string()).unwrap();
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/roads/make_osm.py");
    check(
        std::process::Command::new(python())
            .arg(&script)
            .arg(&spec)
            .arg(d.join("extract.osm.pbf"))
            .output()
            .unwrap(),
        "make_osm.py (pyosmium)",
    );
    // [D] `oneway=-1` on a way drawn west to east: driven east to west only.
    let (there, back, text) = orders(d, "extract.osm.pbf", "osm");
    assert!((there - 2.04).abs() < 0.011, "there {there} km");
    assert!((back - 0.96).abs() < 0.011, "back {back} km");
    let info: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("osm/orders.json")).unwrap()).unwrap();
    assert_eq!(info["travel_model"], "road network");
    assert_eq!(info["roads"]["pieces"], 1, "{text}");
}
