//! Harmonic evidence for a comparison: the chroma of both works compared by cross recurrence
//! ([`crate::align::harmony`]), each shared span placed in both works' bars, and the melodic
//! passages it confirms marked.
//!
//! A harmonic passage *confirms* a melodic one when their spans overlap in both works by at
//! least half of the shorter span on each side (the first such melodic passage, by rank). Harmonic passages that confirm none stand on their own: shared chords
//! without a shared tune (a progression, an accompaniment figure) or a shared tune the melody
//! reading missed (for example in a recording of a full arrangement).

use super::Passage;
use crate::align::harmony::{compare_harmony, HarmonyParams};
use crate::features::chroma::chroma_of;
use crate::theory::describe_pitch_class_shift;
use crate::timeline::{ChromaSource, Piece};
use serde::Serialize;

/// Where a harmonic passage lies in one work.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicSide {
    /// Start and end, seconds.
    pub seconds: [f64; 2],
    /// First and last bar label, as printed (audio bars are estimated).
    pub bars: [String; 2],
    /// First and last bar ordinal.
    pub bar_indices: [usize; 2],
}

/// One shared harmonic passage.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicPassage {
    /// Position in the list, 1 = strongest.
    pub rank: usize,
    /// Where it lies in A.
    pub a: HarmonicSide,
    /// Where it lies in B.
    pub b: HarmonicSide,
    /// Qmax score: recurrent states on the path less gap penalties.
    pub score: f32,
    /// Mean cosine similarity of the aligned, transposed chroma frames.
    pub similarity: f64,
    /// Empirical p-value against block-shuffled recurrence plots.
    pub empirical_p: f64,
    /// How much faster B performs the span: A's duration over B's.
    pub tempo_ratio: f64,
    /// Rank of the melodic passage it confirms, if any.
    pub confirms: Option<usize>,
}

/// The harmonic side of a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicEvidence {
    /// Where each work's chroma comes from.
    pub sources: [ChromaSource; 2],
    /// B's key relative to A's by the optimal transposition index, −5 … +6 semitones.
    pub transposition_semitones: i32,
    /// The same as a shift of pitch classes, in the direction of the strongest melodic passage
    /// when that moves the pitch classes alike (chroma has no octave).
    pub transposition: String,
    /// Whether the chroma was compared per beat (on both works' beats) rather than
    /// on fixed-time frames.
    pub beat_synchronous: bool,
    /// Seconds between chroma frames compared (in A; the mean on a beat grid).
    pub frame_seconds: f64,
    /// Share of recurrent cells in the cross recurrence plot.
    pub recurrence_rate: f64,
    /// Highest Qmax among the shuffled plots.
    pub null_max: f32,
    /// Every parameter used.
    pub parameters: HarmonyParams,
    /// Shared harmonic passages, strongest first.
    pub passages: Vec<HarmonicPassage>,
}

/// Compares the harmony of two pieces, and names the melodic passage (of `melodic`, strongest
/// first) that each harmonic passage confirms.
pub fn harmonic_evidence(
    a: &Piece,
    b: &Piece,
    params: &HarmonyParams,
    melodic: &[Passage],
) -> HarmonicEvidence {
    let chroma_a = chroma_of(a);
    let chroma_b = chroma_of(b);
    let found = compare_harmony(&chroma_a, &chroma_b, params);
    let mut passages: Vec<HarmonicPassage> = found
        .matches
        .iter()
        .enumerate()
        .map(|(k, m)| HarmonicPassage {
            rank: k + 1,
            a: side(a, m.a_seconds, found.window_seconds[0] / 2.0),
            b: side(b, m.b_seconds, found.window_seconds[1] / 2.0),
            score: m.score,
            similarity: m.similarity,
            empirical_p: m.empirical_p,
            tempo_ratio: if m.duration_ratio > 0.0 {
                1.0 / m.duration_ratio
            } else {
                1.0
            },
            confirms: None,
        })
        .collect();
    for h in &mut passages {
        h.confirms = melodic
            .iter()
            .find(|p| {
                overlaps(h.a.seconds, [p.a.onset_seconds, p.a.end_seconds])
                    && overlaps(h.b.seconds, [p.b.onset_seconds, p.b.end_seconds])
            })
            .map(|p| p.rank);
    }
    HarmonicEvidence {
        sources: [chroma_a.source, chroma_b.source],
        transposition_semitones: found.transposition_semitones,
        transposition: describe_pitch_class_shift(
            found.transposition_semitones,
            melodic.first().map(|p| p.transposition_semitones),
        ),
        beat_synchronous: found.beat_synchronous,
        frame_seconds: found.frame_seconds,
        recurrence_rate: found.recurrence_rate,
        null_max: found.null_max,
        parameters: params.clone(),
        passages,
    }
}

/// A time span of a piece with the bars it covers: a bar line within `blur` seconds after the
/// start (or before the end) counts as the span's edge, as the chroma averaging blurs edges by
/// about that much.
fn side(piece: &Piece, seconds: [f64; 2], blur: f64) -> HarmonicSide {
    let inner = |t: f64| t.clamp(seconds[0], seconds[1].max(seconds[0]));
    let first = piece.bar_at_seconds(inner(seconds[0] + blur));
    // The bar holding the last moment of the span, not the one starting at its end.
    let last = piece
        .bar_at_seconds(inner(seconds[1] - blur.max(1e-3)))
        .max(first);
    let label = |i: usize| {
        piece
            .bars
            .get(i)
            .map_or_else(String::new, |b| b.label.clone())
    };
    HarmonicSide {
        seconds,
        bars: [label(first), label(last)],
        bar_indices: [first, last],
    }
}

/// Whether two spans overlap by at least half of the shorter one.
fn overlaps(x: [f64; 2], y: [f64; 2]) -> bool {
    let shared = x[1].min(y[1]) - x[0].max(y[0]);
    let shorter = (x[1] - x[0]).min(y[1] - y[0]);
    shorter > 0.0 && shared >= 0.5 * shorter
}

#[cfg(test)]
mod tests {
    use super::overlaps;

    #[test]
    fn overlap_needs_half_of_the_shorter_span() {
        assert!(overlaps([0.0, 10.0], [4.0, 8.0]));
        assert!(overlaps([0.0, 10.0], [8.0, 12.0]));
        assert!(!overlaps([0.0, 10.0], [9.0, 13.0]));
        assert!(!overlaps([0.0, 1.0], [2.0, 3.0]));
    }
}
