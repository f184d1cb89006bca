//! report.html's maps and print layout, checked from the outside: headless Chromium renders the
//! page (its DOM after parsing, its printed PDF) and poppler's `pdftotext` reads the PDF back.
//! Every treated patch is labelled on the overview map and on its crew-day maps; the printed
//! report has the schedule's page count, a "page N of M" on every page, and the overview's
//! cautions reference names the page the cautions are on; the explorable map's inline script runs
//! with networking off and makes every treated patch clickable.

mod common;

use std::path::{Path, PathBuf};
use std::process::Command;

use common::*;

/// Forty stands in a 2 km square (crowded labels), two of them large enough to be split.
fn crowded_plan(dir: &Path) -> PathBuf {
    let mut csv = String::from("id,x,y,stems,access,herbicide\n");
    for k in 0..40u64 {
        let h = k.wrapping_mul(2654435761) % 1_000_003;
        csv.push_str(&format!(
            "C{k:02},{},{},{},open,allowed\n",
            500_000 + h % 2000,
            4_480_000 + (h / 2000) % 2000,
            10 + k % 40
        ));
    }
    csv.push_str("BIG,501000,4481000,900,open,allowed\n");
    write(dir, "crowded.csv", &csv);
    let o = run(
        dir,
        &[
            "plan",
            "--inventory",
            "crowded.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "40000",
            "--out",
            "crowded",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    dir.join("crowded")
}

fn pdftotext() -> Option<PathBuf> {
    let found = PathBuf::from("/usr/bin/pdftotext");
    if found.exists() {
        return Some(found);
    }
    assert!(
        std::env::var_os("CI").is_none(),
        "CI must install poppler-utils for this test"
    );
    eprintln!("skipped: no pdftotext on this machine");
    None
}

/// The part of the DOM from `start` to the next `<section` (one report page).
fn section<'a>(dom: &'a str, start: &str) -> &'a str {
    let k = dom
        .find(start)
        .unwrap_or_else(|| panic!("no {start} in the DOM"));
    let rest = &dom[k..];
    let end = rest[1..].find("<section").map_or(rest.len(), |e| e + 1);
    &rest[..end]
}

/// Outside source: Chromium's parsed DOM (`--dump-dom`), printed PDF (`--print-to-pdf`, CSS
/// `@page` margin boxes, Chromium 131+) and poppler's `pdftotext` (one form feed per page).
#[test]
fn every_patch_labelled_pages_numbered_and_cautions_page_named() {
    let (Some(chromium), Some(pdftotext)) = (chromium(), pdftotext()) else {
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let o = run(dir.path(), &["demo", "--out", "demo", "--quiet"]);
    assert!(o.status.success(), "{}", stderr(&o));
    crowded_plan(dir.path());
    for (out, args) in [
        (
            "demo-roads",
            vec![
                "--plan",
                "demo",
                "--roads",
                "demo/inputs/roads.gpkg",
                "--depot",
                "501250,4471750",
                "--crews",
                "2",
            ],
        ),
        ("crowded-ord", vec!["--plan", "crowded"]),
    ] {
        let mut all = vec![
            "orders",
            "--out",
            out,
            "--start-date",
            "2027-07-01",
            "--quiet",
        ];
        all.extend(args);
        let o = run(dir.path(), &all);
        assert!(o.status.success(), "{}", stderr(&o));
        let page = dir.path().join(out).join("report.html");
        let plan_dir = if out == "demo-roads" {
            "demo"
        } else {
            "crowded"
        };
        let plan = rows(&dir.path().join(plan_dir).join("plan.csv"));
        assert!(plan.len() >= 10, "{out}: {} treated", plan.len());

        // Every treated patch labelled on the overview map, once.
        let dom = chromium_run(&chromium, dir.path(), &["--dump-dom".into()], &page);
        let dom = stdout(&dom);
        let overview = section(&dom, "id=\"overview\"");
        for r in &plan {
            let id = &r["patch_id"];
            let needle = format!("class=\"plabel\" data-patch=\"{id}\"");
            assert_eq!(
                overview.matches(&needle).count(),
                1,
                "{out}: overview label of {id}"
            );
        }
        // Context layers the plan recorded (the demo's scenario.resolved.toml names parcels,
        // water, sensitive sites and two corridors; the inventory plan none).
        for layer in ["parcels", "water", "sensitive sites", "Route 17"] {
            let needle = format!("class=\"context\" data-layer=\"{layer}\"");
            assert_eq!(
                overview.contains(&needle),
                out == "demo-roads",
                "{out}: {layer}"
            );
        }
        // ... and every stop on its crew-day map.
        let orders = rows(&dir.path().join(out).join("orders.csv"));
        let info = json(&dir.path().join(out).join("orders.json"));
        let days = info["crew_days"].as_u64().unwrap() as usize;
        for sheet in 1..=days {
            let day = section(&dom, &format!("id=\"d{sheet}\""));
            let labels = day.matches("class=\"plabel\"").count();
            let circles = day.matches("<circle").count();
            assert_eq!(labels, circles, "{out}: sheet d{sheet}, a label per stop");
        }
        for r in &orders {
            assert!(
                dom.contains(&format!("data-patch=\"{}\"", r["patch_id"])),
                "{out}: {}",
                r["patch_id"]
            );
        }

        // The explorable map runs with networking off (every request proxied to a closed port)
        // and makes every treated patch clickable; in print its controls are hidden.
        let offline = chromium_run(
            &chromium,
            dir.path(),
            &[
                "--proxy-server=127.0.0.1:9".into(),
                "--proxy-bypass-list=<-loopback>".into(),
                "--dump-dom".into(),
            ],
            &page,
        );
        let offline = stdout(&offline);
        let shown = format!("data-patches-shown=\"{}\"", plan.len());
        assert!(
            offline.contains(&shown),
            "{out}: script did not mark {shown}"
        );
        assert!(
            offline.contains("<div id=\"explore\" class=\"noprint small\">"),
            "{out}: controls shown"
        );

        // The printed pages: the schedule's count, each numbered, the cautions where page 1 says.
        let pdf = dir.path().join(out).join("report.pdf");
        let p = chromium_run(
            &chromium,
            dir.path(),
            &[
                format!("--print-to-pdf={}", pdf.display()),
                "--no-pdf-header-footer".into(),
            ],
            &page,
        );
        assert!(pdf.exists(), "no PDF: {}", stderr(&p));
        let text = Command::new(&pdftotext)
            .args(["-layout"])
            .arg(&pdf)
            .arg("-")
            .output()
            .unwrap();
        let text = String::from_utf8_lossy(&text.stdout).to_string();
        let pages: Vec<&str> = text
            .split('\u{c}')
            .filter(|p| !p.trim().is_empty())
            .collect();
        // One sheet per crew-day, plus a continuation sheet for a day too dense for one page.
        let sheets = info["report_crew_day_pages"].as_u64().unwrap() as usize;
        assert!(
            sheets >= days,
            "{out}: {sheets} sheets for {days} crew-days"
        );
        let expected = info["report_overview_pages"].as_u64().unwrap() as usize + sheets;
        assert_eq!(pages.len(), expected, "{out}: printed pages");
        for (k, p) in pages.iter().enumerate() {
            let want = format!("page {} of {expected}", k + 1);
            assert!(p.contains(&want), "{out}: `{want}` on its page");
            assert!(!p.contains("zoom in"), "{out}: map controls printed");
        }
        let said = pages[0]
            .split("cautions on page ")
            .nth(1)
            .and_then(|t| t.split(|c: char| !c.is_ascii_digit()).next())
            .and_then(|n| n.parse::<usize>().ok())
            .expect("page 1 names the cautions page");
        assert!(
            pages[said - 1].contains("Cautions for every site"),
            "{out}: cautions not on page {said}"
        );
    }
}

fn rows(path: &Path) -> Vec<std::collections::HashMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let headers = r.headers().unwrap().clone();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            headers
                .iter()
                .zip(rec.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

fn json(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}
