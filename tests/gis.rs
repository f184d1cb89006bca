//! Patch labelling on hand-made rasters, the GDAL read path, and reprojection of known points.

mod common;

use common::*;
use hostcut::input::gis::{Crs, Grid, transform_points};
use hostcut::input::patches::{LabelOptions, label_cells};

/// Strips of two rows, so every test also crosses strip edges.
const STRIP: usize = 2;

fn grid(width: usize, height: usize, values: Vec<f64>, cell: f64) -> Grid {
    Grid {
        width,
        height,
        transform: [0.0, cell, 0.0, height as f64 * cell, 0.0, -cell],
        values,
        crs: Crs::parse("EPSG:32618", "test").unwrap(),
    }
}

fn options(connectivity: u8) -> LabelOptions {
    LabelOptions {
        min_density: 1.0,
        connectivity,
        min_patch_ha: 0.0,
        max_patch_ha: None,
    }
}

#[test]
fn diagonal_contact_joins_only_with_8_connectivity() {
    #[rustfmt::skip]
    let v = vec![
        5.0, 0.0, 0.0,
        0.0, 5.0, 0.0,
        0.0, 0.0, 5.0,
    ];
    let g = grid(3, 3, v, 10.0);
    let none = vec![0u32; 9];
    assert_eq!(label_cells(&g, &none, options(8), STRIP).0.len(), 1);
    assert_eq!(label_cells(&g, &none, options(4), STRIP).0.len(), 3);
    // The anti-diagonal also joins with 8-connectivity (up-right neighbour).
    #[rustfmt::skip]
    let v = vec![
        0.0, 0.0, 5.0,
        0.0, 5.0, 0.0,
        5.0, 0.0, 0.0,
    ];
    assert_eq!(
        label_cells(&grid(3, 3, v, 10.0), &none, options(8), STRIP)
            .0
            .len(),
        1
    );
}

#[test]
fn nodata_holes_and_threshold_split_patches() {
    let nan = f64::NAN;
    #[rustfmt::skip]
    let v = vec![
        5.0, 5.0, nan, 5.0, 5.0,
        5.0, 5.0, nan, 5.0, 5.0,
        5.0, 0.5, nan, 5.0, 5.0,
    ];
    let g = grid(5, 3, v, 10.0);
    let (components, _) = label_cells(&g, &[0; 15], options(8), STRIP);
    assert_eq!(components.len(), 2);
    assert_eq!(
        components[0].cell_indices(5).collect::<Vec<_>>(),
        vec![0, 1, 5, 6, 10],
        "the 0.5 cell is below min_density"
    );
    assert_eq!(components[1].cells, 6);
}

#[test]
fn parcel_boundaries_split_patches_and_slivers_are_dropped() {
    let v = vec![5.0; 8];
    let g = grid(4, 2, v, 100.0); // 1 ha cells
    #[rustfmt::skip]
    let parcels = vec![
        1, 1, 2, 2,
        1, 1, 2, 0,
    ];
    let (components, dropped) = label_cells(&g, &parcels, options(8), STRIP);
    assert_eq!(components.len(), 3);
    assert_eq!(dropped, 0);
    let sizes: Vec<u64> = components.iter().map(|c| c.cells).collect();
    assert_eq!(sizes, vec![4, 3, 1]);
    let (kept, dropped) = label_cells(
        &g,
        &parcels,
        LabelOptions {
            min_patch_ha: 2.0,
            ..options(8)
        },
        STRIP,
    );
    assert_eq!((kept.len(), dropped), (2, 1));
}

#[test]
fn max_patch_size_splits_into_blocks() {
    let g = grid(10, 10, vec![50.0; 100], 100.0); // 1 ha cells, one 100 ha blob
    let (components, _) = label_cells(
        &g,
        &[0; 100],
        LabelOptions {
            max_patch_ha: Some(9.0),
            ..options(8)
        },
        STRIP,
    );
    assert!(
        components.iter().all(|c| c.cells <= 9),
        "every block at most 9 ha"
    );
    assert_eq!(components.iter().map(|c| c.cells).sum::<u64>(), 100);
    assert_eq!(components.len(), 16); // 3x3-cell blocks over 10x10: 4 x 4
}

#[test]
fn stems_from_a_geotiff_equal_the_raster_sum() {
    let dir = tempfile::tempdir().unwrap();
    // 20 m cells = 0.04 ha; two clumps and a nodata cell.
    let nd = -9999.0f32;
    #[rustfmt::skip]
    let v: Vec<f32> = vec![
        100.0, 250.0, 0.0,   0.0,   0.0, 0.0,
        300.0, nd,    0.0,   0.0,   0.0, 0.0,
        0.0,   0.0,   0.0,   400.0, 50.0, 0.0,
        0.0,   0.0,   0.0,   0.0,   500.0, 5.0,
    ];
    geotiff(
        &dir.path().join("h.tif"),
        Some("EPSG:32618"),
        6,
        4,
        (500_000.0, 4_480_000.0),
        20.0,
        &v,
        Some(-9999.0),
    );
    write(dir.path(), "m.toml", &catalogue(0.9, 10.0, 1.0));
    let o = run(
        dir.path(),
        &[
            "plan",
            "--host",
            "h.tif",
            "--min-density",
            "10",
            "--treatments",
            "m.toml",
            "--budget",
            "100",
            "--out",
            "out",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let stems: Vec<f64> = Table::read(&dir.path().join("out/patches.csv"))
        .rows
        .iter()
        .map(|r| r.num("stems"))
        .collect();
    assert_eq!(stems.len(), 2);
    let expected_total: f64 = v
        .iter()
        .filter(|x| **x >= 10.0)
        .map(|x| *x as f64 * 0.04)
        .sum();
    assert!(
        (stems.iter().sum::<f64>() - expected_total).abs() < 0.2,
        "{stems:?} vs {expected_total}"
    );
    assert!((stems[0] - (100.0 + 250.0 + 300.0) * 0.04).abs() < 0.06);
}

#[test]
fn known_points_reproject_to_published_values() {
    // EPSG Guidance Note 7-2, Transverse Mercator worked example (from memory): OSGB 1936
    // lat 50°30'N, lon 0°30'E → British National Grid E 577274.99 m, N 69740.50 m.
    let out = transform_points("EPSG:4277", "EPSG:27700", &[(0.5, 50.5)]).unwrap();
    assert!((out[0].0 - 577_274.99).abs() < 0.02, "easting {}", out[0].0);
    assert!((out[0].1 - 69_740.50).abs() < 0.02, "northing {}", out[0].1);
    // By the definition of UTM: the central meridian of zone 18N (75°W) on the equator maps to
    // the false easting 500000 m, northing 0.
    let out = transform_points("EPSG:4326", "EPSG:32618", &[(-75.0, 0.0)]).unwrap();
    assert!(
        (out[0].0 - 500_000.0).abs() < 1e-6 && out[0].1.abs() < 1e-6,
        "{out:?}"
    );
    // And back: the tool's lon/lat conversion inverts it.
    let crs = Crs::parse("EPSG:32618", "test").unwrap();
    let back = hostcut::input::gis::ToLonLat::new(&crs)
        .unwrap()
        .points(&[(500_000.0, 0.0)])
        .unwrap();
    assert!((back[0].0 + 75.0).abs() < 1e-9 && back[0].1.abs() < 1e-9);
}
