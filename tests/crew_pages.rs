//! Crew pages a crew can use (issues 20 and 21): the day's work grouped by method with the caution
//! set of each method's product class, every crew-day on one printed page (checked by printing
//! to PDF in headless Chromium), the parts of a split patch cut into strips of their own
//! (areas checked with GDAL/OGR through Python's `osgeo`), and distances in feet and miles for
//! an inventory in a feet CRS.

mod common;

use std::path::Path;
use std::process::Command;

use common::*;

fn ok(o: &std::process::Output) {
    assert!(o.status.success(), "{}", stderr(o));
}

fn json(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// Count the pages of a PDF written by Chromium (page objects are not compressed there).
fn pdf_pages(pdf: &[u8]) -> usize {
    let needle = b"/Type /Page";
    pdf.windows(needle.len() + 1)
        .filter(|w| &w[..needle.len()] == needle && w[needle.len()] != b's')
        .count()
}

/// Eighty small stands close together (tests/orders.rs's small plan): full days of twelve
/// stops, the densest crew pages the default stop limit allows.
fn small_stands(dir: &Path) {
    let mut csv = String::from("id,x,y,stems,access,herbicide\n");
    for k in 0..80u64 {
        let h = k.wrapping_mul(2654435761) % 1_000_003;
        let access = if k % 5 == 0 { "permission" } else { "open" };
        let herbicide = if k % 9 == 4 { "prohibited" } else { "allowed" };
        csv.push_str(&format!(
            "T{k:03},{},{},{},{access},{herbicide}\n",
            500_000 + h % 3000,
            4_480_000 + (h / 3000) % 3000,
            5 + k % 26
        ));
    }
    write(dir, "small.csv", &csv);
}

fn plan_small(dir: &Path, out: &str, horizon: &str) {
    ok(&run(
        dir,
        &[
            "plan",
            "--inventory",
            "small.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "30000",
            "--horizon-years",
            horizon,
            "--out",
            out,
            "--quiet",
        ],
    ));
}

/// Print report.html to PDF and compare its pages with the sheets orders.json counts.
fn printed_pages_match(chromium: &Path, dir: &Path, out: &str) {
    let info = json(&dir.join(out).join("orders.json"));
    let sheets = info["report_overview_pages"].as_u64().unwrap() as usize
        + info["report_crew_day_pages"].as_u64().unwrap() as usize;
    let pdf = dir.join(out).join("report.pdf");
    let page = dir.join(out).join("report.html");
    let p = chromium_run(
        chromium,
        dir,
        &[
            format!("--print-to-pdf={}", pdf.display()),
            "--no-pdf-header-footer".into(),
        ],
        &page,
    );
    assert!(pdf.exists(), "no PDF: {}", stderr(&p));
    let pages = pdf_pages(&std::fs::read(&pdf).unwrap());
    assert_eq!(pages, sheets, "{out}: printed pages vs the report's sheets");
}

// Issue 21: "printed page count equals the schedule", on the densest days (twelve stops, the
// default limit, with ten-hour days), under the one-season and the ten-year objective (the
// horizon objective's prescriptions make longer pages). Reference: Chromium's own print layout.
#[test]
fn dense_crew_days_print_one_page_each_under_both_objectives() {
    let Some(chromium) = chromium() else {
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    small_stands(d);
    for horizon in ["1", "10"] {
        let plan = format!("plan{horizon}");
        plan_small(d, &plan, horizon);
        let out = format!("ord{horizon}");
        ok(&run(
            d,
            &[
                "orders",
                "--plan",
                &plan,
                "--out",
                &out,
                "--day-hours",
                "10",
                "--start-date",
                "2027-07-01",
                "--quiet",
            ],
        ));
        let orders = Table::read(&d.join(&out).join("orders.csv"));
        assert!(
            orders.rows.iter().any(|r| r.get("stop") == "12"),
            "{out}: a 12-stop day"
        );
        printed_pages_match(&chromium, d, &out);
    }
    // Denser still: every stop a restricted or no-herbicide site behind a landowner's permission,
    // with a long parcel name and a contact, so some days need continuation sheets.
    let mut csv =
        String::from("id,x,y,stems,seedlings,saplings,trees,access,herbicide,parcel,contact\n");
    for k in 0..80u64 {
        let h = k.wrapping_mul(2654435761) % 1_000_003;
        let herbicide = ["restricted", "prohibited", "allowed"][(k % 3) as usize];
        let (se, sa, tr) = (5 + k % 20, 3 + k % 7, k % 4);
        csv.push_str(&format!(
            "N{k:03},{},{},{},{se},{sa},{tr},permission,{herbicide},Parcel {k} Hollin Township Lot {},J. Landowner-Smithson 555-01{k:02}\n",
            500_000 + h % 3000,
            4_480_000 + (h / 3000) % 3000,
            se + sa + tr,
            k * 7
        ));
    }
    write(d, "nasty.csv", &csv);
    ok(&run(
        d,
        &[
            "plan",
            "--inventory",
            "nasty.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "30000",
            "--out",
            "nasty",
            "--quiet",
        ],
    ));
    ok(&run(
        d,
        &[
            "orders",
            "--plan",
            "nasty",
            "--out",
            "ord-nasty",
            "--day-hours",
            "10",
            "--start-date",
            "2027-07-01",
            "--quiet",
        ],
    ));
    let info = json(&d.join("ord-nasty/orders.json"));
    assert!(
        info["report_crew_day_pages"].as_u64() > info["crew_days"].as_u64(),
        "continuation sheets on the densest days"
    );
    let html = std::fs::read_to_string(d.join("ord-nasty/report.html")).unwrap();
    assert!(html.contains("continued (sheet 2)"));
    printed_pages_match(&chromium, d, "ord-nasty");
}

/// Stands of seed trees, saplings and seedlings (one of them a no-herbicide site) in one town.
const CLASSES: &str = "id,x,y,stems,seedlings,saplings,trees,access,herbicide\n\
    A,500000,4480000,160,100,50,10,open,allowed\n\
    B,500400,4480100,90,60,30,0,open,allowed\n\
    C,500200,4480500,120,120,0,0,open,prohibited\n\
    D,500700,4480300,45,0,30,15,open,allowed\n";

// Issue 20: "crew pages group by method with the right caution set". The stems each method gets
// on the page add up to the plan's prescription (plan.csv), a herbicide method carries the label
// cautions and a method without herbicide none of them, and the no-herbicide site is named under
// the method used there. Source of the caution sets: the catalogue (models/treatments.toml), its
// herbicide cautions from the extension guidance in the methods notes.
#[test]
fn crew_pages_group_the_days_work_by_method_with_its_cautions() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(d, "stands.csv", CLASSES);
    ok(&run(
        d,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "20000",
            "--out",
            "plan",
            "--quiet",
        ],
    ));
    ok(&run(
        d,
        &[
            "orders",
            "--plan",
            "plan",
            "--out",
            "orders",
            "--start-date",
            "2027-07-01",
            "--quiet",
        ],
    ));
    let html = std::fs::read_to_string(d.join("orders/report.html")).unwrap();
    let plan = Table::read(&d.join("plan/plan.csv"));
    assert!(!plan.rows.is_empty());
    // The plan's stems per method, from plan.csv's prescription (`class: method stems; ...`).
    let mut want: std::collections::BTreeMap<String, f64> = Default::default();
    for r in &plan.rows {
        for part in r.get("prescription").split("; ").filter(|p| !p.is_empty()) {
            let (_, rest) = part.split_once(": ").unwrap();
            let (method, n) = rest.rsplit_once(' ').unwrap();
            if method != "leave" {
                *want.entry(method.replace('_', " ")).or_default() += n.parse::<f64>().unwrap();
            }
        }
    }
    assert!(want.len() >= 2, "a mix of methods: {want:?}");
    let days: Vec<&str> = html.split("<section class=\"page day\"").skip(1).collect();
    let mut said: std::collections::BTreeMap<String, f64> = Default::default();
    for page in &days {
        let groups = page
            .split("<h3>By method</h3>")
            .nth(1)
            .expect("a By method section")
            .split("<h3>")
            .next()
            .unwrap();
        for g in groups.split("<p class=\"group\">").skip(1) {
            let name = g
                .strip_prefix("<b>")
                .and_then(|g| g.split_once("</b>"))
                .unwrap()
                .0;
            // "<b>stem injection</b> &mdash; stops 1&ndash;3 and 5: 14 trees, 3 saplings in all."
            let all = g.split_once(" in all.").unwrap().0;
            let all = all.rsplit_once(": ").unwrap().1;
            let n: f64 = all
                .split(", ")
                .map(|t| {
                    t.split(' ')
                        .next()
                        .unwrap()
                        .replace(',', "")
                        .parse::<f64>()
                        .unwrap()
                })
                .sum();
            *said.entry(name.to_string()).or_default() += n;
            let herbicide = g.contains("Apply per the product label");
            assert_eq!(herbicide, g.contains("[LABEL]"), "{name}: {g}");
            assert_eq!(!herbicide, g.contains("No herbicide"), "{name}: {g}");
            if !herbicide {
                assert!(!g.contains("[LICENCE]") && !g.contains("[DRIFT]"), "{g}");
            }
        }
    }
    assert_eq!(said, want, "stems by method on the crew pages vs plan.csv");
    // Stand C forbids herbicide: wherever it is, its method's group names the rule.
    if plan.rows.iter().any(|r| r.get("patch_id") == "C") {
        let page = days
            .iter()
            .find(|p| p.contains("NO HERBICIDE ON THIS SITE"))
            .expect("C's page");
        assert!(page.contains("NO-HERBICIDE SITE"), "{page}");
    }
}

/// One long stand, rotated, with enough stems for several days, and two small ones.
fn long_stand_plan(dir: &Path) {
    // A 400 m x 60 m parallelogram leaning north-east (its long axis about 30 degrees from east).
    let (x0, y0) = (500_000.0, 4_480_000.0);
    let (ux, uy) = (400.0 * 0.866, 400.0 * 0.5);
    let (vx, vy) = (-25.0, 60.0);
    let ring = [
        (x0, y0),
        (x0 + ux, y0 + uy),
        (x0 + ux + vx, y0 + uy + vy),
        (x0 + vx, y0 + vy),
        (x0, y0),
    ]
    .iter()
    .map(|(x, y)| format!("[{x},{y}]"))
    .collect::<Vec<_>>()
    .join(",");
    let square = |id: &str, x: f64, y: f64, stems: f64| {
        format!(
            r#"{{"type":"Feature","properties":{{"id":"{id}","stems":{stems}}},"geometry":{{"type":"Polygon","coordinates":[[[{x},{y}],[{x2},{y}],[{x2},{y2}],[{x},{y2}],[{x},{y}]]]}}}}"#,
            x2 = x + 40.0,
            y2 = y + 40.0
        )
    };
    let features = [
        format!(
            r#"{{"type":"Feature","properties":{{"id":"LONG","stems":3000}},"geometry":{{"type":"Polygon","coordinates":[[{ring}]]}}}}"#
        ),
        square("S1", 500600.0, 4479700.0, 120.0),
        square("S2", 499500.0, 4480300.0, 80.0),
    ];
    write(
        dir,
        "stands.geojson",
        &format!(
            r#"{{"type":"FeatureCollection","crs":{{"type":"name","properties":{{"name":"urn:ogc:def:crs:EPSG::32618"}}}},"features":[{}]}}"#,
            features.join(",")
        ),
    );
    ok(&run(
        dir,
        &[
            "plan",
            "--host",
            "stands.geojson",
            "--id-field",
            "id",
            "--budget",
            "100000",
            "--out",
            "plan",
            "--quiet",
        ],
    ));
}

/// Areas through GDAL/OGR (Python `osgeo`, the outside reference): the patch's polygon from
/// the input layer (stands.geojson, EPSG:32618 like the plan), each part's from orders.gpkg's `parts` layer, and the union of the parts.
const OGR_AREAS: &str = r#"
import json, sys
from osgeo import ogr
plan, gpkg, patch = sys.argv[1], sys.argv[2], sys.argv[3]
src = ogr.Open(plan)
whole = None
for f in src.GetLayer(0):
    if f.GetField("id") == patch:
        whole = f.GetGeometryRef().Clone()
ds = ogr.Open(gpkg)
lyr = ds.GetLayerByName("parts")
parts = []
union = None
for f in lyr:
    if f.GetField("patch_id") != patch:
        continue
    g = f.GetGeometryRef().Clone()
    parts.append({"part": f.GetField("part"), "parts": f.GetField("parts"), "day": f.GetField("day"),
                  "crew": f.GetField("crew"), "stems": f.GetField("stems"), "area": g.GetArea(),
                  "strip": f.GetField("strip")})
    union = g if union is None else union.Union(g)
print(json.dumps({"whole": whole.GetArea(), "union": union.GetArea() if union else 0.0,
                  "outside": union.Difference(whole).GetArea() if union else 0.0, "parts": parts}))
"#;

// Issue 21: "each part has its own outline ... drawn on the day's map and written to the
// GeoPackage". Reference for every area: GDAL/OGR through Python's osgeo bindings.
#[test]
fn parts_of_a_split_patch_are_strips_that_cover_it_in_proportion_to_their_work() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    long_stand_plan(d);
    ok(&run(
        d,
        &[
            "orders",
            "--plan",
            "plan",
            "--out",
            "orders",
            "--start-date",
            "2027-07-01",
            "--quiet",
        ],
    ));
    let orders = Table::read(&d.join("orders/orders.csv"));
    let long: Vec<_> = orders
        .rows
        .iter()
        .filter(|r| r.get("patch_id") == "LONG")
        .collect();
    let n = long.len();
    assert!(n >= 3, "LONG split over {n} days");
    let o = Command::new("/usr/bin/python3")
        .arg("-c")
        .arg(OGR_AREAS)
        .arg(d.join("stands.geojson"))
        .arg(d.join("orders/orders.gpkg"))
        .arg("LONG")
        .output()
        .expect("python3 with osgeo");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let a: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let whole = a["whole"].as_f64().unwrap();
    let parts = a["parts"].as_array().unwrap();
    assert_eq!(parts.len(), n, "one outline per part");
    let sum: f64 = parts.iter().map(|p| p["area"].as_f64().unwrap()).sum();
    // Cover: the union is the patch; no overlap: the parts' areas add up to their union; inside.
    let union = a["union"].as_f64().unwrap();
    // The plan's map (plan.geojson) keeps outlines in lon/lat: the round trip back to UTM moves
    // the area by about 1e-5 of it, hence 1e-4 here.
    assert!((union - whole).abs() <= 1e-4 * whole, "{union} vs {whole}");
    assert!(
        (sum - union).abs() <= 1e-6 * whole,
        "overlap: {sum} vs {union}"
    );
    assert!(a["outside"].as_f64().unwrap() <= 1e-4 * whole);
    // Areas in proportion to each part's work (orders.csv est_hours), within 0.1 % of the patch.
    let hours: f64 = long.iter().map(|r| r.num("est_hours")).sum();
    for p in parts {
        let k = p["part"].as_i64().unwrap();
        assert_eq!(p["parts"].as_i64().unwrap() as usize, n);
        let row = long
            .iter()
            .find(|r| r.get("part") == format!("{k}/{n}"))
            .unwrap();
        assert_eq!(p["day"].as_i64().unwrap().to_string(), row.get("day"));
        assert_eq!(p["crew"].as_i64().unwrap().to_string(), row.get("crew"));
        let share = row.num("est_hours") / hours;
        let area = p["area"].as_f64().unwrap() / whole;
        assert!(
            (area - share).abs() <= 0.001 + 0.01 * share,
            "part {k}: {area} of the area, {share} of the work"
        );
    }
    // The crew reads which strip it is, and the day's map draws it.
    let html = std::fs::read_to_string(d.join("orders/report.html")).unwrap();
    for p in parts {
        let words = format!(
            "{}, part {} of {n}",
            p["strip"].as_str().unwrap(),
            p["part"].as_i64().unwrap()
        );
        assert!(html.contains(&words), "{words}");
    }
    assert_eq!(html.matches("class=\"part\"").count(), n);
    // orders.geojson carries the same parts.
    let gj: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("orders/orders.geojson")).unwrap())
            .unwrap();
    let gj_parts = gj["features"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["properties"]["kind"] == "part")
        .count();
    assert_eq!(gj_parts, n);
}

// A split patch given as a point has no outline to cut: the crew page says so, and no part
// geometry is invented.
#[test]
fn a_split_point_stand_says_it_has_no_outline() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(
        d,
        "stands.csv",
        "id,x,y,stems,access,herbicide\nBIG,500000,4480000,3000,open,allowed\n",
    );
    ok(&run(
        d,
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
    ));
    ok(&run(
        d,
        &["orders", "--plan", "plan", "--out", "orders", "--quiet"],
    ));
    let html = std::fs::read_to_string(d.join("orders/report.html")).unwrap();
    assert!(html.contains("no outline: the patch was given as a point"));
    assert!(!html.contains("class=\"part\""));
}

/// The same town of stands, in a state-plane CRS in US survey feet (EPSG:2272, NAD83 /
/// Pennsylvania South (ftUS)): coordinates made directly in feet.
fn feet_inventory(dir: &Path) {
    let mut csv = String::from("id,x,y,stems,access,herbicide\n");
    for k in 0..12u64 {
        let h = k.wrapping_mul(2654435761) % 1_000_003;
        csv.push_str(&format!(
            "F{k:02},{},{},{},open,allowed\n",
            2_690_000 + h % 30_000,
            240_000 + (h / 30_000) % 20_000,
            20 + k % 40
        ));
    }
    write(dir, "feet.csv", &csv);
}

// Issue 20: "outputs in the input's units where a person reads them". The miles printed equal
// the kilometres of orders.csv (which keeps its metric columns) divided by 1.609344 (NIST
// Handbook 44, Appendix C: 1 mile = 1,609.344 m exactly).
#[test]
fn a_feet_inventory_gets_miles_on_its_crew_pages_and_metric_csv() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    feet_inventory(d);
    for (crs, out) in [("EPSG:2272", "feet"), ("EPSG:32618", "metres")] {
        if out == "metres" {
            // The same numbers read as metres in UTM: a metric plan for contrast.
            let text = std::fs::read_to_string(d.join("feet.csv")).unwrap();
            write(
                d,
                "metres.csv",
                &text.replace(",2", ",5").replace(",24", ",448"),
            );
        }
        ok(&run(
            d,
            &[
                "plan",
                "--inventory",
                &format!("{out}.csv"),
                "--crs",
                crs,
                "--budget",
                "20000",
                "--out",
                &format!("plan-{out}"),
                "--quiet",
            ],
        ));
        ok(&run(
            d,
            &[
                "orders",
                "--plan",
                &format!("plan-{out}"),
                "--out",
                &format!("ord-{out}"),
                "--start-date",
                "2027-07-01",
                "--quiet",
            ],
        ));
    }
    let feet = std::fs::read_to_string(d.join("ord-feet/report.html")).unwrap();
    let metres = std::fs::read_to_string(d.join("ord-metres/report.html")).unwrap();
    assert!(feet.contains(" mi of driving") && !feet.contains(" km of driving"));
    assert!(metres.contains(" km of driving") && !metres.contains(" mi of driving"));
    assert!(feet.contains("<th>Travel mi</th>"));
    // Each crew page's miles are its kilometres in orders.csv over 1.609344.
    let csv = Table::read(&d.join("ord-feet/orders.csv"));
    assert!(csv.columns.iter().any(|c| c == "travel_km"));
    let pages: Vec<&str> = feet.split("<section class=\"page day\"").skip(1).collect();
    let mut by_day: std::collections::BTreeMap<(String, String), f64> = Default::default();
    for r in &csv.rows {
        *by_day
            .entry((r.get("crew").to_string(), r.get("day").to_string()))
            .or_default() += r.num("travel_km") + r.num("return_km");
    }
    assert_eq!(pages.len(), by_day.len());
    for ((crew, day), km) in by_day {
        let head = format!("Crew {crew}, day {day} - ");
        let page = pages.iter().find(|p| p.contains(&head)).unwrap();
        let printed: f64 = page
            .split_once(" mi of driving")
            .unwrap()
            .0
            .rsplit_once(' ')
            .unwrap()
            .1
            .parse()
            .unwrap();
        // One decimal printed, orders.csv's legs rounded to 0.01 km each.
        assert!(
            (printed - km / 1.609344).abs() <= 0.05 + 0.01 * 12.0,
            "{head}: {printed} mi for {km} km"
        );
    }
}
