//! Establishment suitability: a layer of ones changes nothing, zero-suitability host is never
//! worth treating, and per-patch sampling over a raster in another CRS and cell size matches an
//! independent computation (GDAL's own warper, `gdalwarp -r near`, onto the host grid).

mod common;

use std::path::Path;

use common::*;

const ORIGIN: (f64, f64) = (500_000.0, 4_480_000.0);

/// A 30 x 20 host raster (20 m cells, EPSG:32618) with three clumps.
fn host(dir: &Path) {
    let (w, h) = (30usize, 20usize);
    let mut v = vec![0f32; w * h];
    for (cx, cy, peak) in [(5.0, 5.0, 400.0), (20.0, 6.0, 300.0), (14.0, 15.0, 500.0)] {
        for r in 0..h {
            for c in 0..w {
                let d2 = (c as f64 - cx).powi(2) + (r as f64 - cy).powi(2);
                if d2 < 12.0 {
                    v[r * w + c] += (peak * (-d2 / 8.0f64).exp()) as f32;
                }
            }
        }
    }
    geotiff(
        &dir.join("host.tif"),
        Some("EPSG:32618"),
        w,
        h,
        (ORIGIN.0, ORIGIN.1 + 400.0),
        20.0,
        &v,
        None,
    );
}

/// A suitability raster in EPSG:4326 covering the host area, 0.0001° cells, `f(col, row)`.
fn suitability(dir: &Path, name: &str, f: impl Fn(usize, usize) -> f32) {
    let (w, h) = (120usize, 80usize);
    let v: Vec<f32> = (0..w * h).map(|k| f(k % w, k / w)).collect();
    // The host area is about lon -75.000..-74.993, lat 40.4707..40.4743.
    geotiff(
        &dir.join(name),
        Some("EPSG:4326"),
        w,
        h,
        (-75.0015, 40.4765),
        0.0001,
        &v,
        Some(-1.0),
    );
}

fn plan_with(dir: &Path, out: &str, extra: &[&str]) -> std::process::Output {
    let mut args = vec![
        "plan",
        "--host",
        "host.tif",
        "--min-density",
        "20",
        "--budget",
        "2500",
        "--gap",
        "0",
        "--out",
        out,
        "--quiet",
    ];
    args.extend_from_slice(extra);
    run(dir, &args)
}

#[test]
fn a_layer_of_ones_changes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    host(dir.path());
    suitability(dir.path(), "ones.tif", |_, _| 1.0);
    assert!(plan_with(dir.path(), "plain", &[]).status.success());
    let o = plan_with(dir.path(), "ones", &["--suitability", "ones.tif"]);
    assert!(o.status.success(), "{}", stderr(&o));
    for f in ["plan.csv", "patches.csv", "plan.geojson", "cautions.txt"] {
        assert_eq!(
            std::fs::read(dir.path().join("plain").join(f)).unwrap(),
            std::fs::read(dir.path().join("ones").join(f)).unwrap(),
            "{f} differs"
        );
    }
    let (a, b) = (
        summary(&dir.path().join("plain")),
        summary(&dir.path().join("ones")),
    );
    for key in [
        "risk_before",
        "risk_after",
        "lambda_before",
        "lambda_after",
        "spent",
        "bound",
        "baselines",
    ] {
        assert_eq!(a[key], b[key], "{key}");
    }
    assert!(a["suitability_layer"].is_null());
    assert!(
        b["suitability_layer"]
            .as_str()
            .unwrap()
            .ends_with("ones.tif")
    );
}

#[test]
fn zero_suitability_host_is_never_worth_treating() {
    let dir = tempfile::tempdir().unwrap();
    let csv = "id,x,y,stems,suitability\nbig,500000,4480000,5000,0\nnear,500100,4480000,200,1\nfar,500900,4480300,150,0.6\n";
    write(dir.path(), "stands.csv", csv);
    write(dir.path(), "m.toml", &catalogue(0.9, 10.0, 1.0));
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--treatments",
            "m.toml",
            "--budget",
            "100000",
            "--out",
            "out",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let plan = Table::read(&dir.path().join("out/plan.csv")).rows;
    assert!(
        plan.iter().all(|r| r.get("patch_id") != "big"),
        "a patch with suitability 0 was treated"
    );
    assert_eq!(plan.len(), 2);
    let patches = Table::read(&dir.path().join("out/patches.csv")).rows;
    let big = patches.iter().find(|r| r.get("patch_id") == "big").unwrap();
    assert_eq!(big.num("risk_share"), 0.0, "s = 0 contributes nothing to R");
    assert_eq!(big.get("suitability"), "0");
    // The value is checked: above 1 is refused with the line named.
    write(
        dir.path(),
        "bad.csv",
        "id,x,y,stems,suitability\nA,500000,4480000,10,1.5\n",
    );
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "bad.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--out",
            "bad",
            "--quiet",
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("line 2") && stderr(&o).contains("suitability"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn patch_means_match_gdalwarp_onto_the_host_grid() {
    let dir = tempfile::tempdir().unwrap();
    host(dir.path());
    // A gradient in both directions, in a geographic CRS with cells of a different size.
    suitability(dir.path(), "grad.tif", |c, r| {
        (0.1 + 0.8 * (c as f32 / 119.0) * (1.0 - 0.5 * r as f32 / 79.0)).min(1.0)
    });
    let o = plan_with(dir.path(), "out", &["--suitability", "grad.tif"]);
    assert!(o.status.success(), "{}", stderr(&o));
    // Independent computation: GDAL's warper resamples the layer onto the host grid (nearest
    // cell at each cell centre), and the mean over each patch's host cells follows.
    let warped = dir.path().join("warped.tif");
    let status = std::process::Command::new("gdalwarp")
        .args([
            "-q",
            "-overwrite",
            "-t_srs",
            "EPSG:32618",
            "-te",
            "500000",
            "4480000",
            "500600",
            "4480400",
            "-tr",
            "20",
            "20",
            "-r",
            "near",
        ])
        .arg(dir.path().join("grad.tif"))
        .arg(&warped)
        .status()
        .expect("gdalwarp (Debian gdal-bin) must be installed");
    assert!(status.success());
    let grid = hostcut::input::gis::read_raster(&warped, None).unwrap();
    let hostgrid = hostcut::input::gis::read_raster(&dir.path().join("host.tif"), None).unwrap();
    // Label the host cells the same way the tool does (8-connected, >= 20 stems/ha, no parcels).
    let options = hostcut::input::patches::LabelOptions {
        min_density: 20.0,
        connectivity: 8,
        min_patch_ha: 0.0,
        max_patch_ha: None,
    };
    let (components, _) = hostcut::input::patches::label_cells(&hostgrid, &[], options, 64);
    let rows = Table::read(&dir.path().join("out/patches.csv")).rows;
    assert_eq!(rows.len(), components.len());
    for (row, component) in rows.iter().zip(&components) {
        let expected = component
            .cell_indices(hostgrid.width)
            .map(|c| grid.values[c])
            .sum::<f64>()
            / component.cells as f64;
        let got = row.num("suitability");
        assert!(
            (got - expected).abs() < 2e-3,
            "patch {}: {got} vs gdalwarp {expected}",
            row.get("patch_id")
        );
    }
    let values: Vec<f64> = rows.iter().map(|r| r.num("suitability")).collect();
    assert!(
        values.iter().any(|v| (v - values[0]).abs() > 0.05),
        "the gradient must show: {values:?}"
    );
}

#[test]
fn out_of_range_and_missing_suitability_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    host(dir.path());
    suitability(dir.path(), "pct.tif", |_, _| 80.0);
    let o = plan_with(dir.path(), "a", &["--suitability", "pct.tif"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("pct.tif") && stderr(&o).contains("outside 0..1"),
        "{}",
        stderr(&o)
    );
    suitability(
        dir.path(),
        "holes.tif",
        |c, _| if c < 60 { -1.0 } else { 0.5 },
    );
    let o = plan_with(dir.path(), "b", &["--suitability", "holes.tif"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("no value over patch"), "{}", stderr(&o));
    assert!(!dir.path().join("a").exists() && !dir.path().join("b").exists());
}
