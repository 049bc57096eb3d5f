//! The linear-memory scoring pass: Smith–Waterman local alignment (Smith & Waterman 1981) with
//! affine gaps by Gotoh's three-state recurrence (Gotoh 1982), extended with fragmentation and
//! consolidation moves (Mongeau & Sankoff 1990). Memory is O(m) for an n × m problem: four rows
//! of H (consolidation looks up to three rows back), one row of F, one scalar E. Each cell also
//! carries the cell where its best path began, so that a reported alignment's rectangle is
//! known without storing the matrix; the traceback then runs on that rectangle only.

use super::score::Scorer;
use super::AlignParams;

/// Minus infinity for gap states, far from overflow when penalties are subtracted.
pub(crate) const NEG: i32 = i32::MIN / 4;

/// The best local alignment found by a scan: score, last pair and first pair (note indices,
/// inclusive).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Hit {
    pub score: i32,
    pub start: (usize, usize),
    pub end: (usize, usize),
}

/// Regions no alignment may use: rectangles of (A notes × B notes), inclusive.
#[derive(Debug, Clone, Default)]
pub(crate) struct Blocked {
    pub rects: Vec<((usize, usize), (usize, usize))>,
}

impl Blocked {
    /// For note row `i` of A, a mask over B notes, or `None` when nothing is blocked there.
    pub fn row_mask(&self, i: usize, m: usize, mask: &mut Vec<bool>) -> bool {
        let mut any = false;
        for &((a0, a1), (b0, b1)) in &self.rects {
            if i >= a0 && i <= a1 {
                if !any {
                    mask.clear();
                    mask.resize(m, false);
                    any = true;
                }
                for cell in mask
                    .iter_mut()
                    .take(b1.min(m.saturating_sub(1)) + 1)
                    .skip(b0)
                {
                    *cell = true;
                }
            }
        }
        any
    }

    pub fn contains(&self, i: usize, j: usize) -> bool {
        self.rects
            .iter()
            .any(|&((a0, a1), (b0, b1))| i >= a0 && i <= a1 && j >= b0 && j <= b1)
    }
}

#[inline(always)]
pub(crate) fn pack(i: usize, j: usize) -> u64 {
    ((i as u64) << 32) | j as u64
}

#[inline(always)]
pub(crate) fn unpack(origin: u64) -> (usize, usize) {
    ((origin >> 32) as usize, (origin & 0xffff_ffff) as usize)
}

/// The dynamic-programming state of one transposition: rolling rows of H with path origins,
/// the F column, and the best cell so far.
struct Lane {
    t: u8,
    h: Vec<i32>,
    origin: Vec<u64>,
    f: Vec<i32>,
    f_origin: Vec<u64>,
    best: Hit,
    /// Pitch term by pitch class of B for the current row (16 entries so that a masked index
    /// needs no bounds check; the last four are unused).
    pitch_of_b: [i32; 16],
    /// The same for the one and two notes of A before the current row (the first note of a
    /// consolidated group of two or three).
    pitch_of_b_before: [[i32; 16]; 2],
}

impl Lane {
    fn new(t: u8, width: usize) -> Lane {
        Lane {
            t,
            h: vec![0; 4 * width],
            origin: vec![0; 4 * width],
            f: vec![NEG; width],
            f_origin: vec![0; width],
            best: Hit {
                score: 0,
                start: (0, 0),
                end: (0, 0),
            },
            pitch_of_b: [0; 16],
            pitch_of_b_before: [[0; 16]; 2],
        }
    }
}

/// Scans all cells under each transposition in `ts` and returns, per transposition, the
/// best-scoring local alignment avoiding `blocked` (`None` when no cell scores above zero).
///
/// Rows are shared by the transpositions: the transposition-free part of the pair score
/// (interval, rhythm, metre) is computed once per cell, the pitch term is one lookup.
///
/// With `TRACK` false, path origins are not kept (the hits' `start` is meaningless): the
/// score-only form used by the null model, where only the best score matters.
pub(crate) fn scan_many<const TRACK: bool>(
    scorer: &Scorer,
    params: &AlignParams,
    ts: &[u8],
    blocked: &Blocked,
    contexts: &Contexts,
) -> Vec<Option<Hit>> {
    let n = scorer.a.len();
    let m = scorer.b.len();
    if n == 0 || m == 0 {
        return vec![None; ts.len()];
    }
    let width = m + 1;
    let mut lanes: Vec<Lane> = ts.iter().map(|&t| Lane::new(t, width)).collect();
    let mut mask: Vec<bool> = Vec::new();
    let mut scratch = RowContext::new(m);
    let pc_b = &scorer.b.pc;
    for i in 1..=n {
        let ai = i - 1;
        let masked = blocked.row_mask(ai, m, &mut mask);
        // Everything but the pitch terms, once per row for all transpositions.
        let row = contexts.row(scorer, i, &mut scratch);
        for lane in &mut lanes {
            for pc in 0..12u8 {
                let p = usize::from(pc);
                lane.pitch_of_b[p] = scorer.pitch_by_class(ai, pc, lane.t);
                for back in 1..=2 {
                    lane.pitch_of_b_before[back - 1][p] = match ai.checked_sub(back) {
                        Some(first) => scorer.pitch_by_class(first, pc, lane.t),
                        None => 0,
                    };
                }
            }
            if masked {
                scan_row::<TRACK, true>(scorer, params, lane, i, row, pc_b, &mask);
            } else {
                scan_row::<TRACK, false>(scorer, params, lane, i, row, pc_b, &[]);
            }
        }
    }
    lanes
        .into_iter()
        .map(|lane| (lane.best.score > 0).then_some(lane.best))
        .collect()
}

/// Scans all cells under transposition `t`; see [`scan_many`] (the tests' reference).
#[cfg(test)]
pub(crate) fn scan(scorer: &Scorer, params: &AlignParams, t: u8, blocked: &Blocked) -> Option<Hit> {
    scan_many::<true>(scorer, params, &[t], blocked, &Contexts::per_row())
        .pop()
        .flatten()
}

/// Most cells whose transposition-free terms a comparison keeps for all its scans (20 bytes
/// a cell: 20 MiB).
pub(crate) const CONTEXT_CACHE_CELLS: usize = 1 << 20;

/// The transposition-free terms of the rows of a pair ([`RowContext`]): computed once for
/// every row when a comparison scans the pair several times (the first scan, then a rescan
/// after each passage) and they fit [`CONTEXT_CACHE_CELLS`], else filled row by row as each
/// scan reaches it.
pub(crate) struct Contexts {
    rows: Option<Vec<RowContext>>,
}

impl Contexts {
    /// Filled row by row, nothing kept.
    pub fn per_row() -> Contexts {
        Contexts { rows: None }
    }

    /// Every row computed now and kept, when they fit; else [`Contexts::per_row`].
    pub fn kept(scorer: &Scorer) -> Contexts {
        let (n, m) = (scorer.a.len(), scorer.b.len());
        if n.saturating_mul(m) > CONTEXT_CACHE_CELLS {
            return Contexts::per_row();
        }
        let rows = (1..=n)
            .map(|i| {
                let mut row = RowContext::new(m);
                row.fill(scorer, i);
                row
            })
            .collect();
        Contexts { rows: Some(rows) }
    }

    /// The terms of A's note `i − 1` (rows count from 1), kept or filled into `scratch`.
    pub fn row<'s>(
        &'s self,
        scorer: &Scorer,
        i: usize,
        scratch: &'s mut RowContext,
    ) -> &'s RowContext {
        match &self.rows {
            Some(rows) => &rows[i - 1],
            None => {
                scratch.fill(scorer, i);
                scratch
            }
        }
    }
}

/// The transposition-free part of every score of one row of A against all of B: the pair
/// score's interval, rhythm and metre terms, and the same for fragmentation and consolidation
/// of two and three notes (index k − 2; [`NEG`] where the move is not allowed).
pub(crate) struct RowContext {
    pub pair: Vec<i32>,
    pub fragment: Vec<[i32; 2]>,
    pub consolidate: Vec<[i32; 2]>,
}

impl RowContext {
    pub fn new(m: usize) -> RowContext {
        RowContext {
            pair: vec![0; m],
            fragment: vec![[NEG; 2]; m],
            consolidate: vec![[NEG; 2]; m],
        }
    }

    /// Fills the row of A's note `i − 1` (rows count from 1).
    pub fn fill(&mut self, scorer: &Scorer, i: usize) {
        let ai = i - 1;
        let max_k = scorer.max_fragments;
        for bj in 0..self.pair.len() {
            self.pair[bj] = scorer.context(ai, bj);
            for k in 2..=3 {
                self.fragment[bj][k - 2] = if k <= max_k {
                    scorer.fragment_context(ai, bj, k).unwrap_or(NEG)
                } else {
                    NEG
                };
                self.consolidate[bj][k - 2] = if k <= max_k && k <= i {
                    scorer.consolidate_context(ai, bj, k).unwrap_or(NEG)
                } else {
                    NEG
                };
            }
        }
    }
}

/// One row of the recurrence for one transposition.
#[inline(always)]
fn scan_row<const TRACK: bool, const MASKED: bool>(
    scorer: &Scorer,
    params: &AlignParams,
    lane: &mut Lane,
    i: usize,
    row: &RowContext,
    pc_b: &[u8],
    mask: &[bool],
) {
    let context = &row.pair;
    let m = context.len();
    let width = m + 1;
    let open = params.gap_open;
    let extend = params.gap_extend;
    let max_k = scorer.max_fragments;
    let cur = (i % 4) * width;
    let up = ((i - 1) % 4) * width;
    let ai = i - 1;
    let run_a = (scorer.a.run[ai] as usize).min(max_k).min(i);
    let Lane {
        h,
        origin,
        f,
        f_origin,
        best,
        pitch_of_b,
        pitch_of_b_before,
        ..
    } = lane;
    h[cur] = 0;
    let mut e = NEG;
    let mut e_origin = 0u64;
    let mut left = 0i32;
    // H of the row above at column j − 1 (the diagonal), carried in a register.
    let mut diag = h[up];
    for j in 1..=m {
        let bj = j - 1;
        if MASKED && mask[bj] {
            h[cur + j] = 0;
            f[j] = NEG;
            e = NEG;
            left = 0;
            diag = h[up + j];
            continue;
        }
        // Gap in A: b_j left unmatched, from the left.
        let from_h = left - open;
        let from_e = e - extend;
        if from_h >= from_e {
            e = from_h;
            if TRACK {
                e_origin = origin[cur + j - 1];
            }
        } else {
            e = from_e;
        }
        // Gap in B: a_i left unmatched, from above.
        let above = h[up + j];
        let from_h = above - open;
        let from_f = f[j] - extend;
        if from_h >= from_f {
            f[j] = from_h;
            if TRACK {
                f_origin[j] = origin[up + j];
            }
        } else {
            f[j] = from_f;
        }
        // Match or mismatch on the diagonal.
        let mut value = diag + context[bj] + pitch_of_b[usize::from(pc_b[bj] & 15)];
        let mut from = if !TRACK {
            0
        } else if diag > 0 {
            origin[up + j - 1]
        } else {
            pack(i, j)
        };
        diag = above;
        if e > value {
            value = e;
            from = e_origin;
        }
        if f[j] > value {
            value = f[j];
            from = f_origin[j];
        }
        // Fragmentation: a_i against b_{j-k+1..=j}.
        let run_b = (scorer.b.run[bj] as usize).min(max_k).min(j);
        for k in 2..=run_b {
            let ctx = row.fragment[bj][k - 2];
            if ctx != NEG {
                let s = ctx + pitch_of_b[usize::from(pc_b[bj + 1 - k] & 15)];
                let prev = h[up + j - k];
                if prev + s > value {
                    value = prev + s;
                    from = if !TRACK {
                        0
                    } else if prev > 0 {
                        origin[up + j - k]
                    } else {
                        pack(i, j - k + 1)
                    };
                }
            }
        }
        // Consolidation: a_{i-k+1..=i} against b_j.
        for k in 2..=run_a {
            let ctx = row.consolidate[bj][k - 2];
            if ctx != NEG {
                let s = ctx + pitch_of_b_before[k - 2][usize::from(pc_b[bj] & 15)];
                let back = ((i - k) % 4) * width;
                let prev = h[back + j - 1];
                if prev + s > value {
                    value = prev + s;
                    from = if !TRACK {
                        0
                    } else if prev > 0 {
                        origin[back + j - 1]
                    } else {
                        pack(i - k + 1, j)
                    };
                }
            }
        }
        if value > 0 {
            h[cur + j] = value;
            if TRACK {
                origin[cur + j] = from;
            }
            left = value;
            if value > best.score {
                let (si, sj) = if TRACK { unpack(from) } else { (1, 1) };
                *best = Hit {
                    score: value,
                    start: (si - 1, sj - 1),
                    end: (ai, bj),
                };
            }
        } else {
            h[cur + j] = 0;
            left = 0;
        }
    }
}
