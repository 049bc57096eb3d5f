//! The exhibit: the PDF report, the JSON record written to a file, and the passage exports,
//! as one library call.
//!
//! In: the [`Findings`] of a comparison, [`ExhibitOptions`] (paper, labels, case label, date,
//! common key) and [`Outputs`] (which files to write). Out: the files, written atomically
//! under the lock of their folders ([`crate::report::output`]), and the list of paths written.
//! No output may replace an input file. Every file carries the document digest
//! ([`Exhibit::digest`]): files of two runs are told apart by it.
//!
//! - [`options`]: options, outputs and errors; [`dates`]: the date printed.
//! - [`prepared`]: the exhibit prepared once (labels, notation of every passage, digest).
//! - [`context`] with [`works`], [`passages`], [`params`] and [`evidence`]: the templates'
//!   view, every figure as the text it is printed as.
//!
//! Determinism: identical inputs and options give byte-identical files. The date printed is
//! the one given, else the one `SOURCE_DATE_EPOCH` names, else none: never the clock. The PDF's
//! document identifier is derived from the inputs' SHA-256 hashes and the options.
//!
//! ```no_run
//! use collatio::findings::CompareSettings;
//! use collatio::report::exhibit::{write_exhibit, ExhibitOptions, Outputs};
//! # fn demo(a: collatio::timeline::Piece, b: collatio::timeline::Piece) -> Result<(), Box<dyn std::error::Error>> {
//! let findings = collatio::pipeline::compare_works(a, b, &CompareSettings::default(), None);
//! let outputs = Outputs { pdf: Some("exhibit.pdf".into()), ..Outputs::default() };
//! write_exhibit(&findings, &ExhibitOptions::default(), &outputs)?;
//! # Ok(()) }
//! ```

pub mod context;
pub mod dates;
pub mod evidence;
pub mod options;
pub mod params;
pub mod passages;
pub mod prepared;
pub mod works;

pub use context::{context, ExhibitContext};
pub use dates::resolve_date;
pub use options::{default_label, ExhibitError, ExhibitOptions, Outputs};
pub use prepared::Exhibit;

use crate::findings::Findings;
use crate::report::output::{
    check_outputs, folder_of, write_locked, LockWait, OutputError, OutputLock,
};
use std::path::{Path, PathBuf};

/// What [`write_exhibit`] wrote.
#[derive(Debug, Clone, Default)]
pub struct Written {
    /// Paths written, in order.
    pub files: Vec<PathBuf>,
    /// Pages of the PDF, when one was written.
    pub pdf_pages: usize,
    /// Passage exports of an earlier run removed from the export folder.
    pub removed: Vec<PathBuf>,
    /// Temporary files of killed runs removed from the output folders.
    pub leftovers: Vec<PathBuf>,
    /// Output folders written without a lock, their filesystem having none.
    pub unlocked: Vec<PathBuf>,
}

/// Removes the passage exports (`passage-NN.musicxml`, `passage-NN.mid`, regular files only)
/// in `dir` that this run did not write, so that the folder holds one run's passages.
fn remove_stale_exports(dir: &Path, written: &[PathBuf]) -> Result<Vec<PathBuf>, OutputError> {
    let io = |source| OutputError::Io {
        path: dir.to_path_buf(),
        source,
    };
    let ours = |name: &str| {
        let stem = name
            .strip_suffix(".musicxml")
            .or_else(|| name.strip_suffix(".mid"));
        stem.and_then(|s| s.strip_prefix("passage-"))
            .is_some_and(|n| !n.is_empty() && n.bytes().all(|c| c.is_ascii_digit()))
    };
    let mut removed = Vec::new();
    for entry in std::fs::read_dir(dir).map_err(io)? {
        let entry = entry.map_err(io)?;
        let path = entry.path();
        let is_file = entry.file_type().map_err(io)?.is_file();
        let name = entry.file_name();
        if is_file
            && name.to_str().is_some_and(ours)
            && !written
                .iter()
                .any(|w| w.file_name() == Some(name.as_os_str()))
        {
            std::fs::remove_file(&path).map_err(io)?;
            removed.push(path);
        }
    }
    removed.sort();
    Ok(removed)
}

/// Writes the requested outputs, waiting at most [`crate::report::output::DEFAULT_WAIT`] for
/// another run writing into the same folders. The JSON is the record `compare --format json`
/// prints (with the same options).
pub fn write_exhibit(
    findings: &Findings,
    options: &ExhibitOptions,
    outputs: &Outputs,
) -> Result<Written, ExhibitError> {
    write_prepared(
        &Exhibit::new(findings, options)?,
        outputs,
        &LockWait::default(),
    )
}

/// Writes the requested outputs of a prepared exhibit. Every file is rendered first; then the
/// folders are locked against other collatio runs (waiting as `wait` says), the files are put in
/// place all together, and the export folder's passages of an earlier run are removed, all
/// under the lock, so that two runs writing the same paths leave one run's files.
pub fn write_prepared(
    exhibit: &Exhibit<'_>,
    outputs: &Outputs,
    wait: &LockWait<'_>,
) -> Result<Written, ExhibitError> {
    let findings = exhibit.findings;
    let (a, b) = (&findings.a, &findings.b);
    // The files as read, not the paths recorded (which may be file names only).
    let inputs = [a.provenance.opened.as_path(), b.provenance.opened.as_path()];
    let export_files: Vec<(PathBuf, PathBuf)> = match &outputs.export_dir {
        Some(dir) => findings
            .passages
            .iter()
            .map(|f| {
                let stem = crate::report::export::file_stem(f.passage.rank);
                (
                    dir.join(stem.clone() + ".musicxml"),
                    dir.join(stem + ".mid"),
                )
            })
            .collect(),
        None => Vec::new(),
    };
    let mut all: Vec<PathBuf> = outputs.pdf.iter().chain(&outputs.json).cloned().collect();
    for (x, m) in &export_files {
        all.push(x.clone());
        all.push(m.clone());
    }
    check_outputs(&inputs, &all)?;
    // Everything is rendered first and then written all together, so that a failure leaves
    // no output of this run beside those of an earlier one.
    let mut written = Written::default();
    let mut files: Vec<(PathBuf, Vec<u8>)> = Vec::new();
    if let Some(path) = &outputs.json {
        let record = exhibit.record();
        let mut json = serde_json::to_string_pretty(&record)?;
        json.push('\n');
        files.push((path.clone(), json.into_bytes()));
    }
    for (((xml_path, mid_path), view), p) in export_files
        .iter()
        .zip(&exhibit.views)
        .zip(&findings.passages)
    {
        let p = &p.passage;
        let xml = crate::report::export::musicxml(exhibit, p, view);
        files.push((xml_path.clone(), xml.into_bytes()));
        files.push((
            mid_path.clone(),
            crate::report::export::midi(exhibit, p, view)?,
        ));
    }
    if let Some(path) = &outputs.pdf {
        let (bytes, pages) = crate::report::pdf::render(exhibit)?;
        files.push((path.clone(), bytes));
        written.pdf_pages = pages;
    }
    // The export folder is locked (and created) even when no passage is written into it: its
    // earlier passages are removed under the lock.
    let folders: Vec<PathBuf> = files
        .iter()
        .map(|(path, _)| folder_of(path))
        .chain(outputs.export_dir.clone())
        .collect();
    let lock = OutputLock::acquire(&folders, wait)?;
    write_locked(&lock, &files)?;
    written.files = files.into_iter().map(|(path, _)| path).collect();
    if let Some(dir) = &outputs.export_dir {
        written.removed = remove_stale_exports(dir, &written.files)?;
    }
    written.leftovers = lock.leftovers().to_vec();
    written.unlocked = lock.unlocked().to_vec();
    drop(lock);
    Ok(written)
}
