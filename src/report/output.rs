//! The output folder: written under a temporary name beside the target, renamed into place when
//! the run has finished, so a failed or interrupted run never leaves a half-written result and
//! never replaces an earlier one.
//!
//! Every staging folder being written is listed in a process-wide register, which
//! [`remove_staging_folders`] empties on Ctrl-C or a termination signal (the command line
//! installs the handler). A killed process (SIGKILL) cannot clean up: the next start removes
//! staging folders of the same target that carry strata's marker file and whose recorded process
//! is no longer alive.

use std::fs;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Mutex;

/// Set when [`remove_staging_folders`] has started: the process is being interrupted.
static INTERRUPTED: AtomicBool = AtomicBool::new(false);

/// Whether the process is being interrupted (its staging folders are being removed); an error
/// that follows (a file vanished under a writer) is a consequence, not a failure to report.
pub fn interrupted() -> bool {
    INTERRUPTED.load(Ordering::SeqCst)
}

/// Name of the marker file inside a staging folder; it holds the writing process's id. Only
/// folders holding it are ever removed as stale.
const STAGING_MARKER: &str = ".strata-staging";

/// Staging folders of this process not yet committed or dropped.
static STAGING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

fn register(path: &Path) {
    if let Ok(mut list) = STAGING.lock() {
        list.push(path.to_path_buf());
    }
}

fn unregister(path: &Path) {
    if let Ok(mut list) = STAGING.lock() {
        list.retain(|listed| listed != path);
    }
}

/// Removes every staging folder this process is writing; returns how many were removed. Called
/// from the signal handler before the process exits.
pub fn remove_staging_folders() -> usize {
    INTERRUPTED.store(true, Ordering::SeqCst);
    let Ok(mut list) = STAGING.lock() else { return 0 };
    let mut removed = 0;
    for path in list.drain(..) {
        // Worker threads may still be creating files inside: retry a few times.
        for _ in 0..5 {
            if fs::remove_dir_all(&path).is_ok() || !path.exists() {
                removed += 1;
                break;
            }
            std::thread::sleep(std::time::Duration::from_millis(20));
        }
    }
    removed
}

use crate::maps::WriteError;

/// Prefix of the temporary folder beside the target (`.<name>.strata-partial-<pid>`).
const PARTIAL_MARKER: &str = "strata-partial";

/// An output folder being written.
#[derive(Debug)]
pub struct OutputFolder {
    target: PathBuf,
    staging: PathBuf,
    force: bool,
    committed: bool,
}

fn io_error(path: &Path) -> impl FnOnce(std::io::Error) -> WriteError + '_ {
    move |source| WriteError::Io { path: path.to_path_buf(), source }
}

fn is_non_empty_dir(path: &Path) -> bool {
    fs::read_dir(path).map(|mut entries| entries.next().is_some()).unwrap_or(false)
}

impl OutputFolder {
    /// Checks the target can be written and creates the staging folder beside it.
    ///
    /// # Errors
    /// [`WriteError::Exists`] if `target` is a non-empty folder and `force` is false;
    /// [`WriteError::Io`] if the target is a file or the staging folder cannot be created.
    pub fn prepare(target: &Path, force: bool) -> Result<Self, WriteError> {
        if target.exists() && !target.is_dir() {
            return Err(WriteError::Io {
                path: target.to_path_buf(),
                source: std::io::Error::other("exists and is not a folder; choose another --out"),
            });
        }
        if is_non_empty_dir(target) && !force {
            return Err(WriteError::Exists { path: target.to_path_buf() });
        }
        let parent = match target.parent() {
            Some(parent) if !parent.as_os_str().is_empty() => parent.to_path_buf(),
            _ => PathBuf::from("."),
        };
        fs::create_dir_all(&parent).map_err(io_error(&parent))?;
        let name = target
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_else(|| "out".into());
        remove_stale_partials(&parent, &name);
        let staging = parent.join(format!(".{name}.{PARTIAL_MARKER}-{}", std::process::id()));
        if staging.exists() {
            fs::remove_dir_all(&staging).map_err(io_error(&staging))?;
        }
        fs::create_dir_all(&staging).map_err(io_error(&staging))?;
        let marker = staging.join(STAGING_MARKER);
        fs::write(&marker, format!("{}\n", std::process::id())).map_err(io_error(&marker))?;
        register(&staging);
        Ok(OutputFolder { target: target.to_path_buf(), staging, force, committed: false })
    }

    /// The folder to write into now.
    pub fn path(&self) -> &Path {
        &self.staging
    }

    /// The final location.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Creates a sub-folder of the staging folder.
    pub fn subdir(&self, name: &str) -> Result<PathBuf, WriteError> {
        let path = self.staging.join(name);
        fs::create_dir_all(&path).map_err(io_error(&path))?;
        Ok(path)
    }

    /// Moves the finished folder into place, replacing an earlier one only now (with --force).
    pub fn commit(mut self) -> Result<PathBuf, WriteError> {
        if self.target.exists() {
            if is_non_empty_dir(&self.target) && !self.force {
                return Err(WriteError::Exists { path: self.target.clone() });
            }
            fs::remove_dir_all(&self.target).map_err(io_error(&self.target))?;
        }
        let marker = self.staging.join(STAGING_MARKER);
        fs::remove_file(&marker).map_err(io_error(&marker))?;
        fs::rename(&self.staging, &self.target).map_err(io_error(&self.target))?;
        unregister(&self.staging);
        self.committed = true;
        Ok(self.target.clone())
    }
}

impl Drop for OutputFolder {
    fn drop(&mut self) {
        if !self.committed {
            let _ = fs::remove_dir_all(&self.staging);
            unregister(&self.staging);
        }
    }
}

/// Whether process `pid` may still be alive. Without a process table to read (no `/proc`), every
/// process counts as alive, so nothing is removed on a guess.
fn process_alive(pid: u32) -> bool {
    if !Path::new("/proc/self").exists() {
        return true;
    }
    Path::new(&format!("/proc/{pid}")).exists()
}

/// Removes staging folders of this target left by runs that were killed: the name is
/// `.<name>.strata-partial-<pid>`, the folder holds the marker file recording that same process
/// id, and that process is gone. Anything else is left alone.
fn remove_stale_partials(parent: &Path, name: &str) {
    let prefix = format!(".{name}.{PARTIAL_MARKER}-");
    let Ok(entries) = fs::read_dir(parent) else { return };
    for entry in entries.flatten() {
        let file_name = entry.file_name().to_string_lossy().into_owned();
        let Some(Ok(pid)) = file_name.strip_prefix(&prefix).map(str::parse::<u32>) else { continue };
        let recorded = fs::read_to_string(entry.path().join(STAGING_MARKER))
            .ok()
            .and_then(|text| text.trim().parse::<u32>().ok());
        if recorded == Some(pid) && pid != std::process::id() && !process_alive(pid) {
            let _ = fs::remove_dir_all(entry.path());
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_non_empty_target_and_leaves_nothing_on_failure() {
        let root = tempfile::tempdir().unwrap();
        let target = root.path().join("results");
        fs::create_dir(&target).unwrap();
        fs::write(target.join("old.txt"), "earlier run").unwrap();
        let error = OutputFolder::prepare(&target, false).unwrap_err().to_string();
        assert!(error.contains("output folder exists and is not empty"), "{error}");
        {
            let folder = OutputFolder::prepare(&target, true).unwrap();
            fs::write(folder.path().join("new.txt"), "x").unwrap();
            // Dropped without commit: as if the run failed.
        }
        assert_eq!(fs::read_to_string(target.join("old.txt")).unwrap(), "earlier run");
        let leftovers: Vec<_> = fs::read_dir(root.path()).unwrap().collect();
        assert_eq!(leftovers.len(), 1, "only the earlier result remains");
    }

    #[test]
    fn only_marked_staging_folders_of_dead_processes_are_removed() {
        let root = tempfile::tempdir().unwrap();
        let target = root.path().join("results");
        // A process id above the kernel's largest (pid_max is at most 2^22 on Linux): never alive.
        let dead = 4_194_304 + 17;
        let stale = root.path().join(format!(".results.{PARTIAL_MARKER}-{dead}"));
        fs::create_dir(&stale).unwrap();
        fs::write(stale.join(STAGING_MARKER), format!("{dead}\n")).unwrap();
        // Same name pattern but no marker (not ours), a marker of another id, and a live process.
        let unmarked = root.path().join(format!(".results.{PARTIAL_MARKER}-{}", dead + 1));
        fs::create_dir(&unmarked).unwrap();
        let mismatched = root.path().join(format!(".results.{PARTIAL_MARKER}-{}", dead + 2));
        fs::create_dir(&mismatched).unwrap();
        fs::write(mismatched.join(STAGING_MARKER), "1\n").unwrap();
        let live = root.path().join(format!(".results.{PARTIAL_MARKER}-1"));
        fs::create_dir(&live).unwrap();
        fs::write(live.join(STAGING_MARKER), "1\n").unwrap();
        let folder = OutputFolder::prepare(&target, false).unwrap();
        assert!(!stale.exists(), "a marked folder of a dead process is removed");
        assert!(unmarked.exists() && mismatched.exists() && live.exists());
        assert!(folder.path().join(STAGING_MARKER).exists());
        let staging = folder.path().to_path_buf();
        assert!(STAGING.lock().unwrap().contains(&staging));
        folder.commit().unwrap();
        assert!(!target.join(STAGING_MARKER).exists(), "the marker does not reach the result");
        assert!(!STAGING.lock().unwrap().contains(&staging));
    }

    #[test]
    fn commit_replaces_with_force() {
        let root = tempfile::tempdir().unwrap();
        let target = root.path().join("results");
        fs::create_dir(&target).unwrap();
        fs::write(target.join("old.txt"), "earlier run").unwrap();
        let folder = OutputFolder::prepare(&target, true).unwrap();
        fs::write(folder.path().join("new.txt"), "x").unwrap();
        folder.commit().unwrap();
        assert!(target.join("new.txt").exists());
        assert!(!target.join("old.txt").exists());
    }
}
