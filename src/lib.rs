//! collatio compares two pieces of music for shared melodic material and writes the evidence
//! up as an exhibit.
//!
//! The pipeline runs one way; each module uses only the ones before it:
//!
//! | stage | module |
//! |---|---|
//! | units and the common timeline | [`units`], [`timeline`] (after [`theory`], which names notes) |
//! | progress of long work, shown by the caller | [`progress`] (beside [`units`]; uses nothing) |
//! | reading MIDI, MusicXML and recordings | [`audio`] (signal analysis), [`ingest`] |
//! | sequences and chroma for comparison | [`features`] |
//! | melodic and harmonic alignment, score following | [`align`] |
//! | passages and their measures | [`compare`] |
//! | chance figures | [`stats`] |
//! | a corpus of prior art | [`corpus`] |
//! | everything found, as plain data | [`findings`] |
//! | whole jobs: compare two works, search a corpus | [`pipeline`] |
//! | text, JSON, PDF exhibit, exports | [`report`] |
//!
//! ```no_run
//! use collatio::findings::CompareSettings;
//! use collatio::ingest::{read_file, ReadOptions};
//! # fn demo() -> Result<(), Box<dyn std::error::Error>> {
//! let a = read_file("a.musicxml".as_ref(), &ReadOptions::default())?;
//! let b = read_file("b.mid".as_ref(), &ReadOptions::default())?;
//! let findings = collatio::pipeline::compare_works(a, b, &CompareSettings::default(), None);
//! print!("{}", collatio::report::compare::render_text(&findings));
//! # Ok(()) }
//! ```

#![deny(unsafe_code)] // one reviewed exception: `corpus::mapped::IndexBytes::map`
#![warn(missing_docs)]
#![cfg_attr(test, allow(clippy::unwrap_used, clippy::expect_used))]

pub mod align;
pub mod audio;
pub mod compare;
pub mod corpus;
pub mod features;
pub mod findings;
pub mod ingest;
pub mod pipeline;
pub mod progress;
pub mod report;
pub mod stats;
pub mod theory;
pub mod timeline;
pub mod units;
