//! Progress bars draw on a terminal only: under a pseudo-terminal (util-linux `script`, common
//! practice for testing terminal output) the plan shows its spinner; through a pipe, or with
//! `--quiet` on a terminal, stderr carries no terminal control codes.

mod common;

use common::*;

fn demo_inputs(dir: &std::path::Path) -> std::path::PathBuf {
    let inputs = dir.join("in");
    let o = run(dir, &["make-demo-inputs", inputs.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    inputs.join("scenario.toml")
}

/// Run `hostcut plan` under `script`, returning everything the terminal received, or None
/// when `script` is not installed.
fn on_terminal(dir: &std::path::Path, args: &str) -> Option<String> {
    let log = dir.join("typescript");
    let command = format!("{} {args}", bin().display());
    let o = std::process::Command::new("script")
        .args(["-qec", &command, log.to_str().unwrap()])
        .env_remove("HOSTCUT_NO_PROGRESS")
        .output()
        .ok()?;
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    Some(String::from_utf8_lossy(&std::fs::read(&log).unwrap()).into_owned())
}

#[test]
fn spinner_on_a_terminal_and_plain_lines_through_a_pipe() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = demo_inputs(dir.path());
    let s = scenario.to_str().unwrap();
    let out = |name: &str| dir.path().join(name).to_str().unwrap().to_string();

    // Through a pipe: the stage lines, no control codes.
    let o = run(
        dir.path(),
        &[
            "plan",
            "--scenario",
            s,
            "--budget",
            "30000",
            "--out",
            &out("piped"),
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(err.contains("optimising"), "{err}");
    assert!(
        !err.contains('\u{1b}') && !err.contains('\r'),
        "control codes in {err:?}"
    );

    let Some(terminal) = on_terminal(
        dir.path(),
        &format!("plan --scenario {s} --budget 30000 --out {}", out("tty")),
    ) else {
        eprintln!("`script` is not installed: the terminal half is skipped");
        return;
    };
    assert!(
        terminal.contains("optimising 108 patches (time limit"),
        "no spinner on the terminal: {terminal:?}"
    );
    assert!(
        terminal.contains('\u{1b}'),
        "the spinner redraws with control codes"
    );

    let quiet = on_terminal(
        dir.path(),
        &format!(
            "plan --scenario {s} --budget 30000 --out {} --quiet",
            out("quiet")
        ),
    )
    .unwrap();
    assert!(
        !quiet.contains("optimising"),
        "--quiet still shows stages: {quiet:?}"
    );
    assert!(!quiet.contains('\u{1b}'), "--quiet draws a bar: {quiet:?}");
}
