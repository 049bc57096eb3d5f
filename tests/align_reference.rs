//! A naive reference for the melodic aligner, as an FFT library keeps an O(n²) DFT to test its
//! fast paths: a plain full-matrix O(m·n) local alignment, written here from the documented
//! scoring rules of `AlignParams` and `src/align/score.rs`, checked against the crate's
//! linear-memory scan (`best_score`) and against the first passage of `align`, over random
//! melodies from a fixed seed.
//!
//! The method is Smith & Waterman (1981) with affine gaps by Gotoh's (1982) three states: M
//! (the cell ends in a pair of notes, or in a fragmentation or consolidation after Mongeau &
//! Sankoff 1990), Ix (note a_i against a gap) and Iy (note b_j against a gap). A gap of length k
//! costs `gap_open + (k − 1) · gap_extend`. H is the best of the three states, floored at 0
//! (a local alignment may start anywhere); the score is the best H over the matrix, and the
//! best over the 12 transpositions (b = a + t semitones).
//!
//! Rules as read from the documentation, with the choices where it was not explicit:
//! - Gaps open from H, the best of all three states, as in Gotoh (1982) and in the scan: a gap
//!   in one melody may directly follow a gap in the other.
//! - Intervals beyond two octaves count as two octaves ("intervals beyond two octaves share one
//!   code", `score.rs`), so two such leaps in one direction are the same interval.
//! - The rhythm term compares the inter-onset ratios as they are ("within 0.1 in log2",
//!   "within a factor of two", both inclusive), here as fractions cross-multiplied rather than
//!   as logarithms, so an exact factor of two is exactly "within a factor of two".
//! - `max_fragments` is read as clamped to 1..=3 ("1 turns fragmentation off, at most 3").
//! - A fragmentation (one note a_i against k repeated notes b_{j−k+1..=j} of one MIDI pitch)
//!   scores as one pair of a_i with the group's first note for pitch, interval (the step into
//!   the group) and metric level; its rhythm term compares a_i's ratio with the group's summed
//!   inter-onset interval over the interval of the note before the group (no ratio for a group
//!   that opens the melody); it is allowed only when those two ratios agree within 0.1 (or one
//!   is missing); it costs `fragment_penalty` per extra note. Consolidation is the mirror
//!   image. It follows H at (i−1, j−k) (consolidation: H at (i−k, j−1)).
//!
//! Durations are whole multiples of a sixteenth note, so every onset, inter-onset interval and
//! summed interval is exact in binary floating point and both sides see the same numbers.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::{align, best_score, AlignParams};
use collatio::features::{SeqNote, Sequence};
use common::{melody_piece, Event};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const SEED: u64 = 0xA11C_4EF5;
const PAIRS: usize = 300;
const NEG: i64 = i64::MIN / 4;

// ---------------------------------------------------------------------------------------------
// The pair score, term by term.

fn pitch_term(p: &AlignParams, a: &SeqNote, b: &SeqNote, t: i32) -> i64 {
    let d = (i32::from(b.pitch_class) - i32::from(a.pitch_class) - t).rem_euclid(12);
    i64::from(match d {
        0 => p.pitch_match,
        1 | 11 => p.pitch_near,
        _ => p.pitch_mismatch,
    })
}

fn interval_term(p: &AlignParams, a: &SeqNote, b: &SeqNote) -> i64 {
    let (Some(x), Some(y)) = (a.interval, b.interval) else {
        return 0;
    };
    let (x, y) = (x.clamp(-24, 24), y.clamp(-24, 24));
    i64::from(if x == y {
        p.interval_match
    } else if x.signum() == y.signum() && (x - y).abs() <= 2 {
        p.interval_near
    } else {
        p.interval_mismatch
    })
}

/// An inter-onset ratio as a fraction: (this interval, the interval before it).
type Ratio = (f64, f64);

/// The ratio of note `i` of `notes` to the note before it (none for the first note).
fn ratio(notes: &[SeqNote], i: usize) -> Option<Ratio> {
    (i > 0).then(|| (notes[i].ioi, notes[i - 1].ioi))
}

/// Whether two ratios are within a factor `2^tolerance` of each other (a tolerance in log2),
/// compared as fractions cross-multiplied: exact for these durations, with no logarithm.
fn within(a: Ratio, b: Ratio, tolerance: f64) -> bool {
    let (x, y) = (a.0 * b.1, b.0 * a.1);
    let factor = tolerance.exp2();
    x <= y * factor && y <= x * factor
}

/// Same ratio within 0.1 in log2; within a factor of two; other. Nothing without a ratio.
fn rhythm_term(p: &AlignParams, a: Option<Ratio>, b: Option<Ratio>) -> i64 {
    let (Some(x), Some(y)) = (a, b) else {
        return 0;
    };
    i64::from(if within(x, y, 0.1) {
        p.rhythm_match
    } else if within(x, y, 1.0) {
        p.rhythm_near
    } else {
        p.rhythm_mismatch
    })
}

fn metric_term(p: &AlignParams, a: &SeqNote, b: &SeqNote) -> i64 {
    if a.metric == b.metric {
        i64::from(p.metric_match)
    } else {
        0
    }
}

/// a_i against b_j as a plain pair.
fn pair(p: &AlignParams, a: &[SeqNote], i: usize, b: &[SeqNote], j: usize, t: i32) -> i64 {
    pitch_term(p, &a[i], &b[j], t)
        + interval_term(p, &a[i], &b[j])
        + rhythm_term(p, ratio(a, i), ratio(b, j))
        + metric_term(p, &a[i], &b[j])
}

/// One note `single` of `singles` against the repeated notes `first..=last` of `whole`, or
/// `None` when the move is not allowed. `single_is_a` tells which melody is A (for the
/// direction of the transposition).
#[allow(clippy::too_many_arguments)]
fn split_pair(
    p: &AlignParams,
    singles: &[SeqNote],
    single: usize,
    whole: &[SeqNote],
    first: usize,
    last: usize,
    t: i32,
    single_is_a: bool,
) -> Option<i64> {
    let group = &whole[first..=last];
    if group.iter().any(|n| n.pitch != group[0].pitch) {
        return None;
    }
    let group_ratio: Option<Ratio> =
        (first > 0).then(|| (group.iter().map(|n| n.ioi).sum(), whole[first - 1].ioi));
    let single_ratio = ratio(singles, single);
    // The group must fill the single note's time.
    if let (Some(x), Some(y)) = (single_ratio, group_ratio) {
        if !within(x, y, 0.1) {
            return None;
        }
    }
    let (one, head) = (&singles[single], &group[0]);
    let (a, b, ra, rb) = if single_is_a {
        (one, head, single_ratio, group_ratio)
    } else {
        (head, one, group_ratio, single_ratio)
    };
    let extra = (group.len() - 1) as i64;
    Some(
        pitch_term(p, a, b, t)
            + interval_term(p, a, b)
            + rhythm_term(p, ra, rb)
            + metric_term(p, a, b)
            - i64::from(p.fragment_penalty) * extra,
    )
}

// ---------------------------------------------------------------------------------------------
// The full-matrix recurrence.

/// The best local alignment score of `a` and `b` under transposition `t`.
fn reference_one(a: &[SeqNote], b: &[SeqNote], p: &AlignParams, t: i32) -> i64 {
    let (n, m) = (a.len(), b.len());
    let open = i64::from(p.gap_open);
    let extend = i64::from(p.gap_extend);
    let max_k = p.max_fragments.clamp(1, 3);
    let mut h = vec![vec![0i64; m + 1]; n + 1];
    let mut mm = vec![vec![NEG; m + 1]; n + 1];
    let mut ix = vec![vec![NEG; m + 1]; n + 1];
    let mut iy = vec![vec![NEG; m + 1]; n + 1];
    let mut best = 0;
    for i in 1..=n {
        for j in 1..=m {
            let (ai, bj) = (i - 1, j - 1);
            let mut value = h[i - 1][j - 1] + pair(p, a, ai, b, bj, t);
            for k in 2..=max_k {
                // Fragmentation: a_i against b_{j−k+1..=j}.
                if k <= j {
                    if let Some(s) = split_pair(p, a, ai, b, j - k, bj, t, true) {
                        value = value.max(h[i - 1][j - k] + s);
                    }
                }
                // Consolidation: a_{i−k+1..=i} against b_j.
                if k <= i {
                    if let Some(s) = split_pair(p, b, bj, a, i - k, ai, t, false) {
                        value = value.max(h[i - k][j - 1] + s);
                    }
                }
            }
            mm[i][j] = value;
            ix[i][j] = (h[i - 1][j] - open).max(ix[i - 1][j] - extend);
            iy[i][j] = (h[i][j - 1] - open).max(iy[i][j - 1] - extend);
            h[i][j] = 0.max(mm[i][j]).max(ix[i][j]).max(iy[i][j]);
            best = best.max(h[i][j]);
        }
    }
    best
}

/// The best over all 12 transpositions.
fn reference(a: &Sequence, b: &Sequence, p: &AlignParams) -> i64 {
    (0..12)
        .map(|t| reference_one(&a.notes, &b.notes, p, t))
        .max()
        .unwrap_or(0)
}

#[test]
fn reference_scores_a_hand_checked_case() {
    // Three identical notes: the first pair has no interval or ratio (pitch 8 + metric 1), the
    // next two score the full 15; best over t is t = 0.
    let events: Vec<Event> = vec![(Some(60), 4), (Some(62), 4), (Some(64), 4)];
    let s = Sequence::from_piece(&melody_piece(&events, 4, 4, 4));
    let p = AlignParams::default();
    assert_eq!(reference(&s, &s, &p), 9 + 2 * 15);
    // A half note against two repeated quarter notes: one fragmentation, 2 points cheaper
    // than the plain pair (pitch 8, interval 4, ratio 2 against 2 by the summed interval
    // agrees: 2, metric 1, minus 2).
    let whole: Vec<Event> = vec![(Some(60), 4), (Some(62), 8), (Some(64), 4)];
    let split: Vec<Event> = vec![(Some(60), 4), (Some(62), 4), (Some(62), 4), (Some(64), 4)];
    let a = Sequence::from_piece(&melody_piece(&whole, 4, 4, 4));
    let b = Sequence::from_piece(&melody_piece(&split, 4, 4, 4));
    // Last pair: 64 after a half note against 64 after a quarter: ratios 4/8 and 4/4 differ
    // by one octave (near: 0), same interval (4), both on the fourth beat (1).
    assert_eq!(reference(&a, &b, &p), 9 + 13 + (8 + 4 + 1));
    assert_eq!(i64::from(best_score(&a, &b, &p)), reference(&a, &b, &p));
}

// ---------------------------------------------------------------------------------------------
// Random melodies.

/// A random melody of `len` notes in sixteenths: a walk of steps with some leaps (a few beyond
/// two octaves), repeated notes, notes split into two or three equal repeated notes, and rests.
fn random_melody(rng: &mut ChaCha8Rng, len: usize) -> Vec<Event> {
    let mut out: Vec<Event> = Vec::new();
    let mut pitch: i32 = rng.gen_range(55..=75);
    let mut notes = 0;
    while notes < len {
        if rng.gen_bool(0.06) {
            out.push((None, [2, 4][rng.gen_range(0..2)]));
        }
        let step = match rng.gen_range(0..20) {
            0..=4 => 0,
            5 => rng.gen_range(-30i32..=30),
            _ => rng.gen_range(-5i32..=5),
        };
        pitch = (pitch + step).clamp(30, 100);
        let length: u32 = [1, 2, 2, 3, 4, 4, 4, 6, 8, 12][rng.gen_range(0..10)];
        let parts: u32 = if length % 3 == 0 && rng.gen_bool(0.2) {
            3
        } else if length % 2 == 0 && rng.gen_bool(0.2) {
            2
        } else {
            1
        };
        for _ in 0..(parts as usize).min(len - notes) {
            out.push((Some(pitch), length / parts));
            notes += 1;
        }
    }
    out
}

/// A relative of `a`: an excerpt, transposed, with some notes split into repeats, repeats
/// merged, pitches and lengths changed, notes inserted and deleted.
fn relative(rng: &mut ChaCha8Rng, a: &[Event], len: usize) -> Vec<Event> {
    let start = rng.gen_range(0..=a.len() / 3);
    let shift = rng.gen_range(-6i32..=6);
    let mut out: Vec<Event> = Vec::new();
    for &(pitch, length) in &a[start..] {
        let pitch = pitch.map(|p| p + shift);
        match rng.gen_range(0..30) {
            0 if length % 2 == 0 => out.extend([(pitch, length / 2); 2]),
            1 if length % 3 == 0 => out.extend([(pitch, length / 3); 3]),
            2 => match out.last_mut() {
                Some(last) if last.0 == pitch => last.1 += length,
                _ => out.push((pitch, length)),
            },
            3 => out.push((pitch.map(|p| p + rng.gen_range(-2..=2)), length)),
            4 => out.push((pitch, length * 2)),
            5 => {}
            6 => out.extend([(pitch.map(|p| p + 3), 2), (pitch, length)]),
            _ => out.push((pitch, length)),
        }
    }
    while out.iter().filter(|e| e.0.is_some()).count() > len {
        out.pop();
    }
    out
}

fn sequence(events: &[Event], meter: (u32, u32)) -> Sequence {
    if events.iter().all(|e| e.0.is_none()) {
        return Sequence { notes: Vec::new() };
    }
    Sequence::from_piece(&melody_piece(events, 4, meter.0, meter.1))
}

fn parameter_sets() -> Vec<(&'static str, AlignParams)> {
    let base = AlignParams::default();
    vec![
        ("default", base.clone()),
        (
            "max_fragments 1",
            AlignParams {
                max_fragments: 1,
                ..base.clone()
            },
        ),
        (
            "max_fragments 2, penalty 0",
            AlignParams {
                max_fragments: 2,
                fragment_penalty: 0,
                ..base.clone()
            },
        ),
        (
            "cheap gaps 4/1, penalty 5, near terms",
            AlignParams {
                gap_open: 4,
                gap_extend: 1,
                fragment_penalty: 5,
                interval_near: 1,
                rhythm_near: -1,
                pitch_near: -2,
                min_score: 30,
                ..base.clone()
            },
        ),
        (
            "linear gaps 6/6, heavy rhythm and metre, max_fragments 5",
            AlignParams {
                gap_open: 6,
                gap_extend: 6,
                rhythm_match: 5,
                rhythm_mismatch: -6,
                metric_match: 3,
                fragment_penalty: 1,
                max_fragments: 5,
                min_notes: 3,
                ..base.clone()
            },
        ),
        (
            "max_fragments 3, gap open 30 extend 1",
            AlignParams {
                gap_open: 30,
                gap_extend: 1,
                interval_match: 6,
                interval_mismatch: -2,
                min_score: 90,
                ..base
            },
        ),
    ]
}

#[test]
fn the_scan_and_the_first_passage_equal_the_full_matrix_reference() {
    let mut rng = ChaCha8Rng::seed_from_u64(SEED);
    let meters = [(4, 4), (3, 4), (6, 8), (2, 4)];
    let sets = parameter_sets();
    let mut compared = 0usize;
    let mut passages = 0usize;
    let mut fragment_cases = 0usize;
    for case in 0..PAIRS {
        let n = rng.gen_range(0..=60usize);
        let m = rng.gen_range(0..=60usize);
        let ea = random_melody(&mut rng, n);
        let eb = if rng.gen_bool(0.6) && !ea.is_empty() {
            relative(&mut rng, &ea, m)
        } else {
            random_melody(&mut rng, m)
        };
        let a = sequence(&ea, meters[rng.gen_range(0..meters.len())]);
        let b = sequence(&eb, meters[rng.gen_range(0..meters.len())]);
        for (name, p) in &sets {
            let expected = reference(&a, &b, p);
            let fast = i64::from(best_score(&a, &b, p));
            let what = || {
                format!(
                    "seed {SEED:#x}, case {case}, parameters \"{name}\", {} against {} notes\n\
                     A {ea:?}\nB {eb:?}",
                    a.len(),
                    b.len()
                )
            };
            assert_eq!(
                fast,
                expected,
                "best_score {fast} but the reference {expected}: {}",
                what()
            );
            // The first passage, when the best alignment is long and strong enough, is it.
            let any_length = AlignParams {
                min_notes: 1,
                max_passages: 1,
                ..p.clone()
            };
            let top = align(&a, &b, &any_length);
            if expected >= i64::from(p.min_score) {
                let Some(top) = top.first() else {
                    panic!("no passage, the reference {expected}: {}", what());
                };
                assert_eq!(
                    i64::from(top.score),
                    expected,
                    "first passage {} but the reference {expected}: {}",
                    top.score,
                    what()
                );
                if top.steps.iter().any(|s| {
                    matches!(
                        s,
                        collatio::align::Step::Fragmentation { .. }
                            | collatio::align::Step::Consolidation { .. }
                    )
                }) {
                    fragment_cases += 1;
                }
                let long = |r: (usize, usize)| r.1 - r.0 + 1 >= p.min_notes;
                let listed = align(&a, &b, p);
                if long(top.a_range) && long(top.b_range) {
                    passages += 1;
                    let first = listed.first().map(|x| i64::from(x.score));
                    assert_eq!(
                        first,
                        Some(expected),
                        "first passage {first:?} but the reference {expected}: {}",
                        what()
                    );
                } else if let Some(first) = listed.first() {
                    assert!(i64::from(first.score) <= expected, "{}", what());
                }
            } else {
                assert!(top.is_empty(), "a passage below min_score: {}", what());
            }
            compared += 1;
        }
    }
    eprintln!(
        "{compared} comparisons, {passages} first passages checked, \
         {fragment_cases} best alignments with a fragmentation or consolidation"
    );
    assert!(passages > 100 && fragment_cases > 20);
}

/// A melody's score against itself, taken along the diagonal in linear time, equals the full
/// reference's best local score of the melody with itself, for every parameter set, and the
/// scan's.
#[test]
fn the_self_score_equals_the_best_self_alignment() {
    let mut rng = ChaCha8Rng::seed_from_u64(SEED ^ 0x5E1F);
    for (name, params) in parameter_sets() {
        for case in 0..60 {
            let len = rng.gen_range(1..=60);
            let meter = [(4, 4), (3, 4), (6, 8), (2, 2)][case % 4];
            let seq = sequence(&random_melody(&mut rng, len), meter);
            let full = reference(&seq, &seq, &params);
            let fast = collatio::align::self_score(&seq, (0, seq.len().saturating_sub(1)), &params);
            assert_eq!(
                i64::from(fast),
                full,
                "{name}, case {case}: {} notes, self score {fast}, reference {full}",
                seq.len()
            );
            assert_eq!(fast, best_score(&seq, &seq, &params), "{name}, case {case}");
        }
    }
}
