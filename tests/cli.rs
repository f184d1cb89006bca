//! The real binary on tiny fixtures: happy paths and every class of bad input the foundation
//! promises to refuse with exit code 2, one clear message naming the file/field/row, no panic
//! and no output left behind.

mod common;

use std::path::Path;

use common::*;

const STANDS: &str = "id,x,y,stems,access,herbicide,cost_factor\nA,500000,4480000,120,open,allowed,1\nB,500150,4480050,80,permission,restricted,1.2\nC,500400,4480000,200,open,prohibited,1\nD,503000,4483000,50,denied,allowed,1\n";

fn fixture() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", STANDS);
    dir
}

fn plan(dir: &Path, extra: &[&str]) -> std::process::Output {
    let mut args = vec!["plan", "--out", "out", "--quiet"];
    args.extend_from_slice(extra);
    run(dir, &args)
}

/// Exit code 2, the message mentions every `needle`, no panic, and no output folder.
fn refused(dir: &Path, o: &std::process::Output, needles: &[&str]) {
    let err = stderr(o);
    assert_eq!(
        o.status.code(),
        Some(2),
        "expected exit code 2, stderr: {err}"
    );
    assert!(!err.contains("panicked"), "panic: {err}");
    for n in needles {
        assert!(
            err.to_lowercase().contains(&n.to_lowercase()),
            "message lacks `{n}`: {err}"
        );
    }
    assert_eq!(
        err.lines().filter(|l| l.starts_with("error:")).count(),
        1,
        "one error line: {err}"
    );
    assert!(!dir.join("out").exists(), "output folder left behind");
    let leftovers: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains(".partial-"))
        .collect();
    assert!(leftovers.is_empty(), "staging folder left behind");
}

#[test]
fn inventory_plan_writes_every_output() {
    let dir = fixture();
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "2000",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let out = dir.path().join("out");
    for f in [
        "plan.csv",
        "patches.csv",
        "plan.geojson",
        "summary.json",
        "cautions.txt",
        "scenario.resolved.toml",
        "treatments.used.toml",
    ] {
        assert!(out.join(f).exists(), "{f} missing");
    }
    let s = summary(&out);
    for key in [
        "budget",
        "spent",
        "crew_hours",
        "risk_before",
        "risk_after",
        "risk_reduction_pct",
        "lambda_before",
        "lambda_after",
        "greedy_risk_after",
        "status",
        "gap",
        "bound",
        "solve_seconds",
        "n_patches",
        "n_edges",
        "n_treated",
    ] {
        assert!(s.get(key).is_some(), "summary.json lacks {key}");
    }
    assert_eq!(s["n_patches"], 4);
    assert!(s["spent"].as_f64().unwrap() <= 2000.0);
    assert!(s["risk_after"].as_f64().unwrap() <= s["greedy_risk_after"].as_f64().unwrap() + 1e-15);
    // Denied D is never treated; prohibited C gets no herbicide method; restricted B is flagged.
    let plan = std::fs::read_to_string(out.join("plan.csv")).unwrap();
    assert!(!plan.lines().any(|l| l.contains(",D,")));
    for line in plan.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        if f[1] == "C" {
            assert_eq!(
                f[2], "pull_seedlings",
                "prohibited site got a herbicide method"
            );
        }
        if f[1] == "B" && f[2] != "pull_seedlings" {
            assert!(
                line.contains("RESTRICTED_SITE") && line.contains("PERMISSION"),
                "{line}"
            );
        }
    }
    // Standing cautions on stdout and in cautions.txt.
    let text = stdout(&o);
    for needle in [
        "label is the law",
        "licensed applicator",
        "PPE",
        "buffers",
        "Drift",
        "root suckers",
        "regulated articles",
        "local codes",
    ] {
        assert!(text.contains(needle), "stdout lacks `{needle}`");
    }
    assert!(
        std::fs::read_to_string(out.join("cautions.txt"))
            .unwrap()
            .contains("label is the law")
    );
    // GeoJSON is WGS 84 lon/lat (RFC 7946 has no crs member).
    let gj: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("plan.geojson")).unwrap()).unwrap();
    let c = &gj["features"][0]["geometry"]["coordinates"];
    assert!(
        (c[0].as_f64().unwrap() + 75.0).abs() < 1.0 && (c[1].as_f64().unwrap() - 40.4).abs() < 1.0,
        "{c}"
    );
    assert!(gj.get("crs").is_none());
}

#[test]
fn resolved_scenario_repeats_the_run() {
    let dir = fixture();
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "1500",
            "--require",
            "C",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let o2 = run(
        dir.path(),
        &[
            "plan",
            "--scenario",
            "out/scenario.resolved.toml",
            "--out",
            "again",
            "--quiet",
        ],
    );
    assert!(o2.status.success(), "{}", stderr(&o2));
    let (a, b) = (
        summary(&dir.path().join("out")),
        summary(&dir.path().join("again")),
    );
    assert_eq!(a["risk_after"], b["risk_after"]);
    assert_eq!(a["spent"], b["spent"]);
    let plan = std::fs::read_to_string(dir.path().join("again/plan.csv")).unwrap();
    assert!(
        plan.lines().any(|l| l.split(',').nth(1) == Some("C")),
        "required patch C not treated"
    );
}

#[test]
fn tiny_budget_gives_an_empty_plan_that_says_so() {
    let dir = fixture();
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "5",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("buys no treatment"), "{}", stdout(&o));
    let s = summary(&dir.path().join("out"));
    assert_eq!(s["n_treated"], 0);
    assert_eq!(s["risk_after"], s["risk_before"]);
}

#[test]
fn non_empty_out_is_refused_without_force() {
    let dir = fixture();
    std::fs::create_dir(dir.path().join("out")).unwrap();
    write(&dir.path().join("out"), "keep.txt", "x");
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "500",
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("not empty"));
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "500",
            "--force",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(dir.path().join("out/keep.txt").exists() && dir.path().join("out/plan.csv").exists());
}

fn inventory_case(csv: &str, needles: &[&str]) {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("bad.csv"), csv).unwrap();
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "bad.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "100",
        ],
    );
    refused(dir.path(), &o, needles);
}

#[test]
fn bad_inventories_are_refused_with_the_row_and_field() {
    inventory_case(
        "id,x,y,stems\nA,500000,4480000,-5\n",
        &["bad.csv", "line 2", "stems", "-5"],
    );
    inventory_case(
        "id,x,y,stems\nA,500000,4480000,NaN\n",
        &["bad.csv", "line 2", "stems"],
    );
    inventory_case(
        "id,x,y,stems\nA,500000,4480000,lots\n",
        &["bad.csv", "line 2", "stems", "lots"],
    );
    inventory_case(
        "id,x,y,stems\nA,east,4480000,5\n",
        &["bad.csv", "line 2", "`x`", "east"],
    );
    inventory_case(
        "id,x,y,stems\nA,500000,4480000,5\nA,500010,4480000,5\n",
        &["bad.csv", "line 3", "duplicate", "`A`"],
    );
    inventory_case(
        "id,x,y,stems,access\nA,500000,4480000,5,maybe\n",
        &["bad.csv", "line 2", "access", "maybe"],
    );
    inventory_case(
        "id,x,y,stems,herbicide\nA,500000,4480000,5,sometimes\n",
        &["bad.csv", "line 2", "herbicide", "sometimes"],
    );
    inventory_case("id,x,stems\nA,500000,5\n", &["bad.csv", "missing", "y"]);
    inventory_case("id,x,y,stems\n", &["bad.csv", "no stands"]);
    inventory_case(
        "id,x,y,stems\nA,500000,4480000,5\nB,1,2,3,4\n",
        &["bad.csv", "line 3"],
    );
    inventory_case(
        "id;x;y;stems\nA;500000;4480000;5\n",
        &["bad.csv", "semicolon"],
    );
    inventory_case(
        "id,x,y,stems\nA,500000,4480000,\"1,200\"\n",
        &["bad.csv", "line 2", "1,200"],
    );
}

#[test]
fn missing_file_is_named() {
    let dir = tempfile::tempdir().unwrap();
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "nowhere.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "100",
        ],
    );
    refused(dir.path(), &o, &["nowhere.csv"]);
    let o = plan(dir.path(), &["--host", "nowhere.tif", "--budget", "100"]);
    refused(dir.path(), &o, &["nowhere.tif", "does not exist"]);
}

#[test]
fn geographic_and_missing_crs_are_refused() {
    let dir = fixture();
    let o = plan(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:4326",
            "--budget",
            "100",
        ],
    );
    refused(dir.path(), &o, &["geographic", "reproject"]);
    let o = plan(
        dir.path(),
        &["--inventory", "stands.csv", "--budget", "100"],
    );
    refused(dir.path(), &o, &["crs"]);
    let v = vec![50.0f32; 16];
    geotiff(
        &dir.path().join("geo.tif"),
        Some("EPSG:4326"),
        4,
        4,
        (-75.0, 40.0),
        0.001,
        &v,
        None,
    );
    let o = plan(dir.path(), &["--host", "geo.tif", "--budget", "100"]);
    refused(dir.path(), &o, &["geo.tif", "geographic", "EPSG:4326"]);
    geotiff(
        &dir.path().join("nocrs.tif"),
        None,
        4,
        4,
        (500_000.0, 4_480_000.0),
        20.0,
        &v,
        None,
    );
    let o = plan(dir.path(), &["--host", "nocrs.tif", "--budget", "100"]);
    refused(
        dir.path(),
        &o,
        &[
            "nocrs.tif",
            "no coordinate reference system",
            "--assume-crs",
        ],
    );
    // With --assume-crs it runs.
    let o = plan(
        dir.path(),
        &[
            "--host",
            "nocrs.tif",
            "--assume-crs",
            "EPSG:32618",
            "--budget",
            "100",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn empty_or_distant_layers_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let v = vec![0.0f32; 16];
    geotiff(
        &dir.path().join("zero.tif"),
        Some("EPSG:32618"),
        4,
        4,
        (500_000.0, 4_480_000.0),
        20.0,
        &v,
        None,
    );
    let o = plan(dir.path(), &["--host", "zero.tif", "--budget", "100"]);
    refused(dir.path(), &o, &["no patch", "min-density"]);
    let v = vec![-9999.0f32; 16];
    geotiff(
        &dir.path().join("nodata.tif"),
        Some("EPSG:32618"),
        4,
        4,
        (500_000.0, 4_480_000.0),
        20.0,
        &v,
        Some(-9999.0),
    );
    let o = plan(dir.path(), &["--host", "nodata.tif", "--budget", "100"]);
    refused(dir.path(), &o, &["nodata"]);
    // A corridor 500 km away does not overlap the host layer.
    let v = vec![50.0f32; 16];
    geotiff(
        &dir.path().join("host.tif"),
        Some("EPSG:32618"),
        4,
        4,
        (500_000.0, 4_480_000.0),
        20.0,
        &v,
        None,
    );
    write(
        dir.path(),
        "far.geojson",
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[-69.0,44.0],[-69.1,44.1]]}}]}"#,
    );
    let o = plan(
        dir.path(),
        &[
            "--host",
            "host.tif",
            "--corridor",
            "far.geojson",
            "--budget",
            "100",
        ],
    );
    refused(dir.path(), &o, &["far.geojson", "does not overlap"]);
}

#[test]
fn bad_options_are_refused() {
    let dir = fixture();
    let base = ["--inventory", "stands.csv", "--crs", "EPSG:32618"];
    let with = |extra: &[&str]| {
        let mut a: Vec<&str> = base.to_vec();
        a.extend_from_slice(extra);
        a.iter().map(|s| s.to_string()).collect::<Vec<_>>()
    };
    let call = |args: Vec<String>| {
        plan(
            dir.path(),
            &args.iter().map(String::as_str).collect::<Vec<_>>(),
        )
    };
    refused(
        dir.path(),
        &call(with(&["--budget", "-5"])),
        &["budget", "-5"],
    );
    refused(
        dir.path(),
        &call(with(&["--budget", "100", "--require", "ZZ"])),
        &["--require", "ZZ"],
    );
    refused(
        dir.path(),
        &call(with(&["--budget", "100", "--require", "D"])),
        &["--require", "D", "cannot be treated"],
    );
    refused(
        dir.path(),
        &call(with(&["--budget", "100", "--alpha-m", "0"])),
        &["alpha"],
    );
    refused(
        dir.path(),
        &call(with(&["--budget", "100", "--epsilon", "2"])),
        &["epsilon"],
    );
    write(dir.path(), "bad.toml", &catalogue(1.5, 1.0, 1.0));
    refused(
        dir.path(),
        &call(with(&["--budget", "100", "--treatments", "bad.toml"])),
        &["bad.toml", "effectiveness", "1.5"],
    );
    write(dir.path(), "broken.toml", "[[method]\nid = 3\n");
    refused(
        dir.path(),
        &call(with(&["--budget", "100", "--treatments", "broken.toml"])),
        &["broken.toml", "line 1"],
    );
    write(
        dir.path(),
        "scenario.toml",
        "[plan]\nbudget = 100\n\n[model]\nalpha_m = \"far\"\n",
    );
    refused(
        dir.path(),
        &call(vec!["--scenario".into(), "scenario.toml".into()]),
        &["scenario.toml", "line 5"],
    );
    write(dir.path(), "typo.toml", "[plan]\nbudjet = 100\n");
    refused(
        dir.path(),
        &call(vec!["--scenario".into(), "typo.toml".into()]),
        &["typo.toml", "budjet"],
    );
}
