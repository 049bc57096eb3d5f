//! Helpers shared by the integration tests.
#![allow(dead_code, clippy::unwrap_used, clippy::expect_used)]

use collatio::ingest::{read_bytes, IngestError, ReadOptions};
use collatio::timeline::Piece;
use std::path::{Path, PathBuf};

/// Path of a committed fixture.
pub fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures").join(name)
}

/// Reads a MusicXML document given as text.
pub fn read_xml(text: &str) -> Result<Piece, IngestError> {
    read_bytes(Path::new("inline.musicxml"), text.as_bytes(), &ReadOptions::default())
}

/// Reads a MusicXML document given as text, with options.
pub fn read_xml_with(text: &str, options: &ReadOptions) -> Result<Piece, IngestError> {
    read_bytes(Path::new("inline.musicxml"), text.as_bytes(), options)
}

/// Wraps measures of one part in a minimal partwise score.
pub fn one_part(measures: &str) -> String {
    format!(
        r#"<?xml version="1.0" encoding="UTF-8"?>
<score-partwise version="4.0">
  <part-list><score-part id="P1"><part-name>Melody</part-name></score-part></part-list>
  <part id="P1">{measures}</part>
</score-partwise>"#
    )
}

/// (onset in quarter notes, duration in quarter notes, MIDI pitch) of every note of part 0.
pub fn notes_of(piece: &Piece, part: usize) -> Vec<(f64, f64, f64)> {
    piece.parts[part]
        .notes
        .iter()
        .map(|n| (n.onset.0, n.duration.0, n.pitch.0))
        .collect()
}
