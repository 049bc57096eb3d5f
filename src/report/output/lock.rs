//! The lock of a run's output folders: while one run puts its outputs in place, no other
//! collatio run writes into the same folders, so that two runs writing the same paths leave the
//! whole set of one of them, never a mix of both.
//!
//! In: the folders a run writes into. Out: an [`OutputLock`] that holds an exclusive advisory
//! lock (`flock(2)`, through the `rustix` crate) on the file [`LOCK_FILE`] in each folder until
//! it is dropped. The folders are locked in the
//! sorted order of their canonical paths, so two runs whose folders overlap cannot deadlock.
//! A run that finds a folder locked waits, polling every 25 ms and announcing the wait as a
//! progress step, for at most [`LockWait::limit`] ([`DEFAULT_WAIT`]), then fails with
//! [`OutputError::Locked`] naming the lock file, having written nothing.
//!
//! - The lock file is created empty when missing; an existing one is opened without being
//!   truncated or written, never through a symbolic link, and refused when it is not a regular
//!   file. On Unix it is removed again while still locked when the lock is released, so no
//!   file is left behind; a run that finds, once it holds the lock, that the file at the path
//!   is no longer the one it locked starts again, which makes the removal safe. A run killed
//!   while holding a lock leaves the empty file (the system releases the lock); the next run
//!   uses it and removes it.
//! - While it holds a folder's lock, a run removes the temporary files (`.collatio-XXXXXX.tmp`)
//!   that a killed run left there: every collatio writer stages its files under this lock, so
//!   none of them is in use ([`OutputLock::leftovers`]).
//! - The lock is advisory: it holds back other collatio runs, not other programs. A folder on
//!   a filesystem without locks (some network mounts) is written without one, as Cargo does,
//!   and named in [`OutputLock::unlocked`]; so is every folder on a system other than Unix.
//!
//! ```no_run
//! use collatio::report::output::{write_locked, LockWait, OutputLock};
//! # fn demo() -> Result<(), collatio::report::output::OutputError> {
//! let files = vec![("out/findings.json".into(), b"{}\n".to_vec())];
//! let lock = OutputLock::acquire(&["out".into()], &LockWait::default())?;
//! write_locked(&lock, &files)?;
//! drop(lock); // the lock file is removed and the folder unlocked
//! # Ok(()) }
//! ```

use super::{check_replaceable, kind_of, OutputError};
use crate::progress::{NoProgress, Progress};
use std::fs::{File, OpenOptions};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// Name of the lock file in each output folder, present while a run writes there.
pub const LOCK_FILE: &str = ".collatio-outputs.lock";

/// How long a run waits by default for another run's lock: 60 s. A run holds its locks only
/// while it puts its rendered files in place (milliseconds for the demo, seconds for a large
/// index), so a longer wait means a run stopped or stuck while writing.
pub const DEFAULT_WAIT: Duration = Duration::from_secs(60);

/// Time between two tries of a lock held by another run.
const POLL: Duration = Duration::from_millis(25);

/// Prefix and suffix of the temporary files outputs are staged in, and the number of random
/// characters between them.
pub(super) const TEMP_PREFIX: &str = ".collatio-";
pub(super) const TEMP_SUFFIX: &str = ".tmp";
pub(super) const TEMP_RANDOM: usize = 6;

/// How long to wait for another run's lock, and where to announce the wait.
#[derive(Clone, Copy)]
pub struct LockWait<'a> {
    /// The longest wait for all folders together. Default [`DEFAULT_WAIT`].
    pub limit: Duration,
    /// Told of the wait as a step (`waiting for another collatio run writing into DIR`).
    /// Default [`NoProgress`].
    pub progress: &'a dyn Progress,
}

impl Default for LockWait<'static> {
    fn default() -> Self {
        LockWait {
            limit: DEFAULT_WAIT,
            progress: &NoProgress,
        }
    }
}

/// One folder's lock, held.
struct Held {
    /// The lock file.
    path: PathBuf,
    /// The open lock file, locked.
    file: File,
}

/// The locks of a run's output folders, held until dropped.
#[derive(Default)]
pub struct OutputLock {
    /// Canonical paths of the folders locked or, without lock support, written unlocked.
    folders: Vec<PathBuf>,
    held: Vec<Held>,
    unlocked: Vec<PathBuf>,
    leftovers: Vec<PathBuf>,
}

impl std::fmt::Debug for OutputLock {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("OutputLock")
            .field("folders", &self.folders)
            .field("unlocked", &self.unlocked)
            .field("leftovers", &self.leftovers)
            .finish()
    }
}

impl OutputLock {
    /// Locks every folder of `dirs` (created when missing), in the sorted order of their
    /// canonical paths, waiting for other runs at most `wait.limit` in all, and removes the
    /// temporary files killed runs left in them. On failure no lock is held and the folders it
    /// created are removed again.
    pub fn acquire(dirs: &[PathBuf], wait: &LockWait<'_>) -> Result<OutputLock, OutputError> {
        let mut created = Vec::new();
        let result = Self::acquire_in(dirs, wait, &mut created);
        if result.is_err() {
            // A run that could not lock leaves no folder it made (they are still empty).
            for dir in created.iter().rev() {
                let _ = std::fs::remove_dir(dir);
            }
        }
        result
    }

    /// [`OutputLock::acquire`], noting in `created` the folders it made, parents first.
    fn acquire_in(
        dirs: &[PathBuf],
        wait: &LockWait<'_>,
        created: &mut Vec<PathBuf>,
    ) -> Result<OutputLock, OutputError> {
        let mut folders = Vec::with_capacity(dirs.len());
        for dir in dirs {
            let io = |source| OutputError::Io {
                path: dir.clone(),
                source,
            };
            let mut missing: Vec<PathBuf> = dir
                .ancestors()
                .filter(|a| !a.as_os_str().is_empty())
                .take_while(|a| std::fs::symlink_metadata(a).is_err())
                .map(Path::to_path_buf)
                .collect();
            std::fs::create_dir_all(dir).map_err(io)?;
            missing.reverse();
            created.extend(missing);
            folders.push(std::fs::canonicalize(dir).map_err(io)?);
        }
        folders.sort();
        folders.dedup();
        let started = Instant::now();
        let mut lock = OutputLock::default();
        for dir in &folders {
            match lock_folder(dir, started, wait)? {
                Some(held) => {
                    lock.held.push(held);
                    // Only under the lock: without it a temporary file may be another run's.
                    let leftovers = remove_leftovers(dir)?;
                    lock.leftovers.extend(leftovers);
                }
                None => lock.unlocked.push(dir.clone()),
            }
        }
        lock.folders = folders;
        Ok(lock)
    }

    /// Whether `path` is written into one of the folders of this lock.
    pub fn covers(&self, path: &Path) -> bool {
        std::fs::canonicalize(super::folder_of(path)).is_ok_and(|dir| self.folders.contains(&dir))
    }

    /// Temporary files of killed runs removed from the folders, sorted.
    pub fn leftovers(&self) -> &[PathBuf] {
        &self.leftovers
    }

    /// Folders written without a lock, because their filesystem has none.
    pub fn unlocked(&self) -> &[PathBuf] {
        &self.unlocked
    }
}

impl Drop for OutputLock {
    fn drop(&mut self) {
        for held in self.held.drain(..) {
            // Removed while still locked, and only if it is still the (empty) file locked: a run
            // waiting on it then finds it gone once it gets the lock, and starts again.
            #[cfg(unix)]
            if matches!(still_at(&held.file, &held.path), Ok(true))
                && held.file.metadata().is_ok_and(|m| m.len() == 0)
            {
                let _ = std::fs::remove_file(&held.path);
            }
            drop(held.file);
        }
    }
}

/// Locks one folder: its lock file opened (or created) and locked, retried while another run
/// holds it, up to the wait; `None` when the filesystem has no locks.
fn lock_folder(
    dir: &Path,
    started: Instant,
    wait: &LockWait<'_>,
) -> Result<Option<Held>, OutputError> {
    if !cfg!(unix) {
        return Ok(None);
    }
    let path = dir.join(LOCK_FILE);
    let io = |source| OutputError::Io {
        path: path.clone(),
        source,
    };
    let mut waited = false;
    loop {
        let file = open_lock_file(&path)?;
        match try_lock(&file).map_err(io)? {
            Try::Locked => {
                if still_at(&file, &path).map_err(io)? {
                    if waited {
                        wait.progress.step("writing the outputs", None);
                    }
                    return Ok(Some(Held { path, file }));
                }
                // The run that held it removed it on release: lock the file now at the path.
            }
            Try::Busy => {
                if started.elapsed() >= wait.limit {
                    return Err(OutputError::Locked {
                        dir: dir.to_path_buf(),
                        lock: path,
                        waited: wait.limit,
                    });
                }
                if !waited {
                    let name = format!(
                        "waiting for another collatio run writing into {}",
                        dir.display()
                    );
                    wait.progress.step(&name, None);
                    waited = true;
                }
                std::thread::sleep(POLL);
            }
            Try::Unsupported => return Ok(None),
        }
    }
}

/// Opens the lock file, creating it empty when missing; never truncates or writes it, never
/// follows a symbolic link, and refuses anything but a regular file.
fn open_lock_file(path: &Path) -> Result<File, OutputError> {
    check_replaceable(path)?;
    let io = |source| OutputError::Io {
        path: path.to_path_buf(),
        source,
    };
    let options = |write: bool| {
        let mut o = OpenOptions::new();
        o.read(true);
        if write {
            o.write(true).create(true);
        }
        #[cfg(unix)]
        {
            use std::os::unix::fs::OpenOptionsExt;
            // No link followed (a link put there after the check above fails to open), and no
            // wait on a named pipe.
            use rustix::fs::OFlags;
            o.custom_flags((OFlags::NOFOLLOW | OFlags::NONBLOCK).bits() as i32);
        }
        o
    };
    let file = match options(true).open(path) {
        // Another user's lock file in a shared folder: a lock needs only reading.
        Err(e) if e.kind() == std::io::ErrorKind::PermissionDenied && path.exists() => {
            options(false).open(path).map_err(io)?
        }
        other => other.map_err(io)?,
    };
    let kind = file.metadata().map_err(io)?.file_type();
    if !kind.is_file() {
        return Err(OutputError::NotAFile {
            path: path.to_path_buf(),
            kind: kind_of(&kind),
        });
    }
    Ok(file)
}

/// Whether the file at `path` is still `file` (the same file, not one created since).
fn still_at(file: &File, path: &Path) -> std::io::Result<bool> {
    let here = match std::fs::symlink_metadata(path) {
        Ok(meta) => meta,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(false),
        Err(e) => return Err(e),
    };
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        let open = file.metadata()?;
        Ok(here.file_type().is_file() && here.dev() == open.dev() && here.ino() == open.ino())
    }
    #[cfg(not(unix))]
    {
        // The lock file is never removed here, so the file at the path is the one opened.
        let _ = file;
        Ok(here.file_type().is_file())
    }
}

/// One try at a lock.
enum Try {
    /// Locked by this run.
    Locked,
    /// Held by another run.
    Busy,
    /// The filesystem has no locks (as Cargo judges it: `ENOLCK`, `ENOTSUP`, `ENOSYS`).
    Unsupported,
}

/// Tries once to lock `file` exclusively without waiting (`flock(2)` with `LOCK_EX | LOCK_NB`).
#[cfg(unix)]
fn try_lock(file: &File) -> std::io::Result<Try> {
    use rustix::fs::{flock, FlockOperation};
    use rustix::io::Errno;
    match flock(file, FlockOperation::NonBlockingLockExclusive) {
        Ok(()) => Ok(Try::Locked),
        Err(e) if e == Errno::WOULDBLOCK || e == Errno::AGAIN => Ok(Try::Busy),
        Err(e) if [Errno::NOLCK, Errno::NOTSUP, Errno::OPNOTSUPP, Errno::NOSYS].contains(&e) => {
            Ok(Try::Unsupported)
        }
        Err(e) => Err(e.into()),
    }
}

/// No lock is taken on systems other than Unix.
#[cfg(not(unix))]
fn try_lock(_file: &File) -> std::io::Result<Try> {
    Ok(Try::Unsupported)
}

/// Whether a file name is one of collatio's temporary files: `.collatio-` + 6 letters or
/// digits + `.tmp`.
pub(super) fn is_temporary_name(name: &str) -> bool {
    name.strip_prefix(TEMP_PREFIX)
        .and_then(|rest| rest.strip_suffix(TEMP_SUFFIX))
        .is_some_and(|r| r.len() == TEMP_RANDOM && r.bytes().all(|c| c.is_ascii_alphanumeric()))
}

/// Removes the temporary files (regular files only) that a killed run left in `dir`; the
/// folder's lock must be held.
fn remove_leftovers(dir: &Path) -> Result<Vec<PathBuf>, OutputError> {
    let io = |source| OutputError::Io {
        path: dir.to_path_buf(),
        source,
    };
    let mut removed = Vec::new();
    for entry in std::fs::read_dir(dir).map_err(io)? {
        let entry = entry.map_err(io)?;
        let ours = entry.file_name().to_str().is_some_and(is_temporary_name);
        if ours && entry.file_type().map_err(io)?.is_file() {
            let path = entry.path();
            match std::fs::remove_file(&path) {
                Err(e) if e.kind() != std::io::ErrorKind::NotFound => {
                    return Err(OutputError::Io { path, source: e })
                }
                _ => removed.push(path),
            }
        }
    }
    removed.sort();
    Ok(removed)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn temporary_names() {
        assert!(is_temporary_name(".collatio-a1B2c3.tmp"));
        for name in [
            ".collatio-a1B2c.tmp",
            ".collatio-a1B2c34.tmp",
            ".collatio-a1-2c3.tmp",
            "collatio-a1B2c3.tmp",
            LOCK_FILE,
            "passage-01.mid",
        ] {
            assert!(!is_temporary_name(name), "{name}");
        }
    }

    #[test]
    fn the_lock_file_is_there_while_held_and_removed_after() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        let lock =
            OutputLock::acquire(&[out.clone(), out.join(".")], &LockWait::default()).unwrap();
        assert_eq!(names(&out), [LOCK_FILE]);
        assert!(lock.covers(&out.join("a.json")));
        assert!(!lock.covers(&dir.path().join("a.json")));
        drop(lock);
        assert!(names(&out).is_empty());
    }

    #[test]
    fn a_held_lock_is_waited_for_up_to_the_limit() {
        let dir = tempfile::tempdir().unwrap();
        let first = OutputLock::acquire(&[dir.path().into()], &LockWait::default()).unwrap();
        let wait = LockWait {
            limit: Duration::from_millis(200),
            progress: &NoProgress,
        };
        let new = dir.path().join("new/sub");
        let err = OutputLock::acquire(&[new, dir.path().into()], &wait).unwrap_err();
        assert!(matches!(err, OutputError::Locked { .. }), "{err}");
        assert!(err.to_string().contains(LOCK_FILE), "{err}");
        assert!(!err.is_usage());
        // The folders it made for its outputs are gone again.
        assert_eq!(names(dir.path()), [LOCK_FILE]);
        // Released from another thread while the second waits: the second gets it.
        let release = std::thread::spawn(move || {
            std::thread::sleep(Duration::from_millis(100));
            drop(first);
        });
        let second = OutputLock::acquire(&[dir.path().into()], &LockWait::default()).unwrap();
        release.join().unwrap();
        assert_eq!(names(dir.path()), [LOCK_FILE]);
        drop(second);
        assert!(names(dir.path()).is_empty());
    }

    #[test]
    fn leftover_temporaries_are_removed_and_nothing_else() {
        let dir = tempfile::tempdir().unwrap();
        for name in [".collatio-Ab12Cd.tmp", ".collatio-notes.txt", "keep.tmp"] {
            std::fs::write(dir.path().join(name), b"x").unwrap();
        }
        std::fs::create_dir(dir.path().join(".collatio-Folder.tmp")).unwrap();
        let lock = OutputLock::acquire(&[dir.path().into()], &LockWait::default()).unwrap();
        assert_eq!(lock.leftovers().len(), 1);
        assert!(lock.leftovers()[0].ends_with(".collatio-Ab12Cd.tmp"));
        drop(lock);
        assert_eq!(
            names(dir.path()),
            [".collatio-Folder.tmp", ".collatio-notes.txt", "keep.tmp"]
        );
    }

    #[cfg(unix)]
    #[test]
    fn a_lock_file_that_is_a_link_is_refused_and_kept() {
        let dir = tempfile::tempdir().unwrap();
        let victim = dir.path().join("victim.txt");
        std::fs::write(&victim, b"keep").unwrap();
        let out = dir.path().join("out");
        std::fs::create_dir(&out).unwrap();
        std::os::unix::fs::symlink(&victim, out.join(LOCK_FILE)).unwrap();
        let err =
            OutputLock::acquire(std::slice::from_ref(&out), &LockWait::default()).unwrap_err();
        assert!(err.is_usage(), "{err}");
        assert_eq!(std::fs::read(&victim).unwrap(), b"keep");
        assert!(std::fs::symlink_metadata(out.join(LOCK_FILE))
            .unwrap()
            .file_type()
            .is_symlink());
    }

    #[test]
    fn an_existing_lock_file_with_content_is_neither_changed_nor_removed() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join(LOCK_FILE), b"not ours").unwrap();
        drop(OutputLock::acquire(&[dir.path().into()], &LockWait::default()).unwrap());
        assert_eq!(
            std::fs::read(dir.path().join(LOCK_FILE)).unwrap(),
            b"not ours"
        );
    }
}
