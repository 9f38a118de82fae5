//! Output files as an all-or-nothing group.
//!
//! [`StagedOutputs::plan`] checks every target before any work (a file name,
//! not a folder; its folder exists and takes a new file; no two outputs the
//! same file; no output the same file as an input) and reserves a hidden
//! temporary file beside each target. The command writes each result into
//! its temporary file; [`StagedOutputs::commit`] then moves them into place
//! together: an existing target is first moved aside, and if a later rename
//! fails every target already replaced gets its old file back. A command that
//! fails before the commit removes its temporary files when the group is
//! dropped, and a process-wide registry of them lets a signal handler remove
//! them too ([`remove_staged_files`]).

use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Temporary files of the live groups in this process: staged results not
/// yet in place, and the folders created for them. A commit holds the lock
/// from its first rename to its last, so a signal handler that takes it sees
/// either every output of a group in place or none.
static LIVE: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Distinguishes the temporary names of one process.
static SEQUENCE: AtomicUsize = AtomicUsize::new(0);

fn live() -> std::sync::MutexGuard<'static, Vec<PathBuf>> {
    LIVE.lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

fn register(path: &Path) {
    live().push(path.to_path_buf());
}

fn forget(list: &mut Vec<PathBuf>, path: &Path) {
    if let Some(i) = list.iter().rposition(|p| p == path) {
        list.swap_remove(i);
    }
}

/// Removes every staged file and every folder created for one in this
/// process, and keeps the registry locked so that no commit can start after
/// it. For a signal handler: call it, then exit.
pub fn remove_staged_files() {
    let mut list = live();
    // Files first, then the folders (most recently created first).
    for p in list.iter().filter(|p| !p.is_dir()) {
        let _ = std::fs::remove_file(p);
    }
    for p in list.iter().rev().filter(|p| p.is_dir()) {
        let _ = std::fs::remove_dir(p);
    }
    list.clear();
    // The guard is leaked on purpose: the process is about to exit and no
    // other thread may commit a group half-way after this point.
    std::mem::forget(list);
}

/// A problem with an output target, or with moving results into place.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum OutputError {
    /// The target cannot be written as asked.
    #[error("{option} {path}: {reason}")]
    Target {
        /// The option or key that named the target.
        option: String,
        /// The target as the user gave it.
        path: String,
        /// What is wrong and what would do.
        reason: String,
    },
    /// Writing or renaming a file failed.
    #[error("{path}: {action}: {cause}")]
    Io {
        /// The file.
        path: String,
        /// What was being done.
        action: &'static str,
        /// The I/O error.
        cause: std::io::Error,
    },
}

/// A failure to stage a file through a writer of its own.
#[derive(Debug, thiserror::Error)]
pub enum StageError<E> {
    /// The target was refused.
    #[error(transparent)]
    Output(#[from] OutputError),
    /// The writer failed.
    #[error(transparent)]
    Write(E),
}

/// One output: the option that named it, its target and its temporary file.
#[derive(Debug)]
struct Staged {
    option: String,
    target: PathBuf,
    /// The target's folder (canonical) joined with its file name: what two
    /// outputs are compared by.
    identity: PathBuf,
    tmp: PathBuf,
}

/// A set of output files that appear together or not at all.
#[derive(Debug, Default)]
pub struct StagedOutputs {
    staged: Vec<Staged>,
    /// Folders created for targets, removed again (if empty) when the group
    /// is dropped uncommitted.
    created: Vec<PathBuf>,
}

/// A temporary path in the target's folder that keeps the target's extension
/// (plot back-ends choose the format by extension): `.NAME.TAG-PID-N.EXT`.
fn sibling(target: &Path, tag: &str) -> PathBuf {
    let stem = target
        .file_stem()
        .map_or_else(|| "output".into(), |s| s.to_string_lossy().into_owned());
    let ext = target
        .extension()
        .map(|e| format!(".{}", e.to_string_lossy()))
        .unwrap_or_default();
    let n = SEQUENCE.fetch_add(1, Ordering::Relaxed);
    let name = format!(".{stem}.{tag}-{}-{n}{ext}", std::process::id());
    folder_of(target).join(name)
}

/// The folder a path names a file in (`.` for a bare file name).
fn folder_of(path: &Path) -> &Path {
    path.parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
}

/// The canonical paths of `inputs` that exist (the others cannot be
/// overwritten, being absent).
fn canonical_inputs(inputs: &[PathBuf]) -> Vec<(PathBuf, PathBuf)> {
    inputs
        .iter()
        .filter_map(|p| Some((p.clone(), std::fs::canonicalize(p).ok()?)))
        .collect()
}

impl StagedOutputs {
    /// An empty set.
    pub fn new() -> Self {
        Self::default()
    }

    /// Checks every target before any work and reserves a temporary file
    /// for each. `targets` are `(option, path, create_folders)`: with
    /// `create_folders`, missing folders of the path are created (and removed
    /// again if nothing is committed); otherwise the folder must exist.
    /// `inputs` are every file the command reads.
    ///
    /// # Errors
    /// [`OutputError::Target`] naming the option and the path: a path that
    /// names a folder (`out/`, an existing folder), a missing folder, a folder
    /// that takes no new file, an existing target that is not a regular file
    /// (a device, a pipe), two outputs that are the same file, or an output
    /// that is one of the inputs.
    pub fn plan(targets: &[(&str, &Path, bool)], inputs: &[PathBuf]) -> Result<Self, OutputError> {
        let inputs = canonical_inputs(inputs);
        let mut group = Self::new();
        for &(option, path, create) in targets {
            group.reserve(option, path, create, &inputs)?;
        }
        Ok(group)
    }

    fn reserve(
        &mut self,
        option: &str,
        path: &Path,
        create: bool,
        inputs: &[(PathBuf, PathBuf)],
    ) -> Result<(), OutputError> {
        let fail = |reason: String| OutputError::Target {
            option: option.to_string(),
            path: path.display().to_string(),
            reason,
        };
        let text = path.as_os_str().to_string_lossy();
        let name = match path.file_name() {
            Some(n) if !text.ends_with('/') && !text.ends_with(std::path::MAIN_SEPARATOR) => n,
            _ => return Err(fail("names a folder, not a file: give a file name".into())),
        };
        if let Ok(meta) = std::fs::metadata(path) {
            if meta.is_dir() {
                return Err(fail("is a folder: give a file name".into()));
            }
            if !meta.is_file() {
                return Err(fail(
                    "exists and is not a regular file (a device or a pipe?): outputs are written as regular files".into(),
                ));
            }
        }
        let folder = folder_of(path);
        if !folder.is_dir() {
            if create && !folder.exists() {
                self.create_folders(folder)
                    .map_err(|e| fail(format!("cannot create the folder: {e}")))?;
            } else {
                return Err(fail(format!(
                    "the folder {} does not exist",
                    folder.display()
                )));
            }
        }
        let identity = std::fs::canonicalize(folder)
            .map_err(|e| {
                fail(format!(
                    "cannot resolve the folder {}: {e}",
                    folder.display()
                ))
            })?
            .join(name);
        let resolved = std::fs::canonicalize(path).unwrap_or_else(|_| identity.clone());
        if let Some((input, _)) = inputs
            .iter()
            .find(|(_, c)| *c == identity || *c == resolved)
        {
            return Err(fail(format!(
                "is the input file {}: an output may never overwrite an input; choose another name",
                input.display()
            )));
        }
        if let Some(other) = self
            .staged
            .iter()
            .find(|s| s.identity == identity || s.identity == resolved)
        {
            return Err(fail(format!(
                "is the same file as {} {}: give each output its own file",
                other.option,
                other.target.display()
            )));
        }
        let tmp = sibling(path, "partial");
        register(&tmp);
        std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
            .map_err(|e| {
                forget(&mut live(), &tmp);
                fail(format!(
                    "cannot write a new file in the folder {}: {e}",
                    folder.display()
                ))
            })?;
        self.staged.push(Staged {
            option: option.to_string(),
            target: path.to_path_buf(),
            identity,
            tmp,
        });
        Ok(())
    }

    /// Creates `folder` and its missing parents, remembering each one made.
    fn create_folders(&mut self, folder: &Path) -> std::io::Result<()> {
        let mut missing = Vec::new();
        let mut f = Some(folder);
        while let Some(d) = f.filter(|d| !d.as_os_str().is_empty() && !d.exists()) {
            missing.push(d.to_path_buf());
            f = d.parent();
        }
        for d in missing.into_iter().rev() {
            register(&d);
            if let Err(e) = std::fs::create_dir(&d) {
                forget(&mut live(), &d);
                return Err(e);
            }
            self.created.push(d);
        }
        Ok(())
    }

    /// The temporary file for `target`, reserving one if `plan` did not.
    fn temporary(&mut self, target: &Path) -> Result<PathBuf, OutputError> {
        if let Some(s) = self.staged.iter().find(|s| s.target == target) {
            return Ok(s.tmp.clone());
        }
        self.reserve("output", target, false, &[])?;
        Ok(self.staged[self.staged.len() - 1].tmp.clone())
    }

    /// Stages `bytes` for `target`.
    ///
    /// # Errors
    /// A target `plan` would refuse, or the I/O error of writing.
    pub fn stage_bytes(&mut self, target: &Path, bytes: &[u8]) -> Result<(), OutputError> {
        let tmp = self.temporary(target)?;
        std::fs::write(&tmp, bytes).map_err(|cause| OutputError::Io {
            path: target.display().to_string(),
            action: "writing",
            cause,
        })
    }

    /// Stages a file that `write` creates at the temporary path it is given.
    ///
    /// # Errors
    /// A target `plan` would refuse, or whatever `write` returns.
    pub fn stage_with<E>(
        &mut self,
        target: &Path,
        write: impl FnOnce(&Path) -> Result<(), E>,
    ) -> Result<(), StageError<E>> {
        let tmp = self.temporary(target)?;
        write(&tmp).map_err(StageError::Write)
    }

    /// Moves every staged file into place, all or none: an existing target is
    /// moved aside first and restored if a later move fails.
    ///
    /// # Errors
    /// [`OutputError::Io`] of the move that failed; the targets are then as
    /// they were before the commit.
    pub fn commit(mut self) -> Result<(), OutputError> {
        let mut list = live();
        let staged = std::mem::take(&mut self.staged);
        let mut done: Vec<(&Path, Option<PathBuf>)> = Vec::new();
        let mut failure = None;
        for s in &staged {
            let existing = std::fs::symlink_metadata(&s.target);
            if existing.as_ref().is_ok_and(std::fs::Metadata::is_dir) {
                let cause = std::io::Error::new(
                    std::io::ErrorKind::IsADirectory,
                    "a folder took the file's place",
                );
                failure = Some((s, "moving the result into place", cause));
                break;
            }
            let aside = if existing.is_ok() {
                let aside = sibling(&s.target, "previous");
                if let Err(cause) = std::fs::rename(&s.target, &aside) {
                    failure = Some((s, "moving the existing file aside", cause));
                    break;
                }
                Some(aside)
            } else {
                None
            };
            if let Err(cause) = std::fs::rename(&s.tmp, &s.target) {
                if let Some(a) = &aside {
                    let _ = std::fs::rename(a, &s.target);
                }
                failure = Some((s, "moving the result into place", cause));
                break;
            }
            done.push((&s.target, aside));
        }
        if let Some((s, action, cause)) = failure {
            for (target, aside) in done.into_iter().rev() {
                match aside {
                    Some(a) => {
                        let _ = std::fs::rename(a, target);
                    }
                    None => {
                        let _ = std::fs::remove_file(target);
                    }
                }
            }
            for s in &staged {
                let _ = std::fs::remove_file(&s.tmp);
                forget(&mut list, &s.tmp);
            }
            // self.created is removed by Drop (now that the files are gone).
            drop(list);
            return Err(OutputError::Io {
                path: s.target.display().to_string(),
                action,
                cause,
            });
        }
        for (_, aside) in done {
            if let Some(a) = aside {
                let _ = std::fs::remove_file(a);
            }
        }
        for s in &staged {
            forget(&mut list, &s.tmp);
        }
        for d in std::mem::take(&mut self.created) {
            forget(&mut list, &d);
        }
        Ok(())
    }
}

impl Drop for StagedOutputs {
    fn drop(&mut self) {
        let mut list = live();
        for s in &self.staged {
            let _ = std::fs::remove_file(&s.tmp);
            forget(&mut list, &s.tmp);
        }
        for d in self.created.iter().rev() {
            let _ = std::fs::remove_dir(d);
            forget(&mut list, d);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("ripline-out-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    fn entries(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn nothing_appears_unless_committed() {
        let dir = scratch("drop");
        let target = dir.join("a.csv");
        {
            let mut out = StagedOutputs::plan(&[("--csv", &target, false)], &[]).unwrap();
            out.stage_bytes(&target, b"x").unwrap();
        }
        assert!(!target.exists());
        assert!(entries(&dir).is_empty(), "no temporary left");
        let mut out = StagedOutputs::new();
        out.stage_bytes(&target, b"y").unwrap();
        out.commit().unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"y");
        std::fs::remove_dir_all(dir).unwrap();
    }

    /// The promise of the group: when the second move fails, the first
    /// target gets its old contents back and no temporary is left.
    #[test]
    fn a_failed_commit_restores_every_target() {
        let dir = scratch("rollback");
        let a = dir.join("a.csv");
        let b = dir.join("b.csv");
        std::fs::write(&a, b"old a").unwrap();
        let mut out =
            StagedOutputs::plan(&[("--csv", &a, false), ("--plot", &b, false)], &[]).unwrap();
        out.stage_bytes(&a, b"new a").unwrap();
        out.stage_bytes(&b, b"new b").unwrap();
        // After the check, b becomes a non-empty folder: its move must fail.
        std::fs::create_dir(&b).unwrap();
        std::fs::write(b.join("keep"), b"k").unwrap();
        let err = out.commit().unwrap_err();
        assert!(matches!(err, OutputError::Io { .. }), "{err}");
        assert_eq!(std::fs::read(&a).unwrap(), b"old a");
        assert_eq!(entries(&dir), ["a.csv", "b.csv"]);
        std::fs::remove_dir_all(dir).unwrap();
    }

    #[test]
    fn targets_are_checked_before_any_work() {
        let dir = scratch("check");
        let input = dir.join("in.yaml");
        std::fs::write(&input, b"x").unwrap();
        let plan = |targets: &[(&str, &Path, bool)]| {
            StagedOutputs::plan(targets, std::slice::from_ref(&input))
                .unwrap_err()
                .to_string()
        };
        let slash = PathBuf::from(format!("{}/", dir.join("o").display()));
        assert!(plan(&[("--csv", &slash, false)]).contains("names a folder"));
        assert!(plan(&[("--csv", &dir, false)]).contains("is a folder"));
        let missing = dir.join("no/such/a.csv");
        assert!(plan(&[("--csv", &missing, false)]).contains("does not exist"));
        let same = dir.join("x.csv");
        let also = dir.join(".").join("x.csv");
        let e = plan(&[("--csv", &same, false), ("--harmonic-csv", &also, false)]);
        assert!(e.contains("is the same file as --csv"), "{e}");
        let e = plan(&[("--source-out", &dir.join("./in.yaml"), false)]);
        assert!(e.contains("is the input file"), "{e}");
        assert!(entries(&dir) == ["in.yaml"], "refused plans leave nothing");
        // Created folders go again when nothing is committed.
        let deep = dir.join("new/deeper/a.csv");
        drop(StagedOutputs::plan(&[("records", &deep, true)], &[]).unwrap());
        assert!(entries(&dir) == ["in.yaml"], "{:?}", entries(&dir));
        std::fs::remove_dir_all(dir).unwrap();
    }
}
