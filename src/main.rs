//! The `ringsum` command: parse, run, map the outcome to an exit status.

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = ringsum::cli::Cli::parse();
    // GDAL's and PROJ's own messages reach the user inside ringsum's sentences; an
    // interrupt removes the files being written.
    ringsum::dem::read::catch_gdal_messages();
    ringsum::dem::crs::quiet_proj();
    ringsum::output::files::install_interrupt_handler();
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
