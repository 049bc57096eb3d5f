//! A corpus of prior art: an index of melodies, retrieval by interval-and-rhythm n-grams, and
//! how common a figure is.
//!
//! - [`index`]: the index file, its figures and postings, IDF and candidate retrieval.
//! - [`mapped`]: the index file read in place, sections checked as a query touches them.
//! - [`melody`]: a melody in and out of the index's slim form.
//! - [`build`]: an index from a folder of music files.
//! - [`assess`]: commonness of passages and corpus-weighted similarity for a comparison.
//! - [`validate`]: every field of an index checked on load.
//! - [`source`]: the identity of an index file (path, hash, build settings) for the record.
//!
//! Search (retrieval, then alignment of every candidate) is a pipeline entry point:
//! [`crate::pipeline::search`].
//!
//! Each melody is kept in a slim form (its notes, bars and key) so that a hit can be aligned and
//! reported in its own bars without the original file.

pub mod assess;
pub mod build;
pub mod index;
pub mod melody;
pub mod source;
pub mod validate;

pub use assess::{assess, slice, Commonness, CorpusSummary, SIMILAR_CANDIDATES, SIMILAR_SHARE};
pub use build::{build_from_dir, corpus_files, Built, CORPUS_EXTENSIONS};
pub use index::mapped;
pub use index::mapped::{Corpus, IndexBytes, MappedIndex};
pub use index::{figures, tokens, CorpusIndex, IndexError, MAGIC, NGRAM, VERSION};
pub use melody::{MelodyEntry, StoredBar, StoredNote};
pub use source::IndexSource;
