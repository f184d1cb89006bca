//! `--quiet` on the real binary: stdout holds the cautions block and nothing else when herbicide
//! is prescribed, and nothing at all when it is not; warnings move to stderr. Source: issue 22
//! ("`--quiet` prints only errors and the cautions block"); the site rules and methods of the
//! fixtures are common practice (a prohibited site gets only hand pulling).

mod common;

use std::path::Path;

use common::*;

const ALLOWED: &str = "id,x,y,stems,access,herbicide\nA,500000,4480000,300,open,allowed\nB,500150,4480050,180,open,allowed\nC,500400,4480000,220,open,allowed\nD,500600,4480200,90,open,allowed\n";
const PROHIBITED: &str = "id,x,y,stems,access,herbicide\nA,500000,4480000,300,open,prohibited\nB,500150,4480050,180,open,prohibited\nC,500400,4480000,220,open,prohibited\nD,500600,4480200,90,open,prohibited\n";

/// The five commands that plan or use a plan, each with `--quiet`, on `stands.csv` in `dir`;
/// their stdouts in order plan, curve, orders, simulate, program.
fn quiet_runs(dir: &Path) -> Vec<(&'static str, String)> {
    let inv = ["--inventory", "stands.csv", "--crs", "EPSG:32618"];
    let mut out = Vec::new();
    let mut go = |name: &'static str, args: Vec<&str>| {
        let o = run(dir, &args);
        assert!(o.status.success(), "{name}: {}", stderr(&o));
        out.push((name, stdout(&o)));
    };
    let with = |head: &[&'static str], tail: &[&'static str]| -> Vec<&'static str> {
        let mut v = head.to_vec();
        v.extend_from_slice(&inv);
        v.extend_from_slice(tail);
        v.push("--quiet");
        v
    };
    go("plan", with(&["plan"], &["--budget", "3000", "--out", "p"]));
    go(
        "curve",
        with(&["curve"], &["--budgets", "1000,3000", "--out", "c"]),
    );
    go(
        "orders",
        vec!["orders", "--plan", "p", "--out", "o", "--quiet"],
    );
    go(
        "simulate",
        vec![
            "simulate", "--plan", "p", "--runs", "20", "--years", "3", "--out", "s", "--quiet",
        ],
    );
    go(
        "program",
        with(
            &["program"],
            &["--seasons", "2", "--budgets", "2000,1000", "--out", "g"],
        ),
    );
    out
}

#[test]
fn quiet_stdout_is_the_cautions_block_when_herbicide_is_prescribed() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", ALLOWED);
    let standing = hostcut::core::cautions::standing_text();
    for (name, text) in quiet_runs(dir.path()) {
        let rest = text
            .strip_prefix(standing.as_str())
            .unwrap_or_else(|| panic!("{name}: stdout is not the cautions block: {text}"));
        // plan's block ends with the site check's water line.
        assert!(
            rest.is_empty()
                || (name == "plan" && rest.starts_with("\nWater: ") && rest.lines().count() == 2),
            "{name}: more than the cautions block on stdout: {rest:?}"
        );
    }
    // The results are in the files.
    assert!(
        summary(&dir.path().join("p"))["n_treated"]
            .as_u64()
            .unwrap()
            > 0
    );
}

#[test]
fn quiet_stdout_is_empty_when_no_herbicide_is_prescribed() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", PROHIBITED);
    for (name, text) in quiet_runs(dir.path()) {
        assert_eq!(text, "", "{name}: stdout under --quiet without herbicide");
    }
    // Something was planned, by hand: the empty stdout is not an empty plan.
    assert!(
        summary(&dir.path().join("p"))["n_treated"]
            .as_u64()
            .unwrap()
            > 0
    );
    let plan = std::fs::read_to_string(dir.path().join("p/plan.csv")).unwrap();
    assert!(plan.contains("pull_seedlings"), "{plan}");
}

#[test]
fn quiet_sends_warnings_to_stderr() {
    // A budget that buys nothing: the warning a user must see is said on stderr.
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", ALLOWED);
    let o = run(
        dir.path(),
        &[
            "plan",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--budget",
            "5",
            "--out",
            "p",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(stdout(&o), "");
    assert!(stderr(&o).contains("buys no treatment"), "{}", stderr(&o));
}
