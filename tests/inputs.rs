//! Inputs as people hold them: an inventory in lon/lat or in a state-plane CRS in US survey
//! feet, a bare EPSG number, and parcel/contact columns that reach the crews and next season.
//!
//! Reference for every coordinate conversion: PROJ, through GDAL's `gdaltransform` command-line
//! tool (run here on the same points), not the code under test.

mod common;

use std::path::Path;
use std::process::Command;

use common::*;

/// The stands in UTM zone 18N (EPSG:32618), metres: a fictional Hollin County cluster.
const STANDS: &[(&str, f64, f64, f64, &str, &str)] = &[
    ("A", 500000.0, 4480000.0, 300.0, "open", "allowed"),
    ("B", 500150.0, 4480050.0, 180.0, "permission", "allowed"),
    ("C", 500400.0, 4480000.0, 220.0, "open", "restricted"),
    ("D", 500600.0, 4480200.0, 90.0, "open", "prohibited"),
    ("E", 501800.0, 4481100.0, 140.0, "open", "allowed"),
];

/// Points converted by PROJ (`gdaltransform -s_srs FROM -t_srs TO -output_xy`), the reference.
fn gdaltransform(from: &str, to: &str, points: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let input: String = points.iter().map(|(x, y)| format!("{x} {y}\n")).collect();
    let mut child = Command::new("gdaltransform")
        .args(["-s_srs", from, "-t_srs", to, "-output_xy"])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .expect("gdaltransform (GDAL's command-line tools) on PATH");
    use std::io::Write;
    child
        .stdin
        .take()
        .unwrap()
        .write_all(input.as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    assert!(out.status.success());
    String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| {
            let v: Vec<f64> = l.split_whitespace().map(|t| t.parse().unwrap()).collect();
            (v[0], v[1])
        })
        .collect()
}

fn utm_points() -> Vec<(f64, f64)> {
    STANDS.iter().map(|s| (s.1, s.2)).collect()
}

/// An inventory of [`STANDS`] at `points` (full precision), with extra columns.
fn inventory(dir: &Path, name: &str, points: &[(f64, f64)]) {
    let mut csv = String::from("id,x,y,stems,access,herbicide\n");
    for (s, (x, y)) in STANDS.iter().zip(points) {
        csv.push_str(&format!(
            "{},{x:.10},{y:.10},{},{},{}\n",
            s.0, s.3, s.4, s.5
        ));
    }
    write(dir, name, &csv);
}

fn plan(dir: &Path, inventory: &str, crs: &str, out: &str) -> std::process::Output {
    let o = run(
        dir,
        &[
            "plan",
            "--inventory",
            inventory,
            "--crs",
            crs,
            "--budget",
            "3000",
            "--out",
            out,
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    o
}

/// plan.csv's decision columns must be equal; x, y within `tolerance_m` metres.
fn same_plan(a: &Path, b: &Path, tolerance_m: f64) {
    let (ta, tb) = (
        Table::read(&a.join("plan.csv")),
        Table::read(&b.join("plan.csv")),
    );
    assert_eq!(ta.len(), tb.len(), "number of treated patches");
    assert!(!ta.is_empty());
    for (ra, rb) in ta.rows.iter().zip(&tb.rows) {
        for column in [
            "priority",
            "patch_id",
            "method",
            "stems",
            "cost",
            "crew_hours",
            "cautions",
        ] {
            assert_eq!(
                ra.get(column),
                rb.get(column),
                "{column} of {}",
                ra.get("patch_id")
            );
        }
        for column in ["x", "y"] {
            assert!(
                (ra.num(column) - rb.num(column)).abs() <= tolerance_m,
                "{column} of {}: {} vs {}",
                ra.get("patch_id"),
                ra.num(column),
                rb.num(column)
            );
        }
    }
}

#[test]
fn a_lon_lat_inventory_gives_the_same_plan_as_the_same_stands_in_utm() {
    let dir = tempfile::tempdir().unwrap();
    inventory(dir.path(), "utm.csv", &utm_points());
    let lonlat = gdaltransform("EPSG:32618", "EPSG:4326", &utm_points());
    inventory(dir.path(), "lonlat.csv", &lonlat);
    plan(dir.path(), "utm.csv", "EPSG:32618", "utm");
    let o = plan(dir.path(), "lonlat.csv", "EPSG:4326", "lonlat");
    same_plan(&dir.path().join("utm"), &dir.path().join("lonlat"), 0.01);
    // Every output says which work CRS was used.
    assert!(stdout(&o).contains("work CRS EPSG:32618"), "{}", stdout(&o));
    let s = summary(&dir.path().join("lonlat"));
    assert_eq!(s["crs"], "EPSG:32618");
    let notes = s["crs_conversion"].to_string();
    assert!(
        notes.contains("EPSG:4326") && notes.contains("UTM zone"),
        "{notes}"
    );
    let resolved =
        std::fs::read_to_string(dir.path().join("lonlat/scenario.resolved.toml")).unwrap();
    assert!(resolved.contains("work_crs = \"EPSG:32618\""), "{resolved}");
    // OGC's CRS84 (lon/lat order by definition) reads the same, and `--work-crs` overrides the zone.
    plan(dir.path(), "lonlat.csv", "CRS84", "crs84");
    same_plan(&dir.path().join("utm"), &dir.path().join("crs84"), 0.01);
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "lonlat.csv",
            "--crs",
            "EPSG:4326",
            "--work-crs",
            "EPSG:32617",
            "--budget",
            "3000",
            "--out",
            "zone17",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(summary(&dir.path().join("zone17"))["crs"], "EPSG:32617");
}

#[test]
fn a_state_plane_inventory_in_us_survey_feet_gives_the_same_plan_as_its_metre_form() {
    let dir = tempfile::tempdir().unwrap();
    // EPSG:2272 is NAD83 / Pennsylvania South (ftUS); EPSG:32129 the same projection in metres.
    let feet = gdaltransform("EPSG:32618", "EPSG:2272", &utm_points());
    let metres = gdaltransform("EPSG:2272", "EPSG:32129", &feet);
    inventory(dir.path(), "feet.csv", &feet);
    inventory(dir.path(), "metres.csv", &metres);
    let o = plan(dir.path(), "feet.csv", "EPSG:2272", "feet");
    plan(dir.path(), "metres.csv", "EPSG:32129", "metres");
    same_plan(&dir.path().join("metres"), &dir.path().join("feet"), 0.01);
    // The tool's own conversion, checked point by point against PROJ's.
    let patches = Table::read(&dir.path().join("feet/patches.csv"));
    for (r, (x, y)) in patches.rows.iter().zip(&metres) {
        assert!(
            (r.num("x") - x).abs() <= 0.01 && (r.num("y") - y).abs() <= 0.01,
            "{}",
            r.get("patch_id")
        );
    }
    let s = summary(&dir.path().join("feet"));
    let notes = s["crs_conversion"].to_string();
    assert!(
        notes.contains("EPSG:2272") && notes.contains("US survey foot"),
        "{notes}"
    );
    assert!(
        s["crs"].as_str().unwrap().contains("+units=m"),
        "{}",
        s["crs"]
    );
    assert!(stdout(&o).contains("work CRS +proj=lcc"), "{}", stdout(&o));
}

#[test]
fn a_bare_epsg_number_is_accepted() {
    let dir = tempfile::tempdir().unwrap();
    inventory(dir.path(), "utm.csv", &utm_points());
    plan(dir.path(), "utm.csv", "32618", "bare");
    plan(dir.path(), "utm.csv", "EPSG:32618", "named");
    assert_eq!(summary(&dir.path().join("bare"))["crs"], "EPSG:32618");
    same_plan(&dir.path().join("bare"), &dir.path().join("named"), 0.0);
}

// Source: common practice (work orders name who to call before entering private land).
#[test]
fn parcel_and_contact_reach_orders_the_contract_and_next_seasons_inventory() {
    let dir = tempfile::tempdir().unwrap();
    let mut csv = String::from("id,x,y,stems,access,herbicide,parcel,contact\n");
    for s in STANDS {
        csv.push_str(&format!(
            "{},{},{},{},{},{},HC-{},\"Owner {}, 555-01{:02}\"\n",
            s.0,
            s.1,
            s.2,
            s.3,
            s.4,
            s.5,
            s.0,
            s.0,
            s.0.as_bytes()[0] - b'A'
        ));
    }
    write(dir.path(), "stands.csv", &csv);
    plan(dir.path(), "stands.csv", "EPSG:32618", "plan");
    let planned = Table::read(&dir.path().join("plan/plan.csv"));
    let b = planned
        .rows
        .iter()
        .find(|r| r.get("patch_id") == "B")
        .expect("B is treated");
    assert_eq!(b.get("parcel"), "HC-B");
    assert_eq!(b.get("contact"), "Owner B, 555-0101");
    assert!(
        b.get("site_notes")
            .contains("call Owner B, 555-0101 before entry")
    );
    let o = run(
        dir.path(),
        &[
            "orders",
            "--plan",
            "plan",
            "--out",
            "orders",
            "--start-date",
            "2027-07-05",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let orders = Table::read(&dir.path().join("orders/orders.csv"));
    let b = orders
        .rows
        .iter()
        .find(|r| r.get("patch_id") == "B")
        .unwrap();
    assert_eq!(b.get("parcel"), "HC-B");
    assert_eq!(b.get("contact"), "Owner B, 555-0101");
    let html = std::fs::read_to_string(dir.path().join("orders/report.html")).unwrap();
    assert!(html.contains("call Owner B, 555-0101 before entry"));
    let o = run(dir.path(), &["contract", "--plan", "plan", "--out", "con"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let scope = std::fs::read_to_string(dir.path().join("con/scope_of_work.md")).unwrap();
    assert!(
        scope.contains("Patch B (parcel HC-B): call Owner B, 555-0101 before entry."),
        "{scope}"
    );
    // Record nothing done: next season's inventory still knows every parcel and contact.
    let template = std::fs::read_to_string(dir.path().join("con/completion_template.csv")).unwrap();
    write(dir.path(), "done.csv", &template);
    let o = run(
        dir.path(),
        &[
            "record",
            "--plan",
            "plan",
            "--completed",
            "done.csv",
            "--out",
            "rec",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let next = Table::read(&dir.path().join("rec/inventory.next.csv"));
    assert_eq!(next.len(), STANDS.len());
    for r in &next.rows {
        assert_eq!(r.get("parcel"), format!("HC-{}", r.get("id")));
        assert!(
            r.get("contact")
                .starts_with(&format!("Owner {}", r.get("id")))
        );
    }
}

/// A square polygon feature in EPSG:32618 with an id and stems.
fn square(id: &str, x: f64, y: f64, side: f64, stems: f64) -> String {
    format!(
        r#"{{"type":"Feature","properties":{{"id":"{id}","stems":{stems}}},"geometry":{{"type":"Polygon","coordinates":[[[{x},{y}],[{x2},{y}],[{x2},{y2}],[{x},{y2}],[{x},{y}]]]}}}}"#,
        x2 = x + side,
        y2 = y + side
    )
}

// Source: common practice (a stand mapped once keeps its outline from season to season).
#[test]
fn outlines_and_corridor_names_are_carried_into_next_seasons_inventory() {
    let dir = tempfile::tempdir().unwrap();
    let features = [
        square("S1", 500000.0, 4480000.0, 60.0, 300.0),
        square("S2", 500300.0, 4480100.0, 40.0, 200.0),
        square("S3", 500900.0, 4480400.0, 50.0, 150.0),
    ];
    write(
        dir.path(),
        "stands.geojson",
        &format!(
            r#"{{"type":"FeatureCollection","crs":{{"type":"name","properties":{{"name":"urn:ogc:def:crs:EPSG::32618"}}}},"features":[{}]}}"#,
            features.join(",")
        ),
    );
    write(
        dir.path(),
        "rail.geojson",
        r#"{"type":"FeatureCollection","crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:EPSG::32618"}},"features":[{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[499900,4480030],[501000,4480030]]}}]}"#,
    );
    let o = run(
        dir.path(),
        &[
            "plan",
            "--host",
            "stands.geojson",
            "--id-field",
            "id",
            "--corridor",
            "rail.geojson",
            "--budget",
            "2000",
            "--out",
            "plan",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        run(dir.path(), &["contract", "--plan", "plan", "--out", "con"])
            .status
            .success()
    );
    // Printed areas in acres on request: 1 ac = 0.40468564224 ha (NIST Handbook 44, Appendix C).
    let o = run(
        dir.path(),
        &[
            "contract",
            "--plan",
            "plan",
            "--out",
            "con_ac",
            "--area-units",
            "ac",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let (ha, ac) = (
        Table::read(&dir.path().join("con/bid_schedule.csv")),
        Table::read(&dir.path().join("con_ac/bid_schedule.csv")),
    );
    let (h, a) = (ha.rows[0].num("hectares"), ac.rows[0].num("acres"));
    assert!((a - h / 0.40468564224).abs() <= 0.006, "{h} ha vs {a} ac");
    let scope = std::fs::read_to_string(dir.path().join("con_ac/scope_of_work.md")).unwrap();
    assert!(scope.contains(" ac),"), "{scope}");
    let template = std::fs::read_to_string(dir.path().join("con/completion_template.csv")).unwrap();
    write(dir.path(), "done.csv", &template);
    let o = run(
        dir.path(),
        &[
            "record",
            "--plan",
            "plan",
            "--completed",
            "done.csv",
            "--out",
            "rec",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let next = Table::read(&dir.path().join("rec/inventory.next.csv"));
    assert_eq!(next.len(), 3);
    let planned = Table::read(&dir.path().join("plan/patches.csv"));
    let s1 = planned
        .rows
        .iter()
        .find(|r| r.get("patch_id") == "S1")
        .unwrap();
    assert!(!s1.get("corridors").is_empty(), "S1 lies on the rail line");
    for r in &next.rows {
        let p = planned
            .rows
            .iter()
            .find(|p| p.get("patch_id") == r.get("id"))
            .unwrap();
        assert_eq!(r.get("corridors"), p.get("corridors"));
        assert!(
            r.get("outline").starts_with("MULTIPOLYGON") || r.get("outline").starts_with("POLYGON"),
            "{}",
            r.get("outline")
        );
    }
    // Next season's plan reads the outlines back: its plan.geojson has polygons of the same area.
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "rec/inventory.next.csv",
            "--crs",
            "32618",
            "--budget",
            "2000",
            "--out",
            "next",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let geojson = std::fs::read_to_string(dir.path().join("next/plan.geojson")).unwrap();
    assert_eq!(
        geojson.matches("\"Polygon\"").count() + geojson.matches("\"MultiPolygon\"").count(),
        3,
        "{geojson}"
    );
    let patches = Table::read(&dir.path().join("next/patches.csv"));
    let s1 = patches
        .rows
        .iter()
        .find(|r| r.get("patch_id") == "S1")
        .unwrap();
    assert!(
        (s1.num("area_ha") - 0.36).abs() < 1e-3,
        "{}",
        s1.num("area_ha")
    );
}

/// A size-class column one letter off (`saplngs`) was read as a column of the user's own and
/// its stems vanished from the plan without a word; it is refused with the likely name. Columns
/// of the user's own far from every name hostcut reads (`notes`, `species`) are still accepted.
#[test]
fn a_misspelt_size_class_column_is_refused_with_the_likely_name() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(
        d,
        "typo.csv",
        "id,x,y,seedlings,saplngs,trees\nA,500000,4480000,100,50,5\nB,500300,4480100,80,40,2\n",
    );
    let o = run(
        d,
        &[
            "plan",
            "--inventory",
            "typo.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "3000",
            "--out",
            "t",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("column `saplngs` is not one hostcut reads; did you mean `saplings`?"),
        "{}",
        stderr(&o)
    );
    write(
        d,
        "own.csv",
        "id,x,y,seedlings,saplings,trees,notes,species\nA,500000,4480000,100,50,5,by the fence,ailanthus\nB,500300,4480100,80,40,2,,ailanthus\n",
    );
    let o = run(
        d,
        &[
            "plan",
            "--inventory",
            "own.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "3000",
            "--out",
            "o",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
}
