//! The `ringsum` command: parse, run, map the outcome to an exit status.

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = ringsum::cli::Cli::parse();
    match ringsum::app::run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("ringsum: {err:#}");
            ExitCode::from(1)
        }
    }
}
