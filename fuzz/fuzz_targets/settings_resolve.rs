#![no_main]
//! Any command line: clap parses or refuses it, and the resolver returns settings or an input
//! error. Arguments are NUL-separated words of the input.
use clap::Parser;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let mut args = vec!["hostcut".to_string(), "plan".to_string()];
    args.extend(text.split('\0').map(String::from));
    if let Ok(cli) = hostcut::app::cli::Cli::try_parse_from(&args) {
        if let hostcut::app::cli::Command::Plan(plan) = cli.command {
            // Never read files named by the fuzzer.
            let p = &plan.inputs;
            if p.scenario.is_none() && p.ensemble.is_none() && p.calibration.is_none() {
                let _ = hostcut::app::resolve::resolve(&plan.inputs);
            }
        }
    }
});
