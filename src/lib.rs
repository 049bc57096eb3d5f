//! collatio compares two pieces of music for shared melodic material and writes the evidence
//! up as an exhibit.
//!
//! The pipeline runs one way (see `docs/` and the design notes):
//! file → [`ingest`] → [`timeline::Piece`] → features → alignment → statistics → report.
//! This crate currently provides the first stages: reading MIDI and MusicXML into the common
//! timeline, and the [`theory`] tables every later stage names notes and intervals with.

#![forbid(unsafe_code)]
#![warn(missing_docs)]
#![cfg_attr(test, allow(clippy::unwrap_used, clippy::expect_used))]

pub mod align;
pub mod audio;
pub mod compare;
pub mod features;
pub mod ingest;
pub mod report;
pub mod stats;
pub mod theory;
pub mod timeline;
pub mod units;
