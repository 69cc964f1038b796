//! Where outputs go: targets checked before the long run (extension, folder, writable,
//! not a folder, not an input), and files written through a temporary file in the same
//! folder that is renamed into place at the end.
//!
//! A temporary file is named after what it will become (`.tc.csv.1a2b3c.ringsum-partial`
//! for `tc.csv`). It is removed when the write fails, when the program is interrupted
//! (Ctrl-C, SIGTERM: see [`install_interrupt_handler`]), or when it is dropped unfinished.
//!
//! A run with several outputs (a table, a summary, plots, a grid, the run record) holds
//! each finished file back ([`hold_commits`]) and moves them all into place together at
//! its end ([`commit_held`]), so that a refusal or an interrupt while one output is being
//! made leaves none of the others behind.

pub use crate::paths::{check_extension, check_writable, parent_dir};
use anyhow::{bail, Context};
use std::collections::BTreeSet;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Mutex;

/// Suffix of every temporary file.
pub const PARTIAL_SUFFIX: &str = ".ringsum-partial";

/// The temporary files being written now (removed on an interrupt).
static PARTIALS: Mutex<BTreeSet<PathBuf>> = Mutex::new(BTreeSet::new());

/// Whether finished files wait for [`commit_held`] (see [`hold_commits`]).
static HOLDING: AtomicBool = AtomicBool::new(false);

/// Finished files waiting to be moved into place (still temporary files, removed on an
/// interrupt).
static HELD: Mutex<Vec<Partial>> = Mutex::new(Vec::new());

/// From now on, [`Partial::commit`] holds each finished file back until
/// [`commit_held`] (or [`discard_held`]).
pub fn hold_commits() {
    HOLDING.store(true, Ordering::SeqCst);
}

fn take_held() -> Vec<Partial> {
    HOLDING.store(false, Ordering::SeqCst);
    match HELD.lock() {
        Ok(mut guard) => std::mem::take(&mut *guard),
        Err(poisoned) => std::mem::take(&mut *poisoned.into_inner()),
    }
}

/// Moves every held file into place, in the order they were finished, and stops holding.
pub fn commit_held() -> anyhow::Result<()> {
    for partial in take_held() {
        partial.persist()?;
    }
    Ok(())
}

/// Removes every held file and stops holding (a run that failed after some outputs were
/// finished).
pub fn discard_held() {
    drop(take_held());
}

/// Removes every temporary file being written and exits with the status of a signal
/// (130 for Ctrl-C, as shells report it). Installed once by the binary.
pub fn install_interrupt_handler() {
    let _ = ctrlc::set_handler(|| {
        remove_partials();
        eprintln!("ringsum: interrupted; nothing was written");
        std::process::exit(130);
    });
}

/// Removes the temporary files being written.
pub fn remove_partials() {
    let paths = match PARTIALS.lock() {
        Ok(mut guard) => std::mem::take(&mut *guard),
        Err(poisoned) => std::mem::take(&mut *poisoned.into_inner()),
    };
    for p in paths {
        let _ = std::fs::remove_file(p);
    }
}

fn register(path: &Path) {
    if let Ok(mut guard) = PARTIALS.lock() {
        guard.insert(path.to_path_buf());
    }
}

fn unregister(path: &Path) {
    if let Ok(mut guard) = PARTIALS.lock() {
        guard.remove(path);
    }
}

/// Where a table goes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum TableTarget {
    /// CSV on standard output.
    Stdout,
    Csv(PathBuf),
    /// A GeoPackage point layer in the stations' CRS.
    GeoPackage(PathBuf),
    /// GeoJSON (RFC 7946) points in longitude and latitude.
    GeoJson(PathBuf),
}

impl TableTarget {
    /// Checks a table's output path before any work: `-` is standard output (CSV); a file
    /// ends in `.csv`, `.gpkg` or `.geojson` and goes to a folder that exists and takes
    /// new files.
    pub fn check(path: &Path, option: &str) -> anyhow::Result<TableTarget> {
        if path.as_os_str() == "-" {
            return Ok(TableTarget::Stdout);
        }
        check_extension(
            path,
            option,
            &["csv", "gpkg", "geojson"],
            "tables are written as .csv, .gpkg (GeoPackage) or .geojson; give a path with one of these endings, or - for CSV on standard output",
        )?;
        check_writable(path, option)?;
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase)
            .unwrap_or_default();
        Ok(match ext.as_str() {
            "gpkg" => TableTarget::GeoPackage(path.to_path_buf()),
            "geojson" => TableTarget::GeoJson(path.to_path_buf()),
            _ => TableTarget::Csv(path.to_path_buf()),
        })
    }

    /// How the target reads in a summary.
    pub fn describe(&self) -> String {
        match self.path() {
            None => "standard output".to_string(),
            Some(p) => p.display().to_string(),
        }
    }

    /// The file, if the table goes to one.
    pub fn path(&self) -> Option<&Path> {
        match self {
            TableTarget::Stdout => None,
            TableTarget::Csv(p) | TableTarget::GeoPackage(p) | TableTarget::GeoJson(p) => Some(p),
        }
    }
}

/// A file being written: a temporary file beside its final path, renamed into place by
/// [`Partial::commit`] and removed if dropped before, or on an interrupt.
pub struct Partial {
    path: PathBuf,
    /// The temporary file (taken when it is renamed into place).
    tmp: Option<tempfile::NamedTempFile>,
    temp_path: PathBuf,
}

impl Partial {
    /// Starts the file `path`. The temporary name is `.NAME.XXXXXX.ringsum-partial`, with
    /// `suffix` (e.g. `.tif`) after it for writers that go by the extension.
    pub fn start(path: &Path, suffix: &str) -> anyhow::Result<Partial> {
        let dir = parent_dir(path);
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "output".into());
        let tmp = tempfile::Builder::new()
            .prefix(&format!(".{name}."))
            .suffix(&format!("{PARTIAL_SUFFIX}{suffix}"))
            .tempfile_in(&dir)
            .with_context(|| {
                format!(
                    "{}: cannot create a file in {}",
                    path.display(),
                    dir.display()
                )
            })?;
        register(tmp.path());
        Ok(Partial {
            path: path.to_path_buf(),
            temp_path: tmp.path().to_path_buf(),
            tmp: Some(tmp),
        })
    }

    /// The temporary file's path (for writers that open files by name).
    pub fn temp_path(&self) -> &Path {
        &self.temp_path
    }

    /// Writes bytes to the temporary file.
    pub fn write_all(&mut self, bytes: &[u8]) -> anyhow::Result<()> {
        let path = &self.path;
        self.tmp
            .as_mut()
            .expect("an unfinished file")
            .write_all(bytes)
            .with_context(|| format!("{}: writing failed", path.display()))
    }

    /// Renames the finished file into place, as an ordinary (0644) file; while commits
    /// are held ([`hold_commits`]), at [`commit_held`].
    pub fn commit(self) -> anyhow::Result<()> {
        if HOLDING.load(Ordering::SeqCst) {
            match HELD.lock() {
                Ok(mut guard) => guard.push(self),
                Err(poisoned) => poisoned.into_inner().push(self),
            }
            return Ok(());
        }
        self.persist()
    }

    /// Renames the finished file into place now.
    fn persist(mut self) -> anyhow::Result<()> {
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            // Temporary files are private; a finished output is an ordinary file. The
            // writer may have replaced the file by name, so set it by name.
            let _ =
                std::fs::set_permissions(&self.temp_path, std::fs::Permissions::from_mode(0o644));
        }
        let tmp = self.tmp.take().expect("an unfinished file");
        tmp.persist(&self.path).map(|_| ()).map_err(|e| {
            anyhow::anyhow!(
                "{}: cannot move the finished file into place ({})",
                self.path.display(),
                e.error
            )
        })
    }
}

impl Drop for Partial {
    fn drop(&mut self) {
        // An unfinished temporary file is removed with `tmp`; either way it is no
        // longer ours to remove on an interrupt.
        unregister(&self.temp_path);
    }
}

/// Writes `bytes` to `path` through a temporary file in the same folder.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    let mut partial = Partial::start(path, "")?;
    partial.write_all(bytes)?;
    partial.commit()
}

/// What identifies a file on disk: the device and inode of an existing file (so hard
/// links and other spellings of one file are one), else its absolute, link-resolved path.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
enum FileKey {
    Inode(u64, u64),
    Path(PathBuf),
}

/// The key of `path`; for a file that does not exist yet, its folder resolved and its
/// name.
fn file_key(path: &Path) -> FileKey {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if let Ok(m) = std::fs::metadata(path) {
            return FileKey::Inode(m.dev(), m.ino());
        }
    }
    if let Ok(p) = std::fs::canonicalize(path) {
        return FileKey::Path(p);
    }
    let dir = std::fs::canonicalize(parent_dir(path)).unwrap_or_else(|_| parent_dir(path));
    FileKey::Path(dir.join(path.file_name().unwrap_or_default()))
}

/// The files a run reads and writes, each with the option that named it, to refuse an
/// output that would replace an input or another output before any work.
#[derive(Debug, Default)]
pub struct FileRoles {
    inputs: Vec<(PathBuf, String)>,
    outputs: Vec<(PathBuf, String)>,
}

impl FileRoles {
    /// Adds an input file named by `option`.
    pub fn input(&mut self, path: &Path, option: &str) {
        self.inputs.push((path.to_path_buf(), option.to_string()));
    }

    /// Adds an output file named by `option` (`-`, standard output, is left out).
    pub fn output(&mut self, path: &Path, option: &str) {
        if path.as_os_str() != "-" {
            self.outputs.push((path.to_path_buf(), option.to_string()));
        }
    }

    /// Refuses an output that is an input (after resolving links, relative spellings and
    /// hard links) or another output.
    pub fn check(&self) -> anyhow::Result<()> {
        for (k, (out, option)) in self.outputs.iter().enumerate() {
            let key = file_key(out);
            if let Some((input, in_option)) = self.inputs.iter().find(|(p, _)| file_key(p) == key) {
                bail!(
                    "{option} {}: this is the file given with {in_option} ({}); writing it would replace that input: give another output path",
                    out.display(),
                    input.display()
                );
            }
            if let Some((other, other_option)) =
                self.outputs[..k].iter().find(|(p, _)| file_key(p) == key)
            {
                bail!(
                    "{option} {}: {other_option} {} writes the same file; give each output its own path",
                    out.display(),
                    other.display()
                );
            }
        }
        Ok(())
    }
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
        let dir = tempfile::tempdir().unwrap();
        let folder = dir.path().join("x.csv");
        std::fs::create_dir(&folder).unwrap();
        let e = TableTarget::check(&folder, "--out")
            .unwrap_err()
            .to_string();
        assert!(e.contains("this is a folder"), "{e}");
    }

    #[test]
    fn outputs_that_are_inputs_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let a = dir.path().join("a.csv");
        std::fs::write(&a, "x").unwrap();
        let link = dir.path().join("b.csv");
        std::fs::hard_link(&a, &link).unwrap();
        let mut roles = FileRoles::default();
        roles.input(&a, "--stations");
        roles.output(&dir.path().join("sub/../c.csv"), "--out");
        assert!(roles.check().is_ok());
        roles.output(&link, "--station-summary");
        let e = roles.check().unwrap_err().to_string();
        assert!(
            e.contains("--station-summary") && e.contains("--stations"),
            "{e}"
        );
        let mut roles = FileRoles::default();
        roles.output(&dir.path().join("c.csv"), "--out");
        roles.output(&dir.path().join("./c.csv"), "--station-summary");
        assert!(roles.check().unwrap_err().to_string().contains("same file"));
    }

    #[test]
    fn held_files_appear_together_or_not_at_all() {
        let dir = tempfile::tempdir().unwrap();
        let (a, b) = (dir.path().join("a.csv"), dir.path().join("b.csv"));
        hold_commits();
        write_atomically(&a, b"a").unwrap();
        write_atomically(&b, b"b").unwrap();
        assert!(!a.exists() && !b.exists(), "held back");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 2);
        commit_held().unwrap();
        assert_eq!(std::fs::read(&a).unwrap(), b"a");
        assert_eq!(std::fs::read(&b).unwrap(), b"b");
        let c = dir.path().join("c.csv");
        hold_commits();
        write_atomically(&c, b"c").unwrap();
        discard_held();
        assert!(!c.exists());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 2);
        // Not holding: at once.
        write_atomically(&c, b"c").unwrap();
        assert!(c.exists());
    }

    #[test]
    fn partial_files_say_what_they_are() {
        let dir = tempfile::tempdir().unwrap();
        let p = Partial::start(&dir.path().join("tc.csv"), "").unwrap();
        let name = p
            .temp_path()
            .file_name()
            .unwrap()
            .to_string_lossy()
            .into_owned();
        assert!(
            name.starts_with(".tc.csv.") && name.ends_with(PARTIAL_SUFFIX),
            "{name}"
        );
        drop(p);
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }
}
