//! The five properties the design asks of melodic alignment, over random melodies (proptest,
//! fixed seed) and over real melodies (the public-domain tunes in `tests/fixtures/tune_family/`):
//! 1. transposition leaves every score unchanged;
//! 2. scaling all durations (with a meter that scales alike, a different `<divisions>`, a MIDI
//!    tempo) leaves every score unchanged;
//! 3. splitting a note into repeated notes, or merging them, costs little;
//! 4. a shared passage embedded in unrelated material is found, and several are all found
//!    without overlap;
//! 5. a few changed, inserted or deleted notes lower the score without losing the passage.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::AlignParams;
use collatio::compare::{compare, Comparison};
use collatio::ingest::{read_file, ReadOptions};
use common::{events_of, melody_piece, Event};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed};

fn config(cases: u32) -> Config {
    Config {
        cases,
        rng_seed: RngSeed::Fixed(0xC011_A710),
        failure_persistence: None,
        ..Config::default()
    }
}

/// Scores and note ranges of every passage: what must not change.
fn fingerprint(c: &Comparison) -> Vec<(i32, [usize; 2], [usize; 2])> {
    c.passages
        .iter()
        .map(|p| (p.score, p.a.note_range, p.b.note_range))
        .collect()
}

/// A random melody: a walk of mostly steps with some leaps, in eighth-note units
/// (divisions 2), lengths of an eighth to a half note.
fn melody(len: std::ops::Range<usize>) -> impl Strategy<Value = Vec<Event>> {
    prop::collection::vec(
        (
            -5i32..=5,
            prop::sample::select(vec![1u32, 1, 2, 2, 2, 3, 4]),
        ),
        len,
    )
    .prop_map(|steps| {
        let mut pitch = 66;
        steps
            .into_iter()
            .map(|(step, length)| {
                pitch = (pitch + step).clamp(55, 81);
                (Some(pitch), length)
            })
            .collect()
    })
}

fn transpose(events: &[Event], k: i32) -> Vec<Event> {
    events.iter().map(|&(p, d)| (p.map(|p| p + k), d)).collect()
}

fn scale(events: &[Event], factor: u32) -> Vec<Event> {
    events.iter().map(|&(p, d)| (p, d * factor)).collect()
}

fn run(a: &[Event], b: &[Event]) -> Comparison {
    compare(
        &melody_piece(a, 2, 4, 4),
        &melody_piece(b, 2, 4, 4),
        &AlignParams::default(),
    )
}

/// Unrelated material around a shared segment: B = noise + A[s..e] + noise.
fn embedded(a: &[Event], range: std::ops::Range<usize>, noise: &[Event]) -> Vec<Event> {
    let half = noise.len() / 2;
    let mut b = noise[..half].to_vec();
    b.extend_from_slice(&a[range]);
    b.extend_from_slice(&noise[half..]);
    b
}

proptest! {
    #![proptest_config(config(16))]

    #[test]
    fn transposition_leaves_scores_unchanged(
        a in melody(20..40), noise in melody(20..30), k in -12i32..=12, start in 0usize..8,
    ) {
        let b = embedded(&a, start..start + 12, &noise);
        let base = run(&a, &b);
        prop_assert!(!base.passages.is_empty());
        let moved = run(&a, &transpose(&b, k));
        prop_assert_eq!(fingerprint(&base), fingerprint(&moved));
        let moved_a = run(&transpose(&a, k), &b);
        prop_assert_eq!(fingerprint(&base), fingerprint(&moved_a));
        prop_assert_eq!(
            moved.passages[0].transposition_semitones - base.passages[0].transposition_semitones,
            k
        );
    }

    #[test]
    fn duration_scaling_leaves_scores_unchanged(
        a in melody(20..40), noise in melody(20..30), start in 0usize..8,
    ) {
        let b = embedded(&a, start..start + 12, &noise);
        let pa = melody_piece(&a, 2, 4, 4);
        let base = compare(&pa, &melody_piece(&b, 2, 4, 4), &AlignParams::default());
        prop_assert!(!base.passages.is_empty());
        let params = AlignParams::default();
        // Doubled note values in 4/2 (as 4/4 written in half-note beats).
        let doubled = compare(&pa, &melody_piece(&scale(&b, 2), 2, 4, 2), &params);
        prop_assert_eq!(fingerprint(&base), fingerprint(&doubled));
        prop_assert!((doubled.passages[0].note_value_ratio - 2.0).abs() < 1e-9);
        // Halved note values: the same durations read at twice the divisions, in 4/8.
        let halved = compare(&pa, &melody_piece(&b, 4, 4, 8), &params);
        prop_assert_eq!(fingerprint(&base), fingerprint(&halved));
        // A different <divisions> for the same music.
        let redivided = compare(&pa, &melody_piece(&scale(&b, 3), 6, 4, 4), &params);
        prop_assert_eq!(fingerprint(&base), fingerprint(&redivided));
        // One and a half times longer: 4/4 becomes 12/8, four dotted-quarter beats.
        let longer = compare(&pa, &melody_piece(&scale(&b, 3), 4, 12, 8), &params);
        prop_assert_eq!(fingerprint(&base), fingerprint(&longer));
    }

    #[test]
    fn splitting_or_merging_a_note_costs_little(
        a in melody(24..40), noise in melody(20..30), start in 0usize..8, which in 3usize..9,
    ) {
        let range = start..start + 14;
        let b = embedded(&a, range.clone(), &noise);
        let base = run(&a, &b);
        let at = noise.len() / 2 + which;
        // Split note `at` of B into two repeated notes (length doubled first so it halves
        // exactly), and double A's note too so the unsplit pair stays identical.
        let mut a2 = a.clone();
        a2[start + which].1 *= 2;
        let mut b_whole = b.clone();
        b_whole[at].1 *= 2;
        let whole = run(&a2, &b_whole);
        let mut b_split = b.clone();
        let (pitch, length) = b_split[at];
        b_split.splice(at..=at, [(pitch, length), (pitch, length)]);
        let split = run(&a2, &b_split);
        prop_assume!(!whole.passages.is_empty() && !base.passages.is_empty());
        let identical = AlignParams::default().identical_pair();
        prop_assert!(!split.passages.is_empty());
        let (s_whole, s_split) = (whole.passages[0].score, split.passages[0].score);
        prop_assert!(s_split >= s_whole - identical / 2, "whole {} split {}", s_whole, s_split);
        // And the reverse, merging (consolidation): A split, B whole.
        let merged = run(&b_split, &a2);
        prop_assert!(merged.passages[0].score >= s_whole - identical / 2);
    }

    #[test]
    fn embedded_passages_are_found_without_overlap(
        a in melody(40..60), noise in melody(30..40),
    ) {
        // Two segments of A, in swapped order, inside unrelated material.
        let (first, second) = (2..16, 24..38);
        let third = noise.len() / 3;
        let mut b = noise[..third].to_vec();
        b.extend_from_slice(&a[second.clone()]);
        b.extend_from_slice(&noise[third..2 * third]);
        b.extend_from_slice(&a[first.clone()]);
        b.extend_from_slice(&noise[2 * third..]);
        let result = run(&a, &b);
        let covers = |seg: &std::ops::Range<usize>| {
            result.passages.iter().any(|p| {
                let lo = p.a.note_range[0].max(seg.start);
                let hi = p.a.note_range[1].min(seg.end - 1);
                hi >= lo && (hi - lo + 1) * 10 >= seg.len() * 8
            })
        };
        prop_assert!(covers(&first), "{:#?}", fingerprint(&result));
        prop_assert!(covers(&second), "{:#?}", fingerprint(&result));
        // No two passages overlap in both works at once.
        for (i, p) in result.passages.iter().enumerate() {
            for q in &result.passages[i + 1..] {
                let overlap = |x: [usize; 2], y: [usize; 2]| x[0] <= y[1] && y[0] <= x[1];
                prop_assert!(!(overlap(p.a.note_range, q.a.note_range)
                    && overlap(p.b.note_range, q.b.note_range)));
            }
        }
        // Bars are reported for both works.
        prop_assert!(result.passages.iter().all(|p| !p.a.bars[0].is_empty() && !p.b.bars[0].is_empty()));
    }

    #[test]
    fn a_few_changes_lower_the_score_but_keep_the_passage(
        a in melody(30..40), noise in melody(20..30), edits in prop::collection::vec((0usize..20, 0u8..3, 1i32..5), 1..4),
    ) {
        let range = 4..28;
        let b = embedded(&a, range.clone(), &noise);
        let base = run(&a, &b);
        let offset = noise.len() / 2;
        let mut changed = b.clone();
        // Apply edits from the back so positions stay valid.
        let mut edits = edits;
        edits.sort_by_key(|e| std::cmp::Reverse(e.0));
        edits.dedup_by_key(|e| e.0);
        for (pos, kind, amount) in edits {
            let at = offset + 2 + pos;
            match kind {
                0 => changed[at].0 = changed[at].0.map(|p| p + amount),
                1 => changed.insert(at, (changed[at].0.map(|p| p + amount), 1)),
                _ => { changed.remove(at); }
            }
        }
        let after = run(&a, &changed);
        prop_assert!(!after.passages.is_empty());
        let top = &after.passages[0];
        prop_assert!(top.score <= base.passages[0].score);
        let lo = top.a.note_range[0].max(range.start);
        let hi = top.a.note_range[1].min(range.end - 1);
        prop_assert!(hi >= lo && (hi - lo + 1) * 10 >= range.len() * 7,
            "found A notes {:?} for the shared {:?}", top.a.note_range, range);
    }
}

/// The same properties on real melodies: each public-domain tune of the fixtures against
/// itself transposed and in scaled note values.
#[test]
fn real_melodies_keep_their_scores_under_transposition_and_scaling() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/tune_family");
    let mut names: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "musicxml"))
        .collect();
    names.sort();
    assert!(names.len() >= 8);
    for path in names {
        let piece = read_file(&path, &ReadOptions::default()).unwrap();
        let events = events_of(&piece);
        let divisions = piece.resolution;
        let (num, den) = piece.bars[0].time_signature;
        let original = melody_piece(&events, divisions, num, den);
        let params = AlignParams::default();
        let base = compare(&piece, &original, &params);
        let transposed = compare(
            &piece,
            &melody_piece(&transpose(&events, -5), divisions, num, den),
            &params,
        );
        let doubled = compare(
            &piece,
            &melody_piece(&scale(&events, 2), divisions, num, den / 2),
            &params,
        );
        let name = path.display();
        assert!(!base.passages.is_empty(), "{name}");
        assert_eq!(fingerprint(&base), fingerprint(&transposed), "{name}");
        assert_eq!(fingerprint(&base), fingerprint(&doubled), "{name}");
        assert_eq!(transposed.passages[0].transposition_semitones, -5, "{name}");
    }
}
