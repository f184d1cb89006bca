//! The memory guard holds: inputs whose links, patches or labelling would not fit are refused
//! with exit 2 before they are allocated — never an allocation-failure abort, never a staging
//! folder left behind — rasters are read in strips, and stands without suitable host are
//! carried through with zero risk instead of crashing the plan.
//!
//! Runs that could allocate without bound are run under an address-space limit (`ulimit -v`,
//! common practice for memory tests), so a regression aborts the child instead of the machine.

mod common;

use std::path::Path;
use std::process::{Command, Output};

use common::*;

/// Address-space limit for the child, in KiB (2 GB).
const LIMIT_KB: u64 = 2_000_000;

/// Run `hostcut` in `dir` under `ulimit -v limit_kb`.
fn run_limited(dir: &Path, limit_kb: u64, args: &[&str]) -> Output {
    Command::new("sh")
        .arg("-c")
        .arg(format!("ulimit -v {limit_kb} && exec \"$0\" \"$@\""))
        .arg(bin())
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run hostcut under sh")
}

/// Exit 2 with a message (no abort, no panic), and nothing in `dir` but `inputs`.
fn refused_cleanly(o: &Output, dir: &Path, inputs: &[&str]) -> String {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(2), "expected exit 2: {err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(!err.contains("memory allocation"), "{err}");
    let mut left: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    left.sort();
    let mut expected: Vec<String> = inputs.iter().map(|s| s.to_string()).collect();
    expected.sort();
    assert_eq!(
        left, expected,
        "a refused run must leave neither `out` nor a staging folder or lock"
    );
    err
}

/// An inventory of `n` stands all at one point (10 stems each).
fn stands_at_one_point(dir: &Path, n: usize) {
    let mut text = String::from("id,x,y,stems\n");
    for i in 0..n {
        text.push_str(&format!("S{i},500000,4400000,10\n"));
    }
    write(dir, "stands.csv", &text);
}

#[test]
fn thirty_thousand_stands_at_one_point_are_refused_before_any_link() {
    // Issue 18: every pair of 30,000 coincident stands is a link (about 4.5e8 links, > 10 GB);
    // before the fix they were all allocated and the run aborted.
    let dir = tempfile::tempdir().unwrap();
    stands_at_one_point(dir.path(), 30_000);
    let o = run_limited(
        dir.path(),
        LIMIT_KB,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "1000",
            "--out",
            "out",
            "--quiet",
        ],
    );
    let err = refused_cleanly(&o, dir.path(), &["stands.csv"]);
    // The counting pass names the estimate, the patches and the memory it would need.
    assert!(err.contains("about 4"), "no link estimate: {err}");
    assert!(err.contains("links"), "{err}");
    assert!(err.contains("30000 patches"), "{err}");
    assert!(err.contains("GB"), "{err}");
    assert!(err.contains("5000000"), "the fixed link limit: {err}");
    assert!(
        err.contains("--epsilon"),
        "a hint to shorten the cutoff: {err}"
    );
}

#[test]
fn a_small_memory_limit_refuses_twelve_thousand_stands_before_allocating() {
    // Issue 18: with `--max-memory-gb 0.5`, 12,000 coincident stands reached 1.7 GB before the
    // refusal. Under a 1 GB address-space limit that allocation aborts; the refusal must come
    // first and name the flag.
    let dir = tempfile::tempdir().unwrap();
    stands_at_one_point(dir.path(), 12_000);
    let o = run_limited(
        dir.path(),
        1_000_000,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "1000",
            "--max-memory-gb",
            "0.5",
            "--out",
            "out",
            "--quiet",
        ],
    );
    let err = refused_cleanly(&o, dir.path(), &["stands.csv"]);
    assert!(err.contains("`--max-memory-gb 0.5`"), "{err}");
    assert!(err.contains("12000 patches"), "{err}");
    assert!(err.contains("refused before building it"), "{err}");
}

#[test]
fn a_checkerboard_raster_is_refused_while_it_is_labelled_in_strips() {
    // Issue 18: a checkerboard with 4-connectivity makes every host cell its own patch. This
    // 1200 x 1200 one (720,000 patches) passes the header check at `--max-memory-gb 0.3` and
    // must be stopped by the streaming labeller's own count, partway through the raster.
    let dir = tempfile::tempdir().unwrap();
    let n = 1200;
    let values: Vec<f32> = (0..n * n)
        .map(|k| if (k / n + k % n) % 2 == 0 { 100.0 } else { 0.0 })
        .collect();
    geotiff(
        &dir.path().join("checker.tif"),
        Some("EPSG:32618"),
        n,
        n,
        (500_000.0, 4_400_000.0),
        10.0,
        &values,
        None,
    );
    let o = run_limited(
        dir.path(),
        LIMIT_KB,
        &[
            "plan",
            "--host",
            "checker.tif",
            "--connectivity",
            "4",
            "--max-memory-gb",
            "0.3",
            "--budget",
            "1000",
            "--out",
            "out",
            "--quiet",
        ],
    );
    let err = refused_cleanly(&o, dir.path(), &["checker.tif"]);
    assert!(err.contains("labelling needs about"), "{err}");
    assert!(err.contains(" of 1200 rows"), "refused partway: {err}");
    assert!(err.contains("`--max-memory-gb 0.3`"), "{err}");
    assert!(err.contains("gdalwarp -tr"), "a hint to coarsen: {err}");
}

#[test]
fn a_suitability_raster_larger_than_the_budget_is_read_in_strips() {
    // Issue 18: the suitability raster was read whole. This one is 20,000 x 20,000 cells (a
    // VRT over a 100 x 100 tile; 3.2 GB as doubles), far above `--max-memory-gb 0.5` and the
    // 2 GB address-space limit; read in strips where the stands are, the plan runs.
    let dir = tempfile::tempdir().unwrap();
    let tile = 100;
    geotiff(
        &dir.path().join("tile.tif"),
        Some("EPSG:32618"),
        tile,
        tile,
        (500_000.0, 4_400_000.0),
        10.0,
        &vec![0.7f32; tile * tile],
        None,
    );
    let side = 20_000;
    write(
        dir.path(),
        "suitability.vrt",
        &format!(
            r#"<VRTDataset rasterXSize="{side}" rasterYSize="{side}"><SRS>EPSG:32618</SRS><GeoTransform>500000, 10, 0, 4400000, 0, -10</GeoTransform><VRTRasterBand dataType="Float32" band="1"><SimpleSource><SourceFilename relativeToVRT="1">tile.tif</SourceFilename><SourceBand>1</SourceBand><SrcRect xOff="0" yOff="0" xSize="{tile}" ySize="{tile}"/><DstRect xOff="0" yOff="0" xSize="{tile}" ySize="{tile}"/></SimpleSource></VRTRasterBand></VRTDataset>"#
        ),
    );
    let mut text = String::from("id,x,y,stems\n");
    for k in 0..12 {
        let (c, r) = (5 + 8 * k, 3 + 7 * k);
        text.push_str(&format!(
            "S{k},{},{},{}\n",
            500_000 + 10 * c + 5,
            4_400_000 - 10 * r - 5,
            20 + k
        ));
    }
    write(dir.path(), "stands.csv", &text);
    let o = run_limited(
        dir.path(),
        LIMIT_KB,
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--suitability",
            "suitability.vrt",
            "--max-memory-gb",
            "0.5",
            // Enough to treat every stand: the solve is instant, the read is what is tested.
            "--budget",
            "100000",
            "--out",
            "out",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let patches = Table::read(&dir.path().join("out/patches.csv")).rows;
    assert_eq!(patches.len(), 12);
    // Every stand read its own cell of the tile.
    for row in &patches {
        assert_eq!(row.get("suitability"), "0.7", "{row:?}");
    }
}

#[test]
fn stands_on_zero_suitability_are_carried_with_zero_risk() {
    // Issue 18: stands with suitability 0 made `plan` panic in the component decomposition
    // (exit 101). A land manager expects every stand of the inventory back: those without
    // suitable host are listed with risk 0, not planned for treatment, and counted.
    let dir = tempfile::tempdir().unwrap();
    // 20 x 20 cells of 100 m: the west half unsuitable (0), the east half 0.8.
    let n = 20;
    let values: Vec<f32> = (0..n * n)
        .map(|k| if k % n < 10 { 0.0 } else { 0.8 })
        .collect();
    geotiff(
        &dir.path().join("suitability.tif"),
        Some("EPSG:32618"),
        n,
        n,
        (500_000.0, 4_402_000.0),
        100.0,
        &values,
        None,
    );
    // 6 x 4 stands 300 m apart: the 16 with x < 501,000 stand on suitability 0.
    let mut text = String::from("id,x,y,stems\n");
    let mut k = 0;
    for i in 0..6 {
        for j in 0..4 {
            text.push_str(&format!(
                "T{k},{},{},{}\n",
                500_050 + i * 300,
                4_400_050 + j * 300,
                20 + k
            ));
            k += 1;
        }
    }
    write(dir.path(), "stands.csv", &text);
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--suitability",
            "suitability.tif",
            "--budget",
            "3000",
            "--out",
            "out",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("note: 16 patches have no host the insect can establish on"),
        "{}",
        stderr(&o)
    );
    let out = dir.path().join("out");
    assert_eq!(summary(&out)["patches_without_host"], 16);
    let patches = Table::read(&out.join("patches.csv")).rows;
    assert_eq!(patches.len(), 24, "every stand is listed");
    let zero: Vec<&Row> = patches
        .iter()
        .filter(|r| r.get("suitability") == "0")
        .collect();
    assert_eq!(zero.len(), 16);
    for row in &zero {
        assert_eq!(
            (
                row.get("eligible"),
                row.get("risk_share"),
                row.get("method")
            ),
            ("no", "0", ""),
            "{row:?}"
        );
    }
    let plan = Table::read(&out.join("plan.csv")).rows;
    assert!(!plan.is_empty(), "the suitable stands are planned");
    let unsuitable: Vec<&str> = zero.iter().map(|r| r.get("patch_id")).collect();
    assert!(
        plan.iter()
            .all(|r| !unsuitable.contains(&r.get("patch_id")))
    );
}

#[test]
fn outline_pieces_count_the_polygons_the_union_draws() {
    // Oracle: geo's own union (the outline the plan writes) on small run sets; pieces are what
    // the memory estimate charges per polygon.
    use hostcut::input::gis::Frame;
    use hostcut::input::label::Run;
    use hostcut::input::patches::{outline, outline_pieces};
    let frame = Frame {
        width: 10,
        height: 10,
        transform: [0.0, 1.0, 0.0, 10.0, 0.0, -1.0],
    };
    let run = |row, c0, c1| Run { row, c0, c1 };
    let cases: Vec<Vec<Run>> = vec![
        // A 3 x 3 checkerboard (8-connected: one patch, five squares touching at corners).
        vec![
            run(0, 0, 1),
            run(0, 2, 3),
            run(1, 1, 2),
            run(2, 0, 1),
            run(2, 2, 3),
        ],
        // A solid block, an L, and a ring (one polygon with a hole).
        vec![run(0, 0, 4), run(1, 0, 4)],
        vec![run(0, 0, 1), run(1, 0, 1), run(2, 0, 3)],
        vec![run(0, 0, 3), run(1, 0, 1), run(1, 2, 3), run(2, 0, 3)],
        // Two rows touching only at a corner, and two rows apart.
        vec![run(0, 0, 2), run(1, 2, 4)],
        vec![run(0, 0, 2), run(2, 0, 2)],
    ];
    for runs in &cases {
        assert_eq!(
            outline_pieces(runs),
            outline(&frame, runs).0.len(),
            "{runs:?}"
        );
    }
}
