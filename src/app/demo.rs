//! The demo landscape: an invented county ("Hollin County", fictional) with tree-of-heaven
//! clumps, parcels with access and herbicide rules, a rail line, a highway, a few detections,
//! a stand inventory and a scenario file. Deterministic: the same files every time
//! (`hostcut make-demo-inputs DIR`; `demo-inputs/` in the repository was made this way).
//!
//! # Units
//! EPSG:32618 (UTM zone 18N), metres; 20 m cells; densities in stems per hectare.

use std::fmt::Write as _;
use std::path::Path;

use geo::{LineString, MultiPolygon, Point, Polygon};

use crate::core::error::{Error, Result};
use crate::core::progress::Bars;
use crate::input::gis::{self, Crs, Property};

pub use crate::core::rng::SplitMix;

const X0: f64 = 500_000.0;
const Y0: f64 = 4_470_000.0;
const CELL: f64 = 20.0;
const WIDTH: usize = 300; // 6 km
const HEIGHT: usize = 200; // 4 km

/// The rail line and the highway, as (x, y) vertices.
fn rail() -> Vec<(f64, f64)> {
    vec![
        (X0, Y0 + 3_400.0),
        (X0 + 1_800.0, Y0 + 2_700.0),
        (X0 + 3_600.0, Y0 + 2_300.0),
        (X0 + 6_000.0, Y0 + 1_200.0),
    ]
}
fn highway() -> Vec<(f64, f64)> {
    vec![
        (X0 + 2_200.0, Y0),
        (X0 + 2_500.0, Y0 + 1_600.0),
        (X0 + 2_900.0, Y0 + 4_000.0),
    ]
}

/// Hollin Run, a stream crossing the county from north to south (invented).
fn stream() -> Vec<(f64, f64)> {
    vec![
        (X0 + 4_000.0, Y0 + 4_000.0),
        (X0 + 3_700.0, Y0 + 3_000.0),
        (X0 + 3_600.0, Y0 + 2_500.0),
        (X0 + 3_900.0, Y0 + 2_100.0),
        (X0 + 4_500.0, Y0 + 1_300.0),
        (X0 + 4_300.0, Y0),
    ]
}

/// Where two segments a–b and c–d cross (strictly inside both), if they do.
fn crossing(a: (f64, f64), b: (f64, f64), c: (f64, f64), d: (f64, f64)) -> Option<(f64, f64, f64)> {
    let (rx, ry) = (b.0 - a.0, b.1 - a.1);
    let (sx, sy) = (d.0 - c.0, d.1 - c.1);
    let denominator = rx * sy - ry * sx;
    if denominator.abs() < 1e-12 {
        return None;
    }
    let t = ((c.0 - a.0) * sy - (c.1 - a.1) * sx) / denominator;
    let u = ((c.0 - a.0) * ry - (c.1 - a.1) * rx) / denominator;
    (t > 1e-9 && t < 1.0 - 1e-9 && u > 1e-9 && u < 1.0 - 1e-9).then_some((
        a.0 + t * rx,
        a.1 + t * ry,
        t,
    ))
}

fn crosses(a: (f64, f64), b: (f64, f64), line: &[(f64, f64)]) -> bool {
    line.windows(2)
        .any(|w| crossing(a, b, w[0], w[1]).is_some())
}

/// Inside the reservoir (the host raster's nodata ellipse).
fn in_reservoir(p: (f64, f64)) -> bool {
    ((p.0 - (X0 + 4_700.0)) / 500.0).powi(2) + ((p.1 - (Y0 + 700.0)) / 300.0).powi(2) < 1.0
}

/// One road of the demo layer: vertices, OpenStreetMap class, name, one-way value.
pub struct DemoRoad {
    pub points: Vec<(f64, f64)>,
    pub class: &'static str,
    pub name: String,
    pub oneway: &'static str,
}

/// The demo's road layer (invented): township roads every 500 m east–west and concession roads
/// every 500 m north–south, Route 17 (the highway corridor) as a primary road, all meeting at
/// shared vertices where they cross. Hollin Run is crossed by one bridge only, on Mill Road (y =
/// 1,750 m): every other road ends before the stream, and roads stop at the reservoir's shore.
/// Concession 6 (x = 2,750 m) is one-way northbound north of Township Road 6.
pub fn roads() -> Vec<DemoRoad> {
    let mut roads: Vec<DemoRoad> = Vec::new();
    for k in 0..8 {
        let y = Y0 + 250.0 + 500.0 * k as f64;
        let mill = k == 3;
        roads.push(DemoRoad {
            points: vec![(X0, y), (X0 + 6_000.0, y)],
            class: if mill { "secondary" } else { "tertiary" },
            name: if mill {
                "Mill Road".to_string()
            } else {
                format!("Township Road {}", k + 1)
            },
            oneway: "no",
        });
    }
    for k in 0..12 {
        let x = X0 + 250.0 + 500.0 * k as f64;
        roads.push(DemoRoad {
            points: vec![(x, Y0), (x, Y0 + 4_000.0)],
            class: "residential",
            name: format!("Concession {}", k + 1),
            oneway: "no",
        });
    }
    roads.push(DemoRoad {
        points: highway(),
        class: "primary",
        name: "Route 17".to_string(),
        oneway: "no",
    });
    // Every crossing becomes a vertex of both roads.
    let lines: Vec<Vec<(f64, f64)>> = roads.iter().map(|r| r.points.clone()).collect();
    for (i, road) in roads.iter_mut().enumerate() {
        let mut points = Vec::new();
        for w in lines[i].windows(2) {
            let mut on: Vec<(f64, f64, f64)> = Vec::new();
            for (j, other) in lines.iter().enumerate() {
                if j == i {
                    continue;
                }
                on.extend(
                    other
                        .windows(2)
                        .filter_map(|v| crossing(w[0], w[1], v[0], v[1])),
                );
            }
            on.sort_by(|a, b| a.2.total_cmp(&b.2));
            points.push(w[0]);
            points.extend(on.iter().map(|&(x, y, _)| (x, y)));
        }
        points.extend(lines[i].last().copied());
        road.points = points;
    }
    // Cut the pieces that would cross Hollin Run (but Mill Road's bridge) or the reservoir;
    // Concession 6 is two pieces, one-way north of Township Road 6.
    let mut out: Vec<DemoRoad> = Vec::new();
    for road in &roads {
        let bridge = road.name == "Mill Road";
        let split_at = (road.name == "Concession 6").then_some(Y0 + 2_750.0);
        let mut piece: Vec<(f64, f64)> = Vec::new();
        let mut flush = |piece: &mut Vec<(f64, f64)>| {
            if piece.len() >= 2 {
                let one_way = split_at.is_some_and(|y| piece[0].1 >= y - 1e-6);
                out.push(DemoRoad {
                    points: std::mem::take(piece),
                    class: road.class,
                    name: road.name.clone(),
                    oneway: if one_way { "yes" } else { road.oneway },
                });
            }
            piece.clear();
        };
        for w in road.points.windows(2) {
            let mid = ((w[0].0 + w[1].0) / 2.0, (w[0].1 + w[1].1) / 2.0);
            let blocked = (!bridge && crosses(w[0], w[1], &stream()))
                || in_reservoir(w[0])
                || in_reservoir(w[1])
                || in_reservoir(mid);
            if blocked {
                flush(&mut piece);
                continue;
            }
            if split_at.is_some_and(|y| (w[0].1 - y).abs() < 1e-6) {
                flush(&mut piece);
            }
            if piece.is_empty() {
                piece.push(w[0]);
            }
            piece.push(w[1]);
        }
        flush(&mut piece);
    }
    out
}

/// Sensitive sites (invented): a primary school and a public well.
fn sensitive_sites() -> Vec<((f64, f64), &'static str)> {
    vec![
        ((X0 + 950.0, Y0 + 3_240.0), "Hollin Primary School"),
        ((X0 + 2_600.0, Y0 + 1_500.0), "Township well no. 2"),
    ]
}

fn distance_to_polyline(p: (f64, f64), line: &[(f64, f64)]) -> f64 {
    line.windows(2)
        .map(|w| {
            let (a, b) = (w[0], w[1]);
            let (dx, dy) = (b.0 - a.0, b.1 - a.1);
            let t = (((p.0 - a.0) * dx + (p.1 - a.1) * dy) / (dx * dx + dy * dy)).clamp(0.0, 1.0);
            ((p.0 - a.0 - t * dx).powi(2) + (p.1 - a.1 - t * dy).powi(2)).sqrt()
        })
        .fold(f64::INFINITY, f64::min)
}

/// Host density in stems/ha, row-major, -9999 = nodata (a reservoir).
pub fn host_raster() -> Vec<f32> {
    let mut rng = SplitMix::new(20_261_202);
    // Clumps: more of them, and denser, near the rail line and the highway (disturbed edges).
    let mut clumps = Vec::new();
    while clumps.len() < 24 {
        let (x, y) = (
            rng.range(X0 + 200.0, X0 + 5_800.0),
            rng.range(Y0 + 200.0, Y0 + 3_800.0),
        );
        let near =
            distance_to_polyline((x, y), &rail()).min(distance_to_polyline((x, y), &highway()));
        if near > 900.0 && rng.unit() < 0.55 {
            continue;
        }
        let radius = rng.range(40.0, 130.0);
        let peak = rng.range(150.0, 900.0) * if near < 400.0 { 1.6 } else { 1.0 };
        clumps.push((x, y, radius, peak));
    }
    let mut values = vec![0f32; WIDTH * HEIGHT];
    for row in 0..HEIGHT {
        for col in 0..WIDTH {
            let (x, y) = (
                X0 + (col as f64 + 0.5) * CELL,
                Y0 + HEIGHT as f64 * CELL - (row as f64 + 0.5) * CELL,
            );
            // The reservoir (nodata) in the south-east.
            if ((x - (X0 + 4_700.0)) / 500.0).powi(2) + ((y - (Y0 + 700.0)) / 300.0).powi(2) < 1.0 {
                values[row * WIDTH + col] = -9999.0;
                continue;
            }
            let mut d = 0.0;
            for &(cx, cy, r, peak) in &clumps {
                let q = ((x - cx).powi(2) + (y - cy).powi(2)) / (r * r);
                if q < 9.0 {
                    d += peak * (-q).exp();
                }
            }
            values[row * WIDTH + col] = if d >= 1.0 { d.round() as f32 } else { 0.0 };
        }
    }
    values
}

/// Parcels: a 6 x 4 grid of 1 km squares with invented owners and rules.
fn parcels() -> Vec<(MultiPolygon<f64>, Vec<Property>)> {
    let mut out = Vec::new();
    let owners = [
        (
            "Hollin County Parks",
            "open",
            "allowed",
            1.0,
            "Parks office 555-0110",
        ),
        (
            "Valley & Northern Railroad",
            "permission",
            "allowed",
            1.2,
            "Right-of-way desk 555-0141",
        ),
        (
            "Private farm",
            "permission",
            "allowed",
            1.1,
            "the owner on file, 555-0123",
        ),
        (
            "Millbrook School District",
            "open",
            "restricted",
            1.3,
            "Facilities 555-0177",
        ),
        (
            "Hollin Water Authority",
            "open",
            "prohibited",
            1.2,
            "Watershed office 555-0190",
        ),
        ("Private woodlot", "denied", "allowed", 1.0, ""),
        (
            "State Forest tract",
            "open",
            "allowed",
            0.9,
            "District forester 555-0102",
        ),
    ];
    let layout = [
        [0, 2, 6, 1, 2, 0],
        [2, 1, 1, 0, 5, 2],
        [1, 0, 3, 2, 6, 4],
        [6, 2, 0, 5, 4, 4],
    ];
    for (r, row) in layout.iter().enumerate() {
        for (c, &k) in row.iter().enumerate() {
            let (x, y) = (X0 + c as f64 * 1_000.0, Y0 + (3 - r) as f64 * 1_000.0);
            let ring = LineString::from(vec![
                (x, y),
                (x + 1_000.0, y),
                (x + 1_000.0, y + 1_000.0),
                (x, y + 1_000.0),
                (x, y),
            ]);
            let (owner, access, herbicide, cost, contact) = owners[k];
            out.push((
                MultiPolygon(vec![Polygon::new(ring, vec![])]),
                vec![
                    Property::Text(format!("HC-{}{}", (b'A' + r as u8) as char, c + 1)),
                    Property::Text(owner.into()),
                    Property::Text(access.into()),
                    Property::Text(herbicide.into()),
                    Property::Number(cost),
                    Property::Text(contact.into()),
                ],
            ));
        }
    }
    out
}

fn detections() -> Vec<(f64, f64)> {
    vec![
        (X0 + 900.0, Y0 + 3_050.0),
        (X0 + 3_300.0, Y0 + 2_450.0),
        (X0 + 2_450.0, Y0 + 1_300.0),
        (X0 + 5_100.0, Y0 + 1_700.0),
    ]
}

/// Stand inventory CSV text (a separate, point-based survey of the same county), with the stems
/// of each stand by size class (seedlings, saplings, trees: the built-in catalogue's classes);
/// every tenth stand is counted only as `stems`, so the default mix is shown too.
pub fn inventory_csv() -> String {
    let mut rng = SplitMix::new(77);
    // A stream of its own for the class mix, so the other columns stay as they were.
    let mut mix = SplitMix::new(78);
    let mut t =
        String::from("id,x,y,stems,seedlings,saplings,trees,access,herbicide,cost_factor\n");
    for k in 0..40 {
        let (x, y) = (
            rng.range(X0 + 100.0, X0 + 5_900.0),
            rng.range(Y0 + 100.0, Y0 + 3_900.0),
        );
        let stems = (rng.range(5.0, 400.0)).round();
        let access = ["open", "open", "open", "permission", "denied"][(rng.unit() * 5.0) as usize];
        let herbicide = ["allowed", "allowed", "allowed", "restricted", "prohibited"]
            [(rng.unit() * 5.0) as usize];
        let cost = [1.0, 1.0, 1.1, 1.25][(rng.unit() * 4.0) as usize];
        // A few seed trees, more saplings, a carpet of suckers (invented shares).
        let trees = (stems * mix.range(0.0, 0.2)).round();
        let saplings = (stems * mix.range(0.1, 0.5)).round();
        let seedlings = stems - trees - saplings;
        let classes = if k % 10 == 9 {
            ",,".to_string()
        } else {
            format!("{seedlings},{saplings},{trees}")
        };
        let _ = writeln!(
            t,
            "HS-{:03},{x:.1},{y:.1},{stems},{classes},{access},{herbicide},{cost}",
            k + 1
        );
    }
    t
}

/// The demo scenario (paths relative to the scenario file).
pub const SCENARIO: &str = r#"# Demo scenario for the invented Hollin County. Paths are relative to this file.
[host]
path = "host.tif"
min_density = 20.0
min_patch_ha = 0.2
max_patch_ha = 6.0
connectivity = 8

[access]
path = "parcels.gpkg"
parcel_field = "parcel_id"
access_field = "access"
herbicide_field = "herbicide"
cost_factor_field = "cost_factor"
contact_field = "contact"

[[corridor]]
path = "rail.gpkg"
name = "Valley & Northern Railroad"
weight = 3.0
buffer_m = 500.0

[[corridor]]
path = "highway.gpkg"
name = "Route 17"
weight = 2.0
buffer_m = 300.0

[detections]
path = "detections.gpkg"
weight = 1.0

[[water]]
path = "water.gpkg"
buffer_m = 15.0
name_field = "name"

[[sensitive]]
path = "sensitive.gpkg"
buffer_m = 30.0
name_field = "name"

[model]
kernel = "exp"
alpha_m = 200.0
epsilon = 0.001

[plan]
budget = 30000.0

[solver]
# Prescriptions by size class give the optimiser about 7 choices per patch (753 here, was
# about 4): the search needs about 10 s on an idle 2-core machine and 3 times that on a busy
# one; 90 s lets it end at its gap either way, so the demo's plan does not depend on the load.
time_limit_s = 90.0
gap = 0.0001
"#;

/// Write every demo input into `dir` (created if needed).
pub fn write_inputs(dir: &Path) -> Result<()> {
    std::fs::create_dir_all(dir).map_err(|e| Error::io("create", dir, e))?;
    let crs = Crs::parse("EPSG:32618", "demo CRS")?;
    let transform = [X0, CELL, 0.0, Y0 + HEIGHT as f64 * CELL, 0.0, -CELL];
    gis::write_geotiff(
        &dir.join("host.tif"),
        &crs,
        WIDTH,
        HEIGHT,
        transform,
        &host_raster(),
    )?;
    let fields = [
        ("parcel_id", Property::Text(String::new())),
        ("owner", Property::Text(String::new())),
        ("access", Property::Text(String::new())),
        ("herbicide", Property::Text(String::new())),
        ("cost_factor", Property::Number(0.0)),
        ("contact", Property::Text(String::new())),
    ];
    let parcels: Vec<_> = parcels()
        .into_iter()
        .map(|(g, p)| (geo::Geometry::MultiPolygon(g), p))
        .collect();
    gis::write_vector(
        &dir.join("parcels.gpkg"),
        "GPKG",
        "parcels",
        &crs,
        &fields,
        &parcels,
    )?;
    let name = [("name", Property::Text(String::new()))];
    let line = |v: Vec<(f64, f64)>| geo::Geometry::LineString(LineString::from(v));
    gis::write_vector(
        &dir.join("rail.gpkg"),
        "GPKG",
        "rail",
        &crs,
        &name,
        &[(
            line(rail()),
            vec![Property::Text("Valley & Northern Railroad".into())],
        )],
    )?;
    gis::write_vector(
        &dir.join("highway.gpkg"),
        "GPKG",
        "highway",
        &crs,
        &name,
        &[(line(highway()), vec![Property::Text("Route 17".into())])],
    )?;
    let road_fields = [
        ("highway", Property::Text(String::new())),
        ("name", Property::Text(String::new())),
        ("oneway", Property::Text(String::new())),
    ];
    let road_features: Vec<_> = roads()
        .into_iter()
        .map(|r| {
            (
                line(r.points),
                vec![
                    Property::Text(r.class.into()),
                    Property::Text(r.name),
                    Property::Text(r.oneway.into()),
                ],
            )
        })
        .collect();
    gis::write_vector(
        &dir.join("roads.gpkg"),
        "GPKG",
        "roads",
        &crs,
        &road_fields,
        &road_features,
    )?;
    gis::write_vector(
        &dir.join("water.gpkg"),
        "GPKG",
        "water",
        &crs,
        &name,
        &[(line(stream()), vec![Property::Text("Hollin Run".into())])],
    )?;
    let sites: Vec<_> = sensitive_sites()
        .into_iter()
        .map(|((x, y), n)| {
            (
                geo::Geometry::Point(Point::new(x, y)),
                vec![Property::Text(n.into())],
            )
        })
        .collect();
    gis::write_vector(
        &dir.join("sensitive.gpkg"),
        "GPKG",
        "sensitive",
        &crs,
        &name,
        &sites,
    )?;
    let fields = [("year", Property::Integer(0))];
    let points: Vec<_> = detections()
        .into_iter()
        .map(|(x, y)| {
            (
                geo::Geometry::Point(Point::new(x, y)),
                vec![Property::Integer(2026)],
            )
        })
        .collect();
    gis::write_vector(
        &dir.join("detections.gpkg"),
        "GPKG",
        "detections",
        &crs,
        &fields,
        &points,
    )?;
    let write = |name: &str, text: &str| {
        let p = dir.join(name);
        std::fs::write(&p, text).map_err(|e| Error::io("write", &p, e))
    };
    write("stands.csv", &inventory_csv())?;
    write("scenario.toml", SCENARIO)?;
    write("surveys.csv", &surveys_csv(dir)?)?;
    write(
        "README.md",
        "# Demo inputs (invented)\n\nHollin County does not exist. Every value here is made up by `hostcut make-demo-inputs` \
         (src/demo.rs), deterministically; remake with `cargo run --release -- make-demo-inputs demo-inputs`.\n\n\
         - host.tif: tree-of-heaven stems per hectare, 20 m cells, EPSG:32618, nodata = -9999 (a reservoir)\n\
         - parcels.gpkg: 24 parcels with access (open/permission/denied), herbicide (allowed/restricted/prohibited), cost_factor, contact\n\
         - rail.gpkg, highway.gpkg: transport corridors\n\
         - roads.gpkg: the county's roads (layer `roads`: `highway` class, `name`, `oneway`), township roads every 500 m east-west, concessions every 500 m north-south, Route 17; Hollin Run is crossed only by the Mill Road bridge (use with `hostcut orders --roads`; the county yard is at 501250,4471750)\n\
         - water.gpkg: Hollin Run, a stream (patches within 15 m get only methods the catalogue allows near water)\n\
         - sensitive.gpkg: a school and a public well (patches within 30 m are restricted sites)\n\
         - detections.gpkg: known lanternfly populations\n\
         - stands.csv: a point stand inventory of the same county, stems by size class (seedlings, saplings, trees; every tenth stand counted only as stems) (use with `--inventory stands.csv --crs EPSG:32618`)\n\
         - scenario.toml: the demo plan's settings\n\
         - surveys.csv: eight invented seasons of lanternfly surveys (2018-2025), simulated by the tool's own model with exp kernel, alpha 200 m, colonisation 0.5, extinction 0.25, introduction 0.05 (use with `hostcut calibrate --surveys`)\n",
    )?;
    Ok(())
}

/// Invented survey history for the demo: the tool's own simulator run on the demo landscape
/// with known parameters (exp kernel, alpha 200 m), about 60 % of patches visited each year, a
/// few visits outside the county for the unassigned list.
fn surveys_csv(dir: &Path) -> Result<String> {
    use crate::model::simulate::{self, Params};
    let scenario = crate::core::scenario::parse_scenario(SCENARIO, "demo scenario", dir)?;
    // Silent: the demo's plan, run next on the same inputs, says their notes.
    let prepared =
        crate::planning::prepare::prepare_noting(&scenario, &|_| {}, &|_| {}, Bars::Hidden)?;
    let landscape = prepared.landscape();
    let truth = Params {
        extinction: 0.25,
        colonisation: 0.5,
        introduction: 0.05,
        ..Params::default()
    };
    let n = landscape.share.len();
    let history = simulate::history(&landscape, &truth, 7, 2018, 0, &vec![1.0; n]);
    let mut r = SplitMix::new(2018);
    let mut out = String::from("x,y,year,result,date,source\n");
    for (t, year) in history.iter().enumerate() {
        for (i, &occupied) in year.iter().enumerate() {
            if r.unit() >= 0.6 {
                continue;
            }
            let p = &prepared.patches.items[i];
            let _ = writeln!(
                out,
                "{:.1},{:.1},{},{},{}-08-{:02},{}",
                p.x + r.range(-5.0, 5.0),
                p.y + r.range(-5.0, 5.0),
                2018 + t,
                if occupied { "positive" } else { "negative" },
                2018 + t,
                1 + (r.unit() * 28.0) as u32,
                if i % 3 == 0 {
                    "state survey"
                } else {
                    "county parks crew"
                }
            );
        }
    }
    for k in 0..4 {
        let _ = writeln!(
            out,
            "{:.1},{:.1},{},negative,{}-09-01,state survey",
            X0 - 3000.0 - 500.0 * k as f64,
            Y0 + 1000.0,
            2020 + k,
            2020 + k
        );
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_landscape_is_deterministic() {
        assert_eq!(host_raster(), host_raster());
        assert_eq!(inventory_csv(), inventory_csv());
    }
}
