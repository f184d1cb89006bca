//! The demo end to end, and the generator that made `demo-inputs/`.

mod common;

use common::*;

#[test]
fn demo_writes_a_full_plan_folder_at_least_as_good_as_greedy() {
    let dir = tempfile::tempdir().unwrap();
    let o = run(dir.path(), &["demo", "--out", "demo-out"]);
    assert!(o.status.success(), "{}", stderr(&o));
    // Each note about the inputs is said once (writing the demo's inputs prepares the same
    // landscape for its invented surveys, silently).
    let err = stderr(&o);
    let mut notes: Vec<&str> = err.lines().filter(|l| l.starts_with("note:")).collect();
    assert!(!notes.is_empty(), "{err}");
    let said = notes.len();
    notes.sort_unstable();
    notes.dedup();
    assert_eq!(notes.len(), said, "a note said twice: {err}");
    let out = dir.path().join("demo-out");
    for f in [
        "plan.csv",
        "patches.csv",
        "plan.geojson",
        "summary.json",
        "cautions.txt",
        "scenario.resolved.toml",
        "inputs/host.tif",
        "inputs/scenario.toml",
    ] {
        assert!(out.join(f).exists(), "{f} missing");
    }
    let s = summary(&out);
    // The stems a reader adds up in plan.csv (whole stems per patch) are the total stated
    // (the raster's patches hold fractional stems; the total once read 10,445 over rows
    // summing to 10,444).
    let plan_stems: f64 = Table::read(&out.join("plan.csv"))
        .rows
        .iter()
        .map(|r| r.num("stems"))
        .sum();
    assert_eq!(s["stems_treated"].as_f64().unwrap(), plan_stems);
    let after = s["risk_after"].as_f64().unwrap();
    let greedy = s["greedy_risk_after"].as_f64().unwrap();
    assert!(
        after <= greedy * (1.0 + 1e-12),
        "plan {after} worse than greedy {greedy}"
    );
    assert!(s["spent"].as_f64().unwrap() <= s["budget"].as_f64().unwrap());
    assert!(s["n_treated"].as_u64().unwrap() > 0);
    assert!(["optimal", "gap_limit", "time_limit"].contains(&s["status"].as_str().unwrap()));
    let gap = s["gap"].as_f64().unwrap();
    let bound = s["bound"].as_f64().unwrap();
    assert!(
        (gap - (after - bound) / after).abs() < 1e-12,
        "gap must be on the remaining risk"
    );
    let text = stdout(&o);
    assert!(text.contains("plan.csv") && text.contains("label is the law"));
    // The demo folder is a plan folder: its resolved scenario plans again.
    let o = run(
        dir.path(),
        &[
            "plan",
            "--scenario",
            "demo-out/scenario.resolved.toml",
            "--out",
            "again",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn committed_demo_inputs_match_the_generator() {
    let dir = tempfile::tempdir().unwrap();
    hostcut::app::demo::write_inputs(dir.path()).unwrap();
    let repo = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-inputs");
    for f in ["stands.csv", "scenario.toml", "README.md"] {
        assert_eq!(
            std::fs::read_to_string(repo.join(f)).unwrap(),
            std::fs::read_to_string(dir.path().join(f)).unwrap(),
            "{f} differs: remake demo-inputs"
        );
    }
    // The road layer: the same segments, class, one-way flag, in the same order.
    let crs = hostcut::input::gis::Crs::parse("EPSG:32618", "demo").unwrap();
    let roads = |p: std::path::PathBuf| {
        hostcut::input::roads::read_roads(&p, &crs, &Default::default())
            .unwrap()
            .segments
    };
    assert_eq!(
        roads(repo.join("roads.gpkg")),
        roads(dir.path().join("roads.gpkg")),
        "roads.gpkg differs: remake demo-inputs"
    );
    let read = |p: std::path::PathBuf| hostcut::input::gis::read_raster(&p, None).unwrap();
    let (a, b) = (
        read(repo.join("host.tif")),
        read(dir.path().join("host.tif")),
    );
    assert_eq!(
        (a.width, a.height, a.transform),
        (b.width, b.height, b.transform)
    );
    assert!(
        a.values
            .iter()
            .zip(&b.values)
            .all(|(x, y)| x == y || (x.is_nan() && y.is_nan()))
    );
}
