use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let cli = hostcut::app::cli::Cli::parse();
    match hostcut::run(cli) {
        Ok(text) => {
            print!("{text}");
            ExitCode::SUCCESS
        }
        Err(err) => {
            eprintln!("error: {err}");
            if let Some(hint) = err.hint() {
                eprintln!("  hint: {hint}");
            }
            ExitCode::from(err.exit_code())
        }
    }
}
