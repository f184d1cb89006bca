//! Stems by size class from one density raster per class (issue 20: "a raster host takes one
//! raster per class or a default mix"): `--host-class CLASS=RASTER`, the host raster outlining
//! the patches. The per-patch class sums are checked against scipy's connected-component
//! labelling (`scipy.ndimage.label`, 8-connected) and sums (`scipy.ndimage.sum_labels`) over
//! the same GeoTIFFs read by GDAL's Python bindings — the outside reference.

mod common;

use std::path::Path;
use std::process::Command;

use common::*;

const W: usize = 30;
const H: usize = 20;
const CELL: f64 = 20.0; // metres: 0.04 ha a cell
const ORIGIN: (f64, f64) = (500_000.0, 4_480_400.0);

/// Three blobs of host (one touching another only at a corner, so 8-connectivity joins them);
/// each class's density per cell from a small LCG, in stems/ha.
fn rasters(dir: &Path) -> [Vec<f32>; 3] {
    let mut state = 7u64;
    let mut next = move || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((state >> 33) % 1000) as f32 / 1000.0
    };
    let mut classes = [vec![0f32; W * H], vec![0f32; W * H], vec![0f32; W * H]];
    let blobs = [
        (2..8, 2..9),
        (8..12, 9..14),
        (3..9, 18..27),
        (13..18, 4..12),
    ];
    for (rows, cols) in blobs {
        for r in rows {
            for c in cols.clone() {
                let k = r * W + c;
                classes[0][k] = 200.0 + 800.0 * next(); // seedlings
                classes[1][k] = 50.0 + 150.0 * next(); // saplings
                classes[2][k] = 40.0 * next(); // trees
            }
        }
    }
    let total: Vec<f32> = (0..W * H)
        .map(|k| classes.iter().map(|c| c[k]).sum())
        .collect();
    for (name, values) in [
        ("total.tif", &total),
        ("seedlings.tif", &classes[0]),
        ("saplings.tif", &classes[1]),
        ("trees.tif", &classes[2]),
    ] {
        geotiff(
            &dir.join(name),
            Some("EPSG:32618"),
            W,
            H,
            ORIGIN,
            CELL,
            values,
            None,
        );
    }
    classes
}

/// Per component of host >= `min_density`: stems of each class (density x cell area), by
/// scipy over the GeoTIFFs.
fn scipy_class_stems(dir: &Path, min_density: f64) -> Vec<[f64; 3]> {
    let script = format!(
        r#"
import json, numpy as np
from osgeo import gdal
from scipy import ndimage
def read(name):
    ds = gdal.Open("{d}/" + name)  # kept while the band is read (GDAL 3.6 frees it otherwise)
    return ds.GetRasterBand(1).ReadAsArray().astype(np.float64)
host = read("total.tif")
labels, n = ndimage.label(host >= {min_density}, structure=np.ones((3, 3)))
cell_ha = {cell} * {cell} / 10000.0
out = [[float(ndimage.sum_labels(read(c), labels, k) * cell_ha)
        for c in ("seedlings.tif", "saplings.tif", "trees.tif")] for k in range(1, n + 1)]
print(json.dumps(out))
"#,
        d = dir.display(),
        cell = CELL
    );
    let o = Command::new("/usr/bin/python3")
        .args(["-c", &script])
        .output()
        .expect("run python3");
    assert!(
        o.status.success(),
        "python3 (osgeo, scipy): {:?} {} {}",
        o.status,
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    let v: Vec<Vec<f64>> = serde_json::from_slice(&o.stdout).unwrap();
    v.into_iter().map(|c| [c[0], c[1], c[2]]).collect()
}

fn sorted(mut v: Vec<[f64; 3]>) -> Vec<[f64; 3]> {
    v.sort_by(|a, b| a[0].total_cmp(&b[0]));
    v
}

#[test]
fn class_rasters_split_each_patch_as_scipy_sums_them() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    rasters(d);
    let reference = sorted(scipy_class_stems(d, 10.0));
    assert_eq!(
        reference.len(),
        3,
        "three components (two blobs touch at a corner)"
    );
    // A budget that treats every patch, so plan.csv lists each with its stems by class.
    let o = run(
        d,
        &[
            "plan",
            "--host",
            "total.tif",
            "--host-class",
            "seedlings=seedlings.tif",
            "--host-class",
            "saplings=saplings.tif",
            "--host-class",
            "trees=trees.tif",
            "--budget",
            "10000000",
            "--out",
            "out",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    // The default-mix assumption does not apply: every patch is counted by class.
    assert!(!stdout(&o).contains("default size mix"), "{}", stdout(&o));
    assert!(!stderr(&o).contains("default size mix"), "{}", stderr(&o));
    let plan = Table::read(&d.join("out/plan.csv"));
    assert_eq!(plan.len(), 3);
    let got = sorted(
        plan.rows
            .iter()
            .map(|r| [r.num("seedlings"), r.num("saplings"), r.num("trees")])
            .collect(),
    );
    for (g, want) in got.iter().zip(&reference) {
        for c in 0..3 {
            // plan.csv prints whole stems that add up to the patch's (largest remainder).
            assert!(
                (g[c] - want[c]).abs() <= 1.0,
                "class {c}: plan.csv {g:?} vs scipy {want:?}"
            );
        }
    }
    // Trees get a method that covers trees (the built-in catalogue's prescriptions).
    for r in &plan.rows {
        assert!(
            r.get("prescription").contains("trees"),
            "{}",
            r.get("prescription")
        );
    }
    // A re-run from the plan folder reads the same class rasters (resolved scenario).
    let resolved = std::fs::read_to_string(d.join("out/scenario.resolved.toml")).unwrap();
    assert!(resolved.contains("class_rasters"), "{resolved}");
}

#[test]
fn class_rasters_that_do_not_fit_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    rasters(d);
    // A trees raster on another grid (shifted by half a cell).
    geotiff(
        &d.join("trees_shifted.tif"),
        Some("EPSG:32618"),
        W,
        H,
        (ORIGIN.0 + CELL / 2.0, ORIGIN.1),
        CELL,
        &vec![1.0; W * H],
        None,
    );
    let base = ["plan", "--host", "total.tif", "--budget", "5000"];
    let cases: [(&[&str], &str); 5] = [
        (
            &["--host-class", "seedlings=seedlings.tif", "--out", "a"],
            "missing: saplings, trees",
        ),
        (
            &[
                "--host-class",
                "seedlings=seedlings.tif",
                "--host-class",
                "saplings=saplings.tif",
                "--host-class",
                "trees=trees_shifted.tif",
                "--out",
                "b",
            ],
            "not on the host raster's grid",
        ),
        (
            &["--host-class", "poles=trees.tif", "--out", "c"],
            "no size class `poles`",
        ),
        (
            &["--host-class", "trees", "--out", "d"],
            "expected CLASS=RASTER",
        ),
        (
            &[
                "--host-class",
                "seedlings=seedlings.tif",
                "--host-class",
                "saplings=saplings.tif",
                "--host-class",
                "trees=nowhere.tif",
                "--out",
                "e",
            ],
            "does not exist",
        ),
    ];
    for (extra, says) in cases {
        let mut args = base.to_vec();
        args.extend_from_slice(extra);
        let o = run(d, &args);
        assert_eq!(o.status.code(), Some(2), "{extra:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(says), "{extra:?}: {}", stderr(&o));
    }
    // Class rasters with a stand inventory: refused, not ignored.
    write(
        d,
        "stands.csv",
        "id,x,y,stems\nA,500100,4480100,300\nB,500300,4480200,200\n",
    );
    let o = run(
        d,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--host-class",
            "trees=trees.tif",
            "--budget",
            "5000",
            "--out",
            "f",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("the host is not a raster"),
        "{}",
        stderr(&o)
    );
}
