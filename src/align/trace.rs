//! Full-matrix alignment with traceback, run only on the rectangle of a reported alignment
//! (found by the linear-memory scan), so that memory stays proportional to the passage, not to
//! the pieces.

use super::scan::{Blocked, Hit};
use super::score::Scorer;
use super::{AlignParams, Step};

const NEG: i32 = i32::MIN / 4;

/// Most cells the traceback matrix may hold (three `i32` per cell: 96 MiB). A passage whose
/// rectangle is larger is traced in a band around the straight line from its first to its last
/// pair (banded alignment, as in Chao, Pearson & Miller 1992), wide enough to fill this budget;
/// when the band does not reproduce the scan's score, the best path inside the band is taken.
pub(crate) const TRACE_CELL_BUDGET: usize = 8 * 1024 * 1024;

/// The cells of a rectangle the traceback keeps: all of them, or a diagonal band.
struct Grid {
    rows: usize,
    cols: usize,
    /// Half-width of the band in columns (`usize::MAX`: the full rectangle).
    half: usize,
    /// Stored columns per row.
    stride: usize,
}

impl Grid {
    fn new(rows: usize, cols: usize, budget: usize) -> Grid {
        let full = (rows + 1).saturating_mul(cols + 1);
        if full <= budget {
            return Grid {
                rows,
                cols,
                half: usize::MAX,
                stride: cols + 1,
            };
        }
        let half = (budget / (rows + 1)).saturating_sub(3) / 2;
        let half = half.max(16);
        Grid {
            rows,
            cols,
            half,
            stride: 2 * half + 3,
        }
    }

    fn cells(&self) -> usize {
        (self.rows + 1) * self.stride
    }

    /// The band's centre column in row `r`.
    fn centre(&self, r: usize) -> usize {
        if self.rows == 0 {
            0
        } else {
            (r as u128 * self.cols as u128 / self.rows as u128) as usize
        }
    }

    /// First and last column of row `r` kept (1-based columns).
    fn columns(&self, r: usize) -> (usize, usize) {
        if self.half == usize::MAX {
            return (1, self.cols);
        }
        let c = self.centre(r);
        (
            c.saturating_sub(self.half).max(1),
            (c + self.half).min(self.cols),
        )
    }

    /// Storage index of cell (r, c), or `None` outside the band.
    fn at(&self, r: usize, c: usize) -> Option<usize> {
        if self.half == usize::MAX {
            return Some(r * self.stride + c);
        }
        let centre = self.centre(r);
        let offset = c as isize - centre as isize + self.half as isize + 1;
        (offset >= 0 && (offset as usize) < self.stride).then(|| r * self.stride + offset as usize)
    }
}

/// H, E and F over a [`Grid`]: cells outside it read as H = 0 (a local path may start there)
/// and E = F = minus infinity.
struct Matrices {
    grid: Grid,
    h: Vec<i32>,
    e: Vec<i32>,
    f: Vec<i32>,
}

impl Matrices {
    fn h(&self, r: usize, c: usize) -> i32 {
        self.grid.at(r, c).map_or(0, |k| self.h[k])
    }
    fn e(&self, r: usize, c: usize) -> i32 {
        self.grid.at(r, c).map_or(NEG, |k| self.e[k])
    }
    fn f(&self, r: usize, c: usize) -> i32 {
        self.grid.at(r, c).map_or(NEG, |k| self.f[k])
    }
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum State {
    H,
    E,
    F,
}

/// Recomputes the alignment of `hit` under transposition `t` and returns its steps from first
/// to last, with the score the traceback reproduces.
pub(crate) fn trace(
    scorer: &Scorer,
    params: &AlignParams,
    t: u8,
    blocked: &Blocked,
    hit: &Hit,
) -> (Vec<Step>, i32) {
    trace_within(scorer, params, t, blocked, hit, TRACE_CELL_BUDGET)
}

/// [`trace`] with a cell budget of its own.
fn trace_within(
    scorer: &Scorer,
    params: &AlignParams,
    t: u8,
    blocked: &Blocked,
    hit: &Hit,
    budget: usize,
) -> (Vec<Step>, i32) {
    let (i0, j0) = hit.start;
    let (i1, j1) = hit.end;
    let rows = i1 - i0 + 1;
    let cols = j1 - j0 + 1;
    let grid = Grid::new(rows, cols, budget);
    let cells = grid.cells();
    let mut m = Matrices {
        grid,
        h: vec![0i32; cells],
        e: vec![NEG; cells],
        f: vec![NEG; cells],
    };
    let open = params.gap_open;
    let extend = params.gap_extend;
    let max_k = scorer.max_fragments;
    let mut best = (0i32, 0usize, 0usize);
    for r in 1..=rows {
        let (first, last) = m.grid.columns(r);
        for c in first..=last {
            let (ai, bj) = (i0 + r - 1, j0 + c - 1);
            let Some(here) = m.grid.at(r, c) else {
                continue;
            };
            if blocked.contains(ai, bj) {
                continue;
            }
            let e_here = (m.h(r, c - 1) - open).max(m.e(r, c - 1) - extend);
            let f_here = (m.h(r - 1, c) - open).max(m.f(r - 1, c) - extend);
            m.e[here] = e_here;
            m.f[here] = f_here;
            let mut value = m.h(r - 1, c - 1) + scorer.pair(ai, bj, t);
            value = value.max(e_here).max(f_here);
            for k in 2..=max_k.min(c) {
                if let Some(s) = scorer.fragment(ai, bj, k, t) {
                    value = value.max(m.h(r - 1, c - k) + s);
                }
            }
            for k in 2..=max_k.min(r) {
                if let Some(s) = scorer.consolidate(ai, bj, k, t) {
                    value = value.max(m.h(r - k, c - 1) + s);
                }
            }
            let value = value.max(0);
            m.h[here] = value;
            if value > best.0 {
                best = (value, r, c);
            }
        }
    }
    // Trace from the scan's end cell when it reproduces the score, else from the best cell.
    let (mut r, mut c) = if m.h(rows, cols) == hit.score {
        (rows, cols)
    } else {
        (best.1, best.2)
    };
    let score = m.h(r, c);
    let mut steps = Vec::new();
    let mut state = State::H;
    while r > 0 && c > 0 {
        let (ai, bj) = (i0 + r - 1, j0 + c - 1);
        match state {
            State::H => {
                let value = m.h(r, c);
                if value <= 0 {
                    break;
                }
                if value == m.h(r - 1, c - 1) + scorer.pair(ai, bj, t) {
                    steps.push(Step::Pair { a: ai, b: bj });
                    r -= 1;
                    c -= 1;
                    if m.h(r, c) == 0 {
                        break;
                    }
                    continue;
                }
                if value == m.e(r, c) {
                    state = State::E;
                    continue;
                }
                if value == m.f(r, c) {
                    state = State::F;
                    continue;
                }
                let fragment = (2..=max_k.min(c)).find(|&k| {
                    scorer
                        .fragment(ai, bj, k, t)
                        .is_some_and(|s| value == m.h(r - 1, c - k) + s)
                });
                if let Some(k) = fragment {
                    steps.push(Step::Fragmentation {
                        a: ai,
                        b_first: bj + 1 - k,
                        b_last: bj,
                    });
                    r -= 1;
                    c -= k;
                    if m.h(r, c) == 0 {
                        break;
                    }
                    continue;
                }
                let consolidation = (2..=max_k.min(r)).find(|&k| {
                    scorer
                        .consolidate(ai, bj, k, t)
                        .is_some_and(|s| value == m.h(r - k, c - 1) + s)
                });
                if let Some(k) = consolidation {
                    steps.push(Step::Consolidation {
                        a_first: ai + 1 - k,
                        a_last: ai,
                        b: bj,
                    });
                    r -= k;
                    c -= 1;
                    if m.h(r, c) == 0 {
                        break;
                    }
                    continue;
                }
                break;
            }
            State::E => {
                steps.push(Step::OnlyB { b: bj });
                let value = m.e(r, c);
                state = if value == m.h(r, c - 1) - open {
                    State::H
                } else {
                    State::E
                };
                c -= 1;
            }
            State::F => {
                steps.push(Step::OnlyA { a: ai });
                let value = m.f(r, c);
                state = if value == m.h(r - 1, c) - open {
                    State::H
                } else {
                    State::F
                };
                r -= 1;
            }
        }
    }
    steps.reverse();
    (steps, score)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::align::testing::melody;

    // A path that stays inside the band is found by a banded alignment exactly (Chao, Pearson &
    // Miller 1992): the banded trace of a long passage equals the full one.
    #[test]
    fn a_banded_trace_reproduces_the_full_trace_of_a_near_diagonal_passage() {
        let a = melody(300, 1);
        // B: A with one note dropped and one inserted, so the path leaves the diagonal a little.
        let mut b = a.clone();
        b.notes.remove(100);
        let extra = b.notes[200];
        b.notes.insert(200, extra);
        let params = AlignParams::default();
        let scorer = Scorer::new(&a, &b, &params);
        let hit = super::super::scan::scan(&scorer, &params, 0, &Blocked::default()).unwrap();
        let full = trace_within(&scorer, &params, 0, &Blocked::default(), &hit, usize::MAX);
        // A budget of 40 cells a row: a band of ±18 columns around the diagonal.
        let banded = trace_within(&scorer, &params, 0, &Blocked::default(), &hit, 40 * 301);
        assert_eq!(full.1, hit.score);
        assert_eq!(banded, full);
    }
}
