//! Helpers shared by the integration tests.
#![allow(dead_code, clippy::unwrap_used, clippy::expect_used)]

use collatio::ingest::{read_bytes, IngestError, ReadOptions};
use collatio::timeline::Piece;
use std::path::{Path, PathBuf};

mod melody;
#[allow(unused_imports)]
pub use melody::{melody_piece, melody_xml, Event};
mod subset;
#[allow(unused_imports)]
pub use subset::{subset, SubsetTune};

/// Path of a committed fixture.
pub fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(name)
}

/// Reads a MusicXML document given as text.
pub fn read_xml(text: &str) -> Result<Piece, IngestError> {
    read_bytes(
        Path::new("inline.musicxml"),
        text.as_bytes(),
        &ReadOptions::default(),
    )
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

/// The melody of a piece as events (rests where notes leave gaps), at its tick resolution.
pub fn events_of(piece: &Piece) -> Vec<Event> {
    let mut out = Vec::new();
    let mut cursor = piece.melody.first().map_or(0, |n| n.onset_ticks);
    for n in &piece.melody {
        if n.onset_ticks > cursor {
            out.push((None, (n.onset_ticks - cursor) as u32));
        }
        out.push((Some(n.pitch.0.round() as i32), n.duration_ticks as u32));
        cursor = n.end_ticks();
    }
    out
}

/// Runs the collatio executable and returns its output.
pub fn run_collatio(args: &[&str]) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_collatio"))
        .args(args)
        .output()
        .expect("the binary runs")
}

/// Runs the collatio executable: (exit code, stdout, stderr).
pub fn run_cli(args: &[&str]) -> (i32, String, String) {
    let out = run_collatio(args);
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}
