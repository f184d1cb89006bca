//! CSV formula injection: ids, method ids, the currency and survey sources that begin with a
//! character a spreadsheet treats as the start of a formula (`=`, `+`, `-`, `@`, tab, carriage
//! return: OWASP "CSV Injection", from memory) must reach no CSV the tool writes unneutralised,
//! and hostcut must read its own neutralised cells back as the original values, so a season's
//! round trip (plan → orders → contract → record → next season's plan) keeps every id exact.
//!
//! Every CSV is read back with Python's own `csv` module (an outside reader), not the crate the
//! tool writes with.

mod common;

use std::collections::BTreeSet;
use std::path::Path;
use std::process::Command;

use common::*;

/// Ids a spreadsheet would run or mangle. `\t=1` is trimmed to `=1` when the inventory is read
/// (surrounding whitespace is not part of an id); `'quoted` checks the apostrophe rule can be
/// undone; `-5` is a number and stays as it is.
const IDS: [&str; 8] = [
    "=HYPERLINK(\"x\")",
    "+1",
    "-cmd",
    "@SUM(A1)",
    "\t=1",
    "'quoted",
    "-5",
    "plain",
];

fn quoted(cell: &str) -> String {
    format!("\"{}\"", cell.replace('"', "\"\""))
}

/// Every cell of every CSV under `dirs` that begins with a formula character and is not a plain
/// number, found by Python's csv module: `path: cell` per line (empty when there is none).
fn formula_cells(dirs: &[&Path]) -> String {
    let script = r#"
import csv, os, re, sys
number = re.compile(r"^-?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")
found = 0
for top in sys.argv[1:]:
    for root, _, files in os.walk(top):
        for name in sorted(files):
            if not name.endswith(".csv"):
                continue
            found += 1
            path = os.path.join(root, name)
            with open(path, newline="", encoding="utf-8") as f:
                for row in csv.reader(f):
                    for cell in row:
                        if cell[:1] in ("=", "+", "-", "@", "\t", "\r") and not number.match(cell):
                            print(f"{path}: {cell!r}")
print(f"checked {found} csv files", file=sys.stderr)
"#;
    let o = Command::new("/usr/bin/python3")
        .arg("-c")
        .arg(script)
        .args(dirs)
        .output()
        .expect("run python3");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let checked = String::from_utf8_lossy(&o.stderr);
    assert!(!checked.contains("checked 0 csv"), "{checked}");
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// The `column` of a CSV the tool wrote, read by Python's csv module, each cell as hostcut
/// reads it back ([`hostcut::core::csv_cells::restore`]).
fn ids_in(path: &Path, column: &str) -> BTreeSet<String> {
    let script = r#"
import csv, json, sys
with open(sys.argv[1], newline="", encoding="utf-8") as f:
    print(json.dumps([row[sys.argv[2]] for row in csv.DictReader(f)]))
"#;
    let o = Command::new("/usr/bin/python3")
        .arg("-c")
        .arg(script)
        .arg(path)
        .arg(column)
        .output()
        .expect("run python3");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let cells: Vec<String> = serde_json::from_slice(&o.stdout).unwrap();
    cells
        .iter()
        .map(|c| hostcut::core::csv_cells::restore(c).to_string())
        .collect()
}

#[test]
fn formula_cells_are_neutralised_everywhere_and_ids_round_trip() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    // A method id and a currency that are formulas too; no herbicide, so no licence is needed.
    let catalogue = catalogue(0.9, 100.0, 1.0)
        .replace("currency = \"USD\"", "currency = \"=USD\"")
        .replace("id = \"remove\"", "id = \"@remove\"");
    write(d, "treatments.toml", &catalogue);
    let mut inventory = String::from("id,x,y,stems\n");
    for (k, id) in IDS.iter().enumerate() {
        inventory.push_str(&format!(
            "{},{:.1},{:.1},{}\n",
            quoted(id),
            500_000.0 + 120.0 * k as f64,
            4_470_000.0 + 40.0 * (k % 3) as f64,
            50 + 10 * k
        ));
    }
    write(d, "stands.csv", &inventory);
    let expected: BTreeSet<String> = IDS.iter().map(|id| id.trim().to_string()).collect();

    let ok = |args: &[&str]| {
        let o = run(d, args);
        assert!(o.status.success(), "{args:?}: {}", stderr(&o));
    };
    ok(&[
        "plan",
        "--inventory",
        "stands.csv",
        "--crs",
        "EPSG:32618",
        "--treatments",
        "treatments.toml",
        "--budget",
        "100000",
        "--out",
        "plan",
        "--quiet",
    ]);
    assert_eq!(ids_in(&d.join("plan/plan.csv"), "patch_id"), expected);
    assert_eq!(ids_in(&d.join("plan/patches.csv"), "patch_id"), expected);
    ok(&[
        "orders",
        "--plan",
        "plan",
        "--out",
        "orders",
        "--start-date",
        "2027-06-01",
        "--quiet",
    ]);
    assert_eq!(ids_in(&d.join("orders/orders.csv"), "patch_id"), expected);
    ok(&["contract", "--plan", "plan", "--out", "contract"]);

    // The crew fills the template as a spreadsheet would save it: the cells as written.
    let template = Table::read(&d.join("contract/completion_template.csv"));
    let mut filled = csv::Writer::from_writer(Vec::new());
    filled.write_record(&template.columns).unwrap();
    for row in &template.rows {
        let stems = row.get("planned_stems");
        filled
            .write_record([
                row.get("patch_id"),
                row.get("method"),
                stems,
                stems,
                "2027-06-15",
                "",
                "",
                "done",
                "",
                row.get("parcel"),
                row.get("contact"),
            ])
            .unwrap();
    }
    std::fs::write(d.join("done.csv"), filled.into_inner().unwrap()).unwrap();
    ok(&[
        "record",
        "--plan",
        "plan",
        "--completed",
        "done.csv",
        "--out",
        "record",
    ]);
    assert_eq!(ids_in(&d.join("record/inventory.next.csv"), "id"), expected);

    // Next season's plan from the tool's own inventory keeps every id exactly.
    ok(&[
        "plan",
        "--inventory",
        "record/inventory.next.csv",
        "--crs",
        "EPSG:32618",
        "--treatments",
        "treatments.toml",
        "--budget",
        "100000",
        "--out",
        "next",
        "--quiet",
    ]);
    assert_eq!(ids_in(&d.join("next/patches.csv"), "patch_id"), expected);
    let found = formula_cells(&[
        &d.join("plan"),
        &d.join("orders"),
        &d.join("contract"),
        &d.join("record"),
        &d.join("next"),
    ]);
    assert!(found.is_empty(), "cells a spreadsheet would run:\n{found}");
    // The neutralised cells are there, apostrophe first.
    let plan = std::fs::read_to_string(d.join("plan/plan.csv")).unwrap();
    assert!(plan.contains("'=HYPERLINK"), "{plan}");
    assert!(plan.contains("'@remove"), "{plan}");
    assert!(plan.contains("''quoted"), "{plan}");
}

#[test]
fn survey_sources_are_neutralised() {
    // Calibration's surveys_assigned.csv carries each survey's `source`: the demo's surveys,
    // with sources that are formulas.
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-inputs");
    let surveys = std::fs::read_to_string(demo.join("surveys.csv")).unwrap();
    let mut lines = surveys.lines();
    let header = lines.next().unwrap();
    let column = header.split(',').position(|h| h == "source").unwrap();
    let mut text = format!("{header}\n");
    for (k, line) in lines.enumerate() {
        let mut cells: Vec<String> = line.split(',').map(String::from).collect();
        cells[column] = quoted(["=cmd|' /C calc'!A0", "+survey", "-crew", "@team"][k % 4]);
        text.push_str(&cells.join(","));
        text.push('\n');
    }
    write(d, "surveys.csv", &text);
    let scenario = demo.join("scenario.toml");
    let o = run(
        d,
        &[
            "calibrate",
            "--scenario",
            scenario.to_str().unwrap(),
            "--surveys",
            "surveys.csv",
            "--kernel",
            "exp",
            "--out",
            "cal",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let sources = ids_in(&d.join("cal/surveys_assigned.csv"), "source");
    assert!(sources.contains("=cmd|' /C calc'!A0"), "{sources:?}");
    let found = formula_cells(&[&d.join("cal")]);
    assert!(found.is_empty(), "cells a spreadsheet would run:\n{found}");
}
