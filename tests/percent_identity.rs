//! Percent melodic identity against a value worked by hand from its published formula.
//!
//! Savage, Cronin, Müllensiefen & Atkinson (2018), "Quantitative evaluation of music copyright
//! infringement" (Proceedings of the 8th International Workshop on Folk Music Analysis), after
//! Savage & Atkinson (2015): PMI = 100 × ID / ((L1 + L2) / 2), with ID the number of aligned
//! positions whose notes are identical and L1, L2 the numbers of notes of the two aligned
//! sequences (gaps not counted).
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::AlignParams;
use collatio::compare::{compare, PairKind};
use common::{melody_piece, Event};

fn quarters(pitches: &[i32]) -> Vec<Event> {
    pitches.iter().map(|&p| (Some(p), 1)).collect()
}

/// A: ten notes. B: the same tune a whole tone higher, with its fifth note changed (G4 + 2 =
/// A4 would be identical; B has C#5, a major third away from it, so not even a near miss) and
/// one note (B4) added after its seventh note.
///
/// Aligned: nine identical pairs, one pair of different notes, one note of B against a gap.
/// By hand: ID = 9, L1 = 10, L2 = 11;
/// PMI = 100 × 9 / ((10 + 11) / 2) = 100 × 9 / 10.5 = 900 / 10.5 = 85.714 285 7…%
/// (exactly 600/7).
#[test]
fn percent_melodic_identity_equals_the_worked_formula() {
    let a = [60, 62, 64, 65, 67, 65, 64, 62, 60, 67];
    let b = [62, 64, 66, 67, 73, 67, 66, 71, 64, 62, 69];
    let pa = melody_piece(&quarters(&a), 1, 4, 4);
    let pb = melody_piece(&quarters(&b), 1, 4, 4);
    let result = compare(&pa, &pb, &AlignParams::default());
    let top = result.passages.first().expect("a passage");
    let count = |kind: PairKind| top.pairs.iter().filter(|p| p.kind == kind).count();

    // The alignment the hand computation assumes: all of both melodies, transposed up a
    // major second, nine identical pairs, one different, one note only in B.
    assert_eq!(top.transposition_semitones, 2, "{top:#?}");
    assert_eq!(top.a.note_range, [0, 9], "{top:#?}");
    assert_eq!(top.b.note_range, [0, 10], "{top:#?}");
    assert_eq!(count(PairKind::Match), 9, "{top:#?}");
    assert_eq!(count(PairKind::Mismatch), 1, "{top:#?}");
    assert_eq!(count(PairKind::OnlyB), 1, "{top:#?}");
    assert_eq!(top.pairs.len(), 11, "{top:#?}");

    approx::assert_abs_diff_eq!(top.pmi, 600.0 / 7.0, epsilon = 1e-9);
    approx::assert_abs_diff_eq!(top.pmi, 85.714_285_7, epsilon = 1e-7);
}
