//! The demo's outputs, byte for byte: a guard for refactors that must not change behaviour.
//! The expected files are in `tests/snapshots/`; after a deliberate change of an output,
//! remake them with `HOSTCUT_UPDATE_SNAPSHOTS=1 cargo test --release --test snapshots` and
//! read the diff before committing it.
//!
//! Only the measured times (`solve_seconds`, `elapsed_s` in summary.json, "N s" in text) vary between
//! runs; they are masked. Dates are fixed with `--start-date`. Absolute paths to the repository's
//! `demo-inputs/` (in scenario.resolved.toml and calibration.toml) depend on where the checkout
//! is; they are masked on both sides, so the snapshots taken in one checkout hold in any other.

mod common;

use std::path::Path;

use common::*;

/// Mask what legitimately varies between runs: measured seconds.
fn masked(name: &str, bytes: Vec<u8>) -> Vec<u8> {
    let Ok(text) = String::from_utf8(bytes.clone()) else {
        return bytes;
    };
    let mut out = String::with_capacity(text.len());
    for line in text.split_inclusive('\n') {
        let line = &mask_checkout(line);
        let timed = ["solve_seconds", "elapsed_s"]
            .into_iter()
            .find(|key| line.contains(&format!("\"{key}\"")));
        if let (true, Some(key)) = (name.ends_with(".json"), timed) {
            let indent: String = line.chars().take_while(|c| c.is_whitespace()).collect();
            let comma = if line.trim_end().ends_with(',') {
                ","
            } else {
                ""
            };
            out.push_str(&format!("{indent}\"{key}\": \"(masked)\"{comma}\n"));
        } else {
            out.push_str(line);
        }
    }
    out.into_bytes()
}

/// `"/any/checkout/demo-inputs/x.csv"` → `"(checkout)/demo-inputs/x.csv"`.
fn mask_checkout(line: &str) -> String {
    let Some(at) = line.find("/demo-inputs/") else {
        return line.to_string();
    };
    match line[..at].rfind('"') {
        Some(quote) => format!("{}(checkout){}", &line[..=quote], &line[at..]),
        None => line.to_string(),
    }
}

fn check(folder: &Path, files: &[&str], snapshot: &str) {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/snapshots")
        .join(snapshot);
    let update = std::env::var_os("HOSTCUT_UPDATE_SNAPSHOTS").is_some();
    let mut differ = Vec::new();
    for f in files {
        let got = masked(
            f,
            std::fs::read(folder.join(f)).unwrap_or_else(|e| panic!("{f}: {e}")),
        );
        let path = dir.join(f);
        if update {
            std::fs::create_dir_all(path.parent().unwrap()).unwrap();
            std::fs::write(&path, &got).unwrap();
            continue;
        }
        let want = masked(
            f,
            std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display())),
        );
        if want != got {
            differ.push(f.to_string());
        }
    }
    assert!(
        differ.is_empty(),
        "outputs differ from tests/snapshots/{snapshot}: {differ:?} (remake with HOSTCUT_UPDATE_SNAPSHOTS=1 if the change is meant)"
    );
}

#[test]
fn the_demo_outputs_are_unchanged() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = run(d, &["demo", "--out", "demo", "--quiet"]);
    assert!(o.status.success(), "{}", stderr(&o));
    // The default objective is the horizon term at T = 10 (docs/model.md), stated in both.
    assert_eq!(summary(&d.join("demo"))["horizon_years"], 10);
    check(
        &d.join("demo"),
        &[
            "plan.csv",
            "patches.csv",
            "plan.geojson",
            "summary.json",
            "cautions.txt",
            "scenario.resolved.toml",
            "treatments.used.toml",
        ],
        "plan",
    );
    let o = run(
        d,
        &[
            "orders",
            "--plan",
            "demo",
            "--out",
            "orders",
            "--start-date",
            "2027-04-01",
            "--crews",
            "2",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    check(
        &d.join("orders"),
        &[
            "orders.csv",
            "orders.json",
            "orders.geojson",
            "report.html",
            "cautions.txt",
        ],
        "orders",
    );
    // The same plan routed on the demo's roads from the county yard (the repository's
    // demo-inputs/roads.gpkg, so its recorded path masks like the other demo inputs).
    let roads = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-inputs/roads.gpkg");
    let o = run(
        d,
        &[
            "orders",
            "--plan",
            "demo",
            "--out",
            "orders_roads",
            "--roads",
            roads.to_str().unwrap(),
            "--depot",
            "501250,4471750",
            "--start-date",
            "2027-04-01",
            "--crews",
            "2",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    check(
        &d.join("orders_roads"),
        &["orders.csv", "orders.json", "orders.geojson", "report.html"],
        "orders_roads",
    );
    let o = run(d, &["contract", "--plan", "demo", "--out", "bid"]);
    assert!(o.status.success(), "{}", stderr(&o));
    check(
        &d.join("bid"),
        &[
            "bid_schedule.csv",
            "completion_template.csv",
            "scope_of_work.md",
            "scope_of_work.html",
            "cautions.txt",
        ],
        "contract",
    );
    let o = run(
        d,
        &[
            "curve",
            "--plan",
            "demo",
            "--budgets",
            "10000,20000",
            "--time-limit-s",
            "900",
            "--out",
            "curve",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    // The plan's own budget joins the levels; every level must end on its own (a level stopped
    // by the clock would make the snapshot depend on the machine's load).
    let curve_csv = Table::read(&d.join("curve/curve.csv"));
    for r in &curve_csv.rows {
        assert_ne!(r.get("status"), "time_limit", "{r:?}");
    }
    check(
        &d.join("curve"),
        &[
            "curve.csv",
            "curve.svg",
            "justification.md",
            "justification.html",
            "cautions.txt",
            "scenario.resolved.toml",
        ],
        "curve",
    );
    let o = run(
        d,
        &[
            "simulate", "--plan", "demo", "--runs", "50", "--years", "5", "--out", "sim", "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    check(
        &d.join("sim"),
        &[
            "sim.csv",
            "sim.json",
            "sim.svg",
            "patch_occupancy.csv",
            "cautions.txt",
        ],
        "simulate",
    );
    let surveys = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-inputs/surveys.csv");
    let o = run(
        d,
        &[
            "calibrate",
            "--plan",
            "demo",
            "--surveys",
            surveys.to_str().unwrap(),
            "--out",
            "cal",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    check(
        &d.join("cal"),
        &[
            "calibration.csv",
            "calibration.toml",
            "likelihood.svg",
            "surveys_assigned.csv",
            "unassigned_surveys.csv",
            "cautions.txt",
        ],
        "calibrate",
    );
}

/// `program` on the demo's stand inventory (the raster demo's course MIP runs to the time
/// limit, so its plan would depend on the machine's speed).
#[test]
fn the_demo_inventory_program_is_unchanged() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let stands = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-inputs/stands.csv");
    let o = run(
        d,
        &[
            "program",
            "--inventory",
            stands.to_str().unwrap(),
            "--crs",
            "EPSG:32618",
            "--seasons",
            "2",
            "--budgets",
            "8000,4000",
            "--out",
            "prog",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let s = summary(&d.join("prog"));
    assert_ne!(
        s["status"], "time_limit",
        "the snapshot needs a run that ends on its own"
    );
    check(
        &d.join("prog"),
        &[
            "program.csv",
            "program.svg",
            "summary.json",
            "cautions.txt",
            "scenario.resolved.toml",
            "season_1/plan.csv",
            "season_2/plan.csv",
        ],
        "program",
    );
}

/// `--horizon-years 1` on the demo's inputs gives back exactly the one-season plan the demo had
/// before the horizon term became the default: `tests/fixtures/one_season_demo/` holds that plan's plan.csv and
/// patches.csv as the one-season default wrote them (copied from tests/snapshots/plan before the
/// switch; not remade by HOSTCUT_UPDATE_SNAPSHOTS). The resolved scenario says
/// `horizon_years = 1`, and a re-run from it repeats the plan.
#[test]
fn horizon_one_gives_back_the_one_season_demo_plan() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = run(d, &["demo", "--out", "demo", "--quiet"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let o = run(
        d,
        &[
            "plan",
            "--scenario",
            "demo/inputs/scenario.toml",
            "--horizon-years",
            "1",
            "--out",
            "one",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let fixture = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/one_season_demo");
    for f in ["plan.csv", "patches.csv"] {
        let got = std::fs::read_to_string(d.join("one").join(f)).unwrap();
        let want = std::fs::read_to_string(fixture.join(f)).unwrap();
        assert!(got == want, "{f} differs from the one-season demo plan");
    }
    assert_eq!(summary(&d.join("one"))["horizon_years"], 1);
    let resolved = std::fs::read_to_string(d.join("one/scenario.resolved.toml")).unwrap();
    assert!(resolved.contains("horizon_years = 1"), "{resolved}");
    let o = run(
        d,
        &[
            "plan",
            "--scenario",
            d.join("one/scenario.resolved.toml").to_str().unwrap(),
            "--out",
            "again",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let first = std::fs::read_to_string(d.join("one/plan.csv")).unwrap();
    let again = std::fs::read_to_string(d.join("again/plan.csv")).unwrap();
    assert!(
        first == again,
        "re-run from scenario.resolved.toml changed the plan"
    );
}
