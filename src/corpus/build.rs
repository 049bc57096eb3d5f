//! Building an index from a folder: every music file under it read with the ingest stage (a
//! few at a time, results in path order), each melody kept in slim form; unreadable files are
//! skipped and listed.

use super::index::CorpusIndex;
use super::melody::MelodyEntry;
use crate::progress::Progress;

/// File extensions read when building a corpus (the content decides the format; this only
/// chooses which files to try).
pub const CORPUS_EXTENSIONS: [&str; 16] = [
    "mid", "midi", "kar", "rmi", "musicxml", "xml", "mxl", "wav", "wave", "flac", "mp3", "ogg",
    "oga", "m4a", "aif", "aiff",
];

/// Every file under `dir` (recursively, hidden entries and symbolic links to folders skipped)
/// with a corpus extension, in sorted order.
pub fn corpus_files(dir: &std::path::Path) -> std::io::Result<Vec<std::path::PathBuf>> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(folder) = stack.pop() {
        for entry in std::fs::read_dir(&folder)? {
            let entry = entry?;
            let path = entry.path();
            let hidden = path
                .file_name()
                .is_some_and(|n| n.to_string_lossy().starts_with('.'));
            if hidden {
                continue;
            }
            // Folders are descended only when they are folders themselves: a symbolic link to
            // a folder could lead back up the tree (a loop, or two links doubling the tree at
            // every level). Links to files are read like files.
            if entry.file_type()?.is_dir() {
                stack.push(path);
            } else if path.is_dir() {
                continue;
            } else if path
                .extension()
                .and_then(|e| e.to_str())
                .is_some_and(|e| CORPUS_EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
            {
                out.push(path);
            }
        }
    }
    out.sort();
    Ok(out)
}

/// What reading one corpus file gave: its indexed lines, or why it was skipped.
type FileOutcome = Result<Vec<MelodyEntry>, String>;

/// The outcome of building an index from a folder.
#[derive(Debug)]
pub struct Built {
    /// The index.
    pub index: CorpusIndex,
    /// Files tried.
    pub files: usize,
    /// Files read (each gave one or more melodies).
    pub read: usize,
    /// Files skipped, each with the reason.
    pub skipped: Vec<String>,
}

/// Files read at once by [`build_from_dir`], at most (fewer on a machine with fewer cores).
/// Each file in flight holds its bytes and its parsed form until its melody is kept in slim
/// form, so the memory of a build is bounded by the files in flight, not by the threads.
pub const MAX_FILES_IN_FLIGHT: usize = 4;

/// A file at least this large on disk is read alone, with no other file in flight: the
/// largest files a reader accepts take hundreds of MiB while they are read.
pub const LARGE_FILE_BYTES: u64 = 8 << 20;

/// Stack of the reading threads: the readers refuse nesting deeper than 256 levels before
/// parsing, and this leaves them ample room.
const READER_STACK_BYTES: usize = 16 << 20;

/// A counting gate: files enter with a weight (1, or the whole capacity for a large file) and
/// wait while the weights in flight would exceed the capacity.
struct Gate {
    held: std::sync::Mutex<usize>,
    freed: std::sync::Condvar,
    capacity: usize,
}

/// A file's place in the [`Gate`], given back when dropped.
struct Pass<'a> {
    gate: &'a Gate,
    weight: usize,
}

impl Gate {
    fn new(capacity: usize) -> Gate {
        Gate {
            held: std::sync::Mutex::new(0),
            freed: std::sync::Condvar::new(),
            capacity: capacity.max(1),
        }
    }

    /// Waits until `weight` (at most the capacity) fits, and takes it.
    fn enter(&self, weight: usize) -> Pass<'_> {
        let weight = weight.clamp(1, self.capacity);
        let mut held = self.held.lock().unwrap_or_else(|e| e.into_inner());
        while *held + weight > self.capacity {
            held = self.freed.wait(held).unwrap_or_else(|e| e.into_inner());
        }
        *held += weight;
        Pass { gate: self, weight }
    }
}

impl Drop for Pass<'_> {
    fn drop(&mut self) {
        let mut held = self.gate.held.lock().unwrap_or_else(|e| e.into_inner());
        *held = held.saturating_sub(self.weight);
        self.gate.freed.notify_all();
    }
}

/// Whether a file is read alone: [`LARGE_FILE_BYTES`] or more on disk, or a zip container
/// (a compressed MusicXML file) whose entries declare that much once inflated, or whose sizes
/// are not declared. XML compresses a hundredfold and more, so the size on disk of an `.mxl`
/// says little. An archive that declares less than it inflates to is still held to the
/// readers' limit on decompressed bytes, like any file in flight.
fn is_large(path: &std::path::Path) -> bool {
    use std::io::Read;
    // Only regular files are opened here: opening a named pipe would block (the reader
    // refuses anything else, without opening it).
    let Ok(meta) = std::fs::metadata(path) else {
        return false;
    };
    if !meta.is_file() {
        return false;
    }
    if meta.len() >= LARGE_FILE_BYTES {
        return true;
    }
    let Ok(mut file) = std::fs::File::open(path) else {
        return false;
    };
    let mut magic = [0u8; 4];
    if file.read_exact(&mut magic).is_err() || magic != *b"PK\x03\x04" {
        return false;
    }
    match zip::ZipArchive::new(file) {
        Ok(archive) => archive
            .decompressed_size()
            .is_none_or(|n| n >= u128::from(LARGE_FILE_BYTES)),
        // Unreadable: the reader will say why, quickly.
        Err(_) => false,
    }
}

/// Reads every corpus file under `dir` (results in path order) and indexes the first
/// `lines_per_file` candidate melody lines of each ([`MelodyEntry::lines_of`]: most
/// melody-like first; one line when `options` selects one); unreadable files are skipped and
/// listed. At most [`MAX_FILES_IN_FLIGHT`] files are read at
/// once, and a large file ([`LARGE_FILE_BYTES`], on disk or inflated) alone, so that the memory of a build does not
/// grow with the number of cores. Reports the step `"reading files"` to `progress`, one unit
/// per file.
pub fn build_from_dir(
    dir: &std::path::Path,
    options: &crate::ingest::ReadOptions,
    lines_per_file: usize,
    progress: &dyn Progress,
) -> std::io::Result<Built> {
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::sync::Mutex;
    let files = corpus_files(dir)?;
    progress.step("reading files", Some(files.len() as u64));
    let workers = std::thread::available_parallelism()
        .map_or(1, |n| n.get())
        .clamp(1, MAX_FILES_IN_FLIGHT)
        .min(files.len().max(1));
    let gate = Gate::new(workers);
    let next = AtomicUsize::new(0);
    let slots: Vec<Mutex<Option<FileOutcome>>> = files.iter().map(|_| Mutex::new(None)).collect();
    let read_one = |path: &std::path::PathBuf| {
        let relative = path
            .strip_prefix(dir)
            .unwrap_or(path)
            .to_string_lossy()
            .replace('\\', "/");
        let _pass = gate.enter(if is_large(path) { workers } else { 1 });
        crate::ingest::read_file(path, options)
            .map(|piece| MelodyEntry::lines_of(&piece, &relative, lines_per_file))
            .map_err(|e| e.to_string())
    };
    let work = || loop {
        let k = next.fetch_add(1, Ordering::Relaxed);
        let Some(path) = files.get(k) else {
            break;
        };
        let outcome = read_one(path);
        if let Some(slot) = slots.get(k) {
            *slot.lock().unwrap_or_else(|e| e.into_inner()) = Some(outcome);
        }
        progress.advance(1);
    };
    std::thread::scope(|scope| -> std::io::Result<()> {
        let handles = (0..workers)
            .map(|_| {
                std::thread::Builder::new()
                    .name("corpus-reader".into())
                    .stack_size(READER_STACK_BYTES)
                    .spawn_scoped(scope, work)
            })
            .collect::<std::io::Result<Vec<_>>>()?;
        for handle in handles {
            handle
                .join()
                .map_err(|_| std::io::Error::other("a reading thread failed"))?;
        }
        Ok(())
    })?;
    let mut melodies = Vec::new();
    let mut skipped = Vec::new();
    let mut read = 0;
    for (slot, path) in slots.into_iter().zip(&files) {
        match slot.into_inner().unwrap_or_else(|e| e.into_inner()) {
            Some(Ok(lines)) => {
                read += 1;
                melodies.extend(lines);
            }
            Some(Err(e)) => skipped.push(e),
            None => skipped.push(format!("{}: not read", path.display())),
        }
    }
    Ok(Built {
        index: CorpusIndex::build(melodies),
        files: files.len(),
        read,
        skipped,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_gate_never_holds_more_than_its_capacity() {
        use std::sync::atomic::{AtomicUsize, Ordering};
        let gate = Gate::new(3);
        let inside = AtomicUsize::new(0);
        let most = AtomicUsize::new(0);
        std::thread::scope(|s| {
            for k in 0..8 {
                let (gate, inside, most) = (&gate, &inside, &most);
                s.spawn(move || {
                    let weight = if k % 4 == 0 { 3 } else { 1 };
                    let _pass = gate.enter(weight);
                    let now = inside.fetch_add(weight, Ordering::SeqCst) + weight;
                    most.fetch_max(now, Ordering::SeqCst);
                    std::thread::sleep(std::time::Duration::from_millis(5));
                    inside.fetch_sub(weight, Ordering::SeqCst);
                });
            }
        });
        assert!(most.load(Ordering::SeqCst) <= 3);
        assert_eq!(*gate.held.lock().unwrap(), 0);
    }

    #[test]
    fn large_files_are_judged_by_what_they_inflate_to() {
        use std::io::Write;
        let dir = tempfile::tempdir().unwrap();
        let small = dir.path().join("small.musicxml");
        std::fs::write(&small, "<score-partwise/>").unwrap();
        assert!(!is_large(&small));
        // A few KiB on disk that declare 9 MiB once inflated.
        let packed = dir.path().join("packed.mxl");
        let mut zip = zip::ZipWriter::new(std::fs::File::create(&packed).unwrap());
        let deflated = zip::write::SimpleFileOptions::default()
            .compression_method(zip::CompressionMethod::Deflated);
        zip.start_file("score.musicxml", deflated).unwrap();
        zip.write_all(&vec![b' '; 9 << 20]).unwrap();
        zip.finish().unwrap();
        assert!(std::fs::metadata(&packed).unwrap().len() < 64 << 10);
        assert!(is_large(&packed));
        // Not a regular file: judged without being opened (a named pipe would block).
        assert!(!is_large(dir.path()));
    }
}
