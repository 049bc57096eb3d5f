//! The tune family of the 18th-century French air "Ah! vous dirai-je, maman", sung in English
//! as "Twinkle, Twinkle, Little Star", as the alphabet song and as "Baa, Baa, Black Sheep"
//! (common knowledge in the trade: one melody). Written from memory (no published edition;
//! see `tests/fixtures/README.md`) and encoded in `tests/fixtures/tune_family/` in
//! different keys (C, D, G, F), meters (4/4, 2/2, 2/4), note values (doubled, halved) and lyric
//! splittings (notes split for "L-M-N-O", "have you a-ny", and merged for "Q R S"). Every pair
//! must match end to end, with bars reported; against unrelated public-domain tunes ("Frère
//! Jacques", the "Ode to Joy" theme, "Yankee Doodle", "London Bridge") scores are clearly lower.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::AlignParams;
use collatio::compare::{compare, Comparison, PairKind};
use collatio::features::Sequence;
use collatio::ingest::{read_file, ReadOptions};
use collatio::timeline::Piece;

const FAMILY: [&str; 4] = [
    "twinkle_c_4-4.musicxml",
    "twinkle_d_2-2_doubled.musicxml",
    "alphabet_song_g_4-4.musicxml",
    "baa_baa_black_sheep_f_2-4.musicxml",
];
const UNRELATED: [&str; 4] = [
    "frere_jacques_c.musicxml",
    "ode_to_joy_d.musicxml",
    "yankee_doodle_g_2-4.musicxml",
    "london_bridge_f.musicxml",
];

fn load(name: &str) -> Piece {
    read_file(
        &common::fixture(&format!("tune_family/{name}")),
        &ReadOptions::default(),
    )
    .unwrap_or_else(|e| panic!("{name}: {e}"))
}

fn run(a: &str, b: &str) -> (Piece, Piece, Comparison) {
    let (pa, pb) = (load(a), load(b));
    let result = compare(&pa, &pb, &AlignParams::default());
    (pa, pb, result)
}

/// The Parsons code, as defined by Parsons (1975), *The Directory of Tunes and Musical Themes*
/// (Cambridge: Spencer Brown): `*` for the first note, then `u`, `d` or `r` for each note
/// higher than, lower than or repeating the one before. Worked by hand from the tune as
/// encoded in the fixture (C C G G A A G | F F E E D D C | G G F F E E D | G G F F E E D |
/// C C G G A A G | F F E E D D C): `*rururdd rdrdrdu rdrdrdu rdrdrdd rururdd rdrdrd` less the
/// spaces, `*rururddrdrdrdurdrdrdurdrdrddrururddrdrdrd`.
#[test]
fn parsons_code_of_twinkle_worked_by_hand() {
    let piece = load(FAMILY[0]);
    assert_eq!(
        Sequence::from_piece(&piece).parsons_code(),
        "*rururddrdrdrdurdrdrdurdrdrddrururddrdrdrd"
    );
    // The doubled-value version in D has the same contour.
    let doubled = load(FAMILY[1]);
    assert_eq!(
        Sequence::from_piece(&doubled).parsons_code(),
        Sequence::from_piece(&piece).parsons_code()
    );
}

#[test]
fn every_pair_of_the_family_matches_end_to_end() {
    for (i, a) in FAMILY.iter().enumerate() {
        for b in FAMILY.iter().skip(i + 1) {
            let (pa, pb, result) = run(a, b);
            let top = result
                .passages
                .first()
                .unwrap_or_else(|| panic!("{a} vs {b}: no passage"));
            let context = format!("{a} vs {b}: {top:#?}");
            // End to end: from the first note (or the second: the first has no interval
            // context) to the last of both melodies.
            assert!(top.a.note_range[0] <= 1, "{context}");
            assert!(top.b.note_range[0] <= 1, "{context}");
            assert!(top.a.note_range[1] + 1 >= pa.melody.len(), "{context}");
            assert!(top.b.note_range[1] + 1 >= pb.melody.len(), "{context}");
            // Bars reported as printed: the tune starts in bar 1 of both.
            assert_eq!(top.a.bars[0], "1", "{context}");
            assert_eq!(top.b.bars[0], "1", "{context}");
            let last_a = &pa.bars[pa.melody.last().unwrap().bar].label;
            let last_b = &pb.bars[pb.melody.last().unwrap().bar].label;
            assert_eq!(&top.a.bars[1], last_a, "{context}");
            assert_eq!(&top.b.bars[1], last_b, "{context}");
            assert!(top.pmi >= 85.0, "{context}");
        }
    }
}

/// The transposition and tempo figures of one pair, checked against how the fixtures were
/// written: Twinkle in C against Twinkle in D a whole tone up in doubled note values.
#[test]
fn transposition_and_note_values_are_reported() {
    let (_, _, result) = run(FAMILY[0], FAMILY[1]);
    let top = &result.passages[0];
    assert_eq!(top.transposition_semitones, 2);
    assert_eq!(top.transposition, "up a major second");
    approx::assert_abs_diff_eq!(top.note_value_ratio, 2.0, epsilon = 1e-9);
    // Both files are read at the default 120 bpm, so B takes twice as long: tempo ratio 1/2.
    approx::assert_abs_diff_eq!(top.tempo_ratio, 0.5, epsilon = 1e-9);
    assert_eq!(top.pmi, 100.0);
    assert_eq!(top.a.key.as_deref(), Some("C major"));
    assert_eq!(top.b.key.as_deref(), Some("D major"));
}

/// The alphabet song splits "L-M-N-O" (two notes into four) and merges "Q R S" (two notes into
/// one): the alignment uses fragmentation and consolidation there (Mongeau & Sankoff 1990).
#[test]
fn lyric_splittings_align_as_fragmentation_and_consolidation() {
    let (_, _, result) = run(FAMILY[0], FAMILY[2]);
    let kinds: Vec<PairKind> = result.passages[0].pairs.iter().map(|p| p.kind).collect();
    assert!(kinds.contains(&PairKind::Fragmentation), "{kinds:?}");
    assert!(kinds.contains(&PairKind::Consolidation), "{kinds:?}");
}

/// "Clearly lower": under half the family's lowest relatedness, and a top passage under a fifth
/// of the family's weakest top passage. (Stepwise tunes in one key do share short figures:
/// the "Ode to Joy" theme and "Twinkle" share ten-note scale fragments; whether such a figure
/// is commonplace is the corpus's question, not the aligner's.)
#[test]
fn unrelated_tunes_score_clearly_lower() {
    let mut family_low = (f64::MAX, i32::MAX);
    for (i, a) in FAMILY.iter().enumerate() {
        for b in FAMILY.iter().skip(i + 1) {
            let (_, _, r) = run(a, b);
            family_low.0 = family_low.0.min(r.relatedness.value);
            family_low.1 = family_low.1.min(r.passages[0].score);
        }
    }
    for a in FAMILY {
        for b in UNRELATED {
            let (_, _, r) = run(a, b);
            let top = r.passages.first().map_or(0, |p| p.score);
            assert!(
                r.relatedness.value * 2.0 < family_low.0,
                "{a} vs {b}: relatedness {} against the family's lowest {}",
                r.relatedness.value,
                family_low.0
            );
            assert!(
                top * 5 < family_low.1,
                "{a} vs {b}: top score {top} against the family's lowest {}",
                family_low.1
            );
        }
    }
}
