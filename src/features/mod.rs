//! Sequences derived from a melody for alignment: pitch, pitch class, interval, contour,
//! inter-onset ratio on a log scale (tempo-free) and metric weight.
//!
//! In: a [`Piece`] with its selected melody. Out: a [`Sequence`], one [`SeqNote`] per melody
//! note, in time order. Every feature except pitch is invariant to transposition, and every
//! feature except pitch and pitch class is computed from ratios of durations, so scaling all
//! durations by a constant (a tempo change, doubled note values) leaves them unchanged.
//!
//! The harmony side: [`chroma`] gives any piece a chromagram (measured from a recording or
//! derived from its notes), and [`chroma_features`] prepares chroma frames for comparison
//! (averaged, compressed, unit length) and finds the optimal transposition index.
//!
//! ```
//! use collatio::features::{MetricLevel, metric_level};
//! // In 4/4 the third beat (two quarter notes into the bar) is a strong beat.
//! assert_eq!(metric_level(2.0, 4.0, (4, 4)), MetricLevel::Strong);
//! ```

pub mod chroma;
pub mod chroma_features;

use crate::timeline::Piece;
use serde::Serialize;

/// Metric weight of a note's onset, from the bar grid (common practice of metric hierarchy:
/// the downbeat is strongest, then the middle of an even bar, then other beats, then
/// subdivisions).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MetricLevel {
    /// First beat of the bar.
    Downbeat = 0,
    /// The half-bar beat in bars with an even number of beats (beat 3 of 4/4, beat 4 of 6/8
    /// counted in eighths).
    Strong = 1,
    /// Any other beat.
    Weak = 2,
    /// Between beats.
    Offbeat = 3,
}

/// Metric level of a position `offset` quarter notes into a bar `bar_length` quarter notes
/// long under `signature`. Compound meters (6/8, 9/8, 12/8, and the like) beat in dotted
/// quarters; others in the denominator's unit.
pub fn metric_level(offset: f64, bar_length: f64, signature: (u32, u32)) -> MetricLevel {
    const EPS: f64 = 1e-6;
    let (numerator, denominator) = (signature.0.max(1), signature.1.max(1));
    let unit = 4.0 / f64::from(denominator);
    let compound = denominator >= 8 && numerator > 3 && numerator % 3 == 0;
    let (beat, beats) = if compound {
        (3.0 * unit, numerator / 3)
    } else {
        (unit, numerator)
    };
    if offset.abs() < EPS {
        return MetricLevel::Downbeat;
    }
    let on_beat = ((offset / beat) - (offset / beat).round()).abs() * beat < EPS;
    if !on_beat {
        return MetricLevel::Offbeat;
    }
    let nominal = beat * f64::from(beats);
    let half = nominal.min(bar_length.max(beat)) / 2.0;
    if beats % 2 == 0 && beats >= 4 && (offset - half).abs() < EPS {
        MetricLevel::Strong
    } else {
        MetricLevel::Weak
    }
}

/// The size class of an interval, signed by its direction: the diatonic size a semitone count
/// most often spells, with the minor and major (or perfect and augmented) forms of one size
/// merged — unison 0, second 1 (1–2 semitones), third 2 (3–4), fourth 3 (5–6), fifth 4 (7),
/// sixth 5 (8–9), seventh 6 (10–11), octave 7 (12); larger intervals count as an octave. A
/// tune and its variant in another mode (A major against A minor, a raised or lowered seventh)
/// keep the same classes where their semitone intervals differ by one: interval sizes as
/// common practice names them.
pub fn interval_size_class(semitones: i32) -> i8 {
    const CLASS: [i8; 13] = [0, 1, 1, 2, 2, 3, 3, 4, 5, 5, 6, 6, 7];
    let size = semitones.unsigned_abs().min(12) as usize;
    semitones.signum() as i8 * CLASS[size]
}

/// One note of a sequence.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SeqNote {
    /// MIDI pitch rounded to the nearest semitone.
    pub pitch: i32,
    /// Pitch class 0–11 (C = 0).
    pub pitch_class: u8,
    /// Semitones from the previous note (`None` for the first).
    pub interval: Option<i32>,
    /// Inter-onset interval in quarter notes: to the next note's onset, or the note's own
    /// duration for the last note.
    pub ioi: f64,
    /// log2 of this note's inter-onset interval over the previous note's (`None` for the
    /// first): tempo-free rhythm.
    pub log_ioi_ratio: Option<f64>,
    /// Metric weight of the onset.
    pub metric: MetricLevel,
}

impl SeqNote {
    /// Contour of the step into this note: −1 down, 0 repeat, +1 up (Parsons 1975 d/r/u).
    pub fn contour(&self) -> i8 {
        self.interval.map_or(0, |i| i.signum() as i8)
    }
}

/// The sequence derived from a piece's melody, parallel to `Piece::melody`.
#[derive(Debug, Clone, Serialize)]
pub struct Sequence {
    /// One entry per melody note.
    pub notes: Vec<SeqNote>,
}

impl Sequence {
    /// Derives the sequence from a piece's selected melody.
    pub fn from_piece(piece: &Piece) -> Sequence {
        let melody = &piece.melody;
        let mut notes = Vec::with_capacity(melody.len());
        let mut previous_ioi: Option<f64> = None;
        for (i, note) in melody.iter().enumerate() {
            let pitch = note.pitch.0.round() as i32;
            let ioi = match melody.get(i + 1) {
                Some(next) => next.onset.0 - note.onset.0,
                None => note.duration.0,
            }
            .max(1e-6);
            let interval = i
                .checked_sub(1)
                .and_then(|p| melody.get(p))
                .map(|p| pitch - p.pitch.0.round() as i32);
            let bar = piece.bars.get(note.bar);
            let (offset, length, signature) = match bar {
                Some(b) => {
                    let length = piece.tempo.beats_at(b.length_ticks).0;
                    let nominal =
                        f64::from(b.time_signature.0) * 4.0 / f64::from(b.time_signature.1.max(1));
                    // A pickup's notes sit at the end of a full bar.
                    let shift = if b.pickup && length < nominal {
                        nominal - length
                    } else {
                        0.0
                    };
                    (
                        note.offset_in_bar.0 + shift,
                        nominal.max(length),
                        b.time_signature,
                    )
                }
                None => (note.offset_in_bar.0, 4.0, (4, 4)),
            };
            notes.push(SeqNote {
                pitch,
                pitch_class: pitch.rem_euclid(12) as u8,
                interval,
                ioi,
                log_ioi_ratio: previous_ioi.map(|p| (ioi / p).log2()),
                metric: metric_level(offset, length, signature),
            });
            previous_ioi = Some(ioi);
        }
        Sequence { notes }
    }

    /// Number of notes.
    pub fn len(&self) -> usize {
        self.notes.len()
    }

    /// Whether there are no notes.
    pub fn is_empty(&self) -> bool {
        self.notes.is_empty()
    }

    /// The Parsons code (Parsons 1975): `*` then `u`, `d` or `r` for each following note.
    pub fn parsons_code(&self) -> String {
        let mut out = String::from("*");
        for n in self.notes.iter().skip(1) {
            out.push(match n.contour() {
                1 => 'u',
                -1 => 'd',
                _ => 'r',
            });
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn metric_levels_in_common_meters() {
        // 4/4: beats 1, 2, 3, 4 and an eighth after beat 1 (common practice).
        assert_eq!(metric_level(0.0, 4.0, (4, 4)), MetricLevel::Downbeat);
        assert_eq!(metric_level(1.0, 4.0, (4, 4)), MetricLevel::Weak);
        assert_eq!(metric_level(2.0, 4.0, (4, 4)), MetricLevel::Strong);
        assert_eq!(metric_level(3.0, 4.0, (4, 4)), MetricLevel::Weak);
        assert_eq!(metric_level(0.5, 4.0, (4, 4)), MetricLevel::Offbeat);
        // 3/4 has no strong half-bar beat.
        assert_eq!(metric_level(1.0, 3.0, (3, 4)), MetricLevel::Weak);
        // 6/8 beats in dotted quarters: the second beat is 1.5 quarter notes in; an eighth
        // after the downbeat is between beats.
        assert_eq!(metric_level(1.5, 3.0, (6, 8)), MetricLevel::Weak);
        assert_eq!(metric_level(0.5, 3.0, (6, 8)), MetricLevel::Offbeat);
        // 12/8: four dotted-quarter beats, the third is strong.
        assert_eq!(metric_level(3.0, 6.0, (12, 8)), MetricLevel::Strong);
        // 2/2 with doubled note values: the second half note is a beat.
        assert_eq!(metric_level(2.0, 4.0, (2, 2)), MetricLevel::Weak);
    }
}
