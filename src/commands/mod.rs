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
    book: &mut RunBook,
    inputs: &Inputs,
    tc: &crate::config::TcSettings,
    plan: &crate::zones::ZonePlan,
    run: &crate::config::RunSettings,
) -> anyhow::Result<()> {
    for warning in crate::compute::sector_ring_warnings(inputs, tc, plan, run)? {
        book.warn(warning);
    }
    Ok(())
}

/// The bookkeeping of a run: the files it reads and writes checked against each other
/// before any work, the inputs hashed while it runs, its warnings, and its record
/// written beside its output at the end.
///
/// The outputs written while it is open are held back and moved into place together,
/// after the record, by [`RunBook::finish`]; dropped unfinished (a refusal), it removes
/// them.
pub struct RunBook {
    /// Taken by [`RunBook::finish`].
    record: Option<crate::output::record::RecordStart>,
    record_path: Option<std::path::PathBuf>,
    outputs: Vec<std::path::PathBuf>,
    warnings: Vec<String>,
}

impl Drop for RunBook {
    fn drop(&mut self) {
        if self.record.is_some() {
            crate::output::files::discard_held();
        }
    }
}

/// The option that names an input file of each role.
fn input_option(role: &str) -> &'static str {
    match role {
        "dem" => "--dem",
        "stations" => "--stations",
        "density_raster" => "--density-raster",
        "water_surface" => "--water-surface",
        "zone_plan" => "--zones",
        "compare_dem" => "--compare-dem",
        _ => "an input",
    }
}

impl RunBook {
    /// Checks that no output (`(path, option)`; `-` left out) is an input or another
    /// output, the record included (beside `main_output`, or `--record`), and starts
    /// hashing the inputs. Nothing has been read yet.
    pub fn start(
        command: &str,
        tc: &crate::config::TcSettings,
        run: &crate::config::RunSettings,
        main_output: Option<&std::path::Path>,
        outputs: &[(&std::path::Path, &str)],
    ) -> anyhow::Result<RunBook> {
        RunBook::start_with(command, tc, run, main_output, outputs, &[])
    }

    /// [`RunBook::start`] with inputs beyond the terrain correction's (`(role, path)`,
    /// e.g. sweep's `compare_dem`).
    pub fn start_with(
        command: &str,
        tc: &crate::config::TcSettings,
        run: &crate::config::RunSettings,
        main_output: Option<&std::path::Path>,
        outputs: &[(&std::path::Path, &str)],
        more_inputs: &[(&str, &std::path::Path)],
    ) -> anyhow::Result<RunBook> {
        use crate::output::record::{input_files, record_path, RecordStart};
        let mut files = input_files(tc);
        files.extend(
            more_inputs
                .iter()
                .map(|(role, path)| (role.to_string(), path.to_path_buf())),
        );
        let mut roles = crate::output::files::FileRoles::default();
        for (role, path) in &files {
            roles.input(path, input_option(role));
        }
        for (path, option) in outputs {
            roles.output(path, option);
        }
        let record_path = record_path(main_output, run.record.as_deref());
        if let Some(p) = &record_path {
            let option = if run.record.is_some() {
                "--record"
            } else {
                "the run record"
            };
            roles.output(p, option);
        }
        roles.check()?;
        crate::output::files::hold_commits();
        Ok(RunBook {
            record: Some(RecordStart::start(command, &files)),
            record_path,
            outputs: outputs
                .iter()
                .filter(|(p, _)| p.as_os_str() != "-")
                .map(|(p, _)| p.to_path_buf())
                .collect(),
            warnings: Vec::new(),
        })
    }

    /// A warning: printed on stderr (even when quiet) and kept for the record.
    pub fn warn(&mut self, warning: String) {
        eprintln!("ringsum: warning: {warning}");
        self.warnings.push(warning);
    }

    /// Writes the record (when there is a place for it), then moves every output of the
    /// run into place.
    pub fn finish(
        mut self,
        settings: Option<crate::output::record::SettingsRecord>,
        inputs: &Inputs,
        threads: usize,
    ) -> anyhow::Result<()> {
        let start = self.record.take().expect("a run book is finished once");
        let written = (|| {
            let Some(path) = &self.record_path else {
                return Ok(());
            };
            let outputs: Vec<&std::path::Path> = self.outputs.iter().map(|p| p.as_path()).collect();
            let record = start.finish(
                settings,
                crate::output::record::dem_records(&inputs.dems),
                inputs.stations.as_ref().map(|t| t.stations.len()),
                &outputs,
                threads,
                &inputs.notes,
                &self.warnings,
            )?;
            record.write(path)
        })();
        match written {
            Ok(()) => crate::output::files::commit_held(),
            Err(e) => {
                crate::output::files::discard_held();
                Err(e)
            }
        }
    }
}
