//! Pitch names in scientific pitch notation (C4 = MIDI 60) and spelled pitches.

use serde::Serialize;

/// A diatonic step letter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub enum Step {
    /// C
    C,
    /// D
    D,
    /// E
    E,
    /// F
    F,
    /// G
    G,
    /// A
    A,
    /// B
    B,
}

impl Step {
    /// All steps from C upwards.
    pub const ALL: [Step; 7] = [
        Step::C,
        Step::D,
        Step::E,
        Step::F,
        Step::G,
        Step::A,
        Step::B,
    ];

    /// Semitones above C of the natural note (C 0, D 2, E 4, F 5, G 7, A 9, B 11).
    pub fn natural_semitones(self) -> i32 {
        match self {
            Step::C => 0,
            Step::D => 2,
            Step::E => 4,
            Step::F => 5,
            Step::G => 7,
            Step::A => 9,
            Step::B => 11,
        }
    }

    /// Position in the diatonic cycle from C (C 0 … B 6).
    pub fn index(self) -> i32 {
        match self {
            Step::C => 0,
            Step::D => 1,
            Step::E => 2,
            Step::F => 3,
            Step::G => 4,
            Step::A => 5,
            Step::B => 6,
        }
    }

    /// The step at a diatonic index, wrapping modulo 7.
    pub fn from_index(index: i32) -> Step {
        Step::ALL[index.rem_euclid(7) as usize]
    }

    /// Parses an upper- or lower-case letter A–G.
    pub fn parse(text: &str) -> Option<Step> {
        match text.trim() {
            "C" | "c" => Some(Step::C),
            "D" | "d" => Some(Step::D),
            "E" | "e" => Some(Step::E),
            "F" | "f" => Some(Step::F),
            "G" | "g" => Some(Step::G),
            "A" | "a" => Some(Step::A),
            "B" | "b" => Some(Step::B),
            _ => None,
        }
    }

    /// The letter.
    pub fn letter(self) -> char {
        match self {
            Step::C => 'C',
            Step::D => 'D',
            Step::E => 'E',
            Step::F => 'F',
            Step::G => 'G',
            Step::A => 'A',
            Step::B => 'B',
        }
    }
}

/// A spelled pitch as a score writes it: step, alteration in semitones and octave
/// (scientific pitch notation: octave 4 starts at middle C).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Spelling {
    /// The letter.
    pub step: Step,
    /// Chromatic alteration in semitones (−1 flat, +1 sharp; MusicXML allows decimals for
    /// microtones).
    pub alter: f64,
    /// Octave number; C4 is middle C.
    pub octave: i32,
}

impl Spelling {
    /// The MIDI number of this spelled pitch: 12 · (octave + 1) + natural + alter.
    pub fn midi(&self) -> f64 {
        f64::from(12 * (self.octave + 1) + self.step.natural_semitones()) + self.alter
    }

    /// Moves the spelling by a diatonic number of steps and a chromatic number of semitones,
    /// as MusicXML `<transpose>` does (`<diatonic>`, `<chromatic>`); the result sounds
    /// `chromatic` semitones away and is spelled `diatonic` letters away.
    pub fn transposed(&self, diatonic: i32, chromatic: f64) -> Spelling {
        let index = self.step.index() + diatonic;
        let octave = self.octave + index.div_euclid(7);
        let step = Step::from_index(index);
        let target = self.midi() + chromatic;
        let natural = f64::from(12 * (octave + 1) + step.natural_semitones());
        Spelling {
            step,
            alter: target - natural,
            octave,
        }
    }

    /// The name in scientific pitch notation with `#`/`b` accidentals, e.g. `F#4`, `Bb3`,
    /// `Cbb5`. Microtonal alterations are shown in cents (`C4+50c`).
    pub fn name(&self) -> String {
        let whole = self.alter.round();
        let mut out = String::new();
        out.push(self.step.letter());
        let count = whole.abs() as usize;
        let sign = if whole > 0.0 { '#' } else { 'b' };
        for _ in 0..count.min(3) {
            out.push(sign);
        }
        out.push_str(&self.octave.to_string());
        let cents = ((self.alter - whole) * 100.0).round() as i64;
        if cents != 0 {
            out.push_str(&format!("{cents:+}c"));
        }
        out
    }
}

/// Default spelling of the twelve pitch classes when no score spelling is known: sharps for
/// the black keys except B♭ and E♭ (common practice in pitch-class tables).
#[derive(Debug, Clone, Copy)]
pub struct PitchClassName;

impl PitchClassName {
    const NAMES: [&'static str; 12] = [
        "C", "C#", "D", "Eb", "E", "F", "F#", "G", "G#", "A", "Bb", "B",
    ];

    /// The name of pitch class `pc` (taken modulo 12).
    pub fn of(pc: i32) -> &'static str {
        Self::NAMES[pc.rem_euclid(12) as usize]
    }
}

/// Name of a MIDI pitch in scientific pitch notation: 60 → `C4`, 69 → `A4`, 61 → `C#4`.
/// Fractional pitches are rounded to the nearest semitone and the deviation shown in cents
/// (`60.23` → `C4+23c`).
pub fn pitch_name(midi: f64) -> String {
    let nearest = midi.round();
    let n = nearest as i64;
    let octave = n.div_euclid(12) - 1;
    let mut out = format!(
        "{}{}",
        PitchClassName::of((n.rem_euclid(12)) as i32),
        octave
    );
    let cents = ((midi - nearest) * 100.0).round() as i64;
    if cents != 0 {
        out.push_str(&format!("{cents:+}c"));
    }
    out
}
