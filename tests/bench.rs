//! `hostcut bench`: the formulations reach the same optimum on a small synthetic landscape, and
//! the synthetic generator is deterministic (unit test in src/synthetic.rs).

mod common;

use common::*;

#[test]
fn formulations_agree_on_a_small_synthetic_landscape() {
    let dir = tempfile::tempdir().unwrap();
    let o = run(
        dir.path(),
        &[
            "bench",
            "--patches",
            "14",
            "--alpha-m",
            "300",
            "--time-limit-s",
            "60",
            "--gap",
            "0",
            "--formulations",
            "transport,compact,direct",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let risk = |name: &str| -> (String, f64) {
        let line = text
            .lines()
            .find(|l| l.starts_with(name))
            .unwrap_or_else(|| panic!("no {name} line in {text}"));
        let cols: Vec<&str> = line.split_whitespace().collect();
        (cols[1].to_string(), cols[2].parse().unwrap())
    };
    let (st, rt) = risk("transport");
    for name in ["compact", "direct"] {
        let (s, r) = risk(name);
        assert_eq!(s, "optimal", "{name}: {text}");
        assert!((r - rt).abs() <= 1e-9 * rt, "{name} {r} vs transport {rt}");
    }
    assert_eq!(st, "optimal");
    let (_, greedy) = risk("greedy");
    assert!(
        greedy >= rt * (1.0 - 1e-12),
        "greedy is never better than the optimum"
    );
    let o = run(dir.path(), &["bench", "--formulations", "simplex"]);
    assert_eq!(o.status.code(), Some(2));
}
