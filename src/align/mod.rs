//! Melodic local alignment, invariant to key and tempo.
//!
//! In: two [`Sequence`]s (from [`crate::features`]) and [`AlignParams`]. Out: the shared
//! passages as [`Alignment`]s, strongest first, none overlapping another in both works.
//!
//! Method:
//! - Smith–Waterman local alignment (Smith & Waterman 1981) with affine gaps, a gap of length k
//!   costing `gap_open + (k − 1) · gap_extend` (Gotoh 1982), over note sequences.
//! - The pair score ([`score`]) rewards the same pitch class under a transposition, the same
//!   interval into the note, the same inter-onset ratio (log scale) and the same metric level,
//!   with partial credit for near misses. Every term is invariant to transposition except the
//!   pitch term, which is evaluated under each of the 12 transpositions; every term is a ratio
//!   of durations, so scaling all durations leaves scores unchanged.
//! - Fragmentation and consolidation (Mongeau & Sankoff 1990): one note against two or three
//!   repeated notes of one pitch, as when different lyrics split a note.
//! - Several passages by declumping (after Waterman & Eggert 1987): once a passage is reported,
//!   the rectangle it spans (its A notes × its B notes) is closed and the next best alignment
//!   is found, so passages never overlap in both works at once (a chorus of A that recurs may
//!   still match the same bars of B twice).
//! - A linear-memory scan finds each best score and the rectangle it spans; the full traceback
//!   runs only inside that rectangle.
//!
//! ```
//! use collatio::align::{align, AlignParams};
//! use collatio::features::Sequence;
//! let empty = Sequence { notes: Vec::new() };
//! assert!(align(&empty, &empty, &AlignParams::default()).is_empty());
//! ```

mod band;
pub mod harmony;
mod lanes;
mod scan;
pub(crate) mod score;
pub mod seeded;
pub mod sync;
#[cfg(test)]
mod testing;
mod trace;

use crate::features::Sequence;
use scan::{Blocked, Hit};
use score::Scorer;
pub use seeded::SearchMethod;
use serde::Serialize;

/// Cells (notes of A × notes of B) above which passages are searched for from seeds
/// ([`seeded`]) rather than over the full matrix: about 2,000 notes against 2,000, where the
/// full search with its declumping takes a few seconds on one laptop core. Below it, every
/// note pair under every transposition is aligned.
pub const FULL_SEARCH_MAX_CELLS: u64 = 4_000_000;

/// Whether a pair of these lengths is searched from seeds.
pub fn is_seeded(len_a: usize, len_b: usize) -> bool {
    len_a as u64 * len_b as u64 > FULL_SEARCH_MAX_CELLS
}

/// Parameters of the alignment, in score points. Defaults favour the melody's pitches and
/// intervals; rhythm and metre are secondary evidence. They are set so that an unrelated pair
/// of diatonic notes scores about −4 on average (a local alignment needs a negative
/// expectation), after the log-odds reasoning of substitution scores: a pitch-class match
/// under the key's transposition happens by chance about one time in five, so it is worth
/// about as much as a mismatch costs; a near miss (a step away) is common by chance and is
/// only a lesser penalty.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AlignParams {
    /// Same pitch class under the transposition. Default 8.
    pub pitch_match: i32,
    /// One semitone away (a near miss). Default −4.
    pub pitch_near: i32,
    /// Any other pitch. Default −8.
    pub pitch_mismatch: i32,
    /// Same interval (semitones) into both notes. Default 4.
    pub interval_match: i32,
    /// Same direction, within two semitones. Default 0.
    pub interval_near: i32,
    /// Other intervals. Default −4.
    pub interval_mismatch: i32,
    /// Same inter-onset ratio to the previous note (within 0.1 in log2). Default 2.
    pub rhythm_match: i32,
    /// Ratios within a factor of two of each other. Default 0.
    pub rhythm_near: i32,
    /// Other ratios. Default −3.
    pub rhythm_mismatch: i32,
    /// Same metric level (downbeat, strong, weak, off-beat). Default 1.
    pub metric_match: i32,
    /// Cost of the first note of a gap. Default 16.
    pub gap_open: i32,
    /// Cost of each further note of a gap. Default 8.
    pub gap_extend: i32,
    /// Cost per extra note in a fragmentation or consolidation. Default 2.
    pub fragment_penalty: i32,
    /// Most notes one note may be split into (1 turns fragmentation off, at most 3).
    /// Default 3.
    pub max_fragments: usize,
    /// Lowest score reported as a passage. Default 60 (about four identical notes).
    pub min_score: i32,
    /// Fewest notes on each side for a passage. Default 5.
    pub min_notes: usize,
    /// Most passages reported per pair. Default 20.
    pub max_passages: usize,
    /// Search every note pair under every transposition even in long works, where passages
    /// are otherwise searched for from seeds ([`is_seeded`]). Default false.
    pub full_search: bool,
}

impl Default for AlignParams {
    fn default() -> Self {
        AlignParams {
            pitch_match: 8,
            pitch_near: -4,
            pitch_mismatch: -8,
            interval_match: 4,
            interval_near: 0,
            interval_mismatch: -4,
            rhythm_match: 2,
            rhythm_near: 0,
            rhythm_mismatch: -3,
            metric_match: 1,
            gap_open: 16,
            gap_extend: 8,
            fragment_penalty: 2,
            max_fragments: 3,
            min_score: 60,
            min_notes: 5,
            max_passages: 20,
            full_search: false,
        }
    }
}

impl AlignParams {
    /// Whether a pair of these lengths is searched from seeds with these parameters: long
    /// works ([`is_seeded`]) unless the full search is asked for.
    pub fn seeds(&self, len_a: usize, len_b: usize) -> bool {
        !self.full_search && is_seeded(len_a, len_b)
    }

    /// The score of a note paired with an identical note (all four terms agreeing).
    pub fn identical_pair(&self) -> i32 {
        self.pitch_match + self.interval_match + self.rhythm_match + self.metric_match
    }
}

/// One step of an alignment path; indices are note positions in the two sequences.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Step {
    /// a and b aligned (equal or not).
    Pair {
        /// Note of A.
        a: usize,
        /// Note of B.
        b: usize,
    },
    /// One note of A against repeated notes of B (fragmentation).
    Fragmentation {
        /// Note of A.
        a: usize,
        /// First note of B.
        b_first: usize,
        /// Last note of B.
        b_last: usize,
    },
    /// Repeated notes of A against one note of B (consolidation).
    Consolidation {
        /// First note of A.
        a_first: usize,
        /// Last note of A.
        a_last: usize,
        /// Note of B.
        b: usize,
    },
    /// A note of A with no counterpart in B.
    OnlyA {
        /// Note of A.
        a: usize,
    },
    /// A note of B with no counterpart in A.
    OnlyB {
        /// Note of B.
        b: usize,
    },
}

/// A local alignment: one shared passage.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Alignment {
    /// Transposition from A to B in semitones modulo 12 (B = A + t).
    pub transposition: u8,
    /// Alignment score in points.
    pub score: i32,
    /// First and last note of A (inclusive).
    pub a_range: (usize, usize),
    /// First and last note of B (inclusive).
    pub b_range: (usize, usize),
    /// The path, first step first.
    pub steps: Vec<Step>,
}

/// Finds the shared passages of two sequences, strongest first.
pub fn align(a: &Sequence, b: &Sequence, params: &AlignParams) -> Vec<Alignment> {
    align_scored(a, b, params).0
}

/// The shared passages of two sequences, strongest first, and the best local alignment score
/// over all 12 transpositions ([`best_score`], found by the same first scan; it may lie below
/// `min_score`, or belong to an alignment too short to report).
pub fn align_scored(a: &Sequence, b: &Sequence, params: &AlignParams) -> (Vec<Alignment>, i32) {
    let (passages, best, _) = align_searched(a, b, params);
    (passages, best)
}

/// [`align_scored`] with the record of how the passages were searched for: over the full
/// matrix, or from seeds when the works are long ([`is_seeded`]).
pub fn align_searched(
    a: &Sequence,
    b: &Sequence,
    params: &AlignParams,
) -> (Vec<Alignment>, i32, SearchMethod) {
    if params.seeds(a.len(), b.len()) && params.max_passages > 0 {
        return seeded::align_seeded(a, b, params);
    }
    let (passages, best) = align_full(a, b, params);
    (passages, best, SearchMethod::Full)
}

/// The full search of [`align_scored`]: every cell under every transposition, whatever the
/// length of the works.
pub fn align_full(a: &Sequence, b: &Sequence, params: &AlignParams) -> (Vec<Alignment>, i32) {
    if a.is_empty() || b.is_empty() || params.max_passages == 0 {
        let best = if params.max_passages == 0 {
            best_score(a, b, params)
        } else {
            0
        };
        return (Vec::new(), best);
    }
    let scorer = Scorer::new(a, b, params);
    let mut blocked = Blocked::default();
    // The best score under each transposition from the score-only kernel; paths are tracked
    // only under the transpositions whose best reaches the reporting threshold.
    let contexts = scan::Contexts::kept(&scorer);
    let bounds = lanes::best_per_transposition(&scorer, params, &contexts);
    let best = bounds.iter().copied().max().unwrap_or(0);
    let worth: Vec<u8> = (0..12u8)
        .filter(|&t| bounds[usize::from(t)] >= params.min_score)
        .collect();
    let mut leads: Vec<Lead> = bounds
        .iter()
        .map(|&score| Lead {
            score,
            hit: None,
            fresh: true,
        })
        .collect();
    for (t, hit) in worth.iter().zip(scan::scan_many::<true>(
        &scorer, params, &worth, &blocked, &contexts,
    )) {
        leads[usize::from(*t)] = Lead::found(hit);
    }
    let mut out = Vec::new();
    let mut guard = 0usize;
    while out.len() < params.max_passages && guard < 12 * (params.max_passages + 4) * 4 {
        guard += 1;
        // The transposition with the highest (possibly stale) bound; lower t wins ties.
        let Some(t) =
            (0..12usize).max_by(|&x, &y| leads[x].score.cmp(&leads[y].score).then(y.cmp(&x)))
        else {
            break;
        };
        let lead = leads[t];
        if lead.score < params.min_score || lead.score <= 0 {
            break;
        }
        if !lead.fresh {
            // Every stale transposition that could still beat the best fresh one is scanned
            // again, together, so that the transposition-free part of each row is computed
            // once for all of them.
            let fresh_best = leads
                .iter()
                .filter(|l| l.fresh)
                .map(|l| l.score)
                .max()
                .unwrap_or(0)
                .max(params.min_score);
            let stale: Vec<u8> = (0..12u8)
                .filter(|&u| {
                    let l = leads[usize::from(u)];
                    !l.fresh && l.score >= fresh_best
                })
                .collect();
            let again = scan::scan_many::<true>(&scorer, params, &stale, &blocked, &contexts);
            for (u, found) in stale.into_iter().zip(again) {
                leads[usize::from(u)] = Lead::found(found);
            }
            continue;
        }
        let Some(hit) = lead.hit else { break };
        let (steps, score) = trace::trace(&scorer, params, t as u8, &blocked, &hit);
        let a_range = span(&steps, true).unwrap_or((hit.start.0, hit.end.0));
        let b_range = span(&steps, false).unwrap_or((hit.start.1, hit.end.1));
        let closed = (
            (hit.start.0.min(a_range.0), hit.end.0.max(a_range.1)),
            (hit.start.1.min(b_range.0), hit.end.1.max(b_range.1)),
        );
        blocked.rects.push(closed);
        // Closing cells only lowers scores, so a transposition's best hit whose path (inside
        // the rectangle from its first to its last pair) misses the closed rectangle is still
        // its best, with the same first pair; only the others are scanned again.
        for lead in &mut leads {
            if lead.hit.is_some_and(|h| meets(&h, closed)) {
                lead.fresh = false;
            }
        }
        let notes_a = a_range.1 - a_range.0 + 1;
        let notes_b = b_range.1 - b_range.0 + 1;
        if notes_a >= params.min_notes && notes_b >= params.min_notes {
            out.push(Alignment {
                transposition: t as u8,
                score,
                a_range,
                b_range,
                steps,
            });
        }
    }
    (out, best)
}

/// The score of a melody aligned with itself, over notes `range` (inclusive; the whole melody
/// for `0..=len−1`): the best run of the diagonal pair scores, each note paired with itself at
/// transposition 0, each note keeping its interval and rhythm into the note before it. With
/// every match term at least as high as the near and mismatch terms (as the defaults are), no
/// other path scores higher, so this equals [`best_score`] of the melody with itself (checked
/// in the tests) at a cost linear in its length. 0 for an empty range.
pub fn self_score(seq: &Sequence, range: (usize, usize), params: &AlignParams) -> i32 {
    if seq.is_empty() || range.0 > range.1 {
        return 0;
    }
    let scorer = Scorer::new(seq, seq, params);
    let (mut best, mut run) = (0, 0);
    for i in range.0..=range.1.min(seq.len() - 1) {
        run = (run + scorer.pair(i, i, 0)).max(0);
        best = best.max(run);
    }
    best
}

/// The best local alignment score of two sequences over all 12 transpositions, without
/// traceback (0 when nothing aligns): the statistic of the null model. For long works
/// ([`is_seeded`]) it is the best score of the seeded search, the statistic that search
/// reports.
pub fn best_score(a: &Sequence, b: &Sequence, params: &AlignParams) -> i32 {
    if a.is_empty() || b.is_empty() {
        return 0;
    }
    if params.seeds(a.len(), b.len()) {
        return seeded::best_seeded(a, b, params);
    }
    best_score_full(a, b, params)
}

/// [`best_score`] over every cell under every transposition, whatever the lengths.
pub fn best_score_full(a: &Sequence, b: &Sequence, params: &AlignParams) -> i32 {
    if a.is_empty() || b.is_empty() {
        return 0;
    }
    let scorer = Scorer::new(a, b, params);
    lanes::best_over_transpositions(&scorer, params)
}

/// What the declumping loop knows of one transposition's best remaining alignment.
#[derive(Debug, Clone, Copy)]
struct Lead {
    /// Its score: exact when fresh, an upper bound when stale; 0 when nothing scores.
    score: i32,
    /// The alignment's first and last pair; `None` when only the score is known (a score
    /// below the reporting threshold, never reported, or nothing at all).
    hit: Option<Hit>,
    /// Whether it was computed with the current closed rectangles.
    fresh: bool,
}

impl Lead {
    /// The lead of a fresh scan.
    fn found(hit: Option<Hit>) -> Lead {
        Lead {
            score: hit.map_or(0, |h| h.score),
            hit,
            fresh: true,
        }
    }
}

/// Whether the rectangle of a hit (its first pair to its last) meets a closed rectangle.
fn meets(hit: &Hit, ((a0, a1), (b0, b1)): ((usize, usize), (usize, usize))) -> bool {
    hit.start.0 <= a1 && a0 <= hit.end.0 && hit.start.1 <= b1 && b0 <= hit.end.1
}

/// First and last note of one side touched by a path.
fn span(steps: &[Step], side_a: bool) -> Option<(usize, usize)> {
    let mut lo = usize::MAX;
    let mut hi = 0usize;
    for step in steps {
        let (first, last) = match (*step, side_a) {
            (Step::Pair { a, .. }, true) | (Step::Fragmentation { a, .. }, true) => (a, a),
            (Step::Pair { b, .. }, false) | (Step::Consolidation { b, .. }, false) => (b, b),
            (
                Step::Consolidation {
                    a_first, a_last, ..
                },
                true,
            ) => (a_first, a_last),
            (
                Step::Fragmentation {
                    b_first, b_last, ..
                },
                false,
            ) => (b_first, b_last),
            (Step::OnlyA { a }, true) => (a, a),
            (Step::OnlyB { b }, false) => (b, b),
            _ => continue,
        };
        lo = lo.min(first);
        hi = hi.max(last);
    }
    (lo <= hi).then_some((lo, hi))
}

/// The Karlin–Altschul λ of two melodies' own pair scores (Karlin & Altschul 1990, equation
/// 3: the positive root of Σ p(s) e^(λs) = 1, with p(s) the share of note pairs (i, j) whose
/// pair score is s), taken at the transposition where chance agreement is likeliest (the
/// smallest root of the twelve). It measures how readily these two melodies agree by chance:
/// two scale-wise tunes in one key agree more often than two angular ones, and their λ is
/// smaller. `None` when no root exists (no positive pair score, or a non-negative mean).
pub fn chance_lambda(a: &Sequence, b: &Sequence, params: &AlignParams) -> Option<f64> {
    if a.is_empty() || b.is_empty() {
        return None;
    }
    let scorer = Scorer::new(a, b, params);
    // Histogram of pair scores per transposition, scores offset into a dense range.
    let mut counts: Vec<std::collections::BTreeMap<i32, u64>> = vec![Default::default(); 12];
    for i in 0..a.len() {
        for j in 0..b.len() {
            let context = scorer.context(i, j);
            for (t, histogram) in counts.iter_mut().enumerate() {
                *histogram
                    .entry(context + scorer.pitch(i, j, t as u8))
                    .or_default() += 1;
            }
        }
    }
    let total = (a.len() * b.len()) as f64;
    counts
        .iter()
        .filter_map(|histogram| {
            let p: Vec<(f64, f64)> = histogram
                .iter()
                .map(|(&s, &c)| (f64::from(s), c as f64 / total))
                .collect();
            solve_lambda(&p)
        })
        .min_by(f64::total_cmp)
}

/// The positive root of Σ p e^(λs) = 1 by bisection, for a score distribution with a negative
/// mean and some positive score.
fn solve_lambda(p: &[(f64, f64)]) -> Option<f64> {
    let mean: f64 = p.iter().map(|(s, q)| s * q).sum();
    let top = p.iter().map(|x| x.0).fold(f64::MIN, f64::max);
    if mean >= 0.0 || top <= 0.0 {
        return None;
    }
    let f = |l: f64| p.iter().map(|(s, q)| q * (l * s).exp()).sum::<f64>() - 1.0;
    let (mut lo, mut hi) = (1e-9, 1.0);
    while f(hi) < 0.0 {
        hi *= 2.0;
        if hi > 1e6 {
            return None;
        }
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}
