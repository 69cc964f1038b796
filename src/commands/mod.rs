//! The commands: each is wiring over the one pipeline (checked settings, inputs, engine,
//! typed results, writers), so every input kind works in every command.

pub mod audit;
pub mod correct;
pub mod demo;
pub mod map;
pub mod plan;
pub mod sweep;

use crate::cli::{Cli, Command};
use crate::inputs::Inputs;

/// Runs one command line.
pub fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Correct(args) => correct::correct(&args),
        Command::Sweep(args) => sweep::sweep(&args),
        Command::Audit(args) => audit::audit(&args),
        Command::Map(args) => map::map(&args),
        Command::Plan(args) => plan::plan(&args),
        Command::Demo(args) => demo::demo(&args),
    }
}

/// Prints the notes on how the inputs were taken (unless quiet).
pub fn print_notes(inputs: &Inputs, quiet: bool) {
    if !quiet {
        for note in &inputs.notes {
            eprintln!("ringsum: note: {note}");
        }
    }
}

/// Warns (on stderr, even when quiet) about the sector rings of a plan file that miss
/// the accuracy target on the first stations.
pub fn warn_sector_rings(
    inputs: &Inputs,
    tc: &crate::config::TcSettings,
    plan: &crate::zones::ZonePlan,
    run: &crate::config::RunSettings,
) -> anyhow::Result<()> {
    for warning in crate::compute::sector_ring_warnings(inputs, tc, plan, run)? {
        eprintln!("ringsum: warning: {warning}");
    }
    Ok(())
}
