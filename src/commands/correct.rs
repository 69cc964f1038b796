//! `ringsum correct`: per-station terrain corrections, and the reduction to the complete
//! Bouguer anomaly when the station file has observed gravity.

use crate::cli::CorrectArgs;
use crate::compute::{self, Work};
use crate::config::{ReductionSettings, RunSettings, TcSettings};
use crate::engine::Convention;
use crate::inputs::gravity::{self, GravityData};
use crate::inputs::{Inputs, Opened};
use crate::output::files::TableTarget;
use crate::output::record::SettingsRecord;
use crate::output::station_table::correct_table;
use crate::reduce::BouguerModel;
use crate::results::{PointTc, ReductionTerms};
use crate::units::to_mgal;
use std::time::Instant;

/// `ringsum correct`.
pub fn correct(args: &CorrectArgs) -> anyhow::Result<()> {
    let tc = TcSettings::from_args(&args.tc)?;
    let reduction = ReductionSettings::from_args(&args.reduction);
    let run = RunSettings::from_args(&args.run)?;
    tc.require_stations("correct")?;
    let target = TableTarget::check(&args.out, "--out")?;
    let mut book =
        super::RunBook::start("correct", &tc, &run, target.path(), &[(&args.out, "--out")])?;

    let opened = Opened::open(&tc)?;
    let footprint = opened.station_xy();
    let inputs = opened.read(&tc, &footprint)?;
    super::print_notes(&inputs, run.quiet);
    let plan = tc.plan(inputs.cell_m())?;
    let gravity = gravity::read(inputs.table(), &reduction, &inputs.dems.base_crs)?;
    super::warn_sector_rings(&mut book, &inputs, &tc, &plan, &run)?;

    let started = Instant::now();
    let results: Vec<PointTc> =
        compute::stations(&inputs, &tc, &plan, &run, Work::RefuseProblems, "stations")?
            .into_iter()
            .map(|r| r.expect("every station was checked to lie on a DEM's data"))
            .collect();
    let terms = gravity
        .as_ref()
        .map(|g| reduction_terms(&inputs, &tc, &reduction, g));
    let table = correct_table(
        &inputs,
        &plan,
        &results,
        terms
            .as_deref()
            .zip(gravity.as_ref().map(|g| g.from_undulation)),
        tc.carry_station_columns,
    )?;
    table.write(&target)?;
    book.finish(
        Some(SettingsRecord::new(&tc, &plan, Some(&reduction))),
        &inputs,
        threads(&run),
    )?;
    if !run.quiet {
        summarise(&results, started.elapsed().as_secs_f64(), &target);
    }
    Ok(())
}

/// The worker threads a run uses.
pub fn threads(run: &RunSettings) -> usize {
    run.threads
        .unwrap_or_else(crate::engine::run::current_threads)
}

/// Each station's reduction terms.
fn reduction_terms(
    inputs: &Inputs,
    tc: &TcSettings,
    reduction: &ReductionSettings,
    g: &GravityData,
) -> Vec<ReductionTerms> {
    let bouguer = match tc.engine.convention {
        Convention::Spherical => BouguerModel::SphericalCap,
        Convention::Planar => BouguerModel::Slab,
    };
    let densities = &inputs
        .densities
        .as_ref()
        .expect("a station file has densities")
        .bouguer_kg_m3;
    (0..g.latitude_deg.len())
        .map(|i| {
            ReductionTerms::compute(
                g.observed_mgal[i],
                g.latitude_deg[i],
                g.height_m[i],
                densities[i],
                reduction.ellipsoid,
                reduction.free_air,
                bouguer,
            )
        })
        .collect()
}

/// A line on stderr about a finished run.
fn summarise(results: &[PointTc], seconds: f64, target: &TableTarget) {
    let mut tcs: Vec<f64> = results.iter().map(|r| to_mgal(r.tc_m_s2())).collect();
    if tcs.is_empty() {
        return;
    }
    tcs.sort_by(f64::total_cmp);
    eprintln!(
        "ringsum: {} stations in {:.2} s; tc_mgal min {:.4}, median {:.4}, max {:.4}; written to {}",
        tcs.len(),
        seconds,
        tcs[0],
        tcs[tcs.len() / 2],
        tcs[tcs.len() - 1],
        target.describe()
    );
}
