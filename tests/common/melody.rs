//! Melodies written as one-part MusicXML scores and read back through the real reader: the
//! way tests, benchmarks and the evaluation example turn event lists into pieces.
#![allow(dead_code, clippy::expect_used)]

use collatio::ingest::{read_bytes, ReadOptions};
use collatio::timeline::Piece;
use std::path::Path;

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
    read_bytes(
        Path::new("inline.musicxml"),
        melody_xml(events, divisions, beats, beat_type).as_bytes(),
        &ReadOptions::default(),
    )
    .expect("generated score reads")
}
