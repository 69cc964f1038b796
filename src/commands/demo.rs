//! `ringsum demo`: the bundled invented scenario, end to end.

use crate::cli::{
    ConventionArg, CorrectArgs, DemoArgs, InnerModelArg, InputArgs, MethodArg, PhysicsArgs,
    ReductionArgs, TcArgs, ZoneArgs,
};
use anyhow::{bail, Context};
use std::path::{Path, PathBuf};

/// The demo's DEMs, finest first: the 30 m valley grid, the 3 arc-second lon/lat grid
/// about 100 km across, and the 500 m grid, which holds the 166.7 km disc of every
/// station.
pub const DEMO_DEMS: [&str; 3] = [
    "quillerun_30m.tif",
    "quillerun_3s_lonlat.tif",
    "quillerun_500m.tif",
];

/// Outer radius of the demo: the standard 166.7 km (the default of `correct`).
pub const DEMO_OUTER_RADIUS: &str = "166.7km";

/// Finds the demo folder: the one given, ./demo-dem, or the source tree's.
fn demo_folder(given: &Option<PathBuf>) -> anyhow::Result<PathBuf> {
    if let Some(dir) = given {
        if dir.is_dir() {
            return Ok(dir.clone());
        }
        bail!(
            "{}: no such folder; give the folder holding the demo scenario",
            dir.display()
        );
    }
    let here = PathBuf::from("demo-dem");
    if here.is_dir() {
        return Ok(here);
    }
    let shipped = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-dem");
    if shipped.is_dir() {
        return Ok(shipped);
    }
    bail!(
        "the demo scenario (demo-dem/) was not found; run from the source tree or give --data DIR"
    )
}

/// `ringsum demo`: the full standard correction of the bundled scenario.
pub fn demo(args: &DemoArgs) -> anyhow::Result<()> {
    let folder = demo_folder(&args.data)?;
    if let Some(parent) = args.out.parent() {
        if !parent.as_os_str().is_empty() {
            std::fs::create_dir_all(parent)
                .with_context(|| format!("{}: cannot create the folder", parent.display()))?;
        }
    }
    let correct_args = CorrectArgs {
        tc: TcArgs {
            input: InputArgs {
                dem: DEMO_DEMS.iter().map(|name| folder.join(name)).collect(),
                stations: Some(folder.join("stations.csv")),
                ..InputArgs::default()
            },
            zones: ZoneArgs {
                outer_radius: DEMO_OUTER_RADIUS.to_string(),
                method: MethodArg::Zoned,
                inner_model: InnerModelArg::Surface,
                zones: "auto".to_string(),
                field_inner_col: None,
                field_inner_radius: None,
            },
            physics: PhysicsArgs {
                density: crate::units::STANDARD_DENSITY_KG_M3,
                density_col: None,
                density_raster: None,
                convention: ConventionArg::Spherical,
                water_density: None,
                water_surface: None,
            },
        },
        reduction: ReductionArgs::default(),
        run: args.run.clone(),
        out: args.out.clone(),
    };
    if !args.run.quiet {
        eprintln!(
            "ringsum demo: {} with the DEMs {} (finest first), outer radius {}, zoned engine",
            folder.join("stations.csv").display(),
            DEMO_DEMS
                .iter()
                .map(|name| folder.join(name).display().to_string())
                .collect::<Vec<_>>()
                .join(", "),
            DEMO_OUTER_RADIUS
        );
    }
    super::correct::correct(&correct_args)
}
