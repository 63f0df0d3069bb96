//! The output folder: written under a temporary name beside the target, renamed into place when
//! the run has finished, so a failed or interrupted run never leaves a half-written result and
//! never replaces an earlier one.

use std::fs;
use std::path::{Path, PathBuf};

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
        fs::rename(&self.staging, &self.target).map_err(io_error(&self.target))?;
        self.committed = true;
        Ok(self.target.clone())
    }
}

impl Drop for OutputFolder {
    fn drop(&mut self) {
        if !self.committed {
            let _ = fs::remove_dir_all(&self.staging);
        }
    }
}

/// Removes staging folders of this target left by runs that were killed (their process is gone).
fn remove_stale_partials(parent: &Path, name: &str) {
    let prefix = format!(".{name}.{PARTIAL_MARKER}-");
    let Ok(entries) = fs::read_dir(parent) else { return };
    for entry in entries.flatten() {
        let file_name = entry.file_name().to_string_lossy().into_owned();
        let Some(pid) = file_name.strip_prefix(&prefix) else { continue };
        let alive =
            pid.parse::<u32>().map(|pid| Path::new(&format!("/proc/{pid}")).exists()).unwrap_or(false);
        if !alive {
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
