//! No lost work and no surprises: the same inputs give byte-identical outputs, and a run killed
//! part-way leaves no output folder behind.

mod common;

use std::path::Path;

use common::*;

fn demo_scenario() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-inputs/scenario.toml")
        .display()
        .to_string()
}

#[test]
fn the_same_run_twice_gives_byte_identical_outputs() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = demo_scenario();
    for out in ["a", "b"] {
        let o = run(
            dir.path(),
            &["plan", "--scenario", &scenario, "--out", out, "--quiet"],
        );
        assert!(o.status.success(), "{}", stderr(&o));
    }
    for f in ["plan.csv", "patches.csv", "plan.geojson", "cautions.txt"] {
        assert_eq!(
            std::fs::read(dir.path().join("a").join(f)).unwrap(),
            std::fs::read(dir.path().join("b").join(f)).unwrap(),
            "{f} differs between runs"
        );
    }
    // summary.json differs only in the measured solve and command times.
    let strip = |p: &Path| {
        std::fs::read_to_string(p)
            .unwrap()
            .lines()
            .filter(|l| !l.contains("\"solve_seconds\"") && !l.contains("\"elapsed_s\""))
            .collect::<Vec<_>>()
            .join("\n")
    };
    assert_eq!(
        strip(&dir.path().join("a/summary.json")),
        strip(&dir.path().join("b/summary.json"))
    );
}

#[test]
fn a_killed_run_leaves_no_partial_output() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = demo_scenario();
    for delay_ms in [50u64, 300, 900] {
        let out = format!("killed{delay_ms}");
        let mut child = std::process::Command::new(bin())
            .args(["plan", "--scenario", &scenario, "--out", &out, "--quiet"])
            .current_dir(dir.path())
            .spawn()
            .unwrap();
        std::thread::sleep(std::time::Duration::from_millis(delay_ms));
        let _ = child.kill(); // SIGKILL on Unix
        let status = child.wait().unwrap();
        let target = dir.path().join(&out);
        if status.success() {
            // It finished before the kill: then every output is there.
            assert!(target.join("summary.json").exists() && target.join("plan.csv").exists());
        } else {
            assert!(!target.exists(), "a killed run left {}", target.display());
        }
    }
    // The next run into the same folder works and clears the dead runs' staging folders.
    let o = run(
        dir.path(),
        &[
            "plan",
            "--scenario",
            &scenario,
            "--out",
            "killed50",
            "--quiet",
            "--force",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let leftovers: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".killed50.partial-"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

#[test]
fn curves_are_byte_identical_for_any_number_of_workers() {
    let dir = tempfile::tempdir().unwrap();
    let mut csv = String::from("id,x,y,stems\n");
    for k in 0..14 {
        csv.push_str(&format!(
            "S{k},{},{},{}\n",
            500_000 + (k * 373) % 2000,
            4_480_000 + (k * 911) % 1800,
            40 + (k * 53) % 400
        ));
    }
    write(dir.path(), "stands.csv", &csv);
    for jobs in ["1", "2", "3"] {
        let out = format!("c{jobs}");
        let o = run(
            dir.path(),
            &[
                "curve",
                "--inventory",
                "stands.csv",
                "--crs",
                "EPSG:32618",
                "--budget-range",
                "0:9000:7",
                "--jobs",
                jobs,
                "--out",
                &out,
                "--quiet",
            ],
        );
        assert!(o.status.success(), "{}", stderr(&o));
    }
    for f in [
        "curve.csv",
        "curve.svg",
        "justification.md",
        "justification.html",
    ] {
        let first = std::fs::read(dir.path().join("c1").join(f)).unwrap();
        for jobs in ["2", "3"] {
            assert_eq!(
                first,
                std::fs::read(dir.path().join(format!("c{jobs}")).join(f)).unwrap(),
                "{f} differs with --jobs {jobs}"
            );
        }
    }
}

#[test]
fn ids_never_become_paths_and_time_limits_are_results() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("work")).unwrap();
    write(
        &dir.path().join("work"),
        "stands.csv",
        "id,x,y,stems\n../escape,500000,4480000,120\n/etc/passwd,500100,4480000,80\n",
    );
    let o = run(
        &dir.path().join("work"),
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "5000",
            "--out",
            "out",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!dir.path().join("escape").exists() && !dir.path().join("work/escape").exists());
    let mut names: Vec<String> = std::fs::read_dir(dir.path().join("work/out"))
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            ".hostcut-folder",
            "cautions.txt",
            "patches.csv",
            "plan.csv",
            "plan.geojson",
            "scenario.resolved.toml",
            "summary.json",
            "treatments.used.toml"
        ]
    );
    assert!(
        std::fs::read_to_string(dir.path().join("work/out/plan.csv"))
            .unwrap()
            .contains("../escape"),
        "the id is kept as data"
    );
    // A time limit too short to prove anything: exit 0, a warning, the status and gap.
    let scenario = demo_scenario();
    let o = run(
        dir.path(),
        &[
            "plan",
            "--scenario",
            &scenario,
            "--time-limit-s",
            "0.05",
            "--out",
            "quick",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let s = summary(&dir.path().join("quick"));
    if s["status"] == "time_limit" {
        assert!(
            stderr(&o).contains("warning: the optimiser stopped at the time limit"),
            "{}",
            stderr(&o)
        );
        assert!(s["gap"].as_f64().unwrap() >= 0.0);
    }
    assert!(s["risk_after"].as_f64().unwrap() <= s["greedy_risk_after"].as_f64().unwrap());
}
