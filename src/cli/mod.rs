//! The command line: clap definitions, one place for every flag's documentation.
//!
//! Values are checked and turned into typed settings in [`crate::config`]; nothing here
//! touches files.

pub mod args;
pub mod help;

pub use args::*;
use clap::{Parser, Subcommand};

/// Gravity terrain corrections from elevation grids.
#[derive(Debug, Parser)]
#[command(name = "ringsum", version, about, long_about = None, after_help = help::GENERAL, max_term_width = 100)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Per-station terrain correction from DEMs and a station file, and the Bouguer
    /// anomalies when the file has observed gravity.
    #[command(after_help = help::CORRECT)]
    Correct(Box<CorrectArgs>),
    /// TC against outer radius, density and DEM: a table per station and radius, and plots.
    #[command(after_help = help::SWEEP)]
    Sweep(Box<SweepArgs>),
    /// Check the inputs before a long run and compare with a legacy TC: report and plots.
    #[command(after_help = help::AUDIT)]
    Audit(Box<AuditArgs>),
    /// TC on a regular grid at terrain height: a GeoTIFF and a PNG preview.
    #[command(after_help = help::MAP)]
    Map(Box<MapArgs>),
    /// Print the zone plan for the DEMs and outer radius, with the measured cost per station.
    #[command(after_help = help::PLAN)]
    Plan(Box<PlanArgs>),
    /// Run the bundled invented scenario in demo-dem/ end to end: the standard correction
    /// to 166.7 km from its three DEMs (30 m, 3 arc-second lon/lat, 500 m), written as a table.
    #[command(after_help = help::GENERAL)]
    Demo(DemoArgs),
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn clap_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
