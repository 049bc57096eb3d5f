//! Writing output files: atomically (a temporary file with an unpredictable name beside the
//! target, then a rename), all outputs of a run or none, under the lock of their folders (one
//! run at a time, [`lock`]), never over an input, twice to one path, or over anything that is
//! not a regular file (a symbolic link, a device, a folder). Every file collatio writes goes
//! through here.

pub mod lock;

pub use lock::{LockWait, OutputLock, DEFAULT_WAIT, LOCK_FILE};

use std::path::{Path, PathBuf};

/// Why an output could not be written.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// An output path names one of the input files.
    #[error("output: {path} is an input file; refusing to overwrite it")]
    WouldOverwriteInput {
        /// The output path.
        path: PathBuf,
    },
    /// Two outputs name the same file.
    #[error("output: {path} is named by two outputs")]
    SameOutputTwice {
        /// The path.
        path: PathBuf,
    },
    /// An output path names something other than a regular file.
    #[error("output: {path} is {kind}; refusing to replace it with a file")]
    NotAFile {
        /// The output path.
        path: PathBuf,
        /// What it is.
        kind: &'static str,
    },
    /// An output path has the name of collatio's lock file or of its temporary files, which
    /// later runs remove.
    #[error("output: {path} has the name of collatio's own lock or temporary files")]
    ReservedName {
        /// The output path.
        path: PathBuf,
    },
    /// Another collatio run held the lock of an output folder for the whole wait.
    #[error(
        "output: another collatio run is writing into {dir}: its lock {lock} was still held \
         after {} s; nothing was written",
        waited.as_secs_f64()
    )]
    Locked {
        /// The folder.
        dir: PathBuf,
        /// Its lock file.
        lock: PathBuf,
        /// How long this run waited.
        waited: std::time::Duration,
    },
    /// A file was to be written into a folder whose lock is not held (a bug of the caller).
    #[error("output: {path}: its folder was not locked for writing")]
    NotLocked {
        /// The file.
        path: PathBuf,
    },
    /// Writing a file failed.
    #[error("output: {path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The system error.
        source: std::io::Error,
    },
}

impl OutputError {
    /// Whether the error is the user's choice of paths (a usage error) rather than a failure.
    pub fn is_usage(&self) -> bool {
        matches!(
            self,
            OutputError::WouldOverwriteInput { .. }
                | OutputError::SameOutputTwice { .. }
                | OutputError::NotAFile { .. }
                | OutputError::ReservedName { .. }
        )
    }
}

/// The absolute form of a path whose file may not exist yet.
fn absolute(path: &Path) -> PathBuf {
    if let Ok(p) = std::fs::canonicalize(path) {
        return p;
    }
    let parent = path.parent().filter(|p| !p.as_os_str().is_empty());
    let base = match parent {
        Some(dir) => std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf()),
        None => std::env::current_dir().unwrap_or_default(),
    };
    match path.file_name() {
        Some(name) => base.join(name),
        None => base,
    }
}

/// Whether two paths name the same file (or would, once written).
pub fn same_file(a: &Path, b: &Path) -> bool {
    absolute(a) == absolute(b)
}

/// Refuses outputs that name an input, each other, something that is not a regular file, or
/// collatio's lock or temporary files.
pub fn check_outputs(inputs: &[&Path], outputs: &[PathBuf]) -> Result<(), OutputError> {
    let inputs: Vec<PathBuf> = inputs.iter().map(|p| absolute(p)).collect();
    let mut seen: Vec<PathBuf> = Vec::new();
    for out in outputs {
        check_name(out)?;
        check_replaceable(out)?;
        let abs = absolute(out);
        if inputs.contains(&abs) {
            return Err(OutputError::WouldOverwriteInput { path: out.clone() });
        }
        if seen.contains(&abs) {
            return Err(OutputError::SameOutputTwice { path: out.clone() });
        }
        seen.push(abs);
    }
    Ok(())
}

/// Refuses to replace a path that exists and is not a regular file: a symbolic link, a folder,
/// a device such as `/dev/null` or a named pipe (replacing it by a file would break what it
/// stood for).
pub fn check_replaceable(path: &Path) -> Result<(), OutputError> {
    match std::fs::symlink_metadata(path) {
        Ok(meta) if !meta.file_type().is_file() => Err(OutputError::NotAFile {
            path: path.to_path_buf(),
            kind: kind_of(&meta.file_type()),
        }),
        _ => Ok(()),
    }
}

/// Refuses a path named like collatio's lock file or its temporary files: a later run would
/// remove such a file, or lock it and then find it replaced.
pub fn check_name(path: &Path) -> Result<(), OutputError> {
    let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
    if name == LOCK_FILE || lock::is_temporary_name(name) {
        return Err(OutputError::ReservedName {
            path: path.to_path_buf(),
        });
    }
    Ok(())
}

/// The folder a file is written into (`.` for a bare file name).
pub fn folder_of(path: &Path) -> PathBuf {
    path.parent()
        .filter(|p| !p.as_os_str().is_empty())
        .map_or_else(|| PathBuf::from("."), Path::to_path_buf)
}

/// A file type in words.
fn kind_of(kind: &std::fs::FileType) -> &'static str {
    if kind.is_symlink() {
        return "a symbolic link";
    }
    if kind.is_dir() {
        return "a folder";
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if kind.is_fifo() {
            return "a named pipe";
        }
        if kind.is_char_device() || kind.is_block_device() {
            return "a device";
        }
    }
    "not a regular file"
}

/// An output written to a temporary file beside its target, not yet in place.
struct Staged {
    file: tempfile::NamedTempFile,
    path: PathBuf,
}

/// Writes `bytes` into a new temporary file in the target's folder (created when missing),
/// with an unpredictable name and exclusive creation (the `tempfile` crate).
fn stage(path: &Path, bytes: &[u8]) -> Result<Staged, OutputError> {
    use std::io::Write;
    let io = |source| OutputError::Io {
        path: path.to_path_buf(),
        source,
    };
    check_replaceable(path)?;
    let dir = folder_of(path);
    std::fs::create_dir_all(&dir).map_err(io)?;
    let mut builder = tempfile::Builder::new();
    builder
        .prefix(lock::TEMP_PREFIX)
        .suffix(lock::TEMP_SUFFIX)
        .rand_bytes(lock::TEMP_RANDOM);
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        // Readable by others as a plainly created file would be (the umask still applies).
        builder.permissions(std::fs::Permissions::from_mode(0o644));
    }
    let mut file = builder.tempfile_in(&dir).map_err(io)?;
    file.write_all(bytes).map_err(io)?;
    file.as_file().sync_all().map_err(io)?;
    Ok(Staged {
        file,
        path: path.to_path_buf(),
    })
}

/// Writes every file of a run, or none, under the lock of their folders (waiting for another
/// run at most [`DEFAULT_WAIT`]); see [`write_all_with`].
pub fn write_all(files: &[(PathBuf, Vec<u8>)]) -> Result<Vec<PathBuf>, OutputError> {
    write_all_with(files, &LockWait::default())
}

/// Writes every file of a run, or none: the folders are locked against other collatio runs
/// ([`OutputLock`], waiting as `wait` says), each file is written in full to a temporary file
/// beside its target, and only when all are ready are they renamed into place. A failure
/// before that leaves no output and no temporary file behind. Returns the temporary files of
/// killed runs removed from the folders.
pub fn write_all_with(
    files: &[(PathBuf, Vec<u8>)],
    wait: &LockWait<'_>,
) -> Result<Vec<PathBuf>, OutputError> {
    for (path, _) in files {
        check_name(path)?;
        check_replaceable(path)?;
    }
    let folders: Vec<PathBuf> = files.iter().map(|(path, _)| folder_of(path)).collect();
    let lock = OutputLock::acquire(&folders, wait)?;
    write_locked(&lock, files)?;
    Ok(lock.leftovers().to_vec())
}

/// Writes every file of a run, or none, into folders whose lock the caller holds (so that
/// more can be done under the same lock, such as removing an earlier run's files): each is
/// first written in full to a temporary file beside its target, then all are renamed into
/// place, one after another.
pub fn write_locked(lock: &OutputLock, files: &[(PathBuf, Vec<u8>)]) -> Result<(), OutputError> {
    for (path, _) in files {
        check_name(path)?;
        check_replaceable(path)?;
        if !lock.covers(path) {
            return Err(OutputError::NotLocked { path: path.clone() });
        }
    }
    let staged = files
        .iter()
        .map(|(path, bytes)| stage(path, bytes))
        .collect::<Result<Vec<_>, _>>()?;
    for Staged { file, path } in staged {
        check_replaceable(&path)?;
        file.persist(&path).map_err(|e| OutputError::Io {
            path: path.clone(),
            source: e.error,
        })?;
    }
    Ok(())
}

/// Writes bytes atomically, under the lock of the target's folder: a temporary file beside
/// the target, then a rename over it. The target's folder is created when missing; a target
/// that is not a regular file is refused. Returns the temporary files of killed runs removed.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<Vec<PathBuf>, OutputError> {
    write_all(&[(path.to_path_buf(), bytes.to_vec())])
}

/// Writes one output for inputs `inputs`: refused when it names one of them, else atomic.
pub fn write_output(
    inputs: &[&Path],
    path: &Path,
    bytes: &[u8],
) -> Result<Vec<PathBuf>, OutputError> {
    check_outputs(inputs, &[path.to_path_buf()])?;
    write_atomic(path, bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn outputs_never_replace_inputs() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("a.mid");
        std::fs::write(&input, b"x").unwrap();
        let err = check_outputs(&[&input], &[dir.path().join("./a.mid")]).unwrap_err();
        assert!(err.is_usage());
        assert!(check_outputs(&[&input], &[dir.path().join("b.pdf")]).is_ok());
        assert!(check_outputs(
            &[&input],
            &[dir.path().join("b.pdf"), dir.path().join("b.pdf")]
        )
        .is_err());
        assert!(write_output(&[&input], &input, b"y").is_err());
        assert_eq!(std::fs::read(&input).unwrap(), b"x");
    }

    #[cfg(unix)]
    #[test]
    fn links_folders_and_devices_are_never_replaced() {
        let dir = tempfile::tempdir().unwrap();
        let victim = dir.path().join("victim.txt");
        std::fs::write(&victim, b"keep").unwrap();
        let link = dir.path().join("out.pdf");
        std::os::unix::fs::symlink(&victim, &link).unwrap();
        for target in [link.as_path(), dir.path(), Path::new("/dev/null")] {
            let err = write_atomic(target, b"pdf").unwrap_err();
            assert!(err.is_usage(), "{err}");
        }
        assert_eq!(std::fs::read(&victim).unwrap(), b"keep");
        assert!(std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
    }

    #[test]
    fn all_or_none() {
        let dir = tempfile::tempdir().unwrap();
        let good = dir.path().join("a.json");
        let files = vec![
            (good.clone(), b"{}".to_vec()),
            (dir.path().to_path_buf(), b"x".to_vec()),
        ];
        assert!(write_all(&files).is_err());
        assert!(!good.exists());
        let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
        assert!(names.is_empty(), "{names:?}");
        write_all(&files[..1]).unwrap();
        assert_eq!(std::fs::read(&good).unwrap(), b"{}");
        // Neither the lock file nor a temporary file is left beside the output.
        let names: Vec<_> = std::fs::read_dir(dir.path())
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        assert_eq!(names, ["a.json"]);
    }

    #[test]
    fn the_names_of_locks_and_temporaries_are_not_outputs() {
        let dir = tempfile::tempdir().unwrap();
        for name in [LOCK_FILE, ".collatio-x1Y2z3.tmp"] {
            let path = dir.path().join(name);
            let err = check_outputs(&[], std::slice::from_ref(&path)).unwrap_err();
            assert!(err.is_usage(), "{err}");
            assert!(write_atomic(&path, b"x").unwrap_err().is_usage());
        }
        assert!(std::fs::read_dir(dir.path()).unwrap().next().is_none());
    }

    #[test]
    fn writing_needs_the_folders_lock() {
        let dir = tempfile::tempdir().unwrap();
        let other = tempfile::tempdir().unwrap();
        let lock = OutputLock::acquire(&[dir.path().into()], &LockWait::default()).unwrap();
        let files = [(other.path().join("a.json"), b"{}".to_vec())];
        let err = write_locked(&lock, &files).unwrap_err();
        assert!(matches!(err, OutputError::NotLocked { .. }), "{err}");
        assert!(!other.path().join("a.json").exists());
    }
}
