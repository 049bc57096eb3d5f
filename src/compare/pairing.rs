//! Which lines to compare: the best few candidate melody lines of each work (ranked by
//! melody-likeness when read, [`crate::ingest::likeness`]) are paired, every pairing is scanned
//! for its best local alignment, and the pairing with the strongest passage (the highest best
//! local score; ties: the longer lines, then the higher relatedness, as in [`crate::compare`])
//! is the one compared in full. Relatedness alone would favour a short line that doubles part
//! of the tune (a saxophone joining the voice for eight bars) over the line that carries all
//! of it. Every pairing checked is kept with its figures, so that a report can say
//! what was and was not compared.

use crate::align::{best_score, self_score, AlignParams};
use crate::compare::Relatedness;
use crate::features::Sequence;
use crate::timeline::{MelodyCandidate, Piece};
use rayon::prelude::*;
use serde::Serialize;

/// Candidate lines per work paired by default.
pub const DEFAULT_CANDIDATES: usize = 3;

/// One candidate line of a pairing, as the record names it.
#[derive(Debug, Clone, Serialize)]
pub struct PairedLine {
    /// Rank of the line among its work's candidates, 1 = most melody-like.
    pub rank: usize,
    /// Part id.
    pub part: String,
    /// Part, staff and voice in words.
    pub label: String,
    /// Melody-likeness in [0, 1] (`null` when the line was the only one, or asked for).
    pub likeness: Option<f64>,
    /// Notes in the line.
    pub notes: usize,
}

/// One pairing of a line of A with a line of B, scanned for its best passage.
#[derive(Debug, Clone, Serialize)]
pub struct PairingCheck {
    /// The line of A.
    pub a: PairedLine,
    /// The line of B.
    pub b: PairedLine,
    /// Relatedness of the two lines as wholes, with its scores.
    pub relatedness: Relatedness,
    /// Whether the best passage reaches the reporting threshold (`min_score`).
    pub shares_passage: bool,
    /// Whether this is the pairing compared in full and reported.
    pub chosen: bool,
}

/// The label of the line a piece's melody was taken from: its candidate's, or its part's.
pub fn line_label(piece: &Piece) -> String {
    let s = &piece.selection;
    piece
        .candidates
        .iter()
        .find(|c| {
            c.selection.part == s.part
                && c.selection.staff == s.staff
                && c.selection.voice == s.voice
        })
        .map(|c| c.label.clone())
        .or_else(|| {
            piece.parts.get(s.part).map(|p| {
                if p.name.is_empty() {
                    p.id.clone()
                } else {
                    format!("{} \"{}\"", p.id, p.name)
                }
            })
        })
        .unwrap_or_else(|| "the melody".to_string())
}

/// The lines of a piece to pair: its first `limit` candidates, or the melody it already has
/// when it has none (recordings, corpus melodies).
fn lines(piece: &Piece, limit: usize) -> Vec<MelodyCandidate> {
    if piece.candidates.len() <= 1 {
        let label = piece.parts.get(piece.selection.part).map_or_else(
            || "the melody".to_string(),
            |p| {
                if p.name.is_empty() {
                    p.id.clone()
                } else {
                    format!("{} \"{}\"", p.id, p.name)
                }
            },
        );
        let label = piece.candidates.first().map_or(label, |c| c.label.clone());
        return vec![MelodyCandidate {
            selection: piece.selection.clone(),
            label,
            likeness: f64::NAN,
            features: Default::default(),
            melody: piece.melody.clone(),
        }];
    }
    piece
        .candidates
        .iter()
        .take(limit.max(1))
        .cloned()
        .collect()
}

/// Whether neither work offers more than one line: then there is no pairing to choose, and
/// [`single_pairing`] records the one pairing with the figures of the full comparison (which
/// spares a second scan of two long works).
pub fn single_line_each(a: &Piece, b: &Piece) -> bool {
    a.candidates.len() <= 1 && b.candidates.len() <= 1
}

/// The record of the one pairing of two works of one line each ([`single_line_each`]), with
/// the relatedness their comparison measured.
pub fn single_pairing(
    a: &Piece,
    b: &Piece,
    relatedness: Relatedness,
    params: &AlignParams,
) -> Vec<PairingCheck> {
    let (line_a, line_b) = (&lines(a, 1)[0], &lines(b, 1)[0]);
    vec![PairingCheck {
        a: paired_line(a, 0, line_a),
        b: paired_line(b, 0, line_b),
        relatedness,
        shares_passage: relatedness.best_score >= params.min_score,
        chosen: true,
    }]
}

fn paired_line(piece: &Piece, rank: usize, line: &MelodyCandidate) -> PairedLine {
    PairedLine {
        rank: rank + 1,
        part: piece
            .parts
            .get(line.selection.part)
            .map_or_else(String::new, |p| p.id.clone()),
        label: line.label.clone(),
        likeness: line.likeness.is_finite().then_some(line.likeness),
        notes: line.melody.len(),
    }
}

/// Pairs the first `limit` candidate lines of each work, scans every pairing, and leaves in
/// `a` and `b` the lines of the pairing with the highest best score (ties: the more notes in
/// the two lines, the higher relatedness, then the more melody-like lines, A's first); when no
/// pairing reaches the reporting threshold, the most melody-like line of each. Returns every pairing checked, in the
/// order A's rank, then B's rank.
pub fn choose_pairing(
    a: &mut Piece,
    b: &mut Piece,
    limit: usize,
    params: &AlignParams,
) -> Vec<PairingCheck> {
    let (lines_a, lines_b) = (lines(a, limit), lines(b, limit));
    let sequences = |piece: &mut Piece, lines: &[MelodyCandidate]| -> Vec<(Sequence, i32)> {
        let kept = std::mem::take(&mut piece.melody);
        let out = lines
            .iter()
            .map(|line| {
                piece.melody.clone_from(&line.melody);
                let seq = Sequence::from_piece(piece);
                let own = self_score(&seq, (0, seq.len().saturating_sub(1)), params);
                (seq, own)
            })
            .collect();
        piece.melody = kept;
        out
    };
    let (seq_a, seq_b) = (sequences(a, &lines_a), sequences(b, &lines_b));
    let pairs: Vec<(usize, usize)> = (0..lines_a.len())
        .flat_map(|i| (0..lines_b.len()).map(move |j| (i, j)))
        .collect();
    let scores: Vec<i32> = pairs
        .par_iter()
        .map(|&(i, j)| best_score(&seq_a[i].0, &seq_b[j].0, params))
        .collect();
    let mut checks: Vec<PairingCheck> = pairs
        .iter()
        .zip(&scores)
        .map(|(&(i, j), &score)| PairingCheck {
            a: paired_line(a, i, &lines_a[i]),
            b: paired_line(b, j, &lines_b[j]),
            relatedness: Relatedness::of(score, seq_a[i].1, seq_b[j].1),
            shares_passage: score >= params.min_score,
            chosen: false,
        })
        .collect();
    // With nothing shared anywhere, the most melody-like lines stand for the work.
    let anything = checks.iter().any(|c| c.shares_passage);
    let best = (0..checks.len()).filter(|_| anything).max_by(|&x, &y| {
        let (p, q) = (&checks[x], &checks[y]);
        p.relatedness
            .best_score
            .cmp(&q.relatedness.best_score)
            .then((p.a.notes + p.b.notes).cmp(&(q.a.notes + q.b.notes)))
            .then(p.relatedness.value.total_cmp(&q.relatedness.value))
            .then((q.a.rank + q.b.rank).cmp(&(p.a.rank + p.b.rank)))
            .then(q.a.rank.cmp(&p.a.rank))
    });
    let best = best.or((!checks.is_empty()).then_some(0));
    if let Some(k) = best {
        checks[k].chosen = true;
        let (i, j) = pairs[k];
        let note = (checks.len() > 1).then(|| {
            format!(
                "; compared because its pairing was the strongest of the {} checked",
                checks.len()
            )
        });
        for (piece, lines, line) in [
            (&mut *a, lines_a.len(), &lines_a[i]),
            (&mut *b, lines_b.len(), &lines_b[j]),
        ] {
            piece.selection = line.selection.clone();
            if let Some(note) = note.as_ref().filter(|_| lines > 1) {
                piece.selection.reason.push_str(note);
            }
            piece.melody = line.melody.clone();
        }
    }
    checks
}
