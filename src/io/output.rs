//! Staged output files: written next to their target under a temporary name
//! and renamed into place only when every output of a command is ready, so a
//! failing command leaves nothing half-written.

use std::path::{Path, PathBuf};

/// A set of output files that appear together or not at all.
#[derive(Debug, Default)]
pub struct StagedOutputs {
    staged: Vec<(PathBuf, PathBuf)>,
}

impl StagedOutputs {
    /// An empty set.
    pub fn new() -> Self {
        Self::default()
    }

    /// A temporary path in the target's folder that keeps the target's
    /// extension (plot back-ends choose the format by extension).
    fn temporary_for(target: &Path) -> PathBuf {
        let dir = target.parent().filter(|p| !p.as_os_str().is_empty());
        let stem = target
            .file_stem()
            .map_or_else(|| "output".into(), |s| s.to_string_lossy().into_owned());
        let ext = target
            .extension()
            .map(|e| format!(".{}", e.to_string_lossy()))
            .unwrap_or_default();
        let name = format!(".{stem}.partial-{}{ext}", std::process::id());
        match dir {
            Some(d) => d.join(name),
            None => PathBuf::from(name),
        }
    }

    /// Stages `bytes` for `target`.
    ///
    /// # Errors
    /// The I/O error of writing the temporary file.
    pub fn stage_bytes(&mut self, target: &Path, bytes: &[u8]) -> std::io::Result<()> {
        let tmp = Self::temporary_for(target);
        self.staged.push((tmp.clone(), target.to_path_buf()));
        std::fs::write(&tmp, bytes)
    }

    /// Stages a file that `write` creates at the temporary path it is given.
    ///
    /// # Errors
    /// Whatever `write` returns.
    pub fn stage_with<E>(
        &mut self,
        target: &Path,
        write: impl FnOnce(&Path) -> Result<(), E>,
    ) -> Result<(), E> {
        let tmp = Self::temporary_for(target);
        self.staged.push((tmp.clone(), target.to_path_buf()));
        write(&tmp)
    }

    /// Renames every staged file into place.
    ///
    /// # Errors
    /// The I/O error of a rename; files not yet renamed are removed.
    pub fn commit(mut self) -> std::io::Result<()> {
        let staged = std::mem::take(&mut self.staged);
        let mut iter = staged.into_iter();
        while let Some((tmp, target)) = iter.next() {
            if let Err(e) = std::fs::rename(&tmp, &target) {
                let _ = std::fs::remove_file(&tmp);
                for (rest, _) in iter {
                    let _ = std::fs::remove_file(rest);
                }
                return Err(e);
            }
        }
        Ok(())
    }
}

impl Drop for StagedOutputs {
    fn drop(&mut self) {
        for (tmp, _) in &self.staged {
            let _ = std::fs::remove_file(tmp);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("ripline-out-{name}-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    #[test]
    fn nothing_appears_unless_committed() {
        let dir = scratch("drop");
        let target = dir.join("a.csv");
        {
            let mut out = StagedOutputs::new();
            out.stage_bytes(&target, b"x").unwrap();
        }
        assert!(!target.exists());
        assert_eq!(
            std::fs::read_dir(&dir).unwrap().count(),
            0,
            "no temporary left"
        );
        let mut out = StagedOutputs::new();
        out.stage_bytes(&target, b"y").unwrap();
        out.commit().unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"y");
        std::fs::remove_dir_all(dir).unwrap();
    }
}
