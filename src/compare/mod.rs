//! Comparing two pieces: sequences, alignment, and the measures of every shared passage.
//!
//! In: two [`Piece`]s (each with its selected melody) and [`AlignParams`]. Out: a
//! [`Comparison`] holding, for each passage, where it lies in both works (bar labels as
//! printed, beats, seconds), how many notes, the transposition, the tempo ratio, the score, the
//! percent melodic identity, its relatedness, agreement shares and the aligned note pairs;
//! and, for the whole pair, the relatedness and the coverage.
//!
//! Definitions (also in `docs/compare.md`):
//! - **PMI** (percent melodic identity, after Savage, Cronin, Müllensiefen & Atkinson 2018):
//!   100 × (notes of A in identical pairs + notes of B in identical pairs) / (notes of A in the
//!   passage + notes of B in the passage). A pair is identical when the pitch classes agree
//!   under the passage's transposition. Without fragmentation this equals their formula,
//!   identical aligned positions over the mean length of the two sequences; with it, a note
//!   split into two equal notes counts as identical on both sides instead of leaving a gap.
//! - **Relatedness** of two melodies: their best local alignment score S(a, b) over the
//!   geometric mean of each melody's score against itself, S(a, b) / √(S(a, a) · S(b, b)),
//!   capped to [0, 1]. 1 means identical melodies (in any key and tempo); it does not grow with
//!   length, so pairs of any lengths compare on one scale, and a melody's own make-up (a
//!   plain tune scores less against itself than a busy one) is in the denominator. The
//!   normalisation by self-alignment scores is common in sequence comparison; its effect on
//!   telling tune families from unrelated tunes is measured in `docs/relatedness.md`.
//! - **Relatedness of a passage**: its score over the geometric mean of the self scores of the
//!   notes it spans on each side (how close the passage comes to an exact copy of itself).
//! - **Coverage**: the passages' scores, each counted only for the notes of the shorter melody
//!   that no stronger passage already covers, over the score the shorter melody would get
//!   aligned with itself, capped to [0, 1]: the share of the shorter melody's possible evidence
//!   that the shared passages carry.

pub mod differences;
pub mod harmony;
pub mod pairing;
pub mod recurrence;
pub mod sync;

use crate::align::{align_searched, self_score, AlignParams, Alignment, SearchMethod, Step};
use crate::features::Sequence;
use crate::theory::{describe_transposition, key_name};
use crate::timeline::{Note, Piece};
use serde::Serialize;

/// One of the two works compared.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Side {
    /// The first work.
    A,
    /// The second work.
    B,
}

impl Side {
    /// The other work.
    pub fn other(self) -> Side {
        match self {
            Side::A => Side::B,
            Side::B => Side::A,
        }
    }

    /// The letter, `A` or `B`.
    pub fn letter(self) -> &'static str {
        match self {
            Side::A => "A",
            Side::B => "B",
        }
    }
}

/// Log-ratio tolerance under which two rhythms count as the same (as in the pair score).
const RHYTHM_SAME: f64 = 0.1;

/// The result of comparing two pieces.
#[derive(Debug, Clone, Serialize)]
pub struct Comparison {
    /// Shared passages, strongest first.
    pub passages: Vec<Passage>,
    /// Relatedness of the two melodies (see the module documentation).
    pub relatedness: Relatedness,
    /// Coverage in [0, 1] (see the module documentation).
    pub coverage: f64,
    /// Notes in A's melody.
    pub notes_a: usize,
    /// Notes in B's melody.
    pub notes_b: usize,
    /// Notes of A's melody inside no passage.
    pub unmatched_a: usize,
    /// Notes of B's melody inside no passage.
    pub unmatched_b: usize,
    /// How the passages were searched for: every note pair, or from seeds in long works.
    pub search: SearchMethod,
}

/// How related two melodies are, with the scores it comes from.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Relatedness {
    /// S(a, b) / √(S(a, a) · S(b, b)), in [0, 1].
    pub value: f64,
    /// S(a, b): the best local alignment score over all 12 transpositions.
    pub best_score: i32,
    /// S(a, a): A's melody aligned with itself.
    pub self_score_a: i32,
    /// S(b, b): B's melody aligned with itself.
    pub self_score_b: i32,
}

impl Relatedness {
    /// The figure from its three scores.
    pub fn of(best_score: i32, self_score_a: i32, self_score_b: i32) -> Relatedness {
        Relatedness {
            value: normalised(best_score, self_score_a, self_score_b),
            best_score,
            self_score_a,
            self_score_b,
        }
    }
}

/// A score over the geometric mean of two self scores, capped to [0, 1] (0 when either self
/// score is not positive).
fn normalised(score: i32, self_a: i32, self_b: i32) -> f64 {
    let denominator = (f64::from(self_a) * f64::from(self_b)).sqrt();
    if self_a <= 0 || self_b <= 0 {
        return 0.0;
    }
    (f64::from(score) / denominator).clamp(0.0, 1.0)
}

/// Where a passage lies in one work.
#[derive(Debug, Clone, Serialize)]
pub struct PassageSide {
    /// First and last bar label, as printed.
    pub bars: [String; 2],
    /// First and last bar ordinal.
    pub bar_indices: [usize; 2],
    /// Beat within the first bar of the first note (1-based, time-signature unit).
    pub start_beat: f64,
    /// Beat within the last bar of the last note's onset.
    pub end_beat: f64,
    /// Onset of the first note, quarter notes from the start.
    pub onset_beats: f64,
    /// End of the last note, quarter notes from the start.
    pub end_beats: f64,
    /// Onset of the first note in seconds.
    pub onset_seconds: f64,
    /// End of the last note in seconds.
    pub end_seconds: f64,
    /// Notes of the melody in the passage.
    pub notes: usize,
    /// Index of the first and last melody note.
    pub note_range: [usize; 2],
    /// Notes of the passage with no counterpart in the other work.
    pub unmatched: usize,
    /// Key signature in force at the start, e.g. `G major`.
    pub key: Option<String>,
}

/// Shares of aligned pairs that agree, each in [0, 1].
#[derive(Debug, Clone, Serialize)]
pub struct Agreement {
    /// Same pitch class under the transposition.
    pub pitch_class: f64,
    /// Same interval into the note (pairs after the first).
    pub interval: f64,
    /// Same inter-onset ratio to the previous note (pairs after the first).
    pub rhythm: f64,
    /// Same metric level.
    pub metric_position: f64,
}

/// What one aligned step pairs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PairKind {
    /// One note each side, the same pitch class under the transposition.
    Match,
    /// One note each side, another pitch class.
    Mismatch,
    /// One note of A against repeated notes of B (a note split).
    Fragmentation,
    /// Repeated notes of A against one note of B (notes merged).
    Consolidation,
    /// A note of A with no counterpart.
    OnlyA,
    /// A note of B with no counterpart.
    OnlyB,
}

impl PairKind {
    /// Whether notes of both works take part.
    pub fn is_aligned(self) -> bool {
        !matches!(self, PairKind::OnlyA | PairKind::OnlyB)
    }
}

/// One aligned step, as melody note indices of each work.
#[derive(Debug, Clone, Serialize)]
pub struct PairRecord {
    /// What the step pairs.
    pub kind: PairKind,
    /// Melody note indices of A (empty for `only_b`).
    pub a: Vec<usize>,
    /// Melody note indices of B (empty for `only_a`).
    pub b: Vec<usize>,
    /// Whether the pitch classes agree under the transposition.
    pub equal: bool,
}

/// One shared passage.
#[derive(Debug, Clone, Serialize)]
pub struct Passage {
    /// Position in the list, 1 = strongest.
    pub rank: usize,
    /// Where it lies in A.
    pub a: PassageSide,
    /// Where it lies in B.
    pub b: PassageSide,
    /// B relative to A in semitones, octaves included (median over identical pairs).
    pub transposition_semitones: i32,
    /// The same as an interval and direction, e.g. `down a minor third`.
    pub transposition: String,
    /// How much faster B performs the passage than A: A's seconds over B's, from the first to
    /// the last aligned onset.
    pub tempo_ratio: f64,
    /// B's notated length of the passage over A's, in quarter notes (2 = B in doubled values).
    pub note_value_ratio: f64,
    /// Alignment score in points.
    pub score: i32,
    /// Percent melodic identity (module documentation).
    pub pmi: f64,
    /// The passage's score over the geometric mean of the self scores of its notes on each
    /// side, in [0, 1] (module documentation).
    pub relatedness: f64,
    /// Agreement shares.
    pub agreement: Agreement,
    /// The alignment path.
    pub pairs: Vec<PairRecord>,
}

/// Compares the selected melodies of two pieces.
pub fn compare(a: &Piece, b: &Piece, params: &AlignParams) -> Comparison {
    let seq_a = Sequence::from_piece(a);
    let seq_b = Sequence::from_piece(b);
    let (alignments, best, search) = align_searched(&seq_a, &seq_b, params);
    let passages: Vec<Passage> = alignments
        .iter()
        .enumerate()
        .map(|(i, al)| passage(i + 1, al, (a, b), (&seq_a, &seq_b), params))
        .collect();
    let coverage = coverage(&alignments, seq_a.len(), seq_b.len(), params);
    let whole = |seq: &Sequence| self_score(seq, (0, seq.len().saturating_sub(1)), params);
    let relatedness = Relatedness::of(best, whole(&seq_a), whole(&seq_b));
    let covered = |len: usize, ranges: Vec<(usize, usize)>| {
        let mut inside = vec![false; len];
        for (lo, hi) in ranges {
            for flag in inside.iter_mut().take(hi + 1).skip(lo) {
                *flag = true;
            }
        }
        inside.iter().filter(|f| !**f).count()
    };
    Comparison {
        relatedness,
        coverage,
        notes_a: seq_a.len(),
        notes_b: seq_b.len(),
        unmatched_a: covered(seq_a.len(), alignments.iter().map(|x| x.a_range).collect()),
        unmatched_b: covered(seq_b.len(), alignments.iter().map(|x| x.b_range).collect()),
        passages,
        search,
    }
}

/// Coverage: the passages' scores, each counted only for the notes of the shorter melody that
/// no stronger passage already covers, over the score of the shorter melody aligned with
/// itself; capped to [0, 1].
fn coverage(alignments: &[Alignment], len_a: usize, len_b: usize, params: &AlignParams) -> f64 {
    let a_is_shorter = len_a <= len_b;
    let shorter = len_a.min(len_b);
    let best = shorter as f64 * f64::from(params.identical_pair());
    if best <= 0.0 {
        return 0.0;
    }
    let mut covered = vec![false; shorter];
    let mut total = 0.0;
    for al in alignments {
        let (lo, hi) = if a_is_shorter { al.a_range } else { al.b_range };
        let hi = hi.min(shorter.saturating_sub(1));
        if lo > hi {
            continue;
        }
        let fresh = covered[lo..=hi].iter().filter(|c| !**c).count();
        total += f64::from(al.score) * fresh as f64 / (hi - lo + 1) as f64;
        for c in &mut covered[lo..=hi] {
            *c = true;
        }
    }
    (total / best).clamp(0.0, 1.0)
}

fn side(piece: &Piece, range: (usize, usize), unmatched: usize) -> PassageSide {
    let first: &Note = &piece.melody[range.0];
    let last: &Note = &piece.melody[range.1];
    let label = |bar: usize| {
        piece
            .bars
            .get(bar)
            .map_or_else(String::new, |b| b.label.clone())
    };
    let key = piece
        .key_at(first.onset_ticks)
        .map(|k| key_name(k.fifths, k.mode));
    // One rule for bars and beats: a recording's onsets are read on the beat grid.
    let (first_bar, start_beat) = piece.grid_beat(first);
    let (last_bar, end_beat) = piece.grid_beat(last);
    PassageSide {
        bars: [label(first_bar), label(last_bar.max(first_bar))],
        bar_indices: [first_bar, last_bar.max(first_bar)],
        start_beat,
        end_beat,
        onset_beats: first.onset.0,
        end_beats: last.onset.0 + last.duration.0,
        onset_seconds: first.onset_seconds.0,
        end_seconds: last.onset_seconds.0 + last.duration_seconds.0,
        notes: range.1 - range.0 + 1,
        note_range: [range.0, range.1],
        unmatched,
        key,
    }
}

fn passage(
    rank: usize,
    al: &Alignment,
    (a, b): (&Piece, &Piece),
    (seq_a, seq_b): (&Sequence, &Sequence),
    params: &AlignParams,
) -> Passage {
    let t = al.transposition;
    let equal = |i: usize, j: usize| {
        (seq_b.notes[j].pitch_class + 24 - seq_a.notes[i].pitch_class - t) % 12 == 0
    };
    let mut pairs = Vec::with_capacity(al.steps.len());
    // Aligned (a, b) note pairs used for the agreement measures: the first note of each group.
    let mut aligned: Vec<(usize, usize, bool)> = Vec::new();
    let mut identical_a = 0usize;
    let mut identical_b = 0usize;
    let mut only_a = 0usize;
    let mut only_b = 0usize;
    let mut differences: Vec<i32> = Vec::new();
    for step in &al.steps {
        let (kind, av, bv, first_a, first_b) = match *step {
            Step::Pair { a, b } => {
                let e = equal(a, b);
                (
                    if e {
                        PairKind::Match
                    } else {
                        PairKind::Mismatch
                    },
                    vec![a],
                    vec![b],
                    a,
                    b,
                )
            }
            Step::Fragmentation { a, b_first, b_last } => (
                PairKind::Fragmentation,
                vec![a],
                (b_first..=b_last).collect(),
                a,
                b_first,
            ),
            Step::Consolidation { a_first, a_last, b } => (
                PairKind::Consolidation,
                (a_first..=a_last).collect(),
                vec![b],
                a_first,
                b,
            ),
            Step::OnlyA { a } => {
                only_a += 1;
                pairs.push(PairRecord {
                    kind: PairKind::OnlyA,
                    a: vec![a],
                    b: Vec::new(),
                    equal: false,
                });
                continue;
            }
            Step::OnlyB { b } => {
                only_b += 1;
                pairs.push(PairRecord {
                    kind: PairKind::OnlyB,
                    a: Vec::new(),
                    b: vec![b],
                    equal: false,
                });
                continue;
            }
        };
        let e = equal(first_a, first_b);
        if e {
            identical_a += av.len();
            identical_b += bv.len();
            differences.push(seq_b.notes[first_b].pitch - seq_a.notes[first_a].pitch);
        }
        aligned.push((first_a, first_b, e));
        pairs.push(PairRecord {
            kind,
            a: av,
            b: bv,
            equal: e,
        });
    }
    let notes_a = al.a_range.1 - al.a_range.0 + 1;
    let notes_b = al.b_range.1 - al.b_range.0 + 1;
    let pmi = 100.0 * (identical_a + identical_b) as f64 / (notes_a + notes_b) as f64;

    differences.sort_unstable();
    let transposition_semitones = match differences.get(differences.len() / 2) {
        Some(&d) => d,
        None => {
            let t = i32::from(t);
            if t > 6 {
                t - 12
            } else {
                t
            }
        }
    };

    let share = |count: usize, total: usize| {
        if total == 0 {
            0.0
        } else {
            count as f64 / total as f64
        }
    };
    let pitch_class = share(aligned.iter().filter(|x| x.2).count(), aligned.len());
    let later = aligned.get(1..).unwrap_or(&[]);
    let interval = share(
        later
            .iter()
            .filter(|&&(i, j, _)| {
                seq_a.notes[i].interval.is_some()
                    && seq_a.notes[i].interval == seq_b.notes[j].interval
            })
            .count(),
        later.len(),
    );
    let rhythm = share(
        later
            .iter()
            .filter(|&&(i, j, _)| {
                match (seq_a.notes[i].log_ioi_ratio, seq_b.notes[j].log_ioi_ratio) {
                    (Some(x), Some(y)) => (x - y).abs() <= RHYTHM_SAME,
                    _ => false,
                }
            })
            .count(),
        later.len(),
    );
    let metric_position = share(
        aligned
            .iter()
            .filter(|&&(i, j, _)| seq_a.notes[i].metric == seq_b.notes[j].metric)
            .count(),
        aligned.len(),
    );

    let (tempo_ratio, note_value_ratio) = match (aligned.first(), aligned.last()) {
        (Some(&(a0, b0, _)), Some(&(a1, b1, _))) if a1 > a0 && b1 > b0 => {
            let secs_a = a.melody[a1].onset_seconds.0 - a.melody[a0].onset_seconds.0;
            let secs_b = b.melody[b1].onset_seconds.0 - b.melody[b0].onset_seconds.0;
            let beats_a = a.melody[a1].onset.0 - a.melody[a0].onset.0;
            let beats_b = b.melody[b1].onset.0 - b.melody[b0].onset.0;
            (
                if secs_b > 0.0 { secs_a / secs_b } else { 1.0 },
                if beats_a > 0.0 {
                    beats_b / beats_a
                } else {
                    1.0
                },
            )
        }
        _ => (1.0, 1.0),
    };

    Passage {
        rank,
        a: side(a, al.a_range, only_a),
        b: side(b, al.b_range, only_b),
        transposition_semitones,
        transposition: describe_transposition(transposition_semitones),
        tempo_ratio,
        note_value_ratio,
        score: al.score,
        pmi,
        relatedness: normalised(
            al.score,
            self_score(seq_a, al.a_range, params),
            self_score(seq_b, al.b_range, params),
        ),
        agreement: Agreement {
            pitch_class,
            interval,
            rhythm,
            metric_position,
        },
        pairs,
    }
}
