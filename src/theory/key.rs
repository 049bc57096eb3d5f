//! Key names from key signatures.

use super::pitch::PitchClassName;
use serde::Serialize;

/// Mode of a key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum KeyMode {
    /// Major.
    Major,
    /// Minor.
    Minor,
    /// Unknown or another mode (key signature only).
    Unknown,
}

/// Name of the key with `fifths` sharps (positive) or flats (negative), e.g. `(2, Major)` →
/// `D major`, `(-3, Minor)` → `C minor`. The circle of fifths is common practice.
pub fn key_name(fifths: i32, mode: KeyMode) -> String {
    const MAJOR: [&str; 15] = [
        "Cb", "Gb", "Db", "Ab", "Eb", "Bb", "F", "C", "G", "D", "A", "E", "B", "F#", "C#",
    ];
    const MINOR: [&str; 15] = [
        "Ab", "Eb", "Bb", "F", "C", "G", "D", "A", "E", "B", "F#", "C#", "G#", "D#", "A#",
    ];
    let index = fifths + 7;
    if (0..15).contains(&index) {
        let i = index as usize;
        match mode {
            KeyMode::Major => format!("{} major", MAJOR[i]),
            KeyMode::Minor => format!("{} minor", MINOR[i]),
            KeyMode::Unknown => format!("{} major / {} minor", MAJOR[i], MINOR[i]),
        }
    } else {
        // Beyond seven accidentals: name the tonic's pitch class.
        let tonic = (fifths * 7).rem_euclid(12);
        let tonic = match mode {
            KeyMode::Minor => tonic + 9,
            _ => tonic,
        };
        format!("{} ({fifths:+} fifths)", PitchClassName::of(tonic))
    }
}
