//! Streaming labelling (src/label.rs: runs, row by row, in strips) against the textbook
//! in-memory method — union-find over every cell joined to its left, upper and (8-connected)
//! upper-diagonal neighbours of the same key, then components in row-major order of their
//! first cell (Hoshen & Kopelman 1976, from memory) — on random rasters with nodata, parcels,
//! block limits and slivers, in strips of 1 to all rows so components cross strip edges; and
//! the GDAL row reader against a whole-band read across the file's own block edges.

use hostcut::input::gis::{Crs, Grid, read_raster};
use hostcut::input::patches::{LabelOptions, label_cells, label_strips};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// The reference: (cells, parcel) per component and the number of slivers dropped.
fn reference(grid: &Grid, parcels: &[u32], o: LabelOptions) -> (Vec<(Vec<usize>, u32)>, usize) {
    let (w, h) = (grid.width, grid.height);
    let host =
        |i: usize| grid.values[i].is_finite() && grid.values[i] as f32 as f64 >= o.min_density;
    let cell_ha = grid.cell_area_ha();
    let side = o
        .max_patch_ha
        .map(|m| ((m / cell_ha).sqrt().floor() as usize).max(1))
        .unwrap_or(usize::MAX);
    let key = |i: usize| {
        (
            parcels.get(i).copied().unwrap_or(0),
            (i % w) / side,
            (i / w) / side,
        )
    };
    let mut parent: Vec<usize> = (0..w * h).collect();
    fn find(p: &mut [usize], mut i: usize) -> usize {
        while p[i] != i {
            p[i] = p[p[i]];
            i = p[i];
        }
        i
    }
    for row in 0..h {
        for col in 0..w {
            let i = row * w + col;
            if !host(i) {
                continue;
            }
            let mut near = Vec::new();
            if col > 0 {
                near.push(i - 1);
            }
            if row > 0 {
                near.push(i - w);
                if o.connectivity == 8 {
                    if col > 0 {
                        near.push(i - w - 1);
                    }
                    if col + 1 < w {
                        near.push(i - w + 1);
                    }
                }
            }
            for j in near {
                if host(j) && key(j) == key(i) {
                    let (a, b) = (find(&mut parent, i), find(&mut parent, j));
                    parent[a.max(b)] = a.min(b);
                }
            }
        }
    }
    let mut slot = std::collections::HashMap::new();
    let mut out: Vec<(Vec<usize>, u32)> = Vec::new();
    for i in 0..w * h {
        if host(i) {
            let root = find(&mut parent, i);
            let k = *slot.entry(root).or_insert_with(|| {
                out.push((Vec::new(), key(i).0));
                out.len() - 1
            });
            out[k].0.push(i);
        }
    }
    let before = out.len();
    out.retain(|(c, _)| c.len() as f64 * cell_ha >= o.min_patch_ha);
    let dropped = before - out.len();
    (out, dropped)
}

fn random_grid(rng: &mut ChaCha8Rng) -> (Grid, Vec<u32>) {
    let (w, h) = (rng.gen_range(1..=40), rng.gen_range(1..=40));
    let fill = rng.gen_range(0.2..0.8);
    let values: Vec<f64> = (0..w * h)
        .map(|_| {
            let r: f64 = rng.r#gen();
            if r < 0.05 {
                f64::NAN
            } else if r < 0.05 + fill {
                rng.gen_range(10.0..200.0)
            } else {
                rng.gen_range(0.0..5.0)
            }
        })
        .collect();
    // Parcels as rectangles (or none at all).
    let mut parcels = vec![0u32; w * h];
    if rng.gen_bool(0.6) {
        for p in 1..=rng.gen_range(1..5u32) {
            let (c0, r0) = (rng.gen_range(0..w), rng.gen_range(0..h));
            let (c1, r1) = (rng.gen_range(c0..w) + 1, rng.gen_range(r0..h) + 1);
            for r in r0..r1 {
                for c in c0..c1 {
                    parcels[r * w + c] = p;
                }
            }
        }
    }
    let cell = 10.0 * rng.gen_range(1..=4) as f64;
    let grid = Grid {
        width: w,
        height: h,
        transform: [500_000.0, cell, 0.0, 4_480_000.0, 0.0, -cell],
        values,
        crs: Crs::parse("EPSG:32618", "test").unwrap(),
    };
    (grid, parcels)
}

#[test]
fn streaming_labelling_equals_in_memory_labelling_on_random_rasters() {
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    let mut crossing = 0;
    for case in 0..300 {
        let (grid, parcels) = random_grid(&mut rng);
        let cell_ha = grid.cell_area_ha();
        let options = LabelOptions {
            min_density: 8.0,
            connectivity: if rng.gen_bool(0.5) { 8 } else { 4 },
            min_patch_ha: if rng.gen_bool(0.5) {
                0.0
            } else {
                2.5 * cell_ha
            },
            max_patch_ha: rng
                .gen_bool(0.3)
                .then(|| rng.gen_range(1..30) as f64 * cell_ha),
        };
        let parcels = if rng.gen_bool(0.2) {
            Vec::new()
        } else {
            parcels
        };
        let (expected, expected_dropped) = reference(&grid, &parcels, options);
        for strip in [1, 3, 7, grid.height] {
            let (blobs, dropped) = label_cells(&grid, &parcels, options, strip);
            assert_eq!(
                dropped, expected_dropped,
                "case {case} strip {strip}: slivers"
            );
            assert_eq!(
                blobs.len(),
                expected.len(),
                "case {case} strip {strip}: count"
            );
            for (b, (cells, parcel)) in blobs.iter().zip(&expected) {
                let got: Vec<usize> = b.cell_indices(grid.width).collect();
                assert_eq!(&got, cells, "case {case} strip {strip}: cells");
                assert_eq!(b.parcel, *parcel);
                assert_eq!(b.cells as usize, cells.len());
                let sum: f64 = cells.iter().map(|&c| grid.values[c] as f32 as f64).sum();
                assert!((b.sum - sum).abs() <= 1e-9 * sum.max(1.0));
                if strip < grid.height {
                    let rows: std::collections::BTreeSet<usize> =
                        cells.iter().map(|c| c / grid.width / strip).collect();
                    if rows.len() > 1 {
                        crossing += 1;
                    }
                }
            }
        }
    }
    assert!(
        crossing > 200,
        "only {crossing} components crossed a strip edge"
    );
}

/// A raster written with 5-row GDAL blocks, read in strips of 7 rows (so strips and blocks
/// both cut through components): the rows equal a whole-band read, and labelling from the
/// file equals labelling the grid in memory.
#[test]
fn rows_read_from_a_blocked_geotiff_equal_the_whole_band() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h) = (37, 41);
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    let values: Vec<f32> = (0..w * h)
        .map(|i| {
            let (c, r) = ((i % w) as f64, (i / w) as f64);
            // Diagonal bands across every block edge, some nodata.
            if (c + r) as usize % 9 < 4 {
                50.0 + rng.gen_range(0.0..50.0)
            } else if i % 29 == 0 {
                -9999.0
            } else {
                0.0
            }
        })
        .collect();
    let path = dir.path().join("host.tif");
    {
        use gdal::DriverManager;
        let driver = DriverManager::get_driver_by_name("GTiff").unwrap();
        let options = gdal::raster::RasterCreationOptions::from_iter(["BLOCKYSIZE=5"]);
        let mut ds = driver
            .create_with_band_type_with_options::<f32, _>(&path, w, h, 1, &options)
            .unwrap();
        ds.set_geo_transform(&[500_000.0, 20.0, 0.0, 4_480_000.0, 0.0, -20.0])
            .unwrap();
        let srs = gdal::spatial_ref::SpatialRef::from_definition("EPSG:32618").unwrap();
        ds.set_spatial_ref(&srs).unwrap();
        let mut band = ds.rasterband(1).unwrap();
        band.set_no_data_value(Some(-9999.0)).unwrap();
        let mut buffer = gdal::raster::Buffer::new((w, h), values.clone());
        band.write((0, 0), (w, h), &mut buffer).unwrap();
    }
    let raster =
        hostcut::input::gis::open_raster(&path, None, &hostcut::core::memory::Budget::new(1.0))
            .unwrap();
    assert_eq!(raster.block_rows, 5, "the file's blocks are 5 rows");
    let whole = read_raster(&path, None).unwrap();
    let mut streamed: Vec<f32> = Vec::new();
    let mut row0 = 0;
    while row0 < h {
        let rows = 7.min(h - row0);
        streamed.extend(raster.read_rows(row0, rows).unwrap());
        row0 += rows;
    }
    assert_eq!(streamed.len(), whole.values.len());
    for (a, b) in streamed.iter().zip(&whole.values) {
        assert!((a.is_nan() && b.is_nan()) || f64::from(*a) == *b);
    }
    let options = LabelOptions {
        min_density: 20.0,
        connectivity: 8,
        min_patch_ha: 0.0,
        max_patch_ha: None,
    };
    let (from_file, _, _) = label_strips(&raster.frame, options, 7, |row0, rows| {
        Ok((raster.read_rows(row0, rows)?, Vec::new()))
    })
    .unwrap();
    let (expected, _) = reference(&whole, &[], options);
    assert_eq!(from_file.len(), expected.len());
    assert!(expected.len() > 3);
    for (b, (cells, _)) in from_file.iter().zip(&expected) {
        assert_eq!(&b.cell_indices(w).collect::<Vec<_>>(), cells);
    }
}
