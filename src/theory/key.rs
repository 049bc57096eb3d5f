//! Keys: names from key signatures, tonics, scale degrees, spelling in a key, and the
//! diatonic shift between two keys. The circle of fifths and the scale-degree names are common
//! practice.

use super::pitch::{PitchClassName, Spelling, Step};
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

/// Tonic pitch class and diatonic step index (C = 0) of a key signature and mode.
pub fn tonic(fifths: i32, mode: KeyMode) -> (i32, i32) {
    let pc = (fifths * 7).rem_euclid(12);
    let step = (fifths * 4).rem_euclid(7);
    match mode {
        KeyMode::Minor => ((pc + 9) % 12, (step + 5) % 7),
        _ => (pc, step),
    }
}

/// The key signature (−6..=6, preferring flats at six) whose tonic is `pc` in `mode`.
pub fn fifths_of(pc: i32, mode: KeyMode) -> i32 {
    let major_pc = match mode {
        KeyMode::Minor => (pc + 3) % 12,
        _ => pc,
    };
    // fifths * 7 ≡ major_pc (mod 12) → fifths ≡ 7 · major_pc (mod 12).
    let f = (major_pc * 7).rem_euclid(12);
    if f > 5 {
        f - 12
    } else {
        f
    }
}

/// Parses a key as the user names it: `C`, `Eb`, `F#`, `Bb minor`, `a minor` (the mode is
/// ignored: each work keeps its own mode). Returns the tonic pitch class.
pub fn parse_tonic(text: &str) -> Option<i32> {
    let word = text.split_whitespace().next()?;
    let mut chars = word.chars();
    let step = Step::parse(&chars.next()?.to_string())?;
    let mut alter = 0;
    for c in chars {
        match c {
            '#' | '♯' => alter += 1,
            'b' | '♭' => alter -= 1,
            '-' => break,
            _ => return None,
        }
    }
    Some((step.natural_semitones() + alter).rem_euclid(12))
}

/// Scale degree of a pitch class against a tonic and mode.
pub fn degree(pc_from_tonic: i32, mode: KeyMode) -> &'static str {
    const MAJOR: [&str; 12] = [
        "1", "b2", "2", "b3", "3", "4", "#4", "5", "b6", "6", "b7", "7",
    ];
    const MINOR: [&str; 12] = [
        "1", "b2", "2", "3", "#3", "4", "#4", "5", "6", "#6", "7", "#7",
    ];
    let i = pc_from_tonic.rem_euclid(12) as usize;
    match mode {
        KeyMode::Minor => MINOR[i],
        _ => MAJOR[i],
    }
}

/// The diatonic and chromatic shift from one key to another, for transposing spellings.
pub fn spelling_shift(
    from: (i32, KeyMode),
    to_fifths: i32,
    to_mode: KeyMode,
    chromatic: i32,
) -> i32 {
    let (_, from_step) = tonic(from.0, from.1);
    let (_, to_step) = tonic(to_fifths, to_mode);
    let base = (to_step - from_step).rem_euclid(7);
    // Pick the octave of diatonic steps closest to the chromatic size.
    let mut best = base;
    let mut best_err = f64::MAX;
    for m in -4..=4 {
        let d = base + 7 * m;
        let err = (f64::from(d) * 12.0 / 7.0 - f64::from(chromatic)).abs();
        if err < best_err {
            best_err = err;
            best = d;
        }
    }
    best
}

/// Spells a MIDI pitch in a key signature when the source gives no spelling: the key's own
/// letters for its scale, sharps in sharp keys and flats in flat keys otherwise.
pub fn spell_in_key(pitch: i32, fifths: i32) -> Spelling {
    let pc = pitch.rem_euclid(12);
    // Scale pitch classes of the major key with this signature, with their letters.
    let (tonic_pc, tonic_step) = tonic(fifths, KeyMode::Major);
    const MAJOR_STEPS: [i32; 7] = [0, 2, 4, 5, 7, 9, 11];
    for (k, &s) in MAJOR_STEPS.iter().enumerate() {
        if (tonic_pc + s) % 12 == pc {
            let step = Step::from_index(tonic_step + k as i32);
            let natural = step.natural_semitones();
            let mut alter = pc - natural;
            if alter > 6 {
                alter -= 12;
            }
            if alter < -6 {
                alter += 12;
            }
            let oct = octave_for(pitch, step, alter);
            return Spelling {
                step,
                alter: f64::from(alter),
                octave: oct,
            };
        }
    }
    let sharps = [
        "C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B",
    ];
    let flats = [
        "C", "Db", "D", "Eb", "E", "F", "Gb", "G", "Ab", "A", "Bb", "B",
    ];
    let name = if fifths >= 0 { sharps } else { flats }[pc as usize];
    let step = Step::parse(&name[..1]).unwrap_or(Step::C);
    let alter = match name.as_bytes().get(1) {
        Some(b'#') => 1,
        Some(b'b') => -1,
        _ => 0,
    };
    Spelling {
        step,
        alter: f64::from(alter),
        octave: octave_for(pitch, step, alter),
    }
}

fn octave_for(pitch: i32, step: Step, alter: i32) -> i32 {
    // pitch = 12 (octave + 1) + natural + alter
    (pitch - step.natural_semitones() - alter).div_euclid(12) - 1
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tonics_and_signatures() {
        assert_eq!(tonic(1, KeyMode::Major), (7, 4)); // G major
        assert_eq!(tonic(-2, KeyMode::Major), (10, 6)); // B-flat major: B
        assert_eq!(tonic(-1, KeyMode::Minor), (2, 1)); // D minor
        assert_eq!(fifths_of(0, KeyMode::Major), 0);
        assert_eq!(fifths_of(10, KeyMode::Major), -2);
        assert_eq!(fifths_of(9, KeyMode::Minor), 0);
        assert_eq!(fifths_of(6, KeyMode::Major), -6);
        assert_eq!(parse_tonic("Eb"), Some(3));
        assert_eq!(parse_tonic("f# minor"), Some(6));
        assert_eq!(parse_tonic("H"), None);
    }

    #[test]
    fn spelling_in_keys() {
        assert_eq!(spell_in_key(70, -2).name(), "Bb4");
        assert_eq!(spell_in_key(66, 1).name(), "F#4");
        assert_eq!(spell_in_key(61, 0).name(), "C#4");
        assert_eq!(spell_in_key(63, -1).name(), "Eb4");
    }
}
