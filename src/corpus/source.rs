//! The identity of an index file as read, for the record of every output that consulted it.

use super::index::mapped::{Corpus, MappedIndex};
use super::index::VERSION;
use serde::Serialize;
use sha2::{Digest, Sha256};

/// An index file as read: where it came from, its hash and how it was built, so that a reader
/// of a report can tell which corpus gave its figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IndexSource {
    /// Path as given by the user.
    pub path: String,
    /// SHA-256, lower-case hex: of the file's bytes for an index read whole
    /// ([`IndexSource::new`]); of the header's fields and the section table (which holds the
    /// SHA-256 of every section) for an index read in place ([`IndexSource::of_mapped`]).
    pub sha256: String,
    /// What `sha256` covers: `file` (the whole file, as `sha256sum` computes it) or
    /// `header and section table` (an index read in place: the table holds the SHA-256 of every
    /// section, so this identifies the whole contents; `collatio corpus verify` checks them).
    pub sha256_covers: &'static str,
    /// Size of the file in bytes.
    pub bytes: u64,
    /// Index format version.
    pub format_version: u32,
    /// Intervals per interval-and-rhythm figure (the index's n-gram length).
    pub figure_length: usize,
    /// Melodies in the corpus (indexed lines: up to `corpus build --melody-candidates` of each
    /// file).
    pub melodies: usize,
}

impl IndexSource {
    /// The identity of `index`, read from the file `path` whose bytes were `file`.
    pub fn new(path: &str, file: &[u8], index: &dyn Corpus) -> IndexSource {
        IndexSource {
            path: path.to_string(),
            sha256: Sha256::digest(file)
                .iter()
                .map(|b| format!("{b:02x}"))
                .collect(),
            sha256_covers: "file",
            bytes: file.len() as u64,
            format_version: VERSION,
            figure_length: index.ngram(),
            melodies: index.melody_count(),
        }
    }

    /// The identity of an index read in place from the file `path`, without reading its
    /// sections: its SHA-256 is [`MappedIndex::identity`].
    pub fn of_mapped(path: &str, index: &MappedIndex) -> IndexSource {
        IndexSource {
            path: path.to_string(),
            sha256: index
                .identity()
                .iter()
                .map(|b| format!("{b:02x}"))
                .collect(),
            sha256_covers: "header and section table",
            bytes: index.file_bytes(),
            format_version: VERSION,
            figure_length: index.ngram(),
            melodies: index.melody_count(),
        }
    }

    /// One line for a text report: path, melodies and the start of the hash.
    pub fn line(&self) -> String {
        format!(
            "{} ({} melodies; index SHA-256 {} of its {})",
            self.path,
            self.melodies,
            &self.sha256[..self.sha256.len().min(16)],
            self.sha256_covers
        )
    }
}
