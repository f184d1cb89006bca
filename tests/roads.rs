//! Road travel (issue 21): road layers read through GDAL (GeoPackage, Shapefile, OpenStreetMap
//! `.osm.pbf`), the routable network, snapping, pieces and one-way streets, checked against an
//! outside reference: Python's `networkx` Dijkstra on the same layer read through GDAL's own
//! Python bindings (`tests/roads/reference.py`), with road files written by outside writers
//! (`ogr2ogr` for GeoPackage and Shapefile, `pyosmium` for `.osm.pbf`).
//!
//! Needs `/usr/bin/python3` (or `python3`) with `networkx`, `osgeo` and `osmium`: Debian's
//! `python3-networkx python3-gdal python3-pyosmium`, installed by `.ci/run`.

use std::path::{Path, PathBuf};
use std::process::Command;

use hostcut::field::network::{
    NetworkOptions, RoadNetwork, SpeedTable, Travel, TravelMethod, Unreachable, bench_grid,
};
use hostcut::input::gis::{Crs, transform_points};
use hostcut::input::roads::{FieldSource, OneWay, RoadFields, read_roads};
use serde_json::{Value, json};

const EPSG: u32 = 32618;
const X0: f64 = 500_000.0;
const Y0: f64 = 4_400_000.0;

fn crs() -> Crs {
    Crs::parse(&format!("EPSG:{EPSG}"), "test").unwrap()
}

fn python() -> String {
    let exe = if Path::new("/usr/bin/python3").exists() {
        "/usr/bin/python3"
    } else {
        "python3"
    };
    let ok = Command::new(exe)
        .args(["-c", "import networkx, osmium; from osgeo import ogr"])
        .status()
        .is_ok_and(|s| s.success());
    assert!(
        ok,
        "{exe} lacks networkx, osmium or osgeo: `apt-get install -y python3-networkx python3-gdal python3-pyosmium` (as .ci/run does)"
    );
    exe.to_string()
}

fn run(program: &str, args: &[&str]) {
    let out = Command::new(program).args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{program} {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn script(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/roads")
        .join(name)
        .display()
        .to_string()
}

/// One road feature: vertices, highway class, oneway value, maxspeed.
struct Road {
    points: Vec<(f64, f64)>,
    class: &'static str,
    oneway: Option<&'static str>,
    maxspeed: Option<f64>,
}

fn road(points: Vec<(f64, f64)>, class: &'static str) -> Road {
    Road {
        points,
        class,
        oneway: None,
        maxspeed: None,
    }
}

/// Write `roads` as GeoJSON text, then convert it with `ogr2ogr` (the outside writer) into
/// `name` with `driver`, assigning EPSG:32618 (or no CRS when `srs` is false).
fn write_layer(dir: &Path, name: &str, driver: &str, roads: &[Road], srs: bool) -> PathBuf {
    let features: Vec<Value> = roads
        .iter()
        .map(|r| {
            json!({
                "type": "Feature",
                "properties": {"highway": r.class, "oneway": r.oneway, "maxspeed": r.maxspeed},
                "geometry": {"type": "LineString",
                             "coordinates": r.points.iter().map(|p| [p.0, p.1]).collect::<Vec<_>>()},
            })
        })
        .collect();
    let source = dir.join(format!("{name}.source.geojson"));
    std::fs::write(
        &source,
        json!({"type": "FeatureCollection", "features": features}).to_string(),
    )
    .unwrap();
    let target = dir.join(name);
    let srs_text = format!("EPSG:{EPSG}");
    let mut args = vec![
        "-f",
        driver,
        target.to_str().unwrap(),
        source.to_str().unwrap(),
    ];
    args.extend(["-nln", "roads"]);
    if srs {
        args.extend(["-a_srs", &srs_text]);
    }
    run("ogr2ogr", &args);
    if !srs {
        // GeoJSON always says WGS 84: drop the written CRS so the layer has none.
        let _ = std::fs::remove_file(target.with_extension("prj"));
    }
    target
}

/// networkx's answer for `points` on the layer (see tests/roads/reference.py).
fn reference(path: &Path, layer: Option<&str>, points: &[(f64, f64)], speeds: Value) -> Value {
    let request = path.with_extension("request.json");
    std::fs::write(
        &request,
        json!({
            "path": path, "layer": layer, "epsg": EPSG, "points": points,
            "speeds": speeds, "default_kmh": 30.0, "walk_kmh": 4.0,
        })
        .to_string(),
    )
    .unwrap();
    let out = Command::new(python())
        .args([script("reference.py"), request.display().to_string()])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "reference.py: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

/// Every ordered pair's hours and road km equal networkx's to 1e-6 relative; pairs networkx
/// cannot connect are infinite here.
fn assert_same_as_networkx(travel: &Travel, answer: &Value) {
    let n = travel.n;
    let mut compared = 0;
    for i in 0..n {
        let walk = answer["walk_m"][i].as_f64().unwrap();
        assert!((travel.snaps[i].walk_m - walk).abs() <= 1e-6 * walk.max(1.0));
        for j in 0..n {
            let (h, k) = (&answer["hours"][i][j], &answer["km"][i][j]);
            if h.is_null() {
                assert!(
                    travel.hours(i, j).is_infinite(),
                    "{i}->{j}: networkx finds no way, hostcut {} h",
                    travel.hours(i, j)
                );
                continue;
            }
            let (h, k) = (h.as_f64().unwrap(), k.as_f64().unwrap());
            let close = |a: f64, b: f64| (a - b).abs() <= 1e-6 * b.abs().max(1e-9);
            assert!(
                close(travel.hours(i, j), h),
                "{i}->{j}: hostcut {} h, networkx {h} h",
                travel.hours(i, j)
            );
            assert!(
                close(travel.km(i, j), k),
                "{i}->{j}: hostcut {} km, networkx {k} km",
                travel.km(i, j)
            );
            compared += 1;
        }
    }
    assert!(
        compared >= n,
        "too few reachable pairs compared: {compared}"
    );
}

/// The speeds the module doc states for the classes used here (OpenStreetMap defaults, common
/// practice from memory), given to the reference as they are to hostcut.
fn osm_speeds() -> Value {
    json!({"residential": 30.0, "secondary": 55.0, "primary": 65.0, "service": 20.0,
           "track": 15.0, "unclassified": 35.0, "footway": null})
}

/// A 12 x 12 grid of streets 100 m apart (crossings jittered up to 7 m, rows with a shape point
/// between crossings), cut by a river between
/// rows 5 and 6 that only column 3 bridges; row 8 one-way eastward (`yes`), row 2 one-way
/// westward (`-1`, drawn eastward), column 7 with its own 50 km/h, a footway across the river at
/// column 9 (not drivable), and a square of streets 3 km east that touches nothing.
struct Grid {
    roads: Vec<Road>,
    vertex: Vec<Vec<(f64, f64)>>,
}

fn grid() -> Grid {
    let n = 12;
    let mut state = 12345u64;
    let mut jitter = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((state >> 33) as f64 / (1u64 << 31) as f64) * 14.0 - 7.0
    };
    let vertex: Vec<Vec<(f64, f64)>> = (0..n)
        .map(|r| {
            (0..n)
                .map(|c| {
                    (
                        X0 + c as f64 * 100.0 + jitter(),
                        Y0 + r as f64 * 100.0 + jitter(),
                    )
                })
                .collect()
        })
        .collect();
    let class = |k: usize| {
        if k.is_multiple_of(4) {
            "secondary"
        } else {
            "residential"
        }
    };
    let mut roads = Vec::new();
    for r in 0..n {
        // A shape point midway between crossings, 3 m off the straight line: a vertex where
        // only the street's own two pieces meet.
        let mut points = vec![vertex[r][0]];
        for c in 1..n {
            let (a, b) = (vertex[r][c - 1], vertex[r][c]);
            points.push(((a.0 + b.0) / 2.0, (a.1 + b.1) / 2.0 + 3.0));
            points.push(b);
        }
        let mut street = road(points, class(r));
        street.oneway = match r {
            8 => Some("yes"),
            2 => Some("-1"),
            _ => None,
        };
        roads.push(street);
    }
    for c in 0..n {
        let column: Vec<(f64, f64)> = (0..n).map(|r| vertex[r][c]).collect();
        let mut parts = if c == 3 {
            vec![road(column, class(c))]
        } else {
            vec![
                road(column[..6].to_vec(), class(c)),
                road(column[6..].to_vec(), class(c)),
            ]
        };
        if c == 7 {
            parts.iter_mut().for_each(|p| p.maxspeed = Some(50.0));
        }
        roads.extend(parts);
    }
    roads.push(road(vec![vertex[5][9], vertex[6][9]], "footway"));
    let (sx, sy) = (X0 + 4000.0, Y0 + 300.0);
    roads.push(road(
        vec![
            (sx, sy),
            (sx + 200.0, sy),
            (sx + 200.0, sy + 200.0),
            (sx, sy + 200.0),
            (sx, sy),
        ],
        "unclassified",
    ));
    Grid { roads, vertex }
}

/// The stops on the grid: 0 the depot on row 5 (south bank) by column 9, 1 straight across the
/// river from it on row 6, 2 on the disconnected square, 3 900 m south of every road, 4 exactly on a
/// vertex, 5 mid-block on the one-way row 8, 6 and 7 elsewhere.
fn grid_points(g: &Grid) -> Vec<(f64, f64)> {
    let mid = |a: (f64, f64), b: (f64, f64), t: f64, dx: f64, dy: f64| {
        (a.0 + t * (b.0 - a.0) + dx, a.1 + t * (b.1 - a.1) + dy)
    };
    let v = &g.vertex;
    vec![
        mid(v[5][9], v[5][10], 0.31, 3.0, 17.0),
        mid(v[6][9], v[6][10], 0.33, 2.0, -18.0),
        (X0 + 4100.0, Y0 + 289.0),
        mid(v[0][5], v[0][6], 0.4, 0.0, -900.0),
        v[10][2],
        mid(v[8][4], v[8][5], 0.55, 1.0, 11.0),
        mid(v[9][0], v[10][0], 0.6, 12.0, 0.0),
        mid(v[1][6], v[1][7], 0.27, -4.0, 14.0),
    ]
}

#[test]
fn grid_with_a_river_matches_networkx_and_shapefile_matches_geopackage() {
    let dir = tempfile::tempdir().unwrap();
    let g = grid();
    let gpkg = write_layer(dir.path(), "roads.gpkg", "GPKG", &g.roads, true);
    let layer = read_roads(&gpkg, &crs(), &RoadFields::default()).unwrap();
    assert_eq!(layer.driver, "GPKG");
    assert_eq!(layer.source_crs, "EPSG:32618");
    assert_eq!(layer.segments.len(), g.roads.len());
    assert_eq!(layer.class, FieldSource::Column("highway".into()));
    assert!(
        layer
            .segments
            .iter()
            .any(|s| s.oneway == OneWay::Reverse && s.class == "residential")
    );
    let network = RoadNetwork::build(&layer.segments, &NetworkOptions::default()).unwrap();
    assert_eq!(network.stats.not_drivable.get("footway"), Some(&1));
    let points = grid_points(&g);
    let travel = network.travel(&points, 2).unwrap();
    // Outside reference: networkx (single_source_dijkstra) on the same GeoPackage read by GDAL.
    let answer = reference(&gpkg, None, &points, osm_speeds());
    assert_same_as_networkx(&travel, &answer);
    // The contraction hierarchy (picked for many points on a large network) against the same
    // reference.
    let by_hierarchy = network
        .travel_by(&points, 2, TravelMethod::Hierarchy)
        .unwrap();
    assert_eq!(by_hierarchy.method, TravelMethod::Hierarchy);
    assert_same_as_networkx(&by_hierarchy, &answer);
    // The drawn route of every leg is as long as its road km (derived here [C]: the geometry is
    // the path the kilometres were summed over).
    for i in 0..points.len() {
        for j in 0..points.len() {
            if i == j || travel.km(i, j).is_infinite() {
                continue;
            }
            let line = network.path(&travel.snaps[i], &travel.snaps[j]).unwrap();
            let metres: f64 = line
                .windows(2)
                .map(|w| (w[1].0 - w[0].0).hypot(w[1].1 - w[0].1))
                .sum();
            assert!(
                (metres / 1000.0 - travel.km(i, j)).abs() <= 1e-6 * travel.km(i, j).max(1e-3),
                "{i}->{j}: route {metres} m, travel {} km",
                travel.km(i, j)
            );
        }
    }
    // Weakly connected pieces: networkx's number_weakly_connected_components on the same roads.
    assert_eq!(
        network.pieces.len() as u64,
        answer["components"].as_u64().unwrap()
    );
    assert_eq!(network.pieces.len(), 2);

    // The same roads through a Shapefile (another outside writer's output) give the same travel.
    let shp = write_layer(dir.path(), "roads.shp", "ESRI Shapefile", &g.roads, true);
    let layer = read_roads(&shp, &crs(), &RoadFields::default()).unwrap();
    let from_shapefile = RoadNetwork::build(&layer.segments, &NetworkOptions::default())
        .unwrap()
        .travel(&points, 1)
        .unwrap();
    for (a, b) in from_shapefile.hours.iter().zip(&travel.hours) {
        assert!(a == b || (a - b).abs() <= 1e-9 * b.abs());
    }
}

#[test]
fn a_stand_across_the_river_drives_round_by_the_bridge() {
    let g = grid();
    let segments: Vec<_> = {
        let dir = tempfile::tempdir().unwrap();
        let gpkg = write_layer(dir.path(), "roads.gpkg", "GPKG", &g.roads, true);
        read_roads(&gpkg, &crs(), &RoadFields::default())
            .unwrap()
            .segments
    };
    let network = RoadNetwork::build(&segments, &NetworkOptions::default()).unwrap();
    let points = grid_points(&g);
    let travel = network.travel(&points[..2], 1).unwrap();
    let straight_km = (points[0].0 - points[1].0).hypot(points[0].1 - points[1].1) / 1000.0;
    // Derived here [C]: every drive from the south bank to the north crosses the one bridge
    // (column 3, rows 5 to 6), so by the triangle inequality it is at least the straight line
    // from the depot's road point to the bridge's south end plus the bridge's north end to the
    // stand's road point.
    let (bs, bn) = (g.vertex[5][3], g.vertex[6][3]);
    let (a, b) = (travel.snaps[0].on_road, travel.snaps[1].on_road);
    let bound = ((a.0 - bs.0).hypot(a.1 - bs.1) + (bn.0 - b.0).hypot(bn.1 - b.1)) / 1000.0;
    assert!(travel.km(0, 1) >= bound - 1e-9);
    assert!(
        travel.km(0, 1) > 5.0 * straight_km,
        "road {} km, straight line {straight_km} km",
        travel.km(0, 1)
    );
    // The drawn route passes over the bridge.
    let route = network.route(&travel, &[0, 1, 0]);
    assert_eq!(route.len(), 2);
    for leg in &route {
        assert!(
            leg.contains(&bs) && leg.contains(&bn),
            "route misses the bridge"
        );
    }
}

#[test]
fn a_one_way_street_is_driven_one_way_only() {
    // A 1 km street one-way eastward (`oneway = yes`) and a two-way loop back (0.5 + 1 + 0.5 km),
    // all residential (30 km/h). Hand arithmetic: A' (100 m along) → B' (900 m along) drives
    // 0.8 km; B' → A' drives 0.1 + 2.0 + 0.1 = 2.2 km; walks of 10 m each at 4 km/h.
    let dir = tempfile::tempdir().unwrap();
    let mut street = road(vec![(X0, Y0), (X0 + 1000.0, Y0)], "residential");
    street.oneway = Some("yes");
    let roads = vec![
        street,
        road(
            vec![
                (X0 + 1000.0, Y0),
                (X0 + 1000.0, Y0 + 500.0),
                (X0, Y0 + 500.0),
                (X0, Y0),
            ],
            "residential",
        ),
    ];
    let gpkg = write_layer(dir.path(), "oneway.gpkg", "GPKG", &roads, true);
    let layer = read_roads(&gpkg, &crs(), &RoadFields::default()).unwrap();
    assert_eq!(layer.segments[0].oneway, OneWay::Forward);
    let network = RoadNetwork::build(&layer.segments, &NetworkOptions::default()).unwrap();
    let points = [(X0 + 100.0, Y0 - 10.0), (X0 + 900.0, Y0 - 10.0)];
    let travel = network.travel(&points, 1).unwrap();
    let walk = 2.0 * 10.0 / 4000.0;
    assert!((travel.km(0, 1) - 0.8).abs() < 1e-9);
    assert!((travel.km(1, 0) - 2.2).abs() < 1e-9);
    assert!((travel.hours(0, 1) - (0.8 / 30.0 + walk)).abs() < 1e-9);
    assert!((travel.hours(1, 0) - (2.2 / 30.0 + walk)).abs() < 1e-9);
    assert!(travel.unreachable.is_empty());

    // Without the loop, B' cannot get back: reported as a one-way dead end, travel infinite.
    let network = RoadNetwork::build(&layer.segments[..1], &NetworkOptions::default()).unwrap();
    let travel = network.travel(&points, 1).unwrap();
    assert_eq!(
        travel.unreachable,
        vec![(
            1,
            Unreachable::OneWay {
                to_point: false,
                to_depot: true
            }
        )]
    );
    assert!(travel.hours(1, 0).is_infinite());
}

#[test]
fn a_disconnected_piece_and_a_far_stand_are_reported() {
    let g = grid();
    let dir = tempfile::tempdir().unwrap();
    let gpkg = write_layer(dir.path(), "roads.gpkg", "GPKG", &g.roads, true);
    let layer = read_roads(&gpkg, &crs(), &RoadFields::default()).unwrap();
    let network = RoadNetwork::build(&layer.segments, &NetworkOptions::default()).unwrap();
    let travel = network.travel(&grid_points(&g), 1).unwrap();
    // The square 3 km east touches no street of the grid (built so above): its own piece,
    // never bridged.
    assert_eq!(network.pieces.len(), 2);
    assert!((network.pieces[1].road_km - 0.8).abs() < 1e-9);
    assert!(travel.unreachable.iter().any(|&(k, u)| k == 2
        && matches!(u, Unreachable::OtherPiece { piece, depot_piece } if piece.0 == 1 && depot_piece.0 == 0)));
    assert!(travel.hours(0, 2).is_infinite() && travel.hours(2, 0).is_infinite());
    // Stop 3 is 900 m south of row 0 (minus its jitter): beyond the 500 m walk limit.
    let far: Vec<usize> = travel.far_from_road.iter().map(|f| f.0).collect();
    assert_eq!(far, vec![3]);
    assert!(travel.far_from_road[0].1 > 890.0);
}

#[test]
fn a_layer_without_crs_and_a_missing_named_field_are_input_errors() {
    let dir = tempfile::tempdir().unwrap();
    let roads = vec![road(vec![(X0, Y0), (X0 + 100.0, Y0)], "residential")];
    let shp = write_layer(dir.path(), "nocrs.shp", "ESRI Shapefile", &roads, false);
    let err = read_roads(&shp, &crs(), &RoadFields::default()).unwrap_err();
    assert_eq!(err.exit_code(), 2);
    assert!(err.to_string().contains("nocrs.shp"), "{err}");
    assert!(err.to_string().contains("no coordinate reference system"));
    assert!(err.hint().unwrap().contains("-a_srs"));

    let gpkg = write_layer(dir.path(), "ok.gpkg", "GPKG", &roads, true);
    let mut fields = RoadFields {
        class: "FCLASS".into(),
        ..RoadFields::default()
    };
    fields.named.class = true;
    let err = read_roads(&gpkg, &crs(), &fields).unwrap_err();
    assert_eq!(err.exit_code(), 2);
    assert!(err.to_string().contains("no field `FCLASS`"), "{err}");
    assert!(err.to_string().contains("highway"), "{err}");
}

#[test]
fn an_openstreetmap_extract_read_through_gdal_matches_networkx() {
    // A hand-made extract around 75.5 W 40.0 N (UTM zone 18N), written by pyosmium: a 4 x 3
    // block of ways with a one-way (`yes`), a reverse one-way (`-1`), a primary with its own
    // `maxspeed=50`, a track, a footway (not drivable) and an isolated way.
    let dir = tempfile::tempdir().unwrap();
    let (lon0, lat0, step) = (-75.5, 40.0, 0.0012);
    let mut nodes = Vec::new();
    for r in 0..3 {
        for c in 0..4 {
            let id = 1 + r * 4 + c;
            nodes.push(json!([
                id,
                lon0 + c as f64 * step,
                lat0 + r as f64 * step * 0.8
            ]));
        }
    }
    nodes.push(json!([13, lon0 + 0.02, lat0]));
    nodes.push(json!([14, lon0 + 0.021, lat0 + 0.0005]));
    let ways = json!([
        [100, [1, 2, 3, 4], {"highway": "residential"}],
        [101, [5, 6, 7, 8], {"highway": "residential", "oneway": "yes"}],
        [102, [9, 10, 11, 12], {"highway": "primary", "maxspeed": "50"}],
        [103, [1, 5, 9], {"highway": "residential"}],
        [104, [4, 8, 12], {"highway": "residential", "oneway": "-1"}],
        [105, [2, 6], {"highway": "service"}],
        [106, [3, 7, 11], {"highway": "footway"}],
        [107, [6, 10], {"highway": "track"}],
        [108, [13, 14], {"highway": "unclassified"}],
    ]);
    let spec = dir.path().join("extract.json");
    std::fs::write(&spec, json!({"nodes": nodes, "ways": ways}).to_string()).unwrap();
    let pbf = dir.path().join("extract.osm.pbf");
    run(
        &python(),
        &[
            &script("make_osm.py"),
            spec.to_str().unwrap(),
            pbf.to_str().unwrap(),
        ],
    );
    let layer = read_roads(&pbf, &crs(), &RoadFields::default()).unwrap();
    assert_eq!(layer.driver, "OSM");
    assert_eq!(layer.layer_name, "lines");
    assert_eq!(layer.source_crs, "EPSG:4326");
    assert_eq!(layer.oneway, FieldSource::OtherTags("oneway".into()));
    assert_eq!(layer.segments.len(), 9);
    let primary = layer
        .segments
        .iter()
        .find(|s| s.class == "primary")
        .unwrap();
    assert_eq!(primary.speed_kmh, Some(50.0));
    let network = RoadNetwork::build(&layer.segments, &NetworkOptions::default()).unwrap();
    assert_eq!(network.stats.not_drivable.get("footway"), Some(&1));

    // Stops a few metres off the ways, in the working CRS.
    let lonlat = [
        (lon0 + 0.3 * step, lat0 + 0.00004),
        (lon0 + 2.6 * step, lat0 + 0.8 * step - 0.00005),
        (lon0 + 3.0 * step + 0.00006, lat0 + 1.4 * step),
        (lon0 + 1.5 * step, lat0 + 1.6 * step + 0.00003),
        (lon0 + 1.0 * step - 0.00005, lat0 + 1.2 * step),
        (lon0 + 0.0205, lat0 + 0.0003),
    ];
    let points = transform_points("EPSG:4326", &format!("EPSG:{EPSG}"), &lonlat).unwrap();
    let travel = network.travel(&points, 2).unwrap();
    // Outside reference: networkx on the same .osm.pbf read by GDAL's OSM driver in Python.
    let answer = reference(&pbf, Some("lines"), &points, osm_speeds());
    assert_same_as_networkx(&travel, &answer);
    // The contraction hierarchy (picked for many points on a large network) against the same
    // reference.
    let by_hierarchy = network
        .travel_by(&points, 2, TravelMethod::Hierarchy)
        .unwrap();
    assert_eq!(by_hierarchy.method, TravelMethod::Hierarchy);
    assert_same_as_networkx(&by_hierarchy, &answer);
    for (i, j) in [(0, 1), (1, 0), (2, 3), (3, 4), (4, 0)] {
        let line = network.path(&travel.snaps[i], &travel.snaps[j]).unwrap();
        let metres: f64 = line
            .windows(2)
            .map(|w| (w[1].0 - w[0].0).hypot(w[1].1 - w[0].1))
            .sum();
        assert!((metres / 1000.0 - travel.km(i, j)).abs() <= 1e-6 * travel.km(i, j));
    }
    assert_eq!(
        network.pieces.len() as u64,
        answer["components"].as_u64().unwrap()
    );
    assert!(
        travel
            .unreachable
            .iter()
            .any(|&(k, u)| k == 5 && matches!(u, Unreachable::OtherPiece { .. }))
    );
}

#[test]
fn default_speeds_are_the_stated_ones() {
    // The module doc's table (common practice, from memory), as the reference is given it.
    use hostcut::input::roads::RoadSegment;
    let table = SpeedTable::osm_defaults();
    let speed = |class: &str, own: Option<f64>| {
        table.speed(&RoadSegment {
            points: vec![],
            class: class.into(),
            oneway: OneWay::Both,
            speed_kmh: own,
            feature: 1,
        })
    };
    for (class, kmh) in osm_speeds().as_object().unwrap() {
        assert_eq!(speed(class, None), kmh.as_f64(), "{class}");
    }
    assert_eq!(speed("motorway", None), Some(100.0));
    assert_eq!(speed("some_county_code", None), Some(30.0));
    assert_eq!(speed("residential", Some(40.0)), Some(40.0));
    assert_eq!(speed("footway", Some(40.0)), None);
}

#[test]
fn the_bench_routine_runs_on_a_small_grid() {
    // Not a timing: the benchmark routine itself works (examples/road_bench.rs times it).
    let b = bench_grid(30, 0, 20, 2, None).unwrap();
    assert_eq!(b.nodes, 900);
    assert_eq!(b.road_pieces, 2 * 30 * 29);
    // The 4 corners join just two streets and are passed through: 896 graph nodes, and each
    // corner's two pieces are one two-way arc pair.
    assert_eq!(b.graph_nodes, 896);
    assert_eq!(b.arcs, 2 * (b.road_pieces - 4));
    // 20 stops of 1.5 h of work need at least 4 days of 8 hours, whichever travel is used.
    assert!(b.road_days >= 4 && b.straight_days >= 4);
    assert!(b.road_tour_hours > 0.0 && b.straight_tour_hours > 0.0);
}
