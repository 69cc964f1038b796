//! Output paths checked before any work: the ending, the folder (exists, takes new
//! files), not a folder itself. Used by the settings and the writers alike.

use anyhow::bail;
use std::path::{Path, PathBuf};

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

/// Refuses an output path that is a folder, whose folder does not exist, or whose folder
/// does not take new files (read-only, no permission): checked by creating and removing
/// a temporary file there.
pub fn check_writable(path: &Path, option: &str) -> anyhow::Result<()> {
    if path.is_dir() {
        bail!(
            "{option} {}: this is a folder; give a file name in it",
            path.display()
        );
    }
    let dir = parent_dir(path);
    if !dir.is_dir() {
        bail!(
            "{option} {}: the folder {} does not exist; create it first",
            path.display(),
            dir.display()
        );
    }
    let probe = tempfile::Builder::new()
        .prefix(".ringsum-probe-")
        .tempfile_in(&dir);
    if let Err(e) = probe {
        bail!(
            "{option} {}: the folder {} does not take new files ({}); choose another folder or fix its permissions",
            path.display(),
            dir.display(),
            e.kind()
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
