//! Writes the benchmark DEM and stations to target/bench-data/ (see src/benchdata.rs).
fn main() -> anyhow::Result<()> {
    ringsum::benchdata::ensure_written()?;
    println!(
        "{}\n{}",
        ringsum::benchdata::dem_path().display(),
        ringsum::benchdata::stations_path().display()
    );
    Ok(())
}
