//! Site rules that cannot silently vanish, and no user file ever lost. Each test here covers a
//! defect measured on an earlier build (listed in docs/CHANGES.md): a Shapefile parcels layer
//! whose rule fields were ignored, herbicide work orders on no-herbicide parcels, `--force`
//! emptying a user's folder, folders mixing two runs, bad inputs that exited 1, silent drops.
//!
//! Outside references: GDAL's own `ogr2ogr` writes the Shapefile (dBASE field names are cut to
//! 10 characters, per the ESRI Shapefile Technical Description, 1998) and the multi-layer
//! GeoPackage; Python's `csv` module is not needed here (see tests/injection.rs).

mod common;

use std::path::{Path, PathBuf};
use std::process::Command;

use common::*;

const CRS: &str = "EPSG:32618";
const X0: f64 = 500_000.0;
const Y0: f64 = 4_480_000.0;

/// Four stands 300 m apart on a line, 400 stems each.
fn stands(dir: &Path) -> PathBuf {
    let mut t = String::from("id,x,y,stems\n");
    for k in 0..4 {
        t.push_str(&format!("S{k},{},{Y0},400\n", X0 + 300.0 * k as f64));
    }
    write(dir, "stands.csv", &t)
}

/// A square polygon of side 200 m centred on stand `k`, as GeoJSON coordinates.
fn square(k: usize) -> String {
    let (x, y) = (X0 + 300.0 * k as f64, Y0);
    format!(
        "[[[{a},{b}],[{c},{b}],[{c},{d}],[{a},{d}],[{a},{b}]]]",
        a = x - 100.0,
        b = y - 100.0,
        c = x + 100.0,
        d = y + 100.0
    )
}

/// A GeoJSON FeatureCollection in EPSG:32618 from (properties JSON, geometry JSON) pairs.
fn geojson(features: &[(String, String)]) -> String {
    let f: Vec<String> = features
        .iter()
        .map(|(p, g)| format!("{{\"type\":\"Feature\",\"properties\":{p},\"geometry\":{g}}}"))
        .collect();
    format!(
        "{{\"type\":\"FeatureCollection\",\"crs\":{{\"type\":\"name\",\"properties\":{{\"name\":\"urn:ogc:def:crs:EPSG::32618\"}}}},\"features\":[{}]}}",
        f.join(",")
    )
}

/// Parcels over the four stands in the style of a county export: upper-case field names, and a
/// `COST_FACTOR` longer than a dBASE field name may be. S1 prohibits herbicide, S2 restricts
/// it, S3 costs double.
fn parcels_geojson(dir: &Path) -> PathBuf {
    let rules = [
        ("A-0", "open", "allowed", 1.0),
        ("A-1", "open", "prohibited", 1.0),
        ("A-2", "open", "restricted", 1.0),
        ("A-3", "open", "allowed", 2.0),
    ];
    let features: Vec<(String, String)> = rules
        .iter()
        .enumerate()
        .map(|(k, (id, access, herbicide, cost))| {
            (
                format!(
                    "{{\"PARCEL_ID\":\"{id}\",\"ACCESS\":\"{access}\",\"HERBICIDE\":\"{herbicide}\",\"COST_FACTOR\":{cost},\"CONTACT\":\"Owner {k}\"}}"
                ),
                format!("{{\"type\":\"Polygon\",\"coordinates\":{}}}", square(k)),
            )
        })
        .collect();
    write(dir, "parcels.geojson", &geojson(&features))
}

fn ogr2ogr(dir: &Path, args: &[&str]) {
    let o = Command::new("ogr2ogr")
        .args(args)
        .current_dir(dir)
        .output()
        .expect("ogr2ogr (gdal-bin) is installed");
    assert!(o.status.success(), "ogr2ogr: {}", stderr(&o));
}

fn plan_args<'a>(extra: &[&'a str]) -> Vec<&'a str> {
    let mut a = vec![
        "plan",
        "--inventory",
        "stands.csv",
        "--crs",
        CRS,
        "--budget",
        "100000",
        "--quiet",
    ];
    a.extend_from_slice(extra);
    a
}

/// The rows of a CSV file as maps from column name to cell.
fn table(path: &Path) -> Vec<std::collections::HashMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let headers = r.headers().unwrap().clone();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            headers
                .iter()
                .zip(rec.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

fn row_of<'a>(
    rows: &'a [std::collections::HashMap<String, String>],
    key: &str,
    id: &str,
) -> &'a std::collections::HashMap<String, String> {
    rows.iter()
        .find(|r| r[key] == id)
        .unwrap_or_else(|| panic!("no row {id}"))
}

/// Method ids of the built-in catalogue, as the plan folder records it.
fn catalogue(out: &Path) -> toml::Value {
    toml::from_str(&std::fs::read_to_string(out.join("treatments.used.toml")).unwrap()).unwrap()
}

fn method_flag(cat: &toml::Value, id: &str, key: &str) -> Option<bool> {
    cat["method"]
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["id"].as_str() == Some(id))
        .unwrap_or_else(|| panic!("method {id} not in the catalogue"))
        .get(key)
        .and_then(|v| v.as_bool())
}

#[test]
fn a_shapefile_with_upper_case_and_truncated_field_names_keeps_every_rule() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    parcels_geojson(d);
    ogr2ogr(
        d,
        &["-f", "ESRI Shapefile", "parcels.shp", "parcels.geojson"],
    );
    // GDAL cut the field name, as dBASE requires (ESRI Shapefile Technical Description).
    let info = Command::new("ogrinfo")
        .args(["-so", "parcels.shp", "parcels"])
        .current_dir(d)
        .output()
        .unwrap();
    assert!(stdout(&info).contains("COST_FACTO:"), "{}", stdout(&info));

    let o = run(d, &plan_args(&["--access", "parcels.shp", "--out", "out"]));
    assert!(o.status.success(), "{}", stderr(&o));
    let patches = table(&d.join("out/patches.csv"));
    assert_eq!(
        row_of(&patches, "patch_id", "S1")["herbicide"],
        "prohibited"
    );
    assert_eq!(
        row_of(&patches, "patch_id", "S2")["herbicide"],
        "restricted"
    );
    assert_eq!(
        row_of(&patches, "patch_id", "S3")["cost_factor"]
            .parse::<f64>()
            .unwrap(),
        2.0
    );
    assert_eq!(row_of(&patches, "patch_id", "S0")["parcel"], "A-0");
    let plan = table(&d.join("out/plan.csv"));
    let cat = catalogue(&d.join("out"));
    let s1 = row_of(&plan, "patch_id", "S1");
    assert_eq!(
        method_flag(&cat, &s1["method"], "herbicide"),
        Some(false),
        "{s1:?}"
    );
    assert!(s1["cautions"].contains("NO_HERBICIDE"));
    assert_eq!(s1["site_notes"], "NO HERBICIDE ON THIS SITE");
    // The resolved scenario says which field carried each rule.
    let resolved = std::fs::read_to_string(d.join("out/scenario.resolved.toml")).unwrap();
    assert!(
        resolved.contains("cost_factor_field = \"COST_FACTO\""),
        "{resolved}"
    );
    assert!(
        resolved.contains("herbicide_field = \"HERBICIDE\""),
        "{resolved}"
    );
}

#[test]
fn a_named_field_that_is_absent_or_a_layer_without_rules_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    parcels_geojson(d);
    let o = run(
        d,
        &plan_args(&[
            "--access",
            "parcels.geojson",
            "--herbicide-field",
            "herb_rule",
            "--out",
            "out",
        ]),
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let e = stderr(&o);
    assert!(e.contains("herb_rule") && e.contains("HERBICIDE"), "{e}");
    assert!(!d.join("out").exists());

    // A layer carrying none of the rule fields would make every site "open, herbicide allowed".
    let features: Vec<(String, String)> = (0..4)
        .map(|k| {
            (
                format!("{{\"name\":\"lot {k}\"}}"),
                format!("{{\"type\":\"Polygon\",\"coordinates\":{}}}", square(k)),
            )
        })
        .collect();
    write(d, "lots.geojson", &geojson(&features));
    let o = run(d, &plan_args(&["--access", "lots.geojson", "--out", "out"]));
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("name"), "{}", stderr(&o));
}

#[test]
fn a_multi_layer_geopackage_needs_a_layer_name_and_the_choice_is_recorded() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    parcels_geojson(d);
    // Two layers in one GeoPackage, written by GDAL's ogr2ogr.
    ogr2ogr(
        d,
        &[
            "-f",
            "GPKG",
            "county.gpkg",
            "parcels.geojson",
            "-nln",
            "roads_stub",
        ],
    );
    ogr2ogr(
        d,
        &[
            "-update",
            "county.gpkg",
            "parcels.geojson",
            "-nln",
            "parcels",
        ],
    );
    let o = run(d, &plan_args(&["--access", "county.gpkg", "--out", "out"]));
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let e = stderr(&o);
    assert!(
        e.contains("roads_stub") && e.contains("parcels") && e.contains("--access-layer"),
        "{e}"
    );
    let o = run(
        d,
        &plan_args(&[
            "--access",
            "county.gpkg",
            "--access-layer",
            "parcels",
            "--out",
            "out",
        ]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let resolved = std::fs::read_to_string(d.join("out/scenario.resolved.toml")).unwrap();
    assert!(resolved.contains("layer = \"parcels\""), "{resolved}");
}

#[test]
fn no_herbicide_is_said_plainly_to_crews_and_bidders() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    parcels_geojson(d);
    let o = run(
        d,
        &plan_args(&["--access", "parcels.geojson", "--out", "plan"]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let o = run(
        d,
        &["orders", "--plan", "plan", "--out", "orders", "--quiet"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let orders = table(&d.join("orders/orders.csv"));
    let s1 = row_of(&orders, "patch_id", "S1");
    assert_eq!(s1["herbicide"], "prohibited");
    assert!(
        s1["instructions"].starts_with("NO HERBICIDE ON THIS SITE"),
        "{s1:?}"
    );
    assert_eq!(row_of(&orders, "patch_id", "S2")["herbicide"], "restricted");
    assert_eq!(row_of(&orders, "patch_id", "S0")["herbicide"], "allowed");
    let report = std::fs::read_to_string(d.join("orders/report.html")).unwrap();
    assert!(report.contains("NO HERBICIDE ON THIS SITE"));
    let o = run(d, &["contract", "--plan", "plan", "--out", "bid"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let scope = std::fs::read_to_string(d.join("bid/scope_of_work.md")).unwrap();
    let rules = scope
        .split("NO HERBICIDE ON THESE SITES")
        .nth(1)
        .expect("the scope of work forbids herbicide by site");
    assert!(rules.lines().take(6).any(|l| l.contains("S1")), "{scope}");
}

#[test]
fn restricted_and_sensitive_sites_never_get_a_drift_prone_method() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    parcels_geojson(d);
    // A school 60 m from stand S0 (a point stand): inside a 100 m buffer.
    write(
        d,
        "schools.geojson",
        &geojson(&[(
            "{\"name\":\"Test School\"}".into(),
            format!(
                "{{\"type\":\"Point\",\"coordinates\":[{},{}]}}",
                X0,
                Y0 + 60.0
            ),
        )]),
    );
    let o = run(
        d,
        &plan_args(&[
            "--access",
            "parcels.geojson",
            "--sensitive",
            "schools.geojson",
            "--sensitive-buffer-m",
            "100",
            "--out",
            "out",
        ]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let plan = table(&d.join("out/plan.csv"));
    let cat = catalogue(&d.join("out"));
    for id in ["S0", "S2"] {
        let row = row_of(&plan, "patch_id", id);
        assert_eq!(row["herbicide"], "restricted", "{row:?}");
        assert_ne!(
            method_flag(&cat, &row["method"], "drift_prone"),
            Some(true),
            "{row:?}"
        );
        assert!(
            row["cautions"].contains("RESTRICTED_SITE")
                || method_flag(&cat, &row["method"], "herbicide") == Some(false)
        );
    }
    assert!(row_of(&plan, "patch_id", "S0")["site_notes"].contains("Test School"));
    // The built-in catalogue marks foliar spray drift-prone (common practice: the extension
    // guides in METHODS.md name drift as the main hazard of foliar work).
    assert_eq!(method_flag(&cat, "foliar", "drift_prone"), Some(true));
}

#[test]
fn water_is_checked_against_the_users_layer_and_said_when_unchecked() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    // A stream crossing stand S2 from south to north.
    write(
        d,
        "streams.geojson",
        &geojson(&[(
            "{\"name\":\"Test Creek\"}".into(),
            format!(
                "{{\"type\":\"LineString\",\"coordinates\":[[{x},{a}],[{x},{b}]]}}",
                x = X0 + 600.0,
                a = Y0 - 1000.0,
                b = Y0 + 1000.0
            ),
        )]),
    );
    let o = run(
        d,
        &plan_args(&["--water", "streams.geojson", "--out", "wet"]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let plan = table(&d.join("wet/plan.csv"));
    let cat = catalogue(&d.join("wet"));
    let s2 = row_of(&plan, "patch_id", "S2");
    assert!(s2["cautions"].split(';').any(|c| c == "WATER"), "{s2:?}");
    assert!(s2["site_notes"].contains("Test Creek"), "{s2:?}");
    let herbicide = method_flag(&cat, &s2["method"], "herbicide") == Some(true);
    assert!(
        !herbicide || method_flag(&cat, &s2["method"], "near_water") == Some(true),
        "{s2:?}"
    );
    // The stands away from the stream carry no water code.
    let s0 = row_of(&plan, "patch_id", "S0");
    assert!(!s0["cautions"].contains("WATER"), "{s0:?}");
    let patches = table(&d.join("wet/patches.csv"));
    assert_eq!(row_of(&patches, "patch_id", "S0")["water"], "clear");

    // Without a water layer: the general caution, the rows marked, and the outputs say so.
    let o = run(
        d,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            CRS,
            "--budget",
            "100000",
            "--out",
            "dry",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains("NO WATER LAYER WAS GIVEN"),
        "{}",
        stdout(&o)
    );
    assert!(stderr(&o).contains("no water layer"), "{}", stderr(&o));
    let cautions = std::fs::read_to_string(d.join("dry/cautions.txt")).unwrap();
    assert!(cautions.contains("NO WATER LAYER WAS GIVEN"));
    let plan = table(&d.join("dry/plan.csv"));
    let cat = catalogue(&d.join("dry"));
    for row in &plan {
        if method_flag(&cat, &row["method"], "herbicide") == Some(true) {
            assert!(row["cautions"].contains("WATER_UNCHECKED"), "{row:?}");
        }
    }
}

#[test]
fn force_never_replaces_a_folder_hostcut_did_not_write() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::create_dir(d.join("mine")).unwrap();
    write(&d.join("mine"), "thesis.docx", "years of work");
    for args in [
        vec!["demo", "--out", "mine", "--force", "--quiet"],
        vec!["make-demo-inputs", "mine", "--force"],
        vec!["make-demo-inputs", "mine"],
    ] {
        let o = run(d, &args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        assert_eq!(
            std::fs::read_to_string(d.join("mine/thesis.docx")).unwrap(),
            "years of work"
        );
    }
    // The working folder itself is never an output folder.
    let o = run(
        &d.join("mine"),
        &["demo", "--out", ".", "--force", "--quiet"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(d.join("mine/thesis.docx").exists());

    // A plan folder is not a curve folder: `curve --force` may not replace it.
    stands(d);
    let o = run(d, &plan_args(&["--out", "plan"]));
    assert!(o.status.success(), "{}", stderr(&o));
    let before = std::fs::read(d.join("plan/scenario.resolved.toml")).unwrap();
    let o = run(
        d,
        &[
            "curve",
            "--inventory",
            "stands.csv",
            "--crs",
            CRS,
            "--budgets",
            "1000,2000",
            "--out",
            "plan",
            "--force",
            "--quiet",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("plan"), "{}", stderr(&o));
    assert_eq!(
        std::fs::read(d.join("plan/scenario.resolved.toml")).unwrap(),
        before
    );
}

/// Total cost of a plan folder's plan.csv, in cents.
fn plan_cents(out: &Path) -> i64 {
    table(&out.join("plan.csv"))
        .iter()
        .map(|r| (r["cost"].parse::<f64>().unwrap() * 100.0).round() as i64)
        .sum()
}

/// A plan folder is whole when its summary and its plan describe the same run.
fn assert_whole(out: &Path) -> f64 {
    let s = summary(out);
    let budget = s["budget"].as_f64().unwrap();
    let spent = (s["spent"].as_f64().unwrap() * 100.0).round() as i64;
    assert_eq!(
        spent,
        plan_cents(out),
        "summary.json and plan.csv are of different runs"
    );
    for f in [
        ".hostcut-folder",
        "patches.csv",
        "plan.geojson",
        "cautions.txt",
        "scenario.resolved.toml",
    ] {
        assert!(out.join(f).exists(), "{f} missing");
    }
    budget
}

fn leftovers(d: &Path) -> Vec<String> {
    std::fs::read_dir(d)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".out."))
        .collect()
}

#[test]
fn a_force_run_killed_at_any_step_leaves_one_whole_folder() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    let plan = |budget: &str, hook: Option<&str>| {
        let mut c = Command::new(bin());
        c.args([
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            CRS,
            "--out",
            "out",
            "--force",
        ])
        .args(["--budget", budget, "--quiet"])
        .current_dir(d);
        if let Some(h) = hook {
            c.env("HOSTCUT_TEST_HOOK", h);
        }
        c.output().unwrap()
    };
    let o = plan("1000", None);
    assert!(o.status.success(), "{}", stderr(&o));
    write(&d.join("out"), "regret.csv", "an earlier run's file\n");
    for (hook, new) in [
        ("kill:staged", false),
        ("kill:swapped", true),
        ("no-exchange,kill:moved-old", false),
    ] {
        let o = plan("2500", Some(hook));
        // SIGKILL: no exit code (std::os::unix::process::ExitStatusExt::signal is 9).
        use std::os::unix::process::ExitStatusExt;
        assert_eq!(o.status.signal(), Some(9), "{hook}: {}", stderr(&o));
        if hook.ends_with("moved-old") {
            // Killed between the two renames of the fallback: the old folder is aside, whole.
            assert!(!d.join("out").exists());
        } else {
            let budget = assert_whole(&d.join("out"));
            assert_eq!(budget, if new { 2500.0 } else { 1000.0 }, "{hook}");
        }
        // The next run cleans up after the killed one and writes a whole new folder.
        let o = plan("1000", None);
        assert!(o.status.success(), "{hook}: {}", stderr(&o));
        assert_eq!(assert_whole(&d.join("out")), 1000.0);
        assert!(leftovers(d).is_empty(), "{hook}: {:?}", leftovers(d));
    }
    // A file of an earlier run that this run does not write does not survive.
    assert!(!d.join("out/regret.csv").exists());
}

#[test]
fn a_second_concurrent_run_into_the_same_folder_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    let mut first = Command::new(bin())
        .args(plan_args(&["--out", "out"]))
        .env("HOSTCUT_TEST_HOOK", "pause:staged")
        .current_dir(d)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    // Wait until the first run holds the folder's lock.
    let lock = d.join(".out.hostcut-lock");
    for _ in 0..200 {
        if lock.exists() {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    assert!(lock.exists(), "the first run never locked the folder");
    let o = run(
        d,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            CRS,
            "--budget",
            "2500",
            "--out",
            "out",
            "--force",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("another hostcut run"), "{}", stderr(&o));
    assert!(first.wait().unwrap().success());
    assert_eq!(assert_whole(&d.join("out")), 100000.0);
    assert!(!lock.exists());
}

#[test]
fn write_mps_never_overwrites_and_names_a_missing_folder() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    write(d, "model.mps", "mine");
    let o = run(d, &plan_args(&["--out", "a", "--write-mps", "model.mps"]));
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert_eq!(
        std::fs::read_to_string(d.join("model.mps")).unwrap(),
        "mine"
    );
    assert!(!d.join("a").exists());
    let o = run(
        d,
        &plan_args(&["--out", "b", "--write-mps", "nowhere/model.mps"]),
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("nowhere"), "{}", stderr(&o));
    let o = run(d, &plan_args(&["--out", "c", "--write-mps", "new.mps"]));
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        std::fs::read_to_string(d.join("new.mps"))
            .unwrap()
            .contains("ROWS")
    );
}

#[test]
fn coordinates_outside_the_projection_and_control_characters_exit_2_naming_the_input() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(
        d,
        "far.csv",
        &format!("id,x,y,stems\nfar,1e300,{Y0},100\nnear,{X0},{Y0},100\n"),
    );
    let o = run(
        d,
        &[
            "plan",
            "--inventory",
            "far.csv",
            "--crs",
            CRS,
            "--budget",
            "1000",
            "--out",
            "o",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("far"), "{}", stderr(&o));

    std::fs::write(
        d.join("nul.csv"),
        format!("id,x,y,stems\na\0b,{X0},{Y0},100\n"),
    )
    .unwrap();
    let o = run(
        d,
        &[
            "plan",
            "--inventory",
            "nul.csv",
            "--crs",
            CRS,
            "--budget",
            "1000",
            "--out",
            "o",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("line 2"), "{}", stderr(&o));

    geotiff(
        &d.join("far.tif"),
        Some(CRS),
        10,
        10,
        (1e15, 1e15),
        10.0,
        &[500.0; 100],
        None,
    );
    let o = run(
        d,
        &[
            "plan", "--host", "far.tif", "--budget", "1000", "--out", "o",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));

    write(
        d,
        "far.geojson",
        &geojson(&[(
            "{\"stems\":100}".into(),
            "{\"type\":\"Polygon\",\"coordinates\":[[[1e300,0],[1e300,10],[1.1e300,10],[1e300,0]]]}".into(),
        )]),
    );
    let o = run(
        d,
        &[
            "plan",
            "--host",
            "far.geojson",
            "--budget",
            "1000",
            "--out",
            "o",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(!d.join("o").exists());
}

#[test]
fn surveys_in_the_wrong_crs_exit_2_naming_the_line() {
    let dir = tempfile::tempdir().unwrap();
    let repo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-inputs");
    // Metre coordinates declared as lon/lat: latitude 4.47 million is off the globe.
    let o = run(
        dir.path(),
        &[
            "calibrate",
            "--scenario",
            repo.join("scenario.toml").to_str().unwrap(),
            "--surveys",
            repo.join("surveys.csv").to_str().unwrap(),
            "--surveys-crs",
            "EPSG:4326",
            "--out",
            "cal",
            "--quiet",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("line 2"), "{}", stderr(&o));
    assert!(stderr(&o).contains("--surveys-crs"), "{}", stderr(&o));
}

#[test]
fn bad_cells_and_features_are_counted_not_dropped_in_silence() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    // A 10 x 10 host raster at 500 stems/ha with three NaN and two infinite cells.
    let mut cells = vec![500.0f32; 100];
    cells[11] = f32::NAN;
    cells[12] = f32::NAN;
    cells[13] = f32::NAN;
    cells[55] = f32::INFINITY;
    cells[56] = f32::NEG_INFINITY;
    geotiff(
        &d.join("host.tif"),
        Some(CRS),
        10,
        10,
        (X0, Y0),
        20.0,
        &cells,
        None,
    );
    let o = run(
        d,
        &[
            "plan", "--host", "host.tif", "--budget", "100000", "--out", "r", "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let skipped = summary(&d.join("r"))["skipped"].clone();
    let text = skipped.to_string();
    assert!(text.contains('5'), "{text}");
    assert!(
        stderr(&o).contains("skipped 5: host cells not finite"),
        "{}",
        stderr(&o)
    );

    // Host polygons, one of them without a geometry: its stems are counted as skipped.
    write(
        d,
        "host.geojson",
        &geojson(&[
            (
                "{\"stems\":300}".into(),
                format!("{{\"type\":\"Polygon\",\"coordinates\":{}}}", square(0)),
            ),
            ("{\"stems\":200}".into(), "null".into()),
        ]),
    );
    let o = run(
        d,
        &[
            "plan",
            "--host",
            "host.geojson",
            "--budget",
            "100000",
            "--out",
            "v",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = summary(&d.join("v"))["skipped"].to_string();
    assert!(text.contains("geometry"), "{text}");
    assert!(stderr(&o).contains("geometry"), "{}", stderr(&o));
}

#[test]
fn an_empty_completion_file_is_not_nothing_done() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    let o = run(d, &plan_args(&["--out", "plan"]));
    assert!(o.status.success(), "{}", stderr(&o));
    for (name, text) in [
        ("empty.csv", ""),
        ("header.csv", "patch_id,method,treated_stems\n"),
    ] {
        write(d, name, text);
        let o = run(
            d,
            &[
                "record",
                "--plan",
                "plan",
                "--completed",
                name,
                "--out",
                "rec",
            ],
        );
        assert_eq!(o.status.code(), Some(2), "{name}: {}", stderr(&o));
        assert!(stderr(&o).contains("no rows"), "{}", stderr(&o));
        assert!(!d.join("rec").exists());
    }
}

#[test]
fn a_plan_folder_moved_with_its_inputs_can_be_repeated() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path().join("project");
    std::fs::create_dir(&d).unwrap();
    stands(&d);
    parcels_geojson(&d);
    let o = run(
        &d,
        &plan_args(&["--access", "parcels.geojson", "--out", "plan"]),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let resolved = std::fs::read_to_string(d.join("plan/scenario.resolved.toml")).unwrap();
    assert!(
        !resolved.contains(dir.path().to_str().unwrap()),
        "absolute path: {resolved}"
    );
    let moved = dir.path().join("moved");
    std::fs::rename(&d, &moved).unwrap();
    let o = run(
        &moved,
        &[
            "plan",
            "--scenario",
            "plan/scenario.resolved.toml",
            "--out",
            "again",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        std::fs::read(moved.join("plan/plan.csv")).unwrap(),
        std::fs::read(moved.join("again/plan.csv")).unwrap()
    );
}

#[test]
fn program_force_never_clears_a_users_season_folder() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    stands(d);
    std::fs::create_dir_all(d.join("prog/season_1")).unwrap();
    write(
        &d.join("prog/season_1"),
        "field notes.txt",
        "stand S2 has a wasp nest",
    );
    let o = run(
        d,
        &[
            "program",
            "--inventory",
            "stands.csv",
            "--crs",
            CRS,
            "--seasons",
            "2",
            "--budgets",
            "2000,1000",
            "--out",
            "prog",
            "--force",
            "--quiet",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("not written by hostcut"),
        "{}",
        stderr(&o)
    );
    assert_eq!(
        std::fs::read_to_string(d.join("prog/season_1/field notes.txt")).unwrap(),
        "stand S2 has a wasp nest"
    );
}
