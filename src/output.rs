//! Result tables and their writers. A table is rows of already-formatted fields; every
//! writer checks its target before the long run and writes through a temporary file that
//! is renamed at the end, so a failed run leaves nothing half-written.

use anyhow::{bail, Context};
use std::io::Write;
use std::path::{Path, PathBuf};

/// A table of formatted fields with a header.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Table {
    pub headers: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

impl Table {
    pub fn new(headers: &[&str]) -> Table {
        Table {
            headers: headers.iter().map(|h| h.to_string()).collect(),
            rows: Vec::new(),
        }
    }

    /// Index of a column by name.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.headers.iter().position(|h| h == name)
    }
}

/// Where a table goes.
#[derive(Debug, Clone, PartialEq)]
pub enum Target {
    Stdout,
    Csv(PathBuf),
}

/// Checks an output path before any work is done: `-` is standard output; a file must
/// end in `.csv` and its folder must exist.
pub fn check_target(path: &Path) -> anyhow::Result<Target> {
    if path.as_os_str() == "-" {
        return Ok(Target::Stdout);
    }
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    if ext.as_deref() != Some("csv") {
        bail!(
            "{}: ringsum writes tables as .csv; give a path ending in .csv, or - for standard output",
            path.display()
        );
    }
    let dir = parent_dir(path);
    if !dir.is_dir() {
        bail!(
            "{}: the folder {} does not exist; create it first",
            path.display(),
            dir.display()
        );
    }
    Ok(Target::Csv(path.to_path_buf()))
}

fn parent_dir(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Writes `bytes` to `path` through a temporary file in the same folder, renamed at the end.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    let dir = parent_dir(path);
    let mut tmp = tempfile::NamedTempFile::new_in(&dir).with_context(|| {
        format!(
            "{}: cannot create a file in {}",
            path.display(),
            dir.display()
        )
    })?;
    tmp.write_all(bytes)
        .with_context(|| format!("{}: writing failed", path.display()))?;
    // Temporary files are private; a finished table is an ordinary file.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let _ = tmp
            .as_file()
            .set_permissions(std::fs::Permissions::from_mode(0o644));
    }
    tmp.persist(path).map_err(|e| {
        anyhow::anyhow!(
            "{}: cannot move the finished file into place ({})",
            path.display(),
            e.error
        )
    })?;
    Ok(())
}

/// Formats a table as CSV.
pub fn to_csv(table: &Table) -> anyhow::Result<Vec<u8>> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    writer.write_record(&table.headers)?;
    for row in &table.rows {
        writer.write_record(row)?;
    }
    writer.into_inner().map_err(|e| anyhow::anyhow!("{e}"))
}

/// Writes a table to its target.
pub fn write_table(target: &Target, table: &Table) -> anyhow::Result<()> {
    let bytes = to_csv(table)?;
    match target {
        Target::Stdout => {
            let mut out = std::io::stdout().lock();
            out.write_all(&bytes)?;
            out.flush()?;
            Ok(())
        }
        Target::Csv(path) => write_atomically(path, &bytes),
    }
}

/// Formats a finite number with a fixed number of decimals; refuses NaN and infinity so
/// that no silent NaN reaches an output.
pub fn fixed(value: f64, decimals: usize, what: &str) -> anyhow::Result<String> {
    if !value.is_finite() {
        bail!("internal error: {what} is not finite ({value}); please report this with the input that caused it");
    }
    let s = format!("{value:.decimals$}");
    // Avoid "-0.0000".
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        return Ok(s.trim_start_matches('-').to_string());
    }
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fixed_refuses_nan_and_has_no_negative_zero() {
        assert!(fixed(f64::NAN, 3, "x").is_err());
        assert_eq!(fixed(-0.00001, 4, "x").unwrap(), "0.0000");
        assert_eq!(fixed(1.23456, 2, "x").unwrap(), "1.23");
    }

    #[test]
    fn targets_are_checked_up_front() {
        assert_eq!(check_target(Path::new("-")).unwrap(), Target::Stdout);
        assert!(check_target(Path::new("out.txt")).is_err());
        assert!(check_target(Path::new("/no/such/folder/out.csv")).is_err());
    }
}
