//! Stands without suitable host are carried through with zero risk instead of crashing the
//! plan.

mod common;

use common::*;

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
    let patches = csv_rows_of(&std::fs::read_to_string(out.join("patches.csv")).unwrap());
    assert_eq!(patches.len(), 24, "every stand is listed");
    let zero: Vec<&Vec<String>> = patches.iter().filter(|r| r[18] == "0").collect();
    assert_eq!(zero.len(), 16);
    for row in &zero {
        // eligible, risk_share, method.
        assert_eq!(
            (row[12].as_str(), row[13].as_str(), row[17].as_str()),
            ("no", "0", ""),
            "{row:?}"
        );
    }
    let plan = csv_rows_of(&std::fs::read_to_string(out.join("plan.csv")).unwrap());
    assert!(!plan.is_empty(), "the suitable stands are planned");
    let unsuitable: Vec<&str> = zero.iter().map(|r| r[0].as_str()).collect();
    assert!(plan.iter().all(|r| !unsuitable.contains(&r[1].as_str())));
}
