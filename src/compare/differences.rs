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
//! - A recording's notes are judged on its tracked beat grid: onsets and lengths are read to the
//!   nearest sixteenth ([`crate::timeline::RECORDING_GRID_QUARTERS`]) first, so that the timing
//!   jitter of a performance is not reported as changed rhythm ([`Piece::grid_position`]); and
//!   when a recording is involved, a note's length is the time to the next onset on both sides
//!   ([`compared_length`]), as articulation makes sounding lengths unreliable.
//! - Places in the bar are compared only where the bars correspond (A's bar, scaled by the
//!   note-value ratio, as long as B's); where a side's bar lines are estimated from tracked
//!   beats, only the place within the beat is compared.
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
    let (bar_index, offset) = piece.grid_position(n);
    let bar = piece.bars.get(bar_index)?;
    let res = f64::from(piece.resolution.max(1));
    let nominal = f64::from(bar.time_signature.0) * 4.0 / f64::from(bar.time_signature.1.max(1));
    let actual = bar.length_ticks as f64 / res;
    let lead = if bar.pickup {
        (nominal - actual).max(0.0)
    } else {
        0.0
    };
    Some(offset + lead)
}

/// Whether a comparison involves a recording, so that rhythm is judged as heard: a recording's
/// sounding lengths depend on articulation (legato, staccato) and on where the transcriber
/// ends a note, so note lengths are taken as the time to the next note's onset on both sides.
pub fn judged_as_heard(a: &Piece, b: &Piece) -> bool {
    a.transcription.is_some() || b.transcription.is_some()
}

/// A note's length in quarter notes as the reports compare it: as written when two scores or
/// MIDI files are compared; as heard (the time to the next note's onset, the last note its own
/// length) when a recording is involved, on the beat grid
/// ([`crate::timeline::RECORDING_GRID_QUARTERS`], at least one step).
pub fn compared_length(piece: &Piece, index: usize, heard: bool) -> Option<f64> {
    let n = piece.melody.get(index)?;
    if !heard {
        return Some(n.duration.0);
    }
    let length = piece
        .melody
        .get(index + 1)
        .map_or(n.duration.0, |next| next.onset.0 - n.onset.0);
    let step = crate::timeline::RECORDING_GRID_QUARTERS;
    Some(((length / step).round() * step).max(step))
}

/// A bar's length in quarter notes.
fn bar_quarters(piece: &Piece, bar: usize) -> Option<f64> {
    piece
        .bars
        .get(bar)
        .map(|b| b.length_ticks as f64 / f64::from(piece.resolution.max(1)))
}

/// The differences of an identical pair: its length, then its place in the bar.
fn identical_pair(a: &Piece, b: &Piece, i: usize, j: usize, ratio: f64) -> Vec<DifferenceKind> {
    let mut out = Vec::new();
    let heard = judged_as_heard(a, b);
    let (Some(la), Some(lb)) = (compared_length(a, i, heard), compared_length(b, j, heard)) else {
        return out;
    };
    // Lengths and places compared in B's note values: A's times the passage's ratio, then, when
    // a recording is involved, read on the beat grid again (the ratio of a performance is not
    // exact).
    let on_grid = |x: f64| {
        if heard {
            let step = crate::timeline::RECORDING_GRID_QUARTERS;
            (x / step).round() * step
        } else {
            x
        }
    };
    let la = on_grid(la * ratio);
    if (la - lb).abs() > LENGTH_TOLERANCE * la.max(lb).max(LENGTH_FLOOR) {
        out.push(DifferenceKind::Rhythm);
    }
    // A place in the bar can be compared only where the bars correspond: A's bar, scaled by
    // the ratio, as long as B's (not so when a beat tracker counted a recording's beats at
    // double or half speed, or the works are in different meters).
    let bars_correspond = match (a.melody.get(i), b.melody.get(j)) {
        (Some(na), Some(nb)) => matches!(
            (
                bar_quarters(a, a.grid_position(na).0),
                bar_quarters(b, b.grid_position(nb).0)
            ),
            (Some(x), Some(y)) if (on_grid(x * ratio) - y).abs() <= PLACEMENT_TOLERANCE.max(if heard { crate::timeline::RECORDING_GRID_QUARTERS } else { 0.0 })
        ),
        _ => false,
    };
    // Where a side's bar lines are estimated from tracked beats, only the place within the beat
    // is compared: a misplaced downbeat would otherwise move every note.
    let estimated = |p: &Piece, k: usize| {
        p.melody
            .get(k)
            .and_then(|n| p.bars.get(p.grid_position(n).0))
            .is_some_and(|bar| bar.estimated)
    };
    let within_beat = estimated(a, i) || estimated(b, j);
    // ... and only when the beats correspond too (the tracker counted the written beat, not
    // twice or half of it).
    let beats_correspond = !within_beat || (ratio - 1.0).abs() < 0.1;
    if let (true, true, Some(oa), Some(ob)) = (
        bars_correspond,
        beats_correspond,
        metric_offset(a, i),
        metric_offset(b, j),
    ) {
        let oa = on_grid(oa * ratio);
        let moved = if within_beat {
            // The beat: a quarter note of B's notation (the tracked beat of a recording).
            let d = (oa.rem_euclid(1.0) - ob.rem_euclid(1.0)).abs();
            d.min(1.0 - d) > PLACEMENT_TOLERANCE
        } else {
            (oa - ob).abs() > PLACEMENT_TOLERANCE
        };
        if moved {
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
