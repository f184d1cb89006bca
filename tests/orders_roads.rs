//! `hostcut orders --roads` on the binary (issue 21): a small landscape of streets cut by a river
//! with one bridge, and a square of streets no road joins. The road layer is written by an outside
//! writer (`ogr2ogr`, GDAL's command-line tool) from GeoJSON made here.
//!
//! The expectations are derived here from the layout (marked [D]): a stand straight across the
//! river from the depot is reached only over the bridge, so its drive is far longer than the
//! straight line; the stand on the square no road joins cannot be reached.

mod common;

use std::collections::HashMap;
use std::path::Path;

use common::*;
use serde_json::{Value, json};

const X0: f64 = 500_000.0;
const Y0: f64 = 4_400_000.0;

/// Streets 100 m apart: 6 east-west rows (y = 0..500) and 8 north-south columns (x = 0..700). A
/// river runs between rows 2 and 3; only column 0 crosses it (the bridge). A square of streets
/// 2.3 km east touches nothing.
fn write_roads(dir: &Path) {
    let mut features = Vec::new();
    let mut road = |points: Vec<(f64, f64)>, class: &str| {
        features.push(json!({
            "type": "Feature",
            "properties": {"highway": class},
            "geometry": {"type": "LineString",
                         "coordinates": points.iter().map(|p| [X0 + p.0, Y0 + p.1]).collect::<Vec<_>>()},
        }));
    };
    for r in 0..6 {
        road(
            (0..8)
                .map(|c| (c as f64 * 100.0, r as f64 * 100.0))
                .collect(),
            "residential",
        );
    }
    for c in 0..8 {
        let x = c as f64 * 100.0;
        if c == 0 {
            road(
                (0..6).map(|r| (x, r as f64 * 100.0)).collect(),
                "residential",
            );
        } else {
            road(
                (0..3).map(|r| (x, r as f64 * 100.0)).collect(),
                "residential",
            );
            road(
                (3..6).map(|r| (x, r as f64 * 100.0)).collect(),
                "residential",
            );
        }
    }
    road(
        vec![
            (3000.0, 100.0),
            (3200.0, 100.0),
            (3200.0, 300.0),
            (3000.0, 300.0),
            (3000.0, 100.0),
        ],
        "unclassified",
    );
    let source = dir.join("roads.geojson");
    std::fs::write(
        &source,
        json!({"type": "FeatureCollection", "features": features}).to_string(),
    )
    .unwrap();
    let out = std::process::Command::new("ogr2ogr")
        .args([
            "-f",
            "GPKG",
            dir.join("roads.gpkg").to_str().unwrap(),
            source.to_str().unwrap(),
            "-nln",
            "roads",
            "-a_srs",
            "EPSG:32618",
        ])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "ogr2ogr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// The depot on the south bank; NORTH 200 m straight across the river from it; S1 and S2 on the
/// south bank; FAR on the square no road joins. Every stand 20 m from its street.
const DEPOT: (f64, f64) = (650.0, 120.0);
const STANDS: [(&str, f64, f64); 4] = [
    ("NORTH", 650.0, 320.0),
    ("S1", 350.0, 80.0),
    ("S2", 150.0, 180.0),
    ("FAR", 3100.0, 120.0),
];

fn plan(dir: &Path) {
    write_roads(dir);
    let mut csv = String::from("id,x,y,stems\n");
    for (id, x, y) in STANDS {
        csv.push_str(&format!("{id},{:.0},{:.0},60\n", X0 + x, Y0 + y));
    }
    write(dir, "stands.csv", &csv);
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

fn orders(dir: &Path, out: &str, extra: &[&str]) -> std::process::Output {
    let depot = format!("{},{}", X0 + DEPOT.0, Y0 + DEPOT.1);
    let mut args = vec![
        "orders",
        "--plan",
        "plan",
        "--out",
        out,
        "--depot",
        &depot,
        "--start-date",
        "2027-04-01",
    ];
    args.extend(extra);
    run(dir, &args)
}

fn rows(path: &Path) -> Vec<HashMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            header
                .iter()
                .cloned()
                .zip(rec.unwrap().iter().map(String::from))
                .collect()
        })
        .collect()
}

fn num(r: &HashMap<String, String>, k: &str) -> f64 {
    r[k].parse()
        .unwrap_or_else(|_| panic!("{k} = `{}` is not a number", r[k]))
}

fn json_file(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// The (x, y) a stop row came from: the previous row of the same crew-day, or the depot.
fn previous_points(orders: &[HashMap<String, String>]) -> Vec<(f64, f64)> {
    let mut out = Vec::new();
    let mut last: Option<(String, String, (f64, f64))> = None;
    for r in orders {
        let here = (num(r, "x"), num(r, "y"));
        let prev = match &last {
            Some((c, d, p)) if *c == r["crew"] && *d == r["day"] => *p,
            _ => (X0 + DEPOT.0, Y0 + DEPOT.1),
        };
        out.push(prev);
        last = Some((r["crew"].clone(), r["day"].clone(), here));
    }
    out
}

#[test]
fn orders_on_roads_drive_round_by_the_bridge_and_report_the_unreachable_stand() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    plan(d);
    // One stop a day, so NORTH's drive starts at the depot.
    let o = orders(d, "roads", &["--roads", "roads.gpkg", "--max-stops", "1"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("travel: road network"), "{text}");
    assert!(
        text.contains("patch FAR is NOT SCHEDULED") && text.contains("piece"),
        "{text}"
    );
    assert!(
        text.contains("label is the law"),
        "herbicide cautions: {text}"
    );

    let all = rows(&d.join("roads/orders.csv"));
    let (scheduled, unscheduled): (Vec<_>, Vec<_>) =
        all.into_iter().partition(|r| !r["crew"].is_empty());
    // FAR: one row, no crew, day or stop, NOT SCHEDULED with its site cautions.
    assert_eq!(unscheduled.len(), 1);
    assert_eq!(unscheduled[0]["patch_id"], "FAR");
    assert!(unscheduled[0]["instructions"].starts_with("NOT SCHEDULED"));
    assert!(unscheduled[0]["instructions"].contains("LABEL"));
    assert!(scheduled.iter().all(|r| r["patch_id"] != "FAR"));
    assert!(
        scheduled
            .iter()
            .chain(&unscheduled)
            .all(|r| r["travel_model"] == "road network")
    );

    // [D] NORTH is reached from the depot on the south bank only over the bridge at x = 0: at
    // least 650 m west + 100 m across + 650 m east along roads, against 200 m straight across.
    let prev = previous_points(&scheduled);
    let k = scheduled
        .iter()
        .position(|r| r["patch_id"] == "NORTH")
        .unwrap();
    let north = &scheduled[k];
    let straight_km = (num(north, "x") - prev[k].0).hypot(num(north, "y") - prev[k].1) / 1000.0;
    let road_km = num(north, "travel_km");
    assert!(
        road_km >= (prev[k].0 - X0 + 100.0 + 650.0) / 1000.0 - 0.01,
        "road {road_km} km"
    );
    assert!(
        road_km > 5.0 * straight_km,
        "road {road_km} km, straight {straight_km} km"
    );

    // travel_km sums to each route's km in orders.geojson, and the drawn route is at least that
    // long and longer only by the walks (each stand and the depot 20 m from its street: two
    // walks per leg).
    let info = json_file(&d.join("roads/orders.json"));
    assert_eq!(info["travel_model"], "road network");
    assert_eq!(info["unreachable"][0]["patch_id"], "FAR");
    assert!(info["speed_kmh"].is_null() && info["roads"]["pieces"] == 2);
    let mut by_day: HashMap<(String, String), f64> = HashMap::new();
    let mut legs: HashMap<(String, String), usize> = HashMap::new();
    for r in &scheduled {
        let key = (r["crew"].clone(), r["day"].clone());
        *by_day.entry(key.clone()).or_default() += num(r, "travel_km") + num(r, "return_km");
        *legs.entry(key).or_default() += 1;
    }
    let geojson = json_file(&d.join("roads/orders.geojson"));
    let mut routes = 0;
    for f in geojson["features"].as_array().unwrap() {
        let p = &f["properties"];
        if p["kind"] != "route" {
            continue;
        }
        routes += 1;
        assert_eq!(p["travel_model"], "road network");
        let key = (p["crew"].to_string(), p["day"].to_string());
        let sum = by_day[&key];
        let km = p["travel_km"].as_f64().unwrap();
        assert!(
            (sum - km).abs() < 0.011 * (legs[&key] + 1) as f64,
            "{sum} vs {km}"
        );
        // Route length in metres from the WGS 84 GeoJSON, back in the working CRS.
        let lonlat: Vec<(f64, f64)> = f["geometry"]["coordinates"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| (c[0].as_f64().unwrap(), c[1].as_f64().unwrap()))
            .collect();
        let xy = hostcut::input::gis::transform_points(
            "EPSG:4326",
            &hostcut::input::gis::Crs::parse("EPSG:32618", "test")
                .unwrap()
                .wkt,
            &lonlat,
        )
        .unwrap();
        let length_km: f64 = xy
            .windows(2)
            .map(|w| (w[1].0 - w[0].0).hypot(w[1].1 - w[0].1))
            .sum::<f64>()
            / 1000.0;
        let walks_km = 2.0 * 0.020 * (legs[&key] + 1) as f64;
        assert!(
            length_km >= km - 0.01 && length_km <= km + walks_km + 0.01,
            "route {length_km} km, travel {km} km"
        );
    }
    assert_eq!(routes, by_day.len());

    let report = std::fs::read_to_string(d.join("roads/report.html")).unwrap();
    assert!(report.contains("Travel: road network"));
    assert!(report.contains("NOT SCHEDULED, no road: patch FAR"));
    assert!(report.contains("Apply per the product label"));
}

#[test]
fn without_roads_outputs_say_straight_line_and_road_flags_need_roads() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    plan(d);
    let o = orders(d, "straight", &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("travel: straight line x 1.3 at 30 km/h"));
    let info = json_file(&d.join("straight/orders.json"));
    assert_eq!(info["travel_model"], "straight line");
    assert!(info["roads"].is_null());
    let stops = rows(&d.join("straight/orders.csv"));
    // Without roads every stand is scheduled, FAR included, and travel_km is the straight line
    // x the detour factor (hand arithmetic from the coordinates).
    assert_eq!(stops.len(), STANDS.len());
    let prev = previous_points(&stops);
    for (r, p) in stops.iter().zip(&prev) {
        assert_eq!(r["travel_model"], "straight line");
        let km = (num(r, "x") - p.0).hypot(num(r, "y") - p.1) * 1.3 / 1000.0;
        assert!((km - num(r, "travel_km")).abs() < 0.006);
    }
    let report = std::fs::read_to_string(d.join("straight/report.html")).unwrap();
    assert!(report.contains("Travel: straight line"));

    // A rule for the other travel model is refused, never dropped (exit 2).
    let o = orders(d, "x", &["--roads", "roads.gpkg", "--detour-factor", "1.5"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--road-speed-kmh"));
    let o = orders(d, "y", &["--roads-class-field", "kind"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    // A named class field the layer lacks is an input error naming the flag.
    let o = orders(
        d,
        "z",
        &["--roads", "roads.gpkg", "--roads-class-field", "kind"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--roads-class-field"));
}

#[test]
fn without_a_depot_the_outputs_say_it_is_assumed() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    plan(d);
    let o = run(
        d,
        &[
            "orders",
            "--plan",
            "plan",
            "--out",
            "ord",
            "--start-date",
            "2027-04-01",
            "--roads",
            "roads.gpkg",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    // Under `--quiet` the warning goes to stderr (issue 22: quiet stdout is the cautions block).
    assert!(stderr(&o).contains("note: depot assumed at the centroid"));
    assert!(!stdout(&o).contains("depot assumed"));
    let report = std::fs::read_to_string(d.join("ord/report.html")).unwrap();
    assert!(report.contains("Depot assumed"));
    assert_eq!(
        json_file(&d.join("ord/orders.json"))["depot_is_default"],
        true
    );
}

/// The demo's invented county routed on its invented roads (`demo-inputs/roads.gpkg`, made by
/// `make-demo-inputs`): every treated patch is scheduled, and every crew-day with a stand east
/// of Hollin Run drives over the one bridge, on Mill Road between Concessions 8 and 9 [D: the
/// generator cuts every other road at the stream].
#[test]
fn the_demo_county_is_routed_over_its_one_bridge() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = run(d, &["demo", "--out", "demo", "--quiet"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let o = run(
        d,
        &[
            "orders",
            "--plan",
            "demo",
            "--roads",
            "demo/inputs/roads.gpkg",
            "--depot",
            "501250,4471750",
            "--start-date",
            "2027-04-01",
            "--crews",
            "2",
            "--out",
            "ord",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("travel: road network"));
    let info = json_file(&d.join("ord/orders.json"));
    assert_eq!(info["roads"]["pieces"], 1);
    assert!(info["unreachable"].as_array().unwrap().is_empty());
    let plan = rows(&d.join("demo/plan.csv"));
    let stops = rows(&d.join("ord/orders.csv"));
    for p in &plan {
        assert!(stops.iter().any(|r| r["patch_id"] == p["patch_id"]));
    }
    // The bridge's two ends, in the working CRS (X0 = 500000, Y0 = 4470000 in src/app/demo.rs).
    let bridge = [(503_750.0, 4_471_750.0), (504_250.0, 4_471_750.0)];
    let wkt = hostcut::input::gis::Crs::parse("EPSG:32618", "test")
        .unwrap()
        .wkt;
    let geojson = json_file(&d.join("ord/orders.geojson"));
    let mut east_days = 0;
    for f in geojson["features"].as_array().unwrap() {
        let p = &f["properties"];
        if p["kind"] != "route" {
            continue;
        }
        let key = (p["crew"].to_string(), p["day"].to_string());
        let day_crew = |r: &&HashMap<String, String>| {
            (r["crew"].as_str(), r["day"].as_str()) == (key.0.as_str(), key.1.as_str())
        };
        // East of the stream's easternmost point (x = 504,500).
        if !stops
            .iter()
            .filter(day_crew)
            .any(|r| num(r, "x") > 504_600.0)
        {
            continue;
        }
        east_days += 1;
        let lonlat: Vec<(f64, f64)> = f["geometry"]["coordinates"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| (c[0].as_f64().unwrap(), c[1].as_f64().unwrap()))
            .collect();
        let xy = hostcut::input::gis::transform_points("EPSG:4326", &wkt, &lonlat).unwrap();
        for end in bridge {
            assert!(
                xy.iter().any(|p| (p.0 - end.0).hypot(p.1 - end.1) < 0.5),
                "a route east of Hollin Run misses the bridge end {end:?}"
            );
        }
    }
    assert!(east_days > 0, "no crew-day east of Hollin Run");
}
