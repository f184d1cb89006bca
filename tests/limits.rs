//! `--time-limit-s` bounds the whole command (reading layers, every solve of an ensemble, a
//! budget curve or a programme, the metrics after the solve), and the optimiser's status names
//! what stopped the search. Times are asserted only with generous bounds (the limit x 1.3 plus
//! a few seconds), mostly on the command's own record of its elapsed time in summary.json, so a
//! busy machine does not fail them; the statuses are asserted exactly.
//!
//! Before the fix each solve got the whole limit: `plan` over four dispersal kernels with
//! `--robust worst` and a 5 s limit took 26 s, and a large model whose local search ran out of
//! moves reported "stopped at the time limit" (docs/benchmarks.md).

mod common;

use std::path::Path;
use std::time::Instant;

use common::*;

fn demo_scenario() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-inputs/scenario.toml")
        .display()
        .to_string()
}

/// The generous bound on a command's time: the limit x 1.3 plus `slack_s`.
fn generous(limit_s: f64, slack_s: f64) -> f64 {
    1.3 * limit_s + slack_s
}

const STOPS: [&str; 4] = ["optimal", "gap_limit", "time_limit", "no_improving_move"];

/// Run `hostcut args` in `dir`, which must succeed; also its wall time in seconds.
fn run_timed(dir: &Path, args: &[&str]) -> (std::process::Output, f64) {
    let clock = Instant::now();
    let o = run(dir, args);
    let wall = clock.elapsed().as_secs_f64();
    assert!(o.status.success(), "{}", stderr(&o));
    (o, wall)
}

/// The command kept to `limit` seconds by its own record (summary.json's `elapsed_s`) and by
/// the clock, generously, and its status is one of [`STOPS`].
fn kept_to_the_limit(s: &serde_json::Value, wall: f64, limit: f64) {
    assert_eq!(s["time_limit_s"], limit);
    let elapsed = s["elapsed_s"].as_f64().unwrap();
    assert!(elapsed <= generous(limit, 1.0), "recorded {elapsed} s");
    assert!(wall <= generous(limit, 5.0), "wall {wall} s");
    assert!(
        STOPS.contains(&s["status"].as_str().unwrap()),
        "{}",
        s["status"]
    );
}

#[test]
fn an_ensemble_plan_keeps_to_the_commands_limit() {
    // Four dispersal kernels, two of them dense (Cauchy links every pair), and the robust
    // worst case: six searches that together need well over a minute on the demo.
    let dir = tempfile::tempdir().unwrap();
    let scenario = demo_scenario();
    let limit = 4.0;
    let (o, wall) = run_timed(
        dir.path(),
        &[
            "plan",
            "--scenario",
            &scenario,
            "--kernel",
            "exp:100",
            "--kernel",
            "exp:200",
            "--kernel",
            "cauchy:200",
            "--kernel",
            "cauchy:400",
            "--robust",
            "worst",
            "--time-limit-s",
            "4",
            "--out",
            "ens",
            "--quiet",
        ],
    );
    let s = summary(&dir.path().join("ens"));
    kept_to_the_limit(&s, wall, limit);
    for scenario in s["ensemble"]["scenarios"].as_array().unwrap() {
        let status = scenario["optimum_status"].as_str().unwrap();
        assert!(STOPS.contains(&status), "{status}");
    }
    if s["status"] == "time_limit" {
        assert!(
            stderr(&o).contains("for the whole command"),
            "{}",
            stderr(&o)
        );
    }
}

#[test]
fn a_budget_curve_shares_the_limit_between_its_levels() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = demo_scenario();
    let limit = 4.0;
    let (o, wall) = run_timed(
        dir.path(),
        &[
            "curve",
            "--scenario",
            &scenario,
            "--budget-range",
            "0:160000:12",
            "--time-limit-s",
            "4",
            "--out",
            "curve",
        ],
    );
    assert!(wall <= generous(limit, 5.0), "wall {wall} s");
    // The command reports its own elapsed time against the limit (a result line:
    // without `--quiet`).
    let out = stdout(&o);
    let line = out
        .lines()
        .find(|l| l.contains("of `--time-limit-s 4`"))
        .unwrap_or_else(|| panic!("no time line in {out}"));
    let elapsed: f64 = line.split_whitespace().next().unwrap().parse().unwrap();
    assert!(elapsed <= generous(limit, 1.0), "{line}");
    let rows = Table::read(&dir.path().join("curve/curve.csv")).rows;
    assert_eq!(rows.len(), 12);
    for row in &rows {
        assert!(STOPS.contains(&row.get("status")), "{}", row.get("status"));
    }
}

#[test]
fn a_programme_keeps_to_the_commands_limit() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = demo_scenario();
    let limit = 4.0;
    let (o, wall) = run_timed(
        dir.path(),
        &[
            "program",
            "--scenario",
            &scenario,
            "--seasons",
            "3",
            "--budgets",
            "30000,20000,20000",
            "--time-limit-s",
            "4",
            "--out",
            "prog",
            "--quiet",
        ],
    );
    let s = summary(&dir.path().join("prog"));
    kept_to_the_limit(&s, wall, limit);
    // The programme's MIP (about 690,000 columns) cannot be searched in 4 s: that is said.
    if s["exact_model_run"] == false {
        assert!(
            stderr(&o).contains("cannot be solved in the"),
            "{}",
            stderr(&o)
        );
        assert_eq!(s["status"], "time_limit");
    }
}

#[test]
fn a_search_that_runs_out_of_moves_says_so_not_time_limit() {
    // 150 stands on a 60 m grid under an exponential kernel of 200 m: one connected component
    // of about 11,000 links, whose exact model (about 0.45 GB estimated) sends it to relaxation
    // and local search (the path large landscapes take; the memory budget now refuses the
    // `--max-memory-gb` below 0.15 GB this test once used to force it); with `--gap 0` nothing
    // but the deadline or the end of the moves can stop the local search, and it runs out of
    // moves (restarts included) before the deadline. Common practice for the stand
    // layout; the kernel and limits are the tool's own.
    let dir = tempfile::tempdir().unwrap();
    let mut inventory = String::from("id,x,y,stems\n");
    for k in 0..150 {
        let (i, j) = (k % 15, k / 15);
        let wobble = ((k * 37) % 11) as f64 * 3.0;
        let stems = 20 + (k * 53) % 280;
        inventory.push_str(&format!(
            "S{k:03},{:.1},{:.1},{stems}\n",
            500_000.0 + 60.0 * i as f64,
            4_470_000.0 + 60.0 * j as f64 + wobble
        ));
    }
    write(dir.path(), "line.csv", &inventory);
    let limit = 30.0;
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "line.csv",
            "--crs",
            "EPSG:32618",
            "--kernel",
            "exp:200",
            "--budget",
            "8000",
            "--gap",
            "0",
            "--time-limit-s",
            "30",
            "--out",
            "line",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let s = summary(&dir.path().join("line"));
    // Since issue 23 the large-model path goes on, after the local search, to variable fixing
    // and the core that is left (which uses the time the restarts and the core's own search
    // need, not a fixed share); either way the search ends on its own and says so.
    let path = s["solver_path"].as_str().unwrap();
    assert!(
        path == "relaxation and local search"
            || path == "local search, variable fixing and the core searched",
        "{path}"
    );
    assert_eq!(s["status"], "no_improving_move", "{}", stderr(&o));
    assert!(s["gap"].as_f64().unwrap() > 0.0);
    let err = stderr(&o);
    assert!(err.contains("no improving move left"), "{err}");
    assert!(!err.contains("stopped at the time limit"), "{err}");
    let out = stdout(&o);
    assert!(out.contains("status no_improving_move"), "{out}");
    let solve = s["solve_seconds"].as_f64().unwrap();
    assert!(solve < limit, "solve took {solve} s");
}
