//! Where short figures of one melody recur in the other: the background of the exhibit's dot
//! plot (the dot plot of sequence comparison, Gibbs & McIntyre 1970, on intervals instead of
//! letters, so that no transposition changes it).
//!
//! A recurrence is a pair of melody notes (i in A, j in B) from which the next [`WORD`]
//! intervals agree exactly in semitones.

use crate::features::Sequence;
use std::collections::BTreeMap;

/// Consecutive intervals that must agree for a recurrence.
pub const WORD: usize = 3;
/// Most recurrences kept (the first ones in A's order), which bounds the dot plot of long,
/// repetitive works.
pub const MAX_RECURRENCES: usize = 6000;

/// The intervals out of each note (into the next), semitones.
fn intervals_out(seq: &Sequence) -> Vec<i32> {
    seq.notes
        .iter()
        .skip(1)
        .map(|n| n.interval.unwrap_or(0))
        .collect()
}

/// Every pair of notes (A's index, B's index) from which the next [`WORD`] intervals agree, in
/// A's order and then B's, at most [`MAX_RECURRENCES`].
pub fn interval_recurrences(a: &Sequence, b: &Sequence) -> Vec<[usize; 2]> {
    let (ia, ib) = (intervals_out(a), intervals_out(b));
    let mut where_b: BTreeMap<&[i32], Vec<usize>> = BTreeMap::new();
    for (j, word) in ib.windows(WORD).enumerate() {
        where_b.entry(word).or_default().push(j);
    }
    let mut out = Vec::new();
    for (i, word) in ia.windows(WORD).enumerate() {
        for &j in where_b.get(word).into_iter().flatten() {
            if out.len() >= MAX_RECURRENCES {
                return out;
            }
            out.push([i, j]);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::features::SeqNote;

    fn seq(pitches: &[i32]) -> Sequence {
        Sequence {
            notes: pitches
                .iter()
                .enumerate()
                .map(|(k, &p)| SeqNote {
                    pitch: p,
                    pitch_class: p.rem_euclid(12) as u8,
                    interval: (k > 0).then(|| p - pitches[k - 1]),
                    ioi: 1.0,
                    log_ioi_ratio: None,
                    metric: crate::features::MetricLevel::Weak,
                })
                .collect(),
        }
    }

    #[test]
    fn a_transposed_figure_recurs() {
        // C D E F against G A B C (the same figure a fifth higher) after one other note.
        let a = seq(&[60, 62, 64, 65]);
        let b = seq(&[50, 67, 69, 71, 72]);
        assert_eq!(interval_recurrences(&a, &b), vec![[0, 1]]);
    }
}
