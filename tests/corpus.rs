//! More malformed inputs: each is refused with exit code 2, one message naming the file and
//! what is wrong, no panic and no output; and what a user would expect to work does.

mod common;

use std::path::Path;

use common::*;

fn utm(features: &str) -> String {
    format!(
        r#"{{"type":"FeatureCollection","crs":{{"type":"name","properties":{{"name":"urn:ogc:def:crs:EPSG::32618"}}}},"features":[{features}]}}"#
    )
}

fn stands(dir: &Path) {
    write(
        dir,
        "stands.csv",
        "id,x,y,stems\nA,500000,4480000,120\nB,500150,4480050,80\n",
    );
}

fn refused(dir: &Path, args: &[&str], needles: &[&str]) {
    let mut all = vec!["plan", "--out", "out", "--quiet"];
    all.extend_from_slice(args);
    let o = run(dir, &all);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
    assert!(!err.contains("panicked"), "{err}");
    for n in needles {
        assert!(
            err.to_lowercase().contains(&n.to_lowercase()),
            "{args:?}: message lacks `{n}`: {err}"
        );
    }
    assert!(!dir.join("out").exists(), "output left behind");
}

#[test]
fn a_header_claiming_a_huge_raster_is_refused_before_reading() {
    let dir = tempfile::tempdir().unwrap();
    // A VRT is a text header; this one claims 10^9 x 10^9 cells.
    write(
        dir.path(),
        "huge.vrt",
        r#"<VRTDataset rasterXSize="1000000000" rasterYSize="1000000000"><SRS>EPSG:32618</SRS><GeoTransform>500000, 1, 0, 4480000, 0, -1</GeoTransform><VRTRasterBand dataType="Float32" band="1"/></VRTDataset>"#,
    );
    let start = std::time::Instant::now();
    refused(
        dir.path(),
        &["--host", "huge.vrt", "--budget", "10"],
        &["huge.vrt", "1000000000 x 1000000000", "--max-memory-gb"],
    );
    assert!(
        start.elapsed().as_secs() < 10,
        "the refusal must come from the header, not a read"
    );
}

#[test]
fn rasters_without_georeferencing_or_bands() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "nogeo.vrt",
        r#"<VRTDataset rasterXSize="4" rasterYSize="4"><SRS>EPSG:32618</SRS><VRTRasterBand dataType="Float32" band="1"/></VRTDataset>"#,
    );
    refused(
        dir.path(),
        &["--host", "nogeo.vrt", "--budget", "10"],
        &["nogeo.vrt", "georeferencing"],
    );
    write(dir.path(), "empty.geojson", &utm(""));
    refused(
        dir.path(),
        &["--host", "empty.geojson", "--budget", "10"],
        &["empty.geojson"],
    );
}

#[test]
fn bad_vector_layers() {
    let dir = tempfile::tempdir().unwrap();
    stands(dir.path());
    let base = [
        "--inventory",
        "stands.csv",
        "--crs",
        "EPSG:32618",
        "--budget",
        "1000",
    ];
    fn join<'a>(base: &[&'a str], extra: &[&'a str]) -> Vec<&'a str> {
        base.iter().chain(extra).copied().collect()
    }
    let with = |extra: &[&'static str]| join(&base, extra);
    // A bow-tie parcel.
    write(
        dir.path(),
        "bowtie.geojson",
        &utm(
            r#"{"type":"Feature","properties":{"access":"open"},"geometry":{"type":"Polygon","coordinates":[[[499900,4479900],[500300,4480300],[500300,4479900],[499900,4480300],[499900,4479900]]]}}"#,
        ),
    );
    refused(
        dir.path(),
        &with(&["--access", "bowtie.geojson"]),
        &[
            "bowtie.geojson",
            "feature 1",
            "invalid polygon",
            "makevalid",
        ],
    );
    // Mixed geometry types in a parcel layer.
    write(
        dir.path(),
        "mixed.geojson",
        &utm(
            r#"{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[499900,4479900],[500300,4479900],[500300,4480300],[499900,4480300],[499900,4479900]]]}},{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[500000,4480000]}}"#,
        ),
    );
    refused(
        dir.path(),
        &with(&["--access", "mixed.geojson"]),
        &["mixed.geojson", "feature 2", "expected polygons"],
    );
    // Empty layers.
    write(dir.path(), "none.geojson", &utm(""));
    refused(
        dir.path(),
        &with(&["--access", "none.geojson"]),
        &["none.geojson", "no features"],
    );
    refused(
        dir.path(),
        &with(&["--detections", "none.geojson"]),
        &["none.geojson", "no points"],
    );
    refused(
        dir.path(),
        &with(&["--corridor", "none.geojson"]),
        &["none.geojson", "no line features"],
    );
    // Unknown values and bad numbers in parcel fields.
    write(
        dir.path(),
        "rules.geojson",
        &utm(
            r#"{"type":"Feature","properties":{"access":"sometimes"},"geometry":{"type":"Polygon","coordinates":[[[499900,4479900],[500300,4479900],[500300,4480300],[499900,4480300],[499900,4479900]]]}}"#,
        ),
    );
    refused(
        dir.path(),
        &with(&["--access", "rules.geojson"]),
        &["rules.geojson", "field `access`", "sometimes"],
    );
    write(
        dir.path(),
        "factor.geojson",
        &utm(
            r#"{"type":"Feature","properties":{"cost_factor":"cheap"},"geometry":{"type":"Polygon","coordinates":[[[499900,4479900],[500300,4479900],[500300,4480300],[499900,4480300],[499900,4479900]]]}}"#,
        ),
    );
    refused(
        dir.path(),
        &with(&["--access", "factor.geojson"]),
        &["factor.geojson", "cost_factor", "cheap"],
    );
    // Points where lines are expected.
    write(
        dir.path(),
        "pts.geojson",
        &utm(
            r#"{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[500000,4480000]}}"#,
        ),
    );
    refused(
        dir.path(),
        &with(&["--corridor", "pts.geojson"]),
        &["pts.geojson", "expected lines"],
    );
    // A layer name that is not in the file, through the scenario.
    write(
        dir.path(),
        "s.toml",
        "[host]\ninventory = \"stands.csv\"\ncrs = \"EPSG:32618\"\n[access]\npath = \"rules.geojson\"\nlayer = \"nope\"\n[plan]\nbudget = 10\n",
    );
    refused(
        dir.path(),
        &["--scenario", "s.toml"],
        &["rules.geojson", "no layer `nope`"],
    );
}

#[test]
fn csv_exports_that_should_work_do() {
    let dir = tempfile::tempdir().unwrap();
    // BOM, CRLF, quoted fields, a blank line, an extra column, upper-case headers.
    std::fs::write(dir.path().join("s.csv"), "\u{feff}ID,X,Y,Stems,Notes\r\n\"A\",500000,4480000,\"120\",\"by the fence, north\"\r\n\r\nB,500150,4480050,80,\r\n").unwrap();
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "s.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "2000",
            "--out",
            "out",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(summary(&dir.path().join("out"))["n_patches"], 2);
}

#[test]
fn bad_flag_combinations() {
    let dir = tempfile::tempdir().unwrap();
    stands(dir.path());
    let v = vec![50.0f32; 16];
    geotiff(
        &dir.path().join("h.tif"),
        Some("EPSG:32618"),
        4,
        4,
        (500_000.0, 4_480_000.0),
        20.0,
        &v,
        None,
    );
    refused(
        dir.path(),
        &["--host", "h.tif", "--crs", "EPSG:32618", "--budget", "10"],
        &["--crs", "--assume-crs"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--corridor-weight",
            "3",
        ],
        &["--corridor"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--require",
            "A",
            "--exclude",
            "A",
        ],
        &["both required and excluded"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--connectivity",
            "6",
        ],
        &["connectivity"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--depot",
            "12",
        ],
        &["--depot"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--gap",
            "1.5",
        ],
        &["gap"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--time-limit-s",
            "0",
        ],
        &["time limit"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
            "--max-memory-gb",
            "0",
        ],
        &["max_memory_gb"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "NOT-A-CRS",
            "--budget",
            "10",
        ],
        &["NOT-A-CRS", "EPSG"],
    );
    refused(
        dir.path(),
        &[
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            // An inventory in feet is converted (tests/inputs.rs); the work CRS must be metres.
            "--work-crs",
            "EPSG:2263",
            "--budget",
            "10",
        ],
        &["--work-crs", "EPSG:2263", "metres"],
    );
    refused(
        dir.path(),
        &["--inventory", "stands.csv", "--crs", "EPSG:32618"],
        &["no budget"],
    );
    refused(dir.path(), &["--budget", "10"], &["no host layer"]);
}

#[test]
fn wrong_band_types_and_encodings() {
    let dir = tempfile::tempdir().unwrap();
    let gt = "<SRS>EPSG:32618</SRS><GeoTransform>500000, 20, 0, 4480080, 0, -20</GeoTransform>";
    write(
        dir.path(),
        "complex.vrt",
        &format!(
            r#"<VRTDataset rasterXSize="4" rasterYSize="4">{gt}<VRTRasterBand dataType="CFloat32" band="1"/></VRTDataset>"#
        ),
    );
    refused(
        dir.path(),
        &["--host", "complex.vrt", "--budget", "10"],
        &["complex.vrt", "complex or unknown type"],
    );
    write(
        dir.path(),
        "palette.vrt",
        &format!(
            r#"<VRTDataset rasterXSize="4" rasterYSize="4">{gt}<VRTRasterBand dataType="Byte" band="1"><ColorInterp>Palette</ColorInterp><ColorTable><Entry c1="0" c2="0" c3="0" c4="255"/><Entry c1="0" c2="128" c3="0" c4="255"/></ColorTable></VRTRasterBand></VRTDataset>"#
        ),
    );
    refused(
        dir.path(),
        &["--host", "palette.vrt", "--budget", "10"],
        &["palette.vrt", "colour palette"],
    );
    // A Windows-1252 export of an inventory, and a parcel layer with Latin-1 text.
    std::fs::write(
        dir.path().join("latin.csv"),
        b"id,x,y,stems\nCaf\xe9,500000,4480000,12\n",
    )
    .unwrap();
    refused(
        dir.path(),
        &[
            "--inventory",
            "latin.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "10",
        ],
        &["latin.csv", "line 2", "UTF-8"],
    );
    let text = utm(
        r#"{"type":"Feature","properties":{"contact":"Jos@"},"geometry":{"type":"Polygon","coordinates":[[[499900,4479900],[500300,4479900],[500300,4480300],[499900,4480300],[499900,4479900]]]}}"#,
    );
    let bytes: Vec<u8> = text
        .bytes()
        .map(|b| if b == b'@' { 0xe9 } else { b })
        .collect();
    std::fs::write(dir.path().join("latin.geojson"), bytes).unwrap();
    write(dir.path(), "ok.csv", "id,x,y,stems\nA,500000,4480000,12\n");
    refused(
        dir.path(),
        &[
            "--inventory",
            "ok.csv",
            "--crs",
            "EPSG:32618",
            "--access",
            "latin.geojson",
            "--budget",
            "10",
        ],
        &["latin.geojson", "field `contact`", "UTF-8"],
    );
}
