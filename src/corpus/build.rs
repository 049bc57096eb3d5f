//! Building an index from a folder: every music file under it read with the ingest stage (in
//! parallel, results in path order), each melody kept in slim form; unreadable files are
//! skipped and listed.

use super::index::CorpusIndex;
use super::melody::MelodyEntry;

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

/// The outcome of building an index from a folder.
#[derive(Debug)]
pub struct Built {
    /// The index.
    pub index: CorpusIndex,
    /// Files tried.
    pub files: usize,
    /// Files skipped, each with the reason.
    pub skipped: Vec<String>,
}

/// Reads every corpus file under `dir` in parallel (results in path order) and indexes the
/// melodies; unreadable files are skipped and listed. `tick` is called once per file read.
pub fn build_from_dir(
    dir: &std::path::Path,
    options: &crate::ingest::ReadOptions,
    tick: &(dyn Fn() + Sync),
) -> std::io::Result<Built> {
    use rayon::prelude::*;
    let files = corpus_files(dir)?;
    let results: Vec<Result<MelodyEntry, String>> = files
        .par_iter()
        .map(|path| {
            let relative = path
                .strip_prefix(dir)
                .unwrap_or(path)
                .to_string_lossy()
                .replace('\\', "/");
            let outcome = crate::ingest::read_file(path, options)
                .map(|piece| MelodyEntry::from_piece(&piece, relative))
                .map_err(|e| e.to_string());
            tick();
            outcome
        })
        .collect();
    let mut melodies = Vec::new();
    let mut skipped = Vec::new();
    for result in results {
        match result {
            Ok(m) => melodies.push(m),
            Err(e) => skipped.push(e),
        }
    }
    Ok(Built {
        index: CorpusIndex::build(melodies),
        files: files.len(),
        skipped,
    })
}
