//! The note-level differences within a passage: changed pitches, notes without counterpart,
//! split and merged notes, changed lengths, notes moved in the bar, and grace notes (shown but
//! never compared).
//!
//! In: the two [`Piece`]s and a [`Passage`]. Out: the [`Difference`]s in path order, then the
//! grace notes of A and of B. Each names the melody notes involved by index, so that every
//! renderer words them the same way.
//!
//! Rules:
//! - A pair with another pitch class under the passage's transposition is a changed pitch; a
//!   fragmentation is a split note, a consolidation merged notes, a step with one side only a
//!   note without counterpart.
//! - Two notes of an identical pair differ in length when A's length, scaled by the passage's
//!   note-value ratio, and B's differ by more than [`LENGTH_TOLERANCE`] of the longer one;
//!   they are moved in the bar when their offsets from the (nominal) bar start, A's scaled the
//!   same way, differ by more than [`PLACEMENT_TOLERANCE`] quarter notes.
//! - A grace note belongs to the passage when it ornaments one of the passage's notes (it
//!   stands at the same tick in the same part).

use super::{PairKind, Passage, Side};
use crate::timeline::Piece;
use serde::Serialize;

/// Relative difference of two lengths (of the longer one) above which a length has changed:
/// 2%, so that the rounding of a performance read at 480 ticks per quarter note (a tick is
/// 0.2% of a quarter) never counts, while the smallest notated change (a dotted value, 33%)
/// always does. Our choice.
pub const LENGTH_TOLERANCE: f64 = 0.02;
/// Shortest length, quarter notes, that the relative tolerance is taken of (so that two
/// grace-like lengths near zero are not compared at a vanishing tolerance).
const LENGTH_FLOOR: f64 = 0.01;
/// Difference of offsets in the bar, quarter notes, above which a note has moved: exact
/// arithmetic on notated positions, with room for floating-point rounding only.
pub const PLACEMENT_TOLERANCE: f64 = 1e-6;

/// What differs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DifferenceKind {
    /// Another pitch class after transposing.
    Pitch,
    /// A note of A with no counterpart in B.
    OnlyA,
    /// A note of B with no counterpart in A.
    OnlyB,
    /// One note of A sung as several repeated notes in B.
    Split,
    /// Several repeated notes of A sung as one in B.
    Merge,
    /// An identical pair whose lengths differ.
    Rhythm,
    /// An identical pair at different places in the bar.
    Placement,
    /// A grace note in A's passage.
    GraceA,
    /// A grace note in B's passage.
    GraceB,
}

/// One difference, naming the notes involved.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Difference {
    /// What differs.
    pub kind: DifferenceKind,
    /// Melody notes of A involved (the group for a merge; empty for B-only kinds).
    pub a: Vec<usize>,
    /// Melody notes of B involved (the group for a split; empty for A-only kinds).
    pub b: Vec<usize>,
    /// For a grace note: its index in the work's [`Piece::ornaments`].
    pub ornament: Option<usize>,
}

impl Difference {
    fn pair(kind: DifferenceKind, a: &[usize], b: &[usize]) -> Difference {
        Difference {
            kind,
            a: a.to_vec(),
            b: b.to_vec(),
            ornament: None,
        }
    }
}

/// Offset of a note within a nominal bar, quarter notes: a pickup's notes sit at the end of a
/// full bar.
fn metric_offset(piece: &Piece, index: usize) -> Option<f64> {
    let n = piece.melody.get(index)?;
    let bar = piece.bars.get(n.bar)?;
    let res = f64::from(piece.resolution.max(1));
    let nominal = f64::from(bar.time_signature.0) * 4.0 / f64::from(bar.time_signature.1.max(1));
    let actual = bar.length_ticks as f64 / res;
    let lead = if bar.pickup {
        (nominal - actual).max(0.0)
    } else {
        0.0
    };
    Some(n.offset_in_bar.0 + lead)
}

/// The differences of an identical pair: its length, then its place in the bar.
fn identical_pair(a: &Piece, b: &Piece, i: usize, j: usize, ratio: f64) -> Vec<DifferenceKind> {
    let mut out = Vec::new();
    let (Some(na), Some(nb)) = (a.melody.get(i), b.melody.get(j)) else {
        return out;
    };
    // Lengths compared in B's note values: A's length times the passage's ratio.
    let la = na.duration.0 * ratio;
    let lb = nb.duration.0;
    if (la - lb).abs() > LENGTH_TOLERANCE * la.max(lb).max(LENGTH_FLOOR) {
        out.push(DifferenceKind::Rhythm);
    }
    if let (Some(oa), Some(ob)) = (metric_offset(a, i), metric_offset(b, j)) {
        if (oa * ratio - ob).abs() > PLACEMENT_TOLERANCE {
            out.push(DifferenceKind::Placement);
        }
    }
    out
}

/// The grace notes of one work that ornament notes of the passage, as differences.
fn graces(piece: &Piece, range: [usize; 2], side: Side) -> Vec<Difference> {
    let res = f64::from(piece.resolution);
    let onsets: Vec<i64> = piece
        .melody
        .get(range[0]..=range[1].min(piece.melody.len().saturating_sub(1)))
        .unwrap_or(&[])
        .iter()
        .map(|n| n.onset_ticks)
        .collect();
    piece
        .ornaments
        .iter()
        .enumerate()
        .filter(|(_, o)| o.part == piece.selection.part && o.kind == "grace")
        .filter(|(_, o)| onsets.contains(&((o.onset.0 * res).round() as i64)))
        .map(|(k, _)| Difference {
            kind: match side {
                Side::A => DifferenceKind::GraceA,
                Side::B => DifferenceKind::GraceB,
            },
            a: Vec::new(),
            b: Vec::new(),
            ornament: Some(k),
        })
        .collect()
}

/// Every difference within a passage: along the alignment path, then A's and B's grace notes.
pub fn differences(a: &Piece, b: &Piece, passage: &Passage) -> Vec<Difference> {
    let ratio = if passage.note_value_ratio > 0.0 {
        passage.note_value_ratio
    } else {
        1.0
    };
    let mut out = Vec::new();
    for pair in &passage.pairs {
        let kind = match pair.kind {
            PairKind::Mismatch => DifferenceKind::Pitch,
            PairKind::OnlyA => DifferenceKind::OnlyA,
            PairKind::OnlyB => DifferenceKind::OnlyB,
            PairKind::Fragmentation => DifferenceKind::Split,
            PairKind::Consolidation => DifferenceKind::Merge,
            PairKind::Match => {
                let (Some(&i), Some(&j)) = (pair.a.first(), pair.b.first()) else {
                    continue;
                };
                for kind in identical_pair(a, b, i, j, ratio) {
                    out.push(Difference::pair(kind, &pair.a, &pair.b));
                }
                continue;
            }
        };
        out.push(Difference::pair(kind, &pair.a, &pair.b));
    }
    out.extend(graces(a, passage.a.note_range, Side::A));
    out.extend(graces(b, passage.b.note_range, Side::B));
    out
}
