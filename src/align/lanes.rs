//! The best local score over all twelve transpositions at once: the score-only scan of
//! [`super::scan`] with the twelve transpositions side by side in each cell, one array element
//! each, so that the compiler can process them as vector lanes (the inter-sequence layout of
//! Rognes 2011, with transpositions in place of database sequences).
//!
//! The recurrence is the same as the scan's (Smith & Waterman 1981; Gotoh 1982; Mongeau &
//! Sankoff 1990), so the best score is the same to the point; only path origins are not kept.

use super::scan::{Contexts, RowContext, NEG};
use super::score::Scorer;
use super::AlignParams;

/// Transpositions side by side.
const LANES: usize = 12;

pub(crate) type Lanes = [i32; LANES];

/// The best local alignment score of the pair under any of the twelve transpositions (0 when
/// no cell scores above zero).
pub(crate) fn best_over_transpositions(scorer: &Scorer, params: &AlignParams) -> i32 {
    best_per_transposition(scorer, params, &Contexts::per_row())
        .into_iter()
        .max()
        .unwrap_or(0)
}

/// The best local alignment score of the pair under each transposition t (index t; 0 when no
/// cell scores above zero).
pub(crate) fn best_per_transposition(
    scorer: &Scorer,
    params: &AlignParams,
    contexts: &Contexts,
) -> Lanes {
    let n = scorer.a.len();
    let m = scorer.b.len();
    if n == 0 || m == 0 {
        return [0; LANES];
    }
    let width = m + 1;
    let open = params.gap_open;
    let extend = params.gap_extend;
    let max_k = scorer.max_fragments;
    let pc_b = &scorer.b.pc;
    // Four rolling rows of H (consolidation looks three rows back) and the F column.
    let mut h: Vec<Lanes> = vec![[0; LANES]; 4 * width];
    let mut f: Vec<Lanes> = vec![[NEG; LANES]; width];
    let mut best: Lanes = [0; LANES];
    let mut scratch = RowContext::new(m);
    // Pitch term of A's note (and of the one and two before it) against each pitch class of B,
    // per transposition: pitch[back][pc][lane].
    let mut pitch = [[[0i32; LANES]; 12]; 3];
    for i in 1..=n {
        let ai = i - 1;
        let row = contexts.row(scorer, i, &mut scratch);
        for (back, table) in pitch.iter_mut().enumerate() {
            let Some(note) = ai.checked_sub(back) else {
                continue;
            };
            for (pc, lanes) in table.iter_mut().enumerate() {
                for (t, value) in lanes.iter_mut().enumerate() {
                    *value = scorer.pitch_by_class(note, pc as u8, t as u8);
                }
            }
        }
        let cur = (i % 4) * width;
        let up = ((i - 1) % 4) * width;
        let run_a = (scorer.a.run[ai] as usize).min(max_k).min(i);
        h[cur] = [0; LANES];
        let mut e: Lanes = [NEG; LANES];
        for j in 1..=m {
            let bj = j - 1;
            let left = h[cur + j - 1];
            let above = h[up + j];
            let diag = h[up + j - 1];
            let context = row.pair[bj];
            let here = &pitch[0][usize::from(pc_b[bj] % 12)];
            let fj = &mut f[j];
            let mut value: Lanes = [0; LANES];
            for l in 0..LANES {
                e[l] = (left[l] - open).max(e[l] - extend);
                fj[l] = (above[l] - open).max(fj[l] - extend);
                value[l] = (diag[l] + context + here[l]).max(e[l]).max(fj[l]);
            }
            // Fragmentation: a_i against b_{j-k+1..=j}.
            let run_b = (scorer.b.run[bj] as usize).min(max_k).min(j);
            for k in 2..=run_b {
                let ctx = row.fragment[bj][k - 2];
                if ctx == NEG {
                    continue;
                }
                let prev = h[up + j - k];
                let p = &pitch[0][usize::from(pc_b[bj + 1 - k] % 12)];
                for l in 0..LANES {
                    value[l] = value[l].max(prev[l] + ctx + p[l]);
                }
            }
            // Consolidation: a_{i-k+1..=i} against b_j.
            for k in 2..=run_a {
                let ctx = row.consolidate[bj][k - 2];
                if ctx == NEG {
                    continue;
                }
                let prev = h[((i - k) % 4) * width + j - 1];
                let p = &pitch[k - 1][usize::from(pc_b[bj] % 12)];
                for l in 0..LANES {
                    value[l] = value[l].max(prev[l] + ctx + p[l]);
                }
            }
            for l in 0..LANES {
                value[l] = value[l].max(0);
                best[l] = best[l].max(value[l]);
            }
            h[cur + j] = value;
        }
    }
    best
}
