//! Helpers shared by the integration tests.
#![allow(dead_code, clippy::unwrap_used, clippy::expect_used)]

use collatio::ingest::{read_bytes, IngestError, ReadOptions};
use collatio::timeline::Piece;
use std::path::{Path, PathBuf};

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

/// One event of a melody for [`melody_xml`]: a pitch (MIDI) or a rest, and a length in
/// divisions.
pub type Event = (Option<i32>, u32);

/// Writes a one-part MusicXML score of `events` at `divisions` per quarter note in the meter
/// `beats`/`beat_type`, splitting notes at barlines into tied notes (which the reader merges
/// back). Pitches are spelled with sharps.
pub fn melody_xml(events: &[Event], divisions: u32, beats: u32, beat_type: u32) -> String {
    const STEPS: [(&str, i32); 12] = [
        ("C", 0),
        ("C", 1),
        ("D", 0),
        ("D", 1),
        ("E", 0),
        ("F", 0),
        ("F", 1),
        ("G", 0),
        ("G", 1),
        ("A", 0),
        ("A", 1),
        ("B", 0),
    ];
    let bar = divisions * 4 * beats / beat_type;
    let mut out = String::from("<?xml version=\"1.0\"?><score-partwise version=\"4.0\"><part-list><score-part id=\"P1\"><part-name>Melody</part-name></score-part></part-list><part id=\"P1\">");
    let mut number = 1;
    out.push_str(&format!(
        "<measure number=\"1\"><attributes><divisions>{divisions}</divisions><time><beats>{beats}</beats><beat-type>{beat_type}</beat-type></time></attributes>"
    ));
    let mut pos = 0u32;
    for &(pitch, length) in events {
        let mut remaining = length;
        let mut first = true;
        while remaining > 0 {
            let room = bar - pos % bar;
            let piece = room.min(remaining);
            let mut xml = String::from("<note>");
            match pitch {
                Some(p) => {
                    let (step, alter) = STEPS[p.rem_euclid(12) as usize];
                    xml.push_str(&format!("<pitch><step>{step}</step>"));
                    if alter != 0 {
                        xml.push_str(&format!("<alter>{alter}</alter>"));
                    }
                    xml.push_str(&format!(
                        "<octave>{}</octave></pitch><duration>{piece}</duration>",
                        p.div_euclid(12) - 1
                    ));
                    if !first {
                        xml.push_str("<tie type=\"stop\"/>");
                    }
                    if piece < remaining {
                        xml.push_str("<tie type=\"start\"/>");
                    }
                }
                None => xml.push_str(&format!("<rest/><duration>{piece}</duration>")),
            }
            xml.push_str("<voice>1</voice></note>");
            out.push_str(&xml);
            pos += piece;
            remaining -= piece;
            first = false;
            if pos % bar == 0 {
                number += 1;
                out.push_str(&format!("</measure><measure number=\"{number}\">"));
            }
        }
    }
    if pos % bar != 0 {
        out.push_str(&format!(
            "<note><rest/><duration>{}</duration><voice>1</voice></note>",
            bar - pos % bar
        ));
    }
    out.push_str("</measure></part></score-partwise>");
    out
}

/// Reads a melody written by [`melody_xml`].
pub fn melody_piece(events: &[Event], divisions: u32, beats: u32, beat_type: u32) -> Piece {
    read_xml(&melody_xml(events, divisions, beats, beat_type)).expect("generated score reads")
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
