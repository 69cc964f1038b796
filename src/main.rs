//! The `ringsum` command: parse, run, map the outcome to an exit status.

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = ringsum::cli::Cli::parse();
    match ringsum::commands::run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("ringsum: {err:#}");
            // A mistake on the command line itself exits as clap's own do.
            if err.downcast_ref::<ringsum::config::UsageError>().is_some() {
                ExitCode::from(2)
            } else {
                ExitCode::from(1)
            }
        }
    }
}
