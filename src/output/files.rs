//! Where outputs go: targets checked before the long run, and files written through a
//! temporary file in the same folder that is renamed into place at the end.

use anyhow::{bail, Context};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Where a table goes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum TableTarget {
    Stdout,
    Csv(PathBuf),
}

impl TableTarget {
    /// Checks a table's output path before any work: `-` is standard output; a file must
    /// end in `.csv` and its folder must exist.
    pub fn check(path: &Path, option: &str) -> anyhow::Result<TableTarget> {
        if path.as_os_str() == "-" {
            return Ok(TableTarget::Stdout);
        }
        check_extension(
            path,
            option,
            &["csv"],
            "tables are written as .csv; give a path ending in .csv, or - for standard output",
        )?;
        check_folder(path, option)?;
        Ok(TableTarget::Csv(path.to_path_buf()))
    }

    /// How the target reads in a summary.
    pub fn describe(&self) -> String {
        match self {
            TableTarget::Stdout => "standard output".to_string(),
            TableTarget::Csv(p) => p.display().to_string(),
        }
    }
}

/// Refuses a path whose extension is not one of `extensions` (lower case), with `why`.
pub fn check_extension(
    path: &Path,
    option: &str,
    extensions: &[&str],
    why: &str,
) -> anyhow::Result<()> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    if !extensions.iter().any(|e| ext.as_deref() == Some(*e)) {
        bail!("{option} {}: {why}", path.display());
    }
    Ok(())
}

/// Refuses a path whose folder does not exist.
pub fn check_folder(path: &Path, option: &str) -> anyhow::Result<()> {
    let dir = parent_dir(path);
    if !dir.is_dir() {
        bail!(
            "{option} {}: the folder {} does not exist; create it first",
            path.display(),
            dir.display()
        );
    }
    Ok(())
}

/// The folder a path is in (`.` for a bare file name).
pub fn parent_dir(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// A file being written: a temporary file beside its final path, renamed into place by
/// [`Partial::commit`] and removed if dropped before.
pub struct Partial {
    path: PathBuf,
    tmp: tempfile::NamedTempFile,
}

impl Partial {
    /// Starts the file `path` (the temporary name ends in `suffix`, e.g. `.tif`, for
    /// writers that go by it).
    pub fn start(path: &Path, suffix: &str) -> anyhow::Result<Partial> {
        let dir = parent_dir(path);
        let tmp = tempfile::Builder::new()
            .prefix(".ringsum-")
            .suffix(suffix)
            .tempfile_in(&dir)
            .with_context(|| {
                format!(
                    "{}: cannot create a file in {}",
                    path.display(),
                    dir.display()
                )
            })?;
        Ok(Partial {
            path: path.to_path_buf(),
            tmp,
        })
    }

    /// The temporary file's path (for writers that open files by name).
    pub fn temp_path(&self) -> &Path {
        self.tmp.path()
    }

    /// Writes bytes to the temporary file.
    pub fn write_all(&mut self, bytes: &[u8]) -> anyhow::Result<()> {
        self.tmp
            .write_all(bytes)
            .with_context(|| format!("{}: writing failed", self.path.display()))
    }

    /// Renames the finished file into place, as an ordinary (0644) file.
    pub fn commit(self) -> anyhow::Result<()> {
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            // Temporary files are private; a finished output is an ordinary file. The
            // writer may have replaced the file by name, so set it by name.
            let _ =
                std::fs::set_permissions(self.tmp.path(), std::fs::Permissions::from_mode(0o644));
        }
        let path = self.path.clone();
        self.tmp.persist(&path).map_err(|e| {
            anyhow::anyhow!(
                "{}: cannot move the finished file into place ({})",
                path.display(),
                e.error
            )
        })?;
        Ok(())
    }
}

/// Writes `bytes` to `path` through a temporary file in the same folder.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    let mut partial = Partial::start(path, "")?;
    partial.write_all(bytes)?;
    partial.commit()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn targets_are_checked_up_front() {
        assert_eq!(
            TableTarget::check(Path::new("-"), "--out").unwrap(),
            TableTarget::Stdout
        );
        assert!(TableTarget::check(Path::new("out.txt"), "--out").is_err());
        assert!(TableTarget::check(Path::new("/no/such/folder/out.csv"), "--out").is_err());
    }
}
