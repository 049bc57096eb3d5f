//! Interval names and sizes, simple and compound.

/// Interval quality.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quality {
    /// Perfect (unison, fourth, fifth, octave).
    Perfect,
    /// Major (second, third, sixth, seventh).
    Major,
    /// Minor.
    Minor,
    /// Augmented (one semitone more than perfect or major).
    Augmented,
    /// Diminished (one semitone less than perfect or minor).
    Diminished,
}

/// A diatonic interval: quality and number (1 = unison, 8 = octave, 9 = ninth, …).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Interval {
    /// Quality.
    pub quality: Quality,
    /// Diatonic number, 1-based (unison 1, second 2, …, octave 8, ninth 9, …).
    pub number: u32,
}

impl Interval {
    /// Whether the simple form of this number takes perfect quality (1, 4, 5).
    fn is_perfect_class(number: u32) -> bool {
        matches!((number - 1) % 7, 0 | 3 | 4)
    }

    /// Builds an interval, rejecting impossible combinations (a major fifth, a perfect third).
    pub fn new(quality: Quality, number: u32) -> Option<Interval> {
        if number == 0 {
            return None;
        }
        let perfect_class = Self::is_perfect_class(number);
        let ok = match quality {
            Quality::Perfect => perfect_class,
            Quality::Major | Quality::Minor => !perfect_class,
            Quality::Augmented => true,
            Quality::Diminished => number != 1,
        };
        ok.then_some(Interval { quality, number })
    }

    /// Parses the usual abbreviations: `P5`, `M3`, `m6`, `A4`, `d5`, `P8`, `M9`, `P15`.
    pub fn parse(text: &str) -> Option<Interval> {
        let text = text.trim();
        let mut chars = text.chars();
        let quality = match chars.next()? {
            'P' => Quality::Perfect,
            'M' => Quality::Major,
            'm' => Quality::Minor,
            'A' => Quality::Augmented,
            'd' => Quality::Diminished,
            _ => return None,
        };
        let number: u32 = chars.as_str().parse().ok()?;
        Interval::new(quality, number)
    }

    /// Size in semitones: the major or perfect size of the simple interval, plus 12 per
    /// octave of compounding, adjusted by quality.
    pub fn semitones(&self) -> i32 {
        const MAJOR_OR_PERFECT: [i32; 7] = [0, 2, 4, 5, 7, 9, 11];
        let steps = self.number - 1;
        let octaves = (steps / 7) as i32;
        let simple = (steps % 7) as usize;
        let base = MAJOR_OR_PERFECT[simple] + 12 * octaves;
        let perfect_class = Self::is_perfect_class(self.number);
        base + match (self.quality, perfect_class) {
            (Quality::Perfect, _) | (Quality::Major, _) => 0,
            (Quality::Minor, _) => -1,
            (Quality::Augmented, _) => 1,
            (Quality::Diminished, true) => -1,
            (Quality::Diminished, false) => -2,
        }
    }

    /// The abbreviation, e.g. `m3`.
    pub fn abbreviation(&self) -> String {
        let q = match self.quality {
            Quality::Perfect => 'P',
            Quality::Major => 'M',
            Quality::Minor => 'm',
            Quality::Augmented => 'A',
            Quality::Diminished => 'd',
        };
        format!("{q}{}", self.number)
    }

    /// The plainest name for a size in semitones (≥ 0): P1 m2 M2 m3 M3 P4 A4 P5 m6 M6 m7 M7,
    /// compounding upwards by octaves (13 → m9). The tritone is named A4.
    pub fn from_semitones(semitones: u32) -> Interval {
        const SIMPLE: [(Quality, u32); 12] = [
            (Quality::Perfect, 1),
            (Quality::Minor, 2),
            (Quality::Major, 2),
            (Quality::Minor, 3),
            (Quality::Major, 3),
            (Quality::Perfect, 4),
            (Quality::Augmented, 4),
            (Quality::Perfect, 5),
            (Quality::Minor, 6),
            (Quality::Major, 6),
            (Quality::Minor, 7),
            (Quality::Major, 7),
        ];
        let octaves = semitones / 12;
        let (quality, number) = SIMPLE[(semitones % 12) as usize];
        let number = if octaves > 0 && number == 1 {
            8 + 7 * (octaves - 1)
        } else {
            number + 7 * octaves
        };
        Interval { quality, number }
    }
}

/// Names a shift of pitch classes, which has no octave: `3` is both up a minor third and down a
/// major sixth. When a melodic transposition `hint` (semitones, octaves included) moves the
/// pitch classes by the same amount, its direction is used, so that one report names one shift
/// one way; otherwise both readings are given.
///
/// `3, None` → `up a minor third or down a major sixth (pitch classes)`;
/// `3, Some(-9)` → `down a major sixth (pitch classes)`.
pub fn describe_pitch_class_shift(semitones: i32, hint: Option<i32>) -> String {
    let pc = semitones.rem_euclid(12);
    if pc == 0 {
        return "at the same pitch classes".into();
    }
    if let Some(h) = hint.filter(|h| h.rem_euclid(12) == pc) {
        // Within an octave, in the hint's direction.
        let within = h.signum() * (h.abs() % 12);
        return format!("{} (pitch classes)", describe_transposition(within));
    }
    if pc == 6 {
        return "up or down a tritone (pitch classes)".into();
    }
    // The nearer reading first.
    let (near, far) = if pc < 6 { (pc, pc - 12) } else { (pc - 12, pc) };
    format!(
        "{} or {} (pitch classes)",
        describe_transposition(near),
        describe_transposition(far)
    )
}

/// Names a transposition: `0` → `same pitch`, `−3` → `down a minor third`.
pub fn describe_transposition(semitones: i32) -> String {
    if semitones == 0 {
        return "at the same pitch".into();
    }
    let interval = Interval::from_semitones(semitones.unsigned_abs());
    let name = match (interval.quality, interval.number) {
        (_, 1) => "unison".to_string(),
        (q, n) => {
            let quality = match q {
                Quality::Perfect => "perfect",
                Quality::Major => "major",
                Quality::Minor => "minor",
                Quality::Augmented => "augmented",
                Quality::Diminished => "diminished",
            };
            let number = match n {
                2 => "second".to_string(),
                3 => "third".into(),
                4 => "fourth".into(),
                5 => "fifth".into(),
                6 => "sixth".into(),
                7 => "seventh".into(),
                8 => "octave".into(),
                n => format!("{}th", n),
            };
            if n == 8 {
                "an octave".to_string()
            } else {
                let article = if quality.starts_with(['a', 'e', 'i', 'o', 'u']) {
                    "an"
                } else {
                    "a"
                };
                format!("{article} {quality} {number}")
            }
        }
    };
    let direction = if semitones > 0 { "up" } else { "down" };
    format!("{direction} {name}")
}

#[cfg(test)]
mod tests {
    use super::*;

    // Interval sizes and inversion (a minor third inverts to a major sixth; an interval and its
    // inversion add up to an octave, 12 semitones): common practice of music theory.
    #[test]
    fn pitch_class_shift_names_both_readings_or_the_melodic_one() {
        assert_eq!(
            describe_pitch_class_shift(3, None),
            "up a minor third or down a major sixth (pitch classes)"
        );
        assert_eq!(
            describe_pitch_class_shift(3, Some(-9)),
            "down a major sixth (pitch classes)"
        );
        // Octaves of the melodic shift do not matter to pitch classes.
        assert_eq!(
            describe_pitch_class_shift(-9, Some(-21)),
            "down a major sixth (pitch classes)"
        );
        // A hint that moves the pitch classes otherwise is not used.
        assert_eq!(
            describe_pitch_class_shift(-5, Some(2)),
            "down a perfect fourth or up a perfect fifth (pitch classes)"
        );
        assert_eq!(
            describe_pitch_class_shift(12, None),
            "at the same pitch classes"
        );
        assert_eq!(
            describe_pitch_class_shift(6, None),
            "up or down a tritone (pitch classes)"
        );
    }
}
